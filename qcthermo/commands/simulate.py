"""``qcthermo simulate DIR --reactions F``: the main job at the simulation's temperature, then the microkinetic
simulation of its [simulation] table; every file of ``run`` plus the simulation's (docs/simulate.md)."""

from __future__ import annotations

import argparse

from ..errors import QcthermoError


def main(args: argparse.Namespace) -> int:
    from ..reactions import load_reaction_file
    from .run import execute

    rf = load_reaction_file(args.reactions)
    if rf.simulation is None:
        raise QcthermoError(f"{args.reactions}: no [simulation] table (docs/simulate.md)")
    for key in ("method", "rtol", "atol", "engine"):
        if getattr(args, key, None) is not None:
            setattr(rf.simulation, key, getattr(args, key))
    if args.temperature is not None:
        rf.simulation.temperature = args.temperature
    if rf.simulation.temperature is not None and args.temperature_range is None:
        args.temperature = None
        rf.conditions["temperature"] = simulation_temperatures(rf.simulation.temperature)
    return execute(args.directory, rf, args, simulation_required=True)


def simulation_temperatures(temperature):
    """The run's temperatures for a simulation: its one temperature, or a grid of at most 5 K steps over a
    program's range with the program's own points."""
    import numpy as np

    if np.ndim(temperature) == 0:
        return float(temperature)
    values = np.array([p[1] for p in temperature])
    steps = max(1, int(np.ceil((values.max() - values.min()) / 5.0)))
    return np.unique(np.concatenate([np.linspace(values.min(), values.max(), steps + 1), values]))

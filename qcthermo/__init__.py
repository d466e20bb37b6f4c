"""qcthermo: audited thermochemistry, reaction energetics and kinetics from quantum-chemistry logs.

The public names are imported lazily so that ``qcthermo --help`` starts fast (no pandas, matplotlib
or cclib at import time).
"""

from __future__ import annotations

import importlib
from typing import Any

__version__ = "0.1.0"

#: public name -> module that defines it
_PUBLIC = {
    "read_log": "qcthermo.readers",
    "LogReadError": "qcthermo.errors",
    "ReactionFileError": "qcthermo.errors",
    "ThermoError": "qcthermo.errors",
    "QcthermoError": "qcthermo.errors",
    "SimulationError": "qcthermo.errors",
    "Calculation": "qcthermo.records",
    "Molecule": "qcthermo.records",
    "Conditions": "qcthermo.records",
    "ThermoResult": "qcthermo.records",
    "thermochemistry": "qcthermo.thermo",
    "free_energy_parts": "qcthermo.thermo",
    "survey": "qcthermo.survey",
    "load_reaction_file": "qcthermo.reactions",
    "run": "qcthermo.workflow",
    "simulate": "qcthermo.simulate",
    "RunResults": "qcthermo.workflow",
}

__all__ = [*sorted(_PUBLIC), "__version__"]


def __getattr__(name: str) -> Any:
    module = _PUBLIC.get(name)
    if module is None:
        raise AttributeError(f"module 'qcthermo' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return __all__

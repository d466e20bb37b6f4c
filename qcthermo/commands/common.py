"""What several sub-commands share: conditions from options, temperature ranges."""

from __future__ import annotations

import argparse
from typing import Any

import numpy as np

from ..errors import QcthermoError
from ..records import Conditions


def parse_temperature_range(text: str) -> np.ndarray:
    """``"250:350:25"`` -> [250, 275, 300, 325, 350] K (STOP included when it falls on the grid)."""
    try:
        start, stop, step = (float(x) for x in text.split(":"))
    except ValueError:
        raise QcthermoError(f"--temperature-range {text!r}: expected START:STOP:STEP in K") from None
    if start <= 0 or stop < start or step <= 0:
        raise QcthermoError(f"--temperature-range {text!r}: need 0 < START <= STOP and STEP > 0")
    n = int(np.floor((stop - start) / step + 1e-9)) + 1
    return start + step * np.arange(n)


def _number_or_word(value: Any, word: str, what: str, example: str) -> float | str:
    """``word`` (any case) or a float; anything else is a one-line error naming ``what``."""
    if isinstance(value, str) and value.strip().lower() == word:
        return word
    try:
        return float(value)
    except (TypeError, ValueError):
        raise QcthermoError(f"{what} {value!r}: expected {example} or '{word}'") from None


def parse_scale(value: Any) -> float | str:
    """A frequency scale factor: a number (Conditions checks that it is near 1), or "auto"."""
    return _number_or_word(value, "auto", "frequency scale", "a number")


def parse_rotor_inertia(value: Any) -> float | str:
    """B_av of the free-rotor limit: kg m^2 (Conditions checks that it is molecular), or "molecular"."""
    return _number_or_word(value, "molecular", "rotor inertia", "kg m^2 (e.g. 1e-44)")


def reading_options(args: argparse.Namespace) -> dict[str, Any]:
    """The survey's keyword arguments from the "reading" options every command that reads logs has."""
    return {"jobs": args.jobs, "cache": not args.no_cache, "progress": not args.quiet,
            "scheduler": args.scheduler or args.cluster, "workers": args.workers}


def conditions_from_args(args: argparse.Namespace, file_settings: dict[str, Any] | None = None) -> Conditions:
    """Conditions from, in rising priority: Conditions()'s defaults (the command line has no others), a
    reaction file's [conditions], options."""
    settings = dict(file_settings or {})
    for key in ("temperature", "standard_state", "low_mode_model", "low_mode_threshold", "frequency_scale",
                "zpe_scale", "rotor_inertia", "imaginary_policy", "internal_rotors"):
        value = getattr(args, key, None)
        if value is not None:
            settings[key] = value
    if getattr(args, "temperature_range", None):
        settings["temperature"] = parse_temperature_range(args.temperature_range)
    if "frequency_scale" in settings:
        settings["frequency_scale"] = parse_scale(settings["frequency_scale"])
    if "rotor_inertia" in settings:
        settings["rotor_inertia"] = parse_rotor_inertia(settings["rotor_inertia"])
    try:
        return Conditions(**settings)
    except (TypeError, ValueError) as err:
        raise QcthermoError(str(err)) from None

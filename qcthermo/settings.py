"""Conditions from their three sources, merged in one place below the command line and the Python API.

In rising priority: :class:`~qcthermo.records.Conditions`'s defaults (the command line has no others), a
reaction file's ``[conditions]``, explicit values (command-line options; keyword arguments of
``qcthermo.run``; the fields set in a ``Conditions`` passed to it, ``Conditions.given``). Where an
explicit value overrides the file's, the run says so (a warning finding). docs/reactions.md, "Conditions".
The keys are :data:`qcthermo.records.CONDITION_KEYS` (the fields of Conditions): a new field is a new key
of the reaction file, of ``qcthermo.run`` and, given an option of that name, of the command line.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .errors import QcthermoError
from .records import CONDITION_KEYS, MAX_TEMPERATURES, Conditions

#: the word each condition may take instead of a number
WORDS = {"frequency_scale": "auto", "rotor_inertia": "molecular"}


def parse_temperature_range(text: str) -> np.ndarray:
    """``"250:350:25"`` -> [250, 275, 300, 325, 350] K (STOP included when it falls on the grid).

    Refused with one line: anything but three finite numbers with 0 < START <= STOP and STEP > 0, and a
    grid of more than :data:`~qcthermo.records.MAX_TEMPERATURES` points (counted before it is made: a step
    of 1e-300 must not ask for the memory of 1e300 points)."""
    try:
        start, stop, step = (float(x) for x in text.split(":"))
    except ValueError:
        raise QcthermoError(f"--temperature-range {text!r}: expected START:STOP:STEP in K") from None
    if not all(math.isfinite(x) for x in (start, stop, step)) or start <= 0 or stop < start or step <= 0:
        raise QcthermoError(f"--temperature-range {text!r}: need finite numbers with 0 < START <= STOP and STEP > 0")
    points = math.floor((stop - start) / step + 1e-9) + 1
    if not math.isfinite(points) or points > MAX_TEMPERATURES:
        raise QcthermoError(f"--temperature-range {text!r}: {points:.3g} temperatures; at most {MAX_TEMPERATURES} "
                            "(choose a larger STEP)")
    return start + step * np.arange(int(points))


def _number_or_word(key: str, value: Any) -> float | str:
    """The word of ``key`` (any case), or a float; anything else is a one-line error."""
    word = WORDS[key]
    if isinstance(value, str) and value.strip().lower() == word:
        return word
    try:
        return float(value)
    except (TypeError, ValueError):
        what = key.replace("_", " ")
        raise QcthermoError(f"{what} {value!r}: expected a number or '{word}'") from None


def _same(a: Any, b: Any) -> bool:
    try:
        return bool(np.array_equal(np.asarray(a), np.asarray(b)))
    except (TypeError, ValueError):
        return a == b


def _shown(value: Any) -> str:
    values = np.atleast_1d(np.asarray(value)) if not isinstance(value, str) else [value]
    if len(values) > 3:
        return f"{values[0]:g}-{values[-1]:g} ({len(values)} values)"
    return ", ".join(f"{v:g}" if isinstance(v, (float, int, np.number)) else str(v) for v in values)


def explicit_values(conditions: Conditions | None = None, **given: Any) -> dict[str, Any]:
    """The values a Python caller chose: the fields of ``conditions`` that were set (``Conditions.given``:
    passed to the constructor or to ``replace``; the others are defaults and leave the file's values alone),
    then the keywords ``given`` that are not None. An unknown keyword is a one-line error."""
    unknown = sorted(set(given) - set(CONDITION_KEYS))
    if unknown:
        raise QcthermoError(f"unknown condition {unknown[0]!r}; the conditions are {', '.join(CONDITION_KEYS)}")
    out = {k: getattr(conditions, k) for k in CONDITION_KEYS if k in conditions.given} if conditions else {}
    out.update({k: v for k, v in given.items() if v is not None})
    return out


def merge_conditions(file_settings: dict[str, Any] | None, explicit: dict[str, Any]) -> tuple[Conditions, list[str]]:
    """Conditions from the defaults, a reaction file's [conditions] and ``explicit`` values, in that
    priority, and one line for each explicit value that differs from the file's. Any value out of
    bounds is a one-line QcthermoError."""
    settings = dict(file_settings or {})
    overridden = [f"{k} = {_shown(v)} (given) overrides the reaction file's {k} = {_shown(settings[k])}"
                  for k, v in explicit.items() if k in settings and not _same(settings[k], v)]
    settings.update(explicit)
    for key in WORDS:
        if key in settings and not isinstance(settings[key], (int, float)):
            settings[key] = _number_or_word(key, settings[key])
    try:
        return Conditions(**settings), overridden
    except (TypeError, ValueError) as err:
        raise QcthermoError(str(err)) from None


__all__ = ["explicit_values", "merge_conditions", "parse_temperature_range"]

"""Energy profiles as data: from the main job's profile records to :class:`ProfileData` in a display unit,
which profiles share a diagram, the files' stems and the temperature a run's profiles show (docs/figures.md).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import matplotlib.colors
import numpy as np

from ..errors import QcthermoError
from ..fileio import safe_stems
from ..units import hartree_to

#: quantities a profile can show, with the symbol of the y axis label
QUANTITY_SYMBOLS = {"G": "ΔG", "G_rrho": "ΔG(RRHO)", "H": "ΔH", "E_zpe": "Δ(E+ZPE)", "E": "ΔE"}

#: line styles a profile's connectors may take (the reaction file's ``style``)
CONNECTOR_STYLES = ("dashed", "dotted", "solid", "dashdot")


@dataclass(frozen=True)
class Term:
    """One term of a state: ``coefficient`` times a species, shown by ``name`` (its label, else its key);
    ``is_ts`` for a transition state (its term carries the double dagger)."""

    coefficient: float
    name: str
    is_ts: bool = False


@dataclass
class ProfileState:
    """One state of an energy profile.

    Attributes:
        label: the state's name (e.g. "int1", "cat + sub"): how label_states and marks refer to it, and what
            is drawn when it is not the sum of ``terms`` (a label the reaction file gives).
        value: its energy in the profile's display unit, relative to the first state of the profile.
        is_ts: True for a transition state (drawn with a double dagger).
        species: the species that make up the state.
        terms: the state's terms, typeset one by one (see :mod:`.state_labels`); empty: ``label`` as written.
    """

    label: str
    value: float
    is_ts: bool = False
    species: tuple[str, ...] = ()
    terms: tuple[Term, ...] = ()


@dataclass
class ProfileData:
    """One energy profile ready to draw.

    Attributes:
        name: the profile's name (the legend entry).
        states: the states in order.
        unit: display unit of the values, one of ``qcthermo.units.ENERGY_UNITS``.
        quantity: "G" | "G_rrho" | "H" | "E_zpe" | "E" (G under the chosen low-mode model).
        cyclic: a catalytic cycle (the last state closes it).
        color: a matplotlib colour; None takes the next palette colour.
        label_states: labels of the states that get text; None labels all.
        marks: results of the energy-span analysis, {"tdts": state label, "tdi": state label}, drawn as
            a faint halo behind the level and a tag under its value.
        style: line style of the connectors, one of :data:`CONNECTOR_STYLES`.
        overlay: name of the overlay group the profile is drawn with; None groups it with the profiles
            that start from the same species (see :func:`overlay_groups`).
    """

    name: str
    states: list[ProfileState]
    unit: str = "kcal/mol"
    quantity: str = "G"
    cyclic: bool = False
    color: str | None = None
    label_states: list[str] | None = None
    marks: dict[str, str] = field(default_factory=dict)
    style: str = "dashed"
    overlay: str | None = None

    @property
    def values(self) -> np.ndarray:
        return np.array([s.value for s in self.states], dtype=float)



def _pick_temperature(value: Any, index: int) -> float:
    """A state's energy at one temperature: arrays over T are indexed, scalars pass through."""
    arr = np.asarray(value, dtype=float)
    return float(arr) if arr.ndim == 0 else float(arr.reshape(-1)[index])


def _profile_from_record(record: dict[str, Any], quantity: str, unit: str, index: int) -> ProfileData:
    name = str(record.get("name", "profile"))
    raw_states = record.get("states") or []
    if not raw_states:
        raise QcthermoError(f"profile {name!r} has no states")
    absolute = []
    for state in raw_states:
        energies = state.get("value_Eh") or {}
        value = energies.get(quantity)
        value = np.nan if value is None else _pick_temperature(value, index)
        if not np.isfinite(value):
            raise QcthermoError(f"profile {name!r}: state {state.get('label')!r} has no {quantity} energy")
        absolute.append(value)
    relative = hartree_to(np.asarray(absolute) - absolute[0], unit)
    states = [
        ProfileState(str(s.get("label")), float(v), bool(s.get("is_ts", False)), tuple(s.get("species", ())),
                     tuple(Term(float(t["coefficient"]), str(t["label"]), bool(t.get("is_ts", False)))
                           for t in s.get("terms", ())))
        for s, v in zip(raw_states, relative, strict=True)
    ]
    labels = [s.label for s in states]
    label_states = record.get("label_states")
    for wanted in [*(label_states or []), *(record.get("marks") or {}).values()]:
        if wanted not in labels:
            raise QcthermoError(f"profile {name!r}: no state {wanted!r} (states: {', '.join(labels)})")
    style = str(record.get("style") or "dashed")
    if style not in CONNECTOR_STYLES:
        raise QcthermoError(f"profile {name!r}: style {style!r}; choose one of {', '.join(CONNECTOR_STYLES)}")
    color = record.get("color")
    if color is not None and not matplotlib.colors.is_color_like(color):
        raise QcthermoError(f"profile {name!r}: {color!r} is not a colour (a name like 'black' or '#0072B2')")
    return ProfileData(
        name=name,
        states=states,
        unit=unit,
        quantity=quantity,
        cyclic=bool(record.get("cyclic", False)),
        color=color,
        label_states=list(label_states) if label_states is not None else None,
        marks=dict(record.get("marks") or {}),
        style=style,
        overlay=None if record.get("overlay") is None else str(record["overlay"]),
    )


def profiles_from_records(
    records: Iterable[dict[str, Any]],
    quantity: str = "G",
    unit: str = "kcal/mol",
    *,
    temperature_index: int = 0,
    names: Sequence[str] | None = None,
) -> list[ProfileData]:
    """Turn the main job's profile records into :class:`ProfileData` in ``unit``, relative to state one.

    ``records`` are dicts ``{name, states: [{label, value_Eh: {quantity: Eh or array over T}, is_ts,
    species, terms: [{coefficient, label, is_ts}]}], cyclic, color, label_states, style, order, marks}``
    (see docs/figures.md). Profiles are sorted by their ``order`` key (stable; without one they keep the
    file's order); ``names`` keeps only those profiles, in that order. Raises ``QcthermoError`` for an unknown
    quantity, profile or state name, or a state without the quantity.
    """
    if quantity not in QUANTITY_SYMBOLS:
        raise QcthermoError(f"unknown quantity {quantity!r}; choose one of {', '.join(QUANTITY_SYMBOLS)}")
    records = list(records)
    records.sort(key=lambda r: r.get("order") if r.get("order") is not None else float("inf"))
    if names:
        by_name = {str(r.get("name")): r for r in records}
        missing = [n for n in names if n not in by_name]
        if missing:
            raise QcthermoError(f"no profile named {missing[0]!r} (profiles: {', '.join(by_name) or 'none'})")
        records = [by_name[n] for n in names]
    return [_profile_from_record(r, quantity, unit, temperature_index) for r in records]


def _overlay_key(profile: ProfileData) -> tuple[str, ...]:
    """What decides which profiles share a figure: the explicit overlay group, else the species of the
    first state (its label when the state lists no species)."""
    if profile.overlay is not None:
        return ("group", profile.overlay)
    first = profile.states[0]
    return ("start", *sorted(set(first.species))) if first.species else ("start-label", first.label)


def overlay_groups(profiles: Sequence[ProfileData]) -> list[list[ProfileData]]:
    """Profiles that belong in one overlaid diagram, in drawing order.

    Alternative pathways, catalysts compared on one substrate, or levels of theory of one mechanism start
    from the same reactants, so by default profiles whose first states hold the same species are
    overlaid; an explicit ``overlay`` group name overrides that. Unrelated profiles never share axes:
    their levels would sit side by side on one energy scale and their labels could be read as each
    other's. Groups keep the order of their first profile.
    """
    groups: dict[tuple[str, ...], list[ProfileData]] = {}
    for profile in profiles:
        groups.setdefault(_overlay_key(profile), []).append(profile)
    return list(groups.values())


def profile_stems(profiles: Sequence[ProfileData]) -> list[str]:
    """File stems ``profile_<name>`` of single-profile figures: the name with anything but letters,
    digits, '.', '-' and '_' replaced by '_' (safe on every file system), numbered when two collide."""
    return safe_stems([profile.name for profile in profiles], "profile_")



def profile_temperature_index(results) -> int:
    """The temperature a profile shows: the one nearest 298.15 K of the run's (common practice)."""
    temps = np.atleast_1d(np.asarray(getattr(results.conditions, "temperature", 298.15), dtype=float))
    return int(np.argmin(np.abs(temps - 298.15)))


def run_profiles(results) -> list[ProfileData]:
    """The run's drawable profiles (free energy under the chosen model, at the temperature nearest 298.15 K).

    Profiles that cannot be drawn (a state without energies) are left out; the audit names the cause.
    """
    unit = getattr(results, "energy_unit", "kcal/mol")
    index = profile_temperature_index(results)
    profiles = []
    for record in getattr(results, "profiles", None) or []:
        try:
            profiles += profiles_from_records([record], "G", unit, temperature_index=index)
        except QcthermoError:
            continue
    return profiles

"""The reaction file (TOML, docs/reactions.md) and reaction energetics.

:func:`load_reaction_file` reads and validates a reaction file into a :class:`ReactionFile`; every
problem is a :class:`~qcthermo.errors.ReactionFileError` naming the file, the line and the item.
:func:`reaction_energetics` turns species values (hartree per molecule, arrays over temperature)
into reaction and activation energies; :func:`check_balance` checks atoms and charge; :func:`simulation_settings`
checks the [simulation] table (and the keywords of qcthermo.simulate.simulate), which qcthermo.simulate runs.
The schema as implemented, key by key, is in docs/reactions.md.
"""

from __future__ import annotations

import difflib
import glob
import math
import re
import reprlib
import tomllib
from collections import Counter
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any

import numpy as np

from .ensemble import SINGLE_POINT_RMSD
from .errors import ReactionFileError
from .formation import FormationScheme, normalise_bond
from .records import (
    CONDITION_KEYS,
    INTERNAL_ROTOR_MODELS,
    LOW_MODE_MODELS,
    MAX_TEMPERATURES,
    Conditions,
    parse_standard_state,
)

#: keys of [ensemble] and their defaults (angstrom, kcal/mol, angstrom)
ENSEMBLE_DEFAULTS: dict[str, float] = {"rmsd_threshold": 0.1, "energy_window": 0.1,
                                       "single_point_rmsd": SINGLE_POINT_RMSD}
SPECIES_KEYS = ("logs", "single_point", "gas_single_point", "symmetry_number", "electronic_degeneracy", "enantiomers",
                "imaginary_policy", "concentration", "transition_state", "label", "rotors")
REACTION_KEYS = ("name", "reactants", "products", "transition_state", "degeneracy", "tunnelling", "rate")
PROFILE_KEYS = ("name", "states", "cyclic", "labels", "color", "label_states", "style", "order", "overlay")
#: presentation keys of a profile, passed to the figures as given (after a type check)
PRESENTATION_TYPES: dict[str, tuple[type, ...]] = {"color": (str,), "label_states": (list,), "style": (str,),
                                                   "order": (int, float), "overlay": (str,)}
#: keys of [heats_of_formation] (docs/formation.md)
FORMATION_KEYS = ("atoms", "references", "reactions", "atom_corrections", "bond_corrections")
PKA_KEYS = ("name", "acid", "base", "scheme", "reference")
REDOX_KEYS = ("name", "oxidised", "reduced", "electrons", "protons", "ph", "reference")
#: keys of [solution]: named literature values of qcthermo.solution (or numbers, kcal/mol and V)
SOLUTION_KEYS = ("proton_solvation", "absolute_she", "electron")
TOP_KEYS = ("conditions", "ensemble", "species", "reaction", "profile", "heats_of_formation", "solution",
            "pka", "redox", "simulation")
IMAGINARY_POLICIES = ("error", "invert", "drop")
TUNNELLING = ("eckart", "wigner", "none")

Term = tuple[float, str]  # (stoichiometric coefficient, species name)


@dataclass
class SpeciesSpec:
    """One ``[species.NAME]`` table, its globs resolved to files.

    Attributes:
        name: the table's name.
        logs: frequency (or optimisation+frequency) files, absolute paths, sorted; several = an ensemble.
        single_point: higher-level single-point files, absolute paths; paired with ``logs`` by geometry.
        single_point_pairs: explicit pairing log -> single point (absolute paths), when the file
            gave a table instead of a glob.
        gas_single_point: gas-phase single points at the level of solvent ``single_point`` files (the
            thermodynamic-cycle route, docs/solution.md), absolute paths.
        symmetry_number, electronic_degeneracy, imaginary_policy: overrides for the engine (None: its default).
        enantiomers: 2 when a chiral species computed as one enantiomer stands for both mirror images
            (its G then takes -RT ln 2), 1 to say one enantiomer is meant; None when not said.
        concentration: mol/L of a species that is its own solvent (e.g. 55.3 for water), or None.
        transition_state: True / False as declared, None when not said (inferred from the jobs and
            from being some reaction's transition state).
        label: display name for tables and figures (default: ``name``).
        rotors: relaxed torsion scans given for the hindered-rotor treatment: (atoms i, j, k, l 0-based, the
            scan log's absolute path) each; the file numbers atoms from 1, as the logs do.
        line: line of the table header in the file.
    """

    name: str
    logs: list[Path]
    single_point: list[Path] = field(default_factory=list)
    single_point_pairs: dict[Path, Path] = field(default_factory=dict)
    gas_single_point: list[Path] = field(default_factory=list)
    symmetry_number: int | None = None
    electronic_degeneracy: int | None = None
    enantiomers: int | None = None
    imaginary_policy: str | None = None
    concentration: float | None = None
    transition_state: bool | None = None
    label: str | None = None
    rotors: list[tuple[tuple[int, int, int, int], Path]] = field(default_factory=list)
    line: int | None = None


@dataclass
class ReactionSpec:
    """One ``[[reaction]]`` table.

    Attributes:
        name: unique name.
        reactants, products: (coefficient, species) terms; "2 water" -> (2.0, "water").
        transition_state: species name of the transition state, or None.
        degeneracy: reaction-path degeneracy override (None: from the symmetry numbers).
        tunnelling: "eckart" | "wigner" | "none".
        rate: for a step without a transition state, its forward rate constant in mol/L and s units
            (s^-1, M^-1 s^-1, M^-2 s^-1 by its molecularity, whatever the standard state), or "diffusion"
            (docs/simulate.md); None when not given.
        line: line of the ``[[reaction]]`` header.
    """

    name: str
    reactants: list[Term]
    products: list[Term]
    transition_state: str | None = None
    degeneracy: float | None = None
    tunnelling: str = "eckart"
    rate: float | str | None = None
    line: int | None = None

    @property
    def equation(self) -> str:
        """"A + 2 B -> [TS] -> C" for tables."""
        arrow = f" -> [{self.transition_state}] -> " if self.transition_state else " -> "
        return format_terms(self.reactants) + arrow + format_terms(self.products)

    @property
    def molecularity_forward(self) -> float:
        return sum(c for c, _ in self.reactants)

    @property
    def molecularity_reverse(self) -> float:
        return sum(c for c, _ in self.products)


@dataclass
class ProfileSpec:
    """One ``[[profile]]`` table: states in order, each a sum of species.

    Attributes:
        name: unique name.
        states: one list of (coefficient, species) terms per state.
        labels: one display label per state (default: the terms joined by " + ", species by label).
        cyclic: a catalytic cycle (energy-span analysis).
        presentation: ``color``, ``label_states`` (state labels to write), ``style``, ``order`` as
            given, passed to the figures.
        line: line of the ``[[profile]]`` header.
    """

    name: str
    states: list[list[Term]]
    labels: list[str]
    cyclic: bool = False
    presentation: dict[str, Any] = field(default_factory=dict)
    line: int | None = None


@dataclass
class PkaReference:
    """``reference = {acid, base, pka}`` of a relative pKa: a reference acid of known (experimental) pKa."""

    acid: str
    base: str
    pka: float


@dataclass
class PkaSpec:
    """One ``[[pka]]`` table: HA -> A- + H+ ("direct") or against a reference acid ("relative")."""

    name: str
    acid: str
    base: str
    reference: PkaReference | None = None
    line: int | None = None


@dataclass
class RedoxSpec:
    """One ``[[redox]]`` table: Ox + n e- (+ m H+) -> Red against a reference electrode.

    Attributes:
        reference: "SHE" or the name given with ``vs_she``; reference_vs_she: its potential against SHE, V.
        ph: the pH the potential is quoted at (a shift only with protons).
    """

    name: str
    oxidised: str
    reduced: str
    electrons: int
    protons: int = 0
    ph: float = 0.0
    reference: str = "SHE"
    reference_vs_she: float = 0.0
    line: int | None = None


@dataclass
class ReactionFile:
    """A validated reaction file.

    Attributes:
        path: the file (absolute).
        conditions: the [conditions] keys, ready for ``conditions_from_args(..., file_settings=...)``.
        ensemble: [ensemble] settings merged with :data:`ENSEMBLE_DEFAULTS`.
        species, reactions, profiles: the tables in file order.
        heats_of_formation: the [heats_of_formation] table, reactions resolved (None when absent).
        simulation: the [simulation] table checked (:class:`SimulationSettings`), or None.
        text: the file's text (to find lines for later errors, e.g. balance).
    """

    path: Path
    conditions: dict[str, Any]
    ensemble: dict[str, float]
    species: dict[str, SpeciesSpec]
    reactions: list[ReactionSpec]
    profiles: list[ProfileSpec]
    text: str = ""
    heats_of_formation: FormationScheme | None = None
    pka: list[PkaSpec] = field(default_factory=list)
    redox: list[RedoxSpec] = field(default_factory=list)
    solution: dict[str, Any] = field(default_factory=dict)
    simulation: Any = None

    def error(self, message: str, line: int | None = None) -> ReactionFileError:
        """A ReactionFileError "FILE, line N: message"."""
        return ReactionFileError(_where(self.path, line) + message)

    def transition_states(self) -> set[str]:
        """Names of species that are some reaction's transition state or declared as one."""
        names = {r.transition_state for r in self.reactions if r.transition_state}
        return names | {n for n, s in self.species.items() if s.transition_state}


def format_terms(terms: list[Term]) -> str:
    """[(2.0, "water"), (1.0, "co2")] -> "2 water + co2"."""
    return " + ".join(name if c == 1 else f"{c:g} {name}" for c, name in terms)


#: limits of what a reaction file may hold (docs/reactions.md, "Accepted values"); each is far beyond real use
#: and stops a slip (or a hostile file) before it costs memory or gives a meaningless number
MAX_FILE_BYTES = 1_000_000  # a reaction file is a few kB; a 1 MB one is not written by hand
MAX_TEXT = 200  # characters of a name, label or other string
MAX_SYMMETRY_NUMBER = 120  # the icosahedral group has 60, D_n groups 2n (common practice: nothing real is near)
MAX_ELECTRONIC_DEGENERACY = 100  # (2S+1)(2L+1) of a free atom stays below 50 (common practice)

_SHORT = reprlib.Repr()
_SHORT.maxstring = _SHORT.maxother = 60
_SHORT.maxlist = _SHORT.maxtuple = _SHORT.maxdict = 6
_SHORT.maxlevel = 3
_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f]")
#: strings and comments of a TOML line, removed to count brackets and find headers and keys
_STRINGS = re.compile(r'"(?:[^"\\]|\\.)*"|\'[^\']*\'')
_HEADER_PART = re.compile(r'"((?:[^"\\]|\\.)*)"|\'([^\']*)\'|([A-Za-z0-9_\-]+)')
_HEADER_KEY = re.compile(r'^\s*\[\[?\s*((?:(?:"(?:[^"\\]|\\.)*"|\'[^\']*\'|[A-Za-z0-9_\-]+)\s*\.?\s*)+)')
#: the depth of nested arrays and tables reported as "too deep" when the TOML parser gives up on it
_DEEP = 100


def _show(value: Any) -> str:
    """A short one-line repr of a value from the file (nested or long values abbreviated, controls escaped)."""
    return _SHORT.repr(value)


def _where(path: Path, line: int | None) -> str:
    shown = repr(str(path)) if _CONTROL.search(str(path)) else str(path)
    return f"{shown}, line {line}: " if line else f"{shown}: "


def _is_number(value: Any) -> bool:
    """A finite TOML integer or float (true/false are not numbers; an integer too large for a float is not)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return False
    try:
        return math.isfinite(value)
    except OverflowError:
        return False


def _text_problem(value: Any) -> str | None:
    """Why ``value`` is not a usable name or label, or None."""
    if not isinstance(value, str):
        return "must be a string"
    if not value.strip():
        return "must not be empty"
    if _CONTROL.search(value):
        return "must not hold control characters (NUL, tab, newline, ...)"
    if len(value) > MAX_TEXT:
        return f"is {len(value)} characters long (at most {MAX_TEXT})"
    return None


def _basic_string(body: str) -> str:
    """The value of a TOML basic string from its body (escapes such as \\u0000 decoded by the TOML parser)."""
    try:
        return tomllib.loads(f'k = "{body}"')["k"]
    except tomllib.TOMLDecodeError:
        return body


class _Lines:
    """Where things are in the file's text: table headers, keys, and the depth of nested brackets.

    Strings and comments are blanked before brackets are counted, so that a continuation line of a
    multi-line array (``["ts"],``) is not taken for a header. Multi-line strings are not understood
    (a reaction file has none); at worst a line number is that of the table header instead of the key.
    """

    def __init__(self, text: str):
        self.lines = text.splitlines()
        self.code: list[str] = []
        self.depth: list[int] = []  # bracket depth at the start of each line
        depth = 0
        for raw in self.lines:
            code = _STRINGS.sub('""', raw).split("#", 1)[0]
            self.code.append(code)
            self.depth.append(depth)
            depth = max(depth + code.count("[") + code.count("{") - code.count("]") - code.count("}"), 0)
        self.headers: dict[tuple[str, tuple[str, ...]], list[int]] = {}
        self.header_set: set[int] = set()
        for i, code in enumerate(self.code):
            stripped = code.strip()
            if self.depth[i] or not stripped.startswith("["):
                continue
            double = stripped.startswith("[[")
            key = _HEADER_KEY.match(self.lines[i])  # the raw line: quoted parts of the key are blanked in code
            parts = tuple(_basic_string(m[1]) if m[1] is not None else m[2] if m[2] is not None else m[3]
                          for m in _HEADER_PART.finditer(key[1] if key else ""))
            self.headers.setdefault(("[[" if double else "[", parts), []).append(i + 1)
            self.header_set.add(i + 1)

    def header(self, *parts: str, double: bool = False) -> list[int]:
        """1-based lines of the header ``[a.b]`` (``[[a]]`` with ``double``)."""
        return self.headers.get(("[[" if double else "[", parts), [])

    def first_header(self, *first: str) -> int | None:
        """The first header whose dotted key starts with the parts ``first``."""
        exact = self.header(*first) + self.header(*first, double=True)
        if exact:  # the usual case, without a scan of every header
            return min(exact)
        found = [lines[0] for (_, parts), lines in self.headers.items() if parts[:len(first)] == first]
        return min(found) if found else None

    def key(self, start: int | None, key: str) -> int | None:
        """Line of ``key = ...`` inside the table whose header is line ``start`` (0: the top level);
        ``start`` when the key is not found."""
        if start is None:
            return None
        rx = re.compile(rf"^\s*[\"']?{re.escape(key)}[\"']?\s*=")
        for i in range(start, len(self.lines)):
            if i + 1 in self.header_set:
                break
            if not self.depth[i] and rx.match(self.lines[i]):
                return i + 1
        return start

    def table_key(self, name: str) -> int | None:
        """The first line defining ``name`` as a key: ``name = {...}`` or ``species.name.logs = ...`` (a table
        given as an inline table or by dotted keys has no header)."""
        rx = re.compile(rf"(?:^|[\s.{{,])[\"']?{re.escape(name)}[\"']?\s*(?:=|\.\s*[\w\"']+\s*=)")
        return next((i + 1 for i, raw in enumerate(self.lines) if rx.search(raw)), None)

    def too_deep(self) -> int | None:
        """The first line where brackets nest deeper than :data:`_DEEP`."""
        for i, code in enumerate(self.code):
            depth = self.depth[i]
            for ch in code:
                depth += (ch in "[{") - (ch in "]}")
                if depth > _DEEP:
                    return i + 1
        return None


class _Parser:
    """Validation of the parsed TOML, with line numbers found by scanning the text."""

    def __init__(self, path: Path, text: str):
        self.path = path
        self.text = text
        self.where = _Lines(text)
        self.base = path.parent

    def fail(self, message: str, line: int | None = None):
        raise ReactionFileError(_where(self.path, line) + message)

    def unknown_species(self, what: str, name: Any, species: dict, line: int | None):
        """Fail naming the declared species closest to ``name``: a typo is the usual cause."""
        close = difflib.get_close_matches(str(name), list(species), n=1) if isinstance(name, str) else []
        hint = f"did you mean {close[0]!r}?" if close else f"declare it as [species.{_show(name)}]"
        self.fail(f"{what}: unknown species {_show(name)} ({hint})", line)

    def check_keys(self, table: dict, allowed: tuple[str, ...], what: str, line: int | None) -> None:
        for key in table:
            if key not in allowed:
                self.fail(f"unknown key {_show(key)} in {what} (allowed: {', '.join(allowed)})",
                          self.where.key(line, key))

    def check_text(self, value: Any, what: str, line: int | None) -> str:
        problem = _text_problem(value)
        if problem:
            self.fail(f"{what} {_show(value)} {problem}", line)
        return value

    def table(self, value: Any, what: str, line: int | None) -> dict:
        if not isinstance(value, dict):
            self.fail(f"{what} must be a table, not {_show(value)}", line)
        return value

    # -- top level ---------------------------------------------------------------------------------
    def parse(self, data: dict) -> ReactionFile:
        for key in data:
            if key not in TOP_KEYS:
                line = self.where.first_header(key) or self.where.key(0, key)
                self.fail(f"unknown table or key {_show(key)} (allowed: {', '.join(TOP_KEYS)})", line)
        conditions = self.conditions(data.get("conditions", {}))
        ensemble = self.ensemble(data.get("ensemble", {}))
        species_tables = self.table(data.get("species", {}), "'species' (tables [species.NAME])",
                                    self.where.first_header("species") or self.where.key(0, "species"))
        species = {name: self.species(name, table) for name, table in species_tables.items()}
        reactions = self.reactions(data.get("reaction", []), species)
        profiles = self.profiles(data.get("profile", []), species)
        formation = self.formation(data["heats_of_formation"], species, reactions) \
            if "heats_of_formation" in data else None
        simulation = self.simulation(data["simulation"], species, reactions) if "simulation" in data else None
        return ReactionFile(self.path, conditions, ensemble, species, reactions, profiles, self.text, formation,
                            self.pka(data.get("pka", []), species), self.redox(data.get("redox", []), species),
                            self.solution(data.get("solution", {})), simulation)

    def conditions(self, table: Any) -> dict[str, Any]:
        """Each key checked for its type here and for its range by Conditions itself, with the key's line."""
        line = (self.where.header("conditions") or [self.where.key(0, "conditions")])[0]
        self.check_keys(self.table(table, "[conditions]", line), CONDITION_KEYS, "[conditions]", line)
        out: dict[str, Any] = {}
        for key, value in table.items():
            at = self.where.key(line, key)
            out[key] = self.condition(key, value, f"[conditions] {key}", at)
            try:
                Conditions(**{key: out[key]})
            except (TypeError, ValueError) as err:
                self.fail(f"[conditions] {key}: {err}", at)
        return out

    def condition(self, key: str, value: Any, what: str, line: int | None) -> Any:
        """One [conditions] value, type-checked and converted (ranges: Conditions' own checks)."""
        if key == "temperature":
            return self.temperature(value, what, line)
        if key in ("standard_state", "low_mode_model", "imaginary_policy", "internal_rotors"):
            choices = {"low_mode_model": LOW_MODE_MODELS, "imaginary_policy": IMAGINARY_POLICIES,
                       "internal_rotors": INTERNAL_ROTOR_MODELS}.get(key)
            if not isinstance(value, str) or (choices and value not in choices):
                self.fail(f"{what} {_show(value)}: expected " + (f"one of {', '.join(choices)}" if choices else
                                                                 'a string such as "1atm", "1bar", "1M", "55.3M"'),
                          line)
            if key == "standard_state":
                self.concentration_of(value, what, line, allow_pressure=True)
            return value
        words = {"frequency_scale": "auto", "rotor_inertia": "molecular"}
        if isinstance(value, str) and key in words and value.strip().lower() == words[key]:
            return words[key]
        if not _is_number(value):
            alternative = f" or {words[key]!r}" if key in words else ""
            self.fail(f"{what} {_show(value)}: expected a finite number{alternative}", line)
        if key in ("pressure", "imaginary_threshold", "low_mode_threshold") and \
                (value < 0 or (key == "pressure" and value == 0)):
            self.fail(f"{what} {_show(value)}: expected a " + ("positive number (Pa)" if key == "pressure" else
                                                              "wavenumber >= 0 cm^-1"), line)
        return float(value)

    def temperature(self, value: Any, what: str, line: int | None) -> float | np.ndarray:
        """A temperature in K or a flat, non-empty list of them, each finite and positive."""
        values = value if isinstance(value, list) else [value]
        if not values or len(values) > MAX_TEMPERATURES or not all(_is_number(v) and v > 0 for v in values):
            self.fail(f"{what} {_show(value)}: expected a positive number of kelvin or a list of 1 to "
                      f"{MAX_TEMPERATURES} of them", line)
        return np.asarray(values, dtype=float) if isinstance(value, list) else float(value)

    def concentration_of(self, value: str, what: str, line: int | None, allow_pressure: bool = False) -> float:
        """The mol/L of "55.3M" (or the Pa of "1atm" with ``allow_pressure``), finite and positive."""
        try:
            kind, amount = parse_standard_state(value)
        except ValueError:
            kind, amount = "", math.nan
        if not math.isfinite(amount) or (kind != "concentration" and not (allow_pressure and kind)):
            expected = '"1atm", "1bar", "1M" or "<c>M"' if allow_pressure else 'mol/L such as "55.3M" or 55.3'
            self.fail(f"{what} {_show(value)}: expected {expected} (finite, positive)", line)
        return amount

    def ensemble(self, table: Any) -> dict[str, float]:
        line = (self.where.header("ensemble") or [self.where.key(0, "ensemble")])[0]
        self.check_keys(self.table(table, "[ensemble]", line), tuple(ENSEMBLE_DEFAULTS), "[ensemble]", line)
        out = dict(ENSEMBLE_DEFAULTS)
        for key, value in table.items():
            if not _is_number(value) or value < 0:
                self.fail(f"[ensemble] {key} {_show(value)}: expected a finite number >= 0",
                          self.where.key(line, key))
            out[key] = float(value)
        return out

    # -- species -----------------------------------------------------------------------------------
    def species(self, name: str, table: Any) -> SpeciesSpec:
        line = self.where.first_header("species", name) or self.where.table_key(name)
        what = f"[species.{_show(name) if _text_problem(name) else name}]"
        problem = _text_problem(name)
        if problem or re.search(r"\s", name):
            self.fail(f"{what}: the name {problem or 'must not hold spaces (reactions could not name it)'}", line)
        self.check_keys(self.table(table, what, line), SPECIES_KEYS, what, line)
        if "logs" not in table:
            self.fail(f"{what} needs 'logs' (a glob or a list of globs)", line)
        key_line = partial(self.where.key, line)
        spec = SpeciesSpec(name=name, logs=self.globs(table["logs"], f"{what} logs", key_line("logs")), line=line)
        sp = table.get("single_point")
        if isinstance(sp, dict):
            spec.single_point_pairs = {
                self.one_file(k, f"{what} single_point", key_line("single_point")):
                self.one_file(v, f"{what} single_point", key_line("single_point"))
                for k, v in sp.items()
            }
            spec.single_point = list(spec.single_point_pairs.values())
        elif sp is not None:
            spec.single_point = self.globs(sp, f"{what} single_point", key_line("single_point"))
        if "gas_single_point" in table:
            if sp is None:
                self.fail(f"{what} gas_single_point needs a solvent single_point", key_line("gas_single_point"))
            spec.gas_single_point = self.globs(table["gas_single_point"], f"{what} gas_single_point",
                                               key_line("gas_single_point"))
        limits = {"symmetry_number": MAX_SYMMETRY_NUMBER, "electronic_degeneracy": MAX_ELECTRONIC_DEGENERACY,
                  "enantiomers": 2}
        for key, top in limits.items():
            if key in table:
                value = table[key]
                if isinstance(value, bool) or not isinstance(value, int) or not 1 <= value <= top:
                    extra = " (mirror images counted)" if key == "enantiomers" else ""
                    self.fail(f"{what} {key} {_show(value)}: expected an integer from 1 to {top}{extra}",
                              key_line(key))
                setattr(spec, key, value)
        if "imaginary_policy" in table:
            if not isinstance(table["imaginary_policy"], str) or table["imaginary_policy"] not in IMAGINARY_POLICIES:
                self.fail(f"{what} imaginary_policy {_show(table['imaginary_policy'])}: expected one of "
                          f"{', '.join(IMAGINARY_POLICIES)}", key_line("imaginary_policy"))
            spec.imaginary_policy = table["imaginary_policy"]
        if "concentration" in table:
            spec.concentration = self.concentration(table["concentration"], what, key_line("concentration"))
        if "transition_state" in table:
            if not isinstance(table["transition_state"], bool):
                self.fail(f"{what} transition_state {_show(table['transition_state'])}: expected true or false",
                          key_line("transition_state"))
            spec.transition_state = table["transition_state"]
        if "label" in table:
            spec.label = self.check_text(table["label"], f"{what} label", key_line("label"))
        if "rotors" in table:
            spec.rotors = self.rotors(table["rotors"], f"{what} rotors", key_line("rotors"))
        return spec

    def rotors(self, value: Any, what: str, line: int | None) -> list[tuple[tuple[int, int, int, int], Path]]:
        """``[{atoms = [i, j, k, l], scan = "file"}, ...]``: four distinct atom numbers (from 1) and one scan log."""
        if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
            self.fail(f"{what}: expected a list of tables such as {{atoms = [1, 2, 3, 4], scan = \"scan.out\"}}",
                      line)
        out = []
        for entry in value:
            if set(entry) != {"atoms", "scan"}:
                self.fail(f"{what}: each entry needs 'atoms' and 'scan' and nothing else (got "
                          f"{', '.join(sorted(entry)) or 'nothing'})", line)
            atoms = entry["atoms"]
            if not (isinstance(atoms, list) and len(atoms) == 4 and len(set(atoms)) == 4 and all(
                    isinstance(a, int) and not isinstance(a, bool) and a >= 1 for a in atoms)):
                self.fail(f"{what} atoms {_show(atoms)}: expected four distinct atom numbers, counted from 1", line)
            out.append((tuple(a - 1 for a in atoms), self.one_file(entry["scan"], f"{what} scan", line)))
        return out

    def concentration(self, value: Any, what: str, line: int | None) -> float:
        """"55.3M" or 55.3 -> 55.3 mol/L, finite and positive."""
        if _is_number(value) and value > 0:
            return float(value)
        if not isinstance(value, str):
            self.fail(f"{what} concentration {_show(value)}: expected mol/L such as \"55.3M\" or 55.3", line)
        return self.concentration_of(value, f"{what} concentration", line)

    def globs(self, value: Any, what: str, line: int | None) -> list[Path]:
        patterns = [value] if isinstance(value, str) else value
        if not isinstance(patterns, list) or not patterns or not all(isinstance(p, str) and p for p in patterns):
            self.fail(f"{what} must be a glob or a non-empty list of globs", line)
        files: list[Path] = []
        for pattern in patterns:
            matches = []
            if "\0" not in pattern:  # the operating system takes no NUL in a path: it can match nothing
                full = pattern if Path(pattern).is_absolute() else str(self.base / pattern)
                matches = sorted(Path(m).resolve() for m in glob.glob(full, recursive=True) if Path(m).is_file())
            if not matches:
                self.fail(f"{what}: {_show(pattern)} matches no file (relative to {self.base})", line)
            files.extend(m for m in matches if m not in files)
        return files

    def one_file(self, value: Any, what: str, line: int | None) -> Path:
        files = self.globs(value, what, line) if isinstance(value, str) else None
        if files is None or len(files) != 1:
            self.fail(f"{what}: {_show(value)} must name exactly one file", line)
        return files[0]

    # -- reactions and profiles --------------------------------------------------------------------
    def terms(self, value: Any, what: str, line: int | None, species: dict) -> list[Term]:
        """["2 water", "co2"] or "2 water + co2" -> [(2.0, "water"), (1.0, "co2")], every name a declared
        species, every coefficient a finite positive number."""
        items = [value] if isinstance(value, str) else value
        if not isinstance(items, list) or not items or not all(isinstance(i, str) for i in items):
            self.fail(f"{what} must be a non-empty list of species names, not {_show(value)}", line)
        out: dict[str, float] = {}
        for item in (part for i in items for part in re.split(r"\s+\+\s+", i)):
            m = re.fullmatch(r"\s*(?:(\d+(?:\.\d*)?|\.\d+)\s+)?(\S+)\s*", item)
            coefficient = float(m.group(1) or 1) if m else math.nan
            if not (math.isfinite(coefficient) and coefficient > 0):
                self.fail(f"{what}: {_show(item)} is not 'NAME' or 'COEFFICIENT NAME' (a finite number > 0)", line)
            name = m.group(2)
            if name not in species:
                self.unknown_species(what, name, species, line)
            out[name] = out.get(name, 0.0) + coefficient
        return [(c, n) for n, c in out.items()]

    def named_tables(self, value: Any, header: str, keys: tuple[str, ...]) -> Iterator[tuple[dict, int | None, str]]:
        """Each ``[[header]]`` table with the line of its header and its name, once its keys are known ones
        and its name is a usable one not used before."""
        lines = self.where.header(header, double=True)
        top = self.where.key(0, header)
        if not isinstance(value, list) or not all(isinstance(t, dict) for t in value):
            self.fail(f"'{header}' must be written as [[{header}]] tables", lines[0] if lines else top)
        what = f"[[{header}]]"
        seen: set[str] = set()
        for i, table in enumerate(value):
            line = lines[i] if i < len(lines) else top
            self.check_keys(table, keys, what, line)
            if "name" not in table:
                self.fail(f"{what} needs a 'name'", line)
            name = self.check_text(table["name"], f"{what} name", self.where.key(line, "name"))
            if name in seen:
                self.fail(f"{what} {name!r}: the name is used twice", line)
            seen.add(name)
            yield table, line, name

    def reactions(self, value: Any, species: dict) -> list[ReactionSpec]:
        out = []
        for table, line, name in self.named_tables(value, "reaction", REACTION_KEYS):
            what = f"reaction {name!r}"
            key_line = partial(self.where.key, line)
            for key in ("reactants", "products"):
                if key not in table:
                    self.fail(f"{what} needs {key!r}", line)
            spec = ReactionSpec(
                name=name,
                reactants=self.terms(table["reactants"], f"{what} reactants", key_line("reactants"), species),
                products=self.terms(table["products"], f"{what} products", key_line("products"), species),
                line=line,
            )
            if sorted(spec.reactants, key=lambda t: t[1]) == sorted(spec.products, key=lambda t: t[1]):
                self.fail(f"{what}: the products are the reactants", key_line("products"))
            ts = table.get("transition_state")
            if ts is not None:
                if not isinstance(ts, str) or ts not in species:
                    self.unknown_species(f"{what} transition_state", ts, species, key_line("transition_state"))
                spec.transition_state = ts
            if "degeneracy" in table:
                d = table["degeneracy"]
                if not _is_number(d) or d <= 0:
                    self.fail(f"{what} degeneracy {_show(d)}: expected a finite number > 0", key_line("degeneracy"))
                spec.degeneracy = float(d)
            if "tunnelling" in table:
                if not isinstance(table["tunnelling"], str) or table["tunnelling"] not in TUNNELLING:
                    self.fail(f"{what} tunnelling {_show(table['tunnelling'])}: expected one of "
                              f"{', '.join(TUNNELLING)}", key_line("tunnelling"))
                spec.tunnelling = table["tunnelling"]
            if "rate" in table:
                spec.rate = self.rate(table["rate"], spec, key_line("rate"))
            out.append(spec)
        return out

    def rate(self, value: Any, spec: ReactionSpec, line: int | None) -> float | str:
        if spec.transition_state:
            self.fail(f"reaction {spec.name!r} rate: a reaction with a transition state takes its rate constant "
                      "from it", line)
        try:
            return rate_setting(value)
        except ValueError as err:
            self.fail(f"reaction {spec.name!r} {err}", line)

    def simulation(self, table: Any, species: dict, reactions: list[ReactionSpec]):
        """The [simulation] table: each key checked (:func:`simulation_settings`), every species named one that some
        reaction uses (and not one held at its own concentration)."""
        line = (self.where.header("simulation") or [self.where.key(0, "simulation")])[0]
        self.check_keys(self.table(table, "[simulation]", line), SIMULATION_KEYS, "[simulation]", line)
        for key in ("initial", "time"):
            if key not in table:
                self.fail(f"[simulation] needs {key!r}", line)
        for key, value in table.items():
            try:
                SETTING_PARSERS[key](value)
            except ValueError as err:
                self.fail(f"[simulation] {err}", self.where.key(line, key))
        used = {n for r in reactions for _, n in r.reactants + r.products}
        try:
            settings = simulation_settings(table)  # the keys against each other (fixed species in initial, ...)
        except ValueError as err:
            self.fail(f"[simulation] {err}", line)
        named = {"initial": list(settings.initial), "fixed": settings.fixed, "catalyst": settings.catalyst,
                 "product": [settings.product] if settings.product else [],
                 "reactant": [settings.reactant] if settings.reactant else []}
        for key, names in named.items():
            for name in names:
                at = self.where.key(line, key)
                if name not in species:
                    self.unknown_species(f"[simulation] {key}", name, species, at)
                if name not in used:
                    self.fail(f"[simulation] {key}: species {name!r} takes part in no reaction", at)
                if species[name].concentration is not None and key != "catalyst":
                    self.fail(f"[simulation] {key}: {name!r} is held at its own concentration "
                              f"({species[name].concentration:g} M)", at)
        return settings

    def profiles(self, value: Any, species: dict) -> list[ProfileSpec]:
        out = []
        for table, line, name in self.named_tables(value, "profile", PROFILE_KEYS):
            what = f"profile {name!r}"
            key_line = partial(self.where.key, line)
            raw = table.get("states")
            if not isinstance(raw, list) or len(raw) < 2:
                self.fail(f"{what} needs 'states', a list of at least two states", key_line("states"))
            states = [self.terms(s, f"{what} state {i + 1}", key_line("states"), species) for i, s in enumerate(raw)]
            shown = [[(c, species[n].label or n) for c, n in state] for state in states]  # display names
            labels = table.get("labels", [format_terms(s) for s in shown])
            if not isinstance(labels, list) or len(labels) != len(states):
                self.fail(f"{what} labels must be a list of {len(states)} strings", key_line("labels"))
            if "labels" in table:
                for label in labels:
                    self.check_text(label, f"{what} label", key_line("labels"))
            cyclic = table.get("cyclic", False)
            if not isinstance(cyclic, bool):
                self.fail(f"{what} cyclic {_show(cyclic)}: expected true or false", key_line("cyclic"))
            out.append(ProfileSpec(name, states, labels, cyclic, self.presentation(table, what, labels, key_line),
                                   line))
        return out

    def formation(self, table: Any, species: dict, reactions: list[ReactionSpec]) -> FormationScheme:
        """[heats_of_formation]: atoms (species), references {species = kJ/mol or {value, source}}, reactions
        {species = reaction name}, atom_corrections {element = kJ/mol}, bond_corrections {"C-H" = kJ/mol}."""
        line = (self.where.header("heats_of_formation") or [self.where.key(0, "heats_of_formation")])[0]
        what = "[heats_of_formation]"
        self.check_keys(self.table(table, what, line), FORMATION_KEYS, what, line)
        key_line = partial(self.where.key, line)
        scheme = FormationScheme()
        atoms = table.get("atoms", [])
        if not isinstance(atoms, list) or not all(isinstance(a, str) for a in atoms):
            self.fail(f"{what} atoms must be a list of species names, not {_show(atoms)}", key_line("atoms"))
        for name in atoms:
            if name not in species:
                self.unknown_species(f"{what} atoms", name, species, key_line("atoms"))
        scheme.atoms = list(dict.fromkeys(atoms))
        references = self.table(table.get("references", {}), f"{what} references", key_line("references"))
        for name, value in references.items():
            scheme.references[name] = self.reference_value(name, value, species, key_line("references"))
        by_name = {r.name: r for r in reactions}
        for name, value in self.table(table.get("reactions", {}), f"{what} reactions", key_line("reactions")).items():
            at = key_line("reactions")
            if name not in species:
                self.unknown_species(f"{what} reactions", name, species, at)
            if not isinstance(value, str) or value not in by_name:
                self.fail(f"{what} reactions: {name} = {_show(value)} is not the name of a [[reaction]]", at)
            r = by_name[value]
            if name not in {n for _, n in r.reactants + r.products}:
                self.fail(f"{what} reactions: reaction {value!r} does not hold {name!r}", at)
            scheme.reactions[name] = (value, r.reactants, r.products)
        for key in ("atom_corrections", "bond_corrections"):
            at = key_line(key)
            for label, value in self.table(table.get(key, {}), f"{what} {key}", at).items():
                if not _is_number(value):
                    self.fail(f"{what} {key}: {label} = {_show(value)} is not a number (kJ/mol)", at)
                if key == "bond_corrections":
                    try:
                        label = normalise_bond(label)
                    except ValueError as err:
                        self.fail(f"{what} {key}: {err}", at)
                elif not re.fullmatch(r"[A-Z][a-z]?", label):
                    self.fail(f"{what} {key}: {_show(label)} is not an element symbol", at)
                getattr(scheme, key)[label] = float(value)
        return scheme

    def reference_value(self, name: str, value: Any, species: dict, line: int | None) -> tuple[float, str]:
        """A reference heat of formation: kJ/mol at 298.15 K, alone or as {value = ..., source = "..."}."""
        what = f"[heats_of_formation] references: {name}"
        if name not in species:
            self.unknown_species("[heats_of_formation] references", name, species, line)
        table = value if isinstance(value, dict) else {"value": value}
        if set(table) - {"value", "source"} or not _is_number(table.get("value")):
            self.fail(f"{what} = {_show(value)}: expected kJ/mol at 298.15 K, or {{value = ..., source = \"...\"}}",
                      line)
        source = self.check_text(table["source"], f"{what} source", line) if "source" in table else ""
        return float(table["value"]), source

    # -- solution chemistry (qcthermo.solution) -----------------------------------------------------
    def species_name(self, value: Any, what: str, species: dict, line: int | None) -> str:
        if not isinstance(value, str) or value not in species:
            self.unknown_species(what, value, species, line)
        return value

    def pka(self, value: Any, species: dict) -> list[PkaSpec]:
        out = []
        for table, line, name in self.named_tables(value, "pka", PKA_KEYS):
            what, key_line = f"pka {name!r}", partial(self.where.key, line)
            acid, base = (self.species_name(table.get(k), f"{what} {k}", species, key_line(k))
                          for k in ("acid", "base"))
            scheme = table.get("scheme", "direct")
            if scheme not in ("direct", "relative"):
                self.fail(f"{what} scheme {_show(scheme)}: expected \"direct\" or \"relative\"", key_line("scheme"))
            if (scheme == "relative") != ("reference" in table):
                self.fail(f"{what}: " + ("a relative scheme needs reference = {acid, base, pka}" if scheme == "relative"
                                         else "reference is for scheme = \"relative\""), key_line("reference"))
            reference = None
            if scheme == "relative":
                ref = self.table(table["reference"], f"{what} reference", key_line("reference"))
                self.check_keys(ref, ("acid", "base", "pka"), f"{what} reference", key_line("reference"))
                if not _is_number(ref.get("pka")):
                    self.fail(f"{what} reference: missing or not a number: pka (the reference acid's known pKa)",
                              key_line("reference"))
                reference = PkaReference(*(self.species_name(ref.get(k), f"{what} reference {k}", species,
                                                             key_line("reference")) for k in ("acid", "base")),
                                         float(ref["pka"]))
            out.append(PkaSpec(name, acid, base, reference, line))
        return out

    def redox(self, value: Any, species: dict) -> list[RedoxSpec]:
        out = []
        for table, line, name in self.named_tables(value, "redox", REDOX_KEYS):
            what, key_line = f"redox {name!r}", partial(self.where.key, line)
            spec = RedoxSpec(name, *(self.species_name(table.get(k), f"{what} {k}", species, key_line(k))
                                     for k in ("oxidised", "reduced")), electrons=0, line=line)
            for key, low in (("electrons", 1), ("protons", 0)):
                n = table.get(key, low)
                if isinstance(n, bool) or not isinstance(n, int) or not low <= n <= 10:
                    self.fail(f"{what} {key} {_show(n)}: expected an integer from {low} to 10", key_line(key))
                setattr(spec, key, n)
            ph = table.get("ph", 0.0)
            if not _is_number(ph) or not -2 <= ph <= 16:
                self.fail(f"{what} ph {_show(ph)}: expected a number from -2 to 16", key_line("ph"))
            spec.ph = float(ph)
            ref = table.get("reference", "SHE")
            if isinstance(ref, dict):
                self.check_keys(ref, ("name", "vs_she"), f"{what} reference", key_line("reference"))
                if not _is_number(ref.get("vs_she")) or abs(ref["vs_she"]) > 10:
                    self.fail(f"{what} reference: vs_she (V against SHE in that solvent) must be a number of at "
                              "most 10 V", key_line("reference"))
                spec.reference = self.check_text(ref.get("name"), f"{what} reference name", key_line("reference"))
                spec.reference_vs_she = float(ref["vs_she"])
            elif ref != "SHE":
                self.fail(f"{what} reference {_show(ref)}: expected \"SHE\" or {{name = ..., vs_she = V}}",
                          key_line("reference"))
            out.append(spec)
        return out

    def solution(self, table: Any) -> dict[str, Any]:
        from .solution import ABSOLUTE_SHE, DEFAULTS, ELECTRON, PROTON_SOLVATION

        line = (self.where.header("solution") or [self.where.key(0, "solution")])[0]
        self.check_keys(self.table(table, "[solution]", line), SOLUTION_KEYS, "[solution]", line)
        choices = {"proton_solvation": PROTON_SOLVATION, "absolute_she": ABSOLUTE_SHE, "electron": ELECTRON}
        for key, value in table.items():
            numeric = key != "electron" and _is_number(value)
            if not numeric and not (isinstance(value, str) and value in choices[key]):
                self.fail(f"[solution] {key} {_show(value)}: expected one of {', '.join(choices[key])}"
                          + ("" if key == "electron" else " or a number"), self.where.key(line, key))
        return {**DEFAULTS, **table}

    def presentation(self, table: dict, what: str, labels: list[str], key_line) -> dict[str, Any]:
        """The figure keys of a profile, each of its type (strings usable as text, a finite order)."""
        out = {k: table[k] for k in PRESENTATION_TYPES if k in table}
        for key, value in out.items():
            if key == "order":
                if not _is_number(value):
                    self.fail(f"{what} order {_show(value)}: expected a finite number", key_line(key))
            elif key == "label_states":
                if not isinstance(value, list) or not all(isinstance(x, str) for x in value):
                    self.fail(f"{what} label_states {_show(value)}: expected a list of state labels", key_line(key))
                unknown = [x for x in value if x not in labels]
                if unknown:
                    self.fail(f"{what} label_states: {_show(unknown[0])} is not a state label ({', '.join(labels)})",
                              key_line(key))
            else:
                self.check_text(value, f"{what} {key}", key_line(key))
        return out


def _read_text(path: Path) -> str:
    """The file's text: a regular file, at most :data:`MAX_FILE_BYTES`, UTF-8 with or without a byte-order
    mark (the line of a bad byte)."""
    try:
        if not path.is_file():
            raise ReactionFileError(_where(path, None) + ("is a directory, not a reaction file" if path.is_dir()
                                                         else "no such reaction file" if not path.exists()
                                                         else "not a regular file"))
        with path.open("rb") as fh:
            raw = fh.read(MAX_FILE_BYTES + 1)
    except OSError as err:
        raise ReactionFileError(_where(path, None) + "cannot read the reaction file ("
                                + (err.strerror or err.__class__.__name__) + ")") from None
    if len(raw) > MAX_FILE_BYTES:
        raise ReactionFileError(_where(path, None) + f"larger than {MAX_FILE_BYTES // 1_000_000} MB: "
                                "not a reaction file")
    try:
        return raw.decode("utf-8-sig")  # a byte-order mark (Windows editors write one) is no TOML: dropped
    except UnicodeDecodeError as err:
        line = raw.count(b"\n", 0, err.start) + 1
        raise ReactionFileError(_where(path, line) + f"not UTF-8 text (byte 0x{raw[err.start]:02x})") from None


def load_reaction_file(path: str | Path) -> ReactionFile:
    """Read and validate a reaction file; raise ReactionFileError with the line and the name."""
    try:
        path = Path(path).resolve()
    except (OSError, ValueError, RuntimeError) as err:  # a NUL in the name, a symlink loop
        raise ReactionFileError(f"{_show(str(path))}: not a usable file name ({err})") from None
    text = _read_text(path)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        message = " ".join(str(err).split())
        m = re.search(r"\s*\(at line (\d+), column \d+\)$", message)
        # "at end of document" (an unclosed string or array): the last line, so that every error has one
        line = int(m.group(1)) if m else max(len(text.splitlines()), 1)
        raise ReactionFileError(_where(path, line) + "TOML syntax error: " + message) from None
    except RecursionError:  # the TOML parser recurses once per level of nested arrays or inline tables
        raise ReactionFileError(_where(path, _Lines(text).too_deep()) +
                                "arrays or tables nested too deeply to read") from None
    return _Parser(path, text).parse(data)


# -- balance and energetics -------------------------------------------------------------------------


def _composition(terms: list[Term], formulas: dict[str, Counter]) -> Counter:
    total: Counter = Counter()
    for coef, name in terms:
        for element, n in formulas[name].items():
            total[element] += coef * n
    return total


def balance_problem(left: list[Term], right: list[Term], formulas: dict[str, Counter],
                    charges: dict[str, int]) -> str | None:
    """Why ``left`` and ``right`` differ in atoms or charge, or None when they balance."""
    a, b = _composition(left, formulas), _composition(right, formulas)
    diff = {el: b.get(el, 0) - a.get(el, 0) for el in sorted(set(a) | set(b))}
    diff = {el: d for el, d in diff.items() if abs(d) > 1e-9}
    if diff:
        return "atoms do not balance (products minus reactants: " + \
            ", ".join(f"{el} {d:+g}" for el, d in diff.items()) + ")"
    qa = sum(c * charges[n] for c, n in left)
    qb = sum(c * charges[n] for c, n in right)
    if abs(qa - qb) > 1e-9:
        return f"charge does not balance ({qa:+g} -> {qb:+g})"
    return None


def check_balance(rf: ReactionFile, formulas: dict[str, Counter], charges: dict[str, int]) -> None:
    """Raise ReactionFileError for the first reaction (or profile state) that is unbalanced.

    ``formulas``/``charges`` hold every species of the file that could be read (element counts and
    charge); a reaction that uses a species absent from them is skipped here (its species error is
    reported elsewhere). A transition state must balance with the reactants too.
    """
    for r in rf.reactions:
        names = {n for _, n in r.reactants + r.products} | ({r.transition_state} if r.transition_state else set())
        if not names <= set(formulas):
            continue
        problem = balance_problem(r.reactants, r.products, formulas, charges)
        if problem is None and r.transition_state:
            problem = balance_problem(r.reactants, [(1.0, r.transition_state)], formulas, charges)
            problem = problem and f"transition state {r.transition_state!r}: {problem}"
        if problem:
            raise rf.error(f"reaction {r.name!r}: {problem}", r.line)
    for p in rf.profiles:
        if not {n for s in p.states for _, n in s} <= set(formulas):
            continue
        for i, state in enumerate(p.states[1:], start=2):
            problem = balance_problem(p.states[0], state, formulas, charges)
            if problem:
                raise rf.error(f"profile {p.name!r} state {i} ({p.labels[i - 1]}) against state 1: {problem}",
                               p.line)


#: the quantities each species provides (hartree per molecule, arrays over T): E, E+ZPE, H and G under RRHO
#: and under the chosen low-mode model
QUANTITIES = ("E", "E_zpe", "H_rrho", "H", "G_rrho", "G")


def _sum(terms: list[Term], values: dict[str, dict[str, np.ndarray]], quantity: str) -> np.ndarray:
    return sum(c * np.asarray(values[n][quantity], dtype=float) for c, n in terms)


def reaction_energetics(reaction: ReactionSpec, values: dict[str, dict[str, np.ndarray]]) -> dict[str, Any]:
    """Reaction and activation energies, hartree per molecule, arrays over temperature.

    dX = sum_products nu X - sum_reactants nu X for X in :data:`QUANTITIES`; with a transition state,
    dX_act = X(TS) - sum_reactants nu X (forward) and dX_act_rev = X(TS) - sum_products nu X (reverse).
    Keys: "dE", "dE_zpe", "dH_rrho", "dH", "dG_rrho", "dG", and "<key>_act", "<key>_act_rev" (None
    without a TS).
    """
    out: dict[str, Any] = {}
    for q in QUANTITIES:
        key = "d" + q
        left, right = _sum(reaction.reactants, values, q), _sum(reaction.products, values, q)
        out[key] = right - left
        if reaction.transition_state:
            ts = np.asarray(values[reaction.transition_state][q], dtype=float)
            out[key + "_act"], out[key + "_act_rev"] = ts - left, ts - right
        else:
            out[key + "_act"] = out[key + "_act_rev"] = None
    return out


def state_values(states: list[list[Term]], values: dict[str, dict[str, np.ndarray]]) -> list[dict[str, np.ndarray]]:
    """Every profile state relative to the first, per quantity (hartree, arrays over T)."""
    absolute = [{q: _sum(s, values, q) for q in QUANTITIES} for s in states]
    return [{q: a[q] - absolute[0][q] for q in QUANTITIES} for a in absolute]


# -- the [simulation] table: what a simulation is asked to do (qcthermo.simulate does it) -----------------

#: solvers of scipy.integrate.solve_ivp suited to stiff kinetics
METHODS = ("BDF", "Radau", "LSODA")
#: the default solver: LSODA (ODEPACK's stiff/non-stiff switching BDF). scipy's BDF is much faster on a large
#: network that keeps moving, but at an exact steady state (a catalytic cycle with reservoir species) its Newton
#: test compares two round-off-sized corrections, fails at random and halves the step: thousands of steps per
#: decade of time; Radau's interpolant between its steps misses a fast intermediate's rise by a factor 3 at the
#: output times (docs/simulate.md, both measured on the sample scenario)
DEFAULT_METHOD = "LSODA"
#: default relative and absolute (mol/L) tolerances of the solver
RTOL = 1e-8
ATOL_M = 1e-20


#: keys of the [simulation] table (and keyword arguments of :func:`qcthermo.simulate.simulate`)
SIMULATION_KEYS = ("initial", "time", "temperature", "fixed", "product", "reactant", "catalyst", "method", "rtol",
                   "atol", "viscosity", "rate_control", "engine")
#: integrators of a simulation: qcthermo's own (scipy) or a Cantera reactor on the run's mechanism
ENGINES = ("scipy", "cantera")
#: largest number of output times (a finer grid than any table needs)
MAX_TIMES = 10_000


@dataclass
class SimulationSettings:
    """What a simulation is asked to do (validated; see docs/simulate.md).

    Attributes:
        initial: species -> (kind, value): ("number", x) mol/L in a solution standard state or a partial
            pressure in the standard state's unit (atm, bar, Pa) in a gas one; ("M", c) mol/L; ("Pa", p).
        times: s, the output times asked for (a list), or None for the default grid up to ``end_time``.
        end_time: s.
        temperature: None (the run's temperature), K, or a program [(t in s, T in K), ...].
        fixed: species held at their initial concentration.
        product: species whose net formation rate the degree of rate control and the TOF follow.
        reactant: species that conversion, yields and selectivities refer to.
        catalyst: species whose concentrations sum to the catalyst's (TOF = formation rate / their sum).
        method, rtol, atol: the solver and its tolerances (atol in mol/L).
        viscosity: Pa s, for diffusion-limited steps (None: water's at 298.15 K).
        rate_control: compute the degree of rate control.
        engine: "scipy" (qcthermo's integrator) or "cantera" (an ideal-gas reactor on the run's thermo.yaml).
    """

    initial: dict[str, tuple[str, float]]
    end_time: float
    times: tuple[float, ...] | None = None
    temperature: Any = None
    fixed: tuple[str, ...] = ()
    product: str | None = None
    reactant: str | None = None
    catalyst: tuple[str, ...] = ()
    method: str = DEFAULT_METHOD
    rtol: float = RTOL
    atol: float = ATOL_M
    viscosity: float | None = None
    rate_control: bool = True
    engine: str = "scipy"


def _names(value: Any, key: str) -> tuple[str, ...]:
    items = [value] if isinstance(value, str) else value
    if not isinstance(items, (list, tuple)) or not all(isinstance(i, str) and i for i in items):
        raise ValueError(f"{key} {value!r}: expected a species name or a list of them")
    return tuple(items)


def _name(value: Any, key: str) -> str:
    if not isinstance(value, str) or not value:
        raise ValueError(f"{key} {value!r}: expected one species name")
    return value


def _positive(value: Any, key: str, unit: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not np.isfinite(value) or value <= 0:
        raise ValueError(f"{key} {value!r}: expected a finite number > 0 ({unit})")
    return float(value)


def _initial(value: Any) -> dict[str, tuple[str, float]]:
    from .units import parse_amount

    if not isinstance(value, dict) or not value:
        raise ValueError(f"initial {value!r}: expected a table of species = concentration, e.g. {{a = 0.1}}")
    return {str(name): parse_amount(amount, f"initial concentration of {name!r}") for name, amount in value.items()}


def _times(value: Any) -> tuple[float, tuple[float, ...] | None]:
    from .units import parse_duration

    if isinstance(value, list):
        if not 1 <= len(value) <= MAX_TIMES:
            raise ValueError(f"time: expected 1 to {MAX_TIMES} output times")
        times = tuple(sorted(parse_duration(v, "time") for v in value))
        return times[-1], times
    return parse_duration(value, "time"), None


def _temperature(value: Any) -> Any:
    from .units import parse_duration

    if isinstance(value, list):
        points = []
        for point in value:
            if not isinstance(point, (list, tuple)) or len(point) != 2:
                raise ValueError(f"temperature {value!r}: a program is a list of [time, kelvin] pairs")
            t = 0.0 if point[0] == 0 and not isinstance(point[0], bool) else parse_duration(point[0], "program time")
            points.append((t, _positive(point[1], "temperature", "K")))
        if len(points) < 2:
            raise ValueError("temperature: a program needs at least two [time, kelvin] points")
        return sorted(points)
    return _positive(value, "temperature", "K")


def _choice(value: Any, key: str, choices: tuple[str, ...]) -> str:
    if value not in choices:
        raise ValueError(f"{key} {value!r}: expected one of {', '.join(choices)}")
    return value


def _method(value: Any) -> str:
    return _choice(value, "method", METHODS)


def _flag(value: Any) -> bool:
    if not isinstance(value, bool):
        raise ValueError(f"rate_control {value!r}: expected true or false")
    return value


def _tolerance(key: str) -> Callable[[Any], float]:
    def check(value: Any) -> float:
        value = _positive(value, key, "relative" if key == "rtol" else "mol/L")
        if key == "rtol" and value >= 1:
            raise ValueError(f"rtol {value!r}: expected a number between 0 and 1")
        return value
    return check


#: each key's check and conversion; raises ValueError with a one-line reason naming the key
SETTING_PARSERS: dict[str, Callable[[Any], Any]] = {
    "initial": _initial, "time": _times, "temperature": _temperature,
    "fixed": lambda v: _names(v, "fixed"), "catalyst": lambda v: _names(v, "catalyst"),
    "product": lambda v: _name(v, "product"), "reactant": lambda v: _name(v, "reactant"),
    "method": _method, "rtol": _tolerance("rtol"), "atol": _tolerance("atol"),
    "viscosity": lambda v: _positive(v, "viscosity", "Pa s"), "rate_control": _flag,
    "engine": lambda v: _choice(v, "engine", ENGINES),
}


def simulation_settings(table: dict[str, Any]) -> SimulationSettings:
    """Check and convert a [simulation] table (or simulate()'s keywords); ValueError names the first bad key."""
    unknown = [k for k in table if k not in SIMULATION_KEYS]
    if unknown:
        raise ValueError(f"unknown key {unknown[0]!r} (allowed: {', '.join(SIMULATION_KEYS)})")
    for key in ("initial", "time"):
        if table.get(key) is None:
            raise ValueError(f"a simulation needs {key!r}")
    parsed = {k: SETTING_PARSERS[k](v) for k, v in table.items() if v is not None}
    end_time, times = parsed.pop("time")
    settings = SimulationSettings(end_time=end_time, times=times, **parsed)
    cross_check(settings)
    return settings


def cross_check(settings: SimulationSettings) -> None:
    """The keys against each other: fixed species and the reactant need an initial concentration."""
    for name in settings.fixed:
        if name not in settings.initial:
            raise ValueError(f"fixed species {name!r} needs an initial concentration")
    if settings.reactant is not None and settings.reactant not in settings.initial:
        raise ValueError(f"reactant {settings.reactant!r} needs an initial concentration")
    if settings.reactant is not None and settings.reactant in settings.fixed:
        raise ValueError(f"reactant {settings.reactant!r} is fixed: its conversion is 0 by construction")


def rate_setting(value: Any) -> float | str:
    """The ``rate`` of a [[reaction]] without a transition state: a forward rate constant > 0 in mol/L and s
    units (s^-1, M^-1 s^-1, ... by its molecularity), or "diffusion"."""
    if value == "diffusion":
        return "diffusion"
    return _positive(value, "rate", 'M^(1-m) s^-1 for m molecules, or "diffusion"')

"""The reaction file (TOML, DESIGN.md section 5) and reaction energetics.

:func:`load_reaction_file` reads and validates a reaction file into a :class:`ReactionFile`; every
problem is a :class:`~qcthermo.errors.ReactionFileError` naming the file, the line and the item.
:func:`reaction_energetics` turns species values (hartree per molecule, arrays over temperature)
into reaction and activation energies; :func:`check_balance` checks atoms and charge.
The schema as implemented, key by key, is in docs/reactions.md.
"""

from __future__ import annotations

import difflib
import glob
import re
import tomllib
from collections import Counter
from collections.abc import Iterator
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any

import numpy as np

from .errors import ReactionFileError
from .records import LOW_MODE_MODELS, parse_standard_state

#: keys of [conditions]: the fields of qcthermo.Conditions a file may set
CONDITION_KEYS = (
    "temperature", "pressure", "standard_state", "low_mode_model", "low_mode_threshold", "rotor_inertia",
    "frequency_scale", "zpe_scale", "imaginary_policy", "imaginary_threshold",
)
#: keys of [ensemble] and their defaults (angstrom, kcal/mol, angstrom)
ENSEMBLE_DEFAULTS: dict[str, float] = {"rmsd_threshold": 0.1, "energy_window": 0.1, "single_point_rmsd": 0.05}
SPECIES_KEYS = ("logs", "single_point", "symmetry_number", "electronic_degeneracy", "enantiomers",
                "imaginary_policy", "concentration", "transition_state", "label")
REACTION_KEYS = ("name", "reactants", "products", "transition_state", "degeneracy", "tunnelling")
PROFILE_KEYS = ("name", "states", "cyclic", "labels", "color", "label_states", "style", "order", "overlay")
#: presentation keys of a profile, passed to the figures as given (after a type check)
PRESENTATION_TYPES: dict[str, tuple[type, ...]] = {"color": (str,), "label_states": (list,), "style": (str,),
                                                   "order": (int, float), "overlay": (str,)}
TOP_KEYS = ("conditions", "ensemble", "species", "reaction", "profile")
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
        symmetry_number, electronic_degeneracy, imaginary_policy: overrides for the engine (None: its default).
        enantiomers: 2 when a chiral species computed as one enantiomer stands for both mirror images
            (its G then takes -RT ln 2), 1 to say one enantiomer is meant; None when not said.
        concentration: mol/L of a species that is its own solvent (e.g. 55.3 for water), or None.
        transition_state: True / False as declared, None when not said (inferred from the jobs and
            from being some reaction's transition state).
        label: display name for tables and figures (default: ``name``).
        line: line of the table header in the file.
    """

    name: str
    logs: list[Path]
    single_point: list[Path] = field(default_factory=list)
    single_point_pairs: dict[Path, Path] = field(default_factory=dict)
    symmetry_number: int | None = None
    electronic_degeneracy: int | None = None
    enantiomers: int | None = None
    imaginary_policy: str | None = None
    concentration: float | None = None
    transition_state: bool | None = None
    label: str | None = None
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
        line: line of the ``[[reaction]]`` header.
    """

    name: str
    reactants: list[Term]
    products: list[Term]
    transition_state: str | None = None
    degeneracy: float | None = None
    tunnelling: str = "eckart"
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
class ReactionFile:
    """A validated reaction file.

    Attributes:
        path: the file (absolute).
        conditions: the [conditions] keys, ready for ``conditions_from_args(..., file_settings=...)``.
        ensemble: [ensemble] settings merged with :data:`ENSEMBLE_DEFAULTS`.
        species, reactions, profiles: the tables in file order.
        text: the file's text (to find lines for later errors, e.g. balance).
    """

    path: Path
    conditions: dict[str, Any]
    ensemble: dict[str, float]
    species: dict[str, SpeciesSpec]
    reactions: list[ReactionSpec]
    profiles: list[ProfileSpec]
    text: str = ""

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


def _where(path: Path, line: int | None) -> str:
    return f"{path}, line {line}: " if line else f"{path}: "


def _header_lines(text: str, pattern: str) -> list[int]:
    """1-based lines whose stripped text matches ``pattern`` (a TOML table header)."""
    rx = re.compile(pattern)
    return [i + 1 for i, raw in enumerate(text.splitlines()) if rx.match(raw.strip())]


#: a table header line ("[name]", "[a.b]", "[[name]]"), not a continuation line of a multi-line array
_HEADER = re.compile(r"^\[\[?\s*[A-Za-z0-9_.\-]+\s*\]\]?\s*(#.*)?$")


def _key_line(text: str, start: int | None, key: str) -> int | None:
    """Line of ``key = ...`` inside the table that starts at line ``start`` (else ``start``)."""
    if start is None:
        return None
    lines = text.splitlines()
    rx = re.compile(rf"^\s*[\"']?{re.escape(key)}[\"']?\s*=")
    for i in range(start, len(lines)):
        if _HEADER.match(lines[i].strip()):
            break
        if rx.match(lines[i]):
            return i + 1
    return start


class _Parser:
    """Validation of the parsed TOML, with line numbers found by scanning the text."""

    def __init__(self, path: Path, text: str):
        self.path = path
        self.text = text
        self.base = path.parent

    def fail(self, message: str, line: int | None = None):
        raise ReactionFileError(_where(self.path, line) + message)

    def unknown_species(self, what: str, name: Any, species: dict, line: int | None):
        """Fail naming the declared species closest to ``name``: a typo is the usual cause."""
        close = difflib.get_close_matches(str(name), list(species), n=1)
        hint = f"did you mean {close[0]!r}?" if close else f"declare it as [species.{name}]"
        self.fail(f"{what}: unknown species {name!r} ({hint})", line)

    def check_keys(self, table: dict, allowed: tuple[str, ...], what: str, line: int | None) -> None:
        for key in table:
            if key not in allowed:
                self.fail(f"unknown key {key!r} in {what} (allowed: {', '.join(allowed)})",
                          _key_line(self.text, line, key))

    # -- top level ---------------------------------------------------------------------------------
    def parse(self, data: dict) -> ReactionFile:
        for key in data:
            if key not in TOP_KEYS:
                headers = _header_lines(self.text, rf"^\[+\s*{re.escape(key)}\b")
                self.fail(f"unknown table or key {key!r} (allowed: {', '.join(TOP_KEYS)})",
                          headers[0] if headers else _key_line(self.text, 0, key))
        conditions = self.conditions(data.get("conditions", {}))
        ensemble = self.ensemble(data.get("ensemble", {}))
        species_tables = data.get("species", {})
        if not isinstance(species_tables, dict):
            self.fail("'species' must be tables [species.NAME]")
        species = {name: self.species(name, table) for name, table in species_tables.items()}
        reactions = self.reactions(data.get("reaction", []), species)
        profiles = self.profiles(data.get("profile", []), species)
        return ReactionFile(self.path, conditions, ensemble, species, reactions, profiles, self.text)

    def conditions(self, table: dict) -> dict[str, Any]:
        line = (_header_lines(self.text, r"^\[\s*conditions\s*\]") or [None])[0]
        self.check_keys(table, CONDITION_KEYS, "[conditions]", line)
        out = dict(table)
        if "temperature" in out and isinstance(out["temperature"], list):
            out["temperature"] = np.asarray(out["temperature"], dtype=float)
        if "low_mode_model" in out and out["low_mode_model"] not in LOW_MODE_MODELS:
            self.fail(f"[conditions] low_mode_model {out['low_mode_model']!r}: choose one of "
                      f"{', '.join(LOW_MODE_MODELS)}", _key_line(self.text, line, "low_mode_model"))
        if "standard_state" in out:
            try:
                parse_standard_state(out["standard_state"])
            except ValueError as err:
                self.fail(f"[conditions] {err}", _key_line(self.text, line, "standard_state"))
        return out

    def ensemble(self, table: dict) -> dict[str, float]:
        line = (_header_lines(self.text, r"^\[\s*ensemble\s*\]") or [None])[0]
        self.check_keys(table, tuple(ENSEMBLE_DEFAULTS), "[ensemble]", line)
        out = dict(ENSEMBLE_DEFAULTS)
        for key, value in table.items():
            if isinstance(value, bool) or not isinstance(value, (int, float)) or value < 0:
                self.fail(f"[ensemble] {key} must be a non-negative number", _key_line(self.text, line, key))
            out[key] = float(value)
        return out

    # -- species -----------------------------------------------------------------------------------
    def species(self, name: str, table: Any) -> SpeciesSpec:
        line = (_header_lines(self.text, rf"^\[\s*species\.[\"']?{re.escape(name)}[\"']?\s*\]") or [None])[0]
        what = f"[species.{name}]"
        if not isinstance(table, dict):
            self.fail(f"{what} must be a table", line)
        self.check_keys(table, SPECIES_KEYS, what, line)
        if "logs" not in table:
            self.fail(f"{what} needs 'logs' (a glob or a list of globs)", line)
        key_line = partial(_key_line, self.text, line)
        logs = self.globs(table["logs"], f"{what} logs", key_line("logs"))
        spec = SpeciesSpec(name=name, logs=logs, line=line, label=table.get("label"))
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
        for key in ("symmetry_number", "electronic_degeneracy"):
            if key in table:
                value = table[key]
                if isinstance(value, bool) or not isinstance(value, int) or value < 1:
                    self.fail(f"{what} {key} must be a positive integer", key_line(key))
                setattr(spec, key, value)
        if "enantiomers" in table:
            if table["enantiomers"] not in (1, 2) or isinstance(table["enantiomers"], bool):
                self.fail(f"{what} enantiomers must be 1 or 2 (mirror images counted)", key_line("enantiomers"))
            spec.enantiomers = table["enantiomers"]
        if "imaginary_policy" in table:
            if table["imaginary_policy"] not in IMAGINARY_POLICIES:
                self.fail(f"{what} imaginary_policy must be one of {', '.join(IMAGINARY_POLICIES)}",
                          key_line("imaginary_policy"))
            spec.imaginary_policy = table["imaginary_policy"]
        if "concentration" in table:
            spec.concentration = self.concentration(table["concentration"], what, key_line("concentration"))
        if "transition_state" in table:
            if not isinstance(table["transition_state"], bool):
                self.fail(f"{what} transition_state must be true or false", key_line("transition_state"))
            spec.transition_state = table["transition_state"]
        if spec.label is not None and not isinstance(spec.label, str):
            self.fail(f"{what} label must be a string", key_line("label"))
        return spec

    def concentration(self, value: Any, what: str, line: int | None) -> float:
        """"55.3M" or 55.3 -> 55.3 mol/L."""
        if isinstance(value, (int, float)) and not isinstance(value, bool) and value > 0:
            return float(value)
        try:
            kind, conc = parse_standard_state(str(value))
        except ValueError:
            kind, conc = "", 0.0
        if kind != "concentration":
            self.fail(f"{what} concentration {value!r}: expected mol/L such as \"55.3M\"", line)
        return conc

    def globs(self, value: Any, what: str, line: int | None) -> list[Path]:
        patterns = [value] if isinstance(value, str) else value
        if not isinstance(patterns, list) or not patterns or not all(isinstance(p, str) for p in patterns):
            self.fail(f"{what} must be a glob or a non-empty list of globs", line)
        files: list[Path] = []
        for pattern in patterns:
            full = pattern if Path(pattern).is_absolute() else str(self.base / pattern)
            matches = sorted(Path(m).resolve() for m in glob.glob(full, recursive=True) if Path(m).is_file())
            if not matches:
                self.fail(f"{what}: {pattern!r} matches no file (relative to {self.base})", line)
            files.extend(m for m in matches if m not in files)
        return files

    def one_file(self, value: Any, what: str, line: int | None) -> Path:
        files = self.globs(value, what, line) if isinstance(value, str) else None
        if files is None or len(files) != 1:
            self.fail(f"{what}: {value!r} must name exactly one file", line)
        return files[0]

    # -- reactions and profiles --------------------------------------------------------------------
    def terms(self, value: Any, what: str, line: int | None, species: dict) -> list[Term]:
        """["2 water", "co2"] -> [(2.0, "water"), (1.0, "co2")], every name a declared species."""
        items = [value] if isinstance(value, str) else value
        if not isinstance(items, list) or not items or not all(isinstance(i, str) for i in items):
            self.fail(f"{what} must be a non-empty list of species names", line)
        out: dict[str, float] = {}
        for item in items:
            m = re.fullmatch(r"\s*(?:(\d+(?:\.\d*)?|\.\d+)\s+)?(\S+)\s*", item)
            if not m or (m.group(1) and float(m.group(1)) <= 0):
                self.fail(f"{what}: {item!r} is not 'NAME' or 'COEFFICIENT NAME'", line)
            name = m.group(2)
            if name not in species:
                self.unknown_species(what, name, species, line)
            out[name] = out.get(name, 0.0) + float(m.group(1) or 1)
        return [(c, n) for n, c in out.items()]

    def named_tables(self, value: Any, header: str, keys: tuple[str, ...]) -> Iterator[tuple[dict, int | None, str]]:
        """Each ``[[header]]`` table with the line of its header and its name, once its keys are known ones
        and its name is given and not used before."""
        if not isinstance(value, list) or not all(isinstance(t, dict) for t in value):
            self.fail(f"'{header}' must be written as [[{header}]] tables")
        lines = _header_lines(self.text, rf"^\[\[\s*{header}\s*\]\]")
        what = f"[[{header}]]"
        seen: set[str] = set()
        for i, table in enumerate(value):
            line = lines[i] if i < len(lines) else None
            self.check_keys(table, keys, what, line)
            name = table.get("name")
            if not isinstance(name, str) or not name.strip():
                self.fail(f"{what} needs a 'name'", line)
            if name in seen:
                self.fail(f"{what} {name!r}: the name is used twice", line)
            seen.add(name)
            yield table, line, name

    def reactions(self, value: Any, species: dict) -> list[ReactionSpec]:
        out = []
        for table, line, name in self.named_tables(value, "reaction", REACTION_KEYS):
            what = f"reaction {name!r}"
            key_line = partial(_key_line, self.text, line)
            for key in ("reactants", "products"):
                if key not in table:
                    self.fail(f"{what} needs {key!r}", line)
            spec = ReactionSpec(
                name=name,
                reactants=self.terms(table["reactants"], f"{what} reactants", key_line("reactants"), species),
                products=self.terms(table["products"], f"{what} products", key_line("products"), species),
                line=line,
            )
            ts = table.get("transition_state")
            if ts is not None:
                if not isinstance(ts, str) or ts not in species:
                    self.unknown_species(f"{what} transition_state", ts, species, key_line("transition_state"))
                spec.transition_state = ts
            if "degeneracy" in table:
                d = table["degeneracy"]
                if isinstance(d, bool) or not isinstance(d, (int, float)) or d <= 0:
                    self.fail(f"{what} degeneracy must be a positive number", key_line("degeneracy"))
                spec.degeneracy = float(d)
            if "tunnelling" in table:
                if table["tunnelling"] not in TUNNELLING:
                    self.fail(f"{what} tunnelling must be one of {', '.join(TUNNELLING)}", key_line("tunnelling"))
                spec.tunnelling = table["tunnelling"]
            out.append(spec)
        return out

    def profiles(self, value: Any, species: dict) -> list[ProfileSpec]:
        out = []
        for table, line, name in self.named_tables(value, "profile", PROFILE_KEYS):
            what = f"profile {name!r}"
            key_line = partial(_key_line, self.text, line)
            raw = table.get("states")
            if not isinstance(raw, list) or len(raw) < 2:
                self.fail(f"{what} needs 'states', a list of at least two states", key_line("states"))
            states = [self.terms(s, f"{what} state {i + 1}", key_line("states"), species) for i, s in enumerate(raw)]
            shown = [[(c, species[n].label or n) for c, n in state] for state in states]  # display names
            labels = table.get("labels", [format_terms(s) for s in shown])
            if not isinstance(labels, list) or len(labels) != len(states) or \
                    not all(isinstance(x, str) for x in labels):
                self.fail(f"{what} labels must be a list of {len(states)} strings", key_line("labels"))
            cyclic = table.get("cyclic", False)
            if not isinstance(cyclic, bool):
                self.fail(f"{what} cyclic must be true or false", key_line("cyclic"))
            presentation = {k: table[k] for k in PRESENTATION_TYPES if k in table}
            for key, value in presentation.items():
                if not isinstance(value, PRESENTATION_TYPES[key]) or isinstance(value, bool):
                    self.fail(f"{what} {key} has the wrong type", key_line(key))
            unknown = [x for x in presentation.get("label_states", []) if x not in labels]
            if unknown:
                self.fail(f"{what} label_states: {unknown[0]!r} is not a state label ({', '.join(labels)})",
                          key_line("label_states"))
            out.append(ProfileSpec(name, states, labels, cyclic, presentation, line))
        return out


def load_reaction_file(path: str | Path) -> ReactionFile:
    """Read and validate a reaction file; raise ReactionFileError with the line and the name."""
    path = Path(path).resolve()
    if not path.is_file():
        raise ReactionFileError(f"{path}: no such reaction file")
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as err:
        raise ReactionFileError(f"{path}: cannot read the reaction file ({err.__class__.__name__})") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        message = " ".join(str(err).split())
        m = re.search(r"\s*\(at line (\d+), column \d+\)$", message)
        line = int(m.group(1)) if m else None
        raise ReactionFileError(_where(path, line) + "TOML syntax error: " + message) from None
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

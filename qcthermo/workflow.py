"""The main job in one call: survey, species, reactions, profiles, kinetics and every export.

``qcthermo.run(directory, reactions="reactions.toml")`` returns a :class:`RunResults`; its
:meth:`RunResults.write` writes the files listed in docs/reactions.md, "Outputs". The decisions (which
conformer values are averaged, how a species' own concentration enters, when a reaction is excluded) are
there too.
"""

from __future__ import annotations

import hashlib
import platform
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from . import __version__
from .errors import LogReadError, QcthermoError
from .fileio import display
from .reactions import (
    ENSEMBLE_DEFAULTS,
    ProfileSpec,
    ReactionFile,
    ReactionSpec,
    Term,
    balance_problem,
    check_balance,
    load_reaction_file,
    reaction_energetics,
    state_values,
)
from .records import Calculation, Conditions, TorsionScan, parse_standard_state
from .solution import check_solution, constants_used, mixed_routes, pka_table, redox_table, solvent_label
from .species import Finding, SpeciesOptions, SpeciesResult, build_species, mirror_images
from .thermo import rotor_records
from .units import check_energy_unit, entropy_to_j_mol_k, hartree_to, unit_suffix

#: display names of the low-mode models, for captions
MODEL_NAMES = {"rrho": "RRHO", "qrrho": "quasi-RRHO (Grimme)", "qrrho-enthalpy": "quasi-RRHO for S and H",
               "quasi-harmonic": "quasi-harmonic (Truhlar)"}


def model_tag(model: str) -> str:
    """Column tag of a low-mode model: "qrrho-enthalpy" -> "qrrho_enthalpy"."""
    return model.replace("-", "_")


@dataclass
class RunResults:
    """Everything a run found and computed; :meth:`write` exports it.

    Attributes:
        settings: every setting (directory, reaction file, conditions, unit, ensemble thresholds,
            versions of qcthermo and its libraries) - what run.json records.
        conditions: the Conditions used.
        energy_unit: unit of the energy columns of ``reactions`` ("kcal/mol", "kJ/mol", "eV").
        survey: one row per file found (the survey.csv columns).
        species: one row per species (and temperature): see docs/reactions.md for the columns.
        reactions: one row per reaction (and temperature).
        findings: the audit, errors first: (severity, subject, message) tuples.
        species_results: name -> :class:`qcthermo.species.SpeciesResult` (conformers with their
            Calculation, Molecule, ThermoResult, population and single-point pairing).
        profiles: one dict per [[profile]]: {name, states: [{label, value_Eh: {"G", "G_rrho", "H",
            "E_zpe", "E"}, is_ts, species}], cyclic, color, label_states, style, order, marks}, every
            state relative to the first, hartree (arrays over T).
        rates: long table of k(T) per reaction (with several temperatures), or None.
        simulation: the microkinetic simulation of the reaction file's [simulation] table
            (:class:`qcthermo.simulate.SimulationResult`), or None.
        arrhenius: one row per reaction with a modified Arrhenius fit (several temperatures), or None.
        energy_span: one row per cyclic profile and temperature, or None.
        pka, redox: one row per [[pka]] / [[redox]] entry (and temperature), or None without any
            (qcthermo.solution; docs/solution.md).
        reaction_file: the parsed reaction file, or None.
        survey_result: the :class:`qcthermo.survey.SurveyResult` behind ``survey``.
        heats_of_formation: one row per species and route (docs/formation.md), or None without a
            [heats_of_formation] table.
        mechanism: the gas-phase reactions with their modified Arrhenius fits in Cantera's units
            (:func:`mechanism_reactions`), written into thermo.yaml and thermo.dat;
            mechanism_left_out: one line per reaction left out, with the reason.
    """

    settings: dict[str, Any]
    conditions: Conditions
    energy_unit: str
    survey: Any
    species: Any
    reactions: Any
    findings: list[Finding]
    species_results: dict[str, SpeciesResult]
    profiles: list[dict[str, Any]] = field(default_factory=list)
    rates: Any = None
    arrhenius: Any = None
    simulation: Any = None
    energy_span: Any = None
    reaction_file: ReactionFile | None = None
    survey_result: Any = None
    heats_of_formation: Any = None
    pka: Any = None
    redox: Any = None
    mechanism: list = field(default_factory=list)
    mechanism_left_out: list[str] = field(default_factory=list)

    @property
    def temperatures(self) -> np.ndarray:
        return np.atleast_1d(np.asarray(self.conditions.temperature, dtype=float))

    @property
    def errors(self) -> list[Finding]:
        return [f for f in self.findings if f.severity == "error"]

    @property
    def exit_status(self) -> int:
        """0 all good, 1 results but some inputs had errors, 2 nothing usable."""
        if not any(s.usable for s in self.species_results.values()):
            return 2
        return 1 if self.errors else 0

    def __repr__(self) -> str:
        """A few lines for a notebook; the generated one ran to tens of thousands of characters."""
        usable = sum(s.usable for s in self.species_results.values())
        n_reactions = self.reactions["reaction"].nunique() if len(self.reactions) else 0
        warnings = sum(f.severity == "warning" for f in self.findings)
        temps = self.temperatures
        t = f"{temps[0]:g} K" if len(temps) == 1 else f"{temps[0]:g}-{temps[-1]:g} K ({len(temps)} temperatures)"
        return (f"<RunResults of {self.settings.get('directory')}: {len(self.species_results)} species ({usable} "
                f"usable), {n_reactions} reactions, {len(self.profiles)} profiles at {t}; {len(self.errors)} errors, "
                f"{warnings} warnings in .findings; tables .survey .species .reactions; .write(out) exports>")

    def input_files(self) -> list[Path]:
        """Every file the results depend on: the reaction file, frequency logs and single points."""
        files = [self.reaction_file.path] if self.reaction_file else []
        for s in self.species_results.values():
            for c in s.conformers:
                files.append(Path(c.path))
                if c.single_point is not None:
                    files.append(Path(c.single_point.path))
        return list(dict.fromkeys(p.resolve() for p in files))

    def write(self, out: str | Path, force: bool = False) -> list[Path]:
        """Write every export into ``out``: never over a user's files without ``force``, never beside another
        run's, and never so that run.json claims files the folder does not hold (docs/survey.md, "Output files")."""
        from .fileio import write_run_folder

        return write_run_folder(out, force, lambda out_dir: _write_all(self, out_dir),
                                lambda written: run_json(self, written))


# -- building the run --------------------------------------------------------------------------------


def default_conditions(reaction_file: ReactionFile | None) -> Conditions:
    """The command line's defaults, overridden by the reaction file's [conditions]."""
    from .settings import merge_conditions

    return merge_conditions(reaction_file.conditions if reaction_file else None, {})[0]


class _Calculations:
    """Calculations by resolved path: the survey's, and files outside it read on demand."""

    def __init__(self, survey_result):
        root = Path(survey_result.directory)
        self.by_path = {Path(c.path).resolve(): c for c in survey_result.calculations.values()}
        self.failed = {(root / rel).resolve(): reason for rel, reason in survey_result.errors.items()}
        self.findings: list[Finding] = []

    def get(self, path: Path) -> Calculation | None:
        path = Path(path).resolve()
        if path in self.by_path:
            return self.by_path[path]
        if path in self.failed:
            return None
        from .readers import read_log

        try:
            self.by_path[path] = read_log(path)
        except LogReadError as err:
            self.failed[path] = err.reason
            self.findings.append(Finding("error", str(path), err.reason))
            return None
        return self.by_path[path]


def _species_from_file(rf: ReactionFile, calcs: _Calculations, conditions: Conditions) -> dict[str, SpeciesResult]:
    """Every [species.NAME] of the file, built once atoms and charge of its reactions are known to balance."""
    logs = {name: [c for c in (calcs.get(p) for p in spec.logs) if c is not None] for name, spec in rf.species.items()}
    readable = {n: found[0] for n, found in logs.items() if found}
    formulas = {n: Counter(c.symbols) for n, c in readable.items()}
    charges = {n: c.charge for n, c in readable.items()}
    check_balance(rf, formulas, charges)
    check_solution(rf, formulas, charges, {n: _sp_solvent(spec, calcs) for n, spec in rf.species.items()})
    out = {}
    ts_names = rf.transition_states()
    for name, spec in rf.species.items():
        unread = [Finding("error", str(p), f"species {name!r}: cannot use this file: {calcs.failed[p.resolve()]}")
                  for p in spec.logs if p.resolve() in calcs.failed]
        sps = [c for c in (calcs.get(p) for p in spec.single_point) if c is not None]
        pairs = {str(calcs.get(k).path): v for k, p in spec.single_point_pairs.items()
                 if calcs.get(k) is not None and (v := calcs.get(p)) is not None}
        is_ts = spec.transition_state if spec.transition_state is not None else name in ts_names
        scans, scan_findings = _torsion_scans(name, spec, logs[name])
        unread += scan_findings
        options = SpeciesOptions(spec.symmetry_number, spec.electronic_degeneracy, spec.imaginary_policy,
                                 spec.concentration, is_ts, spec.label, spec.enantiomers, torsion_scans=scans)
        if not logs[name]:
            out[name] = SpeciesResult(name, spec.label or name, options, [], findings=[
                *unread, Finding("error", name, f"species {name!r}: none of its files could be read")])
            continue
        gas = [c for c in (calcs.get(p) for p in spec.gas_single_point) if c is not None]
        out[name] = build_species(name, logs[name], conditions, options, sps, pairs, rf.ensemble, gas)
        out[name].findings[:0] = unread
    return out


def _sp_solvent(spec, calcs: _Calculations) -> str | None:
    """The solvent of a species' first readable single point ("COSMO(water)"), None in the gas phase."""
    first = next((c for c in (calcs.get(p) for p in spec.single_point) if c is not None), None)
    return solvent_label(first) if first is not None else None


def _torsion_scans(name: str, spec, calcs: list[Calculation]) -> tuple[list[TorsionScan], list[Finding]]:
    """The scans of ``[species.NAME] rotors``, read (readers.read_scan) and measured (the dihedral of each
    point's geometry); a scan that cannot be used is an error finding, and its torsion stays a cosine."""
    from .readers import read_scan
    from .rotors import dihedral_angles

    scans, findings = [], []
    for atoms, path in spec.rotors:
        try:
            scan = read_scan(path)
        except LogReadError as err:
            findings.append(Finding("error", str(path), f"species {name!r}: scan not used: {err.reason}"))
            continue
        if calcs and scan.symbols != calcs[0].symbols:
            findings.append(Finding("error", str(path), f"species {name!r}: scan not used: its atoms "
                                    f"({''.join(scan.symbols)}) are not those of the species' log"))
            continue
        if max(atoms) >= len(scan.symbols):
            findings.append(Finding("error", str(path), f"species {name!r}: scan not used: atom {max(atoms) + 1} "
                                    f"of the rotor is beyond the molecule's {len(scan.symbols)}"))
            continue
        scans.append(TorsionScan(atoms, dihedral_angles(scan.coordinates, atoms), scan.energies, str(path)))
    return scans, findings


def _species_from_survey(survey_result, conditions: Conditions) -> dict[str, SpeciesResult]:
    """Without a reaction file: one species per frequency log, named by its path (no suffix); a transition
    state when :func:`qcthermo.survey.is_transition_state` says so, as in ``qcthermo thermo``."""
    from .survey import is_transition_state

    out = {}
    for rel, calc in sorted(survey_result.calculations.items()):
        if not calc.has_vibrations:
            continue
        name = display(str(Path(rel).with_suffix("")))  # a label: a file name's non-UTF-8 bytes as \xNN
        ts = is_transition_state(calc, conditions.imaginary_threshold)
        out[name] = build_species(name, [calc], conditions, SpeciesOptions(transition_state=ts))
        if ts and "saddle-search" not in calc.job_types:
            out[name].findings.append(Finding("warning", name, f"species {name!r}: one imaginary mode "
                                              f"({calc.frequencies.min():.1f} cm^-1): taken for a transition state"))
    return out


def _reaction_calcs(names: list[str], species: dict[str, SpeciesResult]) -> list[tuple[str, Calculation]]:
    """(species, calculation) of every used file whose energy enters (single point if composite)."""
    out = []
    for n in names:
        for c in species[n].used:
            out.append((n, c.single_point or c.calculation))
    return out


def audit_reaction(names: list[str], species: dict[str, SpeciesResult], subject: str,
                   sides: dict[str, list[Term]] | None = None) -> list[Finding]:
    """The audit across one reaction or profile: unusable species, balance, mixed levels, solvent models, programs.

    Errors (the reaction is excluded): a species with no usable structure, a side (``sides``, e.g.
    :func:`reaction_sides`) whose atoms or charge differ from the first side's, energies or frequencies
    at different levels of theory, different implicit solvent models (or solvent and gas phase).
    Warning: different programs at the same level (grids and defaults differ); solvent single points with and
    without gas-phase ones (two routes, :func:`qcthermo.solution.mixed_routes`).
    """
    found = []
    for n in names:
        if not species[n].usable:
            reasons = [f.message for f in species[n].findings if f.severity == "error"]
            found.append(Finding("error", subject, f"species {n!r} has no usable structure"
                                 + (f" ({reasons[0]})" if reasons else "")))
    if found:
        return found
    found += _balance_findings(sides or {}, species, subject)
    levels = {n: species[n].levels[0] for n in names}
    if len(set(levels.values())) > 1:
        found.append(Finding("error", subject, "mixed levels of theory: "
                             + ", ".join(f"{n} {lv}" for n, lv in levels.items())))
    calcs = _reaction_calcs(names, species)
    solvents = {(c.solvent_model or "gas") for _, c in calcs}
    freq_solvents = {(c.calculation.solvent_model or "gas") for n in names for c in species[n].used}
    if len(solvents) > 1 or len(freq_solvents) > 1:
        found.append(Finding("error", subject, "mixed solvent models: " + ", ".join(
            sorted({f"{n} {c.solvent_model or 'gas'}" for n, c in calcs}))))
    programs = {c.program for _, c in calcs}
    if len(programs) > 1:
        found.append(Finding("warning", subject, f"energies from different programs ({', '.join(sorted(programs))})"))
    return found + mixed_routes(names, species, subject)


def reaction_sides(reaction: ReactionSpec) -> dict[str, list[Term]]:
    """The sides of a reaction that must hold the same atoms and charge: reactants, transition state, products."""
    ts = {f"transition state {reaction.transition_state!r}": [(1.0, reaction.transition_state)]} \
        if reaction.transition_state else {}
    return {"reactants": reaction.reactants, **ts, "products": reaction.products}


def _balance_findings(sides: dict[str, list[Term]], species: dict[str, SpeciesResult], subject: str) -> list[Finding]:
    """Every side against the first, in atoms and charge, counted on the structures whose energies enter.

    reactions.check_balance refuses a reaction file whose species' first files do not balance; this is the
    same rule on what the reaction uses (a structure, or its single point), however the species were built.
    """
    if not sides:
        return []
    names = list(dict.fromkeys(n for terms in sides.values() for _, n in terms))
    structures: dict[str, set[tuple]] = {}
    for n, c in _reaction_calcs(names, species):
        structures.setdefault(n, set()).add((tuple(sorted(Counter(c.symbols).items())), c.charge))
    mixed = [Finding("error", subject, f"species {n!r}: its energies come from structures of different formulas "
                                       "or charges") for n, found in structures.items() if len(found) > 1]
    if mixed:
        return mixed
    one = {n: next(iter(found)) for n, found in structures.items()}
    formulas, charges = {n: Counter(dict(f)) for n, (f, _) in one.items()}, {n: q for n, (_, q) in one.items()}
    (first, reference), *others = sides.items()
    return [Finding("error", subject, f"{label} against the {first}: {problem}") for label, terms in others
            if (problem := balance_problem(reference, terms, formulas, charges))]


def _names(reaction: ReactionSpec) -> list[str]:
    names = [n for _, n in reaction.reactants + reaction.products]
    return names + ([reaction.transition_state] if reaction.transition_state else [])


def _species_notes(names: list[str], species: dict[str, SpeciesResult]) -> list[str]:
    notes = []
    for n in dict.fromkeys(names):
        notes += [f.message if f.message.startswith("species") else f"{n}: {f.message}"
                  for f in species[n].findings if f.severity == "warning"]
    return notes


def _energy_columns(out: dict[str, Any], model: str, unit: str, n_t: int) -> dict[str, np.ndarray]:
    """The energy columns of reactions.csv from :func:`reaction_energetics` output (Eh -> unit)."""
    u, m = unit_suffix(unit), model_tag(model)
    plan = [("dE", "dE"), ("dE_zpe", "dE_zpe"), ("dH", "dH_rrho"), ("dG", "dG_rrho")]
    if model in ("qrrho-enthalpy", "quasi-harmonic"):
        plan.append((f"dH_{m}", "dH"))
    if model != "rrho":
        plan.append((f"dG_{m}", "dG"))
    for direction in ("act", "act_rev"):
        plan += [(f"dE_zpe_{direction}", f"dE_zpe_{direction}"), (f"dH_{direction}", f"dH_rrho_{direction}"),
                 (f"dG_{direction}", f"dG_rrho_{direction}")]
        if model != "rrho":
            plan.append((f"dG_{m}_{direction}", f"dG_{direction}"))
    nan = np.full(n_t, np.nan)
    cols = {}
    for column, key in plan:
        value = out.get(key) if out else None
        cols[f"{column}_{u}"] = nan if value is None else hartree_to(np.asarray(value, dtype=float), unit)
    return cols


def _reactions_table(rf: ReactionFile | None, species: dict[str, SpeciesResult], conditions: Conditions,
                     unit: str, findings: list[Finding]) -> tuple[Any, dict[str, dict]]:
    """reactions.csv as a long DataFrame, and the energetics (Eh) of every included reaction."""
    import pandas as pd

    t = np.atleast_1d(np.asarray(conditions.temperature, dtype=float))
    rows, energetics = [], {}
    for r in rf.reactions if rf else []:
        names = _names(r)
        problems = audit_reaction(names, species, r.name, reaction_sides(r))
        findings.extend(problems)
        errors = [p.message for p in problems if p.severity == "error"]
        values = None if errors else reaction_energetics(r, _values(species))
        notes = [p.message for p in problems if p.severity == "warning"] + _species_notes(names, species)
        if values is not None:
            energetics[r.name] = values
        level = species[names[0]].levels[0] if not errors and species[names[0]].levels else None
        cols = _energy_columns(values, conditions.low_mode_model, unit, len(t))
        for i, temp in enumerate(t):
            row = {"reaction": r.name, "T_K": float(temp), "equation": r.equation, "level": level}
            row.update({k: float(v[i]) for k, v in cols.items()})
            row["status"] = "excluded" if errors else "ok"
            row["notes"] = "; ".join(errors or notes)
            rows.append(row)
    return pd.DataFrame(rows), energetics


def _values(species: dict[str, SpeciesResult]) -> dict[str, dict[str, np.ndarray]]:
    """The ensemble values of the usable species (they hold every key of reactions.QUANTITIES)."""
    return {n: s.values for n, s in species.items() if s.usable}


def _profiles(rf: ReactionFile | None, species: dict[str, SpeciesResult], findings: list[Finding]) -> list[dict]:
    out = []
    for p in rf.profiles if rf else []:
        names = [n for s in p.states for _, n in s]
        problems = audit_reaction(list(dict.fromkeys(names)), species, f"profile {p.name}",
                                  {f"state {i} ({label})": state for i, (label, state) in
                                   enumerate(zip(p.labels, p.states, strict=True), start=1)})
        findings.extend(problems)
        if any(f.severity == "error" for f in problems):
            continue
        out.append(_profile_record(p, species))
    return out


def _profile_record(p: ProfileSpec, species: dict[str, SpeciesResult]) -> dict[str, Any]:
    relative = state_values(p.states, _values(species))
    states = [
        {"label": label, "value_Eh": {"G": v["G"], "G_rrho": v["G_rrho"], "H": v["H"], "E_zpe": v["E_zpe"],
                                      "E": v["E"]},
         "is_ts": any(species[n].options.transition_state for _, n in terms),
         "species": [n for _, n in terms]}
        for label, terms, v in zip(p.labels, p.states, relative, strict=True)
    ]
    return {"name": p.name, "states": states, "cyclic": p.cyclic, **p.presentation}


def _species_table(species: dict[str, SpeciesResult], conditions: Conditions, unit: str = "kcal/mol") -> Any:
    """species.csv as a long DataFrame (one row per species and temperature); a dG_solv column (``unit``) when
    some species took the thermodynamic-cycle route."""
    import pandas as pd

    t = np.atleast_1d(np.asarray(conditions.temperature, dtype=float))
    m = model_tag(conditions.low_mode_model)
    quantities = [("E_elec_Eh", "E"), ("ZPE_Eh", "ZPE"), ("H_Eh", "H_rrho"), ("S_Eh_K", "S_rrho"), ("G_Eh", "G_rrho")]
    if conditions.low_mode_model != "rrho":
        quantities += [(f"H_{m}_Eh", "H"), (f"S_{m}_Eh_K", "S"), (f"G_{m}_Eh", "G")]
    rows = []
    solvation = any(s.usable and s.solvation_energy() is not None for s in species.values())
    for s in species.values():
        low = s.lowest
        thermo = low.thermo if low is not None else None
        imag = thermo.imaginary_frequency if thermo is not None else None
        state = f"{s.options.concentration:g}M" if s.options.concentration else conditions.standard_state
        n_dup = sum(c.status == "duplicate" for c in s.conformers)
        for i, temp in enumerate(t):
            row = {"species": s.name, "T_K": float(temp), "formula": s.formula if s.conformers else None,
                   "charge": s.charge if s.conformers else None,
                   "multiplicity": s.multiplicity if s.conformers else None,
                   "conformers": len(s.used), "duplicates": n_dup,
                   "level": ", ".join(s.levels) or None}
            v = s.values
            row.update({col: float(v[key][i]) if v else np.nan for col, key in quantities})
            row.update({
                "point_group": thermo.point_group if thermo else None,
                "symmetry_number": thermo.symmetry_number if thermo else None,
                "imaginary_frequency_cm1": imag,
                "standard_state": state,
                "transition_state": s.options.transition_state,
                **({f"dG_solv_{unit_suffix(unit)}": _solvation(s, i, unit)} if solvation else {}),
                "populations": s.population_text(),
                "internal_rotors": _rotor_text(thermo, i),
                "status": "ok" if s.usable else "excluded",
                "notes": "; ".join([*_mirror_image_note(s), *(f.message for f in s.findings)]),
            })
            rows.append(row)
    return pd.DataFrame(rows)


def _solvation(s: SpeciesResult, i: int, unit: str) -> float:
    value = s.solvation_energy() if s.usable else None
    return np.nan if value is None else float(hartree_to(np.atleast_1d(value)[i], unit))


def _rotor_text(thermo, i: int) -> str | None:
    """The hindered rotors of the species table: "C1-C2: V0 1026 cm^-1, n 3, sigma 3, I_red 1.576 u A^2,
    S 8.32, Cp 6.31 J/(mol K) (frequency)" per rotor, at the i-th temperature; None when there are none."""
    if thermo is None or not thermo.rotors:
        return None
    return "; ".join(f"{r['label']}: V0 {r['V0']:.0f} cm^-1, n {r['n']}, sigma {r['sigma_int']}, I_red "
                     f"{r['I_red']:.3f} u A^2, S {entropy_to_j_mol_k(r['S'][i]):.2f}, Cp "
                     f"{entropy_to_j_mol_k(r['Cp'][i]):.2f} J/(mol K) ({_display(r['source'])})"
                     for r in rotor_records(thermo))


def _mirror_image_note(s: SpeciesResult) -> list[str]:
    """The species-table note of a species counted with its unseen mirror images (enantiomers = 2)."""
    lone = [c for c, n in zip(s.used, mirror_images(s, s.used), strict=True) if n > 1] if s.usable else []
    if not lone:
        return []
    return [f"enantiomers = 2: {', '.join(Path(c.path).name for c in lone)} counted with its mirror image "
            "(G - RT ln 2, S + R ln 2)"]


def run(directory: str | Path, reactions: str | Path | ReactionFile | None = None,
        conditions: Conditions | None = None, *, energy_unit: str = "kcal/mol", jobs: int | None = None,
        cache: bool = True, progress: bool = False, scheduler: Any = None, workers: int | None = None,
        **condition_values: Any) -> RunResults:
    """The main job: survey ``directory``, build species, reactions and profiles; see :class:`RunResults`.

    ``reactions``: a reaction file (TOML path, or a parsed ReactionFile); without it every frequency
    log is a species and there are no reactions. The conditions are merged as on the command line
    (:mod:`qcthermo.settings`): Conditions()'s defaults < the file's [conditions] < explicit values, which
    are the keywords ``condition_values`` (``temperature=350``, ``standard_state="1M"``: any field of
    Conditions) and the fields set in ``conditions`` (``Conditions.given``); each explicit value that
    differs from the file's is a warning finding. ``scheduler``, ``workers``: read the logs on a Dask cluster
    (:func:`qcthermo.survey`). Raises ReactionFileError for a bad reaction file (with its line),
    QcthermoError for a missing directory or a condition out of bounds; bad logs become findings.
    """
    from .settings import explicit_values, merge_conditions
    from .survey import survey

    try:
        check_energy_unit(energy_unit)
    except ValueError as err:
        raise QcthermoError(str(err)) from None
    rf = reactions if isinstance(reactions, ReactionFile) or reactions is None else load_reaction_file(reactions)
    conditions, overridden = merge_conditions(rf.conditions if rf else None,
                                              explicit_values(conditions, **condition_values))
    survey_result = survey(directory, jobs=jobs, cache=cache, progress=progress, scheduler=scheduler, workers=workers)
    calcs = _Calculations(survey_result)
    findings = [Finding("error", str(Path(survey_result.directory) / rel), reason)
                for rel, reason in survey_result.errors.items()]
    findings += [Finding("warning", "conditions", line) for line in overridden]
    species = _species_from_file(rf, calcs, conditions) if rf else _species_from_survey(survey_result, conditions)
    findings += calcs.findings
    for s in species.values():
        findings += s.findings
    findings += _unused_warnings(survey_result, species)
    findings += _standard_state_warnings(species, conditions)
    reactions_df, energetics = _reactions_table(rf, species, conditions, energy_unit, findings)
    results = RunResults(
        settings=_settings(directory, rf, conditions, energy_unit, jobs, cache, scheduler),
        conditions=conditions, energy_unit=energy_unit, survey=survey_result.to_frame(),
        species=_species_table(species, conditions, energy_unit), reactions=reactions_df, findings=findings,
        species_results=species, profiles=_profiles(rf, species, findings), reaction_file=rf,
        survey_result=survey_result,
    )
    add_kinetics(results, energetics)
    _add_simulation(results)
    results.heats_of_formation = _heats_of_formation(rf, species, conditions, results.findings)
    if rf and rf.pka:
        results.pka, found = pka_table(rf, species, conditions, energy_unit)
        results.findings += found
    if rf and rf.redox:
        results.redox, found = redox_table(rf, species, conditions, energy_unit)
        results.findings += found
    results.mechanism, results.mechanism_left_out = mechanism_reactions(results)
    from .export.nasa7 import run_enthalpy_reference

    results.settings["nasa7_enthalpy_reference"] = run_enthalpy_reference(results)[1][0]
    results.findings = _sorted_findings(results.findings)
    return results


def _heats_of_formation(rf: ReactionFile | None, species: dict[str, SpeciesResult], conditions: Conditions,
                        findings: list[Finding]) -> Any:
    """heats_of_formation.csv as a DataFrame, or None without [heats_of_formation]; the science is
    :func:`qcthermo.formation.heats_of_formation`. Each minimum's H(298.15 K) is its ensemble enthalpy under
    the NASA-7 fits' low-mode model (export.nasa7.fit_model), so that thermo.yaml's h(298.15) is the table's
    value; H(0) is E + ZPE of its lowest conformer (the only one populated at 0 K)."""
    if rf is None or rf.heats_of_formation is None:
        return None
    import pandas as pd

    from .export.nasa7 import fit_model
    from .formation import FormationInput, bonds, heats_of_formation
    from .species import species_thermo

    scheme = rf.heats_of_formation
    cond = conditions.replace(temperature=np.array([298.15]), standard_state="1atm", pressure=None,
                              low_mode_model=fit_model(conditions.low_mode_model)[0])
    inputs = {}
    for name, s in species.items():
        if not s.usable or s.options.transition_state:
            continue
        st = species_thermo(s, cond)
        calc = s.lowest.calculation
        inputs[name] = FormationInput(
            name, tuple(calc.symbols), s.levels[0].split("//")[0],
            min(float(c.values["E"][0] + c.values["ZPE"][0]) for c in st.conformers), float(st.values["H"][0]),
            tuple(bonds(calc.symbols, calc.coordinates)) if scheme.bond_corrections else (),
            gas=not in_solvent(s),
            charge=s.charge)
    findings += [Finding("warning", n, f"species {n!r} is in [heats_of_formation] atoms but is not a single atom")
                 for n in scheme.atoms if n in inputs and len(inputs[n].symbols) != 1]
    rows, notes = heats_of_formation(inputs, scheme)
    findings += [Finding("warning", n, message) for n, message in notes]
    return pd.DataFrame(rows)


def formation_caption(results: RunResults) -> str:
    """The caption of heats_of_formation.csv/md/tex: units, temperatures, sources, the model of H(298) - H(0)."""
    from .export.nasa7 import fit_model

    model = fit_model(results.conditions.low_mode_model)[0]
    return ("Standard heats of formation of the gas-phase species, kJ/mol, at 0 K and 298.15 K (1 atm); routes: "
            "atomization (Curtiss et al., J. Chem. Phys. 1997, 106, 1063; atomic data NIST-JANAF), reference values "
            "and reference reactions as given; H(298.15) - H(0) from the ideal-gas model with low-mode model "
            f"{MODEL_NAMES[model]}; the NASA-7 column marks the value thermo.yaml and thermo.dat use.")


def _add_simulation(results: RunResults) -> None:
    """The [simulation] of the reaction file, when it has one (qcthermo.simulate); what stops it is an error
    finding, so the rest of the run is still written."""
    rf = results.reaction_file
    if rf is None or rf.simulation is None:
        return
    from .simulate import simulate

    try:
        results.simulation = simulate(results)
    except QcthermoError as err:
        results.findings.append(Finding("error", "simulation", str(err)))


def _standard_state_warnings(species: dict[str, SpeciesResult], conditions: Conditions) -> list[Finding]:
    """Species computed in a continuum solvent but given a gas standard state: their G then lacks the
    RT ln(24.46) = 1.89 kcal/mol (298 K) of 1 atm -> 1 M per species, the usual convention for solutes
    (common practice; docs/reactions.md). Said once per species, as a warning: a gas-phase comparison
    may be meant."""
    if conditions.pressure is None and parse_standard_state(conditions.standard_state)[0] == "concentration":
        return []
    state = conditions.standard_state if conditions.pressure is None else f"{conditions.pressure:g} Pa"
    return [Finding("warning", name, f"species {name!r}: computed with a solvent model ({s.solvent}) "
                    f"but at the gas standard state {state}; solutes are usually given 1M (--standard-state 1M)")
            for name, s in species.items()
            if s.usable and s.solvent and s.options.concentration is None]


def _unused_warnings(survey_result, species: dict[str, SpeciesResult]) -> list[Finding]:
    """The survey's warnings about files no species uses (a killed job left in the tree, say)."""
    root = Path(survey_result.directory)
    used = {Path(p).resolve() for s in species.values() for c in s.conformers
            for p in (c.path, c.single_point.path if c.single_point else None) if p}
    return [Finding("warning", str(root / row["path"]), f"{row['reason']} (not used by any species)")
            for row in survey_result.rows
            if row["status"] == "warning" and (root / row["path"]).resolve() not in used]


def _sorted_findings(findings: list[Finding]) -> list[Finding]:
    """Errors first, then warnings; each kept once, in the order found."""
    unique = list(dict.fromkeys(findings))
    return [f for f in unique if f.severity == "error"] + [f for f in unique if f.severity != "error"]


def _library_versions() -> dict[str, str]:
    from importlib.metadata import PackageNotFoundError, version

    out = {"python": platform.python_version()}
    for lib in ("numpy", "scipy", "pandas", "cclib", "ase"):
        try:
            out[lib] = version(lib)
        except PackageNotFoundError:
            out[lib] = "absent"
    return out


def conditions_dict(conditions: Conditions) -> dict[str, Any]:
    """The Conditions as JSON-ready values (temperature arrays as lists)."""
    from dataclasses import asdict

    out = asdict(conditions)
    t = np.asarray(conditions.temperature, dtype=float)
    out["temperature"] = t.tolist()
    return out


def _settings(directory, rf, conditions, energy_unit, jobs, cache, scheduler) -> dict[str, Any]:
    from .export.nasa7 import fit_model

    return {
        "qcthermo_version": __version__,
        "libraries": _library_versions(),
        "directory": str(Path(directory).resolve()),
        "reaction_file": str(rf.path) if rf else None,
        "conditions": conditions_dict(conditions),
        "energy_unit": energy_unit,
        "ensemble": dict(rf.ensemble) if rf else dict(ENSEMBLE_DEFAULTS),
        "solution": constants_used(rf) if rf else {},
        "nasa7": "thermo.yaml and thermo.dat " + fit_model(conditions.low_mode_model)[1],
        "jobs": jobs,
        "cache": cache,
        # an address, local:N or a batch system as given; a Client as its repr (it names the scheduler)
        "scheduler": scheduler if scheduler is None or isinstance(scheduler, str) else repr(scheduler),
    }


# -- kinetics -------------------------------------------------------------------------------------


def _participants(terms, species: dict[str, SpeciesResult], values: dict | None = None) -> list:
    """One side of a reaction as qcthermo.kinetics takes it: G, E+ZPE, coefficient, sigma, own concentration;
    ``values``: species -> values to use instead of the species' own (another temperature grid)."""
    from .kinetics import Participant

    values = values or {}
    return [Participant(values.get(n, species[n].values)["G"], values.get(n, species[n].values)["E_zpe"], c,
                        _symmetry_number(species[n]), species[n].options.concentration is not None)
            for c, n in terms]


def _symmetry_number(s: SpeciesResult) -> int:
    """The rotational symmetry number of a species' lowest conformer (the one its G was computed with)."""
    low = s.lowest
    return low.thermo.symmetry_number if low and low.thermo else 1


def _transition_state(s: SpeciesResult, values: dict | None = None):
    from .kinetics import TransitionState

    v = values or s.values
    return TransitionState(v["G"], v["E_zpe"], _symmetry_number(s), s.lowest.thermo.imaginary_frequency)


def _double_count(reaction: ReactionSpec, ts: SpeciesResult) -> list[Finding]:
    """A warning when the TS's mirror image is counted twice: in its G (enantiomers = 2) and, perhaps, in the
    user's path degeneracy L (docs/kinetics.md: one or the other)."""
    if not reaction.degeneracy or not ts.usable or not (mirror_images(ts, ts.used) > 1).any():
        return []
    return [Finding("warning", reaction.name, f"degeneracy = {reaction.degeneracy:g} and enantiomers = 2 on "
                    f"{ts.name!r}: if L counts the mirror-image path, k is doubled twice (use one or the other)")]


def add_kinetics(results: RunResults, energetics: dict[str, dict]) -> None:
    """Add kappa, k_forward, k_reverse, k_unit to ``results.reactions`` and the rates/Arrhenius/energy-span
    tables. The science is :func:`qcthermo.kinetics.reaction_kinetics`; this gathers its inputs from the
    species of every included reaction with a transition state (``energetics`` holds the included ones),
    in the standard state the free energies used, and writes the columns."""
    import pandas as pd

    from . import kinetics

    df, species, cond = results.reactions, results.species_results, results.conditions
    t = results.temperatures
    if df.empty:  # no [[reaction]]: a cyclic [[profile]] still has its energy span
        results.energy_span = _energy_span(results, kinetics)
        return
    for col in ("kappa", "k_forward", "k_reverse"):
        df[col] = np.nan
    df["k_unit"] = None
    rf = results.reaction_file
    state = cond.pressure if cond.pressure is not None else cond.standard_state  # what the free energies used
    rate_rows, fits = [], []
    for r in rf.reactions:
        if r.name not in energetics or not r.transition_state:
            continue
        try:
            k = kinetics.reaction_kinetics(_participants(r.reactants, species), _participants(r.products, species),
                                           _transition_state(species[r.transition_state]), t, state,
                                           r.tunnelling, r.degeneracy)
        except ValueError as err:
            results.findings.append(Finding("warning", r.name, f"no rate constant: {err}"))
            continue
        results.findings += _double_count(r, species[r.transition_state])
        mask = df["reaction"] == r.name
        for col in ("kappa", "k_forward", "k_reverse"):
            df.loc[mask, col] = np.atleast_1d(k[col])
        same = k["k_unit_forward"] == k["k_unit_reverse"]
        df.loc[mask, "k_unit"] = k["k_unit_forward"] if same else \
            f"{k['k_unit_forward']} (forward), {k['k_unit_reverse']} (reverse)"
        results.findings += [Finding("warning", r.name, n) for n in k["notes"]]
        for i, temp in enumerate(t):
            rate_rows.append({"reaction": r.name, "T_K": temp, "kappa": np.atleast_1d(k["kappa"])[i],
                              "kappa_wigner": np.atleast_1d(k["kappa_wigner"])[i],
                              "kappa_eckart": np.atleast_1d(k["kappa_eckart"])[i],
                              "k_forward": np.atleast_1d(k["k_forward"])[i], "k_unit_forward": k["k_unit_forward"],
                              "k_reverse": np.atleast_1d(k["k_reverse"])[i], "k_unit_reverse": k["k_unit_reverse"]})
        if len(t) >= 3:
            fits += _arrhenius_rows(r.name, t, k, kinetics)
    results.reactions = df[[c for c in df.columns if c not in ("status", "notes")] + ["status", "notes"]]
    if len(t) > 1:
        results.rates = pd.DataFrame(rate_rows)
        results.arrhenius = pd.DataFrame(fits)
    results.energy_span = _energy_span(results, kinetics)


#: |n| of a modified Arrhenius fit beyond which its parameters are taken as ill-determined (common practice:
#: tabulated exponents lie within a few units of 0)
ARRHENIUS_N_LIMIT = 10.0


def _arrhenius_rows(name: str, t: np.ndarray, k: dict, kinetics) -> list[dict]:
    """Per direction, the modified Arrhenius fit A T^n exp(-Ea/RT). Over a narrow range, curvature from deep
    tunnelling makes n and Ea trade off (n = 56 with Ea = -15 kcal/mol on the sample hydration, 250-400 K):
    the note then says that the parameters mean little and k(T) itself is the result."""
    rows = []
    for direction in ("forward", "reverse"):
        try:
            fit = kinetics.fit_arrhenius(t, np.atleast_1d(k[f"k_{direction}"]), unit=k[f"k_unit_{direction}"])
        except ValueError:
            continue
        note = (f"|n| > {ARRHENIUS_N_LIMIT:g}: n and Ea trade off over {fit.T_min:g}-{fit.T_max:g} K and mean "
                "little one by one; use k(T) from rates.csv or fit a wider range") \
            if abs(fit.n) > ARRHENIUS_N_LIMIT else ""
        rows.append({"reaction": name, "direction": direction, "A": fit.A, "A_unit": f"{fit.unit} K^-n", "n": fit.n,
                     "Ea_kcal_mol": fit.Ea_kcal_mol, "Ea_kJ_mol": fit.Ea_kJ_mol, "T_min_K": fit.T_min,
                     "T_max_K": fit.T_max, "max_rel_error": fit.max_rel_error, "note": note})
    return rows


#: temperatures of a mechanism's rate fits when the run has fewer than three, K (combustion and pyrolysis range)
MECHANISM_TEMPERATURES = np.arange(300.0, 2001.0, 50.0)


def mechanism_reactions(results: RunResults) -> tuple[list, list[str]]:
    """The run's reactions as a kinetics code takes them (export.mechanism.ArrheniusReaction), and a line per reaction
    left out saying why.

    A reaction enters when it was included, every species is a gas-phase species at the standard state (no
    solvent model, no own concentration), and it has a rate constant (:func:`_mechanism_rates`: from its transition
    state, or the reaction file's ``rate``), over the run's temperatures when it has three or more, else over
    :data:`MECHANISM_TEMPERATURES`, at 1 mol/L so that k is in Cantera's concentration units; then a modified
    Arrhenius fit (docs/formation.md, "Mechanism")."""
    from . import kinetics
    from .export.mechanism import arrhenius_reaction
    from .species import species_thermo

    rf = results.reaction_file
    t = results.temperatures if len(results.temperatures) >= 3 else MECHANISM_TEMPERATURES
    cond = results.conditions.replace(temperature=t, standard_state="1M", pressure=None)
    df = results.reactions
    included = set(df["reaction"][df["status"] == "ok"]) if len(df) else set()
    out, left_out, values = [], [], {}
    for r in rf.reactions if rf else []:
        names = _names(r)
        rate = getattr(r, "rate", None)
        why = ("excluded by the audit (reactions.csv)" if r.name not in included else
               "not a gas-phase reaction at the standard state" if any(
                   in_solvent(results.species_results[n]) or results.species_results[n].options.concentration
                   for n in names) else
               "no transition state (and no rate in the reaction file)" if not r.transition_state and rate is None else
               "a diffusion limit is for solution" if rate == "diffusion" else None)
        if why is None:
            for n in set(names) - set(values):  # each species once, however many reactions it is in
                values[n] = species_thermo(results.species_results[n], cond).values
            try:
                k_forward, k_reverse, unit = _mechanism_rates(r, results, values, t)
                fit = kinetics.fit_arrhenius(t, k_forward, unit=unit) if r.transition_state else \
                    kinetics.ArrheniusFit(float(k_forward[0]), 0.0, 0.0, float(t.min()), float(t.max()), 0.0, unit)
                out.append(arrhenius_reaction(r.name, r.reactants, r.products, fit, t, k_forward, k_reverse,
                                              given=not r.transition_state))
                continue
            except ValueError as err:
                why = f"no rate constant: {err}"
        left_out.append(f"{r.name}: left out, {why}")
    return out, left_out


def _mechanism_rates(r: ReactionSpec, results: RunResults, values: dict, t: np.ndarray):
    """k_forward, k_reverse (over ``t``, mol/L units) and the forward unit of one mechanism reaction: TST from its
    transition state (kinetics.reaction_kinetics, its tunnelling and degeneracy), or the reaction file's ``rate``
    (the unit of the run's rate constants: cm^3 molecule^-1 s^-1 at a gas standard state becomes M^-1 s^-1 by
    N_A / 1000 per order) with k_reverse = k_forward / K from the species' G at 1 mol/L."""
    from . import kinetics
    from .units import K_B_EH, N_A

    species = results.species_results
    if r.transition_state:
        k = kinetics.reaction_kinetics(_participants(r.reactants, species, values),
                                       _participants(r.products, species, values),
                                       _transition_state(species[r.transition_state], values[r.transition_state]),
                                       t, "1M", r.tunnelling, r.degeneracy)
        return k["k_forward"], k["k_reverse"], k["k_unit_forward"]
    order = r.molecularity_forward - 1
    c = results.conditions
    gas = c.pressure is not None or parse_standard_state(c.standard_state)[0] == "pressure"
    k_forward = np.full(t.shape, float(r.rate) * ((N_A / 1000.0) ** order if gas else 1.0))
    dg = sum(n * values[s]["G"] for n, s in r.products) - sum(n * values[s]["G"] for n, s in r.reactants)
    return k_forward, k_forward * np.exp(dg / (K_B_EH * t)), kinetics.rate_constant_unit(round(order + 1), "M")


def in_solvent(s: SpeciesResult) -> bool:
    """Whether any energy of a species (frequency job or single point) was computed with a solvent model."""
    return any(calc.solvent_model for c in s.used for calc in (c.calculation, c.single_point) if calc)


def _energy_span(results: RunResults, kinetics) -> Any:
    """Energy span of every cyclic profile: the last state closes the cycle (dG_r = its G)."""
    import pandas as pd

    rows = []
    marked = int(np.argmin(np.abs(results.temperatures - 298.15)))  # the temperature the diagram shows
    for record in results.profiles:
        if not record.get("cyclic"):
            continue
        states = record["states"]
        for i, temp in enumerate(results.temperatures):
            cycle = [(s["label"], float(np.atleast_1d(s["value_Eh"]["G"])[i]), s["is_ts"]) for s in states[:-1]]
            d_gr = float(np.atleast_1d(states[-1]["value_Eh"]["G"])[i])
            try:
                es = kinetics.energy_span(cycle, d_gr, temp)
            except ValueError as err:
                results.findings.append(Finding("warning", f"profile {record['name']}", f"no energy span: {err}"))
                break
            if i == marked:
                record["marks"] = {"tdts": es.tdts, "tdi": es.tdi}
            rows.append({"profile": record["name"], "T_K": float(temp), "TOF_s-1": es.tof,
                         "TOF_energy_span_s-1": es.tof_energy_span,
                         f"energy_span_{unit_suffix(results.energy_unit)}": hartree_to(es.energy_span,
                                                                                      results.energy_unit),
                         "TDTS": es.tdts, "TDI": es.tdi,
                         "degree_of_control": "; ".join(f"{k} {v:.3f}" for k, v in es.degree_of_control.items())})
    return pd.DataFrame(rows) if rows else None


# -- writing ----------------------------------------------------------------------------------------


def _temperature_text(t: np.ndarray) -> str:
    return f"T = {t[0]:g} K" if len(t) == 1 else f"T = {t[0]:g}-{t[-1]:g} K ({len(t)} temperatures)"


def caption_context(results: RunResults, names: set[str] | None = None) -> str:
    """"T = 298.15 K, standard state 1M, low-mode model ..., frequency scale ..., level ..." for captions;
    the levels of theory are those of species ``names`` (default: all)."""
    c = results.conditions
    levels = sorted({lv for n, s in results.species_results.items() if names is None or n in names
                     for lv in s.levels})
    model = MODEL_NAMES[c.low_mode_model] + (f", threshold {c.low_mode_threshold:g} cm^-1"
                                             if c.low_mode_model != "rrho" else "")
    scale = c.frequency_scale if c.zpe_scale is None else f"{c.frequency_scale} (ZPE {c.zpe_scale})"
    tight = ENSEMBLE_DEFAULTS["single_point_rmsd"]
    loose = results.settings.get("ensemble", {}).get("single_point_rmsd", tight)
    loosened = f"; single points paired up to {loose:g} A from their structure (loosened from {tight:g} A)" \
        if loose > tight else ""
    rotors = "; torsions as 1-D hindered rotors" if c.internal_rotors == "hindered" else ""
    return (f"{_temperature_text(results.temperatures)}; standard state {c.standard_state}; low-mode model {model}; "
            f"frequency scale factor {scale}{rotors}; level of theory {', '.join(levels) or 'n/a'}{loosened}")


def solution_caption(results: RunResults, stem: str) -> str:
    """The literature constants of the pKa (``stem`` "pka") or potential table, by name (docs/solution.md)."""
    s = results.reaction_file.solution
    proton = f"proton solvation {s['proton_solvation']}"
    return proton if stem == "pka" else f"{proton}, absolute SHE {s['absolute_she']}, electron {s['electron']}"


def _reaction_subjects(results: RunResults) -> tuple[set[str], set[str]]:
    """Species in some reaction or profile, and every subject (reaction, species, file) they stand for."""
    rf = results.reaction_file
    if rf is None:
        return set(), set()
    names = {n for r in rf.reactions for n in _names(r)} | {n for p in rf.profiles for s in p.states for _, n in s}
    subjects = {r.name for r in rf.reactions} | {f"profile {p.name}" for p in rf.profiles}
    return names, subjects | species_subjects(results, names)


def profile_subjects(results: RunResults, profiles: list[str] | None = None) -> set[str]:
    """Every subject of findings about the [[profile]] tables ``profiles`` (default: all): the profiles,
    their species and the files of those species."""
    chosen = [p for p in results.reaction_file.profiles if profiles is None or p.name in profiles]
    names = {n for p in chosen for s in p.states for _, n in s}
    return {f"profile {p.name}" for p in chosen} | species_subjects(results, names)


def species_subjects(results: RunResults, names: set[str]) -> set[str]:
    """The species ``names`` and every file they read (frequency logs, single points, as given and as read)."""
    rf = results.reaction_file
    subjects = set(names)
    for n in names:
        subjects |= {c.path for c in results.species_results[n].conformers}
        subjects |= {c.single_point.path for c in results.species_results[n].conformers if c.single_point}
        if rf is not None and n in rf.species:
            subjects |= {str(p) for p in (*rf.species[n].logs, *rf.species[n].single_point)}
    return subjects


def _table_notes(results: RunResults, subjects: set[str] | None = None) -> list[str]:
    """Findings as table notes (those about ``subjects`` only, when given), errors first."""
    notes = [f"{f.severity}: {_display(f.subject)}: {f.message}" for f in results.findings
             if subjects is None or f.subject in subjects]
    own = [s.name for s in results.species_results.values() if s.options.concentration
           and (subjects is None or s.name in subjects)]
    if own:
        notes.insert(0, "at their own concentration (not the standard state): " + ", ".join(own))
    return notes


def _display(subject: str) -> str:
    return Path(subject).name if ("/" in subject or "\\" in subject) else subject


def _write_table(df, out_dir: Path, stem: str, caption: str, notes: list[str], energy_unit: str = "kcal/mol",
                 paper_caption: str | None = None) -> list[Path]:
    """The full table as csv and xlsx, what a paper prints (:func:`~qcthermo.export.tables.paper_table`) as
    Markdown and LaTeX, under ``paper_caption`` when it differs."""
    from .export.tables import paper_table, write_tables

    paper = paper_table(df, stem, energy_unit)
    common = dict(notes=notes, label=f"tab:{stem}")
    return [*write_tables(df, out_dir, stem, formats=("csv", "xlsx"), caption=caption, **common),
            *write_tables(paper.frame, out_dir, stem, formats=("md", "tex"), caption=paper_caption or caption,
                          row_notes=paper.row_notes, sections=paper.sections, **common)]


def _xyz_blocks(results: RunResults) -> list:
    from .export.xyz import XyzBlock

    blocks = []
    for s in results.species_results.values():
        for c in s.used:
            v = c.values
            name = s.name if len(s.used) == 1 else f"{s.name}/{Path(c.path).stem}"
            blocks.append(XyzBlock(name, c.calculation.symbols, c.calculation.coordinates, {
                "level": c.level, "charge": c.calculation.charge, "multiplicity": c.calculation.multiplicity,
                "E_Eh": float(v["E"][0]) if v else None,
                f"G_{model_tag(results.conditions.low_mode_model)}_Eh": float(v["G"][0]) if v else None,
                "T_K": float(results.temperatures[0]),
                "population": float(np.atleast_1d(c.population)[0]),
                "source": Path(c.path).name,
            }))
    return blocks


def _sha256(path: Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for chunk in iter(lambda: handle.read(1 << 20), b""):
            digest.update(chunk)
    return digest.hexdigest()


def run_json(results: RunResults, written: list[Path]) -> str:
    """run.json: tool version, every setting, sha256 of every input file, all findings, what was written."""
    from .fileio import json_text

    inputs = [{"path": str(p), "sha256": _sha256(p), "bytes": p.stat().st_size} for p in results.input_files()
              if p.is_file()]
    doc = {
        "tool": "qcthermo",
        "status": "complete",
        "version": __version__,
        "settings": results.settings,
        "inputs": inputs,
        "survey": {"summary": results.survey_result.summary(), "notes": results.survey_result.notes,
                   "stats": results.survey_result.stats} if results.survey_result is not None else None,
        "findings": [f._asdict() for f in results.findings],
        "exit_status": results.exit_status,
        "species": {n: {"status": "ok" if s.usable else "excluded", "level": s.levels,
                        "conformers": [{"path": c.path, "status": c.status, "reason": c.reason,
                                        "duplicate_of": c.duplicate_of, "mirror_of": c.mirror_of,
                                        "single_point": c.single_point.path if c.single_point else None,
                                        "gas_single_point": c.gas_single_point.path if c.gas_single_point
                                        else None,
                                        "population": np.atleast_1d(c.population)}
                                       for c in s.conformers]}
                    for n, s in results.species_results.items()},
        "reactions": results.reactions.to_dict(orient="records") if len(results.reactions) else [],
        "heats_of_formation": results.heats_of_formation.to_dict(orient="records")
        if results.heats_of_formation is not None else None,
        **{k: df.to_dict(orient="records") for k, df in (("pka", results.pka), ("redox", results.redox))
           if df is not None},
        "simulation": _simulation_record(results.simulation),
        "files": sorted(p.name for p in written),
    }
    return json_text(doc, indent=2)  # strict JSON: NaN and inf as null, file names in their display form


def _simulation_record(sim) -> dict[str, Any] | None:
    """What run.json keeps of a simulation: its settings, notes, TOF and the solver's counts."""
    if sim is None:
        return None
    from dataclasses import asdict

    return {"settings": asdict(sim.settings), "notes": sim.notes, "tof_s-1": sim.tof, "solver": sim.statistics}


def _write_all(results: RunResults, out_dir: Path) -> list[Path]:
    from .export.conformers import write_conformers
    from .export.tables import SPECIES_RELATIVE
    from .export.xyz import write_xyz_file
    from .fileio import atomic_write, csv_text, display, printable_frame

    # text files show a non-UTF-8 file name as \xNN by themselves (atomic_open); a workbook is binary, so the
    # tables and their notes are given in that form
    written = [atomic_write(out_dir / "survey.csv", csv_text(results.survey))]
    context = display(caption_context(results))
    written += _write_table(printable_frame(results.species), out_dir, "species",
                            f"Species thermochemistry, hartree per molecule; {context}.",
                            [display(n) for n in _table_notes(results)], results.energy_unit,
                            f"Species thermochemistry, {SPECIES_RELATIVE.format(unit=results.energy_unit)}; "
                            f"{context}.")
    if len(results.reactions):
        names, subjects = _reaction_subjects(results)
        written += _write_table(printable_frame(results.reactions), out_dir, "reactions", "Reaction energies and "
                                f"free energies of activation, {results.energy_unit}; "
                                f"{display(caption_context(results, names))}.",
                                [display(n) for n in _table_notes(results, subjects)], results.energy_unit)
    if results.heats_of_formation is not None and len(results.heats_of_formation):
        written += _write_table(results.heats_of_formation, out_dir, "heats_of_formation",
                                formation_caption(results), [display(n) for n in _table_notes(
                                    results, set(results.heats_of_formation["species"]))])
    for stem, df, what in (("pka", results.pka, "pKa values"), ("redox", results.redox, "Reduction potentials")):
        if df is not None and len(df):
            names = {n for col in ("acid", "base", "oxidised", "reduced") if col in df for n in df[col]}
            written += _write_table(printable_frame(df), out_dir, stem, f"{what} (solutes at 1 mol/L; "
                                    f"{display(solution_caption(results, stem))}); "
                                    f"{display(caption_context(results, names))}.",
                                    [display(n) for n in _table_notes(results, set(df["name"]))], results.energy_unit)
    for stem, df in (("rates", results.rates), ("arrhenius", results.arrhenius),
                     ("energy_span", results.energy_span)):
        if df is not None and len(df):
            written.append(atomic_write(out_dir / f"{stem}.csv", csv_text(df)))
    blocks = _xyz_blocks(results)
    if blocks:
        written.append(write_xyz_file(out_dir / "coordinates.xyz", blocks))
    written += write_conformers(results, out_dir, display(caption_context(results)), _write_table)
    if results.simulation is not None:
        from .export.simulation import write_simulation

        written += write_simulation(results, out_dir, results.settings.get("time_axis", "auto"))
    written += _model_files_figures_and_documents(results, out_dir)
    return written


def _model_files_figures_and_documents(results: RunResults, out_dir: Path) -> list[Path]:
    """NASA-7 files (thermo.yaml, thermo.dat), figures, supporting information and the report."""
    from .export.figures import write_profile_figures
    from .export.nasa7 import write_run_thermo
    from .export.report import write_report
    from .export.si import write_si

    written = [Path(p) for p in write_run_thermo(results, out_dir)]
    written += write_profile_figures(results, out_dir)
    written += write_si(results, out_dir)
    written.append(write_report(results, out_dir))
    return written


__all__ = ["RunResults", "audit_reaction", "run"]

"""The main job in one call: survey, species, reactions, profiles, kinetics and every export.

``qcthermo.run(directory, reactions="reactions.toml")`` returns a :class:`RunResults`; its
:meth:`RunResults.write` writes the files listed in docs/reactions.md, "Outputs". This module only strings
the steps together, in the order of the data flow:

1. the survey of the logs (qcthermo.survey) and the reaction file (qcthermo.reactions);
2. the species, built from their files (qcthermo.species; scans read for hindered rotors);
3. the audit across every reaction and profile, with their energetics (qcthermo.reaction_audit);
4. the kinetics (qcthermo.run_kinetics), the simulation (qcthermo.simulate), heats of formation
   (qcthermo.formation), pKa and potentials (qcthermo.solution), the Cantera mechanism;
5. the tables (qcthermo.export.run_tables) and, on :meth:`RunResults.write`, every file
   (qcthermo.export.run_outputs) into a folder kept safe by qcthermo.fileio.
"""

from __future__ import annotations

import platform
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from . import __version__
from .errors import LogReadError, QcthermoError
from .fileio import display
from .reaction_audit import audit_profiles, audit_reactions
from .reactions import ENSEMBLE_DEFAULTS, ReactionFile, check_balance, load_reaction_file
from .records import Calculation, Conditions, TorsionScan, parse_standard_state
from .run_kinetics import add_kinetics, in_solvent, mechanism_reactions
from .solution import check_solution, constants_used, pka_table, redox_table, solvent_label
from .species import Finding, SpeciesOptions, SpeciesResult, build_species
from .units import check_energy_unit


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
            "E_zpe", "E"}, is_ts, species, terms: [{coefficient, label, is_ts}]}], cyclic, color, label_states,
            style, order, marks}, every state relative to the first, hartree (arrays over T).
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
            (:func:`qcthermo.run_kinetics.mechanism_reactions`), written into thermo.yaml and thermo.dat;
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
        from .export.run_outputs import run_json, write_run_outputs
        from .fileio import write_run_folder

        return write_run_folder(out, force, lambda out_dir: write_run_outputs(self, out_dir),
                                lambda files: run_json(self, files))


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
    from .export.run_tables import reactions_table, species_table
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
    outcomes = audit_reactions(rf, species)
    findings += [f for o in outcomes for f in o.findings]
    profiles, found = audit_profiles(rf, species)
    findings += found
    results = RunResults(
        settings=_settings(directory, rf, conditions, energy_unit, jobs, cache, scheduler),
        conditions=conditions, energy_unit=energy_unit, survey=survey_result.to_frame(),
        species=species_table(species, conditions, energy_unit),
        reactions=reactions_table(outcomes, conditions, energy_unit), findings=findings,
        species_results=species, profiles=profiles, reaction_file=rf, survey_result=survey_result,
    )
    add_kinetics(results, {o.reaction.name: o.energetics for o in outcomes if o.energetics is not None})
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


__all__ = ["RunResults", "default_conditions", "run"]

"""read_log(): one log file in, one normalised Calculation out (or a one-line LogReadError).

Order of work: load the file once and recognise the program from its banner (source.py); cclib on the
text in memory (cclib_data.py), unless the log is of a kind cclib 1.8.1 is known to fail on; the
program's own extractor where cclib fails (or would) or misses the geometry or energy (fallback.py);
then the same normalisation for every program (normalise.py, programs.py).
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from ..errors import LogReadError
from ..records import Calculation
from . import cclib_data, checks, fallback, literals
from .normalise import (
    PROJECTED_ZERO_CM,
    basis_name,
    inferred_multiplicity,
    method_name,
    n_vibrations,
    normal_mode_vectors,
    solvent_model_name,
    vibrational_modes,
)
from .programs import (
    RULES,
    gamess_uk_method,
    job_spec,
    job_types_from_spec,
    last_s2,
    optimisation_converged,
    rules,
    terminated_normally,
)
from .slices import displacements_start, xtb_optimisation_end
from .source import LogSource, load
from .text import find, indexed, last_line_match, lines_with

#: job types that are not a single point
_NOT_SINGLE_POINT = {"optimization", "frequencies", "saddle-search", "irc", "scan"}


def read_log(path: str | Path) -> Calculation:
    """Read one quantum-chemistry log (or a geometry file) into a :class:`Calculation`.

    Raises :class:`~qcthermo.errors.LogReadError` (one line) for anything it cannot read: empty,
    binary, not a log, an unsupported program, or a log that gives no geometry or no energy.
    """
    source = load(path, scan=literals.scan)
    if source.program is None:
        return _read_geometry(source)
    try:
        with indexed(source.text, source.literals):
            return _read(source)
    except LogReadError:
        raise
    except Exception as err:  # a malformed log must never surface as a traceback
        raise LogReadError(source.path, f"unreadable {source.program} output ({type(err).__name__}: {err})") from None


def _read(source: LogSource) -> Calculation:
    """One run: read it. Several (logs pasted into one file): the last readable one, if all that read are
    of one molecule; otherwise refuse, as the file mixes molecules (docs/readers.md, "Damaged input")."""
    marks = checks.run_marks(source.text)
    _refuse(source, checks.mixed_programs_problem(source, marks))
    _refuse(source, checks.spliced_run_problem(source, marks))
    runs = checks.split_runs(source, marks)
    if len(runs) == 1:
        return _read_run(source)
    read, reasons = [], []
    for number, run in enumerate(runs, 1):
        try:
            read.append((number, _read_run(run)))
        except LogReadError as err:
            reasons.append(err.reason)
    what = f"{len(runs)} {source.program} runs in one file"
    if not read:
        raise LogReadError(source.path, f"{what}, none readable (the last: {reasons[-1]})")
    formulas = list(dict.fromkeys(calc.formula for _, calc in read))
    if len(formulas) > 1:
        raise LogReadError(source.path, f"{what} for different molecules ({', '.join(formulas)}): "
                                        "logs pasted together? split the file")
    number, calc = read[-1]
    calc.notes.append(f"{what} (logs pasted together?), all {formulas[0]}: run {number}, the last readable, read")
    return calc


def _read_run(source: LogSource) -> Calculation:
    _refuse(source, checks.invariant_problem(source.program, source.text))
    failure = cclib_data.known_failure(source)
    data, failure = (None, failure) if failure else cclib_data.parse(source)
    found = cclib_data.fields(data, source.program) if data is not None else {}
    notes: list[str] = found.pop("notes", [])
    if source.program == "xtb" and "symbols" in found and "coordinates" not in found:
        if find(source.text, "final structure:") >= 0:  # printed, but cclib could not read it
            raise LogReadError(source.path, "xTB's final structure block is damaged (its rows do not fit its atoms)")
        if xtb_optimisation_end(source.text) >= 0:  # xTB prints the final structure right after this line
            raise LogReadError(source.path, "xTB's optimisation ended but its final structure block is missing "
                                            "(lines lost from the log?)")
        found["coordinates"] = _xtb_coordinate_file(source, found["symbols"], notes)
        found["coordinates_unknown"] = not np.all(np.isfinite(found["coordinates"]))
    extractor = fallback.EXTRACTORS.get(source.program)
    if "coordinates" not in found or "energy" not in found:
        reason = failure or "cclib found no " + ("geometry" if "coordinates" not in found else "energy")
        if extractor is None:
            raise LogReadError(source.path, f"cannot read this {source.program} output: {reason}")
        found = extractor(source.text)
        notes = [f"fallback extractor used: {reason}"]
    if "coordinates" not in found:
        raise LogReadError(source.path, f"no geometry in this {source.program} output (truncated or not a job log?)")
    if "energy" not in found:
        raise LogReadError(source.path, f"no energy in this {source.program} output (stopped before the first SCF?)")
    _stationary_energy(source, found)
    _amend(source, found, notes)
    return _finish(source, found, notes)


#: hartree: an energy read equals a printed one to this (cclib's eV round trip changes the last digits only)
_SAME_ENERGY_EH = 1e-8


def _stationary_energy(source: LogSource, found: dict) -> None:
    """After a finite-difference Hessian's displaced-geometry calculations, the last energy printed (the one
    cclib and the extractors read) is a displaced geometry's: replace it by the last one printed before them, the
    energy of the geometry the frequencies belong to. Only when the energy read is that last printed one (a
    correlated energy read over an SCF-level line is left alone). The program's own totals cclib built on the
    energy it read (GAMESS's enthalpy and free energy: its last SCF energy plus the printed corrections) move
    with it."""
    start = displacements_start(source.program, source.text)
    if start is None:
        return
    last_energy = fallback.LAST_ENERGY[source.program]
    final, before = last_energy(source.text), last_energy(source.text, start)
    if final is not None and before is not None and abs(found["energy"] - final) < _SAME_ENERGY_EH:
        shift, found["energy"] = before - found["energy"], before
        thermo = found.get("thermo_printed", {})
        found["thermo_printed"] = {key: value + shift if key in ("enthalpy", "gibbs") else value
                                   for key, value in thermo.items()}


def _amend(source: LogSource, found: dict, notes: list[str]) -> None:
    """What cclib does not give for some programs, from the text."""
    text = source.text
    if source.program == "orca":
        echo = fallback.orca_input_echo(text)
        method = fallback.orca_method(echo)
        if method:
            found["method"] = method
        if not found.get("solvent_model"):
            model, solvent = fallback.orca_solvent(text, echo)
            if model:
                found["solvent_model"], found["solvent"] = solvent_model_name(model), solvent
    elif source.program == "nwchem":
        if found.get("multiplicity") is None:
            found["multiplicity"] = fallback.nwchem_multiplicity(text)
        # the same numbers whichever path read the file (cclib has no G for NWChem)
        found["thermo_printed"] = fallback.nwchem_thermo(text, found["energy"])
        cosmo = fallback.nwchem_cosmo(text)
        if cosmo and not found.get("solvent_model"):
            notes.append("COSMO solvent model read from the text (cclib reports none)")
        found.update(cosmo)
    elif source.program == "xtb":
        _amend_xtb(text, found, notes)
    elif source.program == "gamess-uk" and found.get("method") in (None, "DFT"):
        found["method"] = method_name(gamess_uk_method(text)) or found.get("method")
    elif source.program == "psi4" and found.get("method") in (None, "DFT"):
        functional = re.search(
            r"^\s+(\S+) (?:Hyb-)?(?:GGA|LSDA|Meta-GGA|LDA) Exchange-Correlation",
            lines_with(text, " Exchange-Correlation"),
            re.M,
        )
        if functional:
            found["method"] = method_name(functional.group(1))
        elif last_line_match(text, " Final Energy", _PSI4_HF_ENERGY):  # one per SCF: searched from the end
            found["method"] = "HF"


_PSI4_HF_ENERGY = re.compile(r"@(DF-)?(RHF|UHF|ROHF|CUHF) Final Energy")
#: xTB's own thermochemistry lines (hartree): key -> (a literal of the line, its regex)
_XTB_THERMO = {
    "zpe": ("zero point energy", re.compile(r"::\s+zero point energy\s+(-?\d+\.\d+) Eh")),
    "enthalpy": ("TOTAL ENTHALPY", re.compile(r"\|\s+TOTAL ENTHALPY\s+(-?\d+\.\d+) Eh")),
    "gibbs": ("TOTAL FREE ENERGY", re.compile(r"\|\s+TOTAL FREE ENERGY\s+(-?\d+\.\d+) Eh")),
}


def _amend_xtb(text: str, found: dict, notes: list[str]) -> None:
    call = re.search(r"program call\s*:\s*(.*)$", text, re.M)
    flags = call.group(1) if call else ""
    solvation = re.search(r"(?:^|\s)--?(alpb|gbsa|gbe|cosmo|cpcmx)\s+(\S+)|(?:^|\s)-g\s+(\S+)", flags)
    if solvation:
        model = solvation.group(1) or "gbsa"
        found["solvent_model"], found["solvent"] = solvent_model_name(model), solvation.group(2) or solvation.group(3)
    # xTB's own thermochemistry as printed (hartree), more precise than cclib's eV copy; the last of each, searched
    # from the end (a regex pass over a long optimisation log costs ~50 times more)
    thermo = {key: float(hit.group(1)) for key, (literal, rx) in _XTB_THERMO.items()
              if (hit := last_line_match(text, literal, rx))}
    if thermo:
        temperature = found.get("thermo_printed", {}).get("temperature")
        found["thermo_printed"] = thermo if temperature is None else {**thermo, "temperature": temperature}
        notes.append("thermochemistry read from the text in hartree (cclib gives xTB's in eV)")


def _xtb_coordinate_file(source: LogSource, symbols: tuple[str, ...], notes: list[str]) -> np.ndarray:
    """xTB prints no geometry for a single point or --hess run: read the input file it names, if present.

    Without it the atoms are known but not where they are: the coordinates are NaN and a note says so,
    because the energy and frequencies are still worth a row in a survey.
    """
    import ase.io

    named = re.search(r"coordinate file\s*:\s*(\S+)", source.text)
    if named:
        candidate = Path(source.path).parent / named.group(1)
        try:
            atoms = ase.io.read(candidate, index=-1)
            if tuple(atoms.get_chemical_symbols()) == tuple(symbols):
                notes.append(f"geometry not in the log: read from the input file {named.group(1)}")
                return np.asarray(atoms.get_positions(), dtype=float)
        except Exception:  # absent or unreadable companion file: fall through to unknown coordinates
            pass
    notes.append("geometry not printed in the log and its coordinate file not found: coordinates unknown (NaN)")
    return np.full((len(symbols), 3), np.nan)


def _finish(source: LogSource, found: dict, notes: list[str]) -> Calculation:
    """Normalise what was found into a Calculation (same rules whatever the program or extractor)."""
    program, text = source.program, source.text
    symbols, coords = found["symbols"], np.asarray(found["coordinates"], dtype=float).reshape(-1, 3)
    if len(symbols) != len(coords) or not symbols:
        raise LogReadError(source.path, f"{len(symbols)} atoms but {len(coords)} coordinate rows (damaged log?)")
    _refuse(source, checks.symbol_problem(symbols))
    _refuse(source, checks.atoms_problem(program, text, symbols, None if found.get("coordinates_unknown") else coords))
    charge = int(found.get("charge", 0))
    mult = found.get("multiplicity")
    if mult is None:
        mult, note = inferred_multiplicity(symbols, charge)
        notes.append(note)
    _refuse(source, checks.state_problem(symbols, charge, int(mult), float(found["energy"])))
    _refuse(source, checks.reference_problem(program, text, int(mult)))
    _refuse(source, checks.restated_energy_problem(program, text, float(found["energy"]), found.get("method")))
    if not found.get("coordinates_unknown"):
        _refuse(source, checks.geometry_problem(coords))

    spec = job_spec(program, text)
    spec_jobs = job_types_from_spec(program, spec)
    if spec is None and found.get("optimization_converged") is not None:  # cclib saw an optimiser
        spec_jobs.add("optimization")
    freqs, modes = found.get("frequencies"), None
    if freqs is not None:
        expected = n_vibrations(symbols, coords)
        # all 3N modes are a list the program projected, or one of a program we know no rule of
        all_modes = rules(program).projected or program not in RULES
        printed = np.asarray(freqs, dtype=float).ravel()
        _refuse(source, checks.frequency_problem(printed, len(symbols), expected, all_modes))
        modes = normal_mode_vectors(found.get("normal_modes"), printed, symbols, coords, rules(program).projected)
        freqs, note = vibrational_modes(freqs, symbols, coords, rules(program).projected)
        if note:
            notes.append(note)
        _refuse(source, checks.zero_mode_problem(freqs, PROJECTED_ZERO_CM))
        if expected is not None and freqs.size != expected:
            notes.append(f"frequencies dropped: {freqs.size} modes found where {expected} belong (incomplete block)")
            freqs = modes = None
    if freqs is None and "frequencies" in spec_jobs:
        notes.append("frequency job without a complete list of frequencies")
    jobs = set(spec_jobs)
    if freqs is not None:
        jobs.add("frequencies")
    if not jobs & _NOT_SINGLE_POINT:
        jobs.add("single-point")

    ended = terminated_normally(program, text)
    if ended is None:
        ended = found.get("normal_termination")
    converged = None
    if jobs & {"optimization", "saddle-search"}:
        marker = optimisation_converged(program, text)
        converged = marker if marker is not None else found.get("optimization_converged")
    s2 = last_s2(text) if mult > 1 else None
    thermo = found.get("thermo_printed", {})
    if not all(np.isfinite(v) for v in thermo.values()):
        notes.append("the program's own thermochemistry has a value that is not a number: left out")
        thermo = {k: v for k, v in thermo.items() if np.isfinite(v)}
    gas_energy = found.get("gas_energy")

    return Calculation(
        path=source.path,
        program=program,
        symbols=tuple(symbols),
        coordinates=coords,
        charge=charge,
        multiplicity=int(mult),
        energy=float(found["energy"]),
        frequencies=None if freqs is None else np.asarray(freqs, dtype=float),
        normal_modes=modes,
        job_types=frozenset(jobs),
        normal_termination=ended,
        optimization_converged=converged,
        program_version=found.get("program_version"),
        method=found.get("method"),
        basis=basis_name(found.get("basis")),
        solvent_model=found.get("solvent_model"),
        solvent=found.get("solvent"),
        s2=s2,
        gas_energy=gas_energy if gas_energy is not None and np.isfinite(gas_energy) else None,
        thermo_printed=thermo,
        notes=notes,
    )


def _refuse(source: LogSource, reason: str | None) -> None:
    """Raise LogReadError with ``reason`` unless it is None."""
    if reason is not None:
        raise LogReadError(source.path, reason)


def _read_geometry(source: LogSource) -> Calculation:
    """A geometry-only file (xyz, pdb, ...) through ASE: the last structure, no energy, no job."""
    import ase.io

    try:
        atoms = ase.io.read(source.path, index=-1)
    except Exception as err:  # ASE raises many types on malformed input
        raise LogReadError(source.path, f"not a readable geometry file ({type(err).__name__})") from None
    if len(atoms) == 0:
        raise LogReadError(source.path, "geometry file with no atoms")
    symbols = tuple(atoms.get_chemical_symbols())
    charge = round(float(atoms.info.get("charge", 0)))
    mult, note = inferred_multiplicity(symbols, charge)
    return Calculation(
        path=source.path,
        program=Path(source.path).suffix.lower().lstrip("."),
        symbols=symbols,
        coordinates=np.asarray(atoms.get_positions(), dtype=float),
        charge=charge,
        multiplicity=mult,
        notes=["geometry-only file read with ASE: no energy, no frequencies", note],
    )

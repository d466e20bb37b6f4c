"""Run cclib 1.8.1 on a log already in memory, quietly, and turn its ccData into Calculation fields.

cclib's energies are eV (converted back here to hartree with cclib's own factor, so the numbers
are exactly those printed: its 27.21138505 differs from CODATA 2018's by 4e-8 relative, 1.7e-5 Eh
on a 380 Eh molecule); its coordinates are angstrom and its frequencies cm^-1 already. Only cclib
attributes are used here; what cclib lacks is added from the text by the program rules (programs.py)
and fallbacks (fallback.py).
"""

from __future__ import annotations

import contextlib
import io
import logging
import re
import warnings

import numpy as np

from .normalise import method_name, solvent_model_name
from .programs import rules
from .slices import cclib_slice
from .source import PROGRAMS, LogSource
from .text import find, line_start, rfind


class _NullStream(io.TextIOBase):
    """Where cclib's per-parser log handler writes: nowhere (a batch must not spew)."""

    def write(self, s: str) -> int:
        return len(s)


_NULL = _NullStream()
#: one handler for cclib's package logger, so nothing reaches the root logger's last-resort output
_CCLIB_QUIET = logging.NullHandler()


def parse(source: LogSource):
    """ccData for ``source`` with the program's cclib parser, or (None, reason) when cclib fails.

    cclib reads the program's slice of the text where there is one (slices.py), else the whole text."""
    import cclib.parser

    logging.getLogger("cclib").addHandler(_CCLIB_QUIET)  # the same handler object is added only once
    parser_class = getattr(cclib.parser, PROGRAMS[source.program][1])
    try:
        with warnings.catch_warnings(), contextlib.redirect_stdout(_NULL):
            warnings.simplefilter("ignore")
            text = cclib_slice(source.program, source.text) or source.text
            parser = parser_class(io.StringIO(text), loglevel=logging.CRITICAL + 1, logstream=_NULL)
            return parser.parse(), None
    except Exception as err:  # cclib raises anything from AssertionError to IndexError on odd files
        return None, f"cclib failed with {type(err).__name__}"


#: the cclib release whose failures below (and the xTB parser's line tests, slices.XTB_READ) were read from its
#: parsers' source and seen on real files
KNOWN_CCLIB = "1.8.1"
_ORCA_VERSION = re.compile(r"Program Version (\d+)\.")
_GROUP_ORDER = re.compile(r" Group order\s+(\d+)")


def known_cclib() -> bool:
    """Whether the cclib installed is :data:`KNOWN_CCLIB`, the release the rules that mirror its parsers come from."""
    import cclib

    return cclib.__version__ == KNOWN_CCLIB


def known_failure(source: LogSource) -> str | None:
    """Why cclib 1.8.1 would raise on this log, told from a few lines of it; None if it is not known to.

    Reading such a log with cclib first only costs the time cclib spends before it raises (up to the
    first optimisation or basis-set block), so the reader goes to the fallback extractor at once.
    Every rule mirrors the statement in cclib 1.8.1 that raises; any other cclib version is run as usual.
    """
    if not known_cclib():
        return None
    if source.program == "orca":
        version = _ORCA_VERSION.search(source.head)
        if version and int(version.group(1)) >= 6:  # orcaparser asserts on ORCA 6's changed headers
            return "cclib 1.8.1 not run, it fails with AssertionError on ORCA 6 outputs"
    elif source.program == "nwchem":
        if _nwchem_short_symmetry_table(source.text):
            return "cclib 1.8.1 not run, it fails with IndexError on NWChem's basis table of a non-abelian group"
        if _nwchem_untitled_optimisation(source.text):
            return "cclib 1.8.1 not run, it fails with AssertionError on an untitled NWChem optimisation"
    return None


def _lines_from(text: str, header: str, count: int):
    """For each line that is ``header`` alone (cclib compares stripped lines): that line and the ``count`` next ones
    (fewer at the end of the text), each without its newline."""
    at = find(text, header)
    while at >= 0:
        start = line_start(text, at)
        end = text.find("\n", at)
        if text[start : len(text) if end < 0 else end].strip() == header:
            yield start, text[start : start + 4000].split("\n", count + 1)[: count + 1]
        at = find(text, header, at + len(header))


def _nwchem_short_symmetry_table(text: str) -> bool:
    """A "Symmetry analysis of basis" table with fewer rows (irreducible representations) than the group
    order: cclib 1.8.1 reads one row per group element and splits the blank line after the table."""
    for start, _ in _lines_from(text, "Symmetry analysis of basis", 0):
        at = rfind(text, "\n Group order", 0, start)  # the order cclib keeps: the last one printed before
        order = _GROUP_ORDER.match(text, at + 1) if at >= 0 else None
        if order is None:
            continue
        size = int(order.group(1))
        rows = text[start : start + 4000].split("\n", 3 + size)[3 : 3 + size]
        if len(rows) == size and not all(row.strip() for row in rows):
            return True
    return False


def _nwchem_untitled_optimisation(text: str) -> bool:
    """An "NWChem Geometry Optimization" header where cclib 1.8.1 does not find the gradient threshold
    after skipping the lines of a title (cclib's assertion at that header)."""
    for _, lines in _lines_from(text, "NWChem Geometry Optimization", 10):
        if len(lines) < 11:
            continue
        line, rest = lines[4], 5
        if "maximum gradient threshold" not in line:
            line, rest = lines[9], 10
        if "no constraints" in line:
            line = lines[rest]
        if "maximum gradient threshold" not in line:
            return True
    return False


def ev_to_hartree(value: float) -> float:
    """Undo cclib's hartree -> eV conversion exactly (its parsers all use this convertor)."""
    from cclib.parser.utils import convertor

    return float(convertor(float(value), "eV", "hartree"))


def _last_energy(values) -> float | None:
    """Last finite entry of a cclib energy array (eV), in hartree."""
    if values is None:
        return None
    flat = np.asarray(values, dtype=float)
    if flat.ndim > 1:  # mpenergies: one row per step, one column per order: the highest order printed
        flat = np.array([row[np.isfinite(row)][-1] for row in flat if np.isfinite(row).any()])
    flat = flat[np.isfinite(flat)]
    return ev_to_hartree(flat[-1]) if flat.size else None


def level_and_energy(data) -> tuple[str | None, float | None]:
    """(method, energy in hartree) at the highest correlated level present: CC > MPn > SCF."""
    meta = getattr(data, "metadata", {}) or {}
    methods = [str(m) for m in meta.get("methods", []) or []]
    cc = _last_energy(getattr(data, "ccenergies", None))
    if cc is not None:
        named = [m for m in methods if "CC" in m.upper()]
        return (method_name(named[-1]) if named else "CC"), cc
    mp = getattr(data, "mpenergies", None)
    mp_energy = _last_energy(mp)
    if mp_energy is not None:
        order = 1 + int(np.isfinite(np.asarray(mp[-1], dtype=float)).sum())
        return f"MP{order}", mp_energy
    scf = _last_energy(getattr(data, "scfenergies", None))
    functional = meta.get("functional")
    if functional:
        return method_name(functional), scf
    named = [m for m in methods if m.upper() != "DFT"]
    if named:
        return method_name(named[-1]), scf
    return ("DFT" if methods else None), scf


def thermo_printed(data, program: str, energy: float | None) -> dict[str, float]:
    """The program's own thermochemistry as cclib read it, as totals in hartree (ZPE as the correction)."""
    program_rules = rules(program)
    out: dict[str, float] = {}
    for key, attr in (("zpe", "zpve"), ("enthalpy", "enthalpy"), ("gibbs", "freeenergy")):
        value = getattr(data, attr, None)
        if value is None:
            continue
        value = ev_to_hartree(value) if program_rules.thermo_ev else float(value)
        if program_rules.thermo_corrections and key != "zpe":
            if energy is None:
                continue
            value += energy
        out[key] = value
    if out and getattr(data, "temperature", None) is not None:
        out["temperature"] = float(data.temperature)
    return out


def fields(data, program: str) -> dict:
    """Calculation fields from a ccData (frequencies as cclib gives them; the caller normalises)."""
    from ase.data import chemical_symbols

    meta = getattr(data, "metadata", {}) or {}
    out: dict = {}
    if getattr(data, "atomnos", None) is not None:
        # atomic number 0 (dummy) or out of the table (ghost atoms, damage): "X", refused by the reader
        out["symbols"] = tuple(chemical_symbols[int(z)] if 0 < z < len(chemical_symbols) else "X" for z in data.atomnos)
        coords = np.asarray(getattr(data, "atomcoords", np.zeros((0, 0, 3))), dtype=float)
        if coords.ndim == 3 and coords.shape[1:] == (len(out["symbols"]), 3):  # xTB --hess prints none
            out["coordinates"] = coords[-1]
    method, energy = level_and_energy(data)
    if energy is not None:
        out["energy"] = energy
    out["method"] = method
    out["basis"] = meta.get("basis_set")
    out["program_version"] = meta.get("legacy_package_version") or meta.get("package_version")
    if getattr(data, "charge", None) is not None:
        out["charge"] = int(data.charge)
    out["multiplicity"] = int(data.mult) if getattr(data, "mult", None) is not None else None
    if getattr(data, "vibfreqs", None) is not None:
        out["frequencies"] = np.asarray(data.vibfreqs, dtype=float)
        if getattr(data, "vibdisps", None) is not None:  # (modes, atoms, 3), one per frequency
            out["normal_modes"] = np.asarray(data.vibdisps, dtype=float)
    if getattr(data, "optdone", None) is not None:
        out["optimization_converged"] = bool(data.optdone)
    if meta.get("solvent_model"):
        out["solvent_model"] = solvent_model_name(meta["solvent_model"])
        out["solvent"] = meta.get("solvent_name")
    if "success" in meta:
        out["normal_termination"] = bool(meta["success"])
    # cclib's eV energies are converted for every file alike: documented, not noted per file
    notes: list[str] = []
    thermo = thermo_printed(data, program, energy)
    if thermo:
        out["thermo_printed"] = thermo
        if rules(program).thermo_corrections:
            notes.append("the program's enthalpy and free energy are thermal corrections: E_elec added")
    out["notes"] = notes
    return out

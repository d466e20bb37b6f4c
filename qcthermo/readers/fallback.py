"""Small text extractors for the outputs cclib 1.8.1 cannot read (ORCA 6, some NWChem 7 multi-task jobs).

Each returns a dict of :class:`~qcthermo.records.Calculation` fields, in the reader's units (hartree,
angstrom, cm^-1, frequencies as printed: the caller removes rigid-body modes). Only what the
program states is read; a missing item is simply absent.
"""

from __future__ import annotations

import re

import numpy as np

from ..units import HARTREE_J, N_A
from .normalise import method_name
from .text import find, last_block_match, last_line_match, last_section, lines_with

_F = r"(-?\d+\.\d+)"
#: one thermochemical calorie, J (entropies printed in cal/(mol K))
_CAL = 4.184


def _last(text: str, literal: str, pattern: str, end: int | None = None) -> str | None:
    """Group 1 of the last match in ``text[:end]`` of a one-line ``pattern`` that contains ``literal`` (text.py)."""
    found = last_line_match(text, literal, re.compile(pattern, re.MULTILINE), end)
    return None if found is None else found.group(1)


def _last_float(text: str, literal: str, pattern: str, end: int | None = None) -> float | None:
    value = _last(text, literal, pattern, end)
    return None if value is None else float(value)


def _last_int(text: str, literal: str, pattern: str) -> int | None:
    value = _last(text, literal, pattern)
    return None if value is None else int(value)


def _found(**fields) -> dict:
    """The fields that were read (a missing item is absent, not None)."""
    return {name: value for name, value in fields.items() if value is not None}


# ---------------------------------------------------------------------------------------------- ORCA

#: ORCA keyword tokens that name the method (a functional, a wavefunction method or a composite)
_ORCA_METHOD = re.compile(
    r"^((ri-|dlpno-|scs-|sos-|ri-scs-|lpno-)?(hf|rhf|uhf|rohf|mp2|mp3|ccsd|ccsd\(t\)|qcisd\(t\)|ccsd\(t\)-f12|cisd)"
    r"|[a-z0-9]*-3c|gfn[0-2]-xtb|xtb[0-2]?"
    r"|b3lyp(/g)?|pbe0|pbe|bp86|blyp|b97-d3?|tpssh?|m06(-2x|l|-l|2x)?|wb97x(-d3|-d4|-v|-d3bj)?|wb97m(-v|-d3bj)?"
    r"|wb97|b2plyp|dsd-pbep86|dsd-blyp|revpbe0?|r2scan0?|scan|pw6b95|cam-b3lyp|x3lyp|b3pw91|mn15|pw91|lc-blyp"
    r"|bhandhlyp|b3p86|o3lyp|tpss0|pbeh|b97m-v|b97m-d3bj|wr2scan|r2scanh|kt2|svwn|lda)$"
)
_ORCA_SOLVENT = re.compile(r"\b(cpcm|smd|cpcmc|alpb|ddcosmo|cosmors)\s*\(\s*([^)]+?)\s*\)", re.IGNORECASE)
_ORCA_HF_ALIASES = {"RHF": "HF", "UHF": "HF", "ROHF": "HF"}


def orca_input_echo(text: str) -> str:
    """The lines of ORCA's input echo ("|  1> ! b3lyp ..."), with the few others that hold a ">"."""
    return lines_with(text, ">")


def orca_keywords(echo: str) -> list[str]:
    """Lower-case tokens of the "!" lines of ORCA's input echo (:func:`orca_input_echo`)."""
    lines = re.findall(r"^\|\s*\d+>\s*!(.*)$", echo, re.MULTILINE)
    return " ".join(lines).lower().split()


def orca_method(echo: str) -> str | None:
    """Method named in ORCA's "!" keywords (upper-cased), e.g. "B3LYP", "DLPNO-CCSD(T)", "R2SCAN-3C"."""
    for token in orca_keywords(echo):
        if _ORCA_METHOD.match(token):
            name = method_name(token)
            return _ORCA_HF_ALIASES.get(name, name)
    return None


def orca_solvent(text: str, echo: str) -> tuple[str | None, str | None]:
    """(model, solvent): ORCA's printed CPCM section first, else its "!" keywords or the %cpcm block."""
    if find(text, "CPCM SOLVATION MODEL") >= 0:
        model = "smd" if find(text, "SMD-CDS") >= 0 or find(text, "SMD CDS") >= 0 else "cpcm"
        name = _last(text, "Solvent:", r"^Solvent:\s+\.\.\.\s+(\S.*?)\s*$")
        return model, name.lower() if name else None
    keywords = " ".join(orca_keywords(echo))
    m = _ORCA_SOLVENT.search(keywords)
    if m:
        return m.group(1).lower(), m.group(2)
    block = re.search(r"^\|\s*\d+>\s*%cpcm(.*?)^\|\s*\d+>\s*end", echo, re.MULTILINE | re.DOTALL | re.IGNORECASE)
    if block:
        body = block.group(1)
        smd = re.search(r"\bsmd\s+true", body, re.IGNORECASE)
        name = re.search(r"smdsolvent\s+\"([^\"]+)\"", body, re.IGNORECASE)
        return ("smd" if smd else "cpcm"), (name.group(1) if name else None)
    return None, None


_ORCA_GEOMETRY = re.compile(
    r"^CARTESIAN COORDINATES \(ANGSTROEM\)\n-+\n((?:\s*[A-Za-z]{1,3}\s+\S+\s+\S+\s+\S+\n)+)", re.MULTILINE
)


def _orca_geometry(text: str) -> tuple[tuple[str, ...], np.ndarray] | None:
    block = last_block_match(text, "CARTESIAN COORDINATES (ANGSTROEM)", _ORCA_GEOMETRY)
    if block is None:
        return None
    rows = [line.split() for line in block.group(1).strip().splitlines()]
    symbols = tuple(row[0].capitalize() for row in rows)
    return symbols, np.array([[float(x) for x in row[1:4]] for row in rows])


def _orca_frequencies(text: str) -> np.ndarray | None:
    """The last VIBRATIONAL FREQUENCIES block, without the modes ORCA itself says are not vibrations."""
    block = last_section(text, "VIBRATIONAL FREQUENCIES", "NORMAL MODES")
    if block is None:
        return None
    values = np.array([float(v) for v in re.findall(r"^\s*\d+:\s+(-?\d+\.\d+) cm\*\*-1", block, re.MULTILINE)])
    if values.size == 0:
        return None
    first = _last_int(block, "The first frequency", r"The first frequency considered to be a vibration is (\d+)")
    return values[first:] if first is not None else values


def mode_columns(block: str) -> np.ndarray | None:
    """Normal-mode vectors printed as columns, a few modes side by side (NWChem, ORCA): a line of column
    numbers, optional label lines (frequencies, symmetry species), then one row per Cartesian coordinate,
    "index value value ...". Returns (n_modes, 3N) in the order printed, None when the block is not whole."""
    columns: dict[int, list[float]] = {}
    current: list[int] = []
    for line in block.splitlines():
        tokens = line.split()
        if tokens and all(t.isdigit() for t in tokens):  # a header of column numbers
            current = [int(t) for t in tokens]
            for c in current:
                columns.setdefault(c, [])
        elif current and len(tokens) == len(current) + 1 and tokens[0].isdigit():
            try:
                values = [float(t) for t in tokens[1:]]
            except ValueError:
                continue
            for c, v in zip(current, values, strict=True):
                columns[c].append(v)
    lengths = {len(v) for v in columns.values()}
    if not columns or len(lengths) != 1 or lengths == {0}:
        return None
    return np.array([columns[c] for c in sorted(columns)])


def _orca_normal_modes(text: str) -> np.ndarray | None:
    block = last_section(text, "NORMAL MODES", "IR SPECTRUM")
    return None if block is None else mode_columns(block)


def orca(text: str) -> dict:
    """Fields of an ORCA (5 or 6) output: geometry, energy, charge/multiplicity, frequencies, thermochemistry."""
    out: dict = {}
    geometry = _orca_geometry(text)
    if geometry is not None:
        out["symbols"], out["coordinates"] = geometry
    echo = orca_input_echo(text)
    charge = _last_int(text, "Total Charge", r"Total Charge\s+Charge\s+\.+\s+(-?\d+)")
    mult = _last_int(text, "Multiplicity", r"Multiplicity\s+Mult\s+\.+\s+(\d+)")
    if charge is None or mult is None:  # before the SCF printed its settings: the input's "* xyz c m"
        m = re.search(r"^\|\s*\d+>\s*\*\s*(?:xyz|int|gzmt|xyzfile)\s+(-?\d+)\s+(\d+)", echo, re.MULTILINE | re.I)
        if m:
            charge, mult = int(m.group(1)), int(m.group(2))
    out |= _found(energy=_last_float(text, "FINAL SINGLE POINT ENERGY", rf"^FINAL SINGLE POINT ENERGY\s+{_F}"),
                  charge=charge, multiplicity=mult, frequencies=_orca_frequencies(text))
    if "frequencies" in out:
        out |= _found(normal_modes=_orca_normal_modes(text))
    out["program_version"] = _last(text, "Program Version", r"Program Version (\S+)")
    out["basis"] = _last(text, "Your calculation utilizes the basis:", r"Your calculation utilizes the basis: (\S+)")
    out["method"] = orca_method(echo)
    thermo = {
        "temperature": _last_float(text, "Temperature", rf"^Temperature\s+\.\.\.\s+{_F} K"),
        "zpe": _last_float(text, "Zero point energy", rf"^Zero point energy\s+\.\.\.\s+{_F} Eh"),
        "enthalpy": _last_float(text, "Total Enthalpy", rf"^Total Enthalpy\s+\.\.\.\s+{_F} Eh"),
        "gibbs": _last_float(text, "Final Gibbs free energy", rf"^Final Gibbs free energy\s+\.\.\.\s+{_F} Eh"),
    }
    if thermo["enthalpy"] is not None:
        out["thermo_printed"] = _found(**thermo)
    return out


# -------------------------------------------------------------------------------------------- NWChem

#: NWChem energy lines, highest level first: (method, literal of the line, regex of the total energy)
_NWCHEM_ENERGIES = (
    ("CCSD(T)", "CCSD(T) total energy", rf"CCSD\(T\) total energy / hartree\s+=\s+{_F}"),
    ("CCSD", "CCSD total energy", rf"CCSD total energy / hartree\s+=\s+{_F}"),
    ("MP2", "Total MP2 energy", rf"Total MP2 energy\s+{_F}"),
    ("DFT", "Total DFT energy =", rf"Total DFT energy =\s+{_F}"),
    ("HF", "Total SCF energy =", rf"Total SCF energy =\s+{_F}"),
)


def nwchem_level(text: str, end: int | None = None) -> tuple[str | None, float | None]:
    """(method, energy) at the highest level NWChem printed in ``text[:end]``; the DFT functional where the module
    names it."""
    for method, literal, pattern in _NWCHEM_ENERGIES:
        energy = _last_float(text, literal, pattern, end)
        if energy is not None:
            if method == "DFT":
                functional = _last(text, " Method XC ", r"^\s+(\S+) Method XC (?:Potential|Functional)", end)
                method = method_name(functional) if functional else "DFT"
            return method, energy
    return None, None


NWCHEM_GEOMETRY = _NWCHEM_GEOMETRY = re.compile(
    r"Output coordinates in angstroms.*\n\n.*\n\s*-{4}.*\n((?:\s*\d+\s+\S+\s+\S+\s+\S+\s+\S+\s+\S+\n)+)"
)
_NWCHEM_BASIS = re.compile(r'Summary of "ao basis".*\n.*\n.*\n.*\n\s*\S+\s+(\S+)')


def _nwchem_geometry(text: str) -> tuple[tuple[str, ...], np.ndarray] | None:
    block = last_block_match(text, "Output coordinates in angstroms", _NWCHEM_GEOMETRY)
    return None if block is None else nwchem_geometry_rows(block.group(1))


def nwchem_geometry_rows(block: str) -> tuple[tuple[str, ...], np.ndarray]:
    """Symbols and coordinates (angstrom) of the rows of an "Output coordinates in angstroms" table."""
    from ase.data import chemical_symbols

    rows = [line.split() for line in block.strip().splitlines()]
    # the nuclear charge names the element whatever the tag says ("O1", "H_a", ...)
    charges = [round(float(row[2])) for row in rows]  # a ghost atom ("Bq") has 0: "X", refused by the reader
    symbols = tuple(chemical_symbols[z] if 0 < z < len(chemical_symbols) else "X" for z in charges)
    return symbols, np.array([[float(x) for x in row[3:6]] for row in rows])


def _nwchem_frequencies(text: str) -> tuple[np.ndarray | None, np.ndarray | None]:
    """The projected frequencies (P.Frequency) of the last normal-mode analysis, and their mode vectors."""
    block = last_section(text, "Projected Frequencies expressed in cm-1", "Normal Eigenvalue")
    if block is None:
        return None, None
    values = [float(v) for line in re.findall(r"^\s*P\.Frequency\s+(.*)$", block, re.MULTILINE) for v in line.split()]
    return (np.array(values), mode_columns(block)) if values else (None, None)


def nwchem_multiplicity(text: str) -> int | None:
    """2S+1 as NWChem prints it: the DFT module's "Spin multiplicity", else the SCF module's electron
    counts (UHF: alpha - beta + 1) or open shells (ROHF/RHF: open shells + 1, high spin)."""
    mult = _last_int(text, "Spin multiplicity:", r"Spin multiplicity:\s+(\d+)")
    if mult is not None:
        return mult
    alpha = _last_int(text, "electrons", r"^\s*alpha electrons\s+=\s+(\d+)")
    beta = _last_int(text, "electrons", r"^\s*beta\s+electrons\s+=\s+(\d+)")
    if alpha is not None and beta is not None:
        return alpha - beta + 1
    open_shells = _last_int(text, "open shells", r"^\s*open shells\s+=\s+(\d+)")
    return None if open_shells is None else open_shells + 1


def nwchem_cosmo(text: str) -> dict:
    """COSMO runs: solvent model, solvent name or dielectric, and the gas-phase energy NWChem printed."""
    if find(text, "-cosmo- solvent") < 0:
        return {}
    out: dict = {"solvent_model": "cosmo"}
    name = _last(text, "solvname_long:", r"solvname_long:\s+(\S.*?)\s*$")
    eps = _last(text, "dielectric constant -eps-", r"dielectric constant -eps-\s+=\s+(\S+)")
    out["solvent"] = name if name else (f"eps={eps}" if eps else None)
    gas = _last_float(text, "gas phase energy =", rf"gas phase energy =\s+{_F}")
    if gas is not None:
        out["gas_energy"] = gas
    return out


def nwchem(text: str) -> dict:
    """Fields of an NWChem output: final geometry, energy at the highest level, charge/multiplicity, frequencies."""
    out: dict = {}
    geometry = _nwchem_geometry(text)
    if geometry is not None:
        out["symbols"], out["coordinates"] = geometry
    method, energy = nwchem_level(text)
    if energy is not None:
        out["energy"], out["method"] = energy, method
    frequencies, modes = _nwchem_frequencies(text)
    out |= _found(charge=_last_int(text, "Charge", r"^\s*Charge\s+:\s+(-?\d+)"),
                  multiplicity=nwchem_multiplicity(text), frequencies=frequencies, normal_modes=modes)
    out["program_version"] = _last(text, "(NWChem) ", r"\(NWChem\) (\d[\w.]*)")
    basis = last_block_match(text, 'Summary of "ao basis"', _NWCHEM_BASIS)
    if basis:
        out["basis"] = basis.group(1)
    out.update(nwchem_cosmo(text))
    return out  # the thermochemistry is added for both paths by the reader (nwchem_thermo)


def nwchem_thermo(text: str, energy: float) -> dict[str, float]:
    """NWChem's own thermochemistry as totals: H = E + its enthalpy correction; G = H - T S from its
    "Total Entropy" (NWChem prints no G); the ZPE as printed; empty without a frequency analysis."""
    temperature = _last_float(text, "Temperature", rf"^\s*Temperature\s+=\s+{_F}K")
    h_corr = _last_float(text, "Thermal correction to Enthalpy", rf"Thermal correction to Enthalpy\s+=.*\(\s*{_F} au\)")
    if h_corr is None or temperature is None:
        return {}
    thermo = {"temperature": temperature, "enthalpy": energy + h_corr}
    zpe = _last_float(text, "Zero-Point correction to Energy", rf"Zero-Point correction to Energy\s+=.*\(\s*{_F} au\)")
    if zpe is not None:
        thermo["zpe"] = zpe
    entropy = _last_float(text, "Total Entropy", rf"^\s*Total Entropy\s+=\s+{_F} cal/mol-K")
    if entropy is not None:
        thermo["gibbs"] = thermo["enthalpy"] - temperature * entropy * _CAL / (HARTREE_J * N_A)
    return thermo


# -------------------------------------------------------------------------------------------- GAMESS


def gamess_scf_energy(text: str, end: int | None = None) -> float | None:
    """The last SCF energy GAMESS printed in ``text[:end]``,
    " FINAL R-AM1 ENERGY IS       -9.1286961082 AFTER   8 ITERATIONS"."""
    return _last_float(text, "ENERGY IS", rf"^ FINAL \S+ ENERGY IS\s+{_F}", end)


#: the last energy a program printed in ``text[:end]``, at the level the reader reads
LAST_ENERGY = {"nwchem": lambda text, end=None: nwchem_level(text, end)[1], "gamess": gamess_scf_energy}

EXTRACTORS = {"orca": orca, "nwchem": nwchem}

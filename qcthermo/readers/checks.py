"""Damaged input never becomes a wrong record: the checks ``read_log`` makes before it returns one.

A log damaged in transfer or by hand (a row lost from the last geometry, a number turned into "nan",
two logs pasted into one file) can still hold everything a reader looks for. Each check here compares
what was read with something else the program printed (its atom counts, its other geometry blocks, the
length of its frequency list) or with what physics allows, and gives the one-line reason of a
:class:`~qcthermo.errors.LogReadError`. docs/readers.md, "Damaged input", lists them.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

from .normalise import electron_count
from .programs import RULES, rules
from .source import LogSource
from .text import hits, indexed_for, line_bounds, line_start, lines_with, rfind

#: |E_TF| = 0.7687 Z^(7/3) hartree, the Thomas-Fermi energy of a neutral atom (Lieb and Simon, Adv. Math. 1977,
#: 23, 22; the coefficient from memory), exceeds the true magnitude (-0.500 vs -0.769 for H, -37.8 vs -50.3 for
#: C); a molecule's binding adds under 1 %. x 1.5 leaves room for relativistic heavy atoms (Hg, Dirac-Fock
#: -19649 against 21186, from memory); a point shifted in a damaged energy line (x 10) lands far beyond.
THOMAS_FERMI_EH, ENERGY_MARGIN = 0.7687, 1.5
#: cm^-1: about twice the highest molecular vibration, H2's ~4400 cm^-1 (from memory; small basis sets stay
#: within 6000); anything beyond is a damaged number (a digit or an exponent too many)
MAX_WAVENUMBER_CM = 10000.0
#: nuclei closer than this (angstrom) are one atom printed twice: the shortest bond, H2's, is 0.74 A
#: (from memory), and no structure a program optimises brings two nuclei within a quarter of it
COINCIDENT_A = 0.2


@dataclass(frozen=True)
class _Count:
    """Where a program states its atoms: the literal that starts the statement, the regex matched there
    (group 1: the count, or a block's rows) and, for a block, the column of each row that names the element
    (a symbol or a nuclear charge; None: a free label such as NWChem's tags, not an element)."""

    literal: str
    regex: re.Pattern
    element: int | None = None


def _count(literal: str, pattern: str, element: int | None = None) -> _Count:
    return _Count(literal, re.compile(pattern), element)


#: x, y, z and the end of a geometry row (spaces and tabs only: a row never runs onto the next line); possessive
#: (Python 3.11): a field ends at white space whichever way it is tried, so giving characters back never leads
#: to another match, and not trying spares a third of the time over thousands of blocks
_XYZ = r"(?:[ \t]++\S++){3}+[ \t]*+\n"

#: atom counts as programs print them (group 1), each regex matched where its literal starts; a
#: statement damaged beyond its regex is simply not counted
_DECLARED: dict[str, tuple[_Count, ...]] = {
    "gaussian": (_count("NAtoms=", r"NAtoms=\s*(\d+)"),),
    "nwchem": (_count("No. of atoms", r"No\. of atoms\s+:\s+(\d+)"),
               _count("XYZ format geometry", r"XYZ format geometry\n\s*-+\n\s*(\d+)\s*\n")),
    "orca": (_count("Number of atoms", r"Number of atoms\s+\.+\s+(\d+)"),),
    "gamess": (_count("TOTAL NUMBER OF ATOMS", r"TOTAL NUMBER OF ATOMS\s+=\s+(\d+)"),),
    "psi4": (_count("Number of atoms is", r"Number of atoms is (\d+)\."),),
    "xtb": (_count("final structure:", r"final structure:\n=+\n\s*(\d+)\s*\n"),),
}
#: the geometry blocks of each program (group 1: the rows), every one printed (orientations, steps, the
#: input echo, and tables of the atoms' nuclear charges), with the column that names each row's element
_BLOCKS: dict[str, tuple[_Count, ...]] = {
    "gaussian": (_count(" orientation:",
                        rf" orientation:.*\n.*\n.*\n.*\n\s*-+\n((?:[ \t]+\d+[ \t]+-?\d+[ \t]+\d+{_XYZ})+)", 1),),
    "nwchem": (
        _count("Output coordinates in angstroms",
               rf"Output coordinates in angstroms.*\n\n.*\n\s*-{{4}}.*\n((?:[ \t]*\d+(?:[ \t]+\S+){{2}}{_XYZ})+)", 2),
        _count("XYZ format geometry", rf"XYZ format geometry\n.*\n.*\n.*\n((?:[ \t]*[A-Za-z]\S*{_XYZ})+)"),
    ),
    "orca": (_count("CARTESIAN COORDINATES (ANGSTROEM)",
                    rf"CARTESIAN COORDINATES \(ANGSTROEM\)\n-+\n((?:[ \t]*[A-Za-z]{{1,3}}{_XYZ})+)", 0),
             # "NO LB ZA FRAG MASS X Y Z": the nuclear charge ZA
             _count("CARTESIAN COORDINATES (A.U.)",
                    rf"CARTESIAN COORDINATES \(A\.U\.\)\n-+\n.*\n((?:[ \t]+\d+[ \t]+\S+[ \t]+\d+\.\d+(?:[ \t]+\S+){{2}}"
                    rf"{_XYZ})+)", 2)),
    "qchem": (
        _count("Standard Nuclear Orientation",
               rf"Standard Nuclear Orientation.*\n.*\n\s*-+\n((?:[ \t]+\d+[ \t]+[A-Za-z]{{1,3}}{_XYZ})+)", 1),
        _count("$molecule", rf"\$molecule\n.*\n((?:[ \t]*[A-Za-z]{{1,3}}{_XYZ})+)\$end", 0),  # the input echo
    ),
    "gamess": (_count("COORDINATES (BOHR)", rf"COORDINATES \(BOHR\)\n.*\n((?:[ \t]*\S+[ \t]+\d+\.\d+{_XYZ})+)", 1),
               _count("COORDINATES OF ALL ATOMS ARE (ANGS)",
                      rf"COORDINATES OF ALL ATOMS ARE \(ANGS\)\n.*\n.*\n((?:[ \t]*\S+[ \t]+\d+\.\d+{_XYZ})+)", 1)),
    "psi4": (_count("Geometry (in Angstrom)",  # "Center X Y Z [Mass]"
                    r"Geometry \(in Angstrom\).*\n\n.*\n.*\n((?:[ \t]*+[A-Za-z]\S*+(?:[ \t]++\S++){3,4}+[ \t]*+\n)+)",
                    0),),
    "xtb": (_count("final structure:", rf"final structure:\n=+\n.*\n.*\n((?:[ \t]*[A-Za-z]{{1,3}}{_XYZ})+)", 0),
            # the charges table after the SCF: "#   Z   covCN   q   C6AA   alpha(0)"
            _count("#   Z          covCN",
                   r"#   Z          covCN.*\n((?:[ \t]+\d+[ \t]+\d+[ \t]+[A-Za-z]{1,2}(?:[ \t]+\S+){4}[ \t]*\n)+)", 1)),
}


#: numbers a program prints more than once in a run and that depend on the molecule alone (xTB's setup box,
#: at every SCF: "# electrons 32", "# atomic orbitals 32", "# shells 22"): two values are two molecules' logs
#: spliced together (the head of one, the tail of the other, with no second banner)
_INVARIANTS: dict[str, tuple[_Count, ...]] = {
    "xtb": (_count("# electrons", r"# electrons\s+(\d+)"), _count("# atomic orbitals", r"# atomic orbitals\s+(\d+)"),
            _count("# shells", r"# shells\s+(\d+)")),
}


def literals_checked(program: str) -> tuple[str, ...]:
    """The phrases these checks search a log of ``program`` for (literals.py indexes them)."""
    specs = (*_DECLARED.get(program, ()), *_BLOCKS.get(program, ()), *_INVARIANTS.get(program, ()))
    tables = (_XTB_ELEMENTS,) if program == "xtb" else ()
    restated = [phrase for statement in _RESTATEMENTS.get(program, ())
                for phrase in (statement.literal.strip("\n"), statement.requires) if phrase]
    return tuple(dict.fromkeys([*(spec.literal for spec in specs), *tables, *restated]))


def invariant_problem(program: str, text: str) -> str | None:
    """Why a number the program states for the molecule alone takes two values in one run, or None."""
    for spec in _INVARIANTS.get(program, ()):
        starts = {spec.literal: hits(text, spec.literal)}
        values = sorted({int(m.group(1)) for _, m in _matches(text, (spec,), starts)})
        if len(values) > 1:
            return (f"the log states \"{spec.literal}\" as {' and '.join(map(str, values))}: logs of two molecules "
                    "spliced together? split the file")
    return None


def _matches(text: str, specs: tuple[_Count, ...], starts: dict[str, list[int]]) -> list[tuple[_Count, re.Match]]:
    """Every match of each spec's regex where its literal starts (``starts``: those indices per literal)."""
    return [(spec, found) for spec in specs for at in starts[spec.literal] if (found := spec.regex.match(text, at))]


def atoms_problem(program: str, text: str, symbols, coordinates) -> str | None:
    """Why the final geometry (``symbols``, ``coordinates`` in angstrom) contradicts what else the log states
    about its atoms, or None.

    The program's statements of its atom count and the row counts of each of its geometry blocks (input
    and standard orientations, every optimisation step, tables of nuclear charges) must all equal N: a row
    lost from the last block, a block cut short, or a job on another molecule in the same file shows here.
    Each block that names elements must name the final geometry's, atom by atom (an atomic number changed
    in the last block turns C10H10 into C9H10O), and the nuclear repulsion energy recomputed from the final
    geometry must equal one the program printed (:func:`nuclear_repulsion_problem`).
    """
    natoms = len(symbols)
    declared_specs, block_specs = _DECLARED.get(program, ()), _BLOCKS.get(program, ())
    # one pass over the text per phrase, shared by every check (NWChem's "XYZ format geometry" is in two):
    # the passes are most of this check's time (30 to 50 us per 100 kB each on the development machine)
    starts = {literal: hits(text, literal) for literal in {spec.literal for spec in (*declared_specs, *block_specs)}}
    declared = [int(m.group(1)) for _, m in _matches(text, declared_specs, starts)]
    wrong = sorted({n for n in declared if n != natoms})
    if wrong:
        return (f"the final geometry has {natoms} atoms but the log states {', '.join(map(str, wrong))} "
                "(damaged geometry block, or several jobs in one file?)")
    blocks = _matches(text, block_specs, starts)
    wrong = sorted({n for _, m in blocks if (n := m.group(1).count("\n")) != natoms})
    if wrong:
        return (f"the final geometry has {natoms} atoms but another geometry block of the log has "
                f"{', '.join(map(str, wrong))} (damaged or cut-short geometry block?)")
    return (_element_problem(text, symbols, blocks) or _element_table_problem(program, text, symbols)
            or nuclear_repulsion_problem(program, text, symbols, coordinates))


#: xTB's table of the elements, printed once per run in its setup: "ID  Z sym.  atoms", then per element its
#: atoms by number ("1-6, 11, 12, 16, 17"), to an empty line
_XTB_ELEMENTS = "ID    Z sym.   atoms"
_XTB_ELEMENT_ROW = re.compile(r"[ \t]+\d+[ \t]+(\d+)[ \t]+[A-Za-z]{1,3}[ \t]+(\d.*)")
_XTB_MORE_ATOMS = re.compile(r"[ \t]+(\d[\d, \t-]*)")


def _element_table_problem(program: str, text: str, symbols) -> str | None:
    """Why the final geometry's elements, atom by atom, are not those of a table of the elements the program
    printed (xTB's setup), or None. A table read in full must list every atom once; one it cannot read (another
    layout) is not compared. A head of one molecule's log spliced onto another's tail shows here when the tail
    prints no structure to compare (an xTB --hess run)."""
    if program != "xtb":
        return None
    final = _nuclear_charges(symbols)
    for at in hits(text, _XTB_ELEMENTS):
        listed = _xtb_listed_elements(text, at)
        if listed is None:
            continue
        if len(listed) != final.size:
            return (f"the final geometry has {final.size} atoms but the log's table of elements lists {len(listed)} "
                    "(logs of two molecules spliced together?)")
        wrong = np.flatnonzero(listed != final)
        if wrong.size:
            i = int(wrong[0])
            return (f"atom {i + 1} is {symbols[i]} in the final geometry but element {listed[i]} in the log's table "
                    "of elements (logs of two molecules spliced together?)")
    return None


def _xtb_listed_elements(text: str, at: int) -> np.ndarray | None:
    """The nuclear charge of each atom, by number, from the table of elements whose header is at ``at``; None when a
    row does not read as expected or the atoms listed are not 1..N once each."""
    charges: dict[int, int] = {}
    z = None
    start = text.find("\n", at) + 1
    for line in text[start : start + 20000].split("\n")[:-1]:  # 200 rows at most: the last may be cut short
        if not line.strip():
            break
        row, more = _XTB_ELEMENT_ROW.fullmatch(line), _XTB_MORE_ATOMS.fullmatch(line)
        if row:
            z, numbers = int(row.group(1)), row.group(2)
        elif more and z is not None:
            numbers = more.group(1)
        else:
            return None
        for item in filter(None, (part.strip() for part in numbers.split(","))):
            first, _, last = item.partition("-")
            if not first.isdigit() or (last and not last.isdigit()):
                return None
            for number in range(int(first), int(last or first) + 1):
                if number in charges:
                    return None
                charges[number] = z
    if not charges or sorted(charges) != list(range(1, len(charges) + 1)):
        return None
    return np.array([charges[n] for n in range(1, len(charges) + 1)])


@functools.cache
def _periodic_table() -> tuple[dict[str, int], tuple[str, ...]]:
    """(symbol -> Z, Z -> symbol) of the elements (ASE's table, imported when first needed)."""
    from ase.data import atomic_numbers, chemical_symbols

    return {s: z for s, z in atomic_numbers.items() if z > 0}, tuple(chemical_symbols)


def _nuclear_charges(symbols) -> np.ndarray:
    """Z of each symbol (0 for one that is no element)."""
    table = _periodic_table()[0]
    return np.array([table.get(s, 0) for s in symbols], dtype=int)


def _row_charge(token: str) -> int:
    """The nuclear charge a geometry row names: a number ("6", "6.0000") or a symbol, maybe with a label
    ("C", "c", "C1", "CA"); -1 when it names none."""
    if token[:1].isdigit():
        try:
            return round(float(token))
        except ValueError:
            return -1
    table, letters = _periodic_table()[0], re.match(r"[A-Za-z]{1,2}", token)
    for symbol in ((letters.group().capitalize(), token[:1].upper()) if letters else ()):
        if symbol in table:
            return table[symbol]
    return -1


@functools.cache
def _column(index: int) -> re.Pattern:
    """The ``index``-th whitespace-separated field of every line (one C-level pass over a block)."""
    return re.compile(rf"^[ \t]*(?:\S+[ \t]+){{{index}}}(\S+)", re.MULTILINE)


def _element_problem(text: str, symbols, blocks: list[tuple[_Count, re.Match]]) -> str | None:
    """Why a geometry block names other elements than the final geometry, atom by atom, or None.

    The element column of each block is read as text; a column already found to agree (every step of an
    optimisation names the same elements the same way: 150 blocks in a Psi4 finite-difference log) is not
    parsed again."""
    final, agreed = _nuclear_charges(symbols), set()
    for spec, found in blocks:
        if spec.element is None:
            continue
        names = tuple(_column(spec.element).findall(found.group(1)))
        if names in agreed or len(names) != final.size:
            continue
        charges = np.array([_row_charge(name) for name in names])
        if np.all(charges == final):
            agreed.add(names)
            continue
        i = int(np.flatnonzero(charges != final)[0])
        table = _periodic_table()[1]
        named = table[charges[i]] if 0 < charges[i] < len(table) else names[i]
        return (f"atom {i + 1} is {symbols[i]} in the final geometry but {named} in another geometry block of "
                f"the log (line {text.count(chr(10), 0, found.start()) + 1}): damaged geometry block?")
    return None


#: bohr in angstrom (CODATA 2018, scipy.constants: physical_constants["Bohr radius"])
BOHR_A = 0.529177210903
#: the printed nuclear repulsion energy (hartree) of each program, each regex matched on the lines of its literal
_REPULSION: dict[str, tuple[tuple[str, re.Pattern], ...]] = {
    program: tuple((literal, re.compile(pattern)) for literal, pattern in found) for program, found in {
        "gaussian": (("nuclear repulsion energy", r"nuclear repulsion energy\s+(\d+\.\d+) Hartrees"),),
        "orca": (("Nuclear Repulsion", r"Nuclear Repulsion\s+(?:ENuc\s+\.+|:)\s+(\d+\.\d+) Eh"),),
        "qchem": (("Nuclear Repulsion Energy =", r"Nuclear Repulsion Energy =\s+(\d+\.\d+) hartrees"),),
        "nwchem": (("Nuclear repulsion energy =", r"Nuclear repulsion energy =\s+(\d+\.\d+)"),),
        "psi4": (("Nuclear repulsion =", r"Nuclear repulsion =\s+(\d+\.\d+)"),),
        "gamess": (("NUCLEAR REPULSION ENERGY IS", r"NUCLEAR REPULSION ENERGY IS\s+(\d+\.\d+)"),),
    }.items()
}
#: relative agreement required between the recomputed and a printed nuclear repulsion energy: the real logs
#: at hand agree within 7.5e-8 (NWChem's older bohr; coordinates printed to 6 decimals), and one atomic number
#: changed moves the sum by percents (C -> O in C10H10: 4 %)
REPULSION_RTOL = 1e-5
#: beyond krypton, logs usually use effective core potentials, whose printed repulsion counts valence charges only
REPULSION_MAX_Z = 36


def nuclear_repulsion(symbols, coordinates) -> float:
    """E_nn = sum_{i<j} Z_i Z_j / r_ij (hartree; r in bohr), the nuclear repulsion energy every program prints."""
    from scipy.spatial.distance import pdist

    z = _nuclear_charges(symbols).astype(float)
    pairs = np.outer(z, z)[np.triu_indices(len(z), 1)]
    return float(np.sum(pairs / (pdist(np.asarray(coordinates, dtype=float)) / BOHR_A)))


def nuclear_repulsion_problem(program: str, text: str, symbols, coordinates) -> str | None:
    """Why the final geometry's nuclear repulsion energy is none of those the log printed, or None.

    Any printed value may match (Psi4's finite-difference frequencies print displaced geometries' after the
    reference's; NWChem's COSMO steps reprint it). Molecules with atoms beyond krypton (effective core
    potentials), a single atom, or unknown coordinates are not checked.
    """
    z = _nuclear_charges(symbols)
    coords = np.asarray(coordinates, dtype=float)
    if len(z) < 2 or z.max() > REPULSION_MAX_Z or not np.all(np.isfinite(coords)) or program not in _REPULSION:
        return None
    with np.errstate(divide="ignore"):
        computed = nuclear_repulsion(symbols, coords)
    last = None
    for value in _printed_repulsions(program, text):
        if not np.isfinite(computed) or abs(value - computed) <= REPULSION_RTOL * computed:
            return None  # not finite: two nuclei on one spot, which geometry_problem says
        last = value if last is None else last
    if last is None:
        return None
    return (f"the nuclear repulsion energy of the final geometry is {computed:.6f} Eh, but the log prints "
            f"{last:.6f} Eh (an element or a coordinate of the final geometry damaged?)")


def _printed_repulsions(program: str, text: str) -> Iterator[float]:
    """The nuclear repulsion energies the log printed: the last first, then the first, then the others (the final
    geometry's is the last printed, or, after a finite-difference Hessian's displaced geometries, the first: a
    log that agrees is told after one or two; thousands are printed in a long one)."""
    for literal, rx in _REPULSION[program]:
        lines = dict.fromkeys(line_bounds(text, at) for at in hits(text, literal))
        order = [*lines][-1:] + [*lines][:-1]
        for start, end in order:
            yield from (float(v) for v in rx.findall(text, start, end))


def frequency_problem(printed: np.ndarray, natoms: int, expected: int | None, all_modes: bool) -> str | None:
    """Why the ``printed`` frequencies cannot belong to ``natoms`` atoms, or None.

    Not finite: damaged. A program prints the 3N-6 (3N-5) vibrations, or all 3N modes when it lists the
    rigid-body ones too (``all_modes``); fewer is a block cut short (the caller drops it with a note).
    Any other length means the geometry and the frequencies disagree on the number of atoms, and
    removing modes "by count" to make them fit would drop real vibrations.
    """
    if not np.all(np.isfinite(printed)):
        return "a frequency is not a finite number (damaged frequency block?)"
    if printed.size and np.max(np.abs(printed)) > MAX_WAVENUMBER_CM:
        worst = printed[np.argmax(np.abs(printed))]
        return f"a frequency of {worst:.6g} cm^-1, beyond any molecular vibration (damaged frequency block?)"
    full, n_printed = 3 * natoms, printed.size
    allowed = (full - 6, full - 5, full) if all_modes else (full - 6, full - 5)
    if n_printed > full or (n_printed not in allowed and n_printed > (expected or 0)):
        return f"{n_printed} frequencies printed for {natoms} atoms (3N = {full}): geometry and frequencies disagree"
    return None


def zero_mode_problem(vibrations: np.ndarray, zero: float) -> str | None:
    """A vibration of |nu| < ``zero`` cm^-1 left once the rigid-body modes are removed: its partition
    function is infinite, so the block is damaged (a frequency turned into 0)."""
    small = vibrations[np.abs(vibrations) < zero]
    if small.size:
        return f"a vibrational frequency of {small[0]:.2f} cm^-1 (a zero among the vibrations: damaged block?)"
    return None


def symbol_problem(symbols) -> str | None:
    """Why the atoms of the final geometry are not all real elements (dummy "X", ghost "Bq"/"Gh", atomic
    number 0 or out of the periodic table), or None."""
    from ase.data import atomic_numbers

    dummy = sorted({s for s in symbols if atomic_numbers.get(s, 0) == 0})
    if dummy:
        return f"dummy or ghost atoms ({', '.join(dummy)}) in the final geometry: not a molecule qcthermo can treat"
    return None


def energy_bound(symbols) -> float:
    """The largest total energy magnitude (hartree) the atoms ``symbols`` can have: ENERGY_MARGIN times the sum
    of their Thomas-Fermi energies 0.7687 Z^(7/3) (see :data:`THOMAS_FERMI_EH`)."""
    z = np.array([electron_count([s], 0) for s in symbols], dtype=float)
    return float(ENERGY_MARGIN * THOMAS_FERMI_EH * np.sum(z ** (7.0 / 3.0)))


def state_problem(symbols, charge: int, multiplicity: int, energy: float) -> str | None:
    """Why the energy, charge or multiplicity read cannot be those of the molecule ``symbols``, or None."""
    if energy == 0.0 or not np.isfinite(energy):
        return f"the final energy reads {energy!r} (damaged energy line?)"
    bound = energy_bound(symbols)
    if energy > 0 or energy < -bound:
        return (f"the final energy reads {energy!r} Eh, outside what these atoms allow (0 to -{bound:.6g} Eh): "
                "damaged energy line?")
    electrons = electron_count(symbols, charge)
    if electrons < 0:
        return f"charge {charge:+d} exceeds the nuclear charge of the molecule"
    if multiplicity < 1 or multiplicity > electrons + 1:
        return f"multiplicity {multiplicity} is impossible with {electrons} electrons (1 to {electrons + 1})"
    # 2S+1 is odd for an even electron count and even for an odd one (an ECP's core holds paired electrons)
    if (electrons + multiplicity) % 2 == 0:
        return f"multiplicity {multiplicity} with {electrons} electrons (charge {charge:+d}): parity impossible"
    return None


@dataclass(frozen=True)
class _Restated:
    """A statement that restates the final energy of a program's run: the literal on its line, the regex
    (group 1: the value), whether only the last one counts (else any may match: Psi4 prints its
    finite-difference SCFs after the reference's) and whether it is an SCF-level energy (not compared when
    the final energy is a correlated one, which it does not restate); ``requires``: a phrase without which
    the statement is not about the final geometry (the statement is then read after its last occurrence)."""

    literal: str
    regex: re.Pattern
    last: bool = True
    scf_level: bool = True
    requires: str | None = None


def _restated(literal: str, pattern: str, last: bool = True, scf_level: bool = True,
              requires: str | None = None) -> _Restated:
    return _Restated(literal, re.compile(pattern, re.MULTILINE), last, scf_level, requires)


#: where each program restates its final energy for the same geometry, after the line it is read from: its
#: final summary (ORCA's and xTB's thermochemistry/summary box), the optimiser's last step (NWChem's "@" lines,
#: Q-Chem's "Final energy is"), the SCF summary (Q-Chem's last iteration, Psi4's "Total Energy =", GAMESS's
#: energy components).
#: Gaussian's archive block is read apart (:func:`_gaussian_archive`). A log that prints none (a single
#: point of NWChem or ORCA, a truncated log) is not checked.
_RESTATEMENTS: dict[str, tuple[_Restated, ...]] = {
    "orca": (_restated("Electronic energy", r"Electronic energy\s+\.\.\.\s+(-?\d+\.\d+) Eh", scf_level=False),),
    "xtb": (_restated("| TOTAL ENERGY", r"\|\s+TOTAL ENERGY\s+(-?\d+\.\d+) Eh", scf_level=False),
            _restated(":: total energy", r"::\s+total energy\s+(-?\d+\.\d+) Eh", scf_level=False)),
    # the last step is the final geometry's only once the optimiser converged (a killed run's last SCF may
    # be of a step it never reported)
    "nwchem": (_restated("\n@ ", r"^@\s+\d+\s+(-?\d+\.\d+)\s", requires="Optimization converged"),),
    # the SCF's last iteration, "11    -382.3082745764      6.10e-09  Convergence criterion met" (Q-Chem 5.4),
    # and the optimiser's "Final energy is"
    "qchem": (_restated("Convergence criterion met", r"^\s*\d+\s+(-?\d+\.\d+)\s+\S+\s+Convergence criterion met"),
              _restated("Final energy is", r"Final energy is\s+(-?\d+\.\d+)")),
    "psi4": (_restated("Total Energy =", r"^\s+Total Energy =\s+(-?\d+\.\d+)", last=False),),
    "gamess": (_restated("TOTAL ENERGY =", r"TOTAL ENERGY =\s+(-?\d+\.\d+)", last=False),),
}
#: hartree: the final energy and a restatement agree to the digits both print (7 decimals in Gaussian's
#: archive) or nearly: NWChem's frequency job reruns the SCF of the last optimisation step (within 1e-6 Eh
#: of it; the energy read is that rerun's, the last before a finite-difference Hessian's displaced geometries,
#: whose energies are a few 1e-5 Eh off: 1.0e-5 Eh in sample ts_hydration.out). 1e-4 Eh (0.06 kcal/mol, below
#: any chemical conclusion) leaves room for those, while a stray or damaged energy line is off by far more
#: (-1.0 against -382 Eh).
RESTATED_TOLERANCE_EH = 1e-4
#: Gaussian's archive energies (hartree) by method, as printed after the job's last step
_ARCHIVE_ENERGY = re.compile(r"\\(HF|MP2|MP3|MP4D|MP4DQ|MP4SDQ|MP4SDTQ|MP5|CCSD|CCSD\(T\)|QCISD|QCISD\(T\)|CISD|BD"
                             r"|BD\(T\))=(-?\d+\.\d+)")


def _gaussian_archive(text: str) -> list[float]:
    """The energies of the last archive block ("1\\1\\GINC-...\\@", wrapped at 70 columns with a leading space)."""
    end = text.rfind("\\@")
    start = text.rfind("1\\1\\", 0, end) if end >= 0 else -1
    if start < 0:
        return []
    return [float(v) for _, v in _ARCHIVE_ENERGY.findall(text[start:end].replace("\n ", ""))]


def _correlated(method: str | None) -> bool:
    upper = (method or "").upper()
    return upper.startswith(("MP", "CC", "QCI", "DLPNO", "LPNO", "CIS", "BD")) or "CCSD" in upper


def restated_energy_problem(program: str, text: str, energy: float, method: str | None) -> str | None:
    """Why the final ``energy`` (hartree) disagrees with the log's own restatement of it, or None.

    A stray energy line (one of an impossible value appended or pasted, or a digit changed in the last one)
    is taken as the final energy by any reader that reads the last; a bound on the magnitude cannot catch it
    (an xTB energy of C10H10 is -26 Eh, a B3LYP one -382 Eh). So the final energy must equal what the
    program prints again for the same geometry (:data:`_RESTATEMENTS`, Gaussian's archive) within
    :data:`RESTATED_TOLERANCE_EH`.
    """
    if program == "gaussian":
        archive = _gaussian_archive(text)
        if archive and min(abs(v - energy) for v in archive) > RESTATED_TOLERANCE_EH:
            return (f"the final energy reads {energy!r} Eh, but the job's archive block gives "
                    f"{', '.join(f'{v:.7f}' for v in archive)} Eh: a stray or damaged energy line?")
        return None
    for statement in _RESTATEMENTS.get(program, ()):
        # a statement that needs a phrase is looked for after its last occurrence only (found from the end)
        start = rfind(text, statement.requires) if statement.requires else 0
        if (statement.scf_level and _correlated(method)) or start < 0:
            continue
        lines = lines_with(text, statement.literal.strip("\n"), start=start)
        values = [float(v) for v in statement.regex.findall(lines)]
        values = values[-1:] if statement.last else values
        if values and min(abs(v - energy) for v in values) > RESTATED_TOLERANCE_EH:
            return (f"the final energy reads {energy!r} Eh, but the log restates it as {values[-1]!r} Eh "
                    f"(\"{statement.literal.strip()}\"): a stray or damaged energy line?")
    return None


#: how a program names a restricted closed-shell reference, which holds only singlets: Gaussian's
#: "SCF Done:  E(RB3LYP)" (R, not RO), ORCA's "HFTyp .... RHF"
_CLOSED_SHELL = {
    "gaussian": re.compile(r"SCF Done:\s+E\((R(?!O)\w*)\)"),
    "orca": re.compile(r"HFTyp\s+\.+\s+(RHF)\b"),
}


def reference_problem(program: str, text: str, multiplicity: int) -> str | None:
    """Why ``multiplicity`` contradicts the closed-shell reference the log's last SCF names, or None."""
    pattern = _CLOSED_SHELL.get(program)
    found = pattern.findall(text) if pattern and multiplicity != 1 else []
    if found:
        return (f"multiplicity {multiplicity}, but the SCF is restricted closed-shell ({found[-1]}), which holds "
                "only singlets (damaged multiplicity line?)")
    return None


def geometry_problem(coordinates) -> str | None:
    """Why the final coordinates cannot be a molecule's (not finite, two nuclei on one spot), or None."""
    coords = np.asarray(coordinates, dtype=float)
    if not np.all(np.isfinite(coords)):
        return "a coordinate of the final geometry is not a finite number (damaged geometry block?)"
    if len(coords) > 1:
        from scipy.spatial import cKDTree

        pairs = cKDTree(coords).query_pairs(COINCIDENT_A, output_type="ndarray")
        if len(pairs):
            i, j = pairs[0]
            return f"atoms {i + 1} and {j + 1} of the final geometry lie within {COINCIDENT_A} A (a row printed twice?)"
    return None


@dataclass(frozen=True)
class Mark:
    """Where a run of a program starts (``kind`` "banner") or ends normally ("end") in a log."""

    at: int
    program: str
    kind: str


#: literal -> (program, kind) for every program's run banners and end phrases
_MARK_LITERALS = {literal: (program, kind) for program, rule in RULES.items()
                  for kind, literals in (("banner", rule.run_banners), ("end", rule.end_literals))
                  for literal in literals}
#: all of them in one alternation: one pass over the text finds every mark (re.escape: literals only)
_MARKS = re.compile("|".join(map(re.escape, sorted(_MARK_LITERALS, key=len, reverse=True))))
#: programs whose logs print another program's output as their own (ORCA's xTB interface copies xtb's
#: output, banner included, into its log: from memory): those marks are not a second log while the host's
#: own run goes on after them (a mark of the host follows)
_EMBEDS = {"orca": {"xtb"}}
#: a run's end phrase lies within this many characters of the run's end: what programs print after it is at
#: most 1045 characters in the real logs at hand (GAMESS's job accounting; NWChem 52, Gaussian 63, ORCA 90,
#: Q-Chem 201, xTB 687), so 8000 leaves room for a long accounting; an end phrase followed by more is a run
#: that ended inside another
END_WINDOW = 8000


def run_marks(text: str) -> list[Mark]:
    """Every run banner and end phrase of every program in ``text``, in order (one pass over the text, or none
    when the text is indexed: then the regex's leftmost-longest choice among the indexed occurrences)."""
    if not indexed_for(text, _MARK_LITERALS):
        return [Mark(found.start(), *_MARK_LITERALS[found.group()]) for found in _MARKS.finditer(text)]
    found = sorted((at, -len(literal), literal) for literal in _MARK_LITERALS for at in hits(text, literal))
    marks, after = [], 0
    for at, _, literal in found:
        if at >= after:
            marks.append(Mark(at, *_MARK_LITERALS[literal]))
            after = at + len(literal)
    return marks


def _line(text: str, at: int) -> int:
    return text.count("\n", 0, at) + 1


def mixed_programs_problem(source: LogSource, marks: list[Mark]) -> str | None:
    """Why the log holds part of another program's log (its banner, or its end phrase: two logs pasted or
    spliced together), or None."""
    embedded = _EMBEDS.get(source.program, set())
    last_own = max((m.at for m in marks if m.program == source.program), default=-1)
    for mark in marks:
        if mark.program != source.program and (mark.program not in embedded or mark.at > last_own):
            what = "a run" if mark.kind == "banner" else "the normal end of a run"
            return (f"{what} of {mark.program} at line {_line(source.text, mark.at)} of this {source.program} "
                    "log: logs of different programs pasted or spliced together? split the file")
    return None


def _run_starts(source: LogSource, marks: list[Mark]) -> list[int]:
    """Where each run of the program starts (the line of its banner; the first run at 0)."""
    starts = [line_start(source.text, m.at) for m in marks if m.program == source.program and m.kind == "banner"]
    return [0, *starts[1:]] if starts else [0]


def split_runs(source: LogSource, marks: list[Mark]) -> list[LogSource]:
    """The runs of the program in one file, one per line holding its run banner (two pasted logs: two).

    A Gaussian job of several steps (opt then freq, "--Link1--") is one run: its later steps print
    "Link1: Proceeding to internal job step" and no new "Entering Gaussian System". Programs without a
    banner known to be printed once per run (``ProgramRules.run_banners``) are one run.
    """
    starts = _run_starts(source, marks)
    if len(starts) < 2:
        return [source]
    bounds = zip(starts, [*starts[1:], len(source.text)], strict=True)
    return [LogSource(source.path, source.text[a:b], source.program) for a, b in bounds]


def spliced_run_problem(source: LogSource, marks: list[Mark]) -> str | None:
    """Why a run of the log ends normally and then goes on (another log spliced into it), or None.

    A program prints its end phrase once, at the end of its run: one followed by more than
    :data:`END_WINDOW` characters before the run's end (the next banner or the end of the file) is a run
    that ended inside another. A Gaussian step that ends and is followed by "Link1:" is one step of a job.
    """
    text, step = source.text, rules(source.program).step_literal
    starts = _run_starts(source, marks)
    for mark in marks:
        if mark.program != source.program or mark.kind != "end":
            continue
        end = next((a for a in starts if a > mark.at), len(text))
        if end - mark.at <= END_WINDOW or (step and text.find(step, mark.at, mark.at + 400) >= 0):
            continue
        return (f"the {source.program} run ends normally at line {_line(text, mark.at)}, but the log goes on "
                f"for {text.count(chr(10), mark.at, end)} more lines: logs spliced together? split the file")
    return None

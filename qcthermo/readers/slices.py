"""The part of a log cclib needs, cut out before cclib parses it (docs/readers.md, "Slices for cclib").

cclib reads a log line by line in Python (5-17 MB/s); a production optimisation log is mostly the same
step printed tens of times, of which a Calculation uses the last. A slicer returns the text cclib is given
instead of the whole log: the whole text without the steps it does not need, cut at line starts, found
with ``str.find``/``str.count`` (C speed, no Python loop over lines). It returns None whenever it cannot
tell that the cut is safe (then cclib reads the whole text, as without slicing). The damage checks and the
programs' own extractors always see the whole text.

``QCTHERMO_NO_SLICE=1`` turns slicing off (cclib reads every whole log).
"""

from __future__ import annotations

import heapq
import itertools
import os
import re
from collections.abc import Callable, Iterable, Iterator

from .text import find, hits, indexed_for, line_bounds, line_start, rfind

#: the environment variable that turns slicing off when set to anything but "" or "0"
NO_SLICE_VARIABLE = "QCTHERMO_NO_SLICE"


def slicing_enabled() -> bool:
    """False when ``QCTHERMO_NO_SLICE`` is set (to anything but "" or "0")."""
    return os.environ.get(NO_SLICE_VARIABLE, "") in ("", "0")


def cclib_slice(program: str, text: str) -> str | None:
    """The text cclib should parse for a log of ``program``, or None for the whole text (no slicer for the
    program, slicing off, or a log its slicer cannot cut safely). Every size is sliced: the cut pays even on
    the smallest real log at hand (benchmarks/bench_read.py)."""
    slicer = SLICERS.get(program)
    if slicer is None or not slicing_enabled():
        return None
    return slicer(text)


# --- helpers for slicers ------------------------------------------------------------------------------


def line_starts(text: str, phrase: str, start: int = 0, end: int | None = None) -> list[int]:
    """Where each line holding ``phrase`` starts, in ``text[start:end]`` (one entry per line)."""
    found: list[int] = []
    for at in hits(text, phrase, start, end):
        line = line_start(text, at)
        if not found or found[-1] != line:
            found.append(line)
    return found


def first_line_start(text: str, phrases: Iterable[str], start: int, end: int) -> int | None:
    """Start of the first line after ``start`` (before ``end``) holding any of ``phrases``; None if none does."""
    found = [at for phrase in phrases if (at := find(text, phrase, start, end)) >= 0]
    return line_start(text, min(found)) if found else None


def holds_any(text: str, phrases: Iterable[str], start: int = 0, end: int | None = None) -> bool:
    """Whether ``text[start:end]`` holds any of ``phrases``."""
    end = len(text) if end is None else end
    return any(find(text, phrase, start, end) >= 0 for phrase in phrases)


def without(text: str, cuts: list[tuple[int, int]]) -> str | None:
    """``text`` without the ranges ``cuts`` (sorted, disjoint, at line starts); None if nothing is cut."""
    cuts = [(a, b) for a, b in cuts if b > a]
    if not cuts:
        return None
    kept, at = [], 0
    for a, b in cuts:
        kept.append(text[at:a])
        at = b
    kept.append(text[at:])
    return "".join(kept)


def segments(text: str, phrase: str) -> list[tuple[int, int]]:
    """``text`` split (as ranges) at the start of each line holding ``phrase``: one range per job of a
    multi-job log (Gaussian's Link1, ...), the whole text when the phrase is absent."""
    bounds = [0, *line_starts(text, phrase), len(text)]
    return [(a, b) for a, b in itertools.pairwise(bounds) if b > a]


# --- Gaussian -----------------------------------------------------------------------------------------

#: cclib 1.8.1 keeps state across the steps of these jobs (IRCs, BOMD trajectories, scans, ONIOM layers,
#: counterpoise and fragment-guess fragments); each prints its phrase in its header or first step, where it
#: is looked for: such a job is never cut
_GAUSSIAN_UNSLICED = ("INPUT DATA FOR L123", "IRC-IRC-IRC", "Summary information for step",
                      "Number of optimizations in scan", "ONIOM:", "Counterpoise:", "Fragment guess:")
#: the optimiser's step line: cclib appends one entry to ``optstatus`` per line, and trims ``atomcoords`` to
#: that count at the end, so a cut must drop as many of these as of geometries
_GAUSSIAN_STEP = " Step number"
#: cclib's geometry triggers: "Input orientation" or "Z-Matrix orientation" anywhere in a line,
#: "Standard orientation:" as the whole line; each ends in this word
_ORIENTATION = "orientation"


def _gaussian_orientations(text: str, start: int, end: int) -> tuple[int, int]:
    """(input or Z-matrix, standard) orientation blocks in ``text[start:end]`` as cclib counts them."""
    inputs = standard = 0
    for at in hits(text, _ORIENTATION, start, end):
        if text.startswith("Input ", at - 6) or text.startswith("Z-Matrix ", at - 9):
            inputs += 1
        elif text.startswith("Standard orientation:", at - 9):
            first, last = line_bounds(text, at)
            standard += text[first:last].strip() == "Standard orientation:"
    return inputs, standard


def _gaussian_job_cut(text: str, start: int, end: int) -> tuple[int, int] | None:
    """The range of one job (``text[start:end]``) to drop: from the start of its second optimisation step to
    the start of its last; (start, start) when there is nothing to drop, None when no cut is safe."""
    steps = hits(text, _GAUSSIAN_STEP, start, end)
    if len(steps) < 3:
        return start, start
    # step k + 1 starts with the first geometry printed after step k's optimiser line
    first = first_line_start(text, ("Input orientation", "Z-Matrix orientation", "Standard orientation:"),
                             steps[0], steps[1])
    last = first_line_start(text, ("Input orientation", "Z-Matrix orientation", "Standard orientation:"),
                            steps[-2], steps[-1])
    if first is None or last is None or last <= first or holds_any(text, _GAUSSIAN_UNSLICED, start, first):
        return None
    dropped = sum(first <= at < last for at in steps)
    inputs, standard = _gaussian_orientations(text, first, last)
    kept_inputs, kept_standard = _gaussian_orientations(text, last, steps[-1])
    ended = any(text.startswith(("Optimization completed", "Optimization stopped"), at)
                for at in hits(text, "Optimization ", first, last))
    if (ended or holds_any(text, ("termination", "Harmonic frequencies"), first, last)
            or inputs != dropped * kept_inputs or standard != dropped * kept_standard):
        return None
    return first, last


#: links whose output cclib reads into nothing a Calculation holds: 302 (one-electron integrals; the overlap
#: matrix with IOp(3/33)) and 601 (population analysis: orbital energies and coefficients, density matrix,
#: charges, multipole moments)
_GAUSSIAN_UNUSED_LINKS = ("302", "601")


def _gaussian_link_cuts(text: str, start: int, end: int) -> list[tuple[int, int]]:
    """The output of each unused link in ``text[start:end]``: with ``#p`` Gaussian prints "(Enter .../lNNN.exe)"
    before a link's output and " Leave Link  NNN" after it; the lines between are dropped when no other
    link enters before that one leaves (without ``#p`` nothing marks a link, and nothing is cut)."""
    cuts = []
    for link in _GAUSSIAN_UNUSED_LINKS:
        for at in hits(text, f"/l{link}.exe)", start, end):
            body = text.find("\n", at, end) + 1
            leave = text.find(f"\n Leave Link {link:>4}", body - 1, end)
            if body > 0 and leave >= 0 and text.find("(Enter ", body, leave) < 0:
                cuts.append((body, leave + 1))
    return cuts


def gaussian(text: str) -> str | None:
    """A Gaussian log without the optimisation steps between the first and the last of each job (Link1), and
    without the output of the links a Calculation needs nothing from (integrals, population analysis).

    Kept: the header and first step of each job (route, title, charge and multiplicity, basis, solvent;
    cclib reads the atoms from the first geometry), the last step and everything after it (final geometry,
    SCF energy, convergence, the frequencies with their normal modes, thermochemistry, archive block,
    termination). None if a job's cut would not drop whole steps (as many step lines as geometries, as in
    its last step) or would drop the end of an optimisation, frequencies or a termination line."""
    steps = []
    for start, end in segments(text, "Link1:  Proceeding to internal job step number"):
        cut = _gaussian_job_cut(text, start, end)
        if cut is None:
            return None
        steps.append(cut)
    kept = zip([0, *(b for _, b in steps)], [*(a for a, _ in steps), len(text)], strict=True)
    links = [cut for a, b in kept for cut in _gaussian_link_cuts(text, a, b)]
    return without(text, sorted(steps + links))


#: program (a key of source.PROGRAMS) -> its slicer
SLICERS: dict[str, Callable[[str], str | None]] = {
    "gaussian": gaussian,
}


# --- NWChem, Psi4, GAMESS, xTB --------------------------------------------------------------------------
# Each drops, from every run of repeated blocks (optimisation steps, displaced-geometry calculations of a
# finite-difference Hessian), the blocks between the first and the last: the first keeps the state cclib sets
# once (atoms, level, basis), the last gives the values cclib keeps (its geometry, its energy last in the list).


def _middle_cut(starts: list[int]) -> tuple[int, int] | None:
    """(start of the second block, start of the last) of blocks starting at ``starts``; None when fewer than three
    blocks leave nothing to drop. Each slicer tells from the blocks' own numbers and bounds that they are one run
    of blocks (searching the dropped part for what must not be there would cost a pass over the text per phrase)."""
    return (starts[1], starts[-1]) if len(starts) >= 3 else None


def matching_lines(text: str, phrase: str, pattern: re.Pattern, start: int = 0, end: int | None = None) -> list:
    """The matches of ``pattern`` at the start of each line holding ``phrase`` in ``text[start:end]`` (the phrase
    found with str.find, the pattern tried only there: a regex pass over every line costs ~5 times more)."""
    return [m for at in line_starts(text, phrase, start, end) if (m := pattern.match(text, at))]


def _values_kept(text: str, phrase: str, pattern: re.Pattern, start: int, end: int) -> bool:
    """Whether every line of ``pattern`` (found by ``phrase``) in ``text[start:end]`` has the value (group 1) of the
    last one before ``start``: state cclib overwrites (a point group's order) is then the same after the cut."""
    values = {m.group(1) for m in matching_lines(text, phrase, pattern, start, end)}
    before = rfind(text, phrase, 0, start)
    last = pattern.match(text, line_start(text, before)) if before >= 0 else None
    return not values or (last is not None and values == {last.group(1)})


#: the header of an NWChem optimisation step (cclib's trigger: "Step" at column 10; it keeps the step number)
_NWCHEM_STEP_PHRASE, _NWCHEM_STEP = "          Step ", re.compile(r" {10}Step +(\d+)\n")
#: a point group's order, read by cclib in each geometry printout and used for the next basis table
_NWCHEM_ORDER_PHRASE, _NWCHEM_ORDER = " Group order", re.compile(r" Group order +(\d+)")
_NWCHEM_TABLE = "Symmetry analysis of basis"
#: the displaced-geometry calculations of a finite-difference Hessian: from its header to the frequency analysis
_NWCHEM_FD = "NWChem Finite-difference Hessian"
_NWCHEM_FD_END = "Vibrational analysis via the FX method"
#: the modules whose runs are the displaced calculations (one of the two per Hessian)
_NWCHEM_MODULES = ("NWChem DFT Module", "NWChem SCF Module")


def _nwchem_order_reprinted(text: str, at: int) -> bool:
    """Whether the point group's order cclib holds when it next reads a basis-symmetry table (it reads as many rows
    as the order) is printed again after ``at``: each optimisation step reprints its geometry with its symmetry;
    then the dropped part before ``at`` cannot change it (a search in the kept step only, not the dropped part)."""
    table = find(text, _NWCHEM_TABLE, at)
    return table < 0 or find(text, _NWCHEM_ORDER_PHRASE, at, table) >= 0


def nwchem(text: str) -> str | None:
    """An NWChem log without the optimisation steps between the first and the last of each optimisation
    ("NWChem Geometry Optimization"), without the displaced-geometry calculations between the first and the
    last of a finite-difference Hessian, and without the orbital analysis blocks of what is kept
    (:func:`_nwchem_orbital_blocks`).

    Kept: the header and input (atoms, charge, basis, symmetry), step 0 of each optimisation (its module
    headers give the multiplicity and functional; cclib asserts that the step summary with "@" is step 0's),
    the last step and all after it (final geometry and energy, "Optimization converged", the frequency task with
    its normal modes and thermochemistry, termination). Of a finite-difference Hessian the first and the last
    displaced calculation (cclib keeps the last energy it reads, so the record's energy is unchanged).
    None for molecular dynamics (cclib reads every step's coordinates) and anything not recognised.

    Each phrase searched costs a pass over the text (~1 GB/s), so the structure is told from the steps' numbers
    rather than by searching the dropped part for what must not be there: the steps of one optimisation (between
    two driver headers) start at step 0 and have no other step 0 (a second optimisation, a restart, another run
    pasted in would), so the part between its step 1 and its last step holds steps of it alone."""
    cuts = []
    for start, end in segments(text, "NWChem Geometry Optimization"):
        steps = [(m.start(), int(m.group(1)))
                 for m in matching_lines(text, _NWCHEM_STEP_PHRASE, _NWCHEM_STEP, start, end)]
        if steps and [number for _, number in steps if number == 0] != [steps[0][1]]:
            return None  # an optimisation that does not start at step 0, or starts twice: not recognised
        cut = _middle_cut([at for at, _ in steps])
        if cut:
            cuts.append(cut)
    for start, following in itertools.pairwise([*line_starts(text, _NWCHEM_FD), len(text)]):
        end = find(text, _NWCHEM_FD_END, start, following)  # a Hessian restarted before its analysis: not cut
        runs = [at for module in _NWCHEM_MODULES for at in line_starts(text, module, start, end)] if end > 0 else []
        cut = _middle_cut(sorted(runs))
        if cut and find(text, _NWCHEM_STEP_PHRASE, *cut) < 0:
            cuts.append(cut)
    if not all(_nwchem_order_reprinted(text, b) or _values_kept(text, _NWCHEM_ORDER_PHRASE, _NWCHEM_ORDER, a, b)
               for a, b in cuts):
        return None
    piece = without(text, sorted([*cuts, *_nwchem_orbital_blocks(text, cuts)]))
    # molecular dynamics (cclib reads every step's coordinates) is a task of its own, kept whole by the cuts
    return None if piece is None or "NWChem QMD Module" in piece else piece


#: an orbital analysis block as cclib 1.8.1 reads it (nwchemparser, "Final" and "Molecular Orbital Analysis" in a
#: line): that line, dashes, a blank line, then while a line starts " Vector": it, the lines up to a blank one
#: (MO centre, coefficient table), the blank one, and the line after it, which cclib reads to end its loop and
#: never looks at again (required blank here, so that no trigger is in it)
_NWCHEM_ORBITALS = "Molecular Orbital Analysis"
_NWCHEM_ORBITAL_BLOCK = re.compile(r"[^\n]*?Final[^\n]*?Molecular Orbital Analysis[^\n]*\n[ \t]*-+[ \t]*\n[ \t]*\n"
                                   r"(?: Vector[^\n]*\n(?:[ \t]*\S[^\n]*\n)*[ \t]*\n)+[ \t]*\n")
#: phrases of tasks that read what those blocks give (the orbital count, the orbital energies): then none is cut
_NWCHEM_ORBITAL_READERS = ("Final MO vectors", "NWChem TDDFT Module")


def _nwchem_orbital_blocks(text: str, cuts: list[tuple[int, int]]) -> list[tuple[int, int]]:
    """The orbital analysis blocks outside ``cuts`` (each SCF prints one, or an alpha and a beta one: half of a
    small log's lines): cclib takes from them the orbital energies, symmetries and HOMO indices, which no field of a
    Calculation uses, and nothing else reads its state from them unless a task of :data:`_NWCHEM_ORBITAL_READERS`
    is in the log."""
    if any(find(text, phrase) >= 0 for phrase in _NWCHEM_ORBITAL_READERS):
        return []
    blocks = []
    for at in hits(text, _NWCHEM_ORBITALS):
        if any(a <= at < b for a, b in cuts):
            continue
        found = _NWCHEM_ORBITAL_BLOCK.match(text, line_start(text, at))
        if found:
            blocks.append(found.span())
    return blocks



#: cclib reads no geometry or energy after this line (its finite_difference flag), only the Hessian's results
_PSI4_FD = "Using finite-differences of gradients"
#: the banner line of each displaced-geometry gradient of a finite-difference Hessian: "k of n"
_PSI4_DISPLACEMENT = re.compile(r" *// +Loading displacement (\d+) of (\d+) +//$", re.M)


def psi4(text: str) -> str | None:
    """A Psi4 log without the displaced-geometry gradients between the first and the last of a frequency
    computation by finite differences of gradients ("Loading displacement k of n").

    Kept: everything before them (header, the reference geometry with charge and multiplicity, its SCF and
    energy, "Using finite-differences of gradients", after which cclib reads no geometry or energy), the first
    and the last displacement, the Hessian, the vibrational analysis with normal modes, the thermochemistry and
    termination. Optimisation steps are not cut (no real multi-step Psi4 optimisation at hand to prove it on):
    None for a log without a finite-difference Hessian of gradients, or any structure not recognised."""
    flag = find(text, _PSI4_FD)
    if flag < 0:
        return None
    banners = matching_lines(text, "Loading displacement", _PSI4_DISPLACEMENT, flag)
    numbers = [(int(m.group(1)), int(m.group(2))) for m in banners]
    # one computation: displacement 1 first and only once, n of n last, one n (a second one would start at 1)
    if not numbers or numbers[0][0] != 1 or numbers[-1][0] != numbers[-1][1] or [k for k, _ in numbers].count(1) > 1:
        return None
    if len({n for _, n in numbers}) > 1:
        return None
    cut = _middle_cut([m.start() for m in banners])
    return None if cut is None else without(text, [cut])


#: the start of each displaced-geometry calculation of GAMESS's numerical Hessian (RUNTYP=HESSIAN, HSSEND)
_GAMESS_DISPLACEMENT = re.compile(r" +COORD +(\d+) +NUCLEAR COORDINATES$", re.M)
_GAMESS_FD_END = "END OF NUMERICAL HESSIAN CALCULATION"


def gamess(text: str) -> str | None:
    """A GAMESS-US log without the displaced-geometry calculations between the first and the last of a numerical
    Hessian (each starts "COORD n  NUCLEAR COORDINATES", the lot ends "END OF NUMERICAL HESSIAN CALCULATION").

    Kept: the header and input (atoms, charge, multiplicity, basis), the reference point's SCF and gradient,
    the first and the last displaced calculation (cclib keeps the last "FINAL ... ENERGY" it reads, so the
    record's energy is unchanged), the normal-mode analysis, thermochemistry and termination. Optimisation steps
    (NSERCH) are not cut (no real GAMESS optimisation at hand to prove it on): None for a log without a numerical
    Hessian, or any structure not recognised."""
    end = find(text, _GAMESS_FD_END)
    if end < 0:
        return None
    starts = [m.start() for m in matching_lines(text, "NUCLEAR COORDINATES", _GAMESS_DISPLACEMENT, 0, end)]
    # the displacements before the first end line are of one Hessian: GAMESS runs nothing else between them (an
    # optimisation's steps or a second Hessian come after that line), so the dropped part needs no search
    cut = _middle_cut(starts)
    return None if cut is None else without(text, [cut])


#: the header line of each cycle of xTB's optimiser; cclib reads from the first one to the end line, keeping
#: each cycle's "* total energy" and then the final "TOTAL ENERGY" in place of the last
_XTB_CYCLE = re.compile(r"\.+ CYCLE +\d+ \.+$", re.M)
#: the end line of an optimisation (converged or not): cclib reads nothing else from the first cycle to it, so a
#: part between two cycles of one optimisation holds nothing it would read
_XTB_END = "GEOMETRY OPTIMIZATION"


def xtb(text: str) -> str | None:
    """An xTB log without the optimisation cycles between the first and the last of each optimisation, and
    without the lines cclib's xTB parser ignores (:func:`xtb_ranges_read`; with cclib 1.8.1 only, whose
    tests they mirror).

    Kept: the header and setup (program call, charge, multiplicity where printed, method), the first and the
    last cycle with the end line, the final structure, the summary with the final energy, the frequencies and
    thermochemistry, termination. None when there is nothing to cut or a structure not recognised."""
    cuts = []
    for start, end in segments(text, _XTB_END):
        cut = _middle_cut(_outer_matching_lines(text, "CYCLE", _XTB_CYCLE, start, end))
        if cut:
            cuts.append(cut)
    from .cclib_data import known_cclib  # here: cclib_data imports this module

    if not known_cclib():
        return without(text, cuts)
    if not indexed_for(text, (phrase for phrase in XTB_READ if phrase not in NOT_INDEXED)):
        piece = without(text, cuts) or text  # searched phrase by phrase: the cut text, which is the shorter
        kept = "".join(piece[a:b] for a, b in xtb_ranges_read(piece))
        return None if len(kept) == len(text) else kept
    kept_ranges = _minus(xtb_ranges_read(text), cuts)  # positions from the index: no pass over the text
    return None if kept_ranges == [(0, len(text))] else "".join(text[a:b] for a, b in kept_ranges)


def _minus(ranges: list[tuple[int, int]], cuts: list[tuple[int, int]]) -> list[tuple[int, int]]:
    """The parts of ``ranges`` (sorted, disjoint) outside every range of ``cuts`` (sorted, disjoint)."""
    out = []
    for start, end in ranges:
        for a, b in cuts:
            if b <= start or a >= end:
                continue
            if a > start:
                out.append((start, a))
            start = max(start, b)
        if start < end:
            out.append((start, end))
    return out


#: phrases searched only from known points, a few lines away, and printed thousands of times in a long log (a cycle
#: header of xTB's optimiser): the phrase index (literals.py) leaves them out, as each would cost a Python call
#: per occurrence in its scan
NOT_INDEXED = ("CYCLE",)
#: cclib 1.8.1's xTB parser (xtbparser.extract) tests each line it is given for these phrases (a part of each
#: test, so a line without any of them passes every test: "G F N" of its three method banners, "-u" of its
#: "(--uhf|-u) N" multiplicity, "symmetry" of its ":"-and-"symmetry" test) and reads nothing from any other line
#: unless one of :data:`_XTB_BLOCKS` is reading it
XTB_READ = ("xtb version", "program call", "coordinate file", "total charge", "-u", "G F N", "CYCLE",
             "final structure:", "* Orbital Energies and Occupations", "covCN", "Mulliken/CM5 charges", "TOTAL ENERGY",
             "symmetry", "Frequency Printout", "TOTAL ENTHALPY", "TOTAL FREE ENERGY", "zero point energy", "VIB",
             "[WARNING]", "wall-time", "cpu-time", "* finished run", "$grad", "$hessian")
#: the blocks that parser reads line by line after a line holding the phrase, as its loops do: phrase -> (the
#: line, counted from the phrase's, its loop tests first; then for each loop in turn the test that ends it and
#: the line, counted from the one that ended the loop before, the next loop tests first). "" is an empty line;
#: "M END" a line holding "M" and "END", "*** GEOMETRY" one holding "***" and "GEOMETRY OPTIMIZATION".
#: The final structure's end depends on the input's format (:func:`_xtb_structure_end`)
_XTB_BLOCKS: dict[str, tuple[int, tuple[tuple[str, int], ...]]] = {
    "CYCLE": (0, (("*** GEOMETRY", 0),)),
    "* Orbital Energies and Occupations": (4, (("------", 0),)),
    "covCN": (1, (("", 0),)),  # only under the header "#   Z   covCN   q ..." (its test splits the line)
    "Mulliken/CM5 charges": (1, (("", 0),)),
    "Frequency Printout": (3, (("reduced masses", 0), ("IR intensities", 1), ("Raman intensities", 0))),
    "[WARNING]": (0, (("###", 0),)),
    "$grad": (0, (("$end", 0),)),
    "$hessian": (1, (("", 0),)),
}


def xtb_ranges_read(text: str) -> list[tuple[int, int]]:
    """The ranges of ``text`` (an xTB log; whole lines, in order, disjoint) that cclib 1.8.1's parser reads: every
    line holding a phrase of :data:`XTB_READ` and every block one of them starts (:data:`_XTB_BLOCKS`), whole.
    The others (citations, setup boxes, SCC iterations, timings, bond orders, geometry analysis: four fifths of a
    small log's lines) pass through all its tests without effect, so the record is the same without them."""
    merged: list[tuple[int, int]] = []
    inside = 0  # lines before this, within a block, are read by the block's loop (not tested one by one)
    upcoming = [(at, word) for word in XTB_READ if (at := find(text, word)) >= 0]
    heapq.heapify(upcoming)
    while upcoming:
        at, phrase = heapq.heappop(upcoming)
        if at < inside:  # within a block (an optimisation's thousands of cycle lines): on from its end
            _push_next(upcoming, text, phrase, inside)
            continue
        start, end = line_start(text, at), _xtb_read_end(text, phrase, at)
        if end > _line_end(text, at):  # a block: its last line is tested further, as a line of its own
            inside = line_start(text, end - 1)
        if merged and start <= merged[-1][1]:
            merged[-1] = (merged[-1][0], max(merged[-1][1], end))
        else:
            merged.append((start, end))
        _push_next(upcoming, text, phrase, at + 1)
    return merged


def _push_next(upcoming: list, text: str, phrase: str, start: int) -> None:
    """Queue the next occurrence of ``phrase`` from ``start``, if any."""
    at = find(text, phrase, start)
    if at >= 0:
        heapq.heappush(upcoming, (at, phrase))


def _line_end(text: str, at: int) -> int:
    """The index after the newline that ends the line holding ``at`` (the text's end for its last line)."""
    end = text.find("\n", at)
    return len(text) if end < 0 else end + 1


def _nth_line(text: str, at: int, n: int) -> int:
    """The start of the ``n``-th line after the one holding ``at`` (0: that line's start)."""
    line = line_start(text, at)
    for _ in range(n):
        line = _line_end(text, line)
    return line


def xtb_optimisation_end(text: str, start: int = 0) -> int:
    """The start of the first line from ``start`` that ends an xTB optimisation ("*** GEOMETRY OPTIMIZATION
    CONVERGED AFTER 6 ITERATIONS ***", or its failure), after which xTB prints the final structure; -1 if none."""
    return _xtb_line_with(text, "*** GEOMETRY", start)


def _xtb_line_with(text: str, test: str, start: int) -> int:
    """The start of the first line from ``start`` (a line start) that passes ``test`` (:data:`_XTB_BLOCKS`), or -1."""
    if test == "":  # cclib's line == "\n"
        if text.startswith("\n", start):
            return start
        found = text.find("\n\n", start)
        return -1 if found < 0 else found + 1
    phrase, also = {"*** GEOMETRY": ("GEOMETRY OPTIMIZATION", "***"), "M END": ("END", "M")}.get(test, (test, ""))
    # an optimisation's cycles span most of a long log: their end is found from the phrase index; every other block
    # ends within a few lines of its start
    locate = find if test == "*** GEOMETRY" else str.find
    while (at := locate(text, phrase, start)) >= 0:
        line = line_start(text, at)
        if also in text[line : _line_end(text, at)]:
            return line
        start = _line_end(text, at)
    return -1


def _xtb_read_end(text: str, phrase: str, at: int) -> int:
    """The end of what cclib reads for the line holding ``phrase`` at ``at``: that line's end, or the end of the
    block it starts (the text's end when the block never ends, or cclib would raise at it: all is kept then)."""
    end = _line_end(text, at)
    line = line_start(text, at)
    if phrase == "final structure:":
        first, loops = 0, ((_xtb_structure_end(text, at), 0),)
    elif phrase in _XTB_BLOCKS and (phrase != "covCN" or text[line:end].split()[:4] == ["#", "Z", "covCN", "q"]):
        first, loops = _XTB_BLOCKS[phrase]
    else:
        return end
    start = _nth_line(text, at, first)
    for test, after in loops:
        if test is None or start >= len(text) or (found := _xtb_line_with(text, test, start)) < 0:
            return len(text)
        start = _nth_line(text, found, after)
        end = _line_end(text, found)
    return end


def _xtb_structure_end(text: str, at: int) -> str | None:
    """The test that ends the final structure at ``at``, by the format of the input file named before it, as cclib
    tells it (the extension of "coordinate file"'s last word): "" for xyz, "M END" for mol and sdf, None (cclib
    raises: everything is kept) for any other."""
    named = rfind(text, "coordinate file", 0, at)
    if named < 0:
        return None
    words = text[named : _line_end(text, named)].split()
    kind = words[-1].split(".")[-1] if words else ""
    return "" if kind == "xyz" else "M END" if kind in ("mol", "sdf") else None


def _outer_matching_lines(text: str, phrase: str, pattern: re.Pattern, start: int, end: int) -> list[int]:
    """The starts of the first two and the last of :func:`matching_lines` (all of them when there are at most
    three): what :func:`_middle_cut` needs, found from both ends of ``text[start:end]`` without visiting the
    thousands of lines between (an optimisation of 30,000 xTB cycles)."""

    def forward() -> Iterator[int]:
        at = find(text, phrase, start, end)
        while at >= 0:
            yield at
            at = find(text, phrase, at + 1, end)

    def backward() -> Iterator[int]:
        at = rfind(text, phrase, start, end)
        while at >= 0:
            yield at
            at = rfind(text, phrase, start, at + len(phrase) - 1)

    def matching(positions: Iterator[int]) -> Iterator[int]:  # the start of each line there that matches, once
        previous = None
        for at in positions:
            line = line_start(text, at)
            if line != previous and pattern.match(text, line):
                yield line
            previous = line

    head = list(itertools.islice(matching(forward()), 2))
    if len(head) < 2:
        return head
    last = next(matching(backward()), None)
    return head if last is None or last <= head[1] else [*head, last]


def displacements_start(program: str, text: str) -> int | None:
    """Where the displaced-geometry calculations of a finite-difference Hessian start in ``text``: every energy
    printed from there on is of a displaced geometry, the last one before is of the geometry the frequencies
    belong to. NWChem: the header of the last Hessian that reached its vibrational analysis; GAMESS: "COORD 1"
    of the numerical Hessian ("COORD 0" is the reference point). None for any other log (Psi4 needs none:
    cclib reads no energy after its "Using finite-differences of gradients")."""
    if program == "nwchem":
        at = rfind(text, _NWCHEM_FD)
        return at if at >= 0 and find(text, _NWCHEM_FD_END, at) >= 0 else None
    end = find(text, _GAMESS_FD_END) if program == "gamess" else -1
    if end < 0:
        return None
    starts = matching_lines(text, "NUCLEAR COORDINATES", _GAMESS_DISPLACEMENT, 0, end)
    return next((m.start() for m in starts if m.group(1) != "0"), None)


SLICERS.update(nwchem=nwchem, psi4=psi4, gamess=gamess, xtb=xtb)

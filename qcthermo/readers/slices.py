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

import itertools
import os
from collections.abc import Callable, Iterable

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
        line = text.rfind("\n", 0, at) + 1
        if not found or found[-1] != line:
            found.append(line)
    return found


def hits(text: str, phrase: str, start: int = 0, end: int | None = None) -> list[int]:
    """Where ``phrase`` occurs in ``text[start:end]``."""
    end = len(text) if end is None else end
    found: list[int] = []
    at = text.find(phrase, start, end)
    while at >= 0:
        found.append(at)
        at = text.find(phrase, at + len(phrase), end)
    return found


def first_line_start(text: str, phrases: Iterable[str], start: int, end: int) -> int | None:
    """Start of the first line after ``start`` (before ``end``) holding any of ``phrases``; None if none does."""
    hits = [at for phrase in phrases if (at := text.find(phrase, start, end)) >= 0]
    return text.rfind("\n", 0, min(hits)) + 1 if hits else None


def holds_any(text: str, phrases: Iterable[str], start: int = 0, end: int | None = None) -> bool:
    """Whether ``text[start:end]`` holds any of ``phrases``."""
    end = len(text) if end is None else end
    return any(text.find(phrase, start, end) >= 0 for phrase in phrases)


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
            line_start, line_end = text.rfind("\n", 0, at) + 1, text.find("\n", at)
            standard += text[line_start:line_end].strip() == "Standard orientation:"
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

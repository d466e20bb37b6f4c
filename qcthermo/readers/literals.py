"""Every phrase a reading looks for, found in one pass over the file (docs/readers.md, "One pass for the phrases").

Reading one log searches its whole text for 20 to 40 literal phrases: the damage checks' atom counts and
geometry blocks, every program's run banners and end phrases, the slicers' step markers, the job
specification's lines. One ``str.find`` pass costs 12-20 ms on 30 MB (about 2 GB/s on the development
machine), so these passes were most of a production-size read. Hyperscan (Intel's multi-pattern matcher, which
the ``hyperscan`` package bundles in its Vectorscan fork) finds every occurrence of all of a program's phrases in
one pass over the file's mapping at about the cost of one ``str.find``; the positions go with the text
(``LogSource.literals``), and :mod:`.text`'s searches answer from them for that text.

The positions are those of the text: the text is decoded one character per byte ("?" for each byte beyond
ASCII, source.py), so a byte offset is a character offset; a file whose text is not aligned so (a byte-order
mark or CRLF line ends removed, UTF-16) is scanned as its text encoded. Without the package (no wheel for
the platform) there is no index, and every search is the plain string search it always was: the answers are
the same either way (tests/test_literals.py compares them on every real log).
"""

from __future__ import annotations

import functools
import threading

from .checks import literals_checked
from .programs import RULES, rules
from .slices import NOT_INDEXED, XTB_READ

#: phrases the readers search a whole log of each program for, beyond those derived from the damage checks
#: and ProgramRules (:func:`vocabulary`): the slicers', the extractors' and the amendments' (a phrase left out is
#: only searched the slow way; tests/test_literals.py fails when a reading searches one that is not here)
PHRASES: dict[str, tuple[str, ...]] = {
    "gaussian": (" Step number", "/l302.exe)", "/l601.exe)", "Counterpoise:", "Fragment guess:",
                 "Harmonic frequencies", "INPUT DATA FOR L123", "IRC-IRC-IRC", "Input orientation",
                 "Link1:  Proceeding to internal job step number", "Number of optimizations in scan", "ONIOM:",
                 "Optimization ", "Optimization completed", "Standard orientation:", "Summary information for step",
                 "Z-Matrix orientation", "nuclear repulsion energy", "orientation", "termination"),
    "nwchem": ("          Step ", " Method XC ", "(NWChem) ", "(modsad)", "<S", "@ ", "CCSD total energy",
               "CCSD(T) total energy", "Charge", "NWChem ", "NWChem DFT Module", "NWChem Finite-difference Hessian",
               "NWChem Geometry Optimization", "NWChem SCF Module", "Nuclear repulsion energy =",
               "Optimization converged", "Projected Frequencies expressed in cm-1", "Spin multiplicity:",
               'Summary of "ao basis"', "Temperature", "Thermal correction to Enthalpy", "Total DFT energy =",
               "Total Entropy", "Total MP2 energy", "Normal Eigenvalue",
               "Total SCF energy =", "Vibrational analysis via the FX method",
               "Zero-Point correction to Energy", "dielectric constant -eps-", "electrons", "gas phase energy =",
               "open shells", "solvname_long:", "Symmetry analysis of basis", " Group order", "\n Group order",
               "Molecular Orbital Analysis", "Final MO vectors", "NWChem TDDFT Module", "NWChem QMD Module",
               "-cosmo- solvent"),
    "psi4": (" Exchange-Correlation", " Final Energy", "(\t", "( ", '("', "('", "Loading displacement",
             "Nuclear repulsion =", "Total Energy =", "Using finite-differences of gradients"),
    "gamess": ("ENERGY IS", "NUCLEAR COORDINATES", "NUCLEAR REPULSION ENERGY IS", "RUNTYP=", "TOTAL ENERGY =",
               "END OF NUMERICAL HESSIAN CALCULATION"),
    "xtb": (":: total energy", "GEOMETRY OPTIMIZATION", "GEOMETRY OPTIMIZATION CONVERGED",
            "TOTAL ENTHALPY", "TOTAL FREE ENERGY", "program call", "zero point energy", "| TOTAL ENERGY",
            *XTB_READ),
    "orca": ("Electronic energy", "FINAL SINGLE POINT ENERGY", "Final Gibbs free energy",
             "GEOMETRY OPTIMIZATION CYCLE", "Multiplicity", "NORMAL MODES", "Nuclear Repulsion", "Program Version",
             "Temperature", "The first frequency", "Total Charge", "Total Enthalpy", "VIBRATIONAL FREQUENCIES",
             "IR SPECTRUM",
             "Your calculation utilizes the basis:", "Zero point energy", "CPCM SOLVATION MODEL",
             "SMD-CDS", "SMD CDS"),
    "qchem": ("Convergence criterion met", "Final energy is", "Nuclear Repulsion Energy =", "job_type", "jobtype"),
}


def mark_literals() -> tuple[str, ...]:
    """Every program's run banners and end phrases (a log of one program is searched for all of them)."""
    return tuple(dict.fromkeys(literal for rule in RULES.values()
                               for literal in (*rule.run_banners, *rule.end_literals)))


@functools.cache
def vocabulary(program: str) -> tuple[str, ...]:
    """The phrases indexed for a log of ``program``, each once, in a fixed order (none of ``NOT_INDEXED``)."""
    rule = rules(program)
    phrases = (*mark_literals(), *literals_checked(program), *rule.keyword_literals, *rule.converged_literals,
               *PHRASES.get(program, ()))
    return tuple(phrase for phrase in dict.fromkeys(phrases) if phrase not in NOT_INDEXED)


@functools.cache
def available() -> bool:
    """Whether the hyperscan package imports here."""
    try:
        import hyperscan  # noqa: F401
    except ImportError:
        return False
    return True


#: compiled databases, per thread (a Hyperscan database's scratch space serves one scan at a time)
_DATABASES = threading.local()


def _database(program: str):
    databases = _DATABASES.__dict__.setdefault("by_program", {})
    if program not in databases:
        import hyperscan

        words = vocabulary(program)
        database = hyperscan.Database()
        database.compile(expressions=[word.encode("ascii") for word in words], ids=list(range(len(words))),
                         elements=len(words), flags=0, literal=True)
        databases[program] = database
    return databases[program]


def scan(program: str, data) -> dict[str, list[int]] | None:
    """Where every phrase of :func:`vocabulary` occurs in ``data`` (bytes or a mapping of the text's bytes):
    phrase -> the offsets of all its occurrences, overlapping ones included, in order. None without hyperscan."""
    if not available():
        return None
    words = vocabulary(program)
    ends: list[list[int]] = [[] for _ in words]

    def found(number: int, _start: int, end: int, _flags: int, _context) -> None:
        ends[number].append(end)

    _database(program).scan(data, match_event_handler=found)
    return {word: [end - len(word) for end in at] for word, at in zip(words, ends, strict=True)}

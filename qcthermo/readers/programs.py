"""What each program prints about its own run: job keywords, end marker, convergence, solvent, <S^2>.

These are read from the text with plain regular expressions (no parser), for every program, so that
job types and termination mean the same whatever cclib makes of the file.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from .text import last_line_match, lines_with

_F = r"(-?\d+\.\d+)"


@dataclass(frozen=True)
class ProgramRules:
    """Markers of one program family.

    Attributes:
        keywords: regex whose group 1 over all matches is the job specification (route, "!" lines,
            task lines, command line, ...).
        keyword_literals: one of these is on every line a ``keywords`` match lies on, so only those
            lines are searched (a plain string search is ~20x faster than the regex over a long log);
            empty: the whole text (a pattern that spans lines).
        jobs: job type -> regex searched in that job specification.
        end_marker: printed once at the end of a run that finished normally.
        converged: printed when a geometry optimisation converged.
        converged_literals: one of these is on the line of every ``converged`` match (as for keywords).
        projected: the program prints the rigid-body modes as projected zeros among 3N frequencies.
        thermo_ev: cclib 1.8.1 gives this program's zpve/enthalpy/freeenergy in eV, not hartree.
        thermo_corrections: cclib's enthalpy/freeenergy are thermal corrections, not totals.
        run_banners: phrases printed once per run of the program, at its start (two in one file: two
            logs pasted together; one of another program's: logs of two programs); empty when none is known.
        end_literals: phrases of ``end_marker`` found by a plain string search (one of another program's
            in a log, or one of its own far from the end of its run: logs spliced together).
        step_literal: what follows an ``end_literals`` phrase where one step of a multi-step job ends and the next
            begins in the same run (Gaussian's "Link1:").
    """

    keywords: str | None = None
    keyword_literals: tuple[str, ...] = ()
    jobs: tuple[tuple[str, str], ...] = ()
    end_marker: str | None = None
    converged: str | None = None
    converged_literals: tuple[str, ...] = ()
    projected: bool = False
    thermo_ev: bool = False
    thermo_corrections: bool = False
    run_banners: tuple[str, ...] = ()
    end_literals: tuple[str, ...] = ()
    step_literal: str | None = None


RULES: dict[str, ProgramRules] = {
    "gaussian": ProgramRules(
        # the route between two dashed lines ("\n" rather than "^": a literal start the regex engine can seek)
        keywords=r"\n -{4,}\n (#.*?)\n -{4,}$",
        jobs=(
            ("saddle-search", r"\bopt\w*\s*=?\s*\([^ ]*\b(ts|qst2|qst3|saddle)\b|\bopt\s*=\s*(ts|qst2|qst3)\b"),
            ("optimization", r"\bopt\b|\bopt\s*="),
            ("frequencies", r"\bfreq"),
            ("irc", r"\birc\b"),
            ("scan", r"\bscan\b"),
        ),
        end_marker=r"Normal termination of Gaussian",
        converged=r"Optimization completed|Stationary point found",
        converged_literals=("Optimization completed", "Stationary point found"),
        run_banners=("Entering Gaussian System",),
        end_literals=("Normal termination of Gaussian",),
        step_literal="Link1:",
    ),
    "orca": ProgramRules(
        keywords=r"^\|\s*\d+>\s*(!.*)$|^\s*\*\s*(GEOMETRY OPTIMIZATION CYCLE)",
        keyword_literals=(">", "GEOMETRY OPTIMIZATION CYCLE"),
        jobs=(
            ("saddle-search", r"\boptts\b|\bscants\b"),
            ("optimization", r"\b(opt|copt|zopt|gdiis-opt|tightopt|verytightopt|looseopt|optts)\b|optimization cycle"),
            ("frequencies", r"\b(freq|numfreq|anfreq)\b"),
            ("irc", r"\birc\b"),
        ),
        end_marker=r"ORCA TERMINATED NORMALLY",
        converged=r"THE OPTIMIZATION HAS CONVERGED|OPTIMIZATION RUN DONE",
        converged_literals=("THE OPTIMIZATION HAS CONVERGED", "OPTIMIZATION RUN DONE"),
        projected=True,
        run_banners=("O   R   C   A",),
        end_literals=("ORCA TERMINATED NORMALLY",),
    ),
    "nwchem": ProgramRules(
        # NWChem echoes its input only on request: the modules it ran are the reliable record
        keywords=r"^\s*(NWChem Geometry Optimization|NWChem Nuclear Hessian and Frequency Analysis"
        r"|Vibrational analysis via the FX method|saddle point option\s+\(modsad\)\s+=\s+1"
        r"|NWChem Minimum Energy Path)",
        # "NWChem " finds the three module headers in one pass over the text (each literal is a pass; the few
        # hundred other module headers of a long log it also finds cost far less)
        keyword_literals=("NWChem ", "Vibrational analysis via the FX method", "(modsad)"),
        jobs=(
            ("saddle-search", r"modsad"),
            ("optimization", r"geometry optimization"),
            ("frequencies", r"frequency analysis|fx method"),
            ("irc", r"minimum energy path"),
        ),
        end_marker=r"^\s*Total times\s+cpu:",
        converged=r"Optimization converged",
        converged_literals=("Optimization converged",),
        projected=True,
        run_banners=("Northwest Computational Chemistry Package",),
        end_literals=("Total times  cpu:",),
    ),
    "xtb": ProgramRules(
        keywords=r"program call\s*:\s*(.*)$",
        keyword_literals=("program call",),
        jobs=(
            ("optimization", r"--(opt|ohess|bhess)\b"),
            ("frequencies", r"--(hess|ohess|bhess)\b"),
            ("irc", r"--path\b"),
        ),
        end_marker=r"\* finished run on",
        converged=r"GEOMETRY OPTIMIZATION CONVERGED",
        converged_literals=("GEOMETRY OPTIMIZATION CONVERGED",),
        projected=True,
        thermo_ev=True,
        run_banners=("xtb version",),
        end_literals=("* finished run on",),
    ),
    "qchem": ProgramRules(
        keywords=r"^\s*job_?type\s*=?\s*(\w+)",
        keyword_literals=("jobtype", "job_type"),
        jobs=(
            ("saddle-search", r"^ts$"),
            ("optimization", r"^(opt|optimization|ts)$"),
            ("frequencies", r"^(freq|frequency|frequencies)$"),
            ("irc", r"^(rpath|irc)$"),
            ("scan", r"^pes_scan$"),
        ),
        end_marker=r"Thank you very much for using Q-Chem",
        converged=r"\*\*\s+OPTIMIZATION CONVERGED\s+\*\*|TRANSITION STATE CONVERGED",
        converged_literals=("OPTIMIZATION CONVERGED", "TRANSITION STATE CONVERGED"),
        thermo_corrections=True,
        run_banners=("Welcome to Q-Chem",),
        end_literals=("Thank you very much for using Q-Chem",),
    ),
    "psi4": ProgramRules(
        keywords=r"^\s*(\w+)\(\s*['\"]",
        # a call's "(" then a quote or white space: every line with "(" (a thousand in a small log, tens of
        # thousands in a long one) made the search a Python loop over most of the text
        keyword_literals=("('", '("', "( ", "(\t"),
        jobs=(
            ("optimization", r"^(optimize|opt)$"),
            ("frequencies", r"^(frequency|frequencies|freq|hessian)$"),
        ),
        end_marker=r"Psi4 exiting successfully",
        converged=r"Optimization is complete!",
        converged_literals=("Optimization is complete!",),
        run_banners=("Psi4: An Open-Source Ab Initio Electronic Structure Package",),
        end_literals=("Psi4 exiting successfully",),
    ),
    "gamess": ProgramRules(
        keywords=r"RUNTYP=(\w+)",
        keyword_literals=("RUNTYP=",),
        jobs=(
            ("saddle-search", r"^sadpoint$"),
            ("optimization", r"^(optimize|sadpoint)$"),
            ("frequencies", r"^hessian$"),
            ("irc", r"^irc$"),
        ),
        end_marker=r"TERMINATED NORMALLY",
        converged=r"EQUILIBRIUM GEOMETRY LOCATED|SADDLE POINT LOCATED",
        converged_literals=("EQUILIBRIUM GEOMETRY LOCATED", "SADDLE POINT LOCATED"),
        # not "GAMESS VERSION": Firefly's header prints it twice ("BASED ON US GAMESS VERSION 6 JUN 1999,
        # US GAMESS VERSIONS 6 SEP 2001"), which read as two runs (Firefly 8.0.1's dvb_sp.out, cclib's data)
        run_banners=("EXECUTION OF GAMESS BEGUN", "EXECUTION OF FIREFLY BEGUN", "EXECUTION OF PC GAMESS BEGUN"),
        end_literals=("EXECUTION OF GAMESS TERMINATED", "EXECUTION OF FIREFLY TERMINATED",
                      "EXECUTION OF PC GAMESS TERMINATED"),
    ),
    "molcas": ProgramRules(
        # (Open)Molcas ends every module with "--- Stop Module: <name> at <date> /rc=<code> ---": the run ended
        # normally when the last module stopped with _RC_ALL_IS_WELL_ and no module started after it
        # (OpenMolcas 18.0's water_mbpt2.out, cclib's data; cclib 1.8.1 never sets its success flag)
        # (each line consumed whole, once: no backtracking over the lines that follow)
        end_marker=r"^--- Stop Module:[^\n]*/rc=_RC_ALL_IS_WELL_ ---\n(?:(?!--- St(?:art|op) Module)[^\n]*\n)*"
                   r"(?!--- St(?:art|op) Module)[^\n]*\Z",
    ),
}

DEFAULT_RULES = ProgramRules()

_S2 = re.compile(
    rf"<S\*\*2>\s*=\s*{_F}|Expectation value of <S\*\*2>\s*:\s*{_F}|<S\^2>\s*=\s*{_F}|<S2>\s*=\s*{_F}",
)


def rules(program: str) -> ProgramRules:
    return RULES.get(program, DEFAULT_RULES)


def job_spec(program: str, text: str) -> str | None:
    """The program's own job specification (route, keywords, modules), lower-case; None if not found."""
    program_rules = rules(program)
    pattern = program_rules.keywords
    if pattern is None:
        return None
    if program_rules.keyword_literals:
        text = lines_with(text, *program_rules.keyword_literals)
    found = re.findall(pattern, text, flags=re.MULTILINE | re.DOTALL if program == "gaussian" else re.MULTILINE)
    found = [" ".join(g for g in m if g) if isinstance(m, tuple) else m for m in found]
    if not found:
        return None
    if program == "gaussian":  # continuation lines of the route
        found = [" ".join(line.strip() for line in route.splitlines()) for route in found]
    return "\n".join(found).lower()


def job_types_from_spec(program: str, spec: str | None) -> set[str]:
    """Job types named in the job specification (empty when it cannot be told)."""
    if not spec:
        return set()
    return {job for job, rx in rules(program).jobs if re.search(rx, spec, flags=re.MULTILINE)}


def terminated_normally(program: str, text: str) -> bool | None:
    """True when the program's end marker is in the last part of the file, False if not; None without one."""
    marker = rules(program).end_marker
    if marker is None:
        return None
    return re.search(marker, text[-20000:], flags=re.MULTILINE) is not None


def optimisation_converged(program: str, text: str) -> bool | None:
    """Whether the program's convergence message is printed, searched from the end (where it is)."""
    program_rules = rules(program)
    if program_rules.converged is None:
        return None
    regex = re.compile(program_rules.converged)
    return any(last_line_match(text, literal, regex) for literal in program_rules.converged_literals)


def last_s2(text: str) -> float | None:
    """The last <S^2> expectation value printed, whichever program's format."""
    value = None
    for m in _S2.finditer(lines_with(text, "<S")):  # every format starts with "<S"
        value = float(next(g for g in m.groups() if g is not None))
    return value


#: GAMESS-UK echoes its input as " >>>>> KEYWORD value" lines; the method is "DFT <functional>", else an
#: "SCFTYPE" of a Hartree-Fock reference (GAMESS-UK 8.0's dvb_sp_ks.out and water_mp3.in, cclib's data:
#: ">>>>> SCFTYPE RHF", ">>>>> DFT B3LYP"); correlated methods come from cclib's MP energies
_GAMESS_UK_DFT = re.compile(r"^ >>>>> DFT\s+(\S+)", re.MULTILINE | re.IGNORECASE)
_GAMESS_UK_SCF = re.compile(r"^ >>>>> SCFTYPE\s+(RHF|UHF|ROHF)\b", re.MULTILINE | re.IGNORECASE)


def gamess_uk_method(text: str) -> str | None:
    """The method GAMESS-UK's echoed input names (the functional, or "HF"), which cclib 1.8.1 leaves out."""
    echo = lines_with(text, ">>>>>")
    if found := _GAMESS_UK_DFT.search(echo):
        return found.group(1)
    return "HF" if _GAMESS_UK_SCF.search(echo) else None

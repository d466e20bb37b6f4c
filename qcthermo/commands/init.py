"""``qcthermo init DIR [-o FILE] [--force]``: a starter reaction file listing the species found.

Frequency logs are grouped by formula, charge and multiplicity into candidate conformer ensembles
(transition states, from saddle-search jobs or frequency jobs with one large imaginary mode, apart
from minima); single points are listed with the
group whose geometry they match. Everything the program cannot know (the reactions) is a commented
example. The file parses back with :func:`qcthermo.reactions.load_reaction_file`.
"""

from __future__ import annotations

import argparse
import glob
import json
import re
from collections import defaultdict
from itertools import takewhile
from pathlib import Path

from ..errors import QcthermoError
from ..records import Calculation


def _group_key(calc: Calculation) -> tuple:
    """Structures that may be conformers of one species: same formula, charge, multiplicity, kind
    (minimum or saddle point), program, level of theory, solvent model and bonds (isomers apart).
    Programs apart: one level name may hide two definitions (ORCA's B3LYP is not Gaussian's)."""
    from ..ensemble import bond_signature
    from ..records import Conditions
    from ..survey import is_transition_state

    saddle = is_transition_state(calc, Conditions().imaginary_threshold)  # as thermo takes it, default threshold
    return (calc.formula, calc.charge, calc.multiplicity, saddle, calc.program,
            calc.level_of_theory, calc.solvent_model, bond_signature(calc))


def _relative(path: Path, base: Path) -> str:
    """``path`` relative to ``base`` when inside it, else absolute (POSIX separators)."""
    path, base = path.resolve(), base.resolve()
    return (path.relative_to(base) if path.is_relative_to(base) else path).as_posix()


def _species_name(paths: list[str], formula: str, taken: set[str]) -> str:
    """A TOML-safe name: the files' common stem prefix, else the formula; made unique."""
    tokens = [re.split(r"[_\-. ]+", Path(p).stem) for p in paths]
    shared = takewhile(lambda words: len(set(words)) == 1, zip(*tokens, strict=False))  # leading words of all
    prefix = "_".join(words[0] for words in shared)
    base = re.sub(r"[^A-Za-z0-9_]+", "_", prefix or formula.lower()).strip("_") or "species"
    if base[0].isdigit():
        base = "s_" + base
    name, k = base, 2
    while name in taken:
        name, k = f"{base}_{k}", k + 1
    taken.add(name)
    return name


def _glob_literal(path: str) -> str:
    """A glob that matches ``path``: glob characters escaped ("b[1].out" is a pattern for "b1.out"), and each
    file-name byte that is not UTF-8 (a lone surrogate, which TOML cannot hold) written as ``?``."""
    return "".join("?" if 0xDC80 <= ord(c) <= 0xDCFF else c for c in glob.escape(path))


def _toml_list(items: list[str]) -> str:
    return "[" + ", ".join(json.dumps(_glob_literal(i)) for i in items) + "]"


def _single_point_lines(members: list[tuple[str, Calculation]], single_points: list[tuple[str, Calculation]]
                        ) -> list[str]:
    """``single_point`` (and ``gas_single_point``) lines for a group, with the protocol chosen as a comment.

    Single points are sets of one level and one solvent; a set is a candidate when every member has one on its
    own geometry (:data:`qcthermo.ensemble.SINGLE_POINT_RMSD`, same formula, charge and multiplicity). On
    gas-phase structures a solvent set wins (the solution protocol), with the gas-phase set of its level as
    the thermodynamic cycle when there is one; else the first gas-phase set. The others are listed."""
    from ..ensemble import pair_single_point
    from ..solution import single_point_level, solvent_label

    sets: dict[tuple, list[tuple[str, Calculation]]] = defaultdict(list)
    for path, sp in single_points:
        sets[(solvent_label(sp) or "", sp.level_of_theory or "?")].append((path, sp))
    complete: dict[tuple, list[str]] = {}
    for key, sps in sorted(sets.items()):
        matched = [pair_single_point(c, [sp for _, sp in sps])[0] for _, c in members]
        if all(i is not None for i in matched):
            complete[key] = sorted({sps[i][0] for i in matched})
    if not complete:
        return []
    structure = members[0][1]
    solvent = [k for k in complete if k[0] and not structure.solvent_model]
    chosen = solvent[0] if solvent else next(iter(complete))
    sp = next(c for p, c in sets[chosen] if p in complete[chosen])
    low = structure.level_of_theory or "?"
    lines = [f"# protocol: {single_point_level(sp, structure)}//{low}"]
    gas = ("", chosen[1]) if solvent and ("", chosen[1]) in complete else None
    if gas:
        lines[0] += " by the thermodynamic cycle (gas-phase single points at the same level give dG_solv)"
    elif solvent:
        lines[0] += " (solvent single points on the gas-phase structures)"
    lines.append(f"single_point = {_toml_list(complete[chosen])}   # paired by geometry")
    if gas:
        lines.append(f"gas_single_point = {_toml_list(complete[gas])}")
    others = [k for k in complete if k not in (chosen, gas)]
    lines += [f"# also on these geometries: {(k[0] + '-') if k[0] else ''}{k[1]}: {', '.join(complete[k])}"
              for k in others]
    return lines


def starter_text(survey_result, base: Path) -> str:
    """The reaction file for the calculations of ``survey_result``, paths relative to ``base``."""
    from ..ensemble import SINGLE_POINT_RMSD, pair_single_point

    groups: dict[tuple, list[tuple[str, Calculation]]] = defaultdict(list)
    single_points: list[tuple[str, Calculation]] = []
    skipped: list[str] = []
    root = Path(survey_result.directory)
    calcs = sorted(survey_result.calculations.items())
    # an atom needs no frequency job, so an atom's single point is a species unless it is at the level of the
    # tree's molecular single points (then it is the atom's high-level energy)
    sp_levels = {c.level_of_theory for _, c in calcs if c.frequencies is None and c.natoms > 1
                 and "single-point" in c.job_types}
    for rel, calc in calcs:
        path = _relative(root / rel, base)
        if calc.frequencies is not None or (calc.natoms == 1 and calc.level_of_theory not in sp_levels):
            groups[_group_key(calc)].append((path, calc))
        elif "single-point" in calc.job_types and calc.energy is not None:
            single_points.append((path, calc))
        else:
            skipped.append(path)
    # 1M is the usual state of solution chemistry; logs without a solvent model are gas-phase work
    solvated = any(c.solvent_model for _, c in calcs)
    state, why = ("1M", "some logs have a solvent model") if solvated else ("1atm", "no log has a solvent model")
    lines = [
        "# Starter reaction file written by `qcthermo init`: check every species before use.",
        "# Schema: docs/reactions.md. Paths are relative to this file; globs are allowed.",
        "",
        "[conditions]            # defaults for every reaction; command-line options override them",
        "temperature = 298.15    # K",
        f'standard_state = "{state}"{" " * (5 - len(state))}# "1atm" | "1bar" | "1M" ({why})',
        'low_mode_model = "qrrho"',
        "",
    ]
    taken: set[str] = set()
    names = []
    for (formula, charge, mult, saddle, _, level, solvent, _), members in groups.items():
        name = _species_name([p for p, _ in members], formula, taken)
        names.append((name, saddle))
        how = "saddle-search job" if all("saddle-search" in c.job_types for _, c in members) else "one imaginary mode"
        what = f"transition state ({how})" if saddle else (
            f"{len(members)} structures: a conformer ensemble?" if len(members) > 1 else "one structure")
        lines += [f"[species.{name}]   # {formula}, charge {charge}, multiplicity {mult}, {level or '?'}"
                  f"{', ' + solvent if solvent else ''}: {what}",
                  f"logs = {_toml_list([p for p, _ in members])}"]
        if saddle:
            lines.append("transition_state = true")
        lines += [*_single_point_lines(members, single_points), ""]
    unmatched = [(p, min((pair_single_point(c, [s], 0.0)[1] for m in groups.values() for _, c in m),
                         default=float("inf"))) for p, s in single_points
                 if not any(pair_single_point(c, [s])[0] is not None for m in groups.values() for _, c in m)]
    if unmatched:
        lines += ["# single points that match no frequency geometry within "
                  f"{SINGLE_POINT_RMSD:g} A (not used; a single point must be on its structure's own geometry):"]
        lines += [f"#   {p}" + (f"   (single point on another geometry: RMSD {rmsd:.4f} A)" if rmsd < 0.5 else "")
                  for p, rmsd in unmatched] + [""]
    if skipped:
        lines += ["# files without frequencies that are not single points (not usable as species):"]
        lines += [f"#   {p}" for p in skipped] + [""]
    minima = [n for n, saddle in names if not saddle]
    ts = next((n for n, saddle in names if saddle), "TS_NAME")
    a = minima[0] if minima else "REACTANT"
    b = minima[1] if len(minima) > 1 else "PRODUCT"
    lines += [
        "# An example reaction (edit the names; \"2 water\" for stoichiometry):",
        "# [[reaction]]",
        '# name = "step1"',
        f"# reactants = [{json.dumps(a)}]",
        f"# transition_state = {json.dumps(ts)}",
        f"# products = [{json.dumps(b)}]",
        "",
        "# An example profile (states in order, each a list of species):",
        "# [[profile]]",
        '# name = "path"',
        f"# states = [[{json.dumps(a)}], [{json.dumps(ts)}], [{json.dumps(b)}]]",
        "",
    ]
    return "\n".join(lines)


def main(args: argparse.Namespace) -> int:
    from ..fileio import atomic_write, check_output_file, display
    from ..survey import survey
    from .common import reading_options
    from .survey import print_errors

    directory = Path(args.directory)
    output = Path(args.output) if args.output else directory / "reactions.toml"
    check_output_file(output, args.force)
    result = survey(directory, **reading_options(args))
    if not result.calculations:
        raise QcthermoError(f"no readable log under {directory}")
    atomic_write(output, starter_text(result, output.parent))
    n_err = len(result.errors)
    print(f"wrote {display(str(output))} ({len(result.calculations)} files read"
          + (f", {n_err} unreadable: see `qcthermo survey {display(str(directory))}`" if n_err else "") + ")")
    print_errors("init", result.errors)
    return 1 if n_err else 0

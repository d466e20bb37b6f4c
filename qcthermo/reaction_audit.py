"""The audit across a reaction, a profile, a pKa or a potential: which of them the run can trust.

A reaction is excluded (its row stays, with the reason) when a species has no usable structure, its sides
differ in atoms or charge, or its energies mix levels of theory or solvent models; mixed programs and mixed
solvent routes are warnings (docs/reactions.md, "Audit across a reaction"). :func:`audit_reactions` and
:func:`audit_profiles` give the energetics (qcthermo.reactions) of what passes; the tables are built from
them by qcthermo.export.run_tables.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import Any

import numpy as np

from .reactions import ProfileSpec, ReactionFile, ReactionSpec, Term, balance_problem, reaction_energetics, state_values
from .records import Calculation
from .solution import mixed_routes
from .species import Finding, SpeciesResult


def reaction_names(reaction: ReactionSpec) -> list[str]:
    """The species of a reaction: reactants, products, then its transition state."""
    names = [n for _, n in reaction.reactants + reaction.products]
    return names + ([reaction.transition_state] if reaction.transition_state else [])


def _reaction_calcs(names: list[str], species: dict[str, SpeciesResult]) -> list[tuple[str, Calculation]]:
    """(species, calculation) of every used file whose energy enters (single point if composite)."""
    out = []
    for n in names:
        for c in species[n].used:
            out.append((n, c.single_point or c.calculation))
    return out


def audit_reaction(names: list[str], species: dict[str, SpeciesResult], subject: str,
                   sides: dict[str, list[Term]] | None = None) -> list[Finding]:
    """The audit across one reaction or profile: unusable species, balance, mixed levels, solvent models, programs.

    Errors (the reaction is excluded): a species with no usable structure, a side (``sides``, e.g.
    :func:`reaction_sides`) whose atoms or charge differ from the first side's, energies or frequencies
    at different levels of theory, different implicit solvent models (or solvent and gas phase).
    Warning: different programs at the same level (grids and defaults differ); solvent single points with and
    without gas-phase ones (two routes, :func:`qcthermo.solution.mixed_routes`).
    """
    found = []
    for n in names:
        if not species[n].usable:
            reasons = [f.message for f in species[n].findings if f.severity == "error"]
            found.append(Finding("error", subject, f"species {n!r} has no usable structure"
                                 + (f" ({reasons[0]})" if reasons else "")))
    if found:
        return found
    found += _balance_findings(sides or {}, species, subject)
    levels = {n: species[n].levels[0] for n in names}
    if len(set(levels.values())) > 1:
        found.append(Finding("error", subject, "mixed levels of theory: "
                             + ", ".join(f"{n} {lv}" for n, lv in levels.items())))
    calcs = _reaction_calcs(names, species)
    solvents = {(c.solvent_model or "gas") for _, c in calcs}
    freq_solvents = {(c.calculation.solvent_model or "gas") for n in names for c in species[n].used}
    if len(solvents) > 1 or len(freq_solvents) > 1:
        found.append(Finding("error", subject, "mixed solvent models: " + ", ".join(
            sorted({f"{n} {c.solvent_model or 'gas'}" for n, c in calcs}))))
    programs = {c.program for _, c in calcs}
    if len(programs) > 1:
        found.append(Finding("warning", subject, f"energies from different programs ({', '.join(sorted(programs))})"))
    return found + mixed_routes(names, species, subject)


def reaction_sides(reaction: ReactionSpec) -> dict[str, list[Term]]:
    """The sides of a reaction that must hold the same atoms and charge: reactants, transition state, products."""
    ts = {f"transition state {reaction.transition_state!r}": [(1.0, reaction.transition_state)]} \
        if reaction.transition_state else {}
    return {"reactants": reaction.reactants, **ts, "products": reaction.products}


def _balance_findings(sides: dict[str, list[Term]], species: dict[str, SpeciesResult], subject: str) -> list[Finding]:
    """Every side against the first, in atoms and charge, counted on the structures whose energies enter.

    reactions.check_balance refuses a reaction file whose species' first files do not balance; this is the
    same rule on what the reaction uses (a structure, or its single point), however the species were built.
    """
    if not sides:
        return []
    names = list(dict.fromkeys(n for terms in sides.values() for _, n in terms))
    structures: dict[str, set[tuple]] = {}
    for n, c in _reaction_calcs(names, species):
        structures.setdefault(n, set()).add((tuple(sorted(Counter(c.symbols).items())), c.charge))
    mixed = [Finding("error", subject, f"species {n!r}: its energies come from structures of different formulas "
                                       "or charges") for n, found in structures.items() if len(found) > 1]
    if mixed:
        return mixed
    one = {n: next(iter(found)) for n, found in structures.items()}
    formulas, charges = {n: Counter(dict(f)) for n, (f, _) in one.items()}, {n: q for n, (_, q) in one.items()}
    (first, reference), *others = sides.items()
    return [Finding("error", subject, f"{label} against the {first}: {problem}") for label, terms in others
            if (problem := balance_problem(reference, terms, formulas, charges))]


def _species_notes(names: list[str], species: dict[str, SpeciesResult]) -> list[str]:
    notes = []
    for n in dict.fromkeys(names):
        notes += [f.message if f.message.startswith("species") else f"{n}: {f.message}"
                  for f in species[n].findings if f.severity == "warning"]
    return notes


def species_values(species: dict[str, SpeciesResult]) -> dict[str, dict[str, np.ndarray]]:
    """The ensemble values of the usable species (they hold every key of reactions.QUANTITIES)."""
    return {n: s.values for n, s in species.items() if s.usable}


@dataclass
class ReactionOutcome:
    """What the audit made of one [[reaction]].

    Attributes:
        reaction: the reaction file's entry.
        findings: the audit's findings about it (errors exclude it).
        energetics: :func:`qcthermo.reactions.reaction_energetics` (hartree, arrays over T), None when excluded.
        level: the level of theory of its energies, None when excluded.
        notes: the audit's warnings and those of its species.
    """

    reaction: ReactionSpec
    findings: list[Finding]
    energetics: dict[str, Any] | None
    level: str | None
    notes: list[str]

    @property
    def errors(self) -> list[str]:
        return [f.message for f in self.findings if f.severity == "error"]


def audit_reactions(rf: ReactionFile | None, species: dict[str, SpeciesResult]) -> list[ReactionOutcome]:
    """Every [[reaction]] of the file audited, with the energetics of those the audit includes."""
    out = []
    for r in rf.reactions if rf else []:
        names = reaction_names(r)
        problems = audit_reaction(names, species, r.name, reaction_sides(r))
        excluded = any(p.severity == "error" for p in problems)
        notes = [p.message for p in problems if p.severity == "warning"] + _species_notes(names, species)
        out.append(ReactionOutcome(
            r, problems, None if excluded else reaction_energetics(r, species_values(species)),
            species[names[0]].levels[0] if not excluded and species[names[0]].levels else None, notes))
    return out


def audit_profiles(rf: ReactionFile | None, species: dict[str, SpeciesResult]) -> tuple[list[dict], list[Finding]]:
    """Every [[profile]] audited (each state a side that must balance with the first): the records of those
    included (:attr:`qcthermo.workflow.RunResults.profiles`) and the audit's findings."""
    out, findings = [], []
    for p in rf.profiles if rf else []:
        names = [n for s in p.states for _, n in s]
        problems = audit_reaction(list(dict.fromkeys(names)), species, f"profile {p.name}",
                                  {f"state {i} ({label})": state for i, (label, state) in
                                   enumerate(zip(p.labels, p.states, strict=True), start=1)})
        findings.extend(problems)
        if any(f.severity == "error" for f in problems):
            continue
        out.append(_profile_record(p, species))
    return out, findings


def _profile_record(p: ProfileSpec, species: dict[str, SpeciesResult]) -> dict[str, Any]:
    relative = state_values(p.states, species_values(species))
    states = [
        {"label": label, "value_Eh": {"G": v["G"], "G_rrho": v["G_rrho"], "H": v["H"], "E_zpe": v["E_zpe"],
                                      "E": v["E"]},
         "is_ts": any(species[n].options.transition_state for _, n in terms),
         "species": [n for _, n in terms],
         "terms": [{"coefficient": c, "label": species[n].label, "is_ts": bool(species[n].options.transition_state)}
                   for c, n in terms]}
        for label, terms, v in zip(p.labels, p.states, relative, strict=True)
    ]
    return {"name": p.name, "states": states, "cyclic": p.cyclic, **p.presentation}

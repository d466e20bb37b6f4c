"""The run's tables as DataFrames (species.csv, reactions.csv) and what their captions and notes say.

Formatting only: the values come from the built species (qcthermo.species) and the reaction audit
(qcthermo.reaction_audit); qcthermo.export.run_outputs writes them (docs/reactions.md, "Outputs").
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ..reaction_audit import ReactionOutcome, reaction_names
from ..reactions import ENSEMBLE_DEFAULTS
from ..records import Conditions
from ..species import SpeciesResult, mirror_images
from ..thermo import rotor_records
from ..units import entropy_to_j_mol_k, hartree_to, unit_suffix

if TYPE_CHECKING:
    from ..workflow import RunResults

#: display names of the low-mode models, for captions
MODEL_NAMES = {"rrho": "RRHO", "qrrho": "quasi-RRHO (Grimme)", "qrrho-enthalpy": "quasi-RRHO for S and H",
               "quasi-harmonic": "quasi-harmonic (Truhlar)"}


def model_tag(model: str) -> str:
    """Column tag of a low-mode model: "qrrho-enthalpy" -> "qrrho_enthalpy"."""
    return model.replace("-", "_")


# -- species.csv and reactions.csv -------------------------------------------------------------------


def species_table(species: dict[str, SpeciesResult], conditions: Conditions, unit: str = "kcal/mol") -> Any:
    """species.csv as a long DataFrame (one row per species and temperature); a dG_solv column (``unit``) when
    some species took the thermodynamic-cycle route."""
    import pandas as pd

    t = np.atleast_1d(np.asarray(conditions.temperature, dtype=float))
    m = model_tag(conditions.low_mode_model)
    quantities = [("E_elec_Eh", "E"), ("ZPE_Eh", "ZPE"), ("H_Eh", "H_rrho"), ("S_Eh_K", "S_rrho"), ("G_Eh", "G_rrho")]
    if conditions.low_mode_model != "rrho":
        quantities += [(f"H_{m}_Eh", "H"), (f"S_{m}_Eh_K", "S"), (f"G_{m}_Eh", "G")]
    rows = []
    solvation = any(s.usable and s.solvation_energy() is not None for s in species.values())
    for s in species.values():
        low = s.lowest
        thermo = low.thermo if low is not None else None
        imag = thermo.imaginary_frequency if thermo is not None else None
        state = f"{s.options.concentration:g}M" if s.options.concentration else conditions.standard_state
        n_dup = sum(c.status == "duplicate" for c in s.conformers)
        for i, temp in enumerate(t):
            row = {"species": s.name, "T_K": float(temp), "formula": s.formula if s.conformers else None,
                   "charge": s.charge if s.conformers else None,
                   "multiplicity": s.multiplicity if s.conformers else None,
                   "conformers": len(s.used), "duplicates": n_dup,
                   "level": ", ".join(s.levels) or None}
            v = s.values
            row.update({col: float(v[key][i]) if v else np.nan for col, key in quantities})
            row.update({
                "point_group": thermo.point_group if thermo else None,
                "symmetry_number": thermo.symmetry_number if thermo else None,
                "imaginary_frequency_cm1": imag,
                "standard_state": state,
                "transition_state": s.options.transition_state,
                **({f"dG_solv_{unit_suffix(unit)}": _solvation(s, i, unit)} if solvation else {}),
                "populations": s.population_text(),
                "internal_rotors": _rotor_text(thermo, i),
                "status": "ok" if s.usable else "excluded",
                "notes": "; ".join([*_mirror_image_note(s), *(f.message for f in s.findings)]),
            })
            rows.append(row)
    return pd.DataFrame(rows)


def _solvation(s: SpeciesResult, i: int, unit: str) -> float:
    value = s.solvation_energy() if s.usable else None
    return np.nan if value is None else float(hartree_to(np.atleast_1d(value)[i], unit))


def _rotor_text(thermo, i: int) -> str | None:
    """The hindered rotors of the species table: "C1-C2: V0 1026 cm^-1, n 3, sigma 3, I_red 1.576 u A^2,
    S 8.32, Cp 6.31 J/(mol K) (frequency)" per rotor, at the i-th temperature; None when there are none."""
    if thermo is None or not thermo.rotors:
        return None
    return "; ".join(f"{r['label']}: V0 {r['V0']:.0f} cm^-1, n {r['n']}, sigma {r['sigma_int']}, I_red "
                     f"{r['I_red']:.3f} u A^2, S {entropy_to_j_mol_k(r['S'][i]):.2f}, Cp "
                     f"{entropy_to_j_mol_k(r['Cp'][i]):.2f} J/(mol K) ({_display(r['source'])})"
                     for r in rotor_records(thermo))


def _mirror_image_note(s: SpeciesResult) -> list[str]:
    """The species-table note of a species counted with its unseen mirror images (enantiomers = 2)."""
    lone = [c for c, n in zip(s.used, mirror_images(s, s.used), strict=True) if n > 1] if s.usable else []
    if not lone:
        return []
    return [f"enantiomers = 2: {', '.join(Path(c.path).name for c in lone)} counted with its mirror image "
            "(G - RT ln 2, S + R ln 2)"]


def energy_columns(out: dict[str, Any], model: str, unit: str, n_t: int) -> dict[str, np.ndarray]:
    """The energy columns of reactions.csv from :func:`qcthermo.reactions.reaction_energetics` output (Eh -> unit)."""
    u, m = unit_suffix(unit), model_tag(model)
    plan = [("dE", "dE"), ("dE_zpe", "dE_zpe"), ("dH", "dH_rrho"), ("dG", "dG_rrho")]
    if model in ("qrrho-enthalpy", "quasi-harmonic"):
        plan.append((f"dH_{m}", "dH"))
    if model != "rrho":
        plan.append((f"dG_{m}", "dG"))
    for direction in ("act", "act_rev"):
        plan += [(f"dE_zpe_{direction}", f"dE_zpe_{direction}"), (f"dH_{direction}", f"dH_rrho_{direction}"),
                 (f"dG_{direction}", f"dG_rrho_{direction}")]
        if model != "rrho":
            plan.append((f"dG_{m}_{direction}", f"dG_{direction}"))
    nan = np.full(n_t, np.nan)
    cols = {}
    for column, key in plan:
        value = out.get(key) if out else None
        cols[f"{column}_{u}"] = nan if value is None else hartree_to(np.asarray(value, dtype=float), unit)
    return cols


def reactions_table(outcomes: list[ReactionOutcome], conditions: Conditions, unit: str) -> Any:
    """reactions.csv as a long DataFrame: one row per audited reaction and temperature, energies in ``unit``."""
    import pandas as pd

    t = np.atleast_1d(np.asarray(conditions.temperature, dtype=float))
    rows = []
    for o in outcomes:
        r = o.reaction
        cols = energy_columns(o.energetics, conditions.low_mode_model, unit, len(t))
        for i, temp in enumerate(t):
            row = {"reaction": r.name, "T_K": float(temp), "equation": r.equation, "level": o.level}
            row.update({k: float(v[i]) for k, v in cols.items()})
            row["status"] = "excluded" if o.errors else "ok"
            row["notes"] = "; ".join(o.errors or o.notes)
            rows.append(row)
    return pd.DataFrame(rows)


# -- captions and notes ------------------------------------------------------------------------------


def _temperature_text(t: np.ndarray) -> str:
    return f"T = {t[0]:g} K" if len(t) == 1 else f"T = {t[0]:g}-{t[-1]:g} K ({len(t)} temperatures)"


def caption_context(results: RunResults, names: set[str] | None = None) -> str:
    """"T = 298.15 K, standard state 1M, low-mode model ..., frequency scale ..., level ..." for captions;
    the levels of theory are those of species ``names`` (default: all)."""
    c = results.conditions
    levels = sorted({lv for n, s in results.species_results.items() if names is None or n in names
                     for lv in s.levels})
    model = MODEL_NAMES[c.low_mode_model] + (f", threshold {c.low_mode_threshold:g} cm^-1"
                                             if c.low_mode_model != "rrho" else "")
    scale = c.frequency_scale if c.zpe_scale is None else f"{c.frequency_scale} (ZPE {c.zpe_scale})"
    tight = ENSEMBLE_DEFAULTS["single_point_rmsd"]
    loose = results.settings.get("ensemble", {}).get("single_point_rmsd", tight)
    loosened = f"; single points paired up to {loose:g} A from their structure (loosened from {tight:g} A)" \
        if loose > tight else ""
    rotors = "; torsions as 1-D hindered rotors" if c.internal_rotors == "hindered" else ""
    return (f"{_temperature_text(results.temperatures)}; standard state {c.standard_state}; low-mode model {model}; "
            f"frequency scale factor {scale}{rotors}; level of theory {', '.join(levels) or 'n/a'}{loosened}")


def solution_caption(results: RunResults, stem: str) -> str:
    """The literature constants of the pKa (``stem`` "pka") or potential table, by name (docs/solution.md)."""
    s = results.reaction_file.solution
    proton = f"proton solvation {s['proton_solvation']}"
    return proton if stem == "pka" else f"{proton}, absolute SHE {s['absolute_she']}, electron {s['electron']}"


def reaction_subjects(results: RunResults) -> tuple[set[str], set[str]]:
    """Species in some reaction or profile, and every subject (reaction, species, file) they stand for."""
    rf = results.reaction_file
    if rf is None:
        return set(), set()
    names = {n for r in rf.reactions for n in reaction_names(r)} | \
        {n for p in rf.profiles for s in p.states for _, n in s}
    subjects = {r.name for r in rf.reactions} | {f"profile {p.name}" for p in rf.profiles}
    return names, subjects | species_subjects(results, names)


def profile_subjects(results: RunResults, profiles: list[str] | None = None) -> set[str]:
    """Every subject of findings about the [[profile]] tables ``profiles`` (default: all): the profiles,
    their species and the files of those species."""
    chosen = [p for p in results.reaction_file.profiles if profiles is None or p.name in profiles]
    names = {n for p in chosen for s in p.states for _, n in s}
    return {f"profile {p.name}" for p in chosen} | species_subjects(results, names)


def species_subjects(results: RunResults, names: set[str]) -> set[str]:
    """The species ``names`` and every file they read (frequency logs, single points, as given and as read)."""
    rf = results.reaction_file
    subjects = set(names)
    for n in names:
        subjects |= {c.path for c in results.species_results[n].conformers}
        subjects |= {c.single_point.path for c in results.species_results[n].conformers if c.single_point}
        if rf is not None and n in rf.species:
            subjects |= {str(p) for p in (*rf.species[n].logs, *rf.species[n].single_point)}
    return subjects


def table_notes(results: RunResults, subjects: set[str] | None = None) -> list[str]:
    """Findings as table notes (those about ``subjects`` only, when given), errors first."""
    notes = [f"{f.severity}: {_display(f.subject)}: {f.message}" for f in results.findings
             if subjects is None or f.subject in subjects]
    own = [s.name for s in results.species_results.values() if s.options.concentration
           and (subjects is None or s.name in subjects)]
    if own:
        notes.insert(0, "at their own concentration (not the standard state): " + ", ".join(own))
    return notes


def _display(subject: str) -> str:
    return Path(subject).name if ("/" in subject or "\\" in subject) else subject


def formation_caption(results: RunResults) -> str:
    """The caption of heats_of_formation.csv/md/tex: units, temperatures, sources, the model of H(298) - H(0)."""
    from .nasa7 import fit_model

    model = fit_model(results.conditions.low_mode_model)[0]
    return ("Standard heats of formation of the gas-phase species, kJ/mol, at 0 K and 298.15 K (1 atm); routes: "
            "atomization (Curtiss et al., J. Chem. Phys. 1997, 106, 1063; atomic data NIST-JANAF), reference values "
            "and reference reactions as given; H(298.15) - H(0) from the ideal-gas model with low-mode model "
            f"{MODEL_NAMES[model]}; the NASA-7 column marks the value thermo.yaml and thermo.dat use.")


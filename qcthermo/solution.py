"""Solution chemistry: solvent single points on gas-phase structures, solvation free energies, pKa and
reduction potentials (docs/solution.md).

- *Solvent single point on a gas-phase structure*: G = E(SP, solvent) + [G - E](frequency job, gas), at the
  run's standard state; the level label names the solvent (:func:`single_point_level`).
- *Thermodynamic cycle*: with a gas-phase single point at the same level on the same geometry,
  dG_solv = E(SP, solvent) - E(SP, gas) (:func:`solvation_free_energy`) and
  G(solution, 1 M) = G(gas, 1 atm) + dG_solv + RT ln(24.46): the same number as the direct route at 1 M.
- *pKa*: HA -> A- + H+ (direct, with a literature proton) or HA + Ref- -> A- + HRef (relative).
- *Reduction potentials*: Ox + n e- + m H+ -> Red, E = -dG/(nF) - E_abs(reference), shifted by pH.

Every free energy of a pKa or potential is of a solute at 1 mol/L (:func:`to_one_molar`). Energies are
hartree per molecule (arrays over temperature) inside; kcal/mol and V only in the constants' tables.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from .records import Calculation, Conditions
from .units import FARADAY, HARTREE_J, K_B_EH, N_A, hartree_to, to_hartree, unit_suffix

if TYPE_CHECKING:
    from .reactions import ReactionFile
    from .species import Finding, SpeciesResult


@dataclass(frozen=True)
class Constant:
    """A literature value: its number, unit, the standard states it connects, and its source."""

    value: float
    unit: str
    states: str
    source: str


#: solvation free energy of the proton in water, kcal/mol, at 298.15 K; the two differ by their gas standard
#: state only (RT ln 24.46 = 1.89 kcal/mol): -264.0 + ... = -265.9 kcal/mol from 1 M gas
PROTON_SOLVATION: dict[str, Constant] = {
    "tissandier1998": Constant(-264.0, "kcal/mol", "gas 1 atm -> solution 1 M",
                               "Tissandier et al., J. Phys. Chem. A 1998, 102, 7787 (cluster-pair approximation)"),
    "kelly2006": Constant(-265.9, "kcal/mol", "gas 1 M -> solution 1 M",
                          "Kelly, Cramer & Truhlar, J. Phys. Chem. B 2006, 110, 16066"),
}
#: absolute potential of the standard hydrogen electrode in water, V
ABSOLUTE_SHE: dict[str, Constant] = {
    "kelly2006": Constant(4.28, "V", "SHE, water",
                          "Kelly, Cramer & Truhlar, J. Phys. Chem. B 2006, 110, 16066 (consistent with their "
                          "proton solvation free energy)"),
    "trasatti1986": Constant(4.44, "V", "SHE, water", "Trasatti, Pure Appl. Chem. 1986, 58, 955 (IUPAC)"),
}
#: free energy of the gas-phase electron at 298.15 K, kcal/mol
ELECTRON: dict[str, Constant] = {
    "element": Constant(0.0, "kcal/mol", "the electron as an element in its standard state",
                        "the electron convention of thermochemical tables (H = S = 0 at every T)"),
    "fermi-dirac": Constant(-0.867, "kcal/mol", "gas 1 atm, 298.15 K",
                            "Bartmess, J. Phys. Chem. 1994, 98, 6420, Fermi-Dirac statistics (value from memory)"),
}
#: the choices a reaction file's [solution] table makes unless it says otherwise
DEFAULTS = {"proton_solvation": "kelly2006", "absolute_she": "kelly2006", "electron": "element"}
#: temperature of the literature values, K
LITERATURE_T = 298.15


# -- solvent single points ------------------------------------------------------------------------------


def solvent_label(calc: Calculation) -> str | None:
    """"COSMO(water)" for a calculation in an implicit solvent (model and solvent as read), None in the gas phase."""
    if not calc.solvent_model:
        return None
    return calc.solvent_model.upper() + (f"({calc.solvent})" if calc.solvent else "")


def single_point_level(sp: Calculation, structure: Calculation) -> str:
    """The high level of a composite label: the single point's level, prefixed by its solvent when the structure
    was computed without it ("COSMO(water)-B3LYP/6-31+G*")."""
    level = sp.level_of_theory or "?"
    label = solvent_label(sp)
    return f"{label}-{level}" if label and not structure.solvent_model else level


def solvation_free_energy(e_solvent: float, e_gas: float) -> float:
    """dG_solv = E(SP, solvent) - E(SP, gas), hartree: the solvation free energy of an implicit-solvent model
    whose energy includes its non-electrostatic terms (common practice; Cramer & Truhlar, Chem. Rev. 1999, 99,
    2161, from memory), both on one geometry, from 1 M gas to 1 M solution (the continuum's own convention)."""
    return e_solvent - e_gas


# -- standard states and the particles -----------------------------------------------------------------


def to_one_molar(temperature, conditions: Conditions) -> np.ndarray:
    """G(1 M) - G(standard state of ``conditions``), hartree, over ``temperature``: kT ln(V(state)/V(1 M)), the
    translational free energy of an ideal solute (McQuarrie, Statistical Mechanics, 1976); +1.894 kcal/mol from
    1 atm at 298.15 K (common practice)."""
    from .thermo import standard_volume

    t = np.asarray(temperature, dtype=float)
    return K_B_EH * t * np.log(standard_volume(t, conditions.standard_state, conditions.pressure)
                               / standard_volume(t, "1M"))


def proton_gas_gibbs(temperature) -> np.ndarray:
    """G of the gas-phase proton at 1 atm, hartree, over ``temperature``: a structureless particle (g = 1, no
    rotation or vibration, energy 0), so G = 5/2 kT - T S_trans with the Sackur-Tetrode S; computed by the
    engine on a bare H+ of the proton's mass (-6.27 kcal/mol at 298.15 K; -6.28 is the usual value, from
    memory)."""
    from scipy import constants

    from .records import Molecule
    from .thermo import thermochemistry

    proton = Molecule(("H",), np.zeros((1, 3)), None, multiplicity=1, charge=1, energy=0.0,
                      masses=np.array([constants.physical_constants["proton mass in u"][0]]))
    t = np.asarray(temperature, dtype=float)
    res = thermochemistry(proton, Conditions(temperature=t, standard_state="1atm", low_mode_model="rrho"))
    return np.broadcast_to(np.asarray(res.gibbs, dtype=float), t.shape).copy()


def _named(table: dict[str, Constant], choice: str | float, unit: str) -> tuple[float, str]:
    """(value in ``unit``, description) of a named constant or of a number given by the user."""
    if isinstance(choice, str):
        c = table[choice]
        return c.value, f"{choice}: {c.value:g} {c.unit} ({c.states}; {c.source})"
    return float(choice), f"{float(choice):g} {unit} (given in the reaction file)"


def proton_solution_gibbs(temperature, choice: str | float = DEFAULTS["proton_solvation"]) -> np.ndarray:
    """G of the proton in water at 1 M, hartree: G(gas, 1 atm) + dG_solv, with dG_solv taken from its gas
    standard state (Tissandier: 1 atm; Kelly-Cramer-Truhlar and a number: 1 M, so RT ln 24.46 is added first).
    The literature values are at 298.15 K and are used as they are at other temperatures."""
    t = np.asarray(temperature, dtype=float)
    value, _ = _named(PROTON_SOLVATION, choice, "kcal/mol")
    from_atm = isinstance(choice, str) and PROTON_SOLVATION[choice].states.startswith("gas 1 atm")
    shift = 0.0 if from_atm else to_one_molar(t, Conditions(temperature=t, standard_state="1atm"))
    return proton_gas_gibbs(t) + shift + to_hartree(value, "kcal/mol")


def electron_gibbs(choice: str = DEFAULTS["electron"]) -> float:
    """G of the gas-phase electron, hartree: 0 as an element, or Bartmess's Fermi-Dirac value (298.15 K)."""
    return to_hartree(ELECTRON[choice].value, "kcal/mol")


# -- pKa and potentials ---------------------------------------------------------------------------------


def pka_from_free_energy(dg, temperature):
    """pKa = dG / (RT ln 10) with dG the deprotonation free energy (hartree per molecule, 1 M standard states)."""
    return np.asarray(dg) / (K_B_EH * np.asarray(temperature, dtype=float) * np.log(10.0))


def pka_direct(g_acid, g_base, g_proton, temperature):
    """(dG, pKa) of HA -> A- + H+(aq): dG = G(A-) + G(H+) - G(HA), all at 1 M; hartree and unitless."""
    dg = np.asarray(g_base) + np.asarray(g_proton) - np.asarray(g_acid)
    return dg, pka_from_free_energy(dg, temperature)


def pka_relative(g_acid, g_base, g_ref_acid, g_ref_base, pka_ref, temperature):
    """(dG, pKa) of the proton exchange HA + Ref- -> A- + HRef: pKa(HA) = pKa(HRef) + dG/(RT ln 10); the
    proton's free energy and most of the solvation error cancel (isodesmic scheme, common practice)."""
    dg = np.asarray(g_base) + np.asarray(g_ref_acid) - np.asarray(g_acid) - np.asarray(g_ref_base)
    return dg, pka_ref + pka_from_free_energy(dg, temperature)


def absolute_potential(dg, electrons: int):
    """E_abs = -dG / (nF), V, of Ox + n e- -> Red with dG in hartree per molecule (N_A dG in J/mol)."""
    return -np.asarray(dg) * HARTREE_J * N_A / (electrons * FARADAY)


def nernst_ph_shift(temperature, protons: int, electrons: int, ph: float):
    """E(pH) - E(pH 0) = -(m/n) (RT ln 10 / F) pH, V, for Ox + n e- + m H+ -> Red (0.0592 V per unit of pH
    and proton per electron at 298.15 K, common practice)."""
    kt_volt = K_B_EH * np.asarray(temperature, dtype=float) * HARTREE_J * N_A / FARADAY  # RT/F
    return -(protons / electrons) * kt_volt * np.log(10.0) * ph


def reduction_potential(dg, electrons: int, reference_absolute: float, temperature=LITERATURE_T,
                        protons: int = 0, ph: float = 0.0):
    """E = -dG/(nF) - E_abs(reference) + the pH shift, V; dG of Ox + n e- + m H+ -> Red (hartree per molecule,
    1 M solutes, the proton at pH 0 and the electron in the chosen convention)."""
    return absolute_potential(dg, electrons) - reference_absolute + nernst_ph_shift(temperature, protons, electrons,
                                                                                     ph)


# -- the reaction file's entries, checked on the structures ---------------------------------------------


def _differ_by_protons(heavier: Counter, lighter: Counter, n: int) -> bool:
    return heavier == lighter + Counter({"H": n}) if n else heavier == lighter


def check_solution(rf: ReactionFile, formulas: dict[str, Counter], charges: dict[str, int],
                   solvents: dict[str, str | None]) -> None:
    """Raise the ReactionFileError (file, line) of the first [[pka]] or [[redox]] whose species cannot be what
    it says, or of a reaction mixing solvents among its solvent single points. ``formulas``, ``charges``:
    species that could be read; ``solvents``: the solvent of each species' solvent single points (None:
    none)."""
    for p in rf.pka:
        pairs = [(p.acid, p.base, "acid and base")]
        if p.reference is not None:
            pairs.append((p.reference.acid, p.reference.base, "reference acid and base"))
        for acid, base, what in pairs:
            if {acid, base} <= set(formulas) and not (_differ_by_protons(formulas[acid], formulas[base], 1)
                                                       and charges[acid] == charges[base] + 1):
                raise rf.error(f"pka {p.name!r}: {what} ({acid!r}, {base!r}) must differ by one H and a charge of "
                               f"one (charges {charges[acid]:+d}, {charges[base]:+d})", p.line)
    for r in rf.redox:
        if {r.oxidised, r.reduced} <= set(formulas):
            if not _differ_by_protons(formulas[r.reduced], formulas[r.oxidised], r.protons):
                raise rf.error(f"redox {r.name!r}: the reduced form must hold the oxidised form's atoms"
                               + (f" and {r.protons} H" if r.protons else "") + f" ({r.oxidised!r}, {r.reduced!r})",
                               r.line)
            if charges[r.reduced] != charges[r.oxidised] - r.electrons + r.protons:
                raise rf.error(f"redox {r.name!r}: charges {charges[r.oxidised]:+d} -> {charges[r.reduced]:+d} do "
                               f"not differ by {r.electrons} electron(s)"
                               + (f" and {r.protons} proton(s)" if r.protons else ""), r.line)
    for what, name, names, line in _entries(rf):
        used = {solvents[n] for n in names if solvents.get(n)}
        if len(used) > 1:
            raise rf.error(f"{what} {name!r}: solvent single points in different solvents ({', '.join(sorted(used))})",
                           line)


def _entries(rf: ReactionFile):
    """(kind, name, species, line) of every reaction, pKa and redox entry."""
    for r in rf.reactions:
        yield "reaction", r.name, [n for _, n in r.reactants + r.products] + [r.transition_state], r.line
    for p in rf.pka:
        yield "pka", p.name, [p.acid, p.base] + ([p.reference.acid, p.reference.base] if p.reference else []), p.line
    for r in rf.redox:
        yield "redox", r.name, [r.oxidised, r.reduced], r.line


# -- tables ---------------------------------------------------------------------------------------------


def _molar_g(s: SpeciesResult, conditions: Conditions, t: np.ndarray) -> np.ndarray:
    """A species' G at 1 M (its own concentration, when it has one, is kept as it is)."""
    g = np.asarray(s.values["G"], dtype=float)
    return g if s.options.concentration else g + to_one_molar(t, conditions)


def _problems(names: list[str], species: dict[str, SpeciesResult], subject: str, t: np.ndarray) -> list[Finding]:
    """Errors that exclude a pKa or potential (as for reactions), a warning for gas-phase species and one for
    temperatures away from those of the literature constants."""
    from .reaction_audit import audit_reaction
    from .species import Finding

    found = audit_reaction(names, species, subject)
    if not any(f.severity == "error" for f in found):
        gas = [n for n in names if species[n].solvent is None]
        if gas:
            found.append(Finding("warning", subject, f"species without a solvent model ({', '.join(gas)}): a "
                                                     "gas-phase energy stands for a solute"))
    if np.any(np.abs(t - LITERATURE_T) > 0.5):
        found.append(Finding("warning", subject, "the literature constants (proton solvation, electrode, electron) are "
                                                 f"{LITERATURE_T} K values, used as they are at other temperatures"))
    return found


def mixed_routes(names: list[str], species: dict[str, SpeciesResult], subject: str) -> list[Finding]:
    """A warning when some species of a reaction, pKa or potential take the thermodynamic cycle (a gas-phase
    single point as well) and others the direct route."""
    from .species import Finding

    cycle = {n for n in names if species[n].usable and species[n].solvation_energy() is not None}
    if cycle and cycle != {n for n in names if species[n].usable}:
        return [Finding("warning", subject, "solvent single points mixed with and without gas-phase ones (the "
                                            f"thermodynamic cycle for {', '.join(sorted(cycle))} only)")]
    return []


def pka_table(rf: ReactionFile, species: dict[str, SpeciesResult], conditions: Conditions, unit: str):
    """pka.csv (one row per entry and temperature) and the findings; see docs/solution.md for the columns."""
    import pandas as pd

    t = np.atleast_1d(np.asarray(conditions.temperature, dtype=float))
    u, choice = unit_suffix(unit), rf.solution["proton_solvation"]
    rows, findings = [], []
    for p in rf.pka:
        ref = p.reference
        names = list(dict.fromkeys([p.acid, p.base] + ([ref.acid, ref.base] if ref else [])))
        problems = _problems(names, species, p.name, t)
        findings += problems
        errors = [f.message for f in problems if f.severity == "error"]
        dg = g_proton = pka = np.full(len(t), np.nan)
        if not errors:
            g = {n: _molar_g(species[n], conditions, t) for n in names}
            if ref is None:
                g_proton = proton_solution_gibbs(t, choice)
                dg, pka = pka_direct(g[p.acid], g[p.base], g_proton, t)
            else:
                dg, pka = pka_relative(g[p.acid], g[p.base], g[ref.acid], g[ref.base], ref.pka, t)
        notes = errors or [f.message for f in problems]
        for i, temp in enumerate(t):
            rows.append({"name": p.name, "T_K": float(temp), "acid": p.acid, "base": p.base,
                         "scheme": "relative" if ref else "direct",
                         f"dG_deprotonation_{u}": float(hartree_to(np.atleast_1d(dg)[i], unit)),
                         f"G_proton_{u}": float(hartree_to(np.atleast_1d(g_proton)[i], unit)),
                         "reference_acid": ref.acid if ref else None, "reference_pKa": ref.pka if ref else np.nan,
                         "pKa": float(np.atleast_1d(pka)[i]), "level": _level(names, species, errors),
                         "status": "excluded" if errors else "ok", "notes": "; ".join(notes)})
    return pd.DataFrame(rows), findings


def redox_table(rf: ReactionFile, species: dict[str, SpeciesResult], conditions: Conditions, unit: str):
    """redox.csv (one row per entry and temperature) and the findings; see docs/solution.md for the columns."""
    import pandas as pd

    t = np.atleast_1d(np.asarray(conditions.temperature, dtype=float))
    u, settings = unit_suffix(unit), rf.solution
    she, _ = _named(ABSOLUTE_SHE, settings["absolute_she"], "V")
    g_e = electron_gibbs(settings["electron"])
    rows, findings = [], []
    for r in rf.redox:
        names = [r.oxidised, r.reduced]
        problems = _problems(names, species, r.name, t)
        findings += problems
        errors = [f.message for f in problems if f.severity == "error"]
        e_ref = she + r.reference_vs_she
        dg = e = np.full(len(t), np.nan)
        if not errors:
            g_proton = proton_solution_gibbs(t, settings["proton_solvation"]) if r.protons else 0.0
            dg = (_molar_g(species[r.reduced], conditions, t) - _molar_g(species[r.oxidised], conditions, t)
                  - r.protons * g_proton - r.electrons * g_e)
            e = reduction_potential(dg, r.electrons, e_ref, t, r.protons, r.ph)
        notes = errors or [f.message for f in problems]
        for i, temp in enumerate(t):
            rows.append({"name": r.name, "T_K": float(temp), "oxidised": r.oxidised, "reduced": r.reduced,
                         "electrons": r.electrons, "protons": r.protons, "pH": r.ph,
                         f"dG_{u}": float(hartree_to(np.atleast_1d(dg)[i], unit)),
                         "electron": settings["electron"], "reference": r.reference,
                         "E_abs_reference_V": e_ref, "E_V": float(np.atleast_1d(e)[i]),
                         "level": _level(names, species, errors), "status": "excluded" if errors else "ok",
                         "notes": "; ".join(notes)})
    return pd.DataFrame(rows), findings


def _level(names: list[str], species: dict[str, SpeciesResult], errors: list[str]) -> str | None:
    return None if errors or not species[names[0]].levels else species[names[0]].levels[0]


def constants_used(rf: ReactionFile) -> dict[str, Any]:
    """The literature values a run's pKa and potentials used, each with its source (for run.json and the
    report); empty without [[pka]] or [[redox]]."""
    if not rf.pka and not rf.redox:
        return {}
    s = rf.solution
    out = {"proton_solvation": _named(PROTON_SOLVATION, s["proton_solvation"], "kcal/mol")[1],
           "proton_gas": "Sackur-Tetrode, a structureless particle of the proton's mass (g = 1), 1 atm"}
    if rf.redox:
        out["absolute_she"] = _named(ABSOLUTE_SHE, s["absolute_she"], "V")[1]
        out["electron"] = _named(ELECTRON, s["electron"], "kcal/mol")[1]
    out["standard_state"] = "every solute at 1 mol/L (a species' own concentration kept)"
    return out

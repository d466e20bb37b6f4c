"""The run's kinetics: the inputs of qcthermo.kinetics gathered from the built species of a run.

:func:`add_kinetics` adds kappa and the rate constants to the reactions table, with the rates, Arrhenius and
energy-span tables; :func:`mechanism_reactions` chooses and computes the reactions of the Cantera mechanism
(docs/kinetics.md, docs/formation.md "Mechanism"). The science is in qcthermo.kinetics; this module only
gathers its inputs and lays out the rows.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from .reaction_audit import reaction_names
from .reactions import ReactionSpec
from .records import parse_standard_state
from .species import Finding, SpeciesResult, mirror_images
from .units import hartree_to, unit_suffix

if TYPE_CHECKING:
    from .workflow import RunResults

def _participants(terms, species: dict[str, SpeciesResult], values: dict | None = None) -> list:
    """One side of a reaction as qcthermo.kinetics takes it: G, E+ZPE, coefficient, sigma, own concentration;
    ``values``: species -> values to use instead of the species' own (another temperature grid)."""
    from .kinetics import Participant

    values = values or {}
    return [Participant(values.get(n, species[n].values)["G"], values.get(n, species[n].values)["E_zpe"], c,
                        _symmetry_number(species[n]), species[n].options.concentration is not None)
            for c, n in terms]


def _symmetry_number(s: SpeciesResult) -> int:
    """The rotational symmetry number of a species' lowest conformer (the one its G was computed with)."""
    low = s.lowest
    return low.thermo.symmetry_number if low and low.thermo else 1


def _transition_state(s: SpeciesResult, values: dict | None = None):
    from .kinetics import TransitionState

    v = values or s.values
    return TransitionState(v["G"], v["E_zpe"], _symmetry_number(s), s.lowest.thermo.imaginary_frequency)


def _double_count(reaction: ReactionSpec, ts: SpeciesResult) -> list[Finding]:
    """A warning when the TS's mirror image is counted twice: in its G (enantiomers = 2) and, perhaps, in the
    user's path degeneracy L (docs/kinetics.md: one or the other)."""
    if not reaction.degeneracy or not ts.usable or not (mirror_images(ts, ts.used) > 1).any():
        return []
    return [Finding("warning", reaction.name, f"degeneracy = {reaction.degeneracy:g} and enantiomers = 2 on "
                    f"{ts.name!r}: if L counts the mirror-image path, k is doubled twice (use one or the other)")]


def add_kinetics(results: RunResults, energetics: dict[str, dict]) -> None:
    """Add kappa, k_forward, k_reverse, k_unit to ``results.reactions`` and the rates/Arrhenius/energy-span
    tables. The science is :func:`qcthermo.kinetics.reaction_kinetics`; this gathers its inputs from the
    species of every included reaction with a transition state (``energetics`` holds the included ones),
    in the standard state the free energies used, and writes the columns."""
    import pandas as pd

    from . import kinetics

    df, species, cond = results.reactions, results.species_results, results.conditions
    t = results.temperatures
    if df.empty:  # no [[reaction]]: a cyclic [[profile]] still has its energy span
        results.energy_span = _energy_span(results, kinetics)
        return
    for col in ("kappa", "k_forward", "k_reverse"):
        df[col] = np.nan
    df["k_unit"] = None
    rf = results.reaction_file
    state = cond.pressure if cond.pressure is not None else cond.standard_state  # what the free energies used
    rate_rows, fits = [], []
    for r in rf.reactions:
        if r.name not in energetics or not r.transition_state:
            continue
        try:
            k = kinetics.reaction_kinetics(_participants(r.reactants, species), _participants(r.products, species),
                                           _transition_state(species[r.transition_state]), t, state,
                                           r.tunnelling, r.degeneracy)
        except ValueError as err:
            results.findings.append(Finding("warning", r.name, f"no rate constant: {err}"))
            continue
        results.findings += _double_count(r, species[r.transition_state])
        mask = df["reaction"] == r.name
        for col in ("kappa", "k_forward", "k_reverse"):
            df.loc[mask, col] = np.atleast_1d(k[col])
        same = k["k_unit_forward"] == k["k_unit_reverse"]
        df.loc[mask, "k_unit"] = k["k_unit_forward"] if same else \
            f"{k['k_unit_forward']} (forward), {k['k_unit_reverse']} (reverse)"
        results.findings += [Finding("warning", r.name, n) for n in k["notes"]]
        for i, temp in enumerate(t):
            rate_rows.append({"reaction": r.name, "T_K": temp, "kappa": np.atleast_1d(k["kappa"])[i],
                              "kappa_wigner": np.atleast_1d(k["kappa_wigner"])[i],
                              "kappa_eckart": np.atleast_1d(k["kappa_eckart"])[i],
                              "k_forward": np.atleast_1d(k["k_forward"])[i], "k_unit_forward": k["k_unit_forward"],
                              "k_reverse": np.atleast_1d(k["k_reverse"])[i], "k_unit_reverse": k["k_unit_reverse"]})
        if len(t) >= 3:
            fits += _arrhenius_rows(r.name, t, k, kinetics)
    results.reactions = df[[c for c in df.columns if c not in ("status", "notes")] + ["status", "notes"]]
    if len(t) > 1:
        results.rates = pd.DataFrame(rate_rows)
        results.arrhenius = pd.DataFrame(fits)
    results.energy_span = _energy_span(results, kinetics)


#: |n| of a modified Arrhenius fit beyond which its parameters are taken as ill-determined (common practice:
#: tabulated exponents lie within a few units of 0)
ARRHENIUS_N_LIMIT = 10.0


def _arrhenius_rows(name: str, t: np.ndarray, k: dict, kinetics) -> list[dict]:
    """Per direction, the modified Arrhenius fit A T^n exp(-Ea/RT). Over a narrow range, curvature from deep
    tunnelling makes n and Ea trade off (n = 56 with Ea = -15 kcal/mol on the sample hydration, 250-400 K):
    the note then says that the parameters mean little and k(T) itself is the result."""
    rows = []
    for direction in ("forward", "reverse"):
        try:
            fit = kinetics.fit_arrhenius(t, np.atleast_1d(k[f"k_{direction}"]), unit=k[f"k_unit_{direction}"])
        except ValueError:
            continue
        note = (f"|n| > {ARRHENIUS_N_LIMIT:g}: n and Ea trade off over {fit.T_min:g}-{fit.T_max:g} K and mean "
                "little one by one; use k(T) from rates.csv or fit a wider range") \
            if abs(fit.n) > ARRHENIUS_N_LIMIT else ""
        rows.append({"reaction": name, "direction": direction, "A": fit.A, "A_unit": f"{fit.unit} K^-n", "n": fit.n,
                     "Ea_kcal_mol": fit.Ea_kcal_mol, "Ea_kJ_mol": fit.Ea_kJ_mol, "T_min_K": fit.T_min,
                     "T_max_K": fit.T_max, "max_rel_error": fit.max_rel_error, "note": note})
    return rows


#: temperatures of a mechanism's rate fits when the run has fewer than three, K (combustion and pyrolysis range)
MECHANISM_TEMPERATURES = np.arange(300.0, 2001.0, 50.0)


def mechanism_reactions(results: RunResults) -> tuple[list, list[str]]:
    """The run's reactions as a kinetics code takes them (export.mechanism.ArrheniusReaction), and a line per reaction
    left out saying why.

    A reaction enters when it was included, every species is a gas-phase species at the standard state (no
    solvent model, no own concentration), and it has a rate constant (:func:`_mechanism_rates`: from its transition
    state, or the reaction file's ``rate``), over the run's temperatures when it has three or more, else over
    :data:`MECHANISM_TEMPERATURES`, at 1 mol/L so that k is in Cantera's concentration units; then a modified
    Arrhenius fit (docs/formation.md, "Mechanism")."""
    from . import kinetics
    from .export.mechanism import arrhenius_reaction
    from .species import species_thermo

    rf = results.reaction_file
    t = results.temperatures if len(results.temperatures) >= 3 else MECHANISM_TEMPERATURES
    cond = results.conditions.replace(temperature=t, standard_state="1M", pressure=None)
    df = results.reactions
    included = set(df["reaction"][df["status"] == "ok"]) if len(df) else set()
    out, left_out, values = [], [], {}
    for r in rf.reactions if rf else []:
        names = reaction_names(r)
        rate = getattr(r, "rate", None)
        why = ("excluded by the audit (reactions.csv)" if r.name not in included else
               "not a gas-phase reaction at the standard state" if any(
                   in_solvent(results.species_results[n]) or results.species_results[n].options.concentration
                   for n in names) else
               "no transition state (and no rate in the reaction file)" if not r.transition_state and rate is None else
               "a diffusion limit is for solution" if rate == "diffusion" else None)
        if why is None:
            for n in set(names) - set(values):  # each species once, however many reactions it is in
                values[n] = species_thermo(results.species_results[n], cond).values
            try:
                k_forward, k_reverse, unit = _mechanism_rates(r, results, values, t)
                fit = kinetics.fit_arrhenius(t, k_forward, unit=unit) if r.transition_state else \
                    kinetics.ArrheniusFit(float(k_forward[0]), 0.0, 0.0, float(t.min()), float(t.max()), 0.0, unit)
                out.append(arrhenius_reaction(r.name, r.reactants, r.products, fit, t, k_forward, k_reverse,
                                              given=not r.transition_state))
                continue
            except ValueError as err:
                why = f"no rate constant: {err}"
        left_out.append(f"{r.name}: left out, {why}")
    return out, left_out


def _mechanism_rates(r: ReactionSpec, results: RunResults, values: dict, t: np.ndarray):
    """k_forward, k_reverse (over ``t``, mol/L units) and the forward unit of one mechanism reaction: TST from its
    transition state (kinetics.reaction_kinetics, its tunnelling and degeneracy), or the reaction file's ``rate``
    (the unit of the run's rate constants: cm^3 molecule^-1 s^-1 at a gas standard state becomes M^-1 s^-1 by
    N_A / 1000 per order) with k_reverse = k_forward / K from the species' G at 1 mol/L."""
    from . import kinetics
    from .units import K_B_EH, N_A

    species = results.species_results
    if r.transition_state:
        k = kinetics.reaction_kinetics(_participants(r.reactants, species, values),
                                       _participants(r.products, species, values),
                                       _transition_state(species[r.transition_state], values[r.transition_state]),
                                       t, "1M", r.tunnelling, r.degeneracy)
        return k["k_forward"], k["k_reverse"], k["k_unit_forward"]
    order = r.molecularity_forward - 1
    c = results.conditions
    gas = c.pressure is not None or parse_standard_state(c.standard_state)[0] == "pressure"
    k_forward = np.full(t.shape, float(r.rate) * ((N_A / 1000.0) ** order if gas else 1.0))
    dg = sum(n * values[s]["G"] for n, s in r.products) - sum(n * values[s]["G"] for n, s in r.reactants)
    return k_forward, k_forward * np.exp(dg / (K_B_EH * t)), kinetics.rate_constant_unit(round(order + 1), "M")


def in_solvent(s: SpeciesResult) -> bool:
    """Whether any energy of a species (frequency job or single point) was computed with a solvent model."""
    return any(calc.solvent_model for c in s.used for calc in (c.calculation, c.single_point) if calc)


def _energy_span(results: RunResults, kinetics) -> Any:
    """Energy span of every cyclic profile: the last state closes the cycle (dG_r = its G)."""
    import pandas as pd

    rows = []
    marked = int(np.argmin(np.abs(results.temperatures - 298.15)))  # the temperature the diagram shows
    for record in results.profiles:
        if not record.get("cyclic"):
            continue
        states = record["states"]
        for i, temp in enumerate(results.temperatures):
            cycle = [(s["label"], float(np.atleast_1d(s["value_Eh"]["G"])[i]), s["is_ts"]) for s in states[:-1]]
            d_gr = float(np.atleast_1d(states[-1]["value_Eh"]["G"])[i])
            try:
                es = kinetics.energy_span(cycle, d_gr, temp)
            except ValueError as err:
                results.findings.append(Finding("warning", f"profile {record['name']}", f"no energy span: {err}"))
                break
            if i == marked:
                record["marks"] = {"tdts": es.tdts, "tdi": es.tdi}
            rows.append({"profile": record["name"], "T_K": float(temp), "TOF_s-1": es.tof,
                         "TOF_energy_span_s-1": es.tof_energy_span,
                         f"energy_span_{unit_suffix(results.energy_unit)}": hartree_to(es.energy_span,
                                                                                      results.energy_unit),
                         "TDTS": es.tdts, "TDI": es.tdi,
                         "degree_of_control": "; ".join(f"{k} {v:.3f}" for k, v in es.degree_of_control.items())})
    return pd.DataFrame(rows) if rows else None


"""NASA 7-coefficient polynomial fits of computed thermochemistry, written for kinetics codes.

NASA-7 form (McBride, Gordon and Reno, NASA TM-4513, 1993; Gordon and McBride, NASA SP-273, 1971),
one set of a1..a7 per temperature range:

    cp/R  = a1 + a2 T + a3 T^2 + a4 T^3 + a5 T^4
    h/RT  = a1 + a2 T/2 + a3 T^2/3 + a4 T^3/4 + a5 T^4/5 + a6/T
    s/R   = a1 ln T + a2 T + a3 T^2/2 + a4 T^3/3 + a5 T^4/4 + a7

Molar units here (J/mol, J/(mol K), K), as NASA data are. Output: Cantera YAML (an ideal-gas phase
"gas" with the species) and Chemkin thermo text (the 80-column fixed format). The choices of
reference pressure and enthalpy reference are explained in docs/kinetics.md.
"""

from __future__ import annotations

import os
import statistics
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np

from ..errors import QcthermoError
from ..fileio import atomic_write
from ..records import Conditions, Molecule, hill_formula, parse_standard_state
from ..units import ATM_PA, HARTREE_J, N_A, R_GAS, entropy_to_j_mol_k

#: hartree per molecule -> J/mol
_EH_TO_J_MOL = HARTREE_J * N_A
#: temperature steps of the grid the molecule path fits on, K
_GRID_STEP_K = 10.0


def nasa7_cp(coeffs: Sequence[float], temperature):
    """cp / R = a1 + a2 T + a3 T^2 + a4 T^3 + a5 T^4 (McBride et al., NASA TM-4513, 1993, eq. 1)."""
    a = np.asarray(coeffs, dtype=float)
    t = np.asarray(temperature, dtype=float)
    return a[0] + t * (a[1] + t * (a[2] + t * (a[3] + t * a[4])))


def nasa7_enthalpy(coeffs: Sequence[float], temperature):
    """h / R = a1 T + a2 T^2/2 + a3 T^3/3 + a4 T^4/4 + a5 T^5/5 + a6, K (NASA TM-4513, eq. 2 times T)."""
    a = np.asarray(coeffs, dtype=float)
    t = np.asarray(temperature, dtype=float)
    return t * (a[0] + t * (a[1] / 2 + t * (a[2] / 3 + t * (a[3] / 4 + t * a[4] / 5)))) + a[5]


def nasa7_entropy(coeffs: Sequence[float], temperature):
    """s / R = a1 ln T + a2 T + a3 T^2/2 + a4 T^3/3 + a5 T^4/4 + a7 (NASA TM-4513, eq. 3)."""
    a = np.asarray(coeffs, dtype=float)
    t = np.asarray(temperature, dtype=float)
    return a[0] * np.log(t) + t * (a[1] + t * (a[2] / 2 + t * (a[3] / 3 + t * a[4] / 4))) + a[6]


@dataclass(frozen=True)
class Nasa7Fit:
    """Two NASA-7 coefficient sets of one species, continuous in cp, dcp/dT, h and s at ``t_mid``.

    Attributes:
        name: species name as the kinetics code will see it.
        composition: {element: count}.
        t_low, t_mid, t_high: the temperature ranges, K.
        low, high: a1..a7 of [t_low, t_mid] and [t_mid, t_high].
        reference_pressure: Pa, the pressure of the standard state of s (and the Gibbs energy).
        note: provenance and the enthalpy reference, written beside the data.
        model_note: which low-mode model the fit used and why (:func:`fit_model`), for the files' headers.
        max_cp_rel_error: largest |cp_fit / cp - 1| over the fitted points.
        max_h_error: largest |h_fit - h| over the fitted points, J/mol.
        max_s_error: largest |s_fit - s| over the fitted points, J/(mol K).
    """

    name: str
    composition: dict[str, int]
    t_low: float
    t_mid: float
    t_high: float
    low: tuple[float, ...]
    high: tuple[float, ...]
    reference_pressure: float = ATM_PA
    note: str = ""
    model_note: str = ""
    max_cp_rel_error: float = 0.0
    max_h_error: float = 0.0
    max_s_error: float = 0.0

    def _pick(self, temperature, quantity):
        t = np.asarray(temperature, dtype=float)
        value = np.where(t <= self.t_mid, quantity(self.low, t), quantity(self.high, t))
        return float(value) if value.ndim == 0 else value

    def cp(self, temperature):
        """Heat capacity at constant pressure, J/(mol K)."""
        return self._pick(temperature, nasa7_cp) * R_GAS

    def enthalpy(self, temperature):
        """Enthalpy, J/mol (on the reference stated in ``note``)."""
        return self._pick(temperature, nasa7_enthalpy) * R_GAS

    def entropy(self, temperature):
        """Entropy at ``reference_pressure``, J/(mol K)."""
        return self._pick(temperature, nasa7_entropy) * R_GAS


def _constrained_lstsq(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray) -> np.ndarray:
    """min |a x - b|^2 subject to c x = d, by the null-space method.

    x = x_p + N z with c x_p = d and the columns of N spanning the null space of c; z is then an
    unconstrained least-squares problem (Lawson and Hanson, Solving Least Squares Problems, 1974,
    ch. 20), solved by SVD without forming the normal equations.
    """
    x_p = np.linalg.lstsq(c, d, rcond=None)[0]
    null = np.linalg.svd(c)[2][c.shape[0]:].T
    z = np.linalg.lstsq(a @ null, b - a @ x_p, rcond=None)[0]
    return x_p + null @ z


def _fit_offsets(residual_low: np.ndarray, residual_high: np.ndarray, jump: float) -> tuple[float, float]:
    """Least-squares constants x_low, x_high = x_low + jump fitting two sets of residuals (closed-form KKT)."""
    x_low = (residual_low.sum() + (residual_high - jump).sum()) / (residual_low.size + residual_high.size)
    return float(x_low), float(x_low + jump)


def _fit_heat_capacity(tau: np.ndarray, cp_r: np.ndarray, low: np.ndarray, high: np.ndarray):
    """Scaled cp/R polynomials (b_k of tau^k, tau = T/t_mid) of both ranges, equal in value and slope at tau = 1.

    Least squares in the relative error; a point at t_mid enters both ranges.
    """
    powers = tau[:, None] ** np.arange(5)
    design = np.zeros((tau.size, 10))
    design[low, :5] = powers[low]
    design[high & ~low, 5:] = powers[high & ~low]
    rows, target = [design], [cp_r]
    if np.any(low & high):
        shared = np.zeros((np.count_nonzero(low & high), 10))
        shared[:, 5:] = powers[low & high]
        rows.append(shared)
        target.append(cp_r[low & high])
    weights = 1.0 / np.concatenate(target)
    value, slope = np.ones(5), np.arange(5.0)  # d/dtau of tau^k at tau = 1 is k
    constraints = np.array([np.concatenate([value, -value]), np.concatenate([slope, -slope])])
    b = _constrained_lstsq(np.vstack(rows) * weights[:, None], np.concatenate(target) * weights, constraints,
                           np.zeros(2))
    return b[:5], b[5:]


#: candidate middle temperatures of ``t_mid="auto"``, K
AUTO_T_MID = tuple(float(x) for x in range(500, 1501, 50))


def fit_nasa7(
    temperature,
    cp,
    h,
    s,
    t_mid: float | str = 1000.0,
    name: str = "species",
    composition: Mapping[str, int] | None = None,
    note: str = "",
    reference_pressure: float = ATM_PA,
) -> Nasa7Fit:
    """Fit two NASA-7 sets to molar cp (J/(mol K)), h (J/mol) and s (J/(mol K)) at ``temperature`` (K).

    cp/R of both ranges is fitted together by least squares in the relative error (each point
    weighted 1/cp), constrained to equal values and slopes at ``t_mid``; then a6 and a7 are the
    least-squares offsets of h/R and s/R, constrained to continuity of h and s at ``t_mid``. The
    polynomials are fitted in T/t_mid to keep the least-squares problem well conditioned. The
    temperatures must cover both sides of ``t_mid``; points at t_mid belong to both ranges.
    ``t_mid="auto"`` tries each of :data:`AUTO_T_MID` inside the data and keeps the fit with the
    smallest largest cp error (Chemkin and Cantera read a middle temperature per species).
    """
    if t_mid == "auto":
        t = np.asarray(temperature, dtype=float)
        candidates = [x for x in AUTO_T_MID if np.count_nonzero(t <= x) >= 6 and np.count_nonzero(t >= x) >= 6]
        if not candidates:
            raise ValueError("t_mid='auto' needs temperatures on both sides of 500-1500 K")
        fits = [fit_nasa7(t, cp, h, s, x, name, composition, note, reference_pressure) for x in candidates]
        return min(fits, key=lambda fit: fit.max_cp_rel_error)
    t_mid = float(t_mid)
    t = np.asarray(temperature, dtype=float)
    cp_r, h_r, s_r = (np.asarray(x, dtype=float) / R_GAS for x in (cp, h, s))
    if t.ndim != 1 or not (cp_r.shape == h_r.shape == s_r.shape == t.shape):
        raise ValueError("a NASA-7 fit needs cp, h and s at each of a 1-D array of temperatures")
    if np.any(t <= 0) or np.any(~np.isfinite(np.concatenate([cp_r, h_r, s_r]))):
        raise ValueError("a NASA-7 fit needs positive temperatures and finite cp, h, s")
    low, high = t <= t_mid, t >= t_mid
    if np.count_nonzero(low) < 6 or np.count_nonzero(high) < 6:
        raise ValueError(f"a NASA-7 fit needs at least six temperatures on each side of t_mid = {t_mid} K")
    b_low, b_high = _fit_heat_capacity(t / t_mid, cp_r, low, high)
    scale = t_mid ** -np.arange(5.0)
    a_low, a_high = np.append(b_low * scale, [0.0, 0.0]), np.append(b_high * scale, [0.0, 0.0])
    a_low[5], a_high[5] = _fit_offsets(
        h_r[low] - nasa7_enthalpy(a_low, t[low]),
        h_r[high] - nasa7_enthalpy(a_high, t[high]),
        float(nasa7_enthalpy(a_low, t_mid) - nasa7_enthalpy(a_high, t_mid)),
    )
    a_low[6], a_high[6] = _fit_offsets(
        s_r[low] - nasa7_entropy(a_low, t[low]),
        s_r[high] - nasa7_entropy(a_high, t[high]),
        float(nasa7_entropy(a_low, t_mid) - nasa7_entropy(a_high, t_mid)),
    )
    fit = Nasa7Fit(name, dict(composition or {}), float(t.min()), float(t_mid), float(t.max()),
                   tuple(a_low.tolist()), tuple(a_high.tolist()), float(reference_pressure), note)
    return _with_errors(fit, t, cp_r * R_GAS, h_r * R_GAS, s_r * R_GAS)


def _with_errors(fit: Nasa7Fit, t: np.ndarray, cp: np.ndarray, h: np.ndarray, s: np.ndarray) -> Nasa7Fit:
    """The fit with its largest errors against the data it was fitted to."""
    return replace(
        fit,
        max_cp_rel_error=float(np.max(np.abs(fit.cp(t) / cp - 1))),
        max_h_error=float(np.max(np.abs(fit.enthalpy(t) - h))),
        max_s_error=float(np.max(np.abs(fit.entropy(t) - s))),
    )


def enthalpy_offset(symbols: Sequence[str], h_reference) -> tuple[float, str]:
    """The constant (J/mol) added to a molecule's computed enthalpy, and the sentence that states it.

    ``"electronic"``: 0, H keeps the absolute electronic energy of the level of theory. A mapping
    {element: (H_atom, dHf_atom)} — the computed enthalpy of the free atom at 298.15 K in hartree at
    the same level of theory, and the atom's standard heat of formation at 298.15 K in kJ/mol —
    gives the atomisation-based heat of formation (Curtiss, Raghavachari, Redfern, Pople, J. Chem.
    Phys. 1997, 106, 1063): dHf(M, T) = H(M, T) + sum_atoms [dHf_atom - H_atom]. Both are a constant
    per element, so reaction enthalpies within one mechanism are the same either way. (The fitting
    functions also take a number, a species' own heat of formation: :func:`anchored_at_298`.)
    """
    if isinstance(h_reference, str):
        if h_reference != "electronic":
            raise QcthermoError(f"enthalpy reference {h_reference!r}: use 'electronic' or atomic enthalpies")
        return 0.0, "H includes the absolute electronic energy of this level of theory (not a heat of formation)"
    missing = sorted(set(symbols) - set(h_reference))
    if missing:
        raise QcthermoError(f"atomic enthalpies missing for {', '.join(missing)}")
    per_element = {el: 1000.0 * float(h_reference[el][1]) - float(h_reference[el][0]) * _EH_TO_J_MOL
                   for el in set(symbols)}
    offset = float(sum(per_element[el] for el in symbols))
    return offset, "H is the atomisation-based heat of formation from the atomic enthalpies given (298.15 K)"


def _nasa_grid(t_low: float, t_mid, t_high: float) -> np.ndarray:
    if not t_low < (1000.0 if t_mid == "auto" else t_mid) < t_high:
        raise QcthermoError(f"NASA-7 temperature ranges need t_low < t_mid < t_high (got {t_low}, {t_mid}, {t_high})")
    extra = [t_high] if t_mid == "auto" else [t_mid, t_high]
    return np.unique(np.concatenate([np.arange(t_low, t_high, _GRID_STEP_K), extra]))


#: low-mode models whose S is not the integral of cp/T, and the consistent model NASA-7 fits use instead
_CONSISTENT_MODEL = {"qrrho": "qrrho-enthalpy"}


def fit_model(model: str) -> tuple[str, str]:
    """The low-mode model a NASA-7 fit uses for ``model`` (the tables' one), and the sentence that says so.

    Grimme's qRRHO changes S alone, so S(T) is not the integral of cp/T and no NASA-7 polynomial (whose
    s is exactly that integral) can follow both; the fit then uses the same weights on the enthalpy as
    well (qrrho-enthalpy), which restores the thermodynamic identity. Other models are fitted as they are.
    """
    used = _CONSISTENT_MODEL.get(model, model)
    if used == model:
        return used, f"fitted with the tables' low-mode model, {model}"
    return used, (f"fitted with low-mode model {used}, not the tables' {model}: {model} changes S alone, so its S "
                  f"is not the integral of cp/T that a NASA-7 polynomial is; {used} has the same weights and "
                  "threshold and the matching H")


def _gas_conditions(conditions: Conditions | None, grid: np.ndarray,
                    reference_state: str) -> tuple[Conditions, float, str]:
    """The engine's conditions for a fit (the grid, the gas standard state, the model of :func:`fit_model`),
    the reference pressure (Pa) and the sentence naming the model."""
    kind, pressure = parse_standard_state(reference_state)
    if kind != "pressure":
        raise QcthermoError(f"NASA-7 data need a gas standard state (1atm or 1bar), not {reference_state!r}")
    base = conditions or Conditions()
    model, model_note = fit_model(base.low_mode_model)
    cond = base.replace(temperature=grid, standard_state=reference_state, pressure=None, low_mode_model=model)
    return cond, pressure, model_note


def _fit_values(values: Mapping[str, np.ndarray], grid: np.ndarray, symbols: Sequence[str], name: str,
                provenance: str, model_note: str, pressure: float, t_mid, h_reference) -> Nasa7Fit:
    """Fit H, S, cp (hartree per molecule, hartree/K over ``grid``) converted to molar units."""
    formation = _heat_of_formation(h_reference)
    offset, reference_note = enthalpy_offset(symbols, "electronic" if formation is not None else h_reference)
    fit = fit_nasa7(grid, entropy_to_j_mol_k(values["cp"]), values["H"] * _EH_TO_J_MOL + offset,
                    entropy_to_j_mol_k(values["S"]), t_mid=t_mid, name=name, composition=Counter(symbols),
                    reference_pressure=pressure)
    if formation is not None:
        fit = anchored_at_298(fit, 1000.0 * formation)
        reference_note = f"h(298.15 K) is the heat of formation {formation:.3f} kJ/mol"
    quality = (f"fit: cp within {100 * fit.max_cp_rel_error:.2g} %, h within {fit.max_h_error:.2g} J/mol, "
               f"s within {fit.max_s_error:.2g} J/(mol K)")
    return replace(fit, note=f"qcthermo {hill_formula(symbols)} ({provenance}); {reference_note}; {quality}",
                   model_note=model_note)


def _heat_of_formation(h_reference) -> float | None:
    """The kJ/mol of a heat-of-formation reference (a number), else None."""
    if isinstance(h_reference, (int, float, np.floating)) and not isinstance(h_reference, bool):
        return float(h_reference)
    return None


#: the temperature at which a heat-of-formation reference fixes h, K (thermochemical tables' reference)
T_REFERENCE = 298.15


def anchored_at_298(fit: Nasa7Fit, dfh_298_j_mol: float) -> Nasa7Fit:
    """The fit with a6 of both ranges shifted by one constant so that h(298.15 K) = ``dfh_298_j_mol`` exactly.

    The convention of NASA thermochemical data (McBride, Gordon and Reno, NASA TM-4513, 1993: H(298.15) is
    the standard heat of formation). One constant keeps h continuous at t_mid and leaves cp, s and the fit's
    errors against its own (equally shifted) data unchanged.
    """
    shift = (dfh_298_j_mol - fit.enthalpy(T_REFERENCE)) / R_GAS
    low, high = list(fit.low), list(fit.high)
    low[5] += shift
    high[5] += shift
    return replace(fit, low=tuple(low), high=tuple(high))


def _provenance(level: str | None, model: str, n_conformers: int) -> str:
    return ", ".join(x for x in (level, f"low-mode model {model}",
                                 f"{n_conformers} conformers" if n_conformers > 1 else None) if x)


def nasa7_from_molecule(
    mol: Molecule,
    conditions: Conditions | None = None,
    name: str | None = None,
    t_low: float = 300.0,
    t_mid: float | str = 1000.0,
    t_high: float = 3000.0,
    h_reference="electronic",
    reference_state: str = "1atm",
) -> Nasa7Fit:
    """NASA-7 fit of the ideal-gas thermochemistry of one molecule over [t_low, t_mid, t_high] K.

    The engine (qcthermo.thermochemistry) is evaluated every 10 K (and at t_mid) with ``conditions``
    (low-mode model as :func:`fit_model` says, scaling, ...; default Conditions()) but at the gas standard
    state ``reference_state`` ("1atm", the reference pressure of Chemkin and Cantera, or "1bar"), converted
    to molar units and fitted by :func:`fit_nasa7`. ``h_reference`` sets the enthalpy zero (see
    :func:`enthalpy_offset`; a number is the heat of formation at 298.15 K, kJ/mol:
    :func:`anchored_at_298`). ``t_mid="auto"`` picks the middle temperature per species (see
    :func:`fit_nasa7`).
    """
    from ..thermo import thermochemistry

    grid = _nasa_grid(t_low, t_mid, t_high)
    cond, pressure, model_note = _gas_conditions(conditions, grid, reference_state)
    r = thermochemistry(mol, cond)
    values = {"H": np.asarray(r.enthalpy), "S": np.asarray(r.entropy), "cp": np.asarray(r.cp)}
    return _fit_values(values, grid, mol.symbols, name or mol.name or mol.formula,
                       _provenance(mol.level_of_theory, cond.low_mode_model, 1), model_note, pressure, t_mid,
                       h_reference)


def nasa7_from_species(species, conditions: Conditions | None = None, t_low: float = 300.0,
                       t_mid: float | str = 1000.0, t_high: float = 3000.0, h_reference="electronic",
                       reference_state: str = "1atm") -> Nasa7Fit:
    """NASA-7 fit of a species of the main job (qcthermo.species.SpeciesResult) as the run treats it.

    Its values on the NASA grid come from :func:`qcthermo.species.species_thermo`, the function behind the
    tables: the Boltzmann ensemble of its used conformers (G = -RT ln sum exp(-G_i/RT), H the population
    average, cp with the conformational term, S = (H - G)/T), the composite shift E(high) - E(low) and
    the mirror-image count (``enantiomers``) applied there once. A species at its own concentration is
    still fitted as an ideal gas at ``reference_state``.
    """
    from ..species import species_thermo

    used = [c for c in species.used if c.molecule is not None]
    if not used:
        raise QcthermoError(f"species {species.name!r}: no usable conformer to fit")
    grid = _nasa_grid(t_low, t_mid, t_high)
    cond, pressure, model_note = _gas_conditions(conditions, grid, reference_state)
    levels = ", ".join(sorted({c.level for c in used if c.level})) or None
    return _fit_values(species_thermo(species, cond).values, grid, used[0].molecule.symbols, species.name,
                       _provenance(levels, cond.low_mode_model, len(used)), model_note, pressure, t_mid, h_reference)


#: the loud header line of NASA-7 files on the absolute-energy enthalpy reference
ABSOLUTE_REFERENCE = ("ENTHALPY REFERENCE: absolute electronic energies of the level of theory (h = E + ZPE + thermal "
                      "enthalpy), NOT heats of formation: these species combine only with each other, at one level "
                      "of theory, and cannot be merged into another mechanism; a [heats_of_formation] table in the "
                      "reaction file gives heats of formation (docs/formation.md)")
FORMATION_REFERENCE = ("ENTHALPY REFERENCE: standard heats of formation, h(298.15 K) = dfH(298.15 K) of "
                       "heats_of_formation.csv (each species' note names its route); the species can be merged into "
                       "another mechanism on the same reference")


def run_enthalpy_reference(results) -> tuple[dict[str, float] | None, list[str]]:
    """The run's NASA-7 enthalpy reference: {species: dfH(298.15 K) kJ/mol} (None: absolute energies), and the
    header lines that state it. Heats of formation are the reference whenever the run has some
    (results.heats_of_formation); a species without one is then left out, since one file has one reference."""
    from ..formation import preferred_values

    table = getattr(results, "heats_of_formation", None)
    values = preferred_values(table.to_dict(orient="records")) if table is not None and len(table) else {}
    if not values:
        return None, [ABSOLUTE_REFERENCE]
    left_out = [n for n, sp in results.species_results.items()
                if sp.usable and not sp.options.transition_state and n not in values]
    lines = [FORMATION_REFERENCE]
    if left_out:
        lines.append("left out (no heat of formation, so no place on this reference): " + ", ".join(left_out))
    return values, lines


def write_run_thermo(results, out_dir) -> list:
    """thermo.yaml and thermo.dat of every minimum of a run (qcthermo.workflow.RunResults) into ``out_dir``.

    Each species gets its own middle temperature (``t_mid="auto"``): a common 1000 K leaves cp errors of
    0.3-0.5 % for CH4 or pentane, the per-species choice about half or less (docs/kinetics.md). The range
    starts at 298.15 K, the reference temperature of heats of formation. The enthalpy reference is
    :func:`run_enthalpy_reference`'s, stated at the top of both files.

    Transition states are left out (kinetics codes take them through the rate constants). A species
    that cannot be fitted, or a file that cannot be written (a name too long for Chemkin), becomes a
    warning finding and the rest goes on.
    """
    from pathlib import Path

    from ..species import Finding

    formation, header = run_enthalpy_reference(results)
    fits, left_out = [], []
    for name, sp in results.species_results.items():
        if sp.options.transition_state or not sp.usable:
            continue
        if formation is not None and name not in formation:
            left_out.append(name)
            continue
        try:
            fits.append(nasa7_from_species(sp, results.conditions, t_low=T_REFERENCE, t_mid="auto",
                                           h_reference=formation[name] if formation else "electronic"))
        except (QcthermoError, ValueError) as err:
            results.findings.append(Finding("warning", name, f"no NASA-7 fit: {err}"))
    if left_out:
        results.findings.append(Finding("warning", "thermo.yaml", f"{len(left_out)} species left out of thermo.yaml "
                                        f"and thermo.dat (no heat of formation; the files hold heats of formation): "
                                        f"{', '.join(left_out)}"))
    if not fits:
        return []
    reactions, left_reactions = _mechanism(results, {fit.name for fit in fits})
    written = []
    for file_name, writer in (("thermo.yaml", write_cantera_yaml), ("thermo.dat", write_chemkin)):
        try:
            written.append(writer(fits, Path(out_dir) / file_name, header=header, reactions=reactions,
                                  left_out=left_reactions))
        except QcthermoError as err:
            results.findings.append(Finding("warning", file_name, f"not written: {err}"))
    return written


def _mechanism(results, fitted: set[str]) -> tuple[list, list[str]]:
    """The run's mechanism reactions (RunResults.mechanism) whose species all have NASA-7 data here, and the
    reasons of those left out (the run's, then this file's)."""
    reactions, left_out = [], list(getattr(results, "mechanism_left_out", []))
    for r in getattr(results, "mechanism", []):
        missing = [n for _, n in r.reactants + r.products if n not in fitted]
        if missing:
            left_out.append(f"{r.name}: left out, species {missing[0]} has no NASA-7 data in this file")
        else:
            reactions.append(r)
    return reactions, left_out


def _elements(fits: Sequence[Nasa7Fit], elements: Sequence[str] | None) -> list[str]:
    present = {el for fit in fits for el in fit.composition}
    if elements is None:
        return sorted(present, key=lambda el: (el not in ("C", "H"), el != "C", el))
    missing = sorted(present - set(elements))
    if missing:
        raise QcthermoError(f"elements {', '.join(missing)} are in the species but not in the element list")
    return list(elements)


def _check_names(fits: Sequence[Nasa7Fit]) -> None:
    names = [fit.name for fit in fits]
    if not fits:
        raise QcthermoError("no species to write")
    duplicates = sorted({n for n in names if names.count(n) > 1})
    if duplicates:
        raise QcthermoError(f"species names must be unique: {', '.join(duplicates)}")
    for n in names:
        if not n or any(c.isspace() for c in n):
            raise QcthermoError(f"species name {n!r}: a kinetics code needs a name without spaces")


def _model_notes(fits: Sequence[Nasa7Fit]) -> list[str]:
    """The distinct low-mode model sentences of the fits (one for a run), for the files' headers."""
    return list(dict.fromkeys(fit.model_note for fit in fits if fit.model_note))


def _yaml_list(values: Sequence[float]) -> str:
    return "[" + ", ".join(repr(float(v)) for v in values) + "]"


def cantera_yaml_text(fits: Sequence[Nasa7Fit], elements: Sequence[str] | None = None, phase: str = "gas",
                      header: Sequence[str] = (), reactions: Sequence = (), left_out: Sequence[str] = ()) -> str:
    """Cantera YAML text: one ideal-gas phase holding every species, each with its NASA-7 data.

    Follows Cantera's YAML input format (cantera.org, "YAML input file reference": phases, species,
    thermo model NASA7 with temperature-ranges, data (low range first) and reference-pressure).
    Strings are written JSON-quoted, which YAML reads as they are. ``header``: comment lines (and parts of
    the description) after the low-mode model's, e.g. the enthalpy reference. ``reactions``
    (export.mechanism.ArrheniusReaction) make it a mechanism (gas kinetics, reversible reactions in the
    declared units m, s, kmol, J/kmol); ``left_out`` lines are comments.
    """
    import json

    from .mechanism import yaml_reactions

    _check_names(fits)
    element_list = _elements(fits, elements)
    description = "; ".join(["NASA-7 fits of computed ideal-gas thermochemistry, written by qcthermo",
                             *_model_notes(fits), *header])
    lines = [
        *(f"# {note}" for note in [*_model_notes(fits), *header]),
        "description: " + json.dumps(description),
        "generator: qcthermo",
        "units: {length: m, time: s, quantity: kmol, activation-energy: J/kmol}",
        "",
        "phases:",
        f"- name: {json.dumps(phase)}",
        "  thermo: ideal-gas",
        f"  elements: [{', '.join(element_list)}]",
        f"  species: [{', '.join(json.dumps(f.name) for f in fits)}]",
        *(["  kinetics: gas", "  reactions: all"] if reactions else []),
        f"  state: {{T: {fits[0].t_low!r}, P: {fits[0].reference_pressure!r}}}",
        "",
        "species:",
    ]
    for fit in fits:
        composition = ", ".join(f"{el}: {n}" for el, n in fit.composition.items())
        lines += [
            f"- name: {json.dumps(fit.name)}",
            f"  composition: {{{composition}}}",
            "  thermo:",
            "    model: NASA7",
            f"    reference-pressure: {fit.reference_pressure!r}",
            f"    temperature-ranges: {_yaml_list([fit.t_low, fit.t_mid, fit.t_high])}",
            "    data:",
            f"    - {_yaml_list(fit.low)}",
            f"    - {_yaml_list(fit.high)}",
        ]
        if fit.note:
            lines.append(f"  note: {json.dumps(fit.note)}")
    lines += yaml_reactions(reactions, {fit.name: fit for fit in fits}, left_out)
    return "\n".join(lines) + "\n"


def write_cantera_yaml(fits: Sequence[Nasa7Fit], path: str | os.PathLike, elements: Sequence[str] | None = None,
                       phase: str = "gas", header: Sequence[str] = (), reactions: Sequence = (),
                       left_out: Sequence[str] = ()):
    """Write :func:`cantera_yaml_text` atomically to ``path`` (e.g. thermo.yaml); return the path."""
    return atomic_write(path, cantera_yaml_text(fits, elements, phase, header, reactions, left_out))


def _fortran_e(value: float) -> str:
    """Fortran E15.8: ' 3.38684249E+00' (15 characters, a sign column)."""
    text = f"{value:15.8E}"
    if len(text) != 15:
        raise QcthermoError(f"coefficient {value!r} does not fit the 15 columns of the Chemkin format")
    return text


def _chemkin_entry(fit: Nasa7Fit) -> list[str]:
    """One species in the Chemkin thermo format (Kee, Rupley, Miller, Chemkin-II, Sandia SAND89-8009,
    1989): line 1 name (cols 1-18), four element/count pairs (cols 25-44), phase G (col 45),
    T_low, T_high (F10), T_mid (F8), '1' in col 80; lines 2-4 a1..a7 high range then a1..a7 low range
    in E15.8, the line number in col 80. More than four elements go on a continuation line flagged
    by '&' after col 80 (the extended form Cantera's ck2yaml reads)."""
    items = list(fit.composition.items())
    for el, n in items:
        if len(el) > 2 or not 0 < n < 1000:
            raise QcthermoError(f"{fit.name}: element {el} x {n} does not fit the Chemkin columns")
    pairs = "".join(f"{el:<2s}{n:>3d}" for el, n in items) if len(items) <= 4 else ""
    head = f"{fit.name:<24s}{pairs:<20s}G{fit.t_low:10.3f}{fit.t_high:10.3f}{fit.t_mid:8.3f}"
    lines = [f"{head:<79s}1" + ("&" if len(items) > 4 else "")]
    if len(items) > 4:
        lines.append(" ".join(f"{el} {n}" for el, n in items))
    coeffs = [*fit.high, *fit.low]
    for number, chunk in enumerate((coeffs[0:5], coeffs[5:10], coeffs[10:14]), start=2):
        lines.append(f"{''.join(_fortran_e(c) for c in chunk):<79s}{number}")
    return lines


def chemkin_text(fits: Sequence[Nasa7Fit], header: Sequence[str] = (), reactions: Sequence = (),
                 left_out: Sequence[str] = ()) -> str:
    """Chemkin thermo text (thermo.dat): header (``header`` lines after the model's), the common temperature
    ranges, one entry per species. A name longer than Chemkin's 18 characters gets a short unique one
    (export.mechanism.chemkin_names), listed in the header. With ``reactions`` the file is a whole Chemkin
    mechanism: ELEMENTS, SPECIES, THERMO ALL and REACTIONS (units on its line); ``left_out`` lines are comments."""
    from .mechanism import chemkin_names, chemkin_reactions

    _check_names(fits)
    if any(abs(fit.reference_pressure - ATM_PA) > 1e-6 for fit in fits):
        raise QcthermoError("Chemkin thermo data are at 1 atm; these fits are at another reference pressure")
    names = chemkin_names([fit.name for fit in fits])
    lines = ["! NASA-7 fits of computed ideal-gas thermochemistry, written by qcthermo (reference 1 atm)"]
    lines += [f"! {note}" for note in [*_model_notes(fits), *header]]
    renamed = [(short, full) for full, short in names.items() if short != full]
    if renamed:
        lines.append("! Chemkin names (at most 18 characters) of the species with longer names:")
        lines += [f"!   {short:<18s} = {full}" for short, full in renamed]
    lines += [f"! {fit.name}: {fit.note}" for fit in fits if fit.note]
    if reactions:
        lines += ["ELEMENTS", " ".join(_elements(fits, None)), "END", "SPECIES",
                  *(" ".join(names[f.name] for f in fits[i:i + 4]) for i in range(0, len(fits), 4)), "END"]
    else:
        lines += [f"! {line}" for line in left_out]
    # the default ranges line: every entry carries its own ranges, which readers prefer
    t_mid = statistics.mode(fit.t_mid for fit in fits)
    t_low, t_high = min(fit.t_low for fit in fits), max(fit.t_high for fit in fits)
    lines += ["THERMO ALL", f"{t_low:10.3f}{t_mid:10.3f}{t_high:10.3f}"]
    for fit in fits:
        lines += _chemkin_entry(replace(fit, name=names[fit.name]))
    lines.append("END")
    if reactions:
        lines += chemkin_reactions(reactions, {fit.name: fit for fit in fits}, names, left_out)
    return "\n".join(lines) + "\n"


def write_chemkin(fits: Sequence[Nasa7Fit], path: str | os.PathLike, header: Sequence[str] = (),
                  reactions: Sequence = (), left_out: Sequence[str] = ()):
    """Write :func:`chemkin_text` atomically to ``path`` (e.g. thermo.dat); return the path."""
    return atomic_write(path, chemkin_text(fits, header, reactions, left_out))

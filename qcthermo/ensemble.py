"""Conformer ensembles: de-duplication, mirror images, Boltzmann weighting, single-point pairing.

Two structures of one species are compared by aligned RMSD with the atoms in the order the files
give them (:func:`qcthermo.geometry.kabsch_rmsd`, W. Kabsch, Acta Cryst. A 1976, 32, 922):

- *duplicate*: proper-rotation RMSD below the threshold and electronic energies within the window:
  the same conformer found twice; only the lower-energy copy is kept.
- *mirror image*: only the improper (reflected) RMSD is below the threshold and the energies agree:
  the enantiomer of a chiral conformer; both are kept, both count in the ensemble.
- otherwise distinct conformers.

The decisions (thresholds, which energy) are written down in docs/reactions.md.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field

import numpy as np

from .geometry import bond_matrix, kabsch_rmsd
from .records import Calculation
from .units import ENERGY_UNITS, K_B_EH

#: default duplicate threshold, angstrom (common practice for conformer searches)
RMSD_THRESHOLD = 0.1
#: default energy window for duplicates, kcal/mol (common practice)
ENERGY_WINDOW = 0.1
#: default largest RMSD between a single point's geometry and its frequency job's, angstrom: a single point
#: is an energy of *that* structure. The same geometry printed by two jobs agrees to ~1e-5 A (8 decimals
#: copied, a program re-centring and turning it); 1e-3 A is about an optimiser's own step criterion
#: (docs/reactions.md, "Composite energies"), so anything beyond it is another geometry.
SINGLE_POINT_RMSD = 1e-3


@dataclass
class Grouping:
    """The outcome of :func:`group_conformers` (indices into the input list).

    Attributes:
        kept: distinct conformers, in input order.
        duplicates: dropped index -> the kept index it duplicates, with the proper RMSD (angstrom).
        mirror_pairs: (kept index, kept index, proper RMSD) of enantiomer pairs.
    """

    kept: list[int]
    duplicates: dict[int, tuple[int, float]] = field(default_factory=dict)
    mirror_pairs: list[tuple[int, int, float]] = field(default_factory=list)


def compare_structures(a: Calculation, b: Calculation, rmsd_threshold: float = RMSD_THRESHOLD,
                       energy_window: float = ENERGY_WINDOW) -> tuple[str, float]:
    """("duplicate" | "mirror" | "distinct", proper RMSD in angstrom) for two structures.

    Structures with different atoms (or atom order) are distinct (RMSD inf). ``energy_window`` is in
    kcal/mol on the electronic energies; a missing energy never rules a pair out.
    """
    if tuple(a.symbols) != tuple(b.symbols):
        return "distinct", float("inf")
    proper = kabsch_rmsd(a.coordinates, b.coordinates)
    energies = (a.energy, b.energy)
    if None not in energies and abs(energies[0] - energies[1]) * ENERGY_UNITS["kcal/mol"] > energy_window:
        return "distinct", proper
    if proper < rmsd_threshold:
        return "duplicate", proper
    if kabsch_rmsd(a.coordinates, b.coordinates, allow_reflection=True) < rmsd_threshold:
        return "mirror", proper
    return "distinct", proper


def group_conformers(calcs: list[Calculation], rmsd_threshold: float = RMSD_THRESHOLD,
                     energy_window: float = ENERGY_WINDOW) -> Grouping:
    """Sort structures into distinct conformers, duplicates and mirror-image pairs.

    Structures are visited from the lowest electronic energy up, so the copy kept of a duplicate
    is the lower-energy one (the better-converged optimisation).
    """
    order = sorted(range(len(calcs)), key=lambda i: (calcs[i].energy is None, calcs[i].energy or 0.0, i))
    grouping = Grouping(kept=[])
    for i in order:
        for k in grouping.kept:
            kind, rmsd = compare_structures(calcs[k], calcs[i], rmsd_threshold, energy_window)
            if kind == "duplicate":
                grouping.duplicates[i] = (k, rmsd)
                break
            if kind == "mirror":
                grouping.mirror_pairs.append((k, i, rmsd))
        else:
            grouping.kept.append(i)
    grouping.kept.sort()
    return grouping


def boltzmann_free_energy(gibbs: np.ndarray, temperature) -> tuple[np.ndarray, np.ndarray]:
    """Ensemble free energy and populations from the conformers' free energies.

    G = -k_B T ln sum_i exp(-G_i / k_B T),  p_i = exp(-(G_i - G) / k_B T)
    (the canonical partition function of a mixture of conformers, e.g. D. A. McQuarrie, Statistical
    Mechanics, 1976). ``gibbs``: (n_conformers,) or (n_conformers, n_T) hartree; ``temperature``: K,
    scalar or (n_T,). Returns G (scalar or (n_T,), hartree) and populations shaped like ``gibbs``.
    Computed with scipy.special.logsumexp on energies relative to the lowest, so nothing overflows.
    """
    from scipy.special import logsumexp

    g = np.asarray(gibbs, dtype=float)
    kt = K_B_EH * np.asarray(temperature, dtype=float)
    g_min = g.min(axis=0)  # relative energies keep the digits that absolute ones (~1e3 Eh) would lose
    x = -(g - g_min) / kt
    log_q = logsumexp(x, axis=0)
    return g_min - kt * log_q, np.exp(x - log_q)


def population_average(values: np.ndarray, populations: np.ndarray) -> np.ndarray:
    """<X> = sum_i p_i X_i over conformers (axis 0), for any per-conformer quantity."""
    return np.sum(np.asarray(populations) * np.asarray(values, dtype=float), axis=0)


def ensemble_heat_capacity(cp, h, populations, temperature):
    """cp of a Boltzmann ensemble of conformers: <cp> + (<H^2> - <H>^2) / (k_B T^2), hartree/K.

    With populations p_i ~ exp(-G_i / k_B T), d(-G_i / k_B T)/dT = H_i / (k_B T^2) gives
    dp_i/dT = p_i (H_i - <H>) / (k_B T^2), so d<H>/dT = <cp> + <(H - <H>)^2> / (k_B T^2): the
    heat capacity of an equilibrium mixture of conformers (the derivation above; the second term is
    the conformational part). It is exactly d<H>/dT when dG_i/dT = -S_i (rrho, qrrho-enthalpy,
    quasi-harmonic); Grimme's qrrho changes S alone, so there it is the consistent estimate, not the
    derivative. Arrays (conformer, temperature) in hartree and hartree/K.
    """
    mean_h = population_average(h, populations)
    return population_average(cp, populations) + population_average((h - mean_h) ** 2, populations) / (
        K_B_EH * np.asarray(temperature) ** 2
    )


def bond_signature(calc: Calculation) -> tuple[tuple[str, str, int], ...]:
    """Counts of bonded element pairs, e.g. (("C", "H", 1), ("C", "N", 1)) for HCN.

    Bonds as :func:`qcthermo.geometry.bond_matrix` finds them (covalent radii of Cordero et al., Dalton
    Trans. 2008, 2832). Conformers share a signature; most constitutional isomers (HCN and HNC) do not.
    """
    if calc.natoms < 2:
        return ()
    i, j = np.nonzero(np.triu(bond_matrix(calc.symbols, calc.coordinates), k=1))
    pairs = Counter(tuple(sorted((calc.symbols[a], calc.symbols[b]))) for a, b in zip(i, j, strict=True))
    return tuple(sorted((a, b, n) for (a, b), n in pairs.items()))


def single_point_mismatch(calc: Calculation, sp: Calculation) -> str | None:
    """Why ``sp`` cannot be a single point of ``calc``'s structure, or None.

    Refused: no energy, another formula, charge or multiplicity (when both files give one), a solvated
    structure's single point in another implicit-solvent model or in the gas phase (not that structure's
    energy). A solvent single point on a gas-phase structure is the solution protocol
    (:mod:`qcthermo.solution`) and is accepted.
    """
    if sp.energy is None:
        return "it has no energy"
    if Counter(sp.symbols) != Counter(calc.symbols):
        return f"its formula {sp.formula} is not {calc.formula}"
    if sp.charge != calc.charge:
        return f"its charge {sp.charge} is not {calc.charge}"
    if sp.multiplicity is not None and calc.multiplicity is not None and sp.multiplicity != calc.multiplicity:
        return f"its multiplicity {sp.multiplicity} is not {calc.multiplicity}"
    if calc.solvent_model and sp.solvent_model != calc.solvent_model:
        return f"its solvent model {sp.solvent_model or 'none (gas)'} is not {calc.solvent_model or 'none (gas)'}"
    return None


def pair_single_point(calc: Calculation, candidates: list[Calculation],
                      max_rmsd: float = SINGLE_POINT_RMSD) -> tuple[int | None, float]:
    """Index of the single point computed on ``calc``'s geometry, and its RMSD (angstrom).

    A candidate must pass :func:`single_point_mismatch` and list the same atoms in the same order; of
    those, the one with the smallest aligned RMSD is taken when below ``max_rmsd``; else (None, best RMSD).
    """
    best, best_rmsd = None, float("inf")
    for j, sp in enumerate(candidates):
        if tuple(sp.symbols) != tuple(calc.symbols) or single_point_mismatch(calc, sp):
            continue
        rmsd = kabsch_rmsd(calc.coordinates, sp.coordinates)
        if rmsd < best_rmsd:
            best, best_rmsd = j, rmsd
    return (best, best_rmsd) if best_rmsd < max_rmsd else (None, best_rmsd)

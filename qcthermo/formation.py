"""Standard heats of formation of gas-phase species from computed energies (docs/formation.md).

Two routes, both at 0 K and 298.15 K, in kJ/mol (the unit of the thermochemical tables):

* **atomization** (Curtiss, Raghavachari, Redfern, Pople, J. Chem. Phys. 1997, 106, 1063, eqs. 1-2):
  the computed atomization energy sum D0 = sum_atoms E(X) - E0(M) (E0 = E + ZPE; a free atom has no ZPE)
  and the experimental heats of formation of the gaseous atoms at 0 K give
  dfH(M, 0 K) = sum_atoms dfH(X, 0 K) - sum D0, and
  dfH(M, 298 K) = dfH(M, 0 K) + [H(M, 298) - H(M, 0)] - sum_atoms [H(X, 298) - H(X, 0)]_element,
  the last term the enthalpy increment of each element in its reference state (graphite, H2(g), ...);
* **reference reaction** (isodesmic, homodesmotic or any balanced reaction the user writes): the computed
  reaction enthalpy at 298.15 K and the known heats of formation of the other species give the target's,
  dfH(X) = [dH_r - sum_(i != X) nu_i dfH(i)] / nu_X (nu > 0 for products, < 0 for reactants).

Everything here is numbers in, numbers out: the run (qcthermo.workflow) gathers each species' energies.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from .units import HARTREE_J, N_A

#: kJ/mol per hartree per molecule
KJ_MOL_PER_EH = HARTREE_J * N_A / 1000.0


@dataclass(frozen=True)
class ElementReference:
    """Experimental data of one element, kJ/mol.

    Attributes:
        formation_0k: dfH(X, g, 0 K), the heat of formation of the gaseous atom at 0 K.
        increment: H(298.15 K) - H(0) of the element in its reference state, per atom.
        reference_state: the state ``increment`` is for.
    """

    formation_0k: float
    increment: float
    reference_state: str


#: NIST-JANAF Thermochemical Tables, 4th ed. (Chase, J. Phys. Chem. Ref. Data Monograph 9, 1998), values
#: from memory; they are the values of Curtiss et al. 1997 (Table of atomic dfH(0 K) and H298 - H0 of the
#: elements, there in kcal/mol: H 51.63/1.01, C 169.98/0.25, N 112.53/1.04, O 58.99/1.04, F 18.47/1.05,
#: Si 106.6/0.76, P 75.42/1.28, S 65.66/1.05, Cl 28.59/1.10) to their rounding. Diatomic reference states
#: give half the molecule's increment per atom (H2: 8.468 / 2).
ELEMENT_REFERENCES: dict[str, ElementReference] = {
    "H": ElementReference(216.035, 8.468 / 2, "H2(g)"),
    "C": ElementReference(711.185, 1.051, "graphite"),
    "N": ElementReference(470.82, 8.670 / 2, "N2(g)"),
    "O": ElementReference(246.79, 8.683 / 2, "O2(g)"),
    "F": ElementReference(77.28, 8.825 / 2, "F2(g)"),
    "Si": ElementReference(446.0, 3.217, "Si(cr)"),
    "P": ElementReference(75.42 * 4.184, 5.360, "P(cr, white)"),  # Curtiss's 75.42 kcal/mol
    "S": ElementReference(274.735, 4.412, "S(cr, rhombic)"),
    "Cl": ElementReference(119.621, 9.181 / 2, "Cl2(g)"),
}


def atomization_energy(e0_molecule: float, atom_energies: Sequence[float]) -> float:
    """sum D0 = sum_atoms E(X) - E0(M), hartree: the energy to take the molecule at 0 K apart into free atoms
    (Curtiss et al., J. Chem. Phys. 1997, 106, 1063, eq. 1). ``atom_energies``: one entry per atom of M."""
    return float(np.sum(atom_energies) - e0_molecule)


def formation_enthalpy_0k(atom_formation_0k: Sequence[float], d0_kj_mol: float) -> float:
    """dfH(M, 0 K) = sum_atoms dfH(X, 0 K) - sum D0, kJ/mol (Curtiss et al. 1997, eq. 1)."""
    return float(np.sum(atom_formation_0k) - d0_kj_mol)


def formation_enthalpy_298(dfh_0k: float, thermal_kj_mol: float, element_increments: Sequence[float]) -> float:
    """dfH(M, 298 K) = dfH(M, 0 K) + [H(M, 298) - H(M, 0)] - sum_atoms [H(X, 298) - H(X, 0)]_element, kJ/mol
    (Curtiss et al. 1997, eq. 2). ``element_increments``: one entry per atom of M."""
    return float(dfh_0k + thermal_kj_mol - np.sum(element_increments))


def formation_enthalpy_0k_from_298(dfh_298: float, thermal_kj_mol: float, element_increments: Sequence[float]) -> float:
    """dfH(M, 0 K) from dfH(M, 298 K): :func:`formation_enthalpy_298` solved the other way."""
    return float(dfh_298 - thermal_kj_mol + np.sum(element_increments))


def reaction_route(dh_reaction_kj_mol: float, target_coefficient: float,
                   others: Sequence[tuple[float, float]]) -> float:
    """dfH of the target from a reaction: [dH_r - sum nu_i dfH(i)] / nu_X, kJ/mol.

    ``target_coefficient``: nu_X, positive on the product side, negative on the reactant side;
    ``others``: (nu_i, dfH(i)) of every other species, signed the same way. Hess's law.
    """
    return float((dh_reaction_kj_mol - sum(nu * h for nu, h in others)) / target_coefficient)


#: bonded when closer than this times the sum of the covalent radii
_BOND_FACTOR = 1.2


def bonds(symbols: Sequence[str], coordinates) -> list[str]:
    """Bond labels "C-H", "C-O", ... (elements in alphabetical order), one per bonded pair.

    Bonded: closer than 1.2 times the sum of the two covalent radii (ASE's natural_cutoffs, Cordero et al.,
    Dalton Trans. 2008, 2832; the factor 1.2 is common practice: the radii sum alone misses C-H at 1.09 A).
    Bond orders are not told apart.
    """
    from ase import Atoms
    from ase.neighborlist import natural_cutoffs, neighbor_list

    atoms = Atoms(list(symbols), positions=np.asarray(coordinates, dtype=float))
    if len(atoms) < 2:
        return []
    i, j = neighbor_list("ij", atoms, natural_cutoffs(atoms, mult=_BOND_FACTOR))
    return ["-".join(sorted((symbols[a], symbols[b]))) for a, b in zip(i, j, strict=True) if a < b]


def normalise_bond(label: str) -> str:
    """"H-C" -> "C-H": the form :func:`bonds` gives; raises ValueError for anything but "X-Y"."""
    parts = [p.strip() for p in label.split("-")]
    if len(parts) != 2 or not all(p.isalpha() for p in parts):
        raise ValueError(f"bond {label!r}: expected two element symbols joined by '-', such as 'C-H'")
    return "-".join(sorted(p.capitalize() for p in parts))


@dataclass(frozen=True)
class FormationInput:
    """One species as the heats of formation need it.

    Attributes:
        name: the species' name.
        symbols: its atoms.
        energy_level: the level of its electronic energy (the high level of a composite).
        e0: E + ZPE of its lowest conformer, hartree per molecule (the 0 K enthalpy).
        h298: its enthalpy at 298.15 K, hartree per molecule (the ensemble's, on the same energy scale).
        bonds: bond labels (:func:`bonds`), for bond-additivity corrections.
        gas: False for a species computed with a solvent model (no gas-phase heat of formation).
        charge: its charge; atomization is for neutral species (an ion's needs a convention for the
            electron's heat of formation, which is the user's to choose through a reference or a reaction).
    """

    name: str
    symbols: tuple[str, ...]
    energy_level: str
    e0: float
    h298: float
    bonds: tuple[str, ...] = ()
    gas: bool = True
    charge: int = 0

    @property
    def thermal_kj_mol(self) -> float:
        """H(298.15) - H(0), kJ/mol."""
        return (self.h298 - self.e0) * KJ_MOL_PER_EH


@dataclass
class FormationScheme:
    """What the user asks for (the reaction file's [heats_of_formation]).

    Attributes:
        atoms: species that are free atoms, each giving its element's energy at its level.
        references: species -> (dfH(298.15 K) in kJ/mol, source).
        reactions: species -> (reaction name, reactants, products) with (coefficient, species) terms.
        atom_corrections: element -> kJ/mol added to an atomization value per atom of the element.
        bond_corrections: bond ("C-H") -> kJ/mol added to an atomization value per bond.
        elements: the experimental element data (default :data:`ELEMENT_REFERENCES`).
    """

    atoms: list[str] = field(default_factory=list)
    references: dict[str, tuple[float, str]] = field(default_factory=dict)
    reactions: dict[str, tuple[str, list, list]] = field(default_factory=dict)
    atom_corrections: dict[str, float] = field(default_factory=dict)
    bond_corrections: dict[str, float] = field(default_factory=dict)
    elements: Mapping[str, ElementReference] = field(default_factory=lambda: ELEMENT_REFERENCES)


#: the route each species' NASA-7 data take, best first: a measured value, then a reference reaction, then
#: atomization (whose errors are those of the level of theory; docs/formation.md)
ROUTE_PREFERENCE = ("reference value", "reaction", "atomization")


def _row(s: FormationInput, route: str, dfh_0k: float, dfh_298: float, **extra) -> dict:
    return {"species": s.name, "formula": _formula(s.symbols), "level": s.energy_level, "route": route,
            "dfH_0K_kJ_mol": dfh_0k, "dfH_298_kJ_mol": dfh_298, "H298_minus_H0_kJ_mol": s.thermal_kj_mol,
            "atomization_energy_kJ_mol": extra.get("d0", np.nan), "correction_kJ_mol": extra.get("correction", 0.0),
            "source": extra.get("source", ""), "notes": extra.get("notes", "")}


def _formula(symbols: Sequence[str]) -> str:
    from .records import hill_formula

    return hill_formula(symbols)


def _increments(s: FormationInput, elements: Mapping[str, ElementReference]) -> list[float]:
    return [elements[el].increment for el in s.symbols]


def _atomization(s: FormationInput, atoms: dict[tuple[str, str], FormationInput],
                 scheme: FormationScheme) -> tuple[dict | None, str | None]:
    """The atomization row of one species, or why there is none."""
    if s.charge:
        return None, "an ion: the atomization route is for neutral species (give a reference value or a reaction)"
    unknown = sorted(set(s.symbols) - set(scheme.elements))
    if unknown:
        return None, f"no experimental atomic data for {', '.join(unknown)}"
    missing = sorted({el for el in s.symbols if (el, s.energy_level) not in atoms})
    if missing:
        return None, f"no atom energy at {s.energy_level} for {', '.join(missing)} (list the atoms in atoms = [...])"
    d0 = atomization_energy(s.e0, [atoms[el, s.energy_level].e0 for el in s.symbols]) * KJ_MOL_PER_EH
    correction = sum(scheme.atom_corrections.get(el, 0.0) for el in s.symbols) + \
        sum(scheme.bond_corrections.get(b, 0.0) for b in s.bonds)
    dfh_0k = formation_enthalpy_0k([scheme.elements[el].formation_0k for el in s.symbols], d0) + correction
    dfh_298 = formation_enthalpy_298(dfh_0k, s.thermal_kj_mol, _increments(s, scheme.elements))
    return _row(s, "atomization", dfh_0k, dfh_298, d0=d0, correction=correction), None


def _from_298(s: FormationInput, route: str, dfh_298: float, scheme: FormationScheme, **extra) -> dict:
    if not set(s.symbols) <= set(scheme.elements):
        return _row(s, route, np.nan, dfh_298, **extra)
    return _row(s, route, formation_enthalpy_0k_from_298(dfh_298, s.thermal_kj_mol, _increments(s, scheme.elements)),
                dfh_298, **extra)


def _by_reaction(target: str, spec: tuple[str, list, list], inputs: Mapping[str, FormationInput],
                 known: dict[str, float]) -> tuple[float | None, str | None]:
    """dfH(298) of ``target`` from its reaction, or None and why (a missing value, mixed levels)."""
    name, reactants, products = spec
    terms = [(-c, n) for c, n in reactants] + [(c, n) for c, n in products]
    absent = [n for _, n in terms if n not in inputs]
    if absent:
        return None, f"reaction {name!r}: species {absent[0]!r} has no usable gas-phase structure"
    levels = {inputs[n].energy_level for _, n in terms}
    if len(levels) > 1:
        return None, f"reaction {name!r}: species at different levels ({', '.join(sorted(levels))})"
    others = [(c, n) for c, n in terms if n != target]
    unknown = [n for _, n in others if n not in known]
    if unknown:
        return None, f"reaction {name!r}: no reference value or reaction route for {unknown[0]!r}"
    dh = sum(c * inputs[n].h298 for c, n in terms) * KJ_MOL_PER_EH
    nu = sum(c for c, n in terms if n == target)
    return reaction_route(dh, nu, [(c, known[n]) for c, n in others]), None


def heats_of_formation(inputs: Mapping[str, FormationInput],
                       scheme: FormationScheme) -> tuple[list[dict], list[tuple[str, str]]]:
    """Every route for every species: rows of heats_of_formation.csv, and (species, reason) of what is missing.

    Atomization for every gas-phase species whose elements all have an atom at its energy level (the atoms
    themselves included: their value is the experimental one by construction); the reference value for each
    species given one; the reaction route for each species given a reaction, resolved in dependency order
    (a reaction may use a species derived by another reaction). The row NASA-7 data should use is marked
    ``nasa7`` (:data:`ROUTE_PREFERENCE`).
    """
    gas = {n: s for n, s in inputs.items() if s.gas}
    notes = [(n, "computed with a solvent model: heats of formation are for the gas phase") for n, s in inputs.items()
             if not s.gas and (n in scheme.references or n in scheme.reactions)]
    notes += [(n, "no heat of formation: not a usable minimum (a transition state, or no usable structure)")
              for n in dict.fromkeys([*scheme.references, *scheme.reactions]) if n not in inputs]
    atoms: dict[tuple[str, str], FormationInput] = {}
    for n in scheme.atoms:
        if n in gas and len(gas[n].symbols) == 1:
            atoms.setdefault((gas[n].symbols[0], gas[n].energy_level), gas[n])
    rows = []
    for n, s in gas.items():
        row, why = _atomization(s, atoms, scheme)
        if row is not None:
            rows.append(row)
        elif n not in scheme.references and n not in scheme.reactions:
            notes.append((n, f"no heat of formation: {why}"))
    known = {n: value for n, (value, _) in scheme.references.items() if n in gas}
    rows += [_from_298(gas[n], "reference value", value, scheme, source=scheme.references[n][1])
             for n, value in known.items()]
    pending = {n: spec for n, spec in scheme.reactions.items() if n in gas}
    while pending:
        solved = {n: _by_reaction(n, spec, gas, known) for n, spec in pending.items()}
        done = {n: value for n, (value, _) in solved.items() if value is not None}
        if not done:
            notes += [(n, f"no heat of formation by reaction: {why}") for n, (_, why) in solved.items()]
            break
        for n, value in done.items():
            rows.append(_from_298(gas[n], f"reaction {pending[n][0]}", value, scheme))
            known.setdefault(n, value)
            del pending[n]
    return _mark_preferred(rows), notes


def _mark_preferred(rows: list[dict]) -> list[dict]:
    def rank(row: dict) -> int:
        return next(i for i, r in enumerate(ROUTE_PREFERENCE) if row["route"].startswith(r))

    best: dict[str, dict] = {}
    for row in rows:
        if row["species"] not in best or rank(row) < rank(best[row["species"]]):
            best[row["species"]] = row
    order = {n: i for i, n in enumerate(dict.fromkeys(r["species"] for r in rows))}
    for row in rows:
        row["nasa7"] = row is best[row["species"]]
    return sorted(rows, key=lambda r: (order[r["species"]], rank(r)))


def preferred_values(rows: Sequence[Mapping]) -> dict[str, float]:
    """species -> dfH(298.15 K), kJ/mol, of the row each species' NASA-7 data use."""
    return {r["species"]: float(r["dfH_298_kJ_mol"]) for r in rows if r["nasa7"]}


__all__ = ["ELEMENT_REFERENCES", "ElementReference", "FormationInput", "FormationScheme", "atomization_energy",
           "bonds", "formation_enthalpy_0k", "formation_enthalpy_298", "heats_of_formation", "reaction_route"]

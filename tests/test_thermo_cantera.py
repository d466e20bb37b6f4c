"""Standard entropies and heat capacities against Cantera's bundled GRI-Mech 3.0 data (gri30.yaml).

The reference values are GRI-Mech 3.0's NASA-7 polynomials (1 atm reference state) evaluated by Cantera
at 298.15 K. The molecules' experimental geometries (bond lengths in angstrom, angles in degrees) and
fundamental wavenumbers (cm^-1) below are typed in from memory of the usual tables (Herzberg; NIST
CCCBDB experimental data); none was read from a file while writing this test. The RRHO model should
agree within 0.5 J/(mol K) for S and 0.35 J/(mol K) for Cp for rigid molecules without low-lying
electronic states or internal rotors (docs/thermo.md, "Model"). H2 is left out: its rotational levels are
too widely spaced for the classical rotor at 298 K (see test_partition_sums.py).

The geometry builders here are shared with test_thermo_ase.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from qcthermo import Conditions, Molecule, thermochemistry
from qcthermo.units import entropy_to_j_mol_k


def linear_chain(symbols, bonds):
    """Atoms on the z axis, ``bonds`` the successive distances (angstrom)."""
    z = np.concatenate([[0.0], np.cumsum(bonds)])
    return list(symbols), np.c_[np.zeros_like(z), np.zeros_like(z), z]


def bent_triatomic(center, ligand, r, angle):
    """Y-X-Y with bond length ``r`` and angle ``angle`` (degrees)."""
    a = np.radians(angle) / 2
    xyz = [[0, 0, 0], [r * np.sin(a), 0, r * np.cos(a)], [-r * np.sin(a), 0, r * np.cos(a)]]
    return [center, ligand, ligand], np.array(xyz)


def tetrahedral(center, ligand, r):
    """XY4 with Td symmetry."""
    v = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]]) / np.sqrt(3) * r
    return [center] + [ligand] * 4, np.vstack([[0, 0, 0], v])


def pyramidal(center, ligand, r, angle):
    """XY3 with C3v symmetry and equal Y-X-Y angles ``angle`` (degrees)."""
    # a ligand at polar angle b from -z: cos(angle) = 1 - 1.5 sin^2(b)
    sb = np.sqrt((1 - np.cos(np.radians(angle))) / 1.5)
    cb = np.sqrt(1 - sb**2)
    pts = [[r * sb * np.cos(p), r * sb * np.sin(p), -r * cb] for p in (0, 2 * np.pi / 3, 4 * np.pi / 3)]
    return [center] + [ligand] * 3, np.vstack([[0, 0, 0], pts])


def planar_x2y4(x, y, rxx, rxy, angle):
    """Planar D2h Y2X=XY2 (ethylene-like) with Y-X-Y angle ``angle``."""
    a = np.radians(angle) / 2
    s, c = rxy * np.sin(a), rxx / 2 + rxy * np.cos(a)
    xyz = [[0, 0, rxx / 2], [0, 0, -rxx / 2], [s, 0, c], [-s, 0, c], [s, 0, -c], [-s, 0, -c]]
    return [x, x, y, y, y, y], np.array(xyz)


def planar_xy2z(x, y, z, rxz, rxy, angle):
    """Planar C2v Y2X=Z (formaldehyde-like) with Y-X-Y angle ``angle``."""
    a = np.radians(angle) / 2
    xyz = [[0, 0, 0], [0, 0, rxz], [rxy * np.sin(a), 0, -rxy * np.cos(a)], [-rxy * np.sin(a), 0, -rxy * np.cos(a)]]
    return [x, z, y, y], np.array(xyz)


# name: (geometry, fundamentals cm^-1, multiplicity, symmetry number (common practice)); all from memory
MOLECULES = {
    "N2": (linear_chain("NN", [1.0977]), [2330], 1, 2),
    "O2": (linear_chain("OO", [1.2075]), [1556], 3, 2),
    "CO": (linear_chain("CO", [1.1283]), [2143], 1, 1),
    "CO2": (linear_chain("OCO", [1.160, 1.160]), [1333, 667, 667, 2349], 1, 2),
    "HCN": (linear_chain("HCN", [1.064, 1.156]), [3311, 712, 712, 2097], 1, 1),
    "N2O": (linear_chain("NNO", [1.128, 1.184]), [1285, 589, 589, 2224], 1, 1),
    "C2H2": (linear_chain("HCCH", [1.063, 1.203, 1.063]), [3374, 1974, 3289, 612, 612, 730, 730], 1, 2),
    "H2O": (bent_triatomic("O", "H", 0.9572, 104.52), [3657, 1595, 3756], 1, 2),
    "CH4": (tetrahedral("C", "H", 1.087), [2917, 1534, 1534, 3019, 3019, 3019, 1306, 1306, 1306], 1, 12),
    "NH3": (pyramidal("N", "H", 1.012, 106.7), [3337, 950, 3444, 3444, 1627, 1627], 1, 3),
    "C2H4": (
        planar_x2y4("C", "H", 1.339, 1.086, 117.4),
        [3026, 1623, 1342, 1023, 3103, 1236, 949, 943, 3106, 826, 2989, 1444],
        1,
        4,
    ),
    "CH2O": (planar_xy2z("C", "H", "O", 1.205, 1.111, 116.1), [2783, 1746, 1500, 1167, 2843, 1249], 1, 2),
}


def molecule(name: str, with_sigma: bool = True) -> Molecule:
    (symbols, xyz), freqs, mult, sigma = MOLECULES[name]
    return Molecule(symbols, xyz, freqs, multiplicity=mult, symmetry_number=sigma if with_sigma else None, name=name)


@pytest.fixture(scope="module")
def gri30():
    import cantera as ct  # a test dependency (pyproject.toml): missing is a failure, not a skip

    return ct.Solution("gri30.yaml")


@pytest.mark.parametrize("name", sorted(MOLECULES))
def test_entropy_and_heat_capacity_match_gri30(gri30, name):
    # reference: Cantera's bundled gri30.yaml (GRI-Mech 3.0), 1 atm, 298.15 K
    species = gri30.species(name)
    assert species.thermo.reference_pressure == pytest.approx(101325.0)
    s_ref = species.thermo.s(298.15) / 1000.0  # J/(kmol K) -> J/(mol K)
    cp_ref = species.thermo.cp(298.15) / 1000.0
    res = thermochemistry(molecule(name, with_sigma=False), Conditions(temperature=298.15, standard_state="1atm"))
    assert res.symmetry_number == MOLECULES[name][3]  # inferred from the geometry; common practice values
    assert entropy_to_j_mol_k(res.entropy) == pytest.approx(s_ref, abs=0.5)
    assert entropy_to_j_mol_k(res.cp) == pytest.approx(cp_ref, abs=0.35)

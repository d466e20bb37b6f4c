"""Ethane, methanol and propane from experimental geometries and fundamentals, for the rotor checks.

Geometries (bond lengths angstrom, angles degrees) and fundamentals (cm^-1) are typed in from memory of the
usual tables (NIST CCCBDB experimental geometries; T. Shimanouchi, Tables of Molecular Vibrational
Frequencies, NSRDS-NBS 39, 1972); none was read from a file while writing this. The methanol torsion (270
cm^-1) and the propane torsions (216, 268 cm^-1) are the least certain of them.

A fundamental list carries no normal-mode vectors, so the vectors are built here: the torsional modes are
the torsion displacements themselves (for propane's two methyl torsions their sum and difference, as in the
molecule's a2 and b1 modes), the other modes any orthonormal completion in mass-weighted coordinates
orthogonal to them and to the rigid-body motions. That is all the projection of rotors.py looks at.
"""

from __future__ import annotations

import numpy as np

from qcthermo import Molecule
from qcthermo.records import atomic_masses
from qcthermo.rotors import find_torsions, torsion_displacement


def place(a, b, c, bond, angle, dihedral):
    """Position of atom d bonded to c, with angle b-c-d and dihedral a-b-c-d (degrees)."""
    bc = (c - b) / np.linalg.norm(c - b)
    n = np.cross(b - a, bc)
    n /= np.linalg.norm(n)
    m = np.cross(n, bc)
    th, ph = np.radians(angle), np.radians(dihedral)
    return c + bond * (-np.cos(th) * bc + np.sin(th) * np.cos(ph) * m + np.sin(th) * np.sin(ph) * n)


def zmatrix(rows):
    """Symbols and coordinates of a Z-matrix: (symbol,), (symbol, b, r), (symbol, b, r, a, angle), then
    (symbol, b, r, a, angle, d, dihedral), atom indices 0-based."""
    symbols, xyz = [], []
    for row in rows:
        symbols.append(row[0])
        if len(xyz) == 0:
            xyz.append(np.zeros(3))
        elif len(xyz) == 1:
            xyz.append(np.array([0.0, 0.0, row[2]]))
        elif len(row) == 5:
            b, r, a, angle = row[1:]
            xyz.append(place(xyz[a] + np.array([1.0, 0.0, 0.0]), xyz[a], xyz[b], r, angle, 180.0))
        else:
            b, r, a, angle, d, dihedral = row[1:]
            xyz.append(place(xyz[d], xyz[a], xyz[b], r, angle, dihedral))
    return symbols, np.array(xyz)


def _methyl(c, partner, ref, r, angle, start=180.0):
    """The three H of a staggered methyl on atom ``c`` (bonded to ``partner``, dihedral to ``ref``)."""
    return [("H", c, r, partner, angle, ref, start + turn) for turn in (0.0, 120.0, 240.0)]


ETHANE = zmatrix([("C",), ("C", 0, 1.535), ("H", 0, 1.094, 1, 111.2),
                  ("H", 0, 1.094, 1, 111.2, 2, 120.0), ("H", 0, 1.094, 1, 111.2, 2, -120.0),
                  *_methyl(1, 0, 2, 1.094, 111.2)])
METHANOL = zmatrix([("C",), ("O", 0, 1.427), ("H", 1, 0.956, 0, 108.9), *_methyl(0, 1, 2, 1.094, 109.5)])
PROPANE = zmatrix([("C",), ("C", 0, 1.526), ("C", 1, 1.526, 0, 112.4),
                   ("H", 1, 1.096, 0, 109.4, 2, 121.9), ("H", 1, 1.096, 0, 109.4, 2, -121.9),
                   *_methyl(0, 1, 2, 1.091, 111.0), *_methyl(2, 1, 0, 1.091, 111.0)])

# gri30 name: (geometry, torsional fundamentals, the other fundamentals); all from memory (module docstring)
MOLECULES = {
    "C2H6": (ETHANE, [289], [2954, 1388, 995, 2896, 1379, 2969, 2969, 1468, 1468, 822, 822, 2985, 2985, 1469,
                             1469, 1190, 1190]),
    "CH3OH": (METHANOL, [270], [3681, 3000, 2844, 1477, 1455, 1345, 1060, 1033, 2960, 1477, 1165]),
    "C3H8": (PROPANE, [216, 268], [2977, 2962, 2887, 1476, 1462, 1392, 1158, 869, 369, 2967, 1451, 1278, 940,
                                   2968, 2887, 1464, 1378, 1338, 1054, 922, 748, 2973, 2968, 1472, 1192]),
}
#: experimental barriers V3 of the methyl torsions, cm^-1 (from memory: ethane 2.9 kcal/mol, methanol 1.07
#: kcal/mol, propane 3.3 kcal/mol)
BARRIERS_CM = {"C2H6": 1024.0, "CH3OH": 373.0, "C3H8": 1150.0}


def normal_modes(symbols, xyz, n_other: int, seed: int = 1) -> np.ndarray:
    """(modes, N, 3) Cartesian vectors: the torsional modes first (see the module docstring), then n_other."""
    m = atomic_masses(symbols)
    w = np.sqrt(m)[:, None]
    torsions = [(torsion_displacement(xyz, m, t.top, t.bond) * w).ravel() for t in find_torsions(symbols, xyz, m)]
    units = [t / np.linalg.norm(t) for t in torsions]
    if len(units) == 2:
        units = [units[0] + units[1], units[0] - units[1]]
    torsional = np.array([u / np.linalg.norm(u) for u in units])
    rel = xyz - m @ xyz / m.sum()
    rigid = [np.tile(e, (len(m), 1)) * w for e in np.eye(3)] + [np.cross(e, rel) * w for e in np.eye(3)]
    start = np.hstack([np.array([r.ravel() for r in rigid]).T, torsional.T,
                       np.random.default_rng(seed).normal(size=(3 * len(m), n_other))])
    basis, _ = np.linalg.qr(start)
    vectors = np.vstack([torsional, basis[:, 6 + len(torsional):].T])
    return vectors.reshape(len(vectors), len(m), 3) / w[None]


def molecule(name: str, **kwargs) -> Molecule:
    """The molecule with its fundamentals (torsions first) and their mode vectors."""
    (symbols, xyz), torsional, other = MOLECULES[name]
    modes = normal_modes(symbols, xyz, len(other))
    return Molecule(symbols, xyz, np.array(torsional + other, dtype=float), normal_modes=modes, name=name, **kwargs)

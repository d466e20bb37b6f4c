"""Rigid-body geometry of a molecule: centre of mass, moments of inertia, aligned RMSD.

Units: coordinates angstrom, masses dalton, moments of inertia u*angstrom^2.
"""

from __future__ import annotations

import numpy as np

from .units import AMU

#: 1 u*angstrom^2 in kg m^2
AMU_ANGSTROM2_KG_M2 = AMU * 1e-20


def center_of_mass(coordinates: np.ndarray, masses: np.ndarray) -> np.ndarray:
    """R_cm = sum_i m_i r_i / sum_i m_i, angstrom."""
    masses = np.asarray(masses, dtype=float)
    return masses @ np.asarray(coordinates, dtype=float) / masses.sum()


def inertia_tensor(coordinates: np.ndarray, masses: np.ndarray) -> np.ndarray:
    """I = sum_i m_i (|r_i|^2 1 - r_i r_i^T) about the centre of mass, u*angstrom^2."""
    r = np.asarray(coordinates, dtype=float) - center_of_mass(coordinates, masses)
    m = np.asarray(masses, dtype=float)
    r2 = np.einsum("i,ij,ij->", m, r, r)
    return r2 * np.eye(3) - np.einsum("i,ij,ik->jk", m, r, r)


def principal_moments(coordinates: np.ndarray, masses: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Principal moments (ascending, u*angstrom^2) and the axes as columns of a (3, 3) array."""
    moments, axes = np.linalg.eigh(inertia_tensor(coordinates, masses))
    return np.clip(moments, 0.0, None), axes


def is_linear(coordinates: np.ndarray, masses: np.ndarray, tolerance: float = 1e-3) -> bool:
    """True for a linear molecule (two or more atoms): smallest principal moment ~0.

    The test is relative, I_min / I_max < ``tolerance``, not an absolute coordinate tolerance: a
    linear molecule bent by optimiser noise (e.g. CO2 off by 0.01 degrees) stays linear, while a
    molecule bent by 0.5 degrees or more is not (I_min/I_max ~ sin^2(theta)/4 ~ 2e-5 for CO2 at
    0.5 degrees, so the default tolerance keeps it linear; for bent species such as water the ratio
    is ~0.3).
    """
    if len(masses) < 2:
        return False
    moments, _ = principal_moments(coordinates, masses)
    return bool(moments[2] > 0 and moments[0] / moments[2] < tolerance)


#: two atoms are bonded when closer than this factor times the sum of their covalent radii (common practice)
BOND_FACTOR = 1.2


def covalent_radii(symbols) -> np.ndarray:
    """Single-bond covalent radii, angstrom, from ASE's tables (Cordero et al., Dalton Trans. 2008, 2832)."""
    from ase.data import atomic_numbers
    from ase.data import covalent_radii as radii

    return np.array([radii[atomic_numbers[s]] for s in symbols])


def bond_matrix(symbols, coordinates: np.ndarray) -> np.ndarray:
    """(N, N) bool, True where two atoms are bonded: closer than :data:`BOND_FACTOR` x (r_i + r_j)."""
    from scipy.spatial.distance import pdist, squareform

    radii = covalent_radii(symbols)
    if len(radii) < 2:
        return np.zeros((len(radii), len(radii)), dtype=bool)
    d = squareform(pdist(np.asarray(coordinates, dtype=float)))
    bonded = d < BOND_FACTOR * (radii[:, None] + radii[None, :])
    np.fill_diagonal(bonded, False)
    return bonded


def kabsch_rmsd(
    a: np.ndarray, b: np.ndarray, masses: np.ndarray | None = None, allow_reflection: bool = False
) -> float:
    """RMSD (angstrom) of two geometries, atoms in the given order, after the best superposition.

    Both are centred (mass-weighted when ``masses`` is given) and ``b`` is rotated onto ``a`` with the
    Kabsch algorithm (W. Kabsch, Acta Cryst. A 1976, 32, 922). With ``allow_reflection`` the best
    improper rotation is allowed too, so a mirror image gives ~0: comparing both values tells
    enantiomers (only the reflected RMSD is small) from duplicates (the proper RMSD is small).
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    if a.shape != b.shape:
        raise ValueError("geometries differ in the number of atoms")
    w = np.ones(len(a)) if masses is None else np.asarray(masses, dtype=float)
    a = a - w @ a / w.sum()
    b = b - w @ b / w.sum()
    u, _, vt = np.linalg.svd((b * w[:, None]).T @ a)
    flipped = u.copy()
    flipped[:, -1] *= -1
    proper, improper = (u @ vt, flipped @ vt) if np.linalg.det(u @ vt) > 0 else (flipped @ vt, u @ vt)
    candidates = (proper, improper) if allow_reflection else (proper,)
    return min(_wrmsd(a, b @ rot, w) for rot in candidates)


def _wrmsd(a: np.ndarray, b: np.ndarray, w: np.ndarray) -> float:
    return float(np.sqrt(np.sum(w * np.sum((a - b) ** 2, axis=1)) / w.sum()))

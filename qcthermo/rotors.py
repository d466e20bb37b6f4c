"""Hindered internal rotors: torsions from the structure, reduced moments, the torsional mode, the 1-D rotor.

Units: coordinates angstrom, masses dalton (u), moments of inertia u*angstrom^2, energies hartree (Eh) per
molecule, entropies and heat capacities Eh/K, wavenumbers cm^-1, angles radians unless named _deg.

The model (docs/rotors.md): a torsion about a single bond is a rigid top turning against the rest of the
molecule with the reduced moment I(2,3) of Pitzer (K. S. Pitzer, J. Chem. Phys. 1946, 14, 239; the name
I(2,3) is that of A. L. L. East and L. Radom, J. Chem. Phys. 1997, 106, 6655), in a periodic potential
V(phi): a cosine V0/2 (1 - cos n phi) whose barrier follows from the harmonic frequency of the torsional
normal mode (P. Y. Ayala and H. B. Schlegel, J. Chem. Phys. 1998, 108, 2314, who also identify that mode by
projecting the torsion on the normal modes), or a Fourier series fitted to a relaxed scan. The levels
are the eigenvalues of H = -B d^2/dphi^2 + V(phi) in the free-rotor basis exp(i m phi); the partition
function is their Boltzmann sum over the full turn divided by the internal symmetry number (K. S. Pitzer
and W. D. Gwinn, J. Chem. Phys. 1942, 10, 428, tabulate the same model's thermodynamic functions).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .geometry import bond_matrix, center_of_mass, covalent_radii, inertia_tensor
from .units import AMU, HARTREE_J, HBAR, K_B_EH, WAVENUMBER_EH

#: angstrom; a top whose atoms all lie closer than this to the bond axis is linear (turning it moves nothing)
LINEAR_TOP_TOLERANCE = 0.1
#: angstrom; a top turned by 2 pi / k is the same top when every atom lands this close to one of its element
TOP_SYMMETRY_TOLERANCE = 0.15
#: neighbour counts at which an atom has no multiple bond (common practice)
SATURATED = {"C": 4, "Si": 4, "Ge": 4, "N": 3, "P": 3, "As": 3, "O": 2, "S": 2, "Se": 2}
#: a bond between two unsaturated atoms is single when at least this fraction of the sum of single-bond
#: covalent radii (C=C 1.34 of 1.52 A is 0.88, conjugated C-C 1.47 is 0.97; common practice)
SINGLE_BOND_FRACTION = 0.93
#: a torsion whose projection on its assigned modes is below this is left harmonic (docs/rotors.md)
MIN_OVERLAP = 0.5
#: below this overlap the assignment is reported as ambiguous
CLEAR_OVERLAP = 0.8
#: the start of every warning note of this module (the run turns them into audit findings)
ROTOR_WARNING = "warning: internal rotor: "
#: the basis holds free-rotor levels up to V_max + this many k T_max (the rest weigh below e^-40)
BASIS_KT = 40.0
#: largest |m| of the free-rotor basis
MAX_BASIS_M = 2000


# --------------------------------------------------------------------------------------------------
# structure: bonds, tops, reduced moments


@dataclass(frozen=True)
class Torsion:
    """A rotatable single bond j-k and its top.

    Attributes:
        atoms: (i, j, k, l), 0-based: j-k the bond, i bonded to j, l bonded to k (the dihedral reported).
        top: the atoms on k's side (k included), the side with the smaller moment about the bond.
        symmetry_number: sigma_int, the indistinguishable positions of the rotor in one turn.
        reduced_moment: I(2,3), u*angstrom^2.
    """

    atoms: tuple[int, int, int, int]
    top: tuple[int, ...]
    symmetry_number: int
    reduced_moment: float

    @property
    def bond(self) -> tuple[int, int]:
        return self.atoms[1], self.atoms[2]

    def label(self, symbols) -> str:
        """e.g. "C1-C2" (atoms numbered from 1, as the logs number them)."""
        j, k = self.bond
        return f"{symbols[j]}{j + 1}-{symbols[k]}{k + 1}"


def torsion_displacement(coordinates, masses, top, bond) -> np.ndarray:
    """Cartesian displacement (N, 3), angstrom per radian, of turning ``top`` about the ``bond`` axis with
    the molecule's linear and angular momentum removed (Eckart conditions).

    The top turns rigidly, v_a = e x (r_a - r_j); a rigid translation V = -sum m v / M and rotation
    Omega = -I^-1 sum m (r - R) x v of the whole molecule then cancel its momentum and angular momentum.
    Turning the other side instead gives the same vector, as the two differ by an overall rotation.
    """
    r = np.asarray(coordinates, dtype=float)
    m = np.asarray(masses, dtype=float)
    j, k = bond
    axis = (r[k] - r[j]) / np.linalg.norm(r[k] - r[j])
    v = np.zeros_like(r)
    moving = list(top)
    v[moving] = np.cross(axis, r[moving] - r[j])
    v -= m @ v / m.sum()
    rel = r - center_of_mass(r, m)
    angular = np.einsum("a,ab->b", m, np.cross(rel, v))
    omega = -np.linalg.solve(inertia_tensor(r, m), angular)
    return v + np.cross(omega, rel)


def reduced_moment(coordinates, masses, top, bond) -> float:
    """I(2,3) = sum_a m_a |v_a|^2 of :func:`torsion_displacement`, u*angstrom^2.

    This is the kinetic energy of the internal rotation at unit angular speed with the overall rotation
    and translation separated: Pitzer's reduced moment (K. S. Pitzer, J. Chem. Phys. 1946, 14, 239), the
    I(2,3) of A. L. L. East and L. Radom, J. Chem. Phys. 1997, 106, 6655. For a symmetric top on a
    principal axis it is A_top A_frame / (A_top + A_frame).
    """
    v = torsion_displacement(coordinates, masses, top, bond)
    return float(np.einsum("a,ab,ab->", np.asarray(masses, dtype=float), v, v))


def _sides(bonded: np.ndarray, j: int, k: int) -> tuple[np.ndarray, np.ndarray] | None:
    """Atoms on j's side and on k's side of the bond j-k, or None when the bond is in a ring."""
    from scipy.sparse.csgraph import connected_components

    cut = bonded.copy()
    cut[j, k] = cut[k, j] = False
    _, label = connected_components(cut, directed=False)
    if label[j] == label[k]:
        return None
    return np.flatnonzero(label == label[j]), np.flatnonzero(label == label[k])


def _is_single(symbols, bonded: np.ndarray, radii: np.ndarray, distance: float, j: int, k: int) -> bool:
    """A bond with a saturated end, or long enough for a single bond (:data:`SINGLE_BOND_FRACTION`)."""
    saturated = [bonded[a].sum() >= SATURATED.get(symbols[a], 99) for a in (j, k)]
    return any(saturated) or distance >= SINGLE_BOND_FRACTION * (radii[j] + radii[k])


def _off_axis(coordinates: np.ndarray, atoms, j: int, k: int) -> np.ndarray:
    """Distances of ``atoms`` from the line through j and k, angstrom."""
    axis = (coordinates[k] - coordinates[j]) / np.linalg.norm(coordinates[k] - coordinates[j])
    rel = coordinates[list(atoms)] - coordinates[j]
    return np.linalg.norm(rel - np.outer(rel @ axis, axis), axis=1)


def side_symmetry(symbols, coordinates: np.ndarray, side, j: int, k: int) -> int:
    """Order of the rotation axis of one side about the bond: the lcm of the k in (2, 3) for which the side
    turned by 2 pi / k lands on itself (each atom within :data:`TOP_SYMMETRY_TOLERANCE` of an atom of its
    element): 3 for CH3, CF3, C(CH3)3; 2 for C6H5; 1 otherwise."""
    from scipy.spatial.transform import Rotation

    r = np.asarray(coordinates, dtype=float)
    atoms = np.asarray(side)
    axis = (r[k] - r[j]) / np.linalg.norm(r[k] - r[j])
    order = 1
    for fold in (2, 3):
        turned = Rotation.from_rotvec(axis * 2 * np.pi / fold).apply(r[atoms] - r[j]) + r[j]
        d = np.linalg.norm(turned[:, None, :] - r[atoms][None, :, :], axis=-1)
        element = np.asarray(symbols)[atoms]
        same = element[:, None] == element[None, :]
        if np.all(np.min(np.where(same, d, np.inf), axis=1) < TOP_SYMMETRY_TOLERANCE):
            order = math.lcm(order, fold)
    return order


def _neighbour(bonded: np.ndarray, coordinates: np.ndarray, a: int, other: int) -> int:
    """The neighbour of ``a`` (not ``other``) farthest from the a-other axis, for a well-defined dihedral."""
    candidates = [b for b in np.flatnonzero(bonded[a]) if b != other]
    return int(candidates[int(np.argmax(_off_axis(coordinates, candidates, a, other)))])


def make_torsion(symbols, coordinates, masses, j: int, k: int, bonded: np.ndarray | None = None) -> Torsion | None:
    """The torsion about the bond j-k (0-based), or None when it is in a ring, ends at a terminal atom or a
    top is linear; the top is the side with the smaller moment about the bond."""
    r = np.asarray(coordinates, dtype=float)
    bonded = bond_matrix(symbols, r) if bonded is None else bonded
    if bonded[j].sum() < 2 or bonded[k].sum() < 2:
        return None
    sides = _sides(bonded, j, k)
    if sides is None:
        return None
    side_j, side_k = sides
    if any(np.all(_off_axis(r, side, j, k) < LINEAR_TOP_TOLERANCE) for side in sides):
        return None
    m = np.asarray(masses, dtype=float)
    moments = [float(np.sum(m[side] * _off_axis(r, side, j, k) ** 2)) for side in sides]
    if moments[0] < moments[1]:
        j, k, side_j, side_k = k, j, side_k, side_j
    sigma = math.lcm(*(side_symmetry(symbols, r, side, j, k) for side in (side_j, side_k)))
    atoms = (_neighbour(bonded, r, j, k), j, k, _neighbour(bonded, r, k, j))
    top = tuple(int(a) for a in side_k)
    return Torsion(atoms=atoms, top=top, symmetry_number=sigma, reduced_moment=reduced_moment(r, m, top, (j, k)))


def find_torsions(symbols, coordinates, masses) -> list[Torsion]:
    """Every rotatable single bond: between two non-terminal heavy atoms, not in a ring, both tops not linear.

    Bonds from covalent radii (:func:`qcthermo.geometry.bond_matrix`); single when an end is saturated or
    the bond is long enough (:data:`SINGLE_BOND_FRACTION`), so C=C, C#C and amide C-N bonds are not rotors.
    """
    r = np.asarray(coordinates, dtype=float)
    if len(symbols) < 4:
        return []
    bonded = bond_matrix(symbols, r)
    radii = covalent_radii(symbols)
    found = []
    for j, k in zip(*np.nonzero(np.triu(bonded, k=1)), strict=True):
        if "H" in (symbols[j], symbols[k]):
            continue
        if not _is_single(symbols, bonded, radii, float(np.linalg.norm(r[j] - r[k])), j, k):
            continue
        torsion = make_torsion(symbols, r, masses, int(j), int(k), bonded)
        if torsion is not None:
            found.append(torsion)
    return found


def dihedral_angles(frames, atoms) -> np.ndarray:
    """Dihedral i-j-k-l of each geometry in ``frames`` ((F, N, 3) or (N, 3)), radians in (-pi, pi].

    The IUPAC sign convention: positive when, looking along j -> k, the bond k-l is turned clockwise from
    i-j (IUPAC, Pure Appl. Chem. 1996, 68, 2193; from memory).
    """
    x = np.asarray(frames, dtype=float)
    i, j, k, l = atoms
    b0, b1, b2 = x[..., j, :] - x[..., i, :], x[..., k, :] - x[..., j, :], x[..., l, :] - x[..., k, :]
    n1, n2 = np.cross(b0, b1), np.cross(b1, b2)
    m1 = np.cross(n1, b1 / np.linalg.norm(b1, axis=-1, keepdims=True))
    return np.arctan2(np.einsum("...i,...i", m1, n2), np.einsum("...i,...i", n1, n2))


# --------------------------------------------------------------------------------------------------
# which normal mode is the torsion


def mode_overlaps(displacements: np.ndarray, modes: np.ndarray, masses) -> np.ndarray:
    """(rotors, modes) squared cosines between torsion displacements and normal modes, in mass-weighted
    coordinates (where the modes are orthonormal, so each row sums to at most 1).

    P. Y. Ayala and H. B. Schlegel, J. Chem. Phys. 1998, 108, 2314: the torsion's projection on the modes.
    """
    w = np.sqrt(np.asarray(masses, dtype=float))[None, :, None]
    q = (np.asarray(displacements) * w).reshape(len(displacements), -1)
    ell = (np.asarray(modes) * w).reshape(len(modes), -1)
    q = q / np.linalg.norm(q, axis=1, keepdims=True)
    ell = ell / np.linalg.norm(ell, axis=1, keepdims=True)
    return (q @ ell.T) ** 2


def assign_modes(overlaps: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """One mode per torsion, maximising the summed overlap (scipy's linear_sum_assignment).

    Returns (mode index, overlap with that mode, overlap with all the assigned modes) per torsion; the last
    is what says whether the torsion is described by the torsional modes together (the two methyl torsions
    of propane are the sum and the difference of two modes, ~0.5 each).
    """
    from scipy.optimize import linear_sum_assignment

    rows, cols = linear_sum_assignment(-overlaps)
    order = np.argsort(rows)
    mode = cols[order]
    return mode, overlaps[np.arange(len(mode)), mode], overlaps[:, mode].sum(axis=1)


# --------------------------------------------------------------------------------------------------
# the 1-D hindered rotor


@dataclass(frozen=True)
class TorsionPotential:
    """V(phi) = sum_k a_k cos(k phi) + b_k sin(k phi), Eh, k = 0 .. K (b_0 unused); min over phi is 0."""

    cos: np.ndarray
    sin: np.ndarray

    def __call__(self, phi):
        k = np.arange(len(self.cos))
        phi = np.asarray(phi, dtype=float)[..., None]
        return np.sum(self.cos * np.cos(k * phi) + self.sin * np.sin(k * phi), axis=-1)

    def extrema(self) -> tuple[float, float]:
        """(minimum, maximum) of V over a fine grid, Eh."""
        values = self(np.linspace(0.0, 2 * np.pi, 3601))
        return float(values.min()), float(values.max())


def rotational_constant(reduced_moment_u_a2: float) -> float:
    """B = hbar^2 / (2 I), Eh, for I in u*angstrom^2."""
    return HBAR**2 / (2.0 * reduced_moment_u_a2 * AMU * 1e-20) / HARTREE_J


def cosine_potential(barrier: float, periodicity: int) -> TorsionPotential:
    """V(phi) = V0/2 (1 - cos n phi), Eh (minimum 0 at phi = 0, maxima V0)."""
    cos = np.zeros(periodicity + 1)
    cos[0], cos[periodicity] = barrier / 2, -barrier / 2
    return TorsionPotential(cos=cos, sin=np.zeros_like(cos))


def barrier_from_frequency(wavenumber: float, reduced_moment_u_a2: float, periodicity: int) -> float:
    """V0 of V0/2 (1 - cos n phi) whose harmonic frequency is ``wavenumber``, Eh.

    Near a minimum V ~ V0 n^2 phi^2 / 4, so hbar omega = n sqrt(V0 B) with B = hbar^2 / 2I, and
    V0 = (hbar omega)^2 / (n^2 B): the barrier from the frequency, the reduced moment and the periodicity,
    the route of P. Y. Ayala and H. B. Schlegel, J. Chem. Phys. 1998, 108, 2314 (from memory of the paper).
    """
    return (wavenumber * WAVENUMBER_EH) ** 2 / (periodicity**2 * rotational_constant(reduced_moment_u_a2))


def basis_size(potential: TorsionPotential, b_eh: float, t_max: float) -> int:
    """Largest |m| of the free-rotor basis: levels B m^2 up to V_max + :data:`BASIS_KT` k T_max, at least
    4 times the highest harmonic of V, at most :data:`MAX_BASIS_M` (docs/rotors.md, "Basis")."""
    _, v_max = potential.extrema()
    m = math.ceil(math.sqrt((v_max + BASIS_KT * K_B_EH * t_max) / b_eh))
    return int(min(max(m, 4 * len(potential.cos), 10), MAX_BASIS_M))


def rotor_levels(potential: TorsionPotential, b_eh: float, m_max: int) -> np.ndarray:
    """Eigenvalues, Eh ascending, of H = -B d^2/dphi^2 + V(phi) over the full turn in the free-rotor
    basis exp(i m phi)/sqrt(2 pi), |m| <= m_max: <m|H|m'> = B m^2 delta + V_(m - m'), with
    V_(+-k) = (a_k -+ i b_k) / 2. The matrix is banded (width K), solved by scipy's eigvals_banded."""
    from scipy.linalg import eigvals_banded

    m = np.arange(-m_max, m_max + 1)
    width = len(potential.cos) - 1
    bands = np.zeros((width + 1, len(m)), dtype=complex)  # lower form: bands[d, c] = H[c + d, c]
    bands[0] = b_eh * m**2 + potential.cos[0]
    for d in range(1, width + 1):
        bands[d, : len(m) - d] = (potential.cos[d] - 1j * potential.sin[d]) / 2  # H[m + d, m] = V_d
    return np.sort(eigvals_banded(bands, lower=True).real)


def level_functions(levels: np.ndarray, symmetry_number: int, temperature) -> dict[str, np.ndarray]:
    """Thermodynamic functions of a set of levels over the temperatures (the last axis), per molecule:

    q = (1/sigma) sum_i exp(-E_i / kT), U = <E> (the ground level included: its zero-point energy),
    S = k ln q + U/T, C_v = (<E^2> - <E>^2) / (k T^2) (McQuarrie, Statistical Mechanics, chapter 2;
    from memory). Energies from the bottom of the potential; returns "zpe" (E_0), "U", "S", "Cv" in Eh, Eh/K.
    """
    t = np.atleast_1d(np.asarray(temperature, dtype=float))
    e0 = levels[0]
    x = (levels[None, :] - e0) / (K_B_EH * t[:, None])
    w = np.exp(-x)
    z = w.sum(axis=1)
    mean_x = (w * x).sum(axis=1) / z
    var_x = (w * x**2).sum(axis=1) / z - mean_x**2
    u = e0 + K_B_EH * t * mean_x
    return {
        "zpe": float(e0),
        "U": u,
        "S": K_B_EH * (np.log(z / symmetry_number) - e0 / (K_B_EH * t)) + u / t,
        "Cv": K_B_EH * var_x,
    }


def fit_potential(angles, energies, symmetry_number: int, terms: int = 6) -> tuple[TorsionPotential, float]:
    """Least-squares Fourier fit of a scan, V(phi) = a_0 + sum_k a_k cos(k s phi) + b_k sin(k s phi),
    s = ``symmetry_number`` (a symmetric top's potential repeats every 2 pi / s, so a scan over one period
    is enough and points outside it are folded into it), k up to ``terms`` or as many as the distinct
    points allow. Returns the potential (shifted so that its minimum is 0) and the root-mean-square
    residual, Eh."""
    phi = np.asarray(angles, dtype=float) * symmetry_number
    e = np.asarray(energies, dtype=float)
    folded = np.round(np.mod(phi, 2 * np.pi), 6)
    folded[np.isclose(folded, 2 * np.pi)] = 0.0
    distinct = len(np.unique(folded))
    kmax = max(1, min(terms, (distinct - 1) // 2))
    k = np.arange(1, kmax + 1)
    design = np.hstack([np.ones((len(phi), 1)), np.cos(np.outer(phi, k)), np.sin(np.outer(phi, k))])
    coef, *_ = np.linalg.lstsq(design, e, rcond=None)
    rms = float(np.sqrt(np.mean((design @ coef - e) ** 2)))
    cos = np.zeros(kmax * symmetry_number + 1)
    sin = np.zeros_like(cos)
    cos[0] = coef[0]
    cos[k * symmetry_number], sin[k * symmetry_number] = coef[1 : kmax + 1], coef[kmax + 1 :]
    potential = TorsionPotential(cos=cos, sin=sin)
    v_min, _ = potential.extrema()
    cos[0] -= v_min
    return potential, rms


# --------------------------------------------------------------------------------------------------
# the rotors of one molecule


@dataclass
class HinderedRotor:
    """One torsion treated as a 1-D hindered rotor (what ThermoResult.rotors lists).

    Attributes:
        torsion: the bond, its top, sigma_int and I(2,3).
        label: e.g. "C1-C2".
        frequency: the harmonic mode it replaces, cm^-1.
        overlap: squared cosine of the torsion with that mode; subspace_overlap: with all replaced modes.
        barrier: V0 = max - min of V, Eh; periodicity: n of the cosine (the symmetry number for a scan fit).
        potential: V(phi); source: "frequency" or the scan's path; fit_rms: the scan fit's residual, Eh.
        levels: the eigenvalues, Eh (from the potential minimum).
    """

    torsion: Torsion
    label: str
    frequency: float
    overlap: float
    subspace_overlap: float
    barrier: float
    periodicity: int
    potential: TorsionPotential
    source: str
    levels: np.ndarray
    fit_rms: float | None = None


def _scan_gap(angles, symmetry_number: int) -> float:
    """Largest gap between scan points folded into one period 2 pi / sigma, as a fraction of the period."""
    folded = np.sort(np.mod(np.asarray(angles, dtype=float) * symmetry_number, 2 * np.pi))
    gaps = np.diff(np.concatenate([folded, folded[:1] + 2 * np.pi]))
    return float(gaps.max() / (2 * np.pi))


def _candidate_modes(raw: np.ndarray, used: np.ndarray) -> np.ndarray:
    """Indices of the log's modes that are among the frequencies the engine uses (|nu| matched: an
    inverted imaginary mode counts, the transition-state mode and removed rigid-body modes do not)."""
    return np.flatnonzero(np.isclose(np.abs(raw)[:, None], used[None, :], rtol=0, atol=1e-6).any(axis=1))


def _torsions(molecule, notes: list[str]) -> tuple[list[Torsion], dict[int, object]]:
    """The detected torsions, with those of the molecule's scans added or put in their place; and the scan
    of each torsion that has one (by position)."""
    torsions = find_torsions(molecule.symbols, molecule.coordinates, molecule.masses)
    scans: dict[int, object] = {}
    for scan in molecule.torsion_scans:
        _, j, k, _ = scan.atoms
        torsion = make_torsion(molecule.symbols, molecule.coordinates, molecule.masses, j, k)
        if torsion is None:
            notes.append(f"{ROTOR_WARNING}scan {scan.source}: the bond {j + 1}-{k + 1} is in a ring or ends at a "
                         "terminal atom or a linear group: not a rotor, scan not used")
            continue
        same = [n for n, t in enumerate(torsions) if set(t.bond) == {j, k}]
        if same:
            torsions[same[0]] = torsion
        else:
            torsions.append(torsion)
        scans[same[0] if same else len(torsions) - 1] = scan
    return torsions, scans


def hindered_rotors(molecule, frequencies: np.ndarray, thermal_scale: float,
                    t_max: float) -> tuple[list[HinderedRotor], np.ndarray, list[str]]:
    """The torsions of ``molecule`` treated as hindered rotors, the frequencies left for the harmonic
    oscillator (``frequencies`` less the replaced modes), and the notes of every decision.

    ``frequencies`` are the cleaned real modes (cm^-1, unscaled); ``thermal_scale`` scales the frequency
    a barrier is inferred from; ``t_max`` (K) sizes the basis. A torsion is left harmonic, with a note,
    when the log has no mode vectors, when no mode overlaps it by :data:`MIN_OVERLAP`, or when it has no
    scan and its wells are not symmetry-equivalent (sigma_int = 1: the cosine would count conformers that
    differ in energy as equal).
    """
    notes: list[str] = []
    torsions, scans = _torsions(molecule, notes)
    if not torsions:
        return [], frequencies, notes
    labels = [t.label(molecule.symbols) for t in torsions]
    if molecule.normal_modes is None:
        notes.append(f"{ROTOR_WARNING}no normal-mode vectors in the log: torsions {', '.join(labels)} left harmonic")
        return [], frequencies, notes
    raw = np.asarray(molecule.frequencies, dtype=float)
    candidates = _candidate_modes(raw, frequencies)
    if len(candidates) < len(torsions):
        notes.append(f"{ROTOR_WARNING}fewer modes than torsions: torsions {', '.join(labels)} left harmonic")
        return [], frequencies, notes
    moves = np.array([torsion_displacement(molecule.coordinates, molecule.masses, t.top, t.bond) for t in torsions])
    overlaps = mode_overlaps(moves, molecule.normal_modes[candidates], molecule.masses)
    mode, overlap, subspace = assign_modes(overlaps)
    rotors, remaining = [], list(frequencies)
    for n, torsion in enumerate(torsions):
        nu = float(abs(raw[candidates[mode[n]]]))
        where = f"torsion {labels[n]} (sigma_int {torsion.symmetry_number}, I_red {torsion.reduced_moment:.3f} u A^2)"
        assigned = f"mode {nu:.1f} cm^-1, overlap {overlap[n]:.2f} ({subspace[n]:.2f} with all torsional modes)"
        if n not in scans and torsion.symmetry_number < 2:
            notes.append(f"{ROTOR_WARNING}torsion {labels[n]}: sigma_int 1 and no scan: its wells are not "
                         "symmetry-equivalent, left harmonic (give a scan in the reaction file to treat it)")
            continue
        if subspace[n] < MIN_OVERLAP:
            notes.append(f"{ROTOR_WARNING}{where}: no normal mode is this torsion (best {assigned}): left harmonic")
            continue
        if subspace[n] < CLEAR_OVERLAP:
            notes.append(f"{ROTOR_WARNING}{where}: ambiguous assignment, {assigned}")
        rotor = _rotor(molecule, torsion, labels[n], nu * thermal_scale, scans.get(n), t_max, notes)
        rotor.frequency, rotor.overlap, rotor.subspace_overlap = nu, float(overlap[n]), float(subspace[n])
        rotors.append(rotor)
        remaining.pop(int(np.argmin(np.abs(np.asarray(remaining) - nu))))
        notes.append(f"hindered rotor: {where} replaces {assigned}; V0 {rotor.barrier / WAVENUMBER_EH:.0f} cm^-1, "
                     f"n {rotor.periodicity}, from {rotor.source}")
    return rotors, np.asarray(remaining, dtype=float), notes


def _rotor(molecule, torsion: Torsion, label: str, nu: float, scan, t_max: float, notes: list[str]) -> HinderedRotor:
    """The potential and levels of one torsion: the scan's fit, else the cosine of its frequency (n = sigma_int)."""
    sigma = torsion.symmetry_number
    fit_rms, offset = None, 0.0
    if scan is not None:
        potential, fit_rms = fit_potential(scan.angles, scan.energies, sigma)
        periodicity, source = sigma, str(scan.source)
        gap = _scan_gap(scan.angles, sigma)
        if gap > 0.25:
            notes.append(f"{ROTOR_WARNING}scan {scan.source} leaves {gap * 360 / sigma:.0f} degrees of the "
                         f"{360 / sigma:.0f}-degree period of {label} without a point")
        offset = float(potential(dihedral_angles(molecule.coordinates, scan.atoms)))
        if offset > 1e-4:
            notes.append(f"{ROTOR_WARNING}{label}: the structure lies {offset / WAVENUMBER_EH:.0f} cm^-1 above the "
                         f"lowest point of the scan {scan.source}; its levels are counted from the structure")
    else:
        periodicity, source = sigma, "frequency"
        potential = cosine_potential(barrier_from_frequency(nu, torsion.reduced_moment, sigma), sigma)
    b = rotational_constant(torsion.reduced_moment)
    levels = rotor_levels(potential, b, basis_size(potential, b, t_max)) - offset
    v_min, v_max = potential.extrema()
    return HinderedRotor(torsion=torsion, label=label, frequency=nu, overlap=0.0, subspace_overlap=0.0,
                         barrier=v_max - v_min, periodicity=periodicity, potential=potential, source=source,
                         levels=levels, fit_rms=fit_rms)

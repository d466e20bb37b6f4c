"""Point group, rotational symmetry number and chirality from a geometry.

The rotational symmetry number sigma is the order of the rotational subgroup of the point group
(the number of proper rotations, identity included). It divides the rotational partition function:
q_rot = (sqrt(pi)/sigma) (T^3 / (Theta_A Theta_B Theta_C))^(1/2) (D. A. McQuarrie, Statistical
Mechanics, Harper & Row 1976, ch. 8; the table of sigma per point group: Fernandez-Ramos, Ellingson,
Meana-Paneda, Marques, Truhlar, Theor. Chem. Acc. 2007, 118, 813; both references from memory).

Symmetry elements are found without symmetrising the structure, so that the noise of a real
optimisation (~0.005 angstrom) does not hide them:

* candidate axes come from the principal axes of inertia (of the molecule and of each shell of
  equivalent atoms), the atom positions, and the pairs of equivalent atoms of the smallest kinds:
  their midpoints (a C2 axis passes through the midpoint of every pair it swaps), differences (a
  mirror is perpendicular to the difference of every pair it swaps) and cross products (an element
  perpendicular to the plane of the atoms); for near-spherical tops also the normals of planes through
  three equivalent atoms (an orbit of an n-fold axis lies in such a plane);
* candidates are screened in one vectorised pass, the atoms farthest from the centre first;
* an operation is tested by mapping every atom onto the nearest atom of the same element and mass;
  the mapping, when it is a permutation, is refined to the best-fitting orthogonal operation of the
  same kind (Kabsch, Acta Cryst. A 1976, 32, 922) and the operation is accepted when no atom moves
  more than ``tolerance`` angstrom from its image;
* the point group follows from the elements found with the usual flow chart (highest-order axis,
  perpendicular C2 axes, horizontal / vertical mirrors, improper axes, inversion).

The reasoning and the tolerances are written down in docs/symmetry.md.
"""

from __future__ import annotations

import itertools
import math
import re
from dataclasses import dataclass, replace

import numpy as np

from .errors import QcthermoError
from .geometry import center_of_mass, is_linear, principal_moments

#: default tolerance: the largest displacement (angstrom) of any atom from its image that still counts
#: as symmetric; optimiser noise is ~0.005 A, a genuinely lower-symmetry conformer moves atoms by tenths
DEFAULT_TOLERANCE = 0.1
#: angstrom: the largest displacement optimiser noise (0.005 A per coordinate) gives an atom from its image
#: under a true operation, with margin: at most 0.035 A over the 162 molecules of ASE's g2 collection (two
#: noise seeds each). A group found at the default tolerance but not at this one is a near-symmetry (a
#: Jahn-Teller-distorted CH3O: C3v within 0.1 A, Cs within 0.04 A), reported with the size of the distortion
NEAR_SYMMETRY_TOLERANCE = 0.04
#: how the thermochemistry's note on a near-symmetric structure starts (species.py makes it a warning finding)
NEAR_SYMMETRY_WARNING = "warning: near-symmetric: "
#: angstrom: the precision to which the size of such a distortion is found (by bisection)
DISTORTION_RESOLUTION = 0.005
#: moments of inertia closer than this (relative) are treated as possibly degenerate; a loose value
#: only costs a wider search (an accidental near-degeneracy is then resolved by the operations found)
DEGENERACY_TOLERANCE = 0.05
#: |cos| of the angle below which two directions count as perpendicular / above which as parallel
PERPENDICULAR_COS = 0.1
PARALLEL_COS = math.cos(math.radians(3.0))
#: grid (on the unit vector's components, ~0.6 degrees) on which candidate directions are screened once;
#: kept fine because a candidate a few degrees off a true axis moves outer atoms beyond the screening limit
CANDIDATE_GRID = 0.01
#: screening accepts an unrefined operation up to this multiple of the tolerance (axis errors of the
#: candidates), the refined operation must then meet the tolerance itself
SCREEN_FACTOR = 3.0
#: a refined operation further than this (Frobenius norm) from the tested one is another operation
#: (a planar molecule maps onto itself by the reflection through its plane as well): rejected
REFINE_DRIFT = 0.5
#: symmetry numbers of the groups without an order in their name
_SYMMETRY_NUMBERS = {
    **dict.fromkeys(("C1", "Cs", "Ci", "C*v", "Kh"), 1),
    "D*h": 2,
    **dict.fromkeys(("T", "Td", "Th"), 12),
    **dict.fromkeys(("O", "Oh"), 24),
    **dict.fromkeys(("I", "Ih"), 60),
}
#: the atoms tried first when screening candidate operations
PROBE_ATOMS = 8
#: candidate directions come from the pairs of at least this many atoms (of the smallest kinds)
REFERENCE_ATOMS = 8
#: two position vectors span a plane when the sine of their angle is at least this
SPAN_SIN = 0.2
#: largest number of floats of one screening block (memory bound for big molecules)
_SCREEN_BLOCK = 2_000_000


@dataclass(frozen=True)
class SymmetryInfo:
    """What the geometry's symmetry means for the thermochemistry.

    Attributes:
        point_group: Schoenflies symbol ("C1", "Cs", "Ci", "C2v", "D3h", "Td", ...); "C*v" and "D*h"
            for the linear groups C_inf_v and D_inf_h; "Kh" for a single atom.
        symmetry_number: rotational symmetry number sigma (order of the rotational subgroup; 1 for an atom).
        chiral: True when the point group holds no improper operation (no mirror plane, no inversion
            centre, no improper axis S_n): the molecule is not superimposable on its mirror image.
        linear: True for a linear molecule (two rotational degrees of freedom).
        strict_point_group: the group within :data:`NEAR_SYMMETRY_TOLERANCE` when that is a smaller one
            (a near-symmetric, distorted structure), else None.
        distortion: angstrom, for a near-symmetric structure the smallest tolerance (to
            :data:`DISTORTION_RESOLUTION`) at which ``point_group`` is found: how far the atoms are from
            the symmetric positions; 0.0 otherwise.
    """

    point_group: str
    symmetry_number: int
    chiral: bool
    linear: bool
    strict_point_group: str | None = None
    distortion: float = 0.0


def analyse_symmetry(symbols, coordinates, masses=None, tolerance: float = DEFAULT_TOLERANCE) -> SymmetryInfo:
    """Point group, symmetry number, chirality and linearity of one structure.

    Args:
        symbols: element symbols, one per atom.
        coordinates: (N, 3) angstrom.
        masses: dalton per atom; None means the most abundant isotopes. Atoms of one element with
            different masses (isotopologues, e.g. HDO) are not equivalent.
        tolerance: angstrom, the largest distance of any atom from its image under an operation
            (after the best fit of that operation) for the operation to count as a symmetry.
    """
    from .records import atomic_masses

    symbols = tuple(symbols)
    xyz = np.asarray(coordinates, dtype=float)
    if xyz.ndim != 2 or xyz.shape != (len(symbols), 3):
        raise QcthermoError(f"{len(symbols)} atoms need an ({len(symbols)}, 3) coordinate array, got {xyz.shape}")
    if not np.all(np.isfinite(xyz)):
        raise QcthermoError("the coordinates hold non-finite values (NaN or infinity)")
    m = atomic_masses(symbols) if masses is None else np.asarray(masses, dtype=float)
    if m.shape != (len(symbols),):
        raise QcthermoError(f"{len(symbols)} atoms but {m.size} masses")
    if len(symbols) == 1:
        return _info("Kh", linear=False)
    x = xyz - center_of_mass(xyz, m)
    labels = _equivalence_labels(symbols, m)
    if is_linear(x, m):
        # no refinement: the best-fitting operation of collinear points is not unique
        inversion = len(_screen(x, labels, -np.eye(3)[None], tolerance)[0]) > 0
        return _info("D*h" if inversion else "C*v", linear=True)
    group = _point_group(x, m, labels, tolerance)
    strict = _point_group(x, m, labels, NEAR_SYMMETRY_TOLERANCE) if tolerance > NEAR_SYMMETRY_TOLERANCE else group
    if strict == group:
        return _info(group, linear=False)
    # bisect the tolerance at which the group appears: the size of the distortion
    low, high = NEAR_SYMMETRY_TOLERANCE, tolerance
    while high - low > DISTORTION_RESOLUTION:
        middle = (low + high) / 2
        low, high = (low, middle) if _point_group(x, m, labels, middle) == group else (middle, high)
    return replace(_info(group, linear=False), strict_point_group=strict, distortion=round(high, 3))


def symmetry_number(point_group: str) -> int:
    """Rotational symmetry number of a Schoenflies point group: the order of its rotational subgroup.

    C1, Cs, Ci, C*v, Kh: 1; Cn, Cnv, Cnh, S2n: n; Dn, Dnh, Dnd: 2n; D*h: 2; T, Td, Th: 12; O, Oh: 24;
    I, Ih: 60 (Fernandez-Ramos et al., Theor. Chem. Acc. 2007, 118, 813, table 1).
    """
    if point_group in _SYMMETRY_NUMBERS:
        return _SYMMETRY_NUMBERS[point_group]
    match = re.fullmatch(r"([CDS])(\d+)[vhd]?", point_group)
    if not match:
        raise QcthermoError(f"unknown point group {point_group!r}")
    family, order = match.group(1), int(match.group(2))
    if family == "D":
        return 2 * order
    if family == "S":
        return order // 2
    return order


def is_chiral_group(point_group: str) -> bool:
    """True for the purely rotational groups (C1, Cn, Dn, T, O, I): no improper operation."""
    return point_group[0] in "CDTOI" and (point_group[1:].isdigit() or len(point_group) == 1)


def _info(point_group: str, linear: bool) -> SymmetryInfo:
    return SymmetryInfo(point_group, symmetry_number(point_group), is_chiral_group(point_group), linear)


def _equivalence_labels(symbols: tuple[str, ...], masses: np.ndarray) -> np.ndarray:
    """One integer per atom; atoms may be exchanged by a symmetry only when their labels agree."""
    keys = [(s, round(float(mi), 3)) for s, mi in zip(symbols, masses, strict=True)]
    index = {k: i for i, k in enumerate(dict.fromkeys(keys))}
    return np.array([index[k] for k in keys])


# ---------------------------------------------------------------------------------------------------
# operations


def rotation_matrices(axes: np.ndarray, angle: float) -> np.ndarray:
    """(M, 3, 3) proper rotations by ``angle`` (radians) about unit ``axes`` (M, 3), Rodrigues' formula
    R = cos(a) 1 + sin(a) [u]_x + (1 - cos(a)) u u^T."""
    u = np.atleast_2d(axes)
    cross = np.zeros((len(u), 3, 3))
    cross[:, 0, 1], cross[:, 0, 2], cross[:, 1, 2] = -u[:, 2], u[:, 1], -u[:, 0]
    cross -= cross.transpose(0, 2, 1)
    outer = u[:, :, None] * u[:, None, :]
    return math.cos(angle) * np.eye(3) + math.sin(angle) * cross + (1 - math.cos(angle)) * outer


def reflection_matrices(normals: np.ndarray) -> np.ndarray:
    """(M, 3, 3) reflections through the planes with unit ``normals`` (M, 3): 1 - 2 n n^T."""
    n = np.atleast_2d(normals)
    return np.eye(3) - 2 * n[:, :, None] * n[:, None, :]


def _nearest_partner(
    x: np.ndarray, labels: np.ndarray, images: np.ndarray, rows: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """For images (M, R, 3) of the atoms ``rows``: index of, and squared distance to, the nearest
    equivalent atom."""
    d2 = (
        np.einsum("mij,mij->mi", images, images)[:, :, None]
        + np.einsum("ij,ij->i", x, x)[None, None, :]
        - 2 * np.einsum("mik,jk->mij", images, x)
    )
    d2 = np.where(labels[rows][:, None] == labels[None, :], d2, np.inf)
    return np.argmin(d2, axis=2), np.min(d2, axis=2)


def _largest_miss(x: np.ndarray, labels: np.ndarray, ops: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """(M,) largest distance of an image of the atoms ``rows`` from its nearest equivalent atom, per
    operation; vectorised over operations in blocks that bound the memory for large molecules."""
    block = max(1, _SCREEN_BLOCK // max(1, len(rows) * len(x)))
    out = np.empty(len(ops))
    for start in range(0, len(ops), block):
        images = np.einsum("mij,nj->mni", ops[start : start + block], x[rows])
        # clipped: rounding makes the squared distance of an exact match slightly negative
        out[start : start + block] = np.sqrt(np.maximum(_nearest_partner(x, labels, images, rows)[1].max(axis=1), 0.0))
    return out


def _screen(x: np.ndarray, labels: np.ndarray, ops: np.ndarray, limit: float) -> tuple[np.ndarray, np.ndarray]:
    """Indices of the operations (M, 3, 3) that move no atom more than ``limit`` from an equivalent atom,
    best first, and their (unrefined) largest displacement.

    The atoms farthest from the centre are tried first (they move most under a wrong operation), so most
    candidates are dropped before the full test.
    """
    everyone = np.arange(len(x))
    probe = np.argsort(-np.einsum("ij,ij->i", x, x), kind="stable")[:PROBE_ATOMS]
    kept = np.flatnonzero(_largest_miss(x, labels, ops, probe) <= limit)
    miss = _largest_miss(x, labels, ops[kept], everyone)
    order = np.argsort(miss, kind="stable")
    order = order[miss[order] <= limit]
    return kept[order], miss[order]


def _refine(x: np.ndarray, labels: np.ndarray, op: np.ndarray) -> tuple[float, np.ndarray]:
    """Best-fitting operation of the same kind as ``op`` and the largest atom displacement under it.

    The atom mapping is taken from ``op`` (nearest equivalent atom; it must be a permutation); the
    operation is refitted to that mapping with the Kabsch algorithm, proper or improper like ``op``,
    and must stay close to ``op``.
    """
    everyone = np.arange(len(x))
    perm = _nearest_partner(x, labels, (x @ op.T)[None], everyone)[0][0]
    if len(np.unique(perm)) != len(perm):
        return math.inf, op
    improper = np.linalg.det(op) < 0
    target = -x[perm] if improper else x[perm]
    u, _, vt = np.linalg.svd(x.T @ target)
    d = np.sign(np.linalg.det(vt.T @ u.T)) or 1.0
    fitted = vt.T @ np.diag([1.0, 1.0, d]) @ u.T
    fitted = -fitted if improper else fitted
    if np.linalg.norm(fitted - op) > REFINE_DRIFT:
        return math.inf, op
    return float(np.sqrt(np.max(np.sum((x @ fitted.T - x[perm]) ** 2, axis=1)))), fitted


def _deviation(x: np.ndarray, labels: np.ndarray, op: np.ndarray) -> float:
    """Largest displacement (angstrom) of an atom from its image under the refined ``op``."""
    return _refine(x, labels, op)[0]


def _accepted(x: np.ndarray, labels: np.ndarray, ops: np.ndarray, tolerance: float) -> list[np.ndarray]:
    """The refined operations among ``ops`` that are symmetries within ``tolerance``; a candidate close
    to an operation already accepted is not refined again."""
    found: list[np.ndarray] = []
    for i in _screen(x, labels, ops, SCREEN_FACTOR * tolerance)[0]:
        if any(np.linalg.norm(ops[i] - f) < REFINE_DRIFT for f in found):
            continue
        dev, fitted = _refine(x, labels, ops[i])
        if dev <= tolerance:
            found.append(fitted)
    return found


def _axis_of(op: np.ndarray, improper: bool = False) -> np.ndarray:
    """Rotation axis of a proper operation (eigenvalue +1) or normal of a reflection (eigenvalue -1)."""
    _, vectors = np.linalg.eigh((op + op.T) / 2)
    return vectors[:, 0] if improper else vectors[:, -1]


def _unique_directions(vectors: np.ndarray) -> np.ndarray:
    """Unit vectors of ``vectors`` (longest first: the best-defined), one per line through the origin."""
    norms = np.linalg.norm(vectors, axis=1)
    vectors = vectors[norms > 1e-6]
    norms = norms[norms > 1e-6]
    units = (vectors / norms[:, None])[np.argsort(-norms, kind="stable")]
    close = np.abs(units @ units.T) > PARALLEL_COS
    return units[~np.any(np.tril(close, -1), axis=1)]


def _reference_atoms(x: np.ndarray, labels: np.ndarray, tolerance: float) -> np.ndarray:
    """The atoms whose pairs supply the candidate directions: the smallest kinds of atoms that span a
    plane through the centre, until REFERENCE_ATOMS atoms are taken (all atoms if no kind spans one).

    One such kind is enough: a C2 axis passes through one of its atoms, or through the midpoint of a
    pair it swaps, or (when all of them lie in the plane perpendicular to it) along the cross product of
    two of them; a mirror contains all of them (normal along a cross product) or is perpendicular to the
    difference of a pair it swaps.
    """
    kinds, counts = np.unique(labels, return_counts=True)
    chosen: list[np.ndarray] = []
    for kind in kinds[np.argsort(counts, kind="stable")]:
        members = np.flatnonzero(labels == kind)
        if _spans_plane(x[members], tolerance):
            chosen.append(members)
            if sum(map(len, chosen)) >= REFERENCE_ATOMS:
                break
    return np.sort(np.concatenate(chosen)) if chosen else np.arange(len(x))


def _spans_plane(points: np.ndarray, tolerance: float) -> bool:
    """Two of the position vectors at an angle of SPAN_SIN or more (in sine), both off the centre."""
    points = points[np.linalg.norm(points, axis=1) > tolerance]
    units = points / np.linalg.norm(points, axis=1)[:, None]
    return len(units) > 1 and bool(np.any(np.abs(units @ units.T) < math.sqrt(1 - SPAN_SIN**2)))


def _shell_axes(x: np.ndarray, labels: np.ndarray, tolerance: float) -> np.ndarray:
    """Principal axes of every shell of equivalent atoms (same kind, same distance from the centre).

    A shell is mapped onto itself by every symmetry operation, so each axis of the point group is a
    principal axis of each shell's inertia tensor; a shell whose tensor is a symmetric top pins down the
    main axis when the molecule as a whole is (nearly) a spherical top and its own axes are ill-defined.
    """
    r = np.linalg.norm(x, axis=1)
    order = np.lexsort((r, labels))
    breaks = np.flatnonzero((np.diff(labels[order]) != 0) | (np.diff(r[order]) > tolerance)) + 1
    axes = []
    for shell in np.split(order, breaks):
        if len(shell) > 1:
            p = x[shell]
            tensor = np.einsum("ij,ij->", p, p) * np.eye(3) - p.T @ p
            axes.append(np.linalg.eigh(tensor)[1].T)
    return np.vstack(axes) if axes else np.zeros((0, 3))


def _pair_vectors(x: np.ndarray, labels: np.ndarray, atoms: np.ndarray, tolerance: float):
    """Midpoints, differences and cross products of the pairs of equivalent atoms among ``atoms``;
    midpoints and differences only for pairs at the same distance from the centre."""
    i, j = np.triu_indices(len(atoms), k=1)
    i, j = atoms[i], atoms[j]
    same = labels[i] == labels[j]
    i, j = i[same], j[same]
    r = np.linalg.norm(x, axis=1)
    level = np.abs(r[i] - r[j]) <= SCREEN_FACTOR * tolerance
    return (x[i[level]] + x[j[level]]) / 2, x[i[level]] - x[j[level]], np.cross(x[i], x[j])


# ---------------------------------------------------------------------------------------------------
# classification


def _point_group(x: np.ndarray, masses: np.ndarray, labels: np.ndarray, tolerance: float) -> str:
    moments, principal = principal_moments(x, masses)
    principal = principal.T
    atom_dirs = x[np.linalg.norm(x, axis=1) > tolerance]
    reference = _reference_atoms(x, labels, tolerance)
    midpoints, differences, normals = _pair_vectors(x, labels, reference, tolerance)
    # principal axes (of the molecule and of its shells) are scaled up so that they are kept first
    # among near-parallel candidates
    preferred = np.vstack([principal, _shell_axes(x, labels, tolerance)]) * 100
    c2_candidates = _candidates(preferred, x[reference], midpoints, normals)
    c2_axes = _found_axes(x, labels, rotation_matrices(c2_candidates, math.pi), tolerance)
    mirrors = _found_axes(x, labels, reflection_matrices(_candidates(preferred, differences, normals)), tolerance)
    inversion = _deviation(x, labels, -np.eye(3)) <= tolerance
    degenerate = np.abs(np.diff(moments)) <= DEGENERACY_TOLERANCE * moments[2]
    if degenerate.all():
        cubic = _cubic_group(x, labels, c2_axes, mirrors, inversion, tolerance)
        if cubic:
            return cubic
    axis, order = _main_axis(x, labels, _candidates(preferred, atom_dirs), c2_axes, degenerate, reference, tolerance)
    if order == 1:
        return "Cs" if len(mirrors) else "Ci" if inversion else "C1"
    return _axial_group(x, labels, axis, order, c2_axes, mirrors, tolerance)


def _candidates(*vectors: np.ndarray) -> np.ndarray:
    """Candidate directions for axes or mirror normals, longest vectors first, near-duplicates dropped.

    Duplicates are found by rounding the unit vectors (sign fixed) to a grid of CANDIDATE_GRID, which is
    linear in the number of candidates; a duplicate left in a neighbouring cell only costs a screening.
    """
    stacked = np.vstack(vectors)
    norms = np.linalg.norm(stacked, axis=1)
    keep = norms > 1e-6
    stacked, norms = stacked[keep], norms[keep]
    order = np.argsort(-norms, kind="stable")
    units = stacked[order] / norms[order][:, None]
    largest = np.argmax(np.abs(units), axis=1)
    units *= np.sign(units[np.arange(len(units)), largest])[:, None]
    _, first = np.unique(np.round(units / CANDIDATE_GRID).astype(np.int64), axis=0, return_index=True)
    return units[np.sort(first)]


def _found_axes(x: np.ndarray, labels: np.ndarray, ops: np.ndarray, tolerance: float) -> np.ndarray:
    """(K, 3) distinct axes (rotations) or normals (reflections) of the symmetries among ``ops``."""
    found = _accepted(x, labels, ops, tolerance)
    improper = bool(len(ops)) and np.linalg.det(ops[0]) < 0
    return _unique_directions(np.array([_axis_of(op, improper) for op in found]).reshape(-1, 3))


def _main_axis(x, labels, candidates, c2_axes, degenerate, reference, tolerance) -> tuple[np.ndarray, int]:
    """The axis of highest order n and n (1 when there is no proper axis).

    An axis of order 3 or more implies two equal moments of inertia, so it is looked for only then,
    among ``candidates`` (principal axes of the molecule and its shells, atom directions; for a
    near-spherical top, whose principal axes mean nothing, also the normals of planes through three
    equivalent reference atoms: an orbit of the axis lies in such a plane), highest order first.
    Among several C2 axes the one that is also an S4 axis is the main one (D2d).
    """
    if degenerate.any():
        if degenerate.all():
            candidates = _candidates(candidates, _triple_normals(x, labels, reference, tolerance))
        for n in _possible_orders(x, labels, candidates, tolerance):
            found = _accepted(x, labels, rotation_matrices(candidates, 2 * math.pi / n), tolerance)
            if found:
                return _axis_of(found[0]), n
    if not len(c2_axes):
        return np.zeros(3), 1
    for axis in c2_axes if len(c2_axes) > 1 else ():
        if _deviation(x, labels, _improper_rotation(axis, 4)) <= tolerance:
            return axis, 2
    return c2_axes[0], 2


def _triple_normals(x: np.ndarray, labels: np.ndarray, atoms: np.ndarray, tolerance: float) -> np.ndarray:
    """Normals of the planes through three equivalent atoms at the same distance from the centre."""
    r = np.linalg.norm(x, axis=1)
    i, j, k = atoms[np.array(list(itertools.combinations(range(len(atoms)), 3)), dtype=int).reshape(-1, 3)].T
    level = SCREEN_FACTOR * tolerance
    same = (labels[i] == labels[j]) & (labels[j] == labels[k])
    same &= (np.abs(r[i] - r[j]) <= level) & (np.abs(r[j] - r[k]) <= level)
    i, j, k = i[same], j[same], k[same]
    return np.cross(x[j] - x[i], x[k] - x[i])


def _improper_rotation(axis: np.ndarray, order: int) -> np.ndarray:
    """S_order about ``axis``: rotation by 2 pi / order followed by the reflection through the plane
    perpendicular to it; sigma_h = -C2, so S_n = -C(2 pi / n + pi)."""
    return -rotation_matrices(axis, 2 * math.pi / order + math.pi)[0]


def _possible_orders(x, labels, axes, tolerance) -> list[int]:
    """Orders n >= 3 worth testing on any of ``axes``, highest first: n must divide the number of
    atoms of every kind that lie off the axis."""
    off_axis = np.linalg.norm(x[None] - (x @ axes.T).T[:, :, None] * axes[:, None, :], axis=2) > tolerance
    counts = off_axis.astype(int) @ (labels[:, None] == np.unique(labels)[None, :]).astype(int)
    per_axis = np.gcd.reduce(counts, axis=1)
    return [n for n in range(int(per_axis.max()), 2, -1) if np.any(per_axis % n == 0)]


def _axial_group(x, labels, axis, n, c2_axes, mirrors, tolerance) -> str:
    """Cn, Cnv, Cnh, S2n, Dn, Dnh, Dnd from the main axis of order n >= 2 and the other elements."""
    perpendicular_c2 = bool(len(c2_axes)) and bool(np.any(np.abs(c2_axes @ axis) < PERPENDICULAR_COS))
    horizontal = _deviation(x, labels, reflection_matrices(axis)[0]) <= tolerance
    vertical = bool(len(mirrors)) and bool(np.any(np.abs(mirrors @ axis) < PERPENDICULAR_COS))
    if perpendicular_c2:
        return f"D{n}h" if horizontal else f"D{n}d" if vertical else f"D{n}"
    if horizontal:
        return f"C{n}h"
    if vertical:
        return f"C{n}v"
    return f"S{2 * n}" if _deviation(x, labels, _improper_rotation(axis, 2 * n)) <= tolerance else f"C{n}"


def _cubic_group(x, labels, c2_axes, mirrors, inversion, tolerance) -> str | None:
    """T, Td, Th, O, Oh, I, Ih for a spherical top, recognised by its C2 axes (3, 9 or 15) and a check
    of the axes of higher order (C3 along a body diagonal of the C2 frame for T, C4 for O); None when
    the spherical top is accidental."""
    if len(c2_axes) == 15:
        return "Ih" if inversion else "I"
    if len(c2_axes) == 9:
        has_c4 = any(_deviation(x, labels, rotation_matrices(a, math.pi / 2)[0]) <= tolerance for a in c2_axes)
        return ("Oh" if inversion else "O") if has_c4 else None
    if len(c2_axes) == 3 and np.all(np.abs(np.triu(c2_axes @ c2_axes.T, 1)) < PERPENDICULAR_COS):
        diagonal = c2_axes.sum(axis=0) / math.sqrt(3)
        if _deviation(x, labels, rotation_matrices(diagonal, 2 * math.pi / 3)[0]) <= tolerance:
            return "Th" if inversion else "Td" if len(mirrors) else "T"
    return None

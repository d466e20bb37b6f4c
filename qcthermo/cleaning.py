"""Mode clean-up before the partition functions: residual translations/rotations, linearity, imaginary modes.

Every decision is returned as a note, so that a table can say what was done to each molecule.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import ThermoError
from .geometry import is_linear
from .records import Conditions, Molecule

#: imaginary-mode policies; None is the default (invert small ones, refuse large ones)
IMAGINARY_POLICIES = ("error", "invert", "drop")

#: cm^-1; only modes closer to zero than this may be taken for leftover translations/rotations
RESIDUAL_MODE_CUTOFF = 20.0

#: I_min / I_max below which a molecule counts as linear (see geometry.is_linear)
LINEAR_TOLERANCE = 1e-3


@dataclass
class CleanModes:
    """The vibrational modes that go into the partition function.

    Attributes:
        frequencies: real wavenumbers, cm^-1, unscaled.
        imaginary_frequency: the transition-state mode left out (cm^-1, negative), or None.
        linear: whether the geometry is linear (rotational degrees of freedom 2 instead of 3).
        notes: one line per decision.
    """

    frequencies: np.ndarray
    imaginary_frequency: float | None
    linear: bool
    notes: list[str] = field(default_factory=list)


def expected_mode_count(natoms: int, linear: bool) -> int:
    """3N-6 vibrational modes for a nonlinear molecule, 3N-5 for a linear one, none for an atom."""
    if natoms == 1:
        return 0
    return 3 * natoms - (5 if linear else 6)


def remove_residual_modes(frequencies: np.ndarray, expected: int, label: str) -> tuple[np.ndarray, list[str]]:
    """Drop leftover translation/rotation modes, by count.

    Only the modes beyond ``expected`` are removed, and only from those with |nu| below
    :data:`RESIDUAL_MODE_CUTOFF`, closest to zero first; a molecule with too few modes, or with extra
    modes that are not near zero, is refused.
    """
    n = len(frequencies)
    if n < expected:
        raise ThermoError(f"{label}: {n} vibrational modes, {expected} expected (3N-6 or 3N-5)")
    extra = n - expected
    if extra == 0:
        return frequencies, []
    near_zero = np.flatnonzero(np.abs(frequencies) < RESIDUAL_MODE_CUTOFF)
    if len(near_zero) < extra:
        raise ThermoError(
            f"{label}: {n} vibrational modes, {expected} expected, and only {len(near_zero)} of the extra "
            f"{extra} are near zero (|nu| < {RESIDUAL_MODE_CUTOFF:g} cm^-1)"
        )
    drop = near_zero[np.argsort(np.abs(frequencies[near_zero]), kind="stable")[:extra]]
    kept = np.delete(frequencies, drop)
    removed = ", ".join(f"{v:.1f}" for v in frequencies[np.sort(drop)])
    return kept, [f"removed {extra} leftover translation/rotation mode(s) near zero: {removed} cm^-1"]


def _policy(molecule: Molecule, conditions: Conditions) -> str | None:
    policy = molecule.imaginary_policy if molecule.imaginary_policy is not None else conditions.imaginary_policy
    if policy is not None and policy not in IMAGINARY_POLICIES:
        raise ThermoError(f"unknown imaginary-mode policy {policy!r}; choose one of {', '.join(IMAGINARY_POLICIES)}")
    return policy


def apply_imaginary_policy(
    imaginary: np.ndarray, policy: str | None, threshold: float, label: str, what: str
) -> tuple[np.ndarray, list[str]]:
    """Real wavenumbers to use in place of the unexpected imaginary modes ``imaginary`` (negative, cm^-1).

    "error" refuses any; "invert" uses |nu|; "drop" leaves them out; the default (None) inverts those
    with |nu| < ``threshold`` with a warning and refuses the others. ``what`` names the structure
    ("a minimum", "a transition state") for the messages.
    """
    if len(imaginary) == 0:
        return imaginary, []
    listed = ", ".join(f"{v:.1f}" for v in imaginary)
    if policy == "error":
        raise ThermoError(f"{label}: imaginary mode(s) {listed} cm^-1 on {what} (policy 'error')")
    if policy == "drop":
        return imaginary[:0], [f"warning: dropped imaginary mode(s) {listed} cm^-1 (policy 'drop')"]
    if policy is None and np.any(np.abs(imaginary) >= threshold):
        raise ThermoError(
            f"{label}: imaginary mode(s) {listed} cm^-1 on {what}, at or above the {threshold:g} cm^-1 "
            "that may be inverted; re-optimise, or mark it as a transition state, or choose a policy"
        )
    how = "policy 'invert'" if policy == "invert" else f"below {threshold:g} cm^-1"
    return np.abs(imaginary), [f"warning: inverted imaginary mode(s) {listed} cm^-1 to real ({how})"]


def clean_modes(molecule: Molecule, conditions: Conditions) -> CleanModes:
    """The real modes of ``molecule`` for the partition function, and what was done to get them.

    Steps: linearity with a relative tolerance (geometry.is_linear); leftover translations/rotations
    removed by count; on a transition state the imaginary mode of largest |nu| is set aside; any other
    imaginary mode follows the policy (the molecule's own, else the conditions').
    """
    label = molecule.name or molecule.source or molecule.formula
    if not np.all(np.isfinite(molecule.coordinates)):
        # e.g. an xTB Hessian run prints no geometry; the rotational partition function needs one
        raise ThermoError(f"{label}: no geometry (coordinates are not finite numbers); "
                          "thermochemistry needs the structure the frequencies belong to")
    if not np.all(np.isfinite(molecule.frequencies)):
        raise ThermoError(f"{label}: frequencies are not finite numbers")
    linear = molecule.natoms > 1 and is_linear(molecule.coordinates, molecule.masses, LINEAR_TOLERANCE)
    expected = expected_mode_count(molecule.natoms, linear)
    notes = [f"linear: 3N-5 = {expected} vibrational modes expected"] if linear else []
    freqs, removed = remove_residual_modes(np.asarray(molecule.frequencies, dtype=float), expected, label)
    notes += removed
    policy = _policy(molecule, conditions)
    imaginary = freqs[freqs < 0]
    ts_mode = None
    if molecule.transition_state:
        if len(imaginary) == 0:
            raise ThermoError(f"{label}: marked as a transition state but has no imaginary mode")
        ts_index = int(np.argmax(np.abs(imaginary)))
        ts_mode = float(imaginary[ts_index])
        imaginary = np.delete(imaginary, ts_index)
        notes.append(f"transition state: mode {ts_mode:.1f} cm^-1 left out of the partition function")
    replaced, policy_notes = apply_imaginary_policy(
        imaginary, policy, conditions.imaginary_threshold, label,
        "a transition state (a second imaginary mode)" if molecule.transition_state else "a minimum",
    )
    notes += policy_notes
    real = np.concatenate([freqs[freqs >= 0], replaced])
    if np.any(real == 0.0):
        raise ThermoError(f"{label}: a vibrational mode of exactly 0 cm^-1 is left after clean-up")
    return CleanModes(frequencies=real, imaginary_frequency=ts_mode, linear=linear, notes=notes)

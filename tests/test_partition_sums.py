"""Closed-form partition functions against direct sums over the quantised levels.

Levels (textbook quantum mechanics; McQuarrie, Statistical Mechanics, chapters 5 and 6): particle in a
cube E_n = h^2 n^2 / (8 m L^2) per dimension, rigid rotor E_J = hbar^2 J(J+1) / 2I with degeneracy 2J+1,
harmonic oscillator E_n = (n + 1/2) h nu. Thermodynamic functions of a direct sum come from
U = k T^2 d ln q / dT (central differences) and S = k ln q + U / T.
"""

from __future__ import annotations

import numpy as np
import pytest

from qcthermo.geometry import principal_moments
from qcthermo.records import atomic_masses
from qcthermo.thermo import (
    harmonic_entropy,
    harmonic_heat_capacity,
    harmonic_partition_function,
    harmonic_thermal_energy,
    harmonic_zpe,
    rotational_entropy,
    rotational_partition_function_linear,
    rotational_temperatures,
    translational_entropy,
    translational_partition_function,
    vibrational_temperatures,
)
from qcthermo.units import AMU, H_PLANCK, K_B, K_B_EH


def functions_of(log_q, t: float, rel_step: float = 1e-4):
    """U/k (K), S/k and Cv/k of a partition function given as a function ln q(T), by central differences."""
    h = rel_step * t
    lo, mid, hi = log_q(t - h), log_q(t), log_q(t + h)
    dlnq = (hi - lo) / (2 * h)
    d2lnq = (hi - 2 * mid + lo) / h**2
    u_over_k = t**2 * dlnq
    cv_over_k = 2 * t * dlnq + t**2 * d2lnq
    return u_over_k, mid + u_over_k / t, cv_over_k


def box_sum_1d(mass_u: float, length_m: float, t: float) -> float:
    a = H_PLANCK**2 / (8 * mass_u * AMU * length_m**2 * K_B * t)
    n = np.arange(1, int(np.sqrt(60 / a)) + 2)
    return float(np.sum(np.exp(-a * n**2)))


ARGON_U = float(atomic_masses(["Ar"])[0])


def test_particle_in_a_box_matches_translational_partition_function():
    # direct sum over h^2 n^2 / 8 m L^2 in 3-D vs (2 pi m k T / h^2)^(3/2) V. Poisson summation gives
    # sum_n>=1 exp(-a n^2) = sqrt(pi/a)/2 - 1/2 + O(exp(-pi^2/a)) (a published identity of theta functions)
    t, length = 298.15, 1e-8  # 10 nm box: q per dimension ~ 600
    q1 = box_sum_1d(ARGON_U, length, t)
    closed = translational_partition_function(ARGON_U, t, length**3)
    assert q1 == pytest.approx(closed ** (1 / 3) - 0.5, rel=1e-12)
    assert q1**3 == pytest.approx(closed, rel=3 / (2 * q1) * 1.01)
    # Sackur-Tetrode: S = k (ln q + 1) + U/T with one molecule per box (the +1 is Stirling's ln N!)
    _, s_over_k, cv_over_k = functions_of(lambda x: 3 * np.log(box_sum_1d(ARGON_U, length, x)), t)
    s_closed = translational_entropy(ARGON_U, t, length**3) / K_B_EH
    assert s_over_k + 1 == pytest.approx(s_closed, abs=0.01)
    assert cv_over_k == pytest.approx(1.5, abs=0.01)


def test_particle_in_a_small_box_differs_from_closed_form():
    # where the classical limit fails: a 0.1 nm box at 10 K holds only a few levels
    t, length = 10.0, 1e-10
    q1 = box_sum_1d(ARGON_U, length, t)
    closed = translational_partition_function(ARGON_U, t, length**3) ** (1 / 3)
    assert abs(q1 / closed - 1) > 0.3


def _rotor_sum(theta: float, t: float, parity: str = "all") -> float:
    j = np.arange(0, int(np.sqrt(80 * t / theta)) + 3)
    if parity == "even":
        j = j[::2]
    elif parity == "odd":
        j = j[1::2]
    return float(np.sum((2 * j + 1) * np.exp(-j * (j + 1) * theta / t)))


def _h2_theta() -> float:
    # H2, r = 0.7414 angstrom (experimental; from memory)
    xyz = np.array([[0, 0, 0], [0, 0, 0.7414]])
    moments, _ = principal_moments(xyz, atomic_masses(["H", "H"]))
    return float(rotational_temperatures(moments[2]))


def test_rigid_rotor_sum_matches_closed_form_at_high_temperature():
    # direct sum over hbar^2 J(J+1)/2I with degeneracy 2J+1 vs T/Theta; Mulholland's expansion
    # q = T/Theta + 1/3 + Theta/(15 T) + ... (McQuarrie eq. 6-30) fixes the size of the difference
    theta = _h2_theta()
    t = 200 * theta
    q = _rotor_sum(theta, t)
    closed = rotational_partition_function_linear(theta, 1, t)
    assert q == pytest.approx(closed + 1 / 3 + theta / (15 * t), rel=1e-7)
    _, s_over_k, cv_over_k = functions_of(lambda x: np.log(_rotor_sum(theta, x)), t)
    assert s_over_k == pytest.approx(rotational_entropy(closed, 2) / K_B_EH, abs=2e-3)
    assert cv_over_k == pytest.approx(1.0, abs=1e-3)


def test_h2_rotation_at_50_k_is_not_classical():
    # H2 (sigma = 2) with nuclear-spin statistics: para (even J, weight 1) and ortho (odd J, weight 3),
    # divided by the 4 spin states to compare with the classical T/(2 Theta). At 50 K (Theta ~ 88 K)
    # the classical rotor is off by more than 10 % in q and by far in Cv.
    theta, t = _h2_theta(), 50.0
    assert 80 < theta < 95  # rotational temperature of H2, ~85 K experimentally (from memory)

    def log_q(x):
        return np.log((_rotor_sum(theta, x, "even") + 3 * _rotor_sum(theta, x, "odd")) / 4)

    closed = rotational_partition_function_linear(theta, 2, t)
    assert np.exp(log_q(t)) / closed - 1 > 0.1
    _, s_over_k, cv_over_k = functions_of(log_q, t)
    assert abs(s_over_k - rotational_entropy(closed, 2) / K_B_EH) > 0.1
    assert abs(cv_over_k - 1.0) > 0.5  # classical: 1 (equilibrium H2 has a hump here)
    # at 2000 K they agree but for the first quantum correction, +1/6 here (half of Mulholland's 1/3)
    closed = rotational_partition_function_linear(theta, 2, 2000.0)
    assert np.exp(log_q(2000.0)) == pytest.approx(closed + 1 / 6, rel=1e-3)
    assert np.exp(log_q(2000.0)) == pytest.approx(closed, rel=0.02)


@pytest.mark.parametrize("nu", [50.0, 667.0, 3756.0])
@pytest.mark.parametrize("t", [30.0, 298.15, 2000.0])
def test_oscillator_sum_matches_harmonic_functions(nu, t):
    # direct sum over (n + 1/2) h nu vs the closed forms (exact at every temperature); the sum is taken
    # from the ground level (q' = sum exp(-n h nu / kT)) so that tiny entropies do not cancel
    theta = float(vibrational_temperatures(nu))

    def n_levels(x):
        return np.arange(0, int(60 * x / theta) + 50)

    def log_q_ground(x):
        return float(np.log1p(np.sum(np.exp(-n_levels(x)[1:] * theta / x))))

    q_full = np.sum(np.exp(-(n_levels(t) + 0.5) * theta / t))
    assert q_full == pytest.approx(harmonic_partition_function(theta, t), rel=1e-10)
    u_over_k, s_over_k, cv_over_k = functions_of(log_q_ground, t, rel_step=1e-5)
    assert harmonic_zpe(theta) / K_B_EH == pytest.approx(theta / 2, rel=1e-12)
    assert u_over_k == pytest.approx(harmonic_thermal_energy(theta, t) / K_B_EH, rel=1e-6, abs=1e-300)
    assert s_over_k == pytest.approx(harmonic_entropy(theta, t) / K_B_EH, rel=1e-6, abs=1e-300)
    assert cv_over_k == pytest.approx(harmonic_heat_capacity(theta, t) / K_B_EH, rel=1e-4, abs=1e-300)

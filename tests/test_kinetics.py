"""Rate constants, tunnelling, Arrhenius fits and the energy span model, each against an outside source."""

import numpy as np
import pytest
from eckart_quad import eckart_kappa_by_quad
from scipy import constants
from scipy.integrate import solve_ivp

from qcthermo.kinetics import (
    degeneracy_beyond_free_energy,
    eckart_kappa,
    eckart_transmission,
    energy_span,
    eyring_rate,
    fit_arrhenius,
    reaction_path_degeneracy,
    reaction_rates,
    thermal_frequency,
    wigner_kappa,
)
from qcthermo.units import WAVENUMBER_EH, to_hartree

KCAL_MOL = constants.calorie * 1000.0  # J/mol of one kcal/mol (thermochemical calorie)


def test_thermal_frequency_at_room_temperature():
    # kT/h = 6.21e12 s^-1 at 298.15 K (common practice)
    assert thermal_frequency(298.15) == pytest.approx(6.21e12, rel=1e-3)


def test_eyring_unimolecular_20_kcal():
    # Eyring equation (J. Chem. Phys. 1935, 3, 107) evaluated with scipy.constants: k = kT/h exp(-dG/RT)
    t = 298.15
    expected = constants.k * t / constants.h * np.exp(-20 * KCAL_MOL / (constants.R * t))
    k, unit = eyring_rate(to_hartree(20.0, "kcal/mol"), t, 1)
    assert k == pytest.approx(expected, rel=1e-9)
    assert unit == "s^-1"


def test_eyring_bimolecular_units_and_standard_states():
    # Evans-Polanyi / Eyring with the standard-state factor (c0)^(1-m): for 1 M, k in M^-1 s^-1 is
    # kT/h e^{-dG/RT} / (1 mol/L); for 1 atm, c0 = p0/kT in molecule cm^-3 (ideal gas law)
    t = 298.15
    dg = to_hartree(15.0, "kcal/mol")
    base = constants.k * t / constants.h * np.exp(-15 * KCAL_MOL / (constants.R * t))
    k_m, unit_m = eyring_rate(dg, t, 2, "1M")
    assert unit_m == "M^-1 s^-1"
    assert k_m == pytest.approx(base, rel=1e-9)
    k_gas, unit_gas = eyring_rate(dg, t, 2, "1atm")
    assert unit_gas == "cm^3 molecule^-1 s^-1"
    c0 = constants.atm / (constants.k * t) * 1e-6  # molecule cm^-3
    assert k_gas == pytest.approx(base / c0, rel=1e-9)
    k3, unit3 = eyring_rate(dg, t, 3, "1bar")
    assert unit3 == "cm^6 molecule^-2 s^-1"
    assert k3 == pytest.approx(base / (constants.bar / (constants.k * t) * 1e-6) ** 2, rel=1e-9)
    assert eyring_rate(dg, t, 3, "1M")[1] == "M^-2 s^-1"
    # a solvent's own concentration as the standard state: (c0)^(1-m) with c0 = 55.3 mol/L
    assert eyring_rate(dg, t, 2, "55.3M")[0] == pytest.approx(base / 55.3, rel=1e-9)


def test_eyring_vectorised_over_temperature():
    t = np.array([250.0, 298.15, 400.0])
    k, _ = eyring_rate(to_hartree(20.0, "kcal/mol"), t, 1, kappa=2.0, degeneracy=3.0)
    expected = 6.0 * constants.k * t / constants.h * np.exp(-20 * KCAL_MOL / (constants.R * t))
    np.testing.assert_allclose(k, expected, rtol=1e-9)


def test_reaction_path_degeneracy():
    # the rule of Fernandez-Ramos et al., Theor. Chem. Acc. 2007, 118, 813, on H abstraction from CH4 by an
    # H atom: sigma(CH4) = 12, sigma(H) = 1, sigma(C3v TS H3C-H-H) = 3 -> L = 4, the four equivalent H atoms
    assert reaction_path_degeneracy([12, 1], 3) == 4.0
    # the same paper: a chiral TS whose mirror image is a distinct path doubles L
    assert reaction_path_degeneracy([12, 1], 3, optical_isomers_ts=2) == 8.0
    # with symmetry numbers inside the free energies only the optical-isomer factor is left to apply
    assert degeneracy_beyond_free_energy(8.0, [12, 1], 3) == 2.0
    with pytest.raises(ValueError):
        reaction_path_degeneracy([0], 1)


def test_wigner_formula():
    # Wigner, Z. Phys. Chem. B 1932, 19, 203: kappa = 1 + (h c nu / kT)^2 / 24, evaluated with scipy.constants
    nu, t = 1500.0, 298.15
    u = constants.h * constants.c * 100 * nu / (constants.k * t)
    assert wigner_kappa(-nu, t) == pytest.approx(1 + u**2 / 24, rel=1e-12)
    np.testing.assert_allclose(wigner_kappa(nu, np.array([t, 2 * t])), 1 + np.array([u, u / 2]) ** 2 / 24)


@pytest.mark.parametrize(("v1_kcal", "v2_kcal", "nu"), [(6.0, 9.0, 1200.0), (12.0, 4.0, 1800.0), (10.0, 10.0, 600.0)])
def test_eckart_against_quadrature(v1_kcal, v2_kcal, nu):
    # independent numerical integration of the published transmission formula (see tests/eckart_quad.py)
    v1, v2 = to_hartree(v1_kcal, "kcal/mol"), to_hartree(v2_kcal, "kcal/mol")
    temps = np.array([150.0, 200.0, 298.15, 500.0, 1500.0])
    kappa = eckart_kappa(-nu, v1, v2, temps)
    reference = [eckart_kappa_by_quad(v1, v2, nu, t) for t in temps]
    # measured: 2e-10 at worst (Simpson's rule against quad's adaptive Gauss-Kronrod)
    np.testing.assert_allclose(kappa, reference, rtol=1e-8)
    assert eckart_kappa(-nu, v1, v2, 298.15) == pytest.approx(reference[2], rel=1e-8)
    # the reverse reaction (barriers swapped) has the same kappa (Johnston and Heicklen 1962: P(E) is one function
    # of the total energy), which is why one kappa serves k_forward and k_reverse, and why passing V1 and V2 in
    # either order to the Eckart correction gives the same rate constants
    np.testing.assert_allclose(eckart_kappa(-nu, v2, v1, temps), reference, rtol=1e-8)


def test_eckart_transmission_against_schroedinger_equation():
    # the transmission probability checked against a direct solution of the 1-D Schroedinger equation
    # through V(x) = A y/(1+y) + B y/(1+y)^2, y = e^x (hbar = m = l = 1; Eckart, Phys. Rev. 1930, 35, 1303)
    a_, b_ = -5.0, 30.0
    v1, v2 = (a_ + b_) ** 2 / (4 * b_), (b_ - a_) ** 2 / (4 * b_)  # the barrier heights from each side
    omega = (b_**2 - a_**2) / np.sqrt(8 * b_**3)  # sqrt(-V''(x_top)) for m = l = 1

    def potential(x):
        y = np.exp(x)
        return a_ * y / (1 + y) + b_ * y / (1 + y) ** 2

    for e in (0.5 * v1, 0.9 * v1, v1, 1.2 * v1):
        k1, k2, x_end = np.sqrt(2 * e), np.sqrt(2 * (e - a_)), 30.0

        def rhs(x, psi, e=e):
            return [psi[1], 2 * (potential(x) - e) * psi[0]]

        start = np.exp(1j * k2 * x_end) * np.array([1.0, 1j * k2])  # only the transmitted wave on the right
        sol = solve_ivp(rhs, (x_end, -x_end), start, method="DOP853", rtol=1e-11, atol=1e-13)
        psi, dpsi = sol.y[:, -1]
        incident = (psi + dpsi / (1j * k1)) * np.exp(1j * k1 * x_end) / 2  # e^{i k1 x} amplitude at x = -x_end
        transmission = k2 / k1 / abs(incident) ** 2
        # eckart_transmission takes hartree and cm^-1: give it hbar omega in the same energy unit
        assert eckart_transmission(e, v1, v2, omega / WAVENUMBER_EH) == pytest.approx(transmission, rel=1e-6)


def test_eckart_approaches_wigner_at_high_temperature():
    # for a high barrier and a small curvature the Eckart kappa tends to Wigner's as T grows (Wigner 1932:
    # the leading term of the parabolic-top expansion kappa = (u/2)/sin(u/2) = 1 + u^2/24 + 7u^4/5760 + ...,
    # Bell, Trans. Faraday Soc. 1959, 55, 1); where u is not small the Eckart value follows Bell's form
    v = to_hartree(100.0, "kcal/mol")
    temps = np.array([400.0, 800.0, 1600.0, 3200.0])
    deviation = np.abs(eckart_kappa(300.0, v, v, temps) / wigner_kappa(300.0, temps) - 1)
    assert np.all(np.diff(deviation) < 0)
    assert deviation[-1] < 1e-4
    u = 300.0 * WAVENUMBER_EH / (constants.k * 298.15 / constants.physical_constants["Hartree energy"][0])
    assert eckart_kappa(300.0, v, v, 298.15) == pytest.approx((u / 2) / np.sin(u / 2), rel=1e-3)
    assert abs(eckart_kappa(300.0, v, v, 298.15) - wigner_kappa(300.0, 298.15)) > 4e-3  # and not Wigner's there


def test_eckart_wide_barrier_gives_no_tunnelling():
    # a wide (low-frequency) barrier transmits classically: kappa -> 1 (Eckart 1930, the classical limit)
    v1, v2 = to_hartree(15.0, "kcal/mol"), to_hartree(20.0, "kcal/mol")
    assert eckart_kappa(-5.0, v1, v2, 298.15) == pytest.approx(1.0, abs=1e-4)
    assert eckart_kappa(-50.0, v1, v2, 298.15) > eckart_kappa(-5.0, v1, v2, 298.15)


def test_eckart_is_stable_at_low_temperature_and_large_barriers():
    v1, v2 = to_hartree(60.0, "kcal/mol"), to_hartree(80.0, "kcal/mol")
    with np.errstate(over="raise", invalid="raise", divide="raise"):
        kappa = eckart_kappa(-2500.0, v1, v2, np.array([50.0, 100.0, 298.15]))
        assert eckart_kappa(-2500.0, v1, v2, 10.0) == np.inf  # beyond the float range, said as inf
    assert np.all(np.isfinite(kappa)) and np.all(np.diff(kappa) < 0) and kappa[-1] > 1
    with pytest.raises(ValueError, match="positive"):
        eckart_kappa(-1000.0, -0.001, v2, 298.15)


def test_reaction_rates_obeys_detailed_balance():
    # microscopic reversibility (Tolman 1924): k_f / k_r = K = (c0)^(m_r - m_f) exp(-dG_r / RT) with one kappa
    t = np.array([273.15, 298.15, 350.0])
    dgf, dgr = to_hartree(18.0, "kcal/mol"), to_hartree(25.0, "kcal/mol")
    out = reaction_rates(dgf, dgr, t, 2, 1, "1M", -1400.0, to_hartree(12.0, "kcal/mol"),
                         to_hartree(19.0, "kcal/mol"), degeneracy=2.0)
    assert (out["k_unit_forward"], out["k_unit_reverse"]) == ("M^-1 s^-1", "s^-1")
    np.testing.assert_allclose(out["kappa"], out["kappa_eckart"])
    k_eq = np.exp(-(dgf - dgr) * constants.physical_constants["Hartree energy"][0] / (constants.k * t))
    np.testing.assert_allclose(out["k_forward"] / out["k_reverse"], k_eq, rtol=1e-10)
    plain = reaction_rates(dgf, dgr, 298.15, 2, 1, "1M", -1400.0, 0.02, 0.03, tunnelling="none")
    assert plain["kappa"] == 1.0 and plain["k_forward"] == pytest.approx(eyring_rate(dgf, 298.15, 2)[0])
    assert reaction_rates(dgf, dgr, 298.15, 1, 1, "1M", -1400.0, 0.02, 0.03, tunnelling="wigner")["kappa"] == (
        pytest.approx(wigner_kappa(1400.0, 298.15))
    )


def test_reaction_rates_without_an_eckart_barrier_says_why():
    out = reaction_rates(0.02, 0.03, 298.15, 1, 1, "1M", -900.0, 0.01, -0.002)
    assert out["kappa"] == 1.0 and np.isnan(out["kappa_eckart"]) and out["kappa_wigner"] > 1
    assert any("Eckart" in n for n in out["notes"])
    # notes speak of the chosen model only
    assert reaction_rates(0.02, 0.03, 298.15, 1, 1, "1M", -900.0, 0.01, -0.002, tunnelling="wigner")["notes"] == []
    none = reaction_rates(0.02, 0.03, 298.15, 1, 1, "1M", None, tunnelling="wigner")
    assert none["kappa"] == 1.0 and "imaginary" in none["notes"][0]


def test_arrhenius_fit_recovers_parameters():
    # synthetic data of the modified Arrhenius form itself (Kooij 1893): the fit must return A, n, Ea
    t = np.linspace(300.0, 1500.0, 25)
    ea = to_hartree(12.0, "kcal/mol")
    k = 3.0e5 * t**1.7 * np.exp(-ea * constants.physical_constants["Hartree energy"][0] / (constants.k * t))
    fit = fit_arrhenius(t, k, unit="cm^3 molecule^-1 s^-1")
    assert pytest.approx(3.0e5, rel=1e-8) == fit.A
    assert fit.n == pytest.approx(1.7, abs=1e-9)
    assert fit.Ea_kcal_mol == pytest.approx(12.0, rel=1e-9)
    assert fit.max_rel_error < 1e-9 and (fit.T_min, fit.T_max) == (300.0, 1500.0)
    # a curved k(T) (Eckart tunnelling) fitted with n fixed at 0 leaves a visible error
    kappa = eckart_kappa(-1500.0, 0.02, 0.03, t)
    assert fit_arrhenius(t, k * kappa, n=0).max_rel_error > 1e-3
    with pytest.raises(ValueError):
        fit_arrhenius([300.0, 400.0], [1.0, 2.0])


def test_energy_span_two_state_cycle_closed_form():
    # one intermediate I and one TS T: the cycle I -> [T] -> I + products is a single reversible
    # elementary step, so the steady-state TOF is its net rate, from Eyring both ways:
    # TOF = k+ - k- = (kT/h)[exp(-(T-I)/RT) - exp(-(T-I-dGr)/RT)] = (kT/h)(exp(-dGr/RT) - 1)/exp((T-I-dGr)/RT),
    # Kozuch and Shaik, Acc. Chem. Res. 2011, 44, 101, eq. for one TS and one intermediate (dG' = dGr).
    t = 298.15
    g_ts, dgr = to_hartree(21.0, "kcal/mol"), to_hartree(-5.0, "kcal/mol")
    res = energy_span([("cat", 0.0, False), ("ts", g_ts, True)], dgr, t)
    rt = constants.R * t
    kt_h = constants.k * t / constants.h
    expected = kt_h * (np.exp(-21 * KCAL_MOL / rt) - np.exp(-(21 + 5) * KCAL_MOL / rt))
    assert res.tof == pytest.approx(expected, rel=1e-10)
    assert (res.tdts, res.tdi) == ("ts", "cat")
    assert res.energy_span == pytest.approx(g_ts)
    assert res.degree_of_control == pytest.approx({"cat": 1.0, "ts": 1.0})


def _steady_state_tof(g, is_ts, dgr, t):
    """Net cycle flux of I0 -> TS1 -> I1 -> ... -> I0 + dGr at steady state, each step by Eyring both ways."""
    kt = constants.k * t / constants.physical_constants["Hartree energy"][0]
    nu = constants.k * t / constants.h
    inter = [i for i, x in enumerate(is_ts) if not x]
    ts = [i for i, x in enumerate(is_ts) if x]
    n = len(inter)
    levels = [g[i] for i in inter] + [g[inter[0]] + dgr]
    kf = [nu * np.exp(-(g[ts[j]] - levels[j]) / kt) for j in range(n)]
    kr = [nu * np.exp(-(g[ts[j]] - levels[j + 1]) / kt) for j in range(n)]
    m = np.zeros((n, n))  # master equation d x_j / dt = sum_i m[j, i] x_i
    for j in range(n):
        nxt = (j + 1) % n
        m[j, j] -= kf[j]
        m[nxt, j] += kf[j]
        m[nxt, nxt] -= kr[j]
        m[j, nxt] += kr[j]
    system = np.vstack([m, np.ones(n)])
    x = np.linalg.lstsq(system, np.r_[np.zeros(n), 1.0], rcond=None)[0]
    return kf[0] * x[0] - kr[0] * x[1 % n]


def test_energy_span_against_steady_state_kinetics():
    # the energy span TOF is the exact steady-state flux of the cycle (Kozuch and Shaik 2011; Christiansen,
    # Adv. Catal. 1953, 5, 311); the degree of TOF control is -dlnTOF/d(G_i/RT) for a TS and +dlnTOF/d(G_j/RT)
    # for an intermediate (Kozuch and Shaik, J. Phys. Chem. A 2008, 112, 6032), by finite differences here
    t = 350.0
    kcal = [0.0, 18.0, 4.0, 22.0, -15.0, 0.0]
    names = ["cat", "ts1", "int1", "ts2", "int2", "ts3"]
    is_ts = [False, True, False, True, False, True]
    g = [to_hartree(x, "kcal/mol") for x in kcal]
    dgr = to_hartree(-12.0, "kcal/mol")
    res = energy_span(list(zip(names, g, is_ts, strict=True)), dgr, t)
    assert res.tof == pytest.approx(_steady_state_tof(g, is_ts, dgr, t), rel=1e-8)
    # by hand, dE(TS, I) = T - I when the TS follows I, T - I + dGr when it precedes it: the largest is
    # ts2 (22) before int2 (-15): 22 + 15 - 12 = 25 kcal/mol (next: ts2 after cat, 22; ts1 before int2, 21)
    assert (res.tdts, res.tdi) == ("ts2", "int2")
    assert res.energy_span == pytest.approx(to_hartree(25.0, "kcal/mol"))
    kt = constants.k * t / constants.physical_constants["Hartree energy"][0]
    step = 1e-4 * kt
    for p, name in enumerate(names):
        shifted = list(g)
        shifted[p] += step
        ln_ratio = np.log(_steady_state_tof(shifted, is_ts, dgr, t) / res.tof)
        sensitivity = (-1 if is_ts[p] else 1) * ln_ratio / (step / kt)
        assert res.degree_of_control[name] == pytest.approx(sensitivity, abs=1e-4)
    assert res.tof_energy_span == pytest.approx(res.tof, rel=0.5)


def test_energy_span_rejects_malformed_cycles():
    with pytest.raises(ValueError):
        energy_span([("ts", 0.02, True), ("cat", 0.0, False)], -0.01, 298.15)
    with pytest.raises(ValueError):
        energy_span([("cat", 0.0, False), ("a", 0.02, True), ("b", 0.03, True)], -0.01, 298.15)


def test_rates_beyond_double_precision_are_refused_or_noted():
    # IEEE 754 double precision ends near 1.8e308: an Eckart kappa of a 1200i cm^-1, 0.07 Eh barrier overflows
    # at a few kelvin (deep tunnelling, outside the one-dimensional model), which must be a reason, not inf
    t = np.array([5.0, 10.0, 300.0])
    with pytest.raises(ValueError, match=r"not finite at 5, 10 K"):
        reaction_rates(0.07, 0.05, t, 1, 1, "1M", -1200.0, 0.07, 0.05, tunnelling="eckart")
    # exp(-0.3 Eh / k_B 20 K) = exp(-4737) is below the smallest double: k = 0 is said, not hidden
    out = reaction_rates(0.3, 0.25, np.array([20.0, 300.0]), 1, 1, "1M", -1200.0, 0.3, 0.25, tunnelling="none")
    assert out["k_forward"][0] == 0 and out["k_forward"][1] > 0
    assert out["notes"] == ["a rate constant underflows to 0 (below 1e-308) at 20 K"]

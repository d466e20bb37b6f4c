"""Hindered internal rotors (qcthermo/rotors.py and Conditions(internal_rotors="hindered")).

Sources of the check values, named beside each check:
- "free rotor": S = k [ln(sqrt(8 pi^3 I k T) / (sigma h)) + 1/2] of a 1-D free rotor (K. S. Pitzer and
  W. D. Gwinn, J. Chem. Phys. 1942, 10, 428; McQuarrie, Statistical Mechanics; from memory).
- "classical": the classical hindered rotor of V0/2 (1 - cos n phi): q = (1/sigma) sqrt(2 pi I k T)/hbar
  e^-x I0(x), x = V0 / 2kT (Pitzer and Gwinn's classical limit; from memory), with scipy's Bessel functions.
- "Mathieu": the ground level of the cosine well, E0 = hbar omega / 2 - B n^2 / 16, from the asymptotic
  Mathieu characteristic value a ~ -2q + 2w sqrt(q) - (w^2 + 1)/8 (Abramowitz & Stegun 20.2.30; from memory).
- "Pitzer": the reduced moment of a symmetric top on a principal axis, A_top A_frame / (A_top + A_frame).
- "gri30": Cantera's bundled gri30.yaml (GRI-Mech 3.0), 1 atm; molecules of tests/rotor_molecules.py.
- "printed": the number as printed in the log.
- "common practice": sigma_int of CH3 is 3; rings, double and triple bonds are not rotors.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from rotor_molecules import BARRIERS_CM, ETHANE, METHANOL, MOLECULES, PROPANE, molecule, zmatrix
from scipy.special import i0e, i1e

import qcthermo
from qcthermo import Conditions, Molecule, thermochemistry
from qcthermo import rotors as R
from qcthermo.records import TorsionScan, atomic_masses
from qcthermo.thermo import harmonic_entropy, vibrational_temperatures
from qcthermo.units import H_PLANCK, HBAR, K_B, K_B_EH, WAVENUMBER_EH, entropy_to_j_mol_k

AMU_A2 = 1.66053906660e-47  # kg m^2 per u*angstrom^2 (CODATA 2018 u; from memory)


def _classical(v0_eh, inertia, sigma, t):
    """S and Cv (units of k) of the classical hindered rotor (source "classical")."""
    x = v0_eh / (2 * K_B_EH * t)
    ln_q = np.log(np.sqrt(2 * np.pi * inertia * AMU_A2 * K_B * t) / HBAR / sigma) + np.log(i0e(x))  # e^-x I0
    ratio = i1e(x) / i0e(x)
    u = 0.5 + x - x * ratio  # <E>/kT: kinetic 1/2, potential V0/2 - (V0/2) I1/I0
    cv = 0.5 + x**2 * (1 - ratio**2 - ratio / x)
    return ln_q + u, cv


# -- structure -------------------------------------------------------------------------------------


@pytest.mark.parametrize(("geometry", "expected"), [(ETHANE, [3]), (METHANOL, [3]), (PROPANE, [3, 3])])
def test_torsions_found_with_their_symmetry_numbers(geometry, expected):
    symbols, xyz = geometry
    torsions = R.find_torsions(symbols, xyz, atomic_masses(symbols))
    assert sorted(t.symmetry_number for t in torsions) == expected  # common practice: CH3 3, OH alone 1
    if geometry is METHANOL:  # the CH3 is the symmetric side, the OH the top with the smaller moment
        assert [symbols[a] for a in torsions[0].top] == ["O", "H"]


def test_not_rotors():
    """Common practice: a ring bond, a double bond and a bond to a linear top are not rotors."""
    cyclopropane = zmatrix([("C",), ("C", 0, 1.51), ("C", 1, 1.51, 0, 60.0),
                            ("H", 0, 1.08, 1, 118.0, 2, 110.0), ("H", 0, 1.08, 1, 118.0, 2, -110.0),
                            ("H", 1, 1.08, 0, 118.0, 2, 110.0), ("H", 1, 1.08, 0, 118.0, 2, -110.0),
                            ("H", 2, 1.08, 1, 118.0, 0, 110.0), ("H", 2, 1.08, 1, 118.0, 0, -110.0)])
    ethylene = zmatrix([("C",), ("C", 0, 1.339), ("H", 0, 1.086, 1, 121.3), ("H", 0, 1.086, 1, 121.3, 2, 180.0),
                        ("H", 1, 1.086, 0, 121.3, 2, 0.0), ("H", 1, 1.086, 0, 121.3, 2, 180.0)])
    propyne = zmatrix([("C",), ("C", 0, 1.459), ("C", 1, 1.206, 0, 180.0), ("H", 2, 1.056, 1, 180.0),
                       ("H", 0, 1.095, 1, 110.2, 2, 0.0), ("H", 0, 1.095, 1, 110.2, 2, 120.0),
                       ("H", 0, 1.095, 1, 110.2, 2, 240.0)])
    for symbols, xyz in (cyclopropane, ethylene, propyne):
        xyz = xyz + np.random.default_rng(3).normal(scale=1e-4, size=xyz.shape)  # no exact collinearity
        assert R.find_torsions(symbols, xyz, atomic_masses(symbols)) == []


def test_reduced_moment_of_a_symmetric_top():
    symbols, xyz = ETHANE
    m = atomic_masses(symbols)
    (torsion,) = R.find_torsions(symbols, xyz, m)
    r_perp = 1.094 * np.sin(np.radians(180 - 111.2))
    a_top = 3 * m[2] * r_perp**2
    assert torsion.reduced_moment == pytest.approx(a_top / 2, rel=1e-9)  # Pitzer: A A / (A + A)


# -- the 1-D rotor ---------------------------------------------------------------------------------


def test_free_rotor_entropy_matches_its_closed_form():
    inertia, sigma, t = 3.0, 3, np.array([200.0, 298.15, 1000.0])
    b = R.rotational_constant(inertia)
    flat = R.TorsionPotential(cos=np.zeros(1), sin=np.zeros(1))
    levels = R.rotor_levels(flat, b, R.basis_size(flat, b, t.max()))
    s = R.level_functions(levels, sigma, t)["S"] / K_B_EH
    q = np.sqrt(8 * np.pi**3 * inertia * AMU_A2 * K_B * t) / (sigma * H_PLANCK)
    np.testing.assert_allclose(s, np.log(q) + 0.5, rtol=1e-9)  # free rotor


def test_ground_level_of_the_cosine_well():
    inertia, n, nu = 1.57, 3, 289.0
    b = R.rotational_constant(inertia)
    v0 = R.barrier_from_frequency(nu, inertia, n)
    levels = R.rotor_levels(R.cosine_potential(v0, n), b, 200)
    correction = b * n**2 / 16
    assert abs(levels[0] - (nu * WAVENUMBER_EH / 2 - correction)) < 0.1 * correction  # Mathieu
    np.testing.assert_allclose(levels[:3], levels[0], atol=1e-2 * correction)  # three wells, one level each


def test_basis_is_converged():
    b = R.rotational_constant(1.57)
    potential = R.cosine_potential(R.barrier_from_frequency(289.0, 1.57, 3), 3)
    m = R.basis_size(potential, b, 3000.0)
    small, large = R.rotor_levels(potential, b, m), R.rotor_levels(potential, b, 2 * m)
    t = np.array([100.0, 1000.0, 3000.0])
    for key in ("S", "Cv"):
        np.testing.assert_allclose(R.level_functions(small, 3, t)[key], R.level_functions(large, 3, t)[key],
                                   rtol=1e-10)


@pytest.mark.parametrize("sigma", [3, 1])
def test_low_temperature_limit_is_one_harmonic_well(sigma):
    """sigma_int 3 over a 3-fold potential: the sum over the full turn divided by 3 is one well; with
    sigma_int 1 the three wells count (k ln 3 more). The well's oscillator has the level spacing E_3 - E_0.
    (Ethane's barrier: the tunnelling splitting of the lowest three levels is far below k T.)"""
    inertia, nu = 1.57, 289.0
    b = R.rotational_constant(inertia)
    levels = R.rotor_levels(R.cosine_potential(R.barrier_from_frequency(nu, inertia, 3), 3), b, 200)
    spacing = (levels[3] - levels[0]) / WAVENUMBER_EH
    t = vibrational_temperatures(spacing) / 6  # x = 6: the first excited level counts, the anharmonic ones not
    s_ho = harmonic_entropy(vibrational_temperatures(spacing), t) / K_B_EH
    s = R.level_functions(levels, sigma, t)["S"] / K_B_EH
    assert s[0] == pytest.approx(s_ho + np.log(3 / sigma), abs=0.01 * s_ho)  # harmonic limit


def test_heat_capacity_peak_and_high_temperature_limit():
    """A heavy rotor (I = 200 u A^2) with V0 = 1000 cm^-1: its quantum Cv(T) peaks above k where the classical
    rotor's does, and both fall to the free rotor's k/2; S tends to the free rotor's."""
    inertia, v0 = 200.0, 1000.0 * WAVENUMBER_EH
    b = R.rotational_constant(inertia)
    potential = R.cosine_potential(v0, 3)
    t = np.linspace(100.0, 6000.0, 400)
    levels = R.rotor_levels(potential, b, R.basis_size(potential, b, t.max()))
    terms = R.level_functions(levels, 3, t)
    s_cl, cv_cl = _classical(v0, inertia, 3, t)
    cv = terms["Cv"] / K_B_EH
    assert cv.max() > 1.0 and cv_cl.max() > 1.0  # the peak rises above the oscillator's k
    assert cv.max() == pytest.approx(cv_cl.max(), rel=5e-3)  # classical
    assert t[np.argmax(cv)] == pytest.approx(t[np.argmax(cv_cl)], rel=0.05)  # classical
    np.testing.assert_allclose(terms["S"][-50:] / K_B_EH, s_cl[-50:], atol=2e-3)  # classical
    assert cv[-1] == pytest.approx(0.5, abs=0.02)  # free rotor: k/2


def test_fourier_fit_of_a_scan():
    """A 3-fold potential with a V6 term, sampled over one period, is recovered (and an asymmetric one over
    the full turn)."""
    true = R.TorsionPotential(cos=np.array([0.002, 0, 0, -0.0018, 0, 0, -0.0002]), sin=np.zeros(7))
    phi = np.radians(np.arange(0.0, 121.0, 20.0))
    fitted, rms = R.fit_potential(phi, true(phi) - 76.0, 3)
    grid = np.linspace(0, 2 * np.pi, 50)
    np.testing.assert_allclose(fitted(grid), true(grid) - true.extrema()[0], atol=1e-9)
    assert rms < 1e-10
    asym = R.TorsionPotential(cos=np.array([0.003, -0.001, 0, -0.002]), sin=np.array([0, 0.0005, 0, 0]))
    phi = np.radians(np.arange(0.0, 360.0, 30.0))
    fitted, _ = R.fit_potential(phi, asym(phi), 1)
    np.testing.assert_allclose(fitted(grid), asym(grid) - asym.extrema()[0], atol=1e-9)


# -- the engine ------------------------------------------------------------------------------------


def _j(value):
    return entropy_to_j_mol_k(value)


@pytest.fixture(scope="module")
def gri30():
    import cantera as ct

    return ct.Solution("gri30.yaml")


@pytest.mark.parametrize("name", sorted(MOLECULES))
def test_closer_to_gri30_than_harmonic(gri30, name):
    """Barriers from the fundamentals (no scan): closer to GRI-Mech 3.0 than the harmonic torsion in S at
    298 K and Cp at 1000 K, where the physics says so (DESIGN.md section 10)."""
    thermo = gri30.species(name).thermo
    t = np.array([298.15, 1000.0])
    harmonic = thermochemistry(molecule(name), Conditions(temperature=t, low_mode_model="rrho"))
    hindered = thermochemistry(molecule(name), Conditions(temperature=t, low_mode_model="rrho",
                                                          internal_rotors="hindered"))
    s_ref, cp_ref = thermo.s(298.15) / 1000, thermo.cp(1000.0) / 1000  # gri30
    assert abs(_j(hindered.entropy[0]) - s_ref) < abs(_j(harmonic.entropy[0]) - s_ref)
    assert abs(_j(hindered.cp[1]) - cp_ref) < abs(_j(harmonic.cp[1]) - cp_ref)
    assert abs(_j(hindered.entropy[0]) - s_ref) < 1.3 and abs(_j(hindered.cp[1]) - cp_ref) < 0.6
    assert len(hindered.rotors) == len(MOLECULES[name][1])


@pytest.mark.parametrize("name", sorted(MOLECULES))
def test_experimental_barriers_reach_gri30(gri30, name):
    """The barriers of BARRIERS_CM given as scans (cosine points over one period): within 0.3 J/(mol K) of
    GRI-Mech 3.0 in S and Cp at 298 and 1000 K."""
    plain = molecule(name)
    scans = []
    for torsion in R.find_torsions(plain.symbols, plain.coordinates, plain.masses):
        phi = np.radians(np.arange(0.0, 120.0, 15.0))
        v = BARRIERS_CM[name] * WAVENUMBER_EH / 2 * (1 - np.cos(3 * phi))
        start = R.dihedral_angles(plain.coordinates, torsion.atoms)
        scans.append(TorsionScan(torsion.atoms, phi + start, v - 40.0, "experimental barrier"))
    t = np.array([298.15, 1000.0])
    res = thermochemistry(plain.replace(torsion_scans=scans), Conditions(temperature=t, low_mode_model="rrho",
                                                                          internal_rotors="hindered"))
    thermo = gri30.species(name).thermo
    for i, temp in enumerate(t):
        assert _j(res.entropy[i]) == pytest.approx(thermo.s(temp) / 1000, abs=0.3)  # gri30
        assert _j(res.cp[i]) == pytest.approx(thermo.cp(temp) / 1000, abs=0.3)  # gri30


def test_methanol_entropy_at_1000_k_falls_below_harmonic():
    """DESIGN.md section 10: a low-barrier rotor's S grows as ln T / 2, the oscillator's as ln T."""
    t = np.array([298.15, 1000.0])
    harmonic = thermochemistry(molecule("CH3OH"), Conditions(temperature=t, low_mode_model="rrho"))
    hindered = thermochemistry(molecule("CH3OH"), Conditions(temperature=t, internal_rotors="hindered",
                                                             low_mode_model="rrho"))
    assert hindered.entropy[1] < harmonic.entropy[1]
    assert hindered.entropy[0] > harmonic.entropy[0]


def test_propane_torsions_share_two_modes():
    res = thermochemistry(molecule("C3H8"), Conditions(internal_rotors="hindered"))
    assert sorted(r.frequency for r in res.rotors) == [216.0, 268.0]
    for rotor in res.rotors:
        assert rotor.overlap == pytest.approx(0.5, abs=0.1)  # the sum and the difference of the two torsions
        assert rotor.subspace_overlap == pytest.approx(1.0, abs=1e-6)


def test_torsion_without_its_mode_is_left_harmonic():
    """The torsion spread evenly over three modes (an orthogonal mixing keeps them orthonormal): no mode is
    the torsion (overlap 1/3 each), so it stays a harmonic oscillator."""
    plain = molecule("C2H6")
    modes = plain.normal_modes.copy()
    mixing = np.linalg.qr(np.c_[np.ones(3), np.eye(3)[:, :2]])[0].T  # first row (1, 1, 1)/sqrt(3)
    modes[[0, 5, 6]] = np.einsum("ij,jab->iab", mixing.T, modes[[0, 5, 6]])
    res = thermochemistry(plain.replace(normal_modes=modes), Conditions(internal_rotors="hindered"))
    assert res.rotors == []
    assert any("no normal mode is this torsion" in n for n in res.notes)
    harmonic = thermochemistry(plain, Conditions())
    assert res.gibbs == pytest.approx(harmonic.gibbs, abs=1e-12)


def test_no_mode_vectors_no_rotors():
    plain = molecule("C2H6")
    res = thermochemistry(plain.replace(normal_modes=None), Conditions(internal_rotors="hindered"))
    assert res.rotors == [] and any("no normal-mode vectors" in n for n in res.notes)


def test_real_ethane_log(samples):
    calc = qcthermo.read_log(samples / "gas/ethane.out")
    res = thermochemistry(Molecule.from_calculation(calc), Conditions(internal_rotors="hindered"))
    (rotor,) = res.rotors
    assert rotor.frequency == pytest.approx(314.28)  # printed: the lowest P.Frequency, the torsion (A1u)
    assert rotor.overlap > 0.95
    assert rotor.torsion.symmetry_number == 3  # common practice
    harmonic = thermochemistry(Molecule.from_calculation(calc), Conditions())
    # the rotor's ground level replaces the mode's h nu / 2 (Mathieu: lower by B n^2 / 16)
    shift = R.rotational_constant(rotor.torsion.reduced_moment) * 9 / 16
    assert harmonic.zpe - res.zpe == pytest.approx(shift, rel=0.1)


def test_conditions_refuse_an_unknown_treatment():
    with pytest.raises(ValueError, match="internal-rotor"):
        Conditions(internal_rotors="free")


def test_the_mode_is_found_by_projection_not_by_frequency():
    """A non-torsional mode moved below the torsion (150 cm^-1): the rotor still replaces the 289 cm^-1 mode."""
    plain = molecule("C2H6")
    frequencies = plain.frequencies.copy()
    frequencies[5] = 150.0
    res = thermochemistry(plain.replace(frequencies=frequencies), Conditions(internal_rotors="hindered"))
    assert [r.frequency for r in res.rotors] == [289.0]
    assert 150.0 in res.frequencies_used and 289.0 not in res.frequencies_used


def test_an_ensemble_without_mode_vectors_says_so_once(samples):
    # xTB's standard output prints no normal-mode vectors (sample_outputs/README.md): each of the eight pentane
    # conformers leaves its four C-C torsions harmonic, and the species says it once, naming the files
    from qcthermo.species import build_species

    calcs = [qcthermo.read_log(p) for p in sorted((samples / "conformers").glob("pentane_*.out"))]
    species = build_species("pentane", calcs, Conditions(internal_rotors="hindered"))
    said = [f for f in species.findings if "no normal-mode vectors" in f.message]
    assert len(said) == 1 and said[0].subject == "pentane"
    assert f"(in {len(species.used)} files: " in said[0].message
    assert all(Path(c.path).name in said[0].message for c in species.used)

"""Engine behaviour: standard states, low-mode limits, imaginary modes, symmetry numbers, arrays.

Molecules and fundamentals come from test_thermo_cantera.py (typed in from memory). Where a test
changes a mode (an imaginary one, a soft one) the changed set is only an input, named as such; the
check values are stated beside each assertion with their source.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_thermo_cantera import MOLECULES, molecule

from qcthermo import Conditions, Molecule, ThermoError, thermochemistry
from qcthermo.thermo import (
    K_B_EH,
    free_rotor_entropy,
    harmonic_entropy,
    qrrho_entropy,
    thermochemistry_many,
    vibrational_temperatures,
)
from qcthermo.units import CALORIE_J, HARTREE_J, N_A, R_GAS, entropy_to_j_mol_k, hartree_to

MODELS = ("rrho", "qrrho", "qrrho-enthalpy", "quasi-harmonic")


def kcal(value):
    return hartree_to(value, "kcal/mol")


def test_sackur_tetrode_argon():
    # NIST-JANAF: S(Ar, 298.15 K, 1 bar) = 154.8 J/(mol K), 154.845 to three decimals (from memory);
    # 40Ar instead of natural argon adds 3/2 R ln(39.962/39.948) = 0.004
    argon = Molecule(["Ar"], [[0, 0, 0]], [])
    res = thermochemistry(argon, Conditions(standard_state="1bar"))
    assert entropy_to_j_mol_k(res.entropy) == pytest.approx(154.845, abs=0.01)
    assert res.zpe == 0.0
    assert res.components["rotational"]["S"] == 0.0
    assert entropy_to_j_mol_k(res.cp) == pytest.approx(2.5 * R_GAS, rel=1e-9)  # 5/2 R, monatomic ideal gas


def test_one_atm_to_one_molar_shift():
    # common practice: 1 atm -> 1 M raises G by RT ln(24.465) = 1.894 kcal/mol at 298.15 K
    mol = molecule("H2O")
    g_atm = thermochemistry(mol, Conditions(standard_state="1atm")).gibbs
    g_1m = thermochemistry(mol, Conditions(standard_state="1M")).gibbs
    assert kcal(g_1m - g_atm) == pytest.approx(1.894, abs=0.001)
    # a solvent as its own standard state (55.3 M): a further RT ln 55.3 (common practice, 2.38 kcal/mol)
    g_water = thermochemistry(mol, Conditions(standard_state="55.3M")).gibbs
    assert kcal(g_water - g_1m) == pytest.approx(R_GAS * 298.15 * np.log(55.3) / 1000 / (CALORIE_J), rel=1e-9)
    assert kcal(g_water - g_1m) == pytest.approx(2.38, abs=0.01)


def test_pressure_overrides_standard_state():
    # ideal gas: S(p) = S(p0) - k ln(p/p0)
    mol = molecule("CO")
    s_atm = thermochemistry(mol, Conditions(standard_state="1M", pressure=101325.0)).entropy
    s_ten = thermochemistry(mol, Conditions(pressure=1013250.0)).entropy
    assert s_atm - s_ten == pytest.approx(K_B_EH * np.log(10), rel=1e-9)


def test_totals_are_consistent():
    # H = U + kT, G = H - TS, Cp = Cv + k, components add up; O2's triplet gives S_e = k ln 3
    res = thermochemistry(molecule("O2"), Conditions(temperature=500.0, low_mode_model="rrho"))
    assert res.enthalpy == pytest.approx(res.thermal_energy + K_B_EH * 500.0, rel=1e-12)
    assert res.gibbs == pytest.approx(res.enthalpy - 500.0 * res.entropy, rel=1e-12)
    assert res.cp == pytest.approx(res.cv + K_B_EH, rel=1e-12)
    assert sum(c["S"] for c in res.components.values()) == pytest.approx(res.entropy, rel=1e-12)
    assert sum(c["U"] for c in res.components.values()) + res.electronic_energy == pytest.approx(
        res.thermal_energy, rel=1e-12)
    assert res.components["electronic"]["S"] == pytest.approx(K_B_EH * np.log(3), rel=1e-12)
    assert res.rrho["gibbs"] == res.gibbs


def test_energies_are_absolute():
    mol = molecule("N2").replace(energy=-109.5)
    res = thermochemistry(mol, Conditions())
    ref = thermochemistry(molecule("N2"), Conditions())
    assert res.gibbs - ref.gibbs == pytest.approx(-109.5, rel=1e-12)
    assert res.electronic_energy == -109.5


def test_qrrho_equals_rrho_for_stiff_modes():
    # Grimme 2012: w -> 1 far above the threshold (methane's lowest mode is 1306 cm^-1)
    mol = molecule("CH4")
    res = thermochemistry(mol, Conditions(low_mode_model="qrrho", low_mode_threshold=100.0))
    assert entropy_to_j_mol_k(res.entropy - res.rrho["entropy"]) == pytest.approx(0.0, abs=1e-3)
    assert kcal(res.gibbs - res.rrho["gibbs"]) == pytest.approx(0.0, abs=1e-4)


def test_qrrho_equals_free_rotor_for_soft_modes():
    # Grimme 2012: w -> 0 far below the threshold; the free-rotor entropy then tends to that of a rotor
    # with moment B_av: S = k [1/2 + ln(sqrt(8 pi^3 B_av k T / h^2))] (eq. 6 with mu' -> B_av)
    from qcthermo.units import H_PLANCK, K_B

    t = np.array([100.0, 298.15, 1000.0])
    assert qrrho_entropy(0.01, t, 100.0) == pytest.approx(free_rotor_entropy(0.01, t), rel=1e-12)
    limit = K_B_EH * (0.5 + 0.5 * np.log(8 * np.pi**3 * 1e-44 * K_B * t / H_PLANCK**2))
    np.testing.assert_allclose(free_rotor_entropy(1e-9, t), limit, rtol=1e-7)
    # and at the threshold itself the two entropies are mixed half and half
    s_ho = harmonic_entropy(vibrational_temperatures(100.0), t)
    np.testing.assert_allclose(qrrho_entropy(100.0, t, 100.0), 0.5 * (s_ho + free_rotor_entropy(100.0, t)))


def test_soft_mode_models_differ_from_rrho():
    # a 20 cm^-1 mode in place of ethylene's 826 cm^-1 one (input only): the harmonic entropy of such
    # a mode is larger than the free-rotor one (Grimme 2012, Figure 1), so qrrho lowers S
    freqs = np.array(MOLECULES["C2H4"][1], dtype=float)
    freqs[freqs == 826] = 20.0
    mol = molecule("C2H4").replace(frequencies=freqs)
    results = {m: thermochemistry(mol, Conditions(low_mode_model=m)) for m in MODELS}
    assert results["qrrho"].entropy < results["rrho"].entropy
    assert results["qrrho-enthalpy"].entropy == pytest.approx(results["qrrho"].entropy, rel=1e-12)
    assert results["qrrho-enthalpy"].enthalpy != results["qrrho"].enthalpy
    # quasi-harmonic: the 20 cm^-1 mode counts as a 100 cm^-1 one (Ribeiro et al. 2011)
    raised = mol.replace(frequencies=np.where(freqs == 20.0, 100.0, freqs))
    rrho = thermochemistry(raised, Conditions(low_mode_model="rrho"))
    assert results["quasi-harmonic"].entropy == pytest.approx(rrho.entropy, rel=1e-12)
    for res in results.values():
        assert res.rrho["entropy"] == pytest.approx(results["rrho"].entropy, rel=1e-12)


@pytest.mark.parametrize("model", MODELS)
def test_temperature_array_equals_scalar_loop(model):
    mol = molecule("NH3")
    temps = np.array([50.0, 150.0, 298.15, 800.0, 2500.0])
    cond = Conditions(temperature=temps, low_mode_model=model, low_mode_threshold=1000.0)
    res = thermochemistry(mol, cond)
    for i, t in enumerate(temps):
        one = thermochemistry(mol, cond.replace(temperature=float(t)))
        assert isinstance(one.gibbs, float)
        for name in ("thermal_energy", "enthalpy", "entropy", "gibbs", "cv", "cp"):
            assert getattr(res, name)[i] == pytest.approx(getattr(one, name), rel=1e-12)
            assert res.rrho[name][i] == pytest.approx(one.rrho[name], rel=1e-12)


def test_batch_equals_single_molecules():
    # molecules of different sizes are padded to one array; padding must not leak into the results
    mols = [molecule(n) for n in ("CO", "C2H4", "H2O", "CO2")] + [Molecule(["Ar"], [[0, 0, 0]], [])]
    cond = Conditions(temperature=np.array([200.0, 400.0]), low_mode_model="qrrho")
    for mol, res in zip(mols, thermochemistry_many(mols, cond), strict=True):
        np.testing.assert_allclose(res.gibbs, thermochemistry(mol, cond).gibbs, rtol=1e-12)


def test_large_imaginary_mode_on_minimum_is_refused():
    # docs/thermo.md, "Mode clean-up": a -400 cm^-1 mode on a "minimum" (input: water's bend made imaginary)
    mol = molecule("H2O").replace(frequencies=np.array([-400.0, 3657.0, 3756.0]))
    with pytest.raises(ThermoError) as err:
        thermochemistry(mol, Conditions())
    assert "\n" not in str(err.value) and "-400.0" in str(err.value)


def test_small_imaginary_mode_is_inverted_with_a_note():
    # docs/thermo.md, "Mode clean-up": -15 cm^-1 is an artefact and is inverted (input: ethylene, 826 -> -15)
    freqs = np.array(MOLECULES["C2H4"][1], dtype=float)
    mol = molecule("C2H4").replace(frequencies=np.where(freqs == 826, -15.0, freqs))
    res = thermochemistry(mol, Conditions())
    ref = thermochemistry(mol.replace(frequencies=np.where(freqs == 826, 15.0, freqs)), Conditions())
    assert res.gibbs == pytest.approx(ref.gibbs, rel=1e-12)
    assert any("warning" in n and "-15.0" in n for n in res.notes)
    with pytest.raises(ThermoError):
        thermochemistry(mol, Conditions(imaginary_policy="error"))
    dropped = thermochemistry(mol, Conditions(imaginary_policy="drop"))
    assert len(dropped.frequencies_used) == len(freqs) - 1
    # the molecule's own policy wins over the conditions'
    with pytest.raises(ThermoError):
        thermochemistry(mol.replace(imaginary_policy="error"), Conditions(imaginary_policy="invert"))
    big = mol.replace(frequencies=np.where(freqs == 826, -400.0, freqs))
    assert len(thermochemistry(big, Conditions(imaginary_policy="invert")).frequencies_used) == len(freqs)


def test_transition_state_keeps_one_mode_out():
    # a first-order saddle: the largest imaginary mode is not a vibration (input: ethylene, 1623 -> -1623)
    freqs = np.array(MOLECULES["C2H4"][1], dtype=float)
    ts = molecule("C2H4").replace(frequencies=np.where(freqs == 1623, -1623.0, freqs), transition_state=True)
    res = thermochemistry(ts, Conditions())
    assert res.imaginary_frequency == -1623.0
    assert len(res.frequencies_used) == len(freqs) - 1
    assert -1623.0 not in res.frequencies_used and 1623.0 not in res.frequencies_used
    # a second, small imaginary mode follows the default policy (inverted); a large one is refused
    two = ts.replace(frequencies=np.where(freqs == 826, -15.0, ts.frequencies))
    assert thermochemistry(two, Conditions()).imaginary_frequency == -1623.0
    with pytest.raises(ThermoError):
        thermochemistry(ts.replace(frequencies=np.where(freqs == 826, -300.0, ts.frequencies)), Conditions())
    with pytest.raises(ThermoError):
        thermochemistry(molecule("C2H4").replace(transition_state=True), Conditions())
    # the same imaginary mode on a molecule not marked as a transition state is refused
    with pytest.raises(ThermoError):
        thermochemistry(ts.replace(transition_state=False), Conditions())


# benzene, D6h: r(CC) 1.397, r(CH) 1.084 angstrom; the 20 fundamentals (Wilson numbering, degeneracy
# repeated), cm^-1 (from memory)
BENZENE_FUNDAMENTALS = [993, 3073, 1350, 707, 990, 608, 608, 3056, 3056, 1601, 1601, 1178, 1178, 847, 847, 674,
                        1010, 3057, 1309, 1146, 398, 398, 967, 967, 1038, 1038, 1484, 1484, 3064, 3064]  # fmt: skip


def benzene(symmetry_number=None) -> Molecule:
    phi = np.arange(6) * np.pi / 3
    ring = np.c_[np.cos(phi), np.sin(phi), np.zeros(6)]
    xyz = np.vstack([1.397 * ring, (1.397 + 1.084) * ring])
    return Molecule(["C"] * 6 + ["H"] * 6, xyz, BENZENE_FUNDAMENTALS, symmetry_number=symmetry_number)


def test_benzene_symmetry_number_costs_rt_ln_12():
    # docs/symmetry.md: sigma = 12 for benzene lowers S by R ln 12, i.e. raises G by RT ln 12 = 1.47 kcal/mol
    g1 = thermochemistry(benzene(1), Conditions()).gibbs
    g12 = thermochemistry(benzene(12), Conditions()).gibbs
    assert kcal(g12 - g1) == pytest.approx(298.15 * R_GAS * np.log(12) / 1000 / CALORIE_J, rel=1e-9)
    assert kcal(g12 - g1) == pytest.approx(1.47, abs=0.005)


def test_benzene_symmetry_number_is_inferred():
    # common practice: sigma(C6H6) = 12; the engine must not leave it at 1 when none is given
    res = thermochemistry(benzene(), Conditions())
    assert res.symmetry_number == 12
    assert res.point_group == "D6h"
    assert res.gibbs == pytest.approx(thermochemistry(benzene(12), Conditions()).gibbs, rel=1e-12)


def test_scaling_applies_separately_to_zpe_and_thermal_terms():
    mol = molecule("H2O")
    res = thermochemistry(mol, Conditions(frequency_scale=0.96, zpe_scale=0.98))
    scaled = thermochemistry(mol.replace(frequencies=mol.frequencies * 0.96), Conditions())
    plain = thermochemistry(mol, Conditions())
    assert res.zpe == pytest.approx(0.98 * plain.zpe, rel=1e-12)
    assert res.entropy == pytest.approx(scaled.entropy, rel=1e-12)
    assert res.thermal_energy - res.zpe == pytest.approx(scaled.thermal_energy - scaled.zpe, rel=1e-12)
    assert res.scale_factors == {"thermal": 0.96, "zpe": 0.98}
    assert np.array_equal(res.frequencies_used, mol.frequencies)  # reported unscaled


def test_molar_units_of_entropy():
    # 1 Eh/K per molecule = HARTREE_J * N_A J/(mol K) (CODATA via scipy.constants)
    assert entropy_to_j_mol_k(1.0) == pytest.approx(HARTREE_J * N_A, rel=1e-15)


@pytest.mark.parametrize("name", ["H2O", "NH3", "CH4", "C2H4", "CO2", "HCN", "CO", "C6H6"])
def test_symmetry_number_survives_optimiser_noise(name):
    # common practice: sigma(H2O) 2, NH3 3, CH4 12, C2H4 4, CO2 2, HCN 1, CO 1, C6H6 12; geometries with
    # 0.005 angstrom random displacements (docs/symmetry.md, "Tolerance") must give the same sigma and linearity
    mol = benzene() if name == "C6H6" else molecule(name, with_sigma=False)
    expected = 12 if name == "C6H6" else MOLECULES[name][3]
    rng = np.random.default_rng(7)
    noisy = mol.replace(coordinates=mol.coordinates + rng.uniform(-0.005, 0.005, mol.coordinates.shape))
    clean, shaken = thermochemistry(mol, Conditions()), thermochemistry(noisy, Conditions())
    assert clean.symmetry_number == shaken.symmetry_number == expected
    assert clean.linear == shaken.linear
    assert entropy_to_j_mol_k(abs(clean.entropy - shaken.entropy)) < 0.05


@pytest.mark.parametrize(
    ("log", "settings", "tolerance_eh"),
    [
        ("gaussian16/dvb_ir.out", {}, 1e-6),  # RRHO, sigma 2 (C2h), 1 atm
        ("qchem5.4/dvb_ir.out", {}, 1e-6),
        # ORCA 5 prints "Vibrational entropy computed according to the QRRHO of S. Grimme", sigma 2
        ("orca5.0/dvb_ir.out", {"low_mode_model": "qrrho"}, 1e-5),
        # GAMESS prints "THE ROTATIONAL SYMMETRY NUMBER IS 1.0" for this transition state
        ("gamess-us2018/nh3_ts_ir.out", {"symmetry_number": 1, "transition_state": True}, 2e-6),
    ],
)
def test_programs_own_thermochemistry(third_party, log, settings, tolerance_eh):
    # reference: the totals each program printed for itself (Calculation.thermo_printed), same model;
    # the tolerances allow for each program's constants and masses (ORCA: 3e-6 Eh seen)
    import qcthermo

    calc = qcthermo.read_log(third_party / log)
    printed = calc.thermo_printed
    mol_settings = {k: v for k, v in settings.items() if k in ("symmetry_number", "transition_state")}
    mol = Molecule.from_calculation(calc, **mol_settings)
    cond = Conditions(temperature=printed["temperature"], low_mode_model=settings.get("low_mode_model", "rrho"))
    res = thermochemistry(mol, cond)
    assert res.zpe == pytest.approx(printed["zpe"], abs=tolerance_eh)
    assert res.enthalpy == pytest.approx(printed["enthalpy"], abs=tolerance_eh)
    assert res.gibbs == pytest.approx(printed["gibbs"], abs=tolerance_eh)


def test_thermochemistry_of_what_read_log_returned_says_what_to_pass(samples):
    # passing the Calculation itself ended in "AttributeError: 'Calculation' object has no attribute 'name'"
    import qcthermo

    calc = qcthermo.read_log(samples / "gas" / "water.out")
    with pytest.raises(TypeError, match=r"Molecule\.from_calculation"):
        qcthermo.thermochemistry(calc, Conditions())
    with pytest.raises(TypeError, match="needs Conditions"):
        qcthermo.thermochemistry(Molecule.from_calculation(calc), 298.15)


def test_conditions_refuse_a_scale_factor_far_from_one():
    # published scale factors lie within a few per cent of 1 (common practice); 5 was accepted from Python
    # (the command line alone checked it) and gave a G off by hundreds of kcal/mol
    for bad in ({"frequency_scale": 5.0}, {"frequency_scale": -1.0}, {"frequency_scale": "0.97"}, {"zpe_scale": 0.0}):
        with pytest.raises(ValueError, match="near 1"):
            Conditions(**bad)
    assert Conditions(frequency_scale="auto").frequency_scale == "auto"

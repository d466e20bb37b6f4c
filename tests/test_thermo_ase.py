"""The engine against ASE's ase.thermochemistry (IdealGasThermo, QuasiHarmonicThermo, RRHOMode).

Same inputs (geometry, masses, wavenumbers, symmetry number, spin, pressure) to both, and the same
constants: ASE's module defaults to CODATA 2014, scipy.constants is CODATA 2022, and a 3.5e-7 change of
k is amplified by h nu / kT in the Boltzmann factors of stiff modes at low temperature, so ASE's module
is given its own CODATA 2022 unit set (ase.units.create_units). ASE works in eV. The
molecules and their fundamentals come from test_thermo_cantera.py (typed in from memory); the dvb
logs are real third-party outputs.
"""

from __future__ import annotations

import ase.thermochemistry
import numpy as np
import pytest
from ase import Atoms
from ase.thermochemistry import HarmonicMode, IdealGasThermo, QuasiHarmonicThermo, RRHOMode
from ase.units import create_units
from test_thermo_cantera import molecule

from qcthermo import Conditions, Molecule, thermochemistry
from qcthermo.units import HARTREE_EV

REL = 1e-6
units = create_units("2022")


@pytest.fixture(autouse=True)
def _ase_codata_2022(monkeypatch):
    monkeypatch.setattr(ase.thermochemistry, "units", units)

TEMPERATURES = (50.0, 298.15, 1000.0)


def ase_atoms(mol: Molecule) -> Atoms:
    return Atoms(symbols=list(mol.symbols), positions=mol.coordinates, masses=mol.masses)


def ase_ideal_gas(mol: Molecule, geometry: str, sigma: int, freqs=None) -> IdealGasThermo:
    freqs = mol.frequencies if freqs is None else freqs
    return IdealGasThermo(
        vib_energies=np.asarray(freqs) * units.invcm,
        geometry=geometry,
        atoms=ase_atoms(mol),
        symmetrynumber=sigma,
        spin=(mol.multiplicity - 1) / 2,
        vib_selection="exact",
    )


def ev(value):
    return np.asarray(value) * HARTREE_EV


ARGON = Molecule(["Ar"], [[0.0, 0.0, 0.0]], [])


@pytest.mark.parametrize(
    ("mol", "geometry", "sigma"),
    [(ARGON, "monatomic", 1), (molecule("CO2"), "linear", 2), (molecule("O2"), "linear", 2),
     (molecule("CH4"), "nonlinear", 12), (molecule("C2H4"), "nonlinear", 4)],
    ids=["Ar", "CO2", "O2-triplet", "CH4", "C2H4"],
)  # fmt: skip
@pytest.mark.parametrize("temperature", TEMPERATURES)
def test_rrho_matches_ase_ideal_gas(mol, geometry, sigma, temperature):
    # reference: ase.thermochemistry.IdealGasThermo (ASE 3.29), 1 atm
    ase = ase_ideal_gas(mol, geometry, sigma)
    res = thermochemistry(mol, Conditions(temperature=temperature, standard_state="1atm", low_mode_model="rrho"))
    assert res.linear == (geometry == "linear")
    assert ev(res.zpe) == pytest.approx(ase.get_ZPE_correction(), rel=REL, abs=1e-12)
    assert ev(res.enthalpy) == pytest.approx(ase.get_enthalpy(temperature, verbose=False), rel=REL)
    assert ev(res.entropy) == pytest.approx(ase.get_entropy(temperature, pressure=101325.0, verbose=False), rel=REL)
    g_ase = ase.get_gibbs_energy(temperature, pressure=101325.0, verbose=False)
    assert ev(res.gibbs) == pytest.approx(g_ase, rel=REL, abs=1e-6 * abs(temperature * ev(res.entropy)))


def test_pressure_in_pascal_matches_ase():
    # reference: ase.thermochemistry.IdealGasThermo entropy at 1 bar and at 10 bar
    mol = molecule("H2O")
    ase = ase_ideal_gas(mol, "nonlinear", 2)
    for pressure in (1e5, 1e6):
        res = thermochemistry(mol, Conditions(pressure=pressure, low_mode_model="rrho"))
        assert ev(res.entropy) == pytest.approx(ase.get_entropy(298.15, pressure=pressure, verbose=False), rel=REL)


def test_transition_state_matches_ase():
    # reference: IdealGasThermo.from_transition_state leaves the one imaginary mode out. Input only: water's
    # fundamentals with the bend given as imaginary.
    mol = molecule("H2O").replace(frequencies=np.array([-1595.0, 3657.0, 3756.0]), transition_state=True)
    energies = [1595j * units.invcm, 3657 * units.invcm, 3756 * units.invcm]
    ase = IdealGasThermo.from_transition_state(
        energies, geometry="nonlinear", atoms=ase_atoms(mol), symmetrynumber=2, spin=0, vib_selection="all"
    )
    res = thermochemistry(mol, Conditions(low_mode_model="rrho"))
    assert res.imaginary_frequency == -1595.0
    assert ev(res.enthalpy) == pytest.approx(ase.get_enthalpy(298.15, verbose=False), rel=REL)
    assert ev(res.entropy) == pytest.approx(ase.get_entropy(298.15, pressure=101325.0, verbose=False), rel=REL)


def _vib(res):
    return ev(res.components["vibrational"]["U"]), ev(res.components["vibrational"]["S"])


@pytest.mark.parametrize("threshold", [100.0, 1000.0])
def test_quasi_harmonic_matches_ase(threshold):
    # reference: ase.thermochemistry.QuasiHarmonicThermo (Ribeiro et al. 2011), raise_to = threshold;
    # threshold 1000 cm^-1 raises several of ethylene's modes, 100 none
    mol = molecule("C2H4")
    ase = QuasiHarmonicThermo(mol.frequencies * units.invcm, raise_to=threshold * units.invcm)
    for t in TEMPERATURES:
        res = thermochemistry(mol, Conditions(temperature=t, low_mode_model="quasi-harmonic",
                                              low_mode_threshold=threshold))
        u, s = _vib(res)
        assert u == pytest.approx(ase.get_internal_energy(t, verbose=False), rel=REL)
        assert s == pytest.approx(ase.get_entropy(t, verbose=False), rel=REL)


def _ase_qrrho(freqs, mean_inertia, tau, t, treat_int_energy=False):
    modes = [RRHOMode(f * units.invcm, mean_inertia, tau=tau, treat_int_energy=treat_int_energy) for f in freqs]
    s = sum(m.get_entropy(t, contributions=False) for m in modes)
    u = sum(m.get_internal_energy(t, contributions=False) for m in modes)
    return u, s


@pytest.mark.parametrize("name", ["CO2", "C2H4"])
@pytest.mark.parametrize("rotor_inertia", [1e-44, "molecular"])
def test_qrrho_entropy_matches_ase_rrho_mode(rotor_inertia, name):
    # reference: ase.thermochemistry.RRHOMode (Grimme 2012 entropy interpolation) with the same B_av;
    # threshold 1000 cm^-1 so that the lower modes (CO2's bends, ethylene's CH2 wags) are interpolated
    mol = molecule(name)
    atoms = ase_atoms(mol)
    if rotor_inertia == "molecular":
        mean_inertia = np.mean(atoms.get_moments_of_inertia())
    else:
        mean_inertia = rotor_inertia * units.kg * units.m**2  # kg m^2 -> u angstrom^2
    for t in TEMPERATURES:
        res = thermochemistry(mol, Conditions(temperature=t, low_mode_model="qrrho", low_mode_threshold=1000.0,
                                              rotor_inertia=rotor_inertia))
        u_ase, s_ase = _ase_qrrho(mol.frequencies, mean_inertia, 1000.0, t)
        u, s = _vib(res)
        assert s == pytest.approx(s_ase, rel=REL)
        assert u == pytest.approx(u_ase, rel=REL)  # qrrho leaves the energy harmonic
        rrho = thermochemistry(mol, Conditions(temperature=t, low_mode_model="rrho"))
        assert res.rrho["entropy"] == pytest.approx(rrho.entropy, rel=1e-12)


def test_qrrho_enthalpy_matches_ase_interpolated_energy():
    # reference: RRHOMode(treat_int_energy=True): w (ZPE + thermal) + (1 - w) RT/2, the interpolation
    # of Li et al. 2015 (ASE cites Otlyotov & Minenkov for it)
    mol = molecule("C2H4")
    for t in TEMPERATURES:
        res = thermochemistry(mol, Conditions(temperature=t, low_mode_model="qrrho-enthalpy",
                                              low_mode_threshold=1000.0))
        u_ase, s_ase = _ase_qrrho(mol.frequencies, 1e-44 * units.kg * units.m**2, 1000.0, t, treat_int_energy=True)
        u, s = _vib(res)
        assert u == pytest.approx(u_ase, rel=REL)
        assert s == pytest.approx(s_ase, rel=REL)


def test_temperature_array_matches_ase_loop():
    # reference: IdealGasThermo called once per temperature
    mol = molecule("NH3")
    ase = ase_ideal_gas(mol, "nonlinear", 3)
    temps = np.linspace(100.0, 1500.0, 15)
    res = thermochemistry(mol, Conditions(temperature=temps, low_mode_model="rrho"))
    g_ase = [ase.get_gibbs_energy(t, pressure=101325.0, verbose=False) for t in temps]
    np.testing.assert_allclose(ev(res.gibbs), g_ase, rtol=REL)


def _read_dvb(path):
    import qcthermo

    return Molecule.from_calculation(qcthermo.read_log(path), symmetry_number=2)


@pytest.mark.parametrize("log", ["gaussian16/dvb_ir.out", "orca5.0/dvb_ir.out", "qchem5.4/dvb_ir.out",
                                 "nwchem7.0/dvb_ir.out", "psi4-1.2.1/dvb_ir_rhf.out"])
def test_dvb_logs_match_ase(third_party, log):
    # reference: IdealGasThermo, QuasiHarmonicThermo and RRHOMode on the frequencies read from real logs
    # (dvb: C2h, symmetry number 2, 54 modes; third-party-logs README)
    mol = _read_dvb(third_party / log)
    assert len(mol.frequencies) == 54
    inferred = thermochemistry(mol.replace(symmetry_number=None), Conditions())
    assert (inferred.point_group, inferred.symmetry_number) == ("C2h", 2)
    ase = ase_ideal_gas(mol, "nonlinear", 2)
    res = thermochemistry(mol, Conditions(low_mode_model="qrrho", rotor_inertia="molecular"))
    e = ev(mol.energy)
    assert ev(res.rrho["enthalpy"]) - e == pytest.approx(ase.get_enthalpy(298.15, verbose=False), rel=REL)
    assert ev(res.rrho["entropy"]) == pytest.approx(ase.get_entropy(298.15, pressure=101325.0, verbose=False),
                                                    rel=REL)
    _, s_ase = _ase_qrrho(mol.frequencies, np.mean(ase_atoms(mol).get_moments_of_inertia()), 100.0, 298.15)
    assert ev(res.components["vibrational"]["S"]) == pytest.approx(s_ase, rel=REL)
    qh = thermochemistry(mol, Conditions(low_mode_model="quasi-harmonic"))
    ase_qh = QuasiHarmonicThermo(mol.frequencies * units.invcm)
    assert ev(qh.components["vibrational"]["S"]) == pytest.approx(ase_qh.get_entropy(298.15, verbose=False), rel=REL)


def test_harmonic_mode_entropy_matches_ase_per_mode():
    # reference: ase.thermochemistry.HarmonicMode, one mode at a time, over a temperature grid
    from qcthermo.thermo import harmonic_entropy, harmonic_thermal_energy, vibrational_temperatures

    temps = np.array([20.0, 298.15, 3000.0])
    for nu in (30.0, 667.0, 3756.0):
        mode = HarmonicMode(nu * units.invcm)
        theta = vibrational_temperatures(nu)
        np.testing.assert_allclose(ev(harmonic_entropy(theta, temps)),
                                   [mode.get_vib_entropy_contribution(t) for t in temps], rtol=REL,
                                   atol=1e-20)  # ASE's ln(1 - e^-x) loses digits for x > ~30
        np.testing.assert_allclose(ev(harmonic_thermal_energy(theta, temps)),
                                   [mode.get_vib_energy_contribution(t) for t in temps], rtol=REL, atol=1e-300)


def test_stacked_principal_moments_match_ase():
    # reference: ase.Atoms.get_moments_of_inertia, one molecule at a time
    from qcthermo.thermo import stacked_principal_moments

    mols = [molecule(n) for n in ("CO", "H2O", "CH4", "C2H4", "NH3")]
    stacked = stacked_principal_moments(mols)
    for row, mol in zip(stacked, mols, strict=True):
        np.testing.assert_allclose(row, np.sort(ase_atoms(mol).get_moments_of_inertia()), rtol=1e-9, atol=1e-9)

"""Mode clean-up: leftover translations/rotations, linearity with a tolerance, imaginary-mode policy."""

from __future__ import annotations

import numpy as np
import pytest
from test_thermo_cantera import MOLECULES, linear_chain, molecule

from qcthermo import Conditions, Molecule, ThermoError
from qcthermo.cleaning import clean_modes, expected_mode_count, remove_residual_modes


def test_expected_mode_counts():
    # common practice: 3N-6 nonlinear, 3N-5 linear, none for an atom
    assert expected_mode_count(1, False) == 0
    assert expected_mode_count(2, True) == 1
    assert expected_mode_count(3, True) == 4
    assert expected_mode_count(3, False) == 3
    assert expected_mode_count(12, False) == 30


def test_residual_translations_and_rotations_are_removed_by_count():
    # a program that prints 3N modes, six of them ~0 (as NWChem and xTB do; docs/readers.md)
    freqs = np.array([0.02, -0.5, 1.3, 3.1, -7.4, 12.0, *MOLECULES["NH3"][1]])
    mol = molecule("NH3").replace(frequencies=freqs)
    modes = clean_modes(mol, Conditions())
    assert sorted(modes.frequencies) == sorted(MOLECULES["NH3"][1])
    assert any("removed 6" in n for n in modes.notes)


def test_only_the_extra_modes_are_removed():
    # one extra near-zero value: the real 15 cm^-1 mode stays, the 0.3 goes
    kept, notes = remove_residual_modes(np.array([0.3, 15.0, 500.0]), 2, "x")
    assert list(kept) == [15.0, 500.0] and len(notes) == 1
    with pytest.raises(ThermoError):
        remove_residual_modes(np.array([80.0, 500.0, 900.0]), 2, "x")  # the extra one is not near zero
    with pytest.raises(ThermoError):
        remove_residual_modes(np.array([500.0]), 2, "x")  # too few modes


def test_bent_co2_stays_linear():
    # docs/thermo.md, "Mode clean-up": an absolute tolerance would make CO2 bent by 0.5 degrees nonlinear
    theta = np.radians(0.5)
    xyz = np.array([[0, 0, 0], [1.16 * np.sin(theta), 0, 1.16 * np.cos(theta)], [0, 0, -1.16]])
    mol = Molecule(["C", "O", "O"], xyz, MOLECULES["CO2"][1])
    modes = clean_modes(mol, Conditions())
    assert modes.linear
    assert len(modes.frequencies) == 4


def test_water_is_not_linear_and_a_diatomic_is():
    assert not clean_modes(molecule("H2O"), Conditions()).linear
    symbols, xyz = linear_chain("CO", [1.128])
    assert clean_modes(Molecule(symbols, xyz, [2143]), Conditions()).linear


def test_every_decision_is_a_note():
    freqs = np.array(MOLECULES["H2O"][1], dtype=float)
    freqs[0] = -12.0
    modes = clean_modes(molecule("H2O").replace(frequencies=np.r_[0.1, freqs]), Conditions())
    assert len(modes.notes) == 2  # one removal, one inversion
    assert modes.imaginary_frequency is None


def test_unknown_policy_is_refused():
    with pytest.raises(ThermoError):
        clean_modes(molecule("H2O").replace(imaginary_policy="ignore"), Conditions())


def test_a_log_without_geometry_is_refused_for_that_reason(third_party):
    # xTB 6.6.1 --hess prints no geometry (third-party-logs README: the structure is in a separate file);
    # the one-line reason must say so, not blame the frequencies
    import qcthermo

    mol = Molecule.from_calculation(qcthermo.read_log(third_party / "xtb6.6.1" / "dvb_ir.out"))
    with pytest.raises(ThermoError, match="no geometry") as err:
        clean_modes(mol, Conditions())
    assert "frequencies are not finite" not in str(err.value)

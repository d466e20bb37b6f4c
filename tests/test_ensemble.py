"""Conformer ensembles: duplicates, mirror images, Boltzmann weighting, single-point pairing."""

import numpy as np
import pytest

from qcthermo import ensemble
from qcthermo.records import Calculation
from qcthermo.units import ENERGY_UNITS, K_B_EH

# Bromochlorofluoromethane, a chiral tetrahedral carbon: C-H 1.09, C-F 1.35, C-Cl 1.77, C-Br 1.94 A
# along the tetrahedral directions (bond lengths from memory; only the handedness matters here).
_TETRA = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]]) / np.sqrt(3.0)
CHFCLBR = np.vstack([[0.0, 0.0, 0.0], _TETRA * np.array([1.09, 1.35, 1.77, 1.94])[:, None]])
SYMBOLS = ("C", "H", "F", "Cl", "Br")
#: a real electronic energy, Gaussian 16 dvb_ir.out (README of the third-party logs), used as an input value
E_REAL = -382.30824980


def _rotation(angle: float) -> np.ndarray:
    c, s = np.cos(angle), np.sin(angle)
    return np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])


def _calc(coords, energy=E_REAL, path="a.out") -> Calculation:
    return Calculation(path=path, program="gaussian", symbols=SYMBOLS, coordinates=np.asarray(coords), energy=energy)


def test_rotated_copy_is_a_duplicate_and_mirror_image_is_distinct():
    # Kabsch (Acta Cryst. A 1976, 32, 922): a rigid rotation plus translation has RMSD 0; a reflection
    # of a chiral structure cannot be undone by a proper rotation.
    rotated = CHFCLBR @ _rotation(0.7).T + 3.0
    mirror = CHFCLBR * np.array([-1.0, 1.0, 1.0])
    kind, rmsd = ensemble.compare_structures(_calc(CHFCLBR), _calc(rotated))
    assert kind == "duplicate" and rmsd < 1e-9
    kind, rmsd = ensemble.compare_structures(_calc(CHFCLBR), _calc(mirror))
    assert kind == "mirror" and rmsd > ensemble.RMSD_THRESHOLD


def test_energy_window_keeps_same_geometry_apart():
    # Same geometry, energies 1 kcal/mol apart: beyond the 0.1 kcal/mol window (common practice) -> distinct.
    other = _calc(CHFCLBR, E_REAL + 1.0 / ENERGY_UNITS["kcal/mol"])
    assert ensemble.compare_structures(_calc(CHFCLBR), other)[0] == "distinct"


def test_grouping_merges_duplicates_and_keeps_enantiomers():
    calcs = [_calc(CHFCLBR, path="c1"), _calc(CHFCLBR @ _rotation(2.0).T, path="c2"),
             _calc(CHFCLBR * np.array([1.0, 1.0, -1.0]), path="c3")]
    grouping = ensemble.group_conformers(calcs)
    assert grouping.kept == [0, 2]
    assert set(grouping.duplicates) == {1}
    assert [(a, b) for a, b, _ in grouping.mirror_pairs] == [(0, 2)]


@pytest.mark.parametrize("temperature", [298.15, np.array([200.0, 298.15, 500.0])])
def test_mirror_pair_of_equal_g_gives_g_minus_rt_ln2(temperature):
    # Two distinct states of equal G: G_ens = -RT ln(2 exp(-G/RT)) = G - RT ln 2 (the Boltzmann sum).
    g = np.full((2, *np.shape(temperature)), E_REAL)
    g_ens, pops = ensemble.boltzmann_free_energy(g, temperature)
    np.testing.assert_allclose(g_ens, E_REAL - K_B_EH * np.asarray(temperature) * np.log(2.0), rtol=0, atol=1e-12)
    np.testing.assert_allclose(pops, 0.5)


def test_duplicate_pair_gives_g_after_merging():
    # The duplicate is merged before the sum, so one state remains: G_ens = G.
    calcs = [_calc(CHFCLBR, path="c1"), _calc(CHFCLBR @ _rotation(1.0).T, path="c2")]
    kept = ensemble.group_conformers(calcs).kept
    g_ens, _ = ensemble.boltzmann_free_energy(np.full(len(kept), E_REAL), 298.15)
    assert len(kept) == 1 and g_ens == pytest.approx(E_REAL, abs=1e-12)


def test_dominant_conformer_gives_its_g():
    # A conformer 10 kcal/mol above the other adds RT ln(1 + exp(-dG/RT)) ~ 3e-8 Eh at 298.15 K.
    dg = 10.0 / ENERGY_UNITS["kcal/mol"]
    g_ens, pops = ensemble.boltzmann_free_energy(np.array([E_REAL, E_REAL + dg]), 298.15)
    kt = K_B_EH * 298.15
    assert g_ens == pytest.approx(E_REAL - kt * np.log1p(np.exp(-dg / kt)), abs=1e-12)
    assert abs(g_ens - E_REAL) < 1e-7
    assert pops[0] > 0.9999999


def test_population_average_weights():
    # <X> = sum p_i X_i; with populations from a Boltzmann sum they add to one.
    _, pops = ensemble.boltzmann_free_energy(np.array([E_REAL, E_REAL + 1e-3, E_REAL + 2e-3]), 298.15)
    assert pops.sum() == pytest.approx(1.0, abs=1e-12)
    assert ensemble.population_average(np.array([1.0, 1.0, 1.0]), pops) == pytest.approx(1.0)


def test_single_point_paired_by_geometry_not_by_order():
    # A single point on a rotated copy of the geometry pairs (RMSD ~0); one on the mirror image does not.
    freq = _calc(CHFCLBR, path="freq")
    candidates = [_calc(CHFCLBR * np.array([-1.0, 1.0, 1.0]), path="sp_mirror"),
                  _calc(CHFCLBR @ _rotation(0.3).T, path="sp_same")]
    index, rmsd = ensemble.pair_single_point(freq, candidates)
    assert index == 1 and rmsd < 1e-9
    index, rmsd = ensemble.pair_single_point(freq, candidates[:1])
    assert index is None and rmsd > ensemble.SINGLE_POINT_RMSD


def test_real_log_geometry_pairs_with_itself(third_party):
    # dvb_sp.out and dvb_ir.out (Gaussian 16) print the same final energy (README there): one geometry.
    from qcthermo import read_log

    freq = read_log(third_party / "gaussian16" / "dvb_ir.out")
    sp = read_log(third_party / "gaussian16" / "dvb_sp.out")
    index, rmsd = ensemble.pair_single_point(freq, [sp])
    assert index == 0 and rmsd < ensemble.SINGLE_POINT_RMSD


def test_bond_signature_tells_isomers_from_conformers(samples):
    # HCN and HNC are constitutional isomers (H on C vs on N); the pentane conformers share their bonds
    # (the sample's inputs/conformers/*.xyz are torsional variants of one n-pentane).
    from qcthermo import read_log

    hcn = read_log(samples / "gas" / "hcn.out")
    hnc = read_log(samples / "gas" / "hnc.out")
    assert ensemble.bond_signature(hcn) == (("C", "H", 1), ("C", "N", 1))
    assert ensemble.bond_signature(hnc) == (("C", "N", 1), ("H", "N", 1))
    pentanes = {ensemble.bond_signature(read_log(p)) for p in sorted((samples / "conformers").glob("pentane_*.out"))}
    assert pentanes == {(("C", "C", 4), ("C", "H", 12))}

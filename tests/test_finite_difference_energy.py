"""A frequency job by finite differences computes energies at displaced geometries after the stationary point's:
the record's energy is the stationary point's, the one printed before the displacements, as the program printed it.
"""

import pytest

import qcthermo

#: one hartree in kcal/mol, CODATA 2018 (4.3597447222071e-18 J x 6.02214076e23 / 4184 J)
HARTREE_KCAL_MOL = 627.5094740631

# file, the energy printed at the stationary point (its line, and the line of the Hessian's header after it), the
# "Thermal correction to Enthalpy" in au printed by the frequency analysis (its line)
NWCHEM_COSMO = [
    ("formaldehyde.out", -114.506994501284, 0.030802),  # lines 4527 (header 4800), 7404
    ("methanediol.out", -190.948580190248, 0.061870),  # lines 9882 (header 10193), 14079
    ("water.out", -76.420740016464, 0.024797),  # lines 3148 (header 3387), 5162
    # lines 21757 (header 22649), 28450; the last printed, a displaced geometry's: -190.877727709820 (27936)
    ("ts_hydration.out", -190.877737735777, 0.055179),
]


@pytest.mark.parametrize(("name", "printed", "h_correction"), NWCHEM_COSMO)
def test_nwchem_finite_difference_hessian_gives_the_stationary_energy(samples, name, printed, h_correction):
    calc = qcthermo.read_log(samples / "solvent" / name)
    assert calc.energy == pytest.approx(printed, abs=1e-9)  # "Total DFT energy =" before "NWChem Finite-difference"
    assert calc.thermo_printed["enthalpy"] == pytest.approx(printed + h_correction, abs=1e-9)


def test_gamess_numerical_hessian_gives_the_reference_energy(third_party):
    calc = qcthermo.read_log(third_party / "gamess-us2018/nh3_ts_ir.out")
    # line 311, "FINAL R-AM1 ENERGY IS -9.1286961082" of "COORD 0" (line 241, the reference geometry); the
    # displaced ones follow from "COORD 1" (line 386), the last -9.1286964671
    assert calc.energy == pytest.approx(-9.1286961082, abs=1e-10)
    # line 2148, the TOTAL row of the thermochemistry: H 22.849 kcal/mol, G 8.589 kcal/mol (printed to 1e-3)
    assert calc.thermo_printed["enthalpy"] == pytest.approx(-9.1286961082 + 22.849 / HARTREE_KCAL_MOL, abs=1e-8)
    assert calc.thermo_printed["gibbs"] == pytest.approx(-9.1286961082 + 8.589 / HARTREE_KCAL_MOL, abs=1e-8)


def test_psi4_finite_difference_frequencies_give_the_reference_energy(third_party):
    calc = qcthermo.read_log(third_party / "psi4-1.2.1/dvb_ir_rhf.out")
    # line 260, "@DF-RHF Final Energy: -379.77011151297563", before "Using finite-differences of gradients" (413)
    assert calc.energy == pytest.approx(-379.77011151297563, abs=1e-9)

"""A reaction's rate science (qcthermo.kinetics.reaction_kinetics) and the main job's use of it, against values
from outside: the energies, zero-point energies and imaginary frequencies printed in the sample NWChem logs,
the Wigner and Eckart formulas evaluated independently, the Eyring equation by hand, conservation of atoms.
"""

import re
from pathlib import Path

import numpy as np
import pytest
from eckart_quad import eckart_kappa_by_quad
from log_text import last_printed
from sample_species import species_tables
from scipy import constants

import qcthermo
from qcthermo.cli import main
from qcthermo.kinetics import Participant, TransitionState, pseudo_molecularity, reaction_kinetics, symmetry_numbers
from qcthermo.records import Conditions

HARTREE_J = constants.physical_constants["Hartree energy"][0]
#: the unimolecular HCN -> HNC shift (B3LYP/6-31G* throughout) and the H + CH4 abstraction at
#: MP2/cc-pVTZ//B3LYP/6-31G* (MP2 energies, B3LYP zero-point energies), both from the sample scenario
REACTIONS = species_tables("hcn", "hnc", "ts_hcn", "ch4", "h", "ts_abstraction", "ch3", "h2", single_points=True) + """
[[reaction]]
name = "isomerisation"
reactants = ["hcn"]
transition_state = "ts_hcn"
products = ["hnc"]
[[reaction]]
name = "abstraction"
reactants = ["ch4", "h"]
transition_state = "ts_abstraction"
products = ["ch3", "h2"]
"""
TEMPERATURES = np.array([250.0, 298.15, 400.0, 600.0])


def _run(tmp_path, samples, text, temperature=TEMPERATURES):
    """The main job in the 1 M standard state (c0 = 1 mol/L: k in M^-n s^-1)."""
    path = tmp_path / "reactions.toml"
    path.write_text(text.format(s=samples.as_posix()))
    conditions = Conditions(temperature=temperature, standard_state="1M")
    return qcthermo.run(samples, reactions=path, conditions=conditions, jobs=1, cache=False)


# -- the numbers as NWChem printed them ------------------------------------------------------------------------


def _e_zpe(samples: Path, name: str, single_point: bool) -> float:
    """E + ZPE of one structure, hartree, as printed: the last DFT (or the MP2 single point's) energy and
    the harmonic zero-point correction in au; a lone atom prints none (it has no vibrations)."""
    log = samples / "gas" / f"{name}.out"
    e = last_printed(samples / "sp" / f"{name}_mp2.out", r"Total MP2 energy\s+(-?\d+\.\d+)") if single_point \
        else last_printed(log, r"Total DFT energy =\s+(-?\d+\.\d+)")
    zpe = re.findall(r"Zero-Point correction to Energy\s+=\s+[\d.]+ kcal/mol\s+\(\s*([\d.]+) au\)", log.read_text())
    return e + (float(zpe[-1]) if zpe else 0.0)


def _printed_barriers(samples: Path, reactants, ts, products, single_point=False) -> tuple[float, float]:
    """V1 = E+ZPE(TS) - E+ZPE(reactants), V2 likewise from the products, by hand from the printed values."""
    top = _e_zpe(samples, ts, single_point)
    return (top - sum(_e_zpe(samples, n, single_point) for n in reactants),
            top - sum(_e_zpe(samples, n, single_point) for n in products))


def _printed_imaginary(samples: Path, ts: str) -> float:
    """The imaginary wavenumber, cm^-1, as printed first on a 'P.Frequency' line."""
    return last_printed(samples / "gas" / f"{ts}.out", r"P\.Frequency\s+(-[1-9]\d*\.\d+)")


@pytest.mark.parametrize(("reaction", "reactants", "ts", "products", "single_point"), [
    ("isomerisation", ["hcn"], "ts_hcn", ["hnc"], False),
    ("abstraction", ["ch4", "h_atom"], "ts_abstraction", ["ch3", "h2"], True),
])
def test_kappa_from_the_barriers_printed_in_the_logs(tmp_path, samples, reaction, reactants, ts, products,
                                                     single_point):
    results = _run(tmp_path, samples, REACTIONS)
    rates = results.rates.set_index("reaction").loc[reaction]
    v1, v2 = _printed_barriers(samples, reactants, ts, products, single_point)
    nu = _printed_imaginary(samples, ts)
    assert nu < -1000  # a light-atom transfer: the case tunnelling matters for
    # the run's E+ZPE barriers agree with the printed ones within what the printing keeps (ZPE to 1e-6 au
    # per structure) and the engine's own ZPE from the frequencies (NWChem's constants differ slightly):
    # a few 1e-6 hartree, 0.003 kcal/mol
    row = results.reactions.set_index("reaction").loc[reaction].iloc[0]
    kcal = 627.5094740631  # kcal/mol per hartree (CODATA 2018, from memory)
    assert row["dE_zpe_act_kcal_mol"] == pytest.approx(v1 * kcal, abs=0.003)
    assert row["dE_zpe_act_rev_kcal_mol"] == pytest.approx(v2 * kcal, abs=0.003)
    # Wigner, Z. Phys. Chem. B 1932, 19, 203, by hand: 1 + (h c |nu| / k_B T)^2 / 24 with the printed nu
    u = constants.h * constants.c * 100 * abs(nu) / (constants.k * TEMPERATURES)
    np.testing.assert_allclose(rates["kappa_wigner"], 1 + u**2 / 24, rtol=1e-5)  # nu printed to 0.01 cm^-1
    # Eckart (Phys. Rev. 1930, 35, 1303), independent quadrature of Johnston and Heicklen's transmission
    # (tests/eckart_quad.py) with the printed barriers and frequency. Measured: 5e-5 at worst (250 K), from the
    # few 1e-6 hartree between printed and engine barriers; without the ZPE, or with nu scaled by 0.97, kappa
    # is off by far more than the 3e-4 allowed
    reference = [eckart_kappa_by_quad(v1, v2, nu, t) for t in TEMPERATURES]
    np.testing.assert_allclose(rates["kappa_eckart"], reference, rtol=3e-4)
    assert (rates["kappa"] == rates["kappa_eckart"]).all()  # Eckart is the default model
    assert (rates["kappa_eckart"] > rates["kappa_wigner"]).all()  # a thin light-atom barrier, as expected


# -- reaction-path degeneracy with a "2 A" side -----------------------------------------------------------------


def _eyring_by_hand(dg_hartree, t, molecularity, c0):
    """k = (k_B T / h) c0^(1 - m) exp(-dG / k_B T) (Eyring, J. Chem. Phys. 1935, 3, 107), scipy constants."""
    kt = constants.k * t
    return kt / constants.h * c0 ** (1 - molecularity) * np.exp(-dg_hartree * HARTREE_J / kt)


def test_two_a_side_counts_its_symmetry_number_twice():
    # 2 CH3 -> [C2H6]‡: each methyl radical sigma = 6 (D3h), a staggered D3d transition state sigma = 6; the G of
    # each species holds R T ln sigma, so prod sigma_R = 6 x 6 (Fernandez-Ramos, Ellingson, Meana-Paneda,
    # Marques, Truhlar, Theor. Chem. Acc. 2007, 118, 813) and only L sigma_TS / prod sigma_R is applied to k
    t = np.array([300.0, 500.0])
    g_a, g_ts = np.array([-39.8, -39.81]), np.array([-79.58, -79.59])  # hartree, an arbitrary barrier of 0.02 Eh
    e_a, e_ts = -39.8, -79.58
    methyl = Participant(g_a, e_a, coefficient=2, symmetry_number=6)
    ts = TransitionState(g_ts, e_ts, symmetry_number=6, imaginary_frequency=-300.0)
    product = [Participant(g_ts - 0.1, e_ts - 0.1, symmetry_number=6)]
    assert symmetry_numbers([methyl]) == [6, 6] and pseudo_molecularity([methyl]) == 2
    for total_l in (None, 6.0, 12.0):
        out = reaction_kinetics([methyl], product, ts, t, "1M", tunnelling="none", degeneracy=total_l)
        extra = 1.0 if total_l is None else total_l * 6 / (6 * 6)
        # c0 = 1 mol/L: k in M^-1 s^-1
        np.testing.assert_allclose(out["k_forward"], extra * _eyring_by_hand(g_ts - 2 * g_a, t, 2, 1.0), rtol=1e-12)
        assert out["degeneracy"] == pytest.approx(extra, rel=1e-15) and out["k_unit_forward"] == "M^-1 s^-1"
    # the same reaction written "A + A" is the same reaction
    split = reaction_kinetics([Participant(g_a, e_a, symmetry_number=6)] * 2, product, ts, t, "1M",
                              tunnelling="none", degeneracy=12.0)
    np.testing.assert_allclose(split["k_forward"], out["k_forward"], rtol=1e-15)
    # the E+ZPE barriers: V1 = E_TS - 2 E_A, V2 = E_TS - E_P
    assert out["barrier_forward_zpe"] == pytest.approx(e_ts - 2 * e_a, abs=1e-12)
    assert out["barrier_reverse_zpe"] == pytest.approx(0.1, abs=1e-12)


def test_h_plus_methane_degeneracy_through_the_run_against_eyring_by_hand(tmp_path, samples):
    # H + CH4: sigma(CH4) = 12 (Td), sigma(H) = 1, sigma(TS, C3v) = 3; a reaction file's total L = 8 applies
    # L sigma_TS / prod sigma_R = 8 x 3 / 12 = 2 on top of the G values (Fernandez-Ramos et al. 2007)
    text = REACTIONS + '[[reaction]]\nname = "abstraction_L8"\nreactants = ["ch4", "h"]\n' \
        'transition_state = "ts_abstraction"\nproducts = ["ch3", "h2"]\ndegeneracy = 8\ntunnelling = "none"\n'
    results = _run(tmp_path, samples, text, temperature=298.15)
    sigma = {n: s.lowest.thermo.symmetry_number for n, s in results.species_results.items()}
    assert (sigma["ch4"], sigma["h"], sigma["ts_abstraction"]) == (12, 1, 3)  # point groups Td, atom, C3v
    g = {n: float(np.atleast_1d(s.values["G"])[0]) for n, s in results.species_results.items()}
    row = results.reactions.set_index("reaction").loc["abstraction_L8"]
    expected = 8 * 3 / 12 * _eyring_by_hand(g["ts_abstraction"] - g["ch4"] - g["h"], 298.15, 2, 1.0)
    assert row["kappa"] == 1.0 and row["k_forward"] == pytest.approx(expected, rel=1e-10)
    assert row["k_unit"] == "M^-1 s^-1"


# -- a species at its own concentration ---------------------------------------------------------------------------

SOLVENT = """\
[species.formaldehyde]
logs = "{s}/solvent/formaldehyde.out"
[species.water]
logs = "{s}/solvent/water.out"
concentration = "55.3M"
[species.water_1m]
logs = "{s}/solvent/water.out"
[species.methanediol]
logs = "{s}/solvent/methanediol.out"
[species.ts_hydration]
logs = "{s}/solvent/ts_hydration.out"

[[reaction]]
name = "pseudo"
reactants = ["formaldehyde", "water"]
transition_state = "ts_hydration"
products = ["methanediol"]
[[reaction]]
name = "bimolecular"
reactants = ["formaldehyde", "water_1m"]
transition_state = "ts_hydration"
products = ["methanediol"]
"""


def test_water_at_its_own_concentration_gives_k2_times_water(tmp_path, samples):
    # G(c) = G(c0) + R T ln(c/c0) (ideal dilute solution) and a reactant in large excess (the textbook
    # pseudo-first-order rate law, e.g. Atkins' Physical Chemistry, from memory): k' = k2 [H2O] with
    # [H2O] = 55.3 mol/L, in s^-1, while k2 of the same step with water at 1 M is in M^-1 s^-1
    results = _run(tmp_path, samples, SOLVENT, temperature=np.array([298.15, 350.0]))
    df = results.reactions.set_index(["reaction", "T_K"])
    np.testing.assert_allclose(df.loc["pseudo", "k_forward"], 55.3 * df.loc["bimolecular", "k_forward"], rtol=1e-9)
    assert set(df.loc["pseudo", "k_unit"]) == {"s^-1"}  # forward pseudo-first order, reverse first order
    assert set(df.loc["bimolecular", "k_unit"]) == {"M^-1 s^-1 (forward), s^-1 (reverse)"}
    np.testing.assert_allclose(df.loc["pseudo", "k_reverse"], df.loc["bimolecular", "k_reverse"], rtol=1e-12)


def test_own_concentration_by_hand():
    # the same relation on plain numbers: the solvent's G raised by R T ln 55.3, left out of the molecularity
    t = 298.15
    rt_ln = constants.k * t / HARTREE_J * np.log(55.3)
    ts = TransitionState(-200.0, -200.0, imaginary_frequency=-1500.0)
    solute, product = Participant(-123.97, -123.97), [Participant(-200.03, -200.03)]
    water_1m, water = Participant(-76.05, -76.05), Participant(-76.05 + rt_ln, -76.05, own_concentration=True)
    assert pseudo_molecularity([solute, water]) == 1 and pseudo_molecularity([water]) == 0
    k2 = reaction_kinetics([solute, water_1m], product, ts, t, "1M", tunnelling="none")
    k1 = reaction_kinetics([solute, water], product, ts, t, "1M", tunnelling="none")
    assert (k2["k_unit_forward"], k1["k_unit_forward"]) == ("M^-1 s^-1", "s^-1")
    # 1e-9: RT ln 55.3 added to a G of -76 hartree keeps ~1e-14 hartree, i.e. ~1e-11 of k
    assert k1["k_forward"] == pytest.approx(55.3 * k2["k_forward"], rel=1e-9)
    assert k1["k_forward"] == pytest.approx(55.3 * _eyring_by_hand(-200.0 + 123.97 + 76.05, t, 2, 1.0), rel=1e-9)
    # water alone at its own concentration: pseudo-zero order, the rate itself in M s^-1
    alone = reaction_kinetics([water], [water_1m], TransitionState(-76.0, -76.0), t, "1M", tunnelling="none")
    assert alone["k_unit_forward"] == "M s^-1"
    # an elementary step counts molecules: a fractional coefficient gets no rate constant
    with pytest.raises(ValueError, match="whole"):
        reaction_kinetics([Participant(-1.0, -1.0, coefficient=0.5)], product, ts, t)


# -- detailed balance in the units of the rate constants ----------------------------------------------------------


@pytest.mark.parametrize("state", ["1M", "1atm"])
def test_forward_over_reverse_is_the_equilibrium_constant_in_the_rate_units(tmp_path, samples, state):
    # detailed balance (Tolman, Proc. Natl. Acad. Sci. 1925, 11, 436, from memory): k_f / k_r = K_c, and
    # K_c = exp(-dG / RT) (c0)^dn for a step whose molecularity falls by dn (Atkins' Physical Chemistry, from
    # memory), c0 = 1 mol/L, or p0 / (k_B T) in molecule cm^-3 for 1 atm. The hydration with water at 1 M is
    # 2 -> 1 (k_f in M^-1 s^-1 or cm^3 molecule^-1 s^-1, k_r in s^-1); with water at 55.3 M both are s^-1 and
    # K_c = exp(-dG / RT), the 55.3 M inside dG. dG is the reactions table's, by another route than k.
    path = tmp_path / "reactions.toml"
    path.write_text(SOLVENT.format(s=samples.as_posix()))
    t = np.array([298.15, 350.0])
    results = qcthermo.run(samples, reactions=path, conditions=Conditions(temperature=t, standard_state=state),
                           jobs=1, cache=False)
    df = results.reactions.set_index(["reaction", "T_K"])
    kcal_j = constants.calorie * 1000 / constants.N_A  # J per molecule for 1 kcal/mol
    c0 = 1.0 if state == "1M" else constants.atm / (constants.k * t) * 1e-6
    for reaction, dn in (("bimolecular", 1), ("pseudo", 0)):
        row = df.loc[reaction]
        k_eq = np.exp(-row["dG_qrrho_kcal_mol"].to_numpy() * kcal_j / (constants.k * t)) / c0**dn
        np.testing.assert_allclose(row["k_forward"] / row["k_reverse"], k_eq, rtol=1e-8)
    unit = "M^-1 s^-1" if state == "1M" else "cm^3 molecule^-1 s^-1"
    assert set(df.loc["bimolecular", "k_unit"]) == {f"{unit} (forward), s^-1 (reverse)"}


# -- a transition state holding other atoms than its reactants ---------------------------------------------------


def test_transition_state_of_other_atoms_is_refused_by_the_reaction_file(tmp_path, samples, capsys):
    # conservation of atoms: CH4 + H holds C H5, the HCN saddle point C H N (formulas as the logs give them)
    path = tmp_path / "r.toml"
    path.write_text(REACTIONS.format(s=samples.as_posix()).replace(
        'transition_state = "ts_abstraction"', 'transition_state = "ts_hcn"'))
    status = main(["run", str(samples), "--reactions", str(path), "--out", str(tmp_path / "out"), "--no-cache",
                   "--jobs", "1", "--quiet"])
    err = capsys.readouterr().err.strip().splitlines()
    assert status == 2 and len(err) == 1
    assert "reaction 'abstraction': transition state 'ts_hcn': atoms do not balance" in err[0]
    assert "H -4, N +1" in err[0]


def test_transition_state_of_other_atoms_is_an_error_finding_of_the_reaction_audit(samples):
    # species built without a reaction file (the Python API) get the same rule in the reaction audit
    from qcthermo.reaction_audit import audit_reaction, reaction_sides
    from qcthermo.reactions import ReactionSpec
    from qcthermo.readers import read_log
    from qcthermo.species import SpeciesOptions, build_species

    def species(name, file, ts=False, sp=None):
        extra = [read_log(samples / "sp" / sp)] if sp else []
        return build_species(name, [read_log(samples / "gas" / file)], Conditions(),
                             SpeciesOptions(transition_state=ts), extra)

    built = {"ch4": species("ch4", "ch4.out"), "h": species("h", "h_atom.out"), "ch3": species("ch3", "ch3.out"),
             "h2": species("h2", "h2.out"), "ts_hcn": species("ts_hcn", "ts_hcn.out", ts=True),
             "ts_abs": species("ts_abs", "ts_abstraction.out", ts=True)}
    good = ReactionSpec("abstraction", [(1.0, "ch4"), (1.0, "h")], [(1.0, "ch3"), (1.0, "h2")], "ts_abs")
    bad = ReactionSpec("abstraction", good.reactants, good.products, "ts_hcn")
    names = ["ch4", "h", "ch3", "h2"]
    assert not [f for f in audit_reaction([*names, "ts_abs"], built, "abstraction", reaction_sides(good))
                if f.severity == "error"]
    found = audit_reaction([*names, "ts_hcn"], built, "abstraction", reaction_sides(bad))
    assert [f.severity for f in found] == ["error"]
    assert found[0].message == ("transition state 'ts_hcn' against the reactants: atoms do not balance "
                                "(products minus reactants: H -4, N +1)")


def test_a_degenerate_arrhenius_fit_says_so(samples):
    # deep tunnelling (kappa ~ 370 at 298 K for the four-centre hydration) curves ln k against 1/T; over
    # 250-400 K the modified Arrhenius form (Kooij 1893) then trades n against Ea; |n| > 10 is far outside
    # tabulated exponents (common practice) and must carry a note; the H abstraction's fit must not
    cond = Conditions(temperature=np.array([250.0, 300.0, 350.0, 400.0]), standard_state="1M")
    res = qcthermo.run(samples, reactions=samples / "reactions.toml", conditions=cond, jobs=1, cache=False)
    fits = res.arrhenius.set_index(["reaction", "direction"])
    hydration = fits.loc[("formaldehyde_hydration", "forward")]
    assert abs(hydration["n"]) > 10 and "mean little" in hydration["note"]
    abstraction = fits.loc[("h_abstraction", "forward")]
    assert abs(abstraction["n"]) < 10 and abstraction["note"] == ""


def test_temperatures_below_one_kelvin_are_refused(capsys, samples):
    # the classical rotor needs T >> Theta_rot (McQuarrie, Statistical Mechanics, ch. 6): 1 K is the floor
    with pytest.raises(ValueError, match="from 1 to 10000 K"):
        Conditions(temperature=0.5)
    assert main(["thermo", str(samples / "gas"), "--temperature", "1e-300", "--no-cache", "--quiet"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "from 1 to 10000 K" in err[0]

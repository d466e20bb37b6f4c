"""Standard states and species at their own concentration, through the main job, against textbook relations.

A species S held at its own concentration c has G(c) = G(c0) + RT ln(c/c0) (ideal dilute solution or ideal
gas; e.g. McQuarrie, Statistical Mechanics, 1976, from memory). Left out of the molecularity, it turns an
m-molecular rate constant into the pseudo-order one k' = k [S] (the textbook treatment of a reactant in
large excess, e.g. Atkins' Physical Chemistry, chapter on rate laws, from memory), with [S] in the units
of c0: mol/L for a solution standard state, molecule cm^-3 for a gas one.
"""

import numpy as np
import pytest
from scipy import constants

import qcthermo

REACTIONS = """\
[conditions]
standard_state = "{state}"
low_mode_model = "qrrho"

[species.ch4]
logs = "{s}/gas/ch4.out"
[species.h]
logs = "{s}/gas/h_atom.out"
[species.h_own]
logs = "{s}/gas/h_atom.out"
concentration = "2M"
[species.ch3]
logs = "{s}/gas/ch3.out"
[species.h2]
logs = "{s}/gas/h2.out"
[species.ts_abs]
logs = "{s}/gas/ts_abstraction.out"
[species.ch4_sigma1]
logs = "{s}/gas/ch4.out"
symmetry_number = 1
[species.ts_abs_sigma1]
logs = "{s}/gas/ts_abstraction.out"
symmetry_number = 1
[species.hcn]
logs = "{s}/gas/hcn.out"
[species.hcn_own]
logs = "{s}/gas/hcn.out"
concentration = "2M"
[species.hnc]
logs = "{s}/gas/hnc.out"
[species.ts_hcn]
logs = "{s}/gas/ts_hcn.out"

[[reaction]]
name = "abstraction"
reactants = ["ch4", "h"]
transition_state = "ts_abs"
products = ["ch3", "h2"]
[[reaction]]
name = "abstraction_own"
reactants = ["ch4", "h_own"]
transition_state = "ts_abs"
products = ["ch3", "h2"]
[[reaction]]
name = "abstraction_L4"
reactants = ["ch4", "h"]
transition_state = "ts_abs"
products = ["ch3", "h2"]
degeneracy = 4
[[reaction]]
name = "abstraction_L8"
reactants = ["ch4", "h"]
transition_state = "ts_abs"
products = ["ch3", "h2"]
degeneracy = 8
[[reaction]]
name = "abstraction_sigma1"
reactants = ["ch4_sigma1", "h"]
transition_state = "ts_abs_sigma1"
products = ["ch3", "h2"]
[[reaction]]
name = "isomerisation"
reactants = ["hcn"]
transition_state = "ts_hcn"
products = ["hnc"]
[[reaction]]
name = "isomerisation_own"
reactants = ["hcn_own"]
transition_state = "ts_hcn"
products = ["hnc"]
"""

#: the own concentration of h_own and hcn_own, mol/L
CONCENTRATION_M = 2.0


def _reactions(tmp_path, samples, state):
    path = tmp_path / f"reactions_{state}.toml"
    path.write_text(REACTIONS.format(s=samples.as_posix(), state=state))
    return qcthermo.run(samples, reactions=path, jobs=1, cache=False).reactions.set_index("reaction")


@pytest.mark.parametrize("state, concentration", [
    ("1M", CONCENTRATION_M),  # [S] in mol/L
    ("1atm", CONCENTRATION_M * constants.N_A * 1e-3),  # [S] in molecule cm^-3 (1 L = 1000 cm^3)
])
def test_own_concentration_gives_pseudo_order_rate_constants(tmp_path, samples, state, concentration):
    df = _reactions(tmp_path, samples, state)
    # bimolecular A + S with S at its own concentration: pseudo-first order, k' = k2 [S] in s^-1
    k2, k_pseudo = df.loc["abstraction", "k_forward"], df.loc["abstraction_own", "k_forward"]
    assert k_pseudo == pytest.approx(k2 * concentration, rel=1e-9)
    assert df.loc["abstraction_own", "k_unit"].startswith("s^-1 (forward)")
    # the reverse direction has no species at its own concentration: unchanged, with the bimolecular unit
    assert df.loc["abstraction_own", "k_reverse"] == pytest.approx(df.loc["abstraction", "k_reverse"], rel=1e-9)
    # unimolecular S alone: pseudo-zero order, k' = k1 [S] is the rate, in concentration per second; not a
    # first-order constant in s^-1 (which would have to equal k1, whatever [S] is)
    k1, k0 = df.loc["isomerisation", "k_forward"], df.loc["isomerisation_own", "k_forward"]
    assert df.loc["isomerisation", "k_unit"] == "s^-1"
    assert k0 == pytest.approx(k1 * concentration, rel=1e-9)
    unit = "M s^-1" if state == "1M" else "molecule cm^-3 s^-1"
    assert df.loc["isomerisation_own", "k_unit"] == f"{unit} (forward), s^-1 (reverse)"
    assert np.isfinite(df["k_forward"]).all()


def test_reaction_path_degeneracy_is_counted_once(tmp_path, samples):
    # H + CH4 -> H...H3C: L = sigma(CH4) sigma(H) / sigma(TS) = 12 x 1 / 3 = 4, the four equivalent H atoms
    # (Fernandez-Ramos, Ellingson, Meana-Paneda, Marques, Truhlar, Theor. Chem. Acc. 2007, 118, 813)
    df = _reactions(tmp_path, samples, "1M")
    k = df.loc["abstraction", "k_forward"]
    # the symmetry numbers inside the rotational partition functions already give k its factor L = 4 ...
    assert k == pytest.approx(4.0 * df.loc["abstraction_sigma1", "k_forward"], rel=1e-9)
    # ... so a reaction file's total L = 4 adds nothing more, and L = 8 (say, with a chiral TS) doubles k
    assert df.loc["abstraction_L4", "k_forward"] == pytest.approx(k, rel=1e-12)
    assert df.loc["abstraction_L8", "k_forward"] == pytest.approx(2.0 * k, rel=1e-12)
    # the same L in both directions keeps k_f / k_r the equilibrium constant (Tolman 1924, from memory)
    assert df.loc["abstraction_L8", "k_reverse"] == pytest.approx(2.0 * df.loc["abstraction", "k_reverse"], rel=1e-12)


def test_ensemble_entropy_includes_mixing_and_composite_shifts_energies_only():
    # Boltzmann ensemble of conformers (McQuarrie, Statistical Mechanics, 1976, from memory): with
    # p_i = exp(-G_i/RT) / sum_j exp(-G_j/RT), H = sum p_i H_i and S = sum p_i S_i - k sum p_i ln p_i (the
    # Gibbs entropy of the conformer distribution), so that G = H - TS = -kT ln sum exp(-G_i/kT)
    from types import SimpleNamespace

    from qcthermo.species import Conformer, conformer_values, ensemble_values
    from qcthermo.units import K_B_EH

    t = np.array([250.0, 298.15, 400.0])
    kt = K_B_EH * t
    e_low, e_high = -100.0, -100.25  # hartree, an arbitrary electronic energy and its higher-level value
    conformers = []
    for h_rel, s in ((0.0, 3.0e-4), (0.001, 3.2e-4), (0.0015, 3.1e-4)):  # hartree, hartree/K
        h = e_low + 0.05 + h_rel
        thermo = SimpleNamespace(electronic_energy=e_low, enthalpy=h, entropy=s, gibbs=h - t * s,
                                 rrho={"zpe": 0.04, "enthalpy": h, "entropy": s, "gibbs": h - t * s})
        c = Conformer(calculation=None)
        c.values = conformer_values(thermo, len(t), e_high)
        # composite: X = E(high) + [X - E](low) for the energies, the low level's S
        assert c.values["G"] == pytest.approx(e_high + (h - t * s - e_low), abs=1e-12)
        assert c.values["S"] == pytest.approx(np.full(3, s), abs=0)
        conformers.append(c)
    out = ensemble_values(conformers, t)
    g = np.array([c.values["G"] for c in conformers])
    p = np.exp(-(g - g.min(axis=0)) / kt)
    p /= p.sum(axis=0)
    s_i = np.array([c.values["S"] for c in conformers])
    h_i = np.array([c.values["H"] for c in conformers])
    assert out["H"] == pytest.approx((p * h_i).sum(axis=0), abs=1e-12)
    assert out["S"] == pytest.approx((p * s_i).sum(axis=0) - K_B_EH * (p * np.log(p)).sum(axis=0), rel=1e-9)
    assert out["G"] == pytest.approx(g.min(axis=0) - kt * np.log(np.exp(-(g - g.min(axis=0)) / kt).sum(axis=0)),
                                     abs=1e-12)


@pytest.mark.parametrize("second, usable", [(-20.0, True), (-300.0, False)])
def test_second_imaginary_mode_of_a_transition_state_follows_the_policy(samples, second, usable):
    # docs/thermo.md, "Mode clean-up": a transition state has exactly one imaginary mode, left out of q; any other
    # imaginary mode follows the policy, whose default inverts small ones (|nu| < 50 cm^-1) with a warning
    # and refuses large ones (a -300 cm^-1 mode makes a second-order saddle point, not an artefact)
    from dataclasses import replace

    from qcthermo.readers import read_log
    from qcthermo.records import Conditions
    from qcthermo.species import SpeciesOptions, build_species

    calc = read_log(samples / "gas" / "ts_abstraction.out")
    freqs = np.sort(np.asarray(calc.frequencies, dtype=float))
    assert freqs[0] < -500 and freqs[1] > 0  # the sample: one reaction mode
    freqs[1] = second  # the softest real mode turned imaginary
    ts = build_species("ts", [replace(calc, frequencies=freqs)], Conditions(), SpeciesOptions(transition_state=True))
    assert ts.usable is usable
    severities = {f.severity for f in ts.findings if "imaginary" in f.message}
    assert severities == ({"warning"} if usable else {"error"})
    if usable:
        thermo = ts.lowest.thermo
        assert thermo.imaginary_frequency == pytest.approx(freqs[0])
        assert any("inverted" in n for n in thermo.notes)


@pytest.mark.parametrize("model", ["qrrho", "qrrho-enthalpy"])
def test_atom_batched_with_molecules_under_molecular_rotor_inertia(model):
    # an H atom: Sackur-Tetrode translation and R ln 2 of its doublet, nothing else, checked against ASE's
    # IdealGasThermo (geometry "monatomic", spin 1/2), whatever molecules share its batch
    from ase import Atoms
    from ase.thermochemistry import IdealGasThermo

    from qcthermo.records import Conditions, Molecule
    from qcthermo.thermo import thermochemistry_many
    from qcthermo.units import HARTREE_EV

    h = Molecule(symbols=["H"], coordinates=np.zeros((1, 3)), frequencies=np.zeros(0), multiplicity=2, energy=0.0)
    h2 = Molecule(symbols=["H", "H"], coordinates=np.array([[0.0, 0.0, 0.0], [0.0, 0.0, 0.7414]]),
                  frequencies=np.array([4401.0]), multiplicity=1, energy=0.0)
    conditions = Conditions(low_mode_model=model, rotor_inertia="molecular", standard_state="1atm")
    atom = thermochemistry_many([h, h2], conditions)[0]
    ase = IdealGasThermo([], "monatomic", atoms=Atoms("H", masses=h.masses), spin=0.5, symmetrynumber=1)
    s_ase = ase.get_entropy(298.15, constants.atm, verbose=False) / HARTREE_EV
    assert atom.entropy == pytest.approx(s_ase, rel=1e-6)


def test_solvent_logs_at_a_gas_standard_state_are_flagged(tmp_path, samples):
    # a solute in a continuum is quoted at 1 M (common practice): at 1 atm its G lacks RT ln(24.46), 1.89 kcal/mol
    # per species at 298.15 K, so a run doing that says so; water at its own 55.3 M is not a solute at 1 atm
    import qcthermo

    path = tmp_path / "hydration.toml"
    path.write_text(f"""
[species.formaldehyde]
logs = "{samples.as_posix()}/solvent/formaldehyde.out"
[species.water]
logs = "{samples.as_posix()}/solvent/water.out"
concentration = "55.3M"
""")
    flagged = {}
    for state in ("1atm", "1M"):
        cond = qcthermo.Conditions(standard_state=state)
        res = qcthermo.run(samples / "solvent", reactions=path, conditions=cond, jobs=1, cache=False)
        flagged[state] = sorted(f.subject for f in res.findings if "gas standard state" in f.message)
    assert flagged == {"1atm": ["formaldehyde"], "1M": []}

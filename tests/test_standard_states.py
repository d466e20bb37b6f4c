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

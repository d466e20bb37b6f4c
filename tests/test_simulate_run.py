"""A run's network simulated (qcthermo.simulate on qcthermo.run's results) on the bundled sample scenario, against
the energy span model, the law of mass action and the standard-state independence of rate constants; the
[simulation] and rate keys of the reaction file, and bad input as one line."""

import numpy as np
import pytest
from sample_species import species_tables
from scipy import constants

import qcthermo
from qcthermo.errors import ReactionFileError, SimulationError
from qcthermo.reactions import load_reaction_file
from qcthermo.records import Conditions

#: the methane cycle of the sample scenario (H + H -> H2 on CH4), its profile and a [simulation] at steady state
CYCLE = """
[conditions]
standard_state = "{state}"
""" + species_tables("ch4", "h", "ts_abstraction", "ch3", "h2", single_points=True) + """
[[reaction]]
name = "abstraction"
reactants = ["ch4", "h"]
transition_state = "ts_abstraction"
products = ["ch3", "h2"]
tunnelling = "{tunnelling}"
[[reaction]]
name = "recombination"
reactants = ["ch3", "h"]
products = ["ch4"]
rate = {rate}

[[profile]]
name = "cycle"
states = [["ch4", "2 h"], ["ts_abstraction", "h"], ["ch3", "h2", "h"], ["ch4", "h2"]]
cyclic = true

[simulation]
initial = {{ch4 = 1e-3, h = {h}, h2 = {h}}}
fixed = ["h", "h2"]
time = "1 h"
product = "h2"
catalyst = ["ch4", "ch3"]
"""


def _cycle_run(tmp_path, samples, state="1M", tunnelling="none", rate="2e11", h="1.0"):
    path = tmp_path / "cycle.toml"
    path.write_text(CYCLE.format(s=samples, state=state, tunnelling=tunnelling, rate=rate, h=h))
    return qcthermo.run(samples / "gas", reactions=path, jobs=1, cache=False)


def test_steady_state_tof_of_the_sample_cycle_is_the_energy_span_tof(tmp_path, samples, cache_dir):
    """Kozuch and Shaik, Acc. Chem. Res. 2011, 44, 101: with every species at its standard state and the
    barrierless recombination far faster than the abstraction, the steady-state TOF is the energy span's
    (kT/h) exp(-dE/RT) of the cyclic profile (tunnelling off: the energy span has none)."""
    results = _cycle_run(tmp_path, samples)
    sim = qcthermo.simulate(results)
    row = sim.tof_comparison.iloc[0]
    assert sim.tof == pytest.approx(results.energy_span["TOF_s-1"].iloc[0], rel=1e-6)
    assert row["ratio"] == pytest.approx(1.0, rel=1e-6)
    assert "should agree" not in row["why_they_differ"]  # the recombination's given rate is named
    # one rate-determining step: its degree of rate control is 1, and they sum to 1
    x = dict(zip(sim.rate_control["reaction"], sim.rate_control["degree_of_rate_control"], strict=True))
    assert x["abstraction"] == pytest.approx(1.0, abs=1e-6)
    assert sum(x.values()) == pytest.approx(1.0, abs=1e-6)


def test_tunnelling_and_concentrations_are_named_when_the_tofs_differ(tmp_path, samples, cache_dir):
    results = _cycle_run(tmp_path, samples, tunnelling="eckart", h="0.5")
    sim = qcthermo.simulate(results)
    row = sim.tof_comparison.iloc[0]
    kappa = float(results.reactions["kappa"].iloc[0])
    # the rate is first order in [H]: kappa x 0.5 M / 1 M of the energy span's TOF
    assert row["ratio"] == pytest.approx(kappa * 0.5, rel=1e-6)
    assert "tunnelling" in row["why_they_differ"] and "[h] = 0.5 M" in row["why_they_differ"]


def test_rate_constants_in_mol_per_litre_do_not_depend_on_the_standard_state(tmp_path, samples, cache_dir):
    """A rate constant is a property of the reaction, not of the standard state its free energies used
    (common practice: Eyring with (c0)^(1-m) makes them agree). The 1 atm run gives k in cm^3 molecule^-1 s^-1
    and c0 = p0/RT; converted to M^-1 s^-1 it must equal the 1 M run's, and so must k_reverse from K."""
    k = {}
    for state in ("1M", "1atm"):
        (tmp_path / state).mkdir()
        sim = qcthermo.simulate(_cycle_run(tmp_path / state, samples, state=state, rate="2e11"),
                                initial={"ch4": "1 mM", "h": "1 M", "h2": "1 M"}, time=10.0, fixed=["h", "h2"],
                                rate_control=False)
        k[state] = sim.reactions.set_index("reaction")[["k_forward", "k_reverse"]]
    np.testing.assert_allclose(k["1atm"].to_numpy(), k["1M"].to_numpy(), rtol=1e-9)


def test_partial_pressures_at_a_gas_standard_state(tmp_path, samples, cache_dir):
    # at 1 atm a plain number is a partial pressure in atm: c = p / RT (ideal gas)
    sim = qcthermo.simulate(_cycle_run(tmp_path, samples, state="1atm", rate="3.3e-10"),
                            initial={"ch4": 0.01, "h": "50 Pa", "h2": 0.5}, time=1e-3, rate_control=False)
    start = sim.concentrations.iloc[0]
    rt = constants.R * 298.15
    assert start["ch4"] == pytest.approx(0.01 * constants.atm / rt / 1000, rel=1e-12)
    assert start["h"] == pytest.approx(50 / rt / 1000, rel=1e-12)


HYDRATION = """
[conditions]
standard_state = "1M"
[species.formaldehyde]
logs = "{s}/solvent/formaldehyde.out"
[species.water]
logs = "{s}/solvent/water.out"
concentration = "55.3M"
[species.methanediol]
logs = "{s}/solvent/methanediol.out"
enantiomers = 2
[species.ts_hydration]
logs = "{s}/solvent/ts_hydration.out"
enantiomers = 2
[[reaction]]
name = "hydration"
reactants = ["formaldehyde", "water"]
transition_state = "ts_hydration"
products = ["methanediol"]
"""


@pytest.fixture
def hydration(tmp_path, samples, cache_dir):
    path = tmp_path / "hydration.toml"
    path.write_text(HYDRATION.format(s=samples))
    return qcthermo.run(samples / "solvent", reactions=path, jobs=1, cache=False)


def test_hydration_in_water_reaches_the_equilibrium_constant(hydration):
    """The law of mass action with water at its own 55.3 M (inside dG and k): [methanediol]/[formaldehyde] =
    exp(-dG/RT) with the run's dG (reactions.csv), once the run has gone ~50 relaxation times."""
    sim = qcthermo.simulate(hydration, initial={"formaldehyde": 0.1}, time="1e6 y", product="methanediol")
    end = sim.concentrations.iloc[-1]
    dg = hydration.reactions["dG_qrrho_kcal_mol"].iloc[0] * 4184.0
    assert end["methanediol"] / end["formaldehyde"] == pytest.approx(np.exp(-dg / (constants.R * 298.15)), rel=1e-6)
    assert (sim.concentrations["water"] == 55.3).all()
    # first order in formaldehyde: the half-life is ln 2 / (k_f + k_r) for a reversible first-order step
    k = sim.reactions.iloc[0]
    summary = sim.summary.set_index("species")
    assert summary.loc["formaldehyde", "half_life_s"] == pytest.approx(
        np.log(2 * (1 - 1 / (1 + k["k_forward"] / k["k_reverse"])) / (1 - 2 / (1 + k["k_forward"] / k["k_reverse"])))
        / (k["k_forward"] + k["k_reverse"]), rel=1e-6)


@pytest.mark.parametrize("table, message", [
    ('initial = {ghost = 1}\ntime = "1 h"', "unknown species 'ghost'"),
    ('initial = {formaldehyde = -0.1}\ntime = "1 h"', "is negative"),
    ('initial = {formaldehyde = nan}\ntime = "1 h"', "not a finite number"),
    ('initial = {formaldehyde = 0.1}\ntime = 0', "must be positive"),
    ('initial = {formaldehyde = 0.1}\ntime = ["1 s", "-1 s"]', "must be positive"),
    ('initial = {formaldehyde = 0.1}\ntime = "1 fortnight"', "expected a number with one of the units"),
    ('initial = {water = 1.0}\ntime = "1 h"', "held at its own concentration"),
    ('initial = {formaldehyde = 0.1}\ntime = "1 h"\nfixed = ["methanediol"]', "needs an initial concentration"),
    ('initial = {formaldehyde = 0.1}\ntime = "1 h"\nmethod = "RK45"', "expected one of BDF, Radau, LSODA"),
    ('initial = {formaldehyde = 0.1}', "needs 'time'"),
])
def test_bad_simulation_tables_name_the_line(tmp_path, samples, table, message):
    path = tmp_path / "r.toml"
    path.write_text(HYDRATION.format(s=samples) + "\n[species.lonely]\nlogs = \"" + str(samples / "gas/o2.out")
                    + "\"\n[simulation]\n" + table + "\n")
    with pytest.raises(ReactionFileError, match=message) as err:
        load_reaction_file(path)
    assert "\n" not in str(err.value) and ", line " in str(err.value)


def test_a_species_no_reaction_uses_is_refused(tmp_path, samples):
    path = tmp_path / "r.toml"
    path.write_text(HYDRATION.format(s=samples) + f'\n[species.o2]\nlogs = "{samples}/gas/o2.out"\n'
                    '[simulation]\ninitial = {o2 = 0.1}\ntime = "1 h"\n')
    with pytest.raises(ReactionFileError, match="'o2' takes part in no reaction"):
        load_reaction_file(path)


def test_rate_only_without_a_transition_state(tmp_path, samples):
    path = tmp_path / "r.toml"
    path.write_text(HYDRATION.format(s=samples).replace('products = ["methanediol"]',
                                                        'products = ["methanediol"]\nrate = 1e3'))
    with pytest.raises(ReactionFileError, match="takes its rate constant from it"):
        load_reaction_file(path)
    path.write_text(CYCLE.format(s=samples, state="1M", tunnelling="none", rate='"fast"', h="1"))
    with pytest.raises(ReactionFileError, match="rate 'fast'"):
        load_reaction_file(path)


def test_api_bad_input_is_a_one_line_simulation_error(hydration):
    for kwargs, message in [({"initial": {"formaldehyde": -1}, "time": 1.0}, "negative"),
                            ({"initial": {"formaldehyde": 0.1}, "time": -1.0}, "positive"),
                            ({"initial": {"ghost": 0.1}, "time": 1.0}, "takes part in no simulated reaction"),
                            ({"initial": {"formaldehyde": 0.1}, "time": 1.0, "temperature": 400.0}, "outside")]:
        with pytest.raises(SimulationError, match=message) as err:
            qcthermo.simulate(hydration, **kwargs)
        assert "\n" not in str(err.value)


def test_a_network_without_any_rate_constant_is_refused(tmp_path, samples, cache_dir):
    path = tmp_path / "r.toml"
    path.write_text(CYCLE.format(s=samples, state="1M", tunnelling="none", rate="1", h="1").replace(
        'transition_state = "ts_abstraction"\n', "").replace("rate = 1\n", ""))
    results = qcthermo.run(samples / "gas", reactions=path, jobs=1, cache=False,
                           conditions=Conditions(standard_state="1M"))
    with pytest.raises(SimulationError, match="no reaction with a rate constant"):
        qcthermo.simulate(results, initial={"ch4": 0.1}, time=1.0)


def test_diffusion_limited_step_in_solution(tmp_path, samples, cache_dir):
    """rate = "diffusion" on a bimolecular step in solution: k_D = 8RT/(3 eta) with water's 0.890 mPa s
    (Smoluchowski, Z. Phys. Chem. 1917, 92, 129 with Stokes-Einstein; the viscosity from memory), its
    reverse from K = exp(-dG/RT) / c0 with the run's dG (here water as a plain 1 M solute, for the test)."""
    path = tmp_path / "r.toml"
    path.write_text(HYDRATION.format(s=samples).replace('concentration = "55.3M"\n', "").replace(
        'transition_state = "ts_hydration"\n', "").replace('products = ["methanediol"]',
                                                           'products = ["methanediol"]\nrate = "diffusion"'))
    results = qcthermo.run(samples / "solvent", reactions=path, jobs=1, cache=False)
    sim = qcthermo.simulate(results, initial={"formaldehyde": 0.1, "water": 0.2}, time=1.0, rate_control=False)
    k = sim.reactions.iloc[0]
    assert k["k_forward"] == pytest.approx(8 * constants.R * 298.15 / (3 * 0.890e-3) * 1000, rel=1e-12)
    dg = results.reactions["dG_qrrho_kcal_mol"].iloc[0] * 4184.0
    assert k["k_forward"] / k["k_reverse"] == pytest.approx(np.exp(-dg / (constants.R * 298.15)), rel=1e-9)
    assert "diffusion" in k["k_source"]

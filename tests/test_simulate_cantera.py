"""The same simulation in Cantera: an ideal-gas reactor at constant volume and temperature on the run's
thermo.yaml (its NASA-7 species and modified Arrhenius reactions) against qcthermo's own integrator."""

import numpy as np
import pytest
from sample_species import species_tables

import qcthermo
from qcthermo.errors import SimulationError
from qcthermo.records import Conditions

GAS = "\n" + species_tables("hcn", "hnc", "ts_hcn", "ch4", "h", "ts_abstraction", "ch3", "h2") + """[[reaction]]
name = "isomerisation"
reactants = ["hcn"]
transition_state = "ts_hcn"
products = ["hnc"]
tunnelling = "none"
[[reaction]]
name = "abstraction"
reactants = ["ch4", "h"]
transition_state = "ts_abstraction"
products = ["ch3", "h2"]
tunnelling = "none"
"""


@pytest.fixture
def gas_run(tmp_path, samples, cache_dir):
    path = tmp_path / "gas.toml"
    path.write_text(GAS.format(s=samples))
    # three temperatures around 1000 K: the mechanism's Arrhenius fits are made over the run's range
    return qcthermo.run(samples / "gas", reactions=path, jobs=1,
                        conditions=Conditions(temperature=np.array([950.0, 1000.0, 1050.0]), standard_state="1M"))


def test_cantera_reactor_agrees_with_the_own_integrator(gas_run):
    """Both engines on HCN -> HNC and CH4 + H -> CH3 + H2 at 1000 K, from the kinetic regime (0.1 ns) to
    equilibrium: Cantera (cantera.IdealGasReactor, energy off, on thermo.yaml) and qcthermo's integrator agree
    within 1 % of each species' largest concentration. What separates them is thermo.yaml's own approximation
    (Arrhenius fits of k(T) and NASA-7 equilibrium constants, each stated in the file's notes)."""
    kw = dict(initial={"hcn": 1e-3, "ch4": 2e-3, "h": 1e-3}, time=list(np.logspace(-10, -4, 13)), temperature=1000.0,
              rate_control=False)
    ours = qcthermo.simulate(gas_run, **kw)
    theirs = qcthermo.simulate(gas_run, engine="cantera", **kw)
    a, b = ours.concentrations, theirs.concentrations[ours.concentrations.columns]
    np.testing.assert_allclose(b.index, a.index)
    deviation = ((b - a).abs() / a.abs().max()).max()
    assert deviation.max() < 0.01, deviation
    assert a["h2"].iloc[1] < 0.1 * a["h2"].iloc[-1]  # the first output time is in the kinetic regime


def test_cantera_engine_refuses_what_an_ideal_gas_reactor_cannot_hold(gas_run):
    with pytest.raises(SimulationError, match="no fixed species"):
        qcthermo.simulate(gas_run, initial={"hcn": 1e-3, "h": 1e-3}, time=1e-6, temperature=1000.0,
                          fixed=["h"], engine="cantera")

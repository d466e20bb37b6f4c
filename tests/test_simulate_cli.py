"""qcthermo simulate and the simulation inside qcthermo run / demo: the files written, the report section, bad
input as one line with exit status 2."""

import json

import pandas as pd
import pytest
from sample_species import species_tables

from qcthermo.cli import main

CYCLE = """
[conditions]
standard_state = "1M"
""" + species_tables("ch4", "h", "ts_abstraction", "ch3", "h2") + """[[reaction]]
name = "abstraction"
reactants = ["ch4", "h"]
transition_state = "ts_abstraction"
products = ["ch3", "h2"]
[[reaction]]
name = "recombination"
reactants = ["ch3", "h"]
products = ["ch4"]
rate = 2e11
"""


@pytest.fixture
def cycle_file(tmp_path, samples):
    def write(simulation: str):
        path = tmp_path / "cycle.toml"
        path.write_text(CYCLE.format(s=samples) + "\n[simulation]\n" + simulation + "\n")
        return path
    return write


def test_simulate_writes_the_simulation_files(tmp_path, samples, cycle_file, cache_dir, capsys):
    path = cycle_file('initial = {ch4 = 0.01, h = 0.02}\ntime = "1 h"\nproduct = "h2"\nreactant = "h"')
    out = tmp_path / "out"
    status = main(["simulate", str(samples / "gas"), "--reactions", str(path), "--out", str(out), "--quiet",
                   "--jobs", "1", "--time-axis", "log"])
    assert status in (0, 1)
    for name in ("concentrations.csv", "concentrations.md", "concentrations.tex", "simulation.csv",
                 "rate_control.csv", "concentrations.svg", "concentrations.png", "report.html", "run.json"):
        assert (out / name).is_file(), name
    long = pd.read_csv(out / "concentrations.csv")
    assert list(long.columns) == ["time_s", "species", "concentration_M"]
    # H atoms: 0.02 M at t = 0, each abstraction and recombination uses one (atoms conserved: checked in
    # test_simulate.py); the half-life column is filled for the reactant that halves
    summary = pd.read_csv(out / "simulation.csv").set_index("species")
    assert summary.loc["h", "initial_M"] == pytest.approx(0.02)
    record = json.loads((out / "run.json").read_text())
    assert record["simulation"]["settings"]["product"] == "h2"
    assert "simulation.csv" in record["files"]
    assert 'id="simulation"' in (out / "report.html").read_text()
    # the log axes' tick labels are powers of ten in superscripts, not mathtext source printed as written
    # (the figures' text is plain): "10⁻³", never "$\\mathdefault{10^{-3}}$"
    svg = (out / "concentrations.svg").read_text()
    assert "mathdefault" not in svg and ">10⁻" in svg
    # a second simulation into its own folder needs no --force
    assert main(["simulate", str(samples / "gas"), "--reactions", str(path), "--out", str(out), "--quiet",
                 "--jobs", "1"]) in (0, 1)


@pytest.mark.parametrize("simulation, message", [
    ('initial = {ch4 = -1}\ntime = "1 h"', "negative"),
    ('initial = {ch4 = 1}\ntime = "0 s"', "must be positive"),
    ('initial = {ch4 = 1}\ntime = "1 h"\ntemperature = 0', "> 0"),
])
def test_bad_simulation_input_exits_2_with_one_line(tmp_path, samples, cycle_file, simulation, message, capsys):
    status = main(["simulate", str(samples / "gas"), "--reactions", str(cycle_file(simulation)),
                   "--out", str(tmp_path / "out"), "--quiet", "--no-cache"])
    err = capsys.readouterr().err
    assert status == 2 and message in err and len(err.strip().splitlines()) == 1


def test_without_a_simulation_table(tmp_path, samples, capsys):
    path = tmp_path / "plain.toml"
    path.write_text(CYCLE.format(s=samples))
    assert main(["simulate", str(samples / "gas"), "--reactions", str(path), "--out", str(tmp_path / "o"),
                 "--quiet", "--no-cache"]) == 2
    assert "no [simulation] table" in capsys.readouterr().err


def test_a_network_left_without_rate_constants_exits_2(tmp_path, samples, cache_dir, capsys):
    path = tmp_path / "r.toml"
    path.write_text(CYCLE.format(s=samples).replace("rate = 2e11\n", "").replace(
        'transition_state = "ts_abstraction"\n', "") + '\n[simulation]\ninitial = {ch4 = 1}\ntime = "1 s"\n')
    status = main(["simulate", str(samples / "gas"), "--reactions", str(path), "--out", str(tmp_path / "o"),
                   "--quiet", "--jobs", "1"])
    err = capsys.readouterr().err
    assert status == 2 and "no reaction with a rate constant" in err and len(err.strip().splitlines()) == 1

"""The run, demo and init commands: exit status, one-line errors, files written, no clobbering."""

import json
import subprocess
import sys

import pytest

from qcthermo.cli import main
from qcthermo.reactions import load_reaction_file

GOOD = """\
[conditions]
standard_state = "1M"

[species.hcn]
logs = "{s}/gas/hcn.out"
[species.hnc]
logs = "{s}/gas/hnc.out"
[species.ts_hcn]
logs = "{s}/gas/ts_hcn.out"

[[reaction]]
name = "isomerisation"
reactants = ["hcn"]
transition_state = "ts_hcn"
products = ["hnc"]
"""


def _file(tmp_path, samples, text):
    path = tmp_path / "reactions.toml"
    path.write_text(text.format(s=samples.as_posix()))
    return path


def _run(tmp_path, samples, text, *extra):
    path = _file(tmp_path, samples, text)
    return main(["run", str(samples / "gas"), "--reactions", str(path), "--out", str(tmp_path / "out"),
                 "--no-cache", "--jobs", "1", "--quiet", *extra])


@pytest.mark.parametrize(
    ("change", "line", "name"),
    [
        (('reactants = ["hcn"]', 'reactants = ["hcn_x"]'), 13, "'hcn_x'"),  # unknown species
        (('reactants = ["hcn"]', 'reactants = ["hcnn"]'), 13, "did you mean 'hcn'?"),  # a typo of a declared one
        (('transition_state = "ts_hcn"', 'transition_state = "ts_hnc"'), 14, "did you mean 'ts_hcn'?"),
        (('products = ["hnc"]', 'products = ["hnc", "hcn"]'), 11, "'isomerisation'"),  # unbalanced
        (('logs = "{s}/gas/hnc.out"', 'logs = "{s}/gas/hnc_*.log"'), 7, "hnc_*.log"),  # glob matching nothing
        (('[species.hnc]', '[species.hnc'), 6, "syntax"),  # TOML syntax error
        (('name = "isomerisation"', 'name = "isomerisation"\nspeed = 1'), 13, "'speed'"),  # unknown key
    ],
)
def test_bad_reaction_file_exits_2_with_line_and_name(tmp_path, samples, capsys, change, line, name):
    status = _run(tmp_path, samples, GOOD.replace(*change))
    err = capsys.readouterr().err.strip().splitlines()
    assert status == 2
    assert len(err) == 1 and f"line {line}" in err[0] and name in err[0]
    assert not (tmp_path / "out").exists()


def test_bad_reaction_file_no_traceback_in_a_real_process(tmp_path, samples):
    path = _file(tmp_path, samples, GOOD.replace('reactants = ["hcn"]', 'reactants = ["nothing"]'))
    proc = subprocess.run([sys.executable, "-m", "qcthermo", "run", str(samples / "gas"), "--reactions", str(path),
                           "--out", str(tmp_path / "o"), "--no-cache"], capture_output=True, text=True)
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr and "'nothing'" in proc.stderr


def test_run_writes_and_summarises(tmp_path, samples, capsys):
    assert _run(tmp_path, samples, GOOD, "--temperature", "300") == 0
    out = capsys.readouterr().out
    assert "isomerisation" not in out  # --quiet: no table
    assert str(tmp_path / "out") in out
    doc = json.loads((tmp_path / "out" / "run.json").read_text())
    assert doc["settings"]["conditions"]["temperature"] == 300.0
    assert doc["exit_status"] == 0


def test_run_refuses_to_clobber_without_force(tmp_path, samples, capsys):
    out = tmp_path / "out"
    out.mkdir()
    (out / "thesis.tex").write_text("keep me\n")
    assert _run(tmp_path, samples, GOOD) == 2
    assert "--force" in capsys.readouterr().err
    assert (out / "thesis.tex").read_text() == "keep me\n" and not (out / "run.json").exists()
    assert _run(tmp_path, samples, GOOD, "--force") == 0
    assert (out / "run.json").exists() and (out / "thesis.tex").exists()


def test_init_writes_a_file_that_parses_back(tmp_path, samples, capsys):
    target = tmp_path / "starter.toml"
    assert main(["init", str(samples / "gas"), "-o", str(target), "--no-cache", "--jobs", "1", "--quiet"]) == 0
    rf = load_reaction_file(target)
    assert "ts_hcn" in rf.species and rf.species["ts_hcn"].transition_state
    assert rf.reactions == []  # the example reaction is a comment
    # gas-phase logs (no solvent model): the gas standard state, as on the command line (docs/reactions.md)
    assert rf.conditions["standard_state"] == "1atm"
    assert main(["init", str(samples / "gas"), "-o", str(target), "--no-cache", "--quiet"]) == 2  # exists
    assert "--force" in capsys.readouterr().err


def test_demo_runs_on_the_sample_scenario(tmp_path, samples, capsys):
    status = main(["demo", "--out", str(tmp_path / "demo"), "--force", "--no-cache", "--quiet"])
    assert status in (0, 1)  # 1: the scenario's planted flaws are input errors, listed
    out = capsys.readouterr().out
    assert str(tmp_path / "demo") in out
    doc = json.loads((tmp_path / "demo" / "run.json").read_text())
    assert doc["exit_status"] == status and doc["reactions"]
    for name in ("survey.csv", "species.csv", "reactions.csv", "coordinates.xyz"):
        assert (tmp_path / "demo" / name).is_file()


def test_init_on_the_scenario_groups_conformers_and_pairs_single_points(tmp_path, samples):
    # The scenario (sample_outputs/README.md): eight pentane conformers, HCN/HNC isomers, MP2 single points
    # on the B3LYP geometries of the gas-phase species including the H atom.
    target = tmp_path / "starter.toml"
    assert main(["init", str(samples), "-o", str(target), "--no-cache", "--jobs", "1", "--quiet"]) == 0
    rf = load_reaction_file(target)
    assert len(rf.species["pentane"].logs) == 8
    assert {"hcn", "hnc"} <= set(rf.species)  # isomers, not one ensemble
    assert [p.name for p in rf.species["h_atom"].single_point] == ["h_atom_mp2.out"]
    assert [p.name for p in rf.species["ch4"].single_point] == ["ch4_mp2.out"]
    assert rf.conditions["standard_state"] == "1M"  # the scenario's solvent/ logs carry a COSMO model


def test_init_and_species_keep_programs_apart(tmp_path, third_party):
    # The same dvb structure at "B3LYP/STO-3G" from Gaussian 16 and ORCA 5 (third-party-logs README:
    # E = -382.308 and -382.055 Eh): not two conformers of one ensemble.
    import shutil

    import qcthermo
    from qcthermo.species import build_species

    logs = tmp_path / "logs"
    logs.mkdir()
    shutil.copy(third_party / "gaussian16" / "dvb_ir.out", logs / "dvb_gaussian.out")
    shutil.copy(third_party / "orca5.0" / "dvb_ir.out", logs / "dvb_orca.out")
    assert main(["init", str(logs), "--no-cache", "--jobs", "1", "--quiet"]) == 0
    rf = load_reaction_file(logs / "reactions.toml")
    assert sorted(len(s.logs) for s in rf.species.values()) == [1, 1]
    # an ensemble the user writes by hand across programs is computed, with a warning
    calcs = [qcthermo.read_log(logs / name) for name in ("dvb_gaussian.out", "dvb_orca.out")]
    species = build_species("dvb", calcs, qcthermo.Conditions())
    warnings = [f.message for f in species.findings if f.severity == "warning"]
    assert any("different programs (gaussian, orca)" in w for w in warnings)


def test_init_marks_a_transition_state_frequency_job(tmp_path, third_party):
    # third-party-logs README: the GAMESS NH3 run is a transition-state frequency job with exactly one
    # imaginary mode; the starter file must mark it, or the run refuses it as a minimum with a large imaginary mode
    import shutil

    logs = tmp_path / "logs"
    logs.mkdir()
    shutil.copy(third_party / "gamess-us2018" / "nh3_ts_ir.out", logs / "nh3_ts.out")
    assert main(["init", str(logs), "--no-cache", "--jobs", "1", "--quiet"]) == 0
    rf = load_reaction_file(logs / "reactions.toml")
    assert [s.transition_state for s in rf.species.values()] == [True]
    assert "transition state (one imaginary mode)" in (logs / "reactions.toml").read_text()


def test_profile_reports_its_own_errors_and_counts_the_folders_others(tmp_path, samples, isomerisation_file, capsys):
    # the profile's three real NWChem logs, and beside them two files no species uses that are no logs: the figure
    # is drawn from clean inputs, so exit 0 and one counted note; a broken log of the profile's own is listed, exit 1
    import shutil

    logs = tmp_path / "logs"
    logs.mkdir()
    for name in ("hcn.out", "hnc.out", "ts_hcn.out"):
        shutil.copy(samples / "gas" / name, logs / name)
    for name in ("slurm-1.out", "slurm-2.out"):  # a batch system's outputs: no quantum-chemistry log
        (logs / name).write_text("job started\n")
    toml = tmp_path / "iso.toml"
    toml.write_text(isomerisation_file.read_text().replace(str(samples / "gas"), str(logs)))
    assert main(["profile", str(toml), "-o", str(tmp_path / "a.svg"), "--directory", str(logs), "--jobs", "1",
                 "--no-cache", "--quiet"]) == 0
    err = capsys.readouterr().err.strip().splitlines()
    assert err == [f"note: 2 other error(s) under {logs}, none about these profiles (`qcthermo survey {logs}` "
                   "lists them)"]
    (logs / "hnc_extra.out").write_text("not a log\n")  # a second file of the profile's species hnc, unreadable
    toml.write_text(toml.read_text().replace('logs = ["' + str(logs) + '/hnc.out"]',
                                             'logs = ["' + str(logs) + '/hnc.out", "' + str(logs) + '/hnc_extra.out"]'))
    assert main(["profile", str(toml), "-o", str(tmp_path / "b.svg"), "--directory", str(logs), "--jobs", "1",
                 "--no-cache", "--quiet"]) == 1
    err = capsys.readouterr().err
    assert "hnc_extra.out" in err and (tmp_path / "b.svg").exists()


def test_terminal_reactions_table_gives_k_its_unit_and_t_once(tmp_path, samples, capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "160")
    # HCN -> HNC is unimolecular: k in s^-1 (qcthermo.kinetics.rate_constant_unit; Eyring, (c0)^(1-m) with m = 1)
    path = _file(tmp_path, samples, GOOD)
    main(["run", str(samples / "gas"), "--reactions", str(path), "--out", str(tmp_path / "one"), "--no-cache",
          "--jobs", "1"])
    out = capsys.readouterr().out
    assert "reactions (qrrho) at 298.15 K" in out and "T\n" not in out  # one temperature: in the title only
    units, header, row = (next(line for line in out.splitlines() if line.lstrip().startswith(word))
                          for word in ("ΔE ", "reaction ", "isomerisation "))
    assert units.split() == ["ΔE", "ΔH", "ΔG", "ΔG‡"] and header.split()[1:5] == ["kcal/mol"] * 4
    assert "k (forward)" in header and "k unit" in header and "k_forward" not in out  # headings, not csv names
    assert row.split()[-2:] == ["s⁻¹", "ok"]
    main(["run", str(samples / "gas"), "--reactions", str(path), "--out", str(tmp_path / "range"), "--no-cache",
          "--jobs", "1", "--temperature-range", "300:400:100"])
    out = capsys.readouterr().out
    header = next(line for line in out.splitlines() if line.startswith("reaction "))
    assert header.split()[:2] == ["reaction", "K"]
    assert sum(line.startswith("isomerisation ") for line in out.splitlines()) == 2


def test_terminal_reactions_table_shows_an_excluded_reaction_once_and_the_ends_of_a_long_range(tmp_path, samples,
                                                                                            capsys, monkeypatch):
    # a reaction whose species has no readable file is excluded at every temperature: one row, no T
    logs = tmp_path / "logs"
    logs.mkdir()
    (logs / "broken.out").write_text("not a quantum-chemistry log\n")
    path = _file(tmp_path, samples, GOOD + f'[species.bad]\nlogs = "{logs.as_posix()}/broken.out"\n'
                 '[[reaction]]\nname = "broken"\nreactants = ["bad"]\nproducts = ["hcn"]\n')
    monkeypatch.setenv("LINES", "60")
    monkeypatch.setenv("COLUMNS", "160")
    main(["run", str(samples / "gas"), "--reactions", str(path), "--out", str(tmp_path / "a"), "--no-cache",
          "--jobs", "1", "--temperature-range", "300:500:100"])
    rows = [line.split() for line in capsys.readouterr().out.splitlines() if line.startswith(("broken ", "isom"))]
    assert [r[:2] for r in rows] == [["isomerisation", "300"], ["isomerisation", "400"], ["isomerisation", "500"],
                                     ["broken", "excluded"]]
    # 16 temperatures on a 12-line screen: the lowest and the highest, and a line saying so; the CSV has all
    monkeypatch.setenv("LINES", "12")
    main(["run", str(samples / "gas"), "--reactions", str(path), "--out", str(tmp_path / "b"), "--no-cache",
          "--jobs", "1", "--temperature-range", "250:1000:50"])
    out = capsys.readouterr().out
    assert [line.split()[1] for line in out.splitlines() if line.startswith("isom")] == ["250", "1000"]
    assert "16 temperatures from 250 to 1000 K, more than a screenful: the table shows 250 and 1000 K" in out
    assert (tmp_path / "b" / "reactions.csv").read_text().count("\nisomerisation,") == 16

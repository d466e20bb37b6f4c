"""The survey: which files are candidates, the audit of each file, parallel reading that survives a dying
worker, the exit status, and the ``qcthermo survey`` command (table, CSV, JSON, no overwrite).

Stub readers built on ASE's XYZ parser keep most tests independent of the quantum-chemistry readers; the
audit rules are checked on real data (the GAMESS-US transition-state log of the third-party folder, read
here with cclib directly); the end-to-end tests read copies of the third-party logs with qcthermo's reader
and check the values listed in that folder's README.
"""

from __future__ import annotations

import dataclasses
import gzip
import importlib
import json
import os
import re
import shutil
import signal
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from xyz_stub import WATER_XYZ, xyz_reader

import qcthermo
from qcthermo.cli import main
from qcthermo.errors import QcthermoError
from qcthermo.records import Calculation
from qcthermo.survey import COLUMNS, audit, find_candidates, job_types_label, survey

# every test keeps its parse cache in a folder of its own
pytestmark = pytest.mark.usefixtures("cache_dir")

# the module itself: once `qcthermo.survey` has been looked up as the function, `import qcthermo.survey as m`
# would give the function
survey_module = importlib.import_module("qcthermo.survey")


def crashing_reader(path: str) -> Calculation:
    """Kills its own process on files named crash*, like a segfault in a compiled parser would."""
    if Path(path).name.startswith("crash"):
        os.kill(os.getpid(), signal.SIGKILL)
    return xyz_reader(path)


def greedy_reader(path: str) -> Calculation:
    """Runs out of memory on files named greedy*; fails with a plain bug on files named bug*."""
    name = Path(path).name
    if name.startswith("greedy"):
        raise MemoryError
    if name.startswith("bug"):
        return {}["missing key"]
    return xyz_reader(path)


@pytest.fixture
def xyz_tree(tmp_path) -> Path:
    root = tmp_path / "logs"
    root.mkdir()
    for name in ("a.out", "b.log", "c.output", "d.nwo"):
        (root / name).write_text(WATER_XYZ)
    (root / "bad.out").write_text("no atoms here\n")
    return root


# -- candidates ----------------------------------------------------------------------------------


def test_candidates_by_suffix_skipping_hidden_venv_and_cache_dirs(tmp_path):
    root = tmp_path / "tree"
    for rel in ("a.out", "B.LOG", "x/c.output", "x/y/d.nwo", "old.log.gz", "notes.txt", "job.inp", "job.gz",
                ".hidden.out",
                ".git/e.out", "env/f.out", "__pycache__/g.log", "cache/h.out", "x/.snap/i.out"):
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text("x")
    (root / "env" / "pyvenv.cfg").write_text("home = /usr\n")
    found, notes = find_candidates(root, skip=(root / "cache",))
    assert [c.relpath for c in found] == ["B.LOG", "a.out", "old.log.gz", "x/c.output", "x/y/d.nwo"]
    assert notes == []
    assert found[0].key.path == str(root / "B.LOG") and found[0].key.size == 1


def test_compressed_logs_are_surveyed_as_the_plain_one(tmp_path, samples, cache_dir):
    # one real NWChem log gzipped, bzip2- and xz-compressed (Python's own codecs): each reads as the plain file
    import bz2
    import lzma

    text = (samples / "gas" / "water.out").read_bytes()
    root = tmp_path / "packed"
    root.mkdir()
    for suffix, pack in ((".gz", gzip.compress), (".bz2", bz2.compress), (".xz", lzma.compress)):
        (root / f"water.out{suffix}").write_bytes(pack(text))
    result = survey(root, jobs=1)
    plain = qcthermo.read_log(samples / "gas" / "water.out")
    assert sorted(result.calculations) == ["water.out.bz2", "water.out.gz", "water.out.xz"]
    for calc in result.calculations.values():
        assert calc.energy == plain.energy and np.array_equal(calc.frequencies, plain.frequencies)


def test_a_log_beyond_the_size_cap_is_refused_unhashed(tmp_path, samples, cache_dir, monkeypatch):
    # the readers' cap (QCTHERMO_MAX_LOG_MB) holds in the survey too: an error row, and the file is not hashed
    root = tmp_path / "big"
    root.mkdir()
    (root / "ts.out").write_bytes((samples / "solvent" / "ts_hydration.out").read_bytes())  # 1.5 MB
    (root / "h2.out").write_bytes((samples / "gas" / "h2.out").read_bytes())  # 84 kB
    monkeypatch.setenv("QCTHERMO_MAX_LOG_MB", "1")
    result = survey(root, jobs=1)
    assert "file beyond 1 MB, the most a log is read to" in result.errors["ts.out"]
    assert sorted(result.calculations) == ["h2.out"] and result.stats["hashed"] == 1


def test_symlink_loops_end_and_linked_directories_are_entered_once(tmp_path):
    root = tmp_path / "tree"
    (root / "a").mkdir(parents=True)
    (root / "a" / "job.out").write_text("x")
    (root / "a" / "loop").symlink_to(root)
    (root / "alias").symlink_to(root / "a")
    found, _ = find_candidates(root)
    assert [c.relpath for c in found] == ["a/job.out"]


def test_job_types_label_in_workflow_order():
    assert job_types_label(frozenset({"frequencies", "optimization"})) == "optimization+frequencies"
    assert job_types_label(frozenset({"frequencies", "saddle-search"})) == "frequencies+saddle-search"
    assert job_types_label(frozenset()) == ""


# -- the audit, on real data -----------------------------------------------------------------------


@pytest.fixture
def nh3_ts(third_party) -> Calculation:
    """The GAMESS-US 2018 NH3 inversion transition state: 6 modes, exactly 1 imaginary (the folder's README)."""
    import logging

    import cclib
    from ase.data import chemical_symbols

    data = cclib.io.ccread(str(third_party / "gamess-us2018" / "nh3_ts_ir.out"), loglevel=logging.ERROR)
    return Calculation(path="nh3_ts_ir.out", program="gamess", symbols=tuple(chemical_symbols[z] for z in data.atomnos),
                       coordinates=data.atomcoords[-1], frequencies=np.asarray(data.vibfreqs),
                       job_types=frozenset({"frequencies"}), normal_termination=True)


def test_audit_of_a_transition_state(nh3_ts):
    assert nh3_ts.n_imaginary == 1  # the README of the third-party folder
    assert audit(dataclasses.replace(nh3_ts, job_types=frozenset({"saddle-search", "frequencies"}))) == []
    (reason,) = audit(nh3_ts)  # the same modes on a job that was not a saddle search
    assert reason.startswith("1 imaginary mode (lowest -")
    assert reason.endswith("cm^-1) on a job that is not a saddle search")


def test_audit_of_a_saddle_search_without_its_imaginary_mode(nh3_ts):
    real_modes = np.abs(nh3_ts.frequencies)
    calc = dataclasses.replace(nh3_ts, frequencies=real_modes, job_types=frozenset({"saddle-search", "frequencies"}))
    assert audit(calc) == ["saddle search with 0 imaginary modes (a transition state has exactly 1)"]


def test_audit_of_termination_convergence_and_multiplicity(nh3_ts):
    calc = dataclasses.replace(nh3_ts, frequencies=None, job_types=frozenset({"optimization"}),
                               normal_termination=False, optimization_converged=False, multiplicity=None)
    assert audit(calc) == ["abnormal termination", "optimisation not converged", "multiplicity unknown"]
    row = survey_module.calculation_row("x.out", calc)
    assert row["status"] == "warning"
    assert row["reason"] == "abnormal termination; optimisation not converged; multiplicity unknown"
    assert row["n_imaginary"] is None and row["lowest_frequency_cm1"] is None  # no frequency job: blank


# -- the survey ------------------------------------------------------------------------------------


@pytest.mark.parametrize("jobs", [1, 2])
def test_survey_rows_statuses_and_exit_status(xyz_tree, jobs):
    result = survey(xyz_tree, jobs=jobs, reader=xyz_reader)
    assert [r["path"] for r in result.rows] == ["a.out", "b.log", "bad.out", "c.output", "d.nwo"]
    assert [r["status"] for r in result.rows] == ["ok", "ok", "error", "ok", "ok"]
    assert set(result.errors) == {"bad.out"} and result.errors["bad.out"].startswith("not an XYZ file")
    assert result.rows[2]["reason"] == result.errors["bad.out"]
    assert set(result.calculations) == {"a.out", "b.log", "c.output", "d.nwo"}
    assert result.rows[0]["formula"] == "H2O" and result.rows[0]["natoms"] == 3
    assert result.exit_status == 1
    assert result.summary() == "5 files: 4 ok, 0 warning, 1 error"
    frame = result.to_frame()
    assert list(frame.columns) == list(COLUMNS)
    assert frame["natoms"].tolist()[:2] == [3, 3]


def test_exit_status_all_good_and_nothing_usable(xyz_tree, tmp_path):
    (xyz_tree / "bad.out").unlink()
    assert survey(xyz_tree, jobs=1, reader=xyz_reader).exit_status == 0
    only_bad = tmp_path / "bad"
    only_bad.mkdir()
    (only_bad / "empty.out").write_text("")
    result = survey(only_bad, jobs=1, reader=xyz_reader)
    assert result.exit_status == 2 and result.rows[0]["status"] == "error"
    assert survey(tmp_path / "bad" / "..", jobs=1, reader=xyz_reader).exit_status == 1


def test_missing_directory_is_a_one_line_error(tmp_path):
    with pytest.raises(QcthermoError, match="no such directory"):
        survey(tmp_path / "absent")
    (tmp_path / "file.out").write_text("x")
    with pytest.raises(QcthermoError, match="not a directory"):
        survey(tmp_path / "file.out")


def test_a_dying_worker_becomes_an_error_row(xyz_tree):
    (xyz_tree / "crash.out").write_text(WATER_XYZ)
    result = survey(xyz_tree, jobs=2, reader=crashing_reader, cache=False)
    assert {r["path"]: r["status"] for r in result.rows}["crash.out"] == "error"
    assert "process died" in result.errors["crash.out"]
    assert set(result.calculations) == {"a.out", "b.log", "c.output", "d.nwo"}  # the rest of the batch


def test_memory_errors_and_reader_bugs_become_error_rows(xyz_tree, cache_dir):
    # contents differ from the good files: the cache would rightly reuse a good file's entry for the same bytes
    (xyz_tree / "greedy.out").write_text(WATER_XYZ.replace("water", "greedy"))
    (xyz_tree / "bug.out").write_text(WATER_XYZ.replace("water", "bug"))
    result = survey(xyz_tree, jobs=2, reader=greedy_reader)
    assert result.errors["greedy.out"] == "ran out of memory while reading"
    assert result.errors["bug.out"] == "reader failed unexpectedly: KeyError: 'missing key'"
    assert len(result.calculations) == 4
    again = survey(xyz_tree, jobs=1, reader=greedy_reader)
    assert again.stats["parsed"] == 1  # out of memory may not happen again: not cached; the bug is


# -- the command line ------------------------------------------------------------------------------


@pytest.fixture
def stub_default_reader(monkeypatch):
    monkeypatch.setattr(survey_module, "default_reader", xyz_reader)


def test_command_table_summary_and_exit_codes(xyz_tree, capsys, stub_default_reader):
    assert main(["survey", str(xyz_tree), "--jobs", "1"]) == 1
    out = capsys.readouterr().out
    assert "bad.out" in out and "not an XYZ file" in out
    assert out.strip().splitlines()[-1] == "5 files: 4 ok, 0 warning, 1 error"
    (xyz_tree / "bad.out").unlink()
    assert main(["survey", str(xyz_tree), "--jobs", "1", "--quiet"]) == 0
    assert capsys.readouterr().out.strip() == "4 files: 4 ok, 0 warning, 0 error"


def test_command_bad_directory_exits_2_with_one_line(tmp_path, capsys):
    assert main(["survey", str(tmp_path / "absent")]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "no such directory" in err
    assert main(["survey", str(tmp_path)]) == 2  # no log in it
    assert "no log files" in capsys.readouterr().err


def test_command_writes_csv_and_json_and_never_overwrites_without_force(xyz_tree, tmp_path, stub_default_reader):
    import pandas as pd

    csv, js = tmp_path / "survey.csv", tmp_path / "survey.json"
    assert main(["survey", str(xyz_tree), "--jobs", "1", "--quiet", "--csv", str(csv), "--json", str(js)]) == 1
    frame = pd.read_csv(csv)
    assert list(frame.columns) == list(COLUMNS) and len(frame) == 5
    rows = json.loads(js.read_text())
    assert [r["status"] for r in rows] == ["ok", "ok", "error", "ok", "ok"]
    assert rows[2]["program"] is None
    csv.write_text("mine")
    assert main(["survey", str(xyz_tree), "--quiet", "--csv", str(csv)]) == 2
    assert csv.read_text() == "mine"
    assert main(["survey", str(xyz_tree), "--quiet", "--csv", str(csv), "--force"]) == 1
    assert csv.read_text().startswith("path,program,")


# -- end to end, with qcthermo's reader on real logs -----------------------------------------------


@pytest.fixture
def real_tree(third_party, tmp_path) -> Path:
    root = tmp_path / "real"
    root.mkdir()
    for rel in ("gaussian16/dvb_ir.out", "gaussian16/dvb_gopt.out", "gamess-us2018/nh3_ts_ir.out",
                "orca6.0/dvb_ir.out"):
        (root / Path(rel).parent).mkdir(exist_ok=True)
        shutil.copy(third_party / rel, root / rel)
    (root / "qchem.out.gz").write_bytes(gzip.compress((third_party / "qchem5.4" / "dvb_ir.out").read_bytes()))
    (root / "empty.out").write_text("")
    (root / "binary.log").write_bytes(bytes(range(256)) * 16)
    text = (third_party / "gaussian16" / "dvb_ir.out").read_bytes()
    (root / "truncated.out").write_bytes(text[: len(text) // 2])
    return root


def test_survey_of_real_logs(real_tree):
    result = qcthermo.survey(real_tree, jobs=2)
    rows = {r["path"]: r for r in result.rows}
    # values from the third-party folder's README
    ir = rows["gaussian16/dvb_ir.out"]
    assert ir["status"] == "ok" and ir["program"] == "gaussian" and ir["formula"] == "C10H10"
    # the log's own "SCF Done:  E(RB3LYP) =  -382.308266602" line (the README's -382.30824980 went through eV)
    assert ir["E_elec_Eh"] == pytest.approx(-382.308266602, abs=1e-6)
    assert ir["n_imaginary"] == 0 and "frequencies" in ir["job_types"]
    assert len(result.calculations["gaussian16/dvb_ir.out"].frequencies) == 54
    assert rows["gaussian16/dvb_gopt.out"]["n_imaginary"] is None  # optimisation only
    assert rows["gamess-us2018/nh3_ts_ir.out"]["n_imaginary"] == 1
    orca6 = rows["orca6.0/dvb_ir.out"]
    assert orca6["n_imaginary"] == 0 and orca6["lowest_frequency_cm1"] == pytest.approx(43.87, abs=0.01)
    assert rows["qchem.out.gz"]["status"] == "ok" and rows["qchem.out.gz"]["program"] == "qchem"
    assert len(result.calculations["qchem.out.gz"].frequencies) == 54
    assert rows["empty.out"]["status"] == "error" and rows["empty.out"]["reason"]
    assert rows["binary.log"]["status"] == "error"
    assert rows["truncated.out"]["status"] in ("error", "warning") and rows["truncated.out"]["reason"]
    assert all("\n" not in r["reason"] for r in result.rows)
    assert result.exit_status == 1


def _typed(rows: list[dict]) -> list[list[tuple]]:
    """Each row's values with their types: 1 == True and 0.0 == 0, but a CSV or JSON would show them apart."""
    return [[(key, type(value).__name__, value) for key, value in row.items()] for row in rows]


def _same_warm_as_cold(directory: Path) -> None:
    """A warm survey of ``directory`` gives the cold one's rows, value for value and type for type, the same
    DataFrame, and, built from the cache on first use, the Calculation the reader makes of each file."""
    import pandas as pd

    from qcthermo.readers import read_log

    cold = qcthermo.survey(directory, jobs=2)
    warm = qcthermo.survey(directory, jobs=2)
    assert warm.stats["parsed"] == 0 and warm.stats["cached"] == len(warm.rows) == len(cold.rows) > 0
    assert _typed(warm.rows) == _typed(cold.rows)
    pd.testing.assert_frame_equal(warm.to_frame(), cold.to_frame())
    assert list(warm.calculations) == list(cold.calculations) and warm.errors == cold.errors
    assert warm.levels_of_theory() == cold.levels_of_theory() and warm.summary() == cold.summary()
    for relpath, calc in warm.calculations.items():
        # the reference: qcthermo's reader on the file itself, outside any survey or cache
        direct = read_log(directory / relpath).to_dict()
        assert calc.to_dict() == dict(direct, path=str(directory / relpath)), relpath
        assert cold.calculations[relpath].to_dict() == calc.to_dict(), relpath


def test_cached_survey_of_real_logs_gives_the_same_rows(real_tree):
    _same_warm_as_cold(real_tree)


def test_cached_survey_of_the_sample_logs_gives_the_same_rows(samples):
    _same_warm_as_cold(samples)


def test_a_warm_survey_builds_no_calculation_until_one_is_asked_for(xyz_tree, monkeypatch):
    first = survey(xyz_tree, jobs=1, reader=xyz_reader)
    built = []
    real_from_dict = Calculation.from_dict.__func__
    monkeypatch.setattr(Calculation, "from_dict", classmethod(lambda cls, d: built.append(d) or real_from_dict(cls, d)))
    warm = survey(xyz_tree, jobs=1, reader=xyz_reader)
    assert built == [] and warm.rows == first.rows and len(warm.calculations) == 4 and warm.exit_status == 1
    a = warm.calculations["a.out"]
    assert len(built) == 1 and warm.calculations["a.out"] is a  # made once, then kept
    assert a.to_dict() == first.calculations["a.out"].to_dict()
    assert a.symbols == ("O", "H", "H")  # WATER_XYZ of tests/xyz_stub.py, read by ASE


def test_terminal_table_keeps_the_most_useful_columns_that_fit(xyz_tree):
    from qcthermo.commands.survey import _TABLE, _fitting_columns

    result = survey(xyz_tree, jobs=1, reader=xyz_reader)
    cells = [[show(row) for _, show in _TABLE] for row in result.rows]
    headings = lambda keep: [_TABLE[j][0] for j in keep]  # noqa: E731
    assert headings(_fitting_columns(cells, 200)) == ["file", "program", "q/2S+1", "formula", "status", "reason"]
    # 52 = 24 for the reason + file (8+2) + status (6+2) + program (7+2) + 1 spare: no room for q/2S+1 (6+2)
    assert headings(_fitting_columns(cells, 52)) == ["file", "program", "status", "reason"]
    assert headings(_fitting_columns(cells, 10)) == ["file", "reason"]  # the file name always


def test_terminal_table_lines_up_the_digits_of_its_numbers(samples, capsys, monkeypatch):
    # sample_outputs/gas: energies from -0.5 (H) to -150.3 Eh (O2) and frequencies of 3 and 4 digits
    monkeypatch.setenv("COLUMNS", "160")
    assert main(["survey", str(samples / "gas"), "--no-cache", "--jobs", "1"]) == 0
    lines = [line for line in capsys.readouterr().out.splitlines() if line.rstrip().endswith(" ok")]
    ends = {re.search(r"-\d+\.\d{6}", line).end() for line in lines}  # one right edge for every energy
    assert len(lines) > 5 and len(ends) == 1


@pytest.mark.parametrize("first", ["", "import qcthermo.survey; "])
def test_qcthermo_survey_is_callable_whether_or_not_its_module_was_imported(tmp_path, first):
    import subprocess
    import sys

    (tmp_path / "h.out").write_text("x")
    code = (
        f"{first}import sys, qcthermo; from qcthermo.records import Calculation\n"
        "reader = lambda p: Calculation(path=p, program='stub', symbols=('H',), coordinates=[[0.0, 0.0, 0.0]])\n"
        "print(qcthermo.survey(sys.argv[1], jobs=1, cache=False, reader=reader).summary())\n"
    )
    out = subprocess.run([sys.executable, "-c", code, str(tmp_path)], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "1 file: 1 ok, 0 warning, 0 error"


def test_levels_of_theory_show_the_lone_structure_at_another_level(samples, cache_dir, capsys):
    # sample_outputs/README.md: flawed/hnc_hf.out is the one HF/3-21G structure among B3LYP/6-31G* ones
    assert main(["survey", str(samples), "--jobs", "2"]) == 0
    line = capsys.readouterr().out.strip().splitlines()[-2]
    assert line.startswith("levels of theory: B3LYP/6-31G* (")
    assert "HF/3-21G (1)" in line


def test_a_log_without_geometry_is_a_warning(third_party, cache_dir):
    # third-party README: xtb6.6.1/dvb_ir.out is an `xtb dvb_ir.xyz --hess` run; the log prints no coordinates
    tree = third_party / "xtb6.6.1"
    (row,) = survey(tree, jobs=1).rows
    assert row["status"] == "warning" and "no geometry" in row["reason"]


def test_survey_result_repr_is_one_line(samples, cache_dir):
    # what a notebook shows for `qcthermo.survey(...)`: the summary, not every Calculation (was ~50 000 chars)
    from qcthermo.survey import survey

    result = survey(samples / "gas", jobs=1)
    text = repr(result)
    assert "\n" not in text and len(text) < 300 and result.summary() in text


# -- file names: bytes that are not UTF-8, and rich markup -----------------------------------------


@pytest.fixture
def odd_names(tmp_path) -> Path:
    """Logs named b"caf\\xe9.out" (Latin-1, not UTF-8), "[bold]x.log", "b[1].out" and "a[/red].out" (a file
    "red].out" in a folder "a["): names a terminal table, a CSV, JSON or SQLite must not choke on."""
    root = tmp_path / "odd"
    (root / "a[").mkdir(parents=True)
    for name in ("[bold]x.log", "b[1].out", "a[/red].out"):
        (root / name).write_text(WATER_XYZ)
    try:
        with open(os.path.join(os.fsencode(root), b"caf\xe9.out"), "w") as handle:
            handle.write(WATER_XYZ)
    except OSError:
        pytest.skip("this file system refuses a file name that is not UTF-8")
    return root


# PEP 383: os.fsdecode(b"caf\xe9.out") is "caf\udce9.out"; qcthermo shows that byte as \xe9
LATIN1_NAME, LATIN1_SHOWN = os.fsdecode(b"caf\xe9.out"), "caf\\xe9.out"
ODD_SHOWN = ["[bold]x.log", "a[/red].out", "b[1].out", LATIN1_SHOWN]


def test_odd_file_names_are_surveyed_and_cached(odd_names, cache_dir):
    first = survey(odd_names, jobs=1, reader=xyz_reader)
    assert sorted(first.calculations) == sorted(["[bold]x.log", "a[/red].out", "b[1].out", LATIN1_NAME])
    assert first.notes == [] and first.stats["parsed"] == 4
    calc = first.calculations[LATIN1_NAME]
    assert os.path.isfile(calc.path)  # the real name, usable to open the file again
    second = survey(odd_names, jobs=1, reader=xyz_reader)
    assert second.stats["cached"] == 4 and second.stats["parsed"] == 0  # the cache hits for every name
    assert second.rows == first.rows


def test_odd_file_names_appear_verbatim_in_the_table_csv_and_json(odd_names, tmp_path, capsys, stub_default_reader):
    import pandas as pd

    csv, js = tmp_path / "s.csv", tmp_path / "s.json"
    assert main(["survey", str(odd_names), "--jobs", "1", "--csv", str(csv), "--json", str(js)]) == 0
    lines = capsys.readouterr().out.splitlines()
    header = next(i for i, line in enumerate(lines) if line.split()[:1] == ["file"])
    table_names = [line.split()[0] for line in lines[header + 1 : header + 5]]
    assert table_names == ODD_SHOWN  # markup printed as written, not taken as styles
    assert list(pd.read_csv(csv)["path"]) == ODD_SHOWN
    assert [row["path"] for row in json.loads(js.read_text(encoding="utf-8"))] == ODD_SHOWN


def test_quiet_survey_names_the_failing_files(xyz_tree, capsys, stub_default_reader):
    for i in range(12):
        (xyz_tree / f"bad[{i:02d}].out").write_text("no atoms\n")
    assert main(["survey", str(xyz_tree), "--jobs", "1", "--quiet"]) == 1
    captured = capsys.readouterr()
    assert captured.out.strip() == "17 files: 4 ok, 0 warning, 13 error"
    err = captured.err.strip().splitlines()
    assert len(err) == 11 and err[0].startswith("qcthermo survey: error: bad.out: not an XYZ file")
    assert "bad[00].out" in err[1] and err[-1].endswith("... and 3 more unreadable files")


def test_survey_json_is_strict_without_nan_or_infinity(xyz_tree, tmp_path, monkeypatch):
    from qcthermo.commands.survey import write_json

    def no_energy(path):  # a reader that found an energy it could not parse as finite
        return dataclasses.replace(xyz_reader(path), energy=float("-inf"))

    def refuse(token):  # RFC 8259 section 6: NaN and Infinity are not JSON numbers
        raise ValueError(f"non-standard JSON token {token}")

    result = survey(xyz_tree, jobs=1, reader=no_energy, cache=False)
    rows = json.loads(write_json(result, tmp_path / "s.json").read_text(), parse_constant=refuse)
    assert [r["E_elec_Eh"] for r in rows] == [None] * 5


def test_more_rows_than_a_screenful_print_an_overview(xyz_tree, tmp_path, capsys, monkeypatch, stub_default_reader):
    # 4 water files and 13 that are not XYZ (ASE's reader refuses them): 17 rows on a 15-line screen (10 rows)
    for i in range(12):
        (xyz_tree / f"bad{i:02d}.out").write_text("no atoms\n")
    monkeypatch.setenv("LINES", "15")
    csv = tmp_path / "all.csv"
    assert main(["survey", str(xyz_tree), "--jobs", "1", "--csv", str(csv)]) == 1
    out = capsys.readouterr().out.strip().splitlines()
    assert out[0] == f"17 files, more than a screenful: the full table is in {csv}"
    assert out[1] == "programs: unreadable (13), xyz (4)"
    listed = [line for line in out if line.startswith("  error: ")]
    assert len(listed) == 10 and listed[0].startswith("  error: bad.out: not an XYZ file")
    assert out[-3] == "  ... and 3 more with a warning or an error"
    assert out[-1] == "17 files: 4 ok, 0 warning, 13 error"
    assert len(csv.read_text().splitlines()) == 1 + 17  # the heading and every row are in the file
    monkeypatch.setenv("LINES", "40")  # the same survey fits a taller screen: the table
    assert main(["survey", str(xyz_tree), "--jobs", "1"]) == 1
    assert capsys.readouterr().out.split()[0] == "file"


# -- special files and the command's own output ----------------------------------------------------------

SPECIAL_SURVEY = """
import sys
from qcthermo.survey import survey
result = survey(sys.argv[1], jobs=1000, cache=False)
for row in result.rows:
    print(row["path"], "|", row["status"], "|", row["reason"])
for note in result.notes:
    print("note |", note)
"""


def test_only_regular_files_are_read_and_every_other_candidate_gets_a_row(samples, tmp_path):
    # a symlink to /proc/self/pagemap never ends (Linux Documentation/admin-guide/mm/pagemap.rst: 8 bytes for every
    # page of the address space), a FIFO blocks its reader forever, /dev/zero never ends (Linux devices.txt, 1:5)
    root = tmp_path / "tree"
    root.mkdir()
    shutil.copy(samples / "gas" / "hcn.out", root / "hcn.out")
    os.mkfifo(root / "pipe.out")
    (root / "gone.out").symlink_to(root / "nothing-here")
    if Path("/proc/self/pagemap").exists():
        (root / "pagemap.out").symlink_to("/proc/self/pagemap")
    (root / "zero.log").symlink_to("/dev/zero")
    # in a child process with a timeout: a survey that hangs on one of these must fail, not stop the test suite
    proc = subprocess.run([sys.executable, "-c", SPECIAL_SURVEY, str(root)], capture_output=True, text=True,
                          timeout=120)
    assert proc.returncode == 0, proc.stderr
    rows = dict(line.split(" | ", 1) for line in proc.stdout.splitlines() if not line.startswith("note"))
    assert rows.pop("hcn.out") == "ok | "
    expected = {"pipe.out": "a named pipe", "gone.out": "dangling", "zero.log": "a character device",
                "pagemap.out": "a kernel file (/proc/"}
    assert set(rows) == {name for name in expected if (root / name).is_symlink() or (root / name).exists()}
    for name, reason in rows.items():
        assert reason.startswith("error | not read: ") and expected[name] in reason, (name, reason)
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    assert f"note | jobs = 1000 lowered to {cores}, the cores this process may use" in proc.stdout


def test_a_run_whose_output_is_redirected_into_the_surveyed_folder_does_not_read_it(samples, tmp_path):
    # `qcthermo run . > run.log`: the shell creates run.log before qcthermo starts; it is no log, and reading it
    # would make an error row (and exit status 1) of the run's own output
    root = tmp_path / "logs"
    root.mkdir()
    for name in ("hcn.out", "hnc.out"):
        shutil.copy(samples / "gas" / name, root / name)
    with open(root / "run.log", "w") as log:
        proc = subprocess.run([sys.executable, "-m", "qcthermo", "run", str(root), "--out", str(tmp_path / "out"),
                               "--jobs", "1", "--no-cache", "--quiet"], stdout=log, stderr=subprocess.PIPE,
                              text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert "note: run.log: not read: it is this command's own output" in (root / "run.log").read_text()
    rows = json.loads((tmp_path / "out" / "run.json").read_text())["survey"]["summary"]
    assert rows.startswith("2 files")


def test_columns_every_file_shares_are_named_once_above_the_table(samples, cache_dir, capsys, monkeypatch):
    """The eight pentane conformers are xTB GFN2 optimisations with frequencies of neutral singlet C5H12 (their
    banners and setup, sample_outputs/generate.sh): those columns are named once; the energies stay in the table."""
    monkeypatch.setenv("COLUMNS", "160")
    assert main(["survey", str(samples / "conformers"), "--jobs", "1"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[0] == ("every file: program xtb · jobs optimization+frequencies · level GFN2-xTB · q/2S+1 0/1 · "
                        "formula C5H12")
    assert lines[1].split() == ["file", "E", "/", "Eh", "lowest", "/", "cm⁻¹", "imag", "status"]
    assert "-16.829457" in lines[-4]  # pentane_tt.out's energy, as printed in its summary (-16.829456631413 Eh)


def test_a_column_that_varies_stays_in_the_table(samples, cache_dir, capsys, monkeypatch):
    """The gas-phase sample: NWChem B3LYP/6-31G* throughout (every input of sample_outputs/gas), but atoms,
    radicals and molecules of several formulas and spins: those columns stay."""
    monkeypatch.setenv("COLUMNS", "160")
    main(["survey", str(samples / "gas"), "--jobs", "1"])
    lines = capsys.readouterr().out.splitlines()
    assert lines[0] == "every file: program nwchem · level B3LYP/6-31G*"
    assert {"jobs", "q/2S+1", "formula"} <= set(lines[1].split())

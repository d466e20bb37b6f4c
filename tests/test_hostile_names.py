"""Hostile names: control characters, spreadsheet formulas, mathtext and raw HTML in file and species names.

No name may stop a run (a traceback, a partial --out), reach the terminal as an escape sequence, become a live
formula in a spreadsheet, or markup in a Markdown file. The logs are real (sample_outputs/gas, NWChem 7.0.2)
under hostile names. The outside references: ECMA-48 (ESC, 0x1B, starts a terminal control sequence); OWASP,
"CSV Injection" (cells starting with = + - @ are formulas to a spreadsheet); openpyxl, which refuses control
characters in a cell (IllegalCharacterError) and marks formula cells with data_type "f"; CommonMark 0.31,
section 6.6 (raw HTML passes through Markdown); matplotlib's mathtext, which takes $...$ for math.
"""

from __future__ import annotations

import csv
import random
import shutil
from pathlib import Path

import pytest

from qcthermo.cli import main

pytestmark = pytest.mark.usefixtures("cache_dir")

ESC = "\x1b"
#: the sample logs under names that hold a terminal escape, a formula, mathtext and HTML
HOSTILE_FILES = {"hcn.out": f"=SUM(1+1){ESC}[31m{ESC}[2J.out", "hnc.out": "$\\alpha$ $.out",
                 "ts_hcn.out": "@x<img src=q onerror=alert(1)>.out"}

#: a reaction file whose names and labels are formulas, mathtext and HTML (control characters it refuses itself)
HOSTILE_TOML = """
[species."=cmd|'/C_calc'!A0"]
logs = ["{gas}/hcn.out"]
label = "$\\\\alpha$ <b>x"
[species."@hnc"]
logs = ["{gas}/hnc.out"]
[species."+ts"]
logs = ["{gas}/ts_hcn.out"]

[[reaction]]
name = "-iso <script>alert(1)</script> $x$"
reactants = ["=cmd|'/C_calc'!A0"]
transition_state = "+ts"
products = ["@hnc"]

[[profile]]
name = "$\\\\Delta$ path"
states = [["=cmd|'/C_calc'!A0"], ["+ts"], ["@hnc"]]
"""

FORMULA_STARTS = ("=", "+", "-", "@")


@pytest.fixture
def hostile_logs(samples, tmp_path) -> Path:
    root = tmp_path / "logs"
    root.mkdir()
    for source, name in HOSTILE_FILES.items():
        shutil.copy(samples / "gas" / source, root / name)
    return root


def _check_outputs(out: Path) -> None:
    import openpyxl

    for path in out.glob("*.xlsx"):  # no formula cell anywhere (openpyxl reads a formula as data_type "f")
        workbook = openpyxl.load_workbook(path)
        assert [c.coordinate for ws in workbook for row in ws.iter_rows() for c in row if c.data_type == "f"] == []
    for path in out.glob("*.csv"):  # OWASP: no text cell a spreadsheet would take for a formula
        for row in csv.reader(path.open(encoding="utf-8")):
            assert not [cell for cell in row if cell.startswith(FORMULA_STARTS) and not _number(cell)], path
    for path in out.iterdir():
        if path.suffix in (".csv", ".md", ".tex", ".xyz", ".json", ".html", ".yaml", ".dat", ".svg"):
            assert ESC not in path.read_text(encoding="utf-8"), path
    for path in out.glob("*.md"):  # raw HTML from a name is escaped, not passed on
        assert "<img" not in path.read_text() and "<script" not in path.read_text(), path


def _number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def test_a_run_over_hostile_file_names_writes_every_file_and_keeps_the_terminal_clean(hostile_logs, tmp_path,
                                                                                     capsys):
    out = tmp_path / "out"
    assert main(["run", str(hostile_logs), "--out", str(out), "--jobs", "1"]) == 0
    captured = capsys.readouterr()
    assert ESC not in captured.out + captured.err
    assert {"species.xlsx", "run.json", "report.html", "si.md"} <= {p.name for p in out.iterdir()}
    _check_outputs(out)
    for command in (["survey", str(hostile_logs)], ["thermo", str(hostile_logs)]):
        assert main([*command, "--jobs", "1", "--csv", str(tmp_path / f"{command[0]}.csv")]) == 0
        captured = capsys.readouterr()
        assert ESC not in captured.out + captured.err
        assert "=SUM(1+1)\\x1b[31m\\x1b[2J.out" in captured.out  # shown as a Python string literal writes it
        _check_outputs(tmp_path)


def test_a_reaction_file_of_formula_mathtext_and_html_names_runs_and_draws(samples, tmp_path, capsys):
    path = tmp_path / "reactions.toml"
    path.write_text(HOSTILE_TOML.format(gas=samples / "gas"))
    out = tmp_path / "out"
    assert main(["run", str(samples / "gas"), "--reactions", str(path), "--out", str(out), "--jobs", "1"]) == 0
    assert {"profile.svg", "reactions.xlsx"} <= {p.name for p in out.iterdir()}
    _check_outputs(out)
    # figures are plain text: the label is drawn as written, mathtext would have drawn an alpha
    assert "$\\alpha$" in (out / "profile.svg").read_text()
    assert main(["profile", str(path), "-o", str(tmp_path / "p.svg"), "--directory", str(samples / "gas"),
                 "--jobs", "1"]) == 0
    assert "$\\Delta$ path" in (tmp_path / "p.svg").read_text()
    rows = list(csv.DictReader((out / "reactions.csv").open(encoding="utf-8")))
    assert rows[0]["reaction"] == "'-iso <script>alert(1)</script> $x$"  # OWASP: prefixed with a quote
    import openpyxl

    sheet = openpyxl.load_workbook(out / "reactions.xlsx")["table"]
    assert "-iso <script>alert(1)</script> $x$" in [c.value for row in sheet.iter_rows() for c in row]  # text


# -- seeded fuzz: many hostile names at once ----------------------------------------------------------------

#: pieces of hostile names: terminal escapes (ECMA-48 CSI, OSC, BEL, backspace, CR, C1 CSI 0x9B), formula
#: starts, mathtext, HTML, rich markup, LaTeX and Markdown specials, bidirectional override, emoji, an
#: undecodable byte (PEP 383 surrogate of 0xE9); no "/" and no NUL, which no POSIX file name holds
_PIECES = ("\x1b[31m", "\x1b]0;title\x07", "\x07", "\x08", "\r", "\t", "\n", "\x7f", "\x9b", "=", "+", "-", "@",
           "=cmd|' -C calc'!A0", "$", "$\\alpha$", "$x", "<img src=x onerror=alert(1)>", "<script>", "&amp;",
           "[bold]", "[/]", "|", "\\", "%", "#", "_", "{", "}", "~", "^", " ", "ü", "中", "\U0001f600", "\u202e",
           "'", '"', "`", "*", "\udce9")
#: (seed, number of names): each seed is one run over that many copies of a real log
NAME_FUZZ = [("names-1", 16), ("names-2", 16)]


def hostile_name(rng: random.Random, i: int) -> str:
    pieces = [rng.choice(_PIECES) for _ in range(rng.randint(1, 4))]
    at = rng.randint(0, len(pieces))
    return "".join([*pieces[:at], f"m{i}", *pieces[at:]]) + ".out"


@pytest.mark.parametrize("seed, count", NAME_FUZZ)
def test_fuzzed_hostile_names_never_stop_a_run(samples, tmp_path, capsys, seed, count):
    rng = random.Random(seed)
    root = tmp_path / "logs"
    root.mkdir()
    names = [hostile_name(rng, i) for i in range(count)]
    source = (samples / "gas" / "hcn.out").read_bytes()
    for name in names:
        try:
            (root / name).write_bytes(source)
        except OSError:
            pytest.skip("this file system refuses such names")
    out = tmp_path / "out"
    status = main(["run", str(root), "--out", str(out), "--jobs", "1"])
    captured = capsys.readouterr()
    where = f"seed {seed}: {names!r}"
    assert status in (0, 1) and "Traceback" not in captured.err, where
    printed = captured.out + captured.err
    assert not [c for c in printed if (ord(c) < 32 and c != "\n") or 0x7F <= ord(c) <= 0x9F], where
    _check_outputs(out)
    assert len(list(csv.DictReader((out / "survey.csv").open(encoding="utf-8")))) == count, where

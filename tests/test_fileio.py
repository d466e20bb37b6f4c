"""Atomic output and output-directory safety (qcthermo.fileio)."""

import json
import os
import stat
import subprocess
import sys

import numpy as np
import pytest

from qcthermo.errors import QcthermoError
from qcthermo.fileio import atomic_open, atomic_write, display, json_text, prepare_output_dir


def test_atomic_write_gives_umask_permissions(tmp_path):
    # a plain open() creates files 0666 & ~umask (POSIX); atomic files must not end up private
    old = os.umask(0o022)
    try:
        path = atomic_write(tmp_path / "a.csv", "x\n")
    finally:
        os.umask(old)
    assert stat.S_IMODE(path.stat().st_mode) == 0o644
    assert path.read_text() == "x\n"


def test_failed_write_keeps_the_old_file_and_leaves_no_temporary(tmp_path):
    target = tmp_path / "table.csv"
    target.write_text("old\n")
    with pytest.raises(RuntimeError), atomic_open(target) as handle:
        handle.write("half")
        raise RuntimeError("interrupted")
    assert target.read_text() == "old\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["table.csv"]


def test_output_dir_with_other_files_needs_force(tmp_path):
    (tmp_path / "thesis.tex").write_text("mine")
    with pytest.raises(QcthermoError, match="--force"):
        prepare_output_dir(tmp_path)
    assert prepare_output_dir(tmp_path, force=True) == tmp_path
    previous_run = tmp_path / "again"
    previous_run.mkdir()
    (previous_run / "run.json").write_text('{"tool": "qcthermo", "files": ["species.csv"]}')
    (previous_run / "species.csv").write_text("")
    assert prepare_output_dir(previous_run) == previous_run


def test_files_named_like_run_outputs_are_a_users_unless_a_run_json_of_qcthermo_lists_them(tmp_path):
    # a folder of a hand-edited si.tex and a draft figure is not a killed run's: refused, and nothing changed
    theirs = tmp_path / "theirs"
    theirs.mkdir()
    (theirs / "si.tex").write_text("my edits")
    (theirs / "profile_draft.png").write_bytes(b"mine")
    with pytest.raises(QcthermoError, match="already holds other files; use --force"):
        prepare_output_dir(theirs)
    # beside a run.json of qcthermo's, a run-named file it does not list is still the user's
    (theirs / "run.json").write_text('{"tool": "qcthermo", "status": "complete", "files": ["si.tex"]}')
    with pytest.raises(QcthermoError, match=r"holds profile_draft\.png, which its run.json does not list"):
        prepare_output_dir(theirs)
    assert sorted(p.name for p in theirs.iterdir()) == ["profile_draft.png", "run.json", "si.tex"]
    # a run stopped while renaming its files into place left an incomplete run.json listing them
    (theirs / "run.json").write_text('{"tool": "qcthermo", "status": "incomplete", '
                                     '"files": ["si.tex", "profile_draft.png"]}')
    assert prepare_output_dir(theirs) == theirs
    for text in ('{"tool": "another program", "files": ["si.tex", "profile_draft.png"]}', "not JSON"):
        (theirs / "run.json").write_text(text)  # a run.json qcthermo did not write
        with pytest.raises(QcthermoError, match="--force"):
            prepare_output_dir(theirs)


def test_temporary_files_of_a_dead_writer_are_removed(tmp_path):
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    stale = tmp_path / f".species.csv.{int(dead.stdout)}-{'ab' * 8}.tmp"  # the pid of a process that has ended
    live = tmp_path / f".species.csv.{os.getpid()}-{'cd' * 8}.tmp"  # this process may still be writing it
    stale.write_text("half")
    live.write_text("half")
    prepare_output_dir(tmp_path)  # only temporaries: an empty directory to a run
    assert not stale.exists() and live.exists()


def test_display_form_of_a_name_that_is_not_utf8():
    # PEP 383: os.fsdecode turns the undecodable byte 0xE9 into the lone surrogate U+DCE9
    name = os.fsdecode(b"caf\xe9.out")
    assert name == "caf\udce9.out"
    assert display(name) == "caf\\xe9.out"  # the byte as Python writes it in a bytes literal
    assert display("café [1].out") == "café [1].out"  # valid text is left alone
    assert display("\ud800") == "\\ud800"  # a surrogate that is no file-name byte: its code point


def test_strict_json_has_no_nan_or_infinity():
    # RFC 8259 section 6: NaN and Infinity are not permitted as JSON numbers
    def refuse(token):
        raise ValueError(f"non-standard JSON token {token}")

    text = json_text({"E": float("-inf"), "k": np.array([1.0, np.nan]), "n": np.int64(3), "name": "caf\udce9"})
    assert json.loads(text, parse_constant=refuse) == {"E": None, "k": [1.0, None], "n": 3, "name": "caf\\xe9"}


def test_text_written_atomically_shows_a_non_utf8_name_as_its_bytes(tmp_path):
    path = atomic_write(tmp_path / "t.csv", "path\ncaf\udce9.out\n")
    assert path.read_bytes() == b"path\ncaf\\xe9.out\n"  # valid UTF-8 (ASCII), as display() shows it

"""Atomic output and output-directory safety (qcthermo.fileio)."""

import os
import stat

import pytest

from qcthermo.errors import QcthermoError
from qcthermo.fileio import atomic_open, atomic_write, prepare_output_dir


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
    (previous_run / "run.json").write_text("{}")
    (previous_run / "species.csv").write_text("")
    assert prepare_output_dir(previous_run) == previous_run

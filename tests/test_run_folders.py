"""A folder a run owns inside its output folder (structures/): listed in run.json, replaced and removed as the
run's other files are, and a user's files in it protected (docs/survey.md, "Output files")."""

import json
import os
import subprocess
import sys

import pytest

from qcthermo.errors import QcthermoError
from qcthermo.fileio import atomic_write, json_text, prepare_output_dir, write_run_folder


def _files(out) -> set[str]:
    return {p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file() and not p.name.startswith(".")}


def _write(out, names: list[str], force: bool = False, text: str = "new\n") -> list:
    """A run that writes ``names`` (``structures/a.xyz`` in its folder) through qcthermo.fileio."""
    def write_all(folder):
        return [atomic_write(folder / name, text) for name in names]

    def final_json(listed):
        return json_text({"tool": "qcthermo", "status": "complete", "files": sorted(listed)})

    return write_run_folder(out, force, write_all, final_json)


def _listed(out) -> list[str]:
    return json.loads((out / "run.json").read_text())["files"]


def test_structures_are_listed_and_a_rerun_replaces_them_and_removes_only_those_listed(tmp_path):
    out = tmp_path / "out"
    _write(out, ["survey.csv", "structures/a.xyz", "structures/b.xyz"], text="first\n")
    assert _listed(out) == ["structures/a.xyz", "structures/b.xyz", "survey.csv"]
    (out / "structures" / "notes.txt").write_text("mine")  # not named as a run names its structures: left alone
    _write(out, ["survey.csv", "structures/a.xyz"])  # no --force: every structure file was the earlier run's
    assert _listed(out) == ["structures/a.xyz", "survey.csv"]
    assert _files(out) == {"run.json", "survey.csv", "structures/a.xyz", "structures/notes.txt"}
    assert (out / "structures" / "a.xyz").read_text() == "new\n"
    _write(out, ["survey.csv"])  # no structure any more: the folder goes when nothing of the user's is in it
    assert (out / "structures").is_dir() and _files(out) == {"run.json", "survey.csv", "structures/notes.txt"}
    (out / "structures" / "notes.txt").unlink()
    _write(out, ["survey.csv", "structures/c.xyz"])
    _write(out, ["survey.csv"])
    assert not (out / "structures").exists()


def test_a_users_structure_file_is_refused_without_force_and_kept_with_it(tmp_path):
    out = tmp_path / "out"
    _write(out, ["survey.csv", "structures/a.xyz"])
    (out / "structures" / "mine.xyz").write_text("drawn by hand")
    before = {n: (out / n).read_bytes() for n in _files(out)}
    with pytest.raises(QcthermoError, match=r"holds structures/mine\.xyz, which its run\.json does not list.*--force"):
        _write(out, ["survey.csv", "structures/a.xyz"])
    assert {n: (out / n).read_bytes() for n in _files(out)} == before
    _write(out, ["survey.csv", "structures/a.xyz"], force=True)  # with --force: written, the user's file kept
    assert (out / "structures" / "mine.xyz").read_text() == "drawn by hand"
    # a file of the user's with the very name the run writes: refused, and replaced only with --force
    (out / "structures" / "mine.xyz").unlink()
    (out / "run.json").write_text(json_text({"tool": "qcthermo", "status": "complete", "files": ["survey.csv"]}))
    (out / "structures" / "a.xyz").write_text("drawn by hand")
    with pytest.raises(QcthermoError, match=r"holds structures/a\.xyz, which its run\.json does not list"):
        _write(out, ["survey.csv", "structures/a.xyz"])
    assert (out / "structures" / "a.xyz").read_text() == "drawn by hand"
    _write(out, ["survey.csv", "structures/a.xyz"], force=True)
    assert (out / "structures" / "a.xyz").read_text() == "new\n"

    def meanwhile(folder):  # a user's file appears while the run works, after the folder was checked
        (folder / "structures" / "c.xyz").write_text("drawn by hand")
        return [atomic_write(folder / "structures" / "c.xyz", "new\n")]

    with pytest.raises(QcthermoError, match=r"structures/c\.xyz was not written by qcthermo.*--force"):
        write_run_folder(out, False, meanwhile, lambda listed: "")
    assert (out / "structures" / "c.xyz").read_text() == "drawn by hand"


@pytest.mark.parametrize("kind", ["link", "file"])
def test_a_structures_entry_that_is_no_folder_is_refused_even_with_force(tmp_path, kind):
    out, elsewhere = tmp_path / "out", tmp_path / "elsewhere"
    elsewhere.mkdir()
    _write(out, ["survey.csv"])
    if kind == "link":
        (out / "structures").symlink_to(elsewhere)  # writing through it would put files outside the run's folder
    else:
        (out / "structures").write_text("a user's file")
    for force in (False, True):
        with pytest.raises(QcthermoError, match=f"cannot write into {out / 'structures'}: it is "
                                                f"{'a link' if kind == 'link' else 'not a folder'}"):
            _write(out, ["survey.csv", "structures/a.xyz"], force=force)
    assert list(elsewhere.iterdir()) == [] and _listed(out) == ["survey.csv"]


class Killed(BaseException):
    """Stands for SIGKILL: none of the run's own clean-up runs after it (not an Exception)."""


def test_structures_wait_for_run_json_and_a_killed_run_lists_them_for_its_retry(tmp_path, monkeypatch):
    out = tmp_path / "out"
    _write(out, ["survey.csv", "structures/a.xyz"], text="first\n")

    def failing(folder):  # a run that fails after writing a structure: nothing of it may appear
        atomic_write(folder / "structures" / "b.xyz", "half")
        raise OSError("disk full")

    with pytest.raises(OSError):
        write_run_folder(out, False, failing, lambda listed: "")
    assert _files(out) == {"run.json", "survey.csv", "structures/a.xyz"} and not list(out.rglob("*.tmp"))
    real, calls = os.replace, []

    def replace(src, dst):  # killed once the incomplete run.json and one new file are in place
        calls.append(dst)
        if len(calls) == 3:
            raise Killed
        return real(src, dst)

    monkeypatch.setattr(os, "replace", replace)
    with pytest.raises(Killed):
        _write(out, ["survey.csv", "structures/b.xyz"])
    monkeypatch.undo()
    doc = json.loads((out / "run.json").read_text())
    assert doc["status"] == "incomplete" and set(doc["files"]) >= {"structures/a.xyz", "structures/b.xyz"}
    _write(out, ["survey.csv", "structures/b.xyz"])  # the retry needs no --force
    assert _files(out) == {"run.json", "survey.csv", "structures/b.xyz"}


def test_temporaries_of_a_dead_writer_in_structures_are_removed(tmp_path):
    out = tmp_path / "out"
    _write(out, ["survey.csv", "structures/a.xyz"])
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    stale = out / "structures" / f".a.xyz.{int(dead.stdout)}-{'ab' * 8}.tmp"  # a process that has ended
    stale.write_text("half")
    prepare_output_dir(out)
    assert not stale.exists()

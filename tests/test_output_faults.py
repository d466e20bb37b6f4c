"""Output faults end to end: a read-only or uncreatable --out, a full disk, a file-size limit, odd file names.

Each fault must end in one line on stderr naming the file, exit status 2, no traceback and no temporary
file left behind; the retry of a failed run must not need --force. The faults are the operating system's
own errors (errno EROFS, ENOSPC, EFBIG as POSIX defines them); the disk-full and read-only cases are
injected by replacing os.fsync / os.open, the size limit is a real RLIMIT_FSIZE in a child process.
"""

from __future__ import annotations

import errno
import json
import os
import shutil
import stat
import subprocess
import sys
from pathlib import Path

import pytest

import qcthermo
from qcthermo.cli import main
from qcthermo.errors import QcthermoError

pytestmark = pytest.mark.usefixtures("cache_dir")


def _run(samples: Path, out: Path, *extra: str) -> int:
    return main(["run", str(samples / "gas"), "--out", str(out), "--jobs", "1", "--no-cache", "--quiet", *extra])


def _one_error_line(err: str) -> str:
    lines = [line for line in err.strip().splitlines() if not line.startswith("qcthermo run: no --reactions")]
    assert len(lines) == 1 and "Traceback" not in err, err
    return lines[0]


def _temporaries(out: Path) -> list[str]:
    return [p.name for p in out.rglob("*.tmp")] if out.exists() else []


def _files(out: Path) -> set[str]:
    """Every file of a folder as run.json names them (``structures/ch4.xyz``), hidden ones included."""
    return {p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file()}


@pytest.fixture
def full_disk_after(monkeypatch):
    """os.fsync raises ENOSPC from the n-th call on (n given to the returned function)."""
    real = os.fsync

    def arm(n: int) -> None:
        calls = []

        def fsync(fd):
            calls.append(fd)
            if len(calls) >= n:
                raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
            return real(fd)

        monkeypatch.setattr(os, "fsync", fsync)

    yield arm
    monkeypatch.setattr(os, "fsync", real)


def test_full_disk_is_one_line_naming_the_file_and_the_retry_needs_no_force(samples, tmp_path, capsys, monkeypatch,
                                                                           full_disk_after):
    out = tmp_path / "out"
    full_disk_after(3)  # survey.csv and the first species table written, the third file fails
    assert _run(samples, out) == 2
    line = _one_error_line(capsys.readouterr().err)
    assert line.startswith("qcthermo run: error: cannot write ") and line.endswith(os.strerror(errno.ENOSPC))
    failed = Path(line.split("cannot write ")[1].split(": ")[0])
    assert failed.parent == out and not failed.exists()  # no partial file
    assert _temporaries(out) == [] and not (out / "run.json").exists()
    monkeypatch.undo()  # the disk has room again: the retry refills the killed run's folder without --force
    assert _run(samples, out) == 0
    assert json.loads((out / "run.json").read_text())["tool"] == "qcthermo" and _temporaries(out) == []


def test_full_disk_from_the_python_api_raises_a_one_line_error(sample_run, tmp_path, full_disk_after):
    full_disk_after(1)
    with pytest.raises(QcthermoError, match=r"cannot write .*survey\.csv: No space left on device") as err:
        sample_run.write(tmp_path / "api")
    assert "\n" not in str(err.value) and _temporaries(tmp_path / "api") == []


def test_read_only_output_folder(samples, tmp_path, capsys, monkeypatch):
    out = tmp_path / "readonly"
    out.mkdir()
    real_open = os.open

    def read_only_open(path, flags, *args):  # the folder as on a file system mounted read-only
        if Path(os.fsdecode(path)).parent == out and flags & os.O_CREAT:
            raise OSError(errno.EROFS, os.strerror(errno.EROFS), os.fsdecode(path))
        return real_open(path, flags, *args)

    monkeypatch.setattr(os, "open", read_only_open)
    assert _run(samples, out) == 2
    line = _one_error_line(capsys.readouterr().err)
    # the first file a run makes in --out is its lock file (docs/survey.md, "Output files")
    assert f"cannot write {out / '.qcthermo.lock'}: {os.strerror(errno.EROFS)}" in line
    assert list(out.iterdir()) == []


def test_output_folder_that_cannot_be_created(samples, tmp_path, capsys):
    if not Path("/proc/self").is_dir():
        pytest.skip("no /proc")
    out = Path("/proc/self/qcthermo-results")  # procfs: no folder can be made there, even by root
    assert _run(samples, out) == 2
    assert f"cannot create {out}" in _one_error_line(capsys.readouterr().err)


FSIZE_CHILD = """
import resource, signal, sys
from qcthermo.cli import main
signal.signal(signal.SIGXFSZ, signal.SIG_IGN)  # then a write past the limit fails with EFBIG instead of killing
resource.setrlimit(resource.RLIMIT_FSIZE, (int(sys.argv[1]), int(sys.argv[1])))
sys.exit(main(sys.argv[2:]))
"""


def test_file_size_limit_is_one_line_and_leaves_no_partial_file(samples, tmp_path):
    pytest.importorskip("resource")
    out = tmp_path / "out"
    limit = 2_000  # bytes: more than survey.csv (1.3 kB), less than species.csv (2.6 kB), the next file written
    proc = subprocess.run([sys.executable, "-c", FSIZE_CHILD, str(limit), "run", str(samples / "gas"), "--out",
                           str(out), "--jobs", "1", "--no-cache", "--quiet"], capture_output=True, text=True,
                          timeout=300)
    assert proc.returncode == 2, proc.stderr
    line = _one_error_line(proc.stderr)
    assert f"cannot write {out / 'species.csv'}: " in line and line.endswith(os.strerror(errno.EFBIG))
    assert _temporaries(out) == [] and all(p.stat().st_size <= limit for p in out.iterdir())


def test_a_users_folder_is_still_protected(samples, tmp_path, capsys):
    out = tmp_path / "thesis"
    out.mkdir()
    (out / "species.csv").write_text("my own table")
    (out / "chapter.tex").write_text("mine")
    assert _run(samples, out) == 2
    assert "--force" in _one_error_line(capsys.readouterr().err)
    assert (out / "species.csv").read_text() == "my own table"


@pytest.fixture
def odd_logs(samples, tmp_path) -> Path:
    """Real NWChem outputs (sample_outputs/gas) under odd names, and a non-log among them."""
    root = tmp_path / "odd"
    (root / "a[").mkdir(parents=True)
    shutil.copy(samples / "gas" / "hcn.out", root / "b[1].out")
    shutil.copy(samples / "gas" / "ts_hcn.out", root / "[bold]x.log")
    (root / "a[" / "red].out").write_text("not a log\n")
    try:
        shutil.copy(samples / "gas" / "hnc.out", os.path.join(os.fsencode(root), b"caf\xe9.out"))
    except OSError:
        pytest.skip("this file system refuses a file name that is not UTF-8")
    return root


def test_run_with_odd_file_names_writes_and_summarises_them_as_named(odd_logs, tmp_path, capsys):
    import openpyxl

    out = tmp_path / "out"
    assert main(["run", str(odd_logs), "--out", str(out), "--jobs", "1"]) == 1  # one file is not a log
    captured = capsys.readouterr()
    # the finding names the file verbatim: markup characters are not taken as styles
    assert f"error: {odd_logs / 'a[/red].out'}: not a quantum-chemistry log" in captured.out

    def refuse(token):  # RFC 8259 section 6: NaN and Infinity are not JSON numbers
        raise ValueError(token)

    doc = json.loads((out / "run.json").read_text(encoding="utf-8"), parse_constant=refuse)
    conformers = [c["path"] for s in doc["species"].values() for c in s["conformers"]]
    # PEP 383: the byte 0xE9 of the name, shown as \xe9 as in a Python bytes literal
    assert sorted(Path(p).name for p in conformers) == ["[bold]x.log", "b[1].out", "caf\\xe9.out"]
    sheet = openpyxl.load_workbook(out / "species.xlsx")["table"]  # a valid workbook (no lone surrogates)
    assert any("caf\\xe9" in str(cell.value) for row in sheet.iter_rows() for cell in row)
    assert "caf\\xe9.out" in (out / "survey.csv").read_text(encoding="utf-8")
    # species named after such files are labels in UTF-8: Cantera reads the NASA-7 file (YAML 1.2 takes
    # no lone surrogate, as \udce9 would be)
    import cantera as ct

    gas = ct.Solution(str(out / "thermo.yaml"))
    assert "caf\\xe9" in gas.species_names


def test_init_lists_odd_file_names_so_that_they_read_back(odd_logs, tmp_path):
    # TOML strings are Unicode (toml.io, v1.0.0): an undecodable byte is written as the glob '?', and the
    # glob characters of a real name are escaped, so each entry matches the file it was made from
    target = tmp_path / "starter.toml"
    assert main(["init", str(odd_logs), "-o", str(target), "--jobs", "1", "--quiet"]) == 1  # one is no log
    rf = qcthermo.load_reaction_file(target)
    logs = sorted(os.fsencode(p.name) for s in rf.species.values() for p in s.logs)
    assert logs == [b"[bold]x.log", b"b[1].out", b"caf\xe9.out"]


def test_run_json_is_strict(sample_run, tmp_path):
    def refuse(token):  # RFC 8259 section 6
        raise ValueError(f"non-standard JSON token {token}")

    sample_run.write(tmp_path / "out")
    doc = json.loads((tmp_path / "out" / "run.json").read_text(), parse_constant=refuse)
    assert doc["tool"] == "qcthermo"
    assert qcthermo.__version__ == doc["version"]


def test_a_rerun_removes_the_files_of_an_earlier_run_it_does_not_write(samples, isomerisation_file, tmp_path):
    # docs/survey.md "Output files": after a run, --out holds its run.json and the files listed there, no file of
    # an earlier run (a temperature range's rates.csv beside a one-temperature reactions.csv would contradict it)
    out = tmp_path / "out"
    reactions = ["--reactions", str(isomerisation_file)]
    assert _run(samples, out, *reactions, "--temperature-range", "250:350:50") == 0
    assert {"rates.csv", "arrhenius.csv", "dG_T.svg", "arrhenius.svg"} <= {p.name for p in out.iterdir()}
    (out / "notes.txt").write_text("mine")  # a user's file beside a run's is never removed
    assert _run(samples, out, *reactions, "--force") == 0
    listed = set(json.loads((out / "run.json").read_text())["files"])
    assert _files(out) == listed | {"run.json", "notes.txt", ".qcthermo.lock"}
    assert not listed & {"rates.csv", "arrhenius.csv", "dG_T.svg", "arrhenius.svg"}


class Killed(BaseException):
    """Stands for SIGKILL: nothing of the run's own clean-up may run after it (not an Exception)."""


def _killed_at_rename(monkeypatch, n: int) -> None:
    """os.replace stops the process at its n-th call (the kill of a run while it renames files into place)."""
    real, calls = os.replace, []

    def replace(src, dst):
        calls.append(dst)
        if len(calls) == n:
            raise Killed
        return real(src, dst)

    monkeypatch.setattr(os, "replace", replace)


def test_a_run_killed_during_a_rerun_leaves_no_complete_run_json_beside_new_tables(samples, isomerisation_file,
                                                                                   tmp_path, monkeypatch):
    # docs/survey.md "Output files": run.json is written "incomplete" (listing every file that may be there)
    # before any new file is renamed into place, and "complete" last
    out = tmp_path / "out"
    reactions = ["--reactions", str(isomerisation_file)]
    assert _run(samples, out, *reactions, "--temperature-range", "250:350:50") == 0
    before = json.loads((out / "run.json").read_text())
    assert before["status"] == "complete" and "dG_T.svg" in before["files"]
    _killed_at_rename(monkeypatch, 5)  # the incomplete run.json, then three new tables are in place
    with pytest.raises(Killed):
        _run(samples, out, *reactions)
    monkeypatch.undo()
    doc = json.loads((out / "run.json").read_text())
    present = {n for n in _files(out) if not n.startswith(".")}
    assert doc["status"] == "incomplete" and present <= set(doc["files"])
    assert "dG_T.svg" in doc["files"]  # the earlier run's files are still listed: the retry may remove them
    assert _run(samples, out, *reactions) == 0  # the retry needs no --force
    doc = json.loads((out / "run.json").read_text())
    assert doc["status"] == "complete" and not (out / "dG_T.svg").exists()
    assert {n for n in _files(out) if not n.startswith(".")} == set(doc["files"]) | {"run.json"}


def test_a_run_that_fails_while_writing_leaves_the_earlier_run_as_it_was(samples, tmp_path, full_disk_after):
    out = tmp_path / "out"
    assert _run(samples, out) == 0
    before = {n: (out / n).read_bytes() for n in _files(out)}
    full_disk_after(2)
    assert _run(samples, out, "--temperature", "350") == 2
    assert {n: (out / n).read_bytes() for n in _files(out)} == before


LOCK_HOLDER = """
import sys, time
from qcthermo.fileio import output_lock
with output_lock(sys.argv[1]):
    print("locked", flush=True)
    time.sleep(120)
"""


def test_two_runs_into_one_folder_at_once_the_second_is_refused(samples, tmp_path):
    # two real processes: one holds the folder's lock (fcntl.flock, released when it ends), the other is a run
    out = tmp_path / "out"
    holder = subprocess.Popen([sys.executable, "-c", LOCK_HOLDER, str(out)], stdout=subprocess.PIPE, text=True)
    try:
        assert holder.stdout.readline().strip() == "locked"
        second = subprocess.run([sys.executable, "-m", "qcthermo", "run", str(samples / "gas"), "--out", str(out),
                                 "--jobs", "1", "--no-cache", "--quiet"], capture_output=True, text=True, timeout=300)
    finally:
        holder.kill()
        holder.wait()
    assert second.returncode == 2
    line = _one_error_line(second.stderr)
    assert f"is being written by another qcthermo run (process {holder.pid})" in line
    assert [p.name for p in out.iterdir()] == [".qcthermo.lock"]
    assert _run(samples, out) == 0  # the holder is gone: its lock went with it


def test_a_users_si_tex_and_draft_figure_are_not_taken_for_a_killed_run(samples, tmp_path, capsys):
    out = tmp_path / "paper"
    out.mkdir()
    (out / "si.tex").write_text("hand-edited")
    (out / "profile_draft.png").write_bytes(b"draft")
    assert _run(samples, out) == 2
    assert "already holds other files; use --force" in _one_error_line(capsys.readouterr().err)
    assert sorted(p.name for p in out.iterdir()) == ["profile_draft.png", "si.tex"]  # not even a lock file
    assert (out / "si.tex").read_text() == "hand-edited"


def test_a_device_or_a_pipe_in_the_output_folder_is_never_renamed_over(samples, tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    os.mkfifo(out / "survey.csv")
    assert _run(samples, out, "--force") == 2
    assert f"cannot write {out / 'survey.csv'}: it is a named pipe" in _one_error_line(capsys.readouterr().err)
    assert stat.S_ISFIFO(os.lstat(out / "survey.csv").st_mode) and not (out / "run.json").exists()


def test_a_named_pipe_or_a_device_given_as_an_output_file_is_written_as_a_stream(samples, tmp_path, capsys):
    # docs/survey.md "Output files": `--json /dev/null --force` must leave /dev/null a device. The devices here
    # are made in tmp_path (mknod, as root: the same major/minor 1:3 as /dev/null, Linux devices.txt), never
    # the system's own
    import threading

    pipe = tmp_path / "rows.pipe"
    os.mkfifo(pipe)
    received = []
    reader = threading.Thread(target=lambda: received.append(pipe.read_text()))
    reader.start()
    assert main(["survey", str(samples / "gas"), "--json", str(pipe), "--force", "--jobs", "1", "--no-cache",
                 "--quiet"]) == 0
    reader.join(timeout=60)
    assert stat.S_ISFIFO(os.lstat(pipe).st_mode)
    assert [row["path"] for row in json.loads(received[0])] == sorted(p.name for p in (samples / "gas").iterdir()
                                                                     if p.suffix == ".out")
    if os.geteuid() != 0:
        pytest.skip("making a device node needs root")
    null = tmp_path / "null"
    os.mknod(null, 0o666 | stat.S_IFCHR, os.makedev(1, 3))
    for command in (["survey", str(samples / "gas"), "--csv", str(null)],
                    ["profile", str(samples / "reactions.toml"), "-o", str(null.with_suffix(".svg"))]):
        if command[0] == "profile":
            os.mknod(null.with_suffix(".svg"), 0o666 | stat.S_IFCHR, os.makedev(1, 3))
        assert main([*command, "--force", "--jobs", "1", "--no-cache", "--quiet"]) in (0, 1), capsys.readouterr()
    assert stat.S_ISCHR(os.lstat(null).st_mode) and stat.S_ISCHR(os.lstat(null.with_suffix(".svg")).st_mode)
    capsys.readouterr()
    sock_path = tmp_path / "s.csv"
    import socket

    with socket.socket(socket.AF_UNIX) as sock:
        sock.bind(str(sock_path))
        assert main(["survey", str(samples / "gas"), "--csv", str(sock_path), "--force", "--quiet"]) == 2
    assert _one_error_line(capsys.readouterr().err).endswith(f"cannot write {sock_path}: it is a socket")

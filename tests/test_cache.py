"""The parse cache: a warm survey reads no log, a touched file is hashed but not parsed, a changed file is
parsed again, a damaged cache file is rebuilt, two surveys at once leave a sound database.

The logs here are XYZ files named *.out, read by a stub reader built on ASE's XYZ parser (``ase.io.read``),
so these tests do not depend on any quantum-chemistry reader; the counts are what is checked.
"""

from __future__ import annotations

import builtins
import importlib
import io
import json
import os
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest
from xyz_stub import H2_XYZ, WATER_XYZ, xyz_reader

import qcthermo.cache as cache_module
from qcthermo.cache import CACHE_FILE, ParseCache, default_cache_dir, file_digest
from qcthermo.records import Calculation
from qcthermo.survey import survey

# every test keeps its parse cache in a folder of its own
pytestmark = pytest.mark.usefixtures("cache_dir")


class CountingReader:
    """The stub reader, counting its calls."""

    def __init__(self):
        self.calls: list[str] = []
        self.__qualname__ = "CountingReader"

    def __call__(self, path: str) -> Calculation:
        self.calls.append(path)
        return xyz_reader(path)


@pytest.fixture
def tree(tmp_path) -> Path:
    root = tmp_path / "logs"
    (root / "sub").mkdir(parents=True)
    (root / "water.out").write_text(WATER_XYZ)
    (root / "sub" / "h2.log").write_text(H2_XYZ)
    (root / "sub" / "broken.out").write_text("this is not a log\n")
    return root


@pytest.fixture
def opens(monkeypatch, tree):
    """Paths under the log tree opened through open(), io.open() or os.open() from now on."""
    seen: list[str] = []
    real_open, real_os_open = builtins.open, os.open

    def counting_open(file, *args, **kwargs):
        if isinstance(file, (str, os.PathLike)) and str(tree) in os.fspath(file):
            seen.append(os.fspath(file))
        return real_open(file, *args, **kwargs)

    def counting_os_open(file, *args, **kwargs):
        if str(tree) in os.fspath(file):
            seen.append(os.fspath(file))
        return real_os_open(file, *args, **kwargs)

    monkeypatch.setattr(builtins, "open", counting_open)
    monkeypatch.setattr(io, "open", counting_open)
    monkeypatch.setattr(os, "open", counting_os_open)
    return seen


@pytest.fixture
def hashes(monkeypatch) -> list[str]:
    """Paths hashed by the cache from now on."""
    seen: list[str] = []
    real = cache_module.file_digest

    def counting_digest(path):
        seen.append(os.fspath(path))
        return real(path)

    monkeypatch.setattr(cache_module, "file_digest", counting_digest)
    return seen


def test_first_survey_parses_every_file_and_caches_errors_too(tree, cache_dir):
    reader = CountingReader()
    first = survey(tree, jobs=1, reader=reader)
    assert len(reader.calls) == 3
    assert first.stats["parsed"] == 3
    assert (cache_dir / CACHE_FILE).is_file()
    assert [r["status"] for r in first.rows] == ["error", "ok", "ok"]  # sorted: sub/broken, sub/h2, water


def test_second_survey_reads_nothing_from_the_logs(tree, opens, hashes):
    reader = CountingReader()
    first = survey(tree, jobs=1, reader=reader)
    reader.calls.clear()
    opens.clear()
    hashes.clear()
    second = survey(tree, jobs=1, reader=reader)
    assert reader.calls == []  # not parsed, not even the bad file
    assert hashes == []  # not hashed
    assert opens == []  # not even opened
    assert second.stats == {"files": 3, "parsed": 0, "cached": 3, "hashed": 0}
    assert second.rows == first.rows
    water = second.calculations["water.out"]
    assert water.symbols == ("O", "H", "H")
    assert water.path == str(tree / "water.out")
    assert water.coordinates == pytest.approx(first.calculations["water.out"].coordinates)


def test_touched_file_is_hashed_but_not_parsed(tree, hashes):
    reader = CountingReader()
    survey(tree, jobs=1, reader=reader)
    reader.calls.clear()
    hashes.clear()
    st = os.stat(tree / "water.out")
    os.utime(tree / "water.out", ns=(st.st_atime_ns, st.st_mtime_ns + 5_000_000_000))
    again = survey(tree, jobs=1, reader=reader)
    assert reader.calls == []
    assert hashes == [str(tree / "water.out")]
    # and the row was brought up to date: a third survey does not even hash it
    hashes.clear()
    survey(tree, jobs=1, reader=reader)
    assert hashes == []
    assert again.calculations["water.out"].symbols == ("O", "H", "H")


def test_worker_processes_find_touched_files_by_digest(tree):
    reader = CountingReader()
    survey(tree, jobs=1, reader=reader)
    for name in ("water.out", "sub/h2.log"):
        st = os.stat(tree / name)
        os.utime(tree / name, ns=(st.st_atime_ns, st.st_mtime_ns + 5_000_000_000))
    again = survey(tree, jobs=2, reader=reader)  # two misses: hashed and looked up in the workers
    assert again.stats == {"files": 3, "parsed": 0, "cached": 3, "hashed": 2}
    assert again.calculations["sub/h2.log"].symbols == ("H", "H")


def test_changed_file_is_parsed_again(tree):
    reader = CountingReader()
    survey(tree, jobs=1, reader=reader)
    reader.calls.clear()
    (tree / "water.out").write_text(H2_XYZ.replace("H2", "now H2"))
    again = survey(tree, jobs=1, reader=reader)
    assert reader.calls == [str(tree / "water.out")]
    assert again.calculations["water.out"].symbols == ("H", "H")


def test_copied_file_is_found_by_its_content(tree, hashes):
    reader = CountingReader()
    survey(tree, jobs=1, reader=reader)
    reader.calls.clear()
    (tree / "copy.out").write_bytes((tree / "water.out").read_bytes())
    again = survey(tree, jobs=1, reader=reader)
    assert reader.calls == []
    assert again.calculations["copy.out"].path == str(tree / "copy.out")


def test_another_reader_version_does_not_reuse_entries(tree):
    survey(tree, jobs=1, reader=CountingReader())
    other = CountingReader()
    other.__qualname__ = "AnotherReader"
    survey(tree, jobs=1, reader=other)
    assert len(other.calls) == 3


def test_no_cache_neither_reads_nor_writes(tree, cache_dir):
    reader = CountingReader()
    survey(tree, jobs=1, reader=reader, cache=False)
    survey(tree, jobs=1, reader=reader, cache=False)
    assert len(reader.calls) == 6
    assert not cache_dir.exists()


def test_corrupt_cache_file_is_moved_aside_and_rebuilt(tree, cache_dir):
    cache_dir.mkdir()
    (cache_dir / CACHE_FILE).write_bytes(b"garbage, not SQLite " * 100)
    reader = CountingReader()
    result = survey(tree, jobs=1, reader=reader)
    assert len(result.rows) == 3
    assert len(result.notes) == 1 and "damaged" in result.notes[0] and "rebuilt" in result.notes[0]
    assert "\n" not in result.notes[0]
    assert len(list(cache_dir.glob(f"{CACHE_FILE}.corrupt-*"))) == 1
    reader.calls.clear()
    again = survey(tree, jobs=1, reader=reader)
    assert reader.calls == [] and again.notes == []


def test_cache_damaged_inside_is_set_aside_and_rebuilt_next_time(tree, cache_dir):
    survey(tree, jobs=1, reader=CountingReader())
    db = sqlite3.connect(cache_dir / CACHE_FILE)
    db.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    (page_size,) = db.execute("PRAGMA page_size").fetchone()
    db.close()
    data = bytearray((cache_dir / CACHE_FILE).read_bytes())
    data[page_size:] = b"\xff" * (len(data) - page_size)  # keep the header page, wreck every other page
    (cache_dir / CACHE_FILE).write_bytes(bytes(data))
    reader = CountingReader()
    damaged = survey(tree, jobs=1, reader=reader)
    assert len(damaged.rows) == 3 and len(damaged.calculations) == 2  # the survey itself is not lost
    assert len(damaged.notes) == 1 and "rebuil" in damaged.notes[0]  # found on opening, or in mid-run
    survey(tree, jobs=1, reader=reader)  # at the latest this run fills the rebuilt cache
    reader.calls.clear()
    again = survey(tree, jobs=1, reader=reader)
    assert again.notes == [] and reader.calls == []


def test_corrupt_cache_warning_reaches_the_command_line(tree, cache_dir, capsys, monkeypatch):
    from qcthermo.cli import main

    survey_module = importlib.import_module("qcthermo.survey")

    monkeypatch.setattr(survey_module, "default_reader", xyz_reader)
    cache_dir.mkdir()
    (cache_dir / CACHE_FILE).write_bytes(b"\x00\xff" * 4096)
    assert main(["survey", str(tree), "--jobs", "1", "--quiet"]) == 1  # one unreadable file
    err = capsys.readouterr().err
    assert err.count("warning: parse cache") == 1


def test_two_surveys_at_once_leave_a_sound_cache(tmp_path, cache_dir):
    root = tmp_path / "many"
    root.mkdir()
    for i in range(150):
        (root / f"w{i:03d}.out").write_text(WATER_XYZ.replace("water", f"water {i}"))
    code = (
        "import sys; sys.path.insert(0, sys.argv[1]);"
        "from xyz_stub import slow_xyz_reader; from qcthermo.survey import survey;"
        "r = survey(sys.argv[2], jobs=1, reader=slow_xyz_reader);"
        "print(len(r.calculations), r.notes)"
    )
    env = dict(os.environ, QCTHERMO_CACHE_DIR=str(cache_dir))
    procs = [
        subprocess.Popen([sys.executable, "-c", code, str(Path(__file__).parent), str(root)], env=env,
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        for _ in range(2)
    ]
    outputs = [p.communicate(timeout=120) for p in procs]
    assert [p.returncode for p in procs] == [0, 0], outputs
    assert [out.strip() for out, _ in outputs] == ["150 []", "150 []"]
    db = sqlite3.connect(cache_dir / CACHE_FILE)
    assert db.execute("PRAGMA integrity_check").fetchone() == ("ok",)
    assert db.execute("SELECT count(*) FROM parsed").fetchone() == (150,)
    assert db.execute("PRAGMA journal_mode").fetchone() == ("wal",)
    db.close()


def test_writes_are_batched_and_flushed_on_close(tree, cache_dir):
    from qcthermo.cache import Entry, FileKey

    key = FileKey.of(tree / "water.out")
    digest = file_digest(key.path)
    with ParseCache("v1", cache_dir, batch_size=10) as store:
        store.store(key, digest, Entry(False, reason="a reason"))
        peek = sqlite3.connect(store.path)
        assert peek.execute("SELECT count(*) FROM parsed").fetchone() == (0,)  # still queued
    assert peek.execute("SELECT ok, payload FROM parsed").fetchall() == [(0, "a reason")]
    peek.close()
    with ParseCache("v1", cache_dir) as store:
        assert store.lookup(key).reason == "a reason"
        assert store.find(digest).reason == "a reason"
        assert store.index().find(digest).reason == "a reason"  # the read-only lookup of a worker
        assert store.index().find("0" * 128) is None
    with ParseCache("v2", cache_dir) as store:
        assert store.lookup(key) is None and store.find(digest) is None  # another reader version


def test_cache_location_follows_the_environment(monkeypatch, tmp_path):
    monkeypatch.setenv("QCTHERMO_CACHE_DIR", str(tmp_path / "explicit"))
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert default_cache_dir() == tmp_path / "explicit"
    monkeypatch.delenv("QCTHERMO_CACHE_DIR")
    assert default_cache_dir() == tmp_path / "xdg" / "qcthermo"
    monkeypatch.delenv("XDG_CACHE_HOME")
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    assert default_cache_dir() == tmp_path / "home" / ".cache" / "qcthermo"


def test_damage_found_mid_run_disables_the_cache_and_sets_the_file_aside(tree, cache_dir):
    from qcthermo.cache import FileKey

    store = ParseCache("v1", cache_dir)
    store._db.close()
    (cache_dir / CACHE_FILE).write_bytes(b"\xff" * 8192)  # wrecked under an open cache, as by a failing disk
    store._db = sqlite3.connect(cache_dir / CACHE_FILE)
    assert store.lookup(FileKey.of(tree / "water.out")) is None
    assert not store.enabled
    assert len(store.warnings) == 1 and "disabled for the rest of this run" in store.warnings[0]
    assert "the next run rebuilds it" in store.warnings[0]
    assert not (cache_dir / CACHE_FILE).exists() and len(list(cache_dir.glob(f"{CACHE_FILE}.corrupt-*"))) == 1
    store.close()


def _rewrite_row(cache_dir: Path, name: str, **columns) -> None:
    """Change the cached row of the file called ``name`` directly in SQLite, as damage or another program would."""
    db = sqlite3.connect(cache_dir / CACHE_FILE)
    sets = ", ".join(f"{column} = ?" for column in columns)
    done = db.execute(f"UPDATE parsed SET {sets} WHERE CAST(path AS TEXT) LIKE ?", (*columns.values(), f"%/{name}"))
    assert done.rowcount == 1
    db.commit()
    db.close()


def _water_record(cache_dir: Path) -> dict:
    db = sqlite3.connect(cache_dir / CACHE_FILE)
    (payload,) = db.execute("SELECT payload FROM parsed WHERE CAST(path AS TEXT) LIKE '%/water.out'").fetchone()
    db.close()
    return json.loads(payload)


def _survey_and_break_water(tree: Path, cache_dir: Path, damage: str) -> tuple[CountingReader, object, dict]:
    """A first survey, then the cached record of water.out damaged as ``damage`` says; (reader, result, record)."""
    reader = CountingReader()
    first = survey(tree, jobs=1, reader=reader)
    record = _water_record(cache_dir)
    broken = dict(record)
    if damage == "missing key":
        del broken["symbols"]
    elif damage == "unknown key":
        broken["colour"] = "blue"
    elif damage == "wrong type":
        broken["symbols"] = [8, 1, 1]
    elif damage == "string where a number belongs":
        broken["charge"] = "zero"
    elif damage == "bad shape":
        broken["coordinates"] = [[0.0, 0.0]]  # 2 numbers for 3 atoms: Calculation.from_dict cannot reshape it
    if damage == "payload not UTF-8":  # TEXT holding bytes that are no UTF-8 (RFC 3629: 0xFF never occurs)
        db = sqlite3.connect(cache_dir / CACHE_FILE)
        db.execute("UPDATE parsed SET payload = CAST(X'FF7B7D' AS TEXT) WHERE CAST(path AS TEXT) LIKE '%/water.out'")
        db.commit()
        db.close()
    else:
        _rewrite_row(cache_dir, "water.out", payload="{not json" if damage == "invalid JSON" else
                     json.dumps([1, 2]) if damage == "not an object" else json.dumps(broken))
    reader.calls.clear()
    return reader, first, record


@pytest.mark.parametrize("damage", [
    "invalid JSON", "missing key", "unknown key", "wrong type", "string where a number belongs", "bad shape",
    "not an object", "payload not UTF-8",
])
def test_a_bad_cached_record_is_read_again_when_its_calculation_is_needed(tree, cache_dir, damage):
    reader, first, record = _survey_and_break_water(tree, cache_dir, damage)
    second = survey(tree, jobs=1, reader=reader)
    assert reader.calls == [] and second.rows == first.rows  # the survey needs the row's columns alone
    water = second.calculations["water.out"]  # the record is decoded now: damaged, so the file is read again
    assert [Path(p).name for p in reader.calls] == ["water.out"] and second.notes == []
    assert water.to_dict() == first.calculations["water.out"].to_dict()
    assert _water_record(cache_dir) == record  # the row rewritten
    reader.calls.clear()
    third = survey(tree, jobs=1, reader=reader)
    assert third.rows == first.rows and third.calculations["water.out"].symbols == ("O", "H", "H")
    assert reader.calls == []


@pytest.mark.parametrize("column, value", [
    ("ok", 7), ("charge", "zero"), ("natoms", 2.5), ("status", "fine"), ("normal_termination", 5),
    ("formula", None), ("E_elec_Eh", "-76.0"), ("method", "not UTF-8"),
])
def test_a_bad_cached_survey_column_is_a_miss_and_is_rewritten(tree, cache_dir, column, value):
    first = survey(tree, jobs=1, reader=CountingReader())
    water = "SELECT * FROM parsed WHERE CAST(path AS TEXT) LIKE '%/water.out'"
    db = sqlite3.connect(cache_dir / CACHE_FILE)
    row = db.execute(water).fetchone()
    if value == "not UTF-8":  # TEXT holding bytes that are no UTF-8 (RFC 3629: 0xFF never occurs)
        db.execute(f"UPDATE parsed SET {column} = CAST(X'FF41' AS TEXT) WHERE CAST(path AS TEXT) LIKE '%/water.out'")
        db.commit()
    else:
        _rewrite_row(cache_dir, "water.out", **{column: value})
    second = survey(tree, jobs=1, reader=CountingReader())
    # the bad row only missed: the file was hashed, then its record found by the digest (or parsed, when the
    # damage makes the whole row unsound), and the row rewritten
    assert second.stats["hashed"] == 1 and second.stats["parsed"] == (column == "ok")
    assert second.rows == first.rows and second.notes == []
    assert db.execute(water).fetchone() == row
    db.close()
    third = survey(tree, jobs=1, reader=CountingReader())
    assert third.rows == first.rows and third.stats["hashed"] == 0


def test_a_bad_cache_row_found_by_digest_in_a_worker_is_a_miss(tree, cache_dir):
    reader = CountingReader()
    first = survey(tree, jobs=2, reader=reader)
    _rewrite_row(cache_dir, "water.out", payload="{not json")
    os.utime(tree / "water.out", ns=(1, 1))  # step 1 misses, so the worker hashes it and finds the bad row
    again = survey(tree, jobs=2, reader=reader)  # workers parse in their own processes: the rows are checked
    assert again.rows == first.rows and again.stats["parsed"] == 1 and again.notes == []


def _schema_2_cache(cache_dir: Path, tree: Path, reader_version: str) -> None:
    """The layout qcthermo wrote before the survey columns (schema 2), holding a row for every file of ``tree``:
    ok files with their record and nothing else, as a warm survey of that version would have found them."""
    from qcthermo.cache import versioned

    cache_dir.mkdir()
    db = sqlite3.connect(cache_dir / CACHE_FILE)
    db.execute("CREATE TABLE parsed (path BLOB PRIMARY KEY, size INTEGER NOT NULL, mtime_ns INTEGER NOT NULL, "
               "digest TEXT NOT NULL, reader_version TEXT NOT NULL, ok INTEGER NOT NULL, payload TEXT NOT NULL)")
    db.execute("CREATE INDEX parsed_by_digest ON parsed (digest, reader_version)")
    db.execute("PRAGMA user_version = 2")
    for path in sorted(tree.rglob("*.*")):
        st = path.stat()
        ok = path.name != "broken.out"
        payload = json.dumps(xyz_reader(str(path)).to_dict()) if ok else "a reason"
        # the key and reader version a survey of this version would look up, with schema 2's layout around it
        db.execute("INSERT INTO parsed VALUES (?, ?, ?, ?, ?, ?, ?)",
                   (os.fsencode(str(path)), st.st_size, st.st_mtime_ns, file_digest(path),
                    versioned(reader_version).replace("schema3", "schema2"), int(ok), payload))
    db.commit()
    db.close()


@pytest.mark.parametrize("schema", [1, 2])
def test_a_cache_of_an_older_layout_is_rebuilt_with_one_warning(tree, cache_dir, schema):
    from qcthermo.survey import reader_version

    reader = CountingReader()
    if schema == 1:
        cache_dir.mkdir()
        db = sqlite3.connect(cache_dir / CACHE_FILE)  # schema 1: paths as text, no user_version
        db.execute("CREATE TABLE parsed (path TEXT PRIMARY KEY, size INTEGER NOT NULL, mtime_ns INTEGER NOT NULL, "
                   "digest TEXT NOT NULL, reader_version TEXT NOT NULL, ok INTEGER NOT NULL, payload TEXT NOT NULL)")
        db.execute("INSERT INTO parsed VALUES ('/x.out', 1, 1, 'd', 'schema1:v', 0, 'a reason')")
        db.commit()
        db.close()
    else:
        _schema_2_cache(cache_dir, tree, reader_version(reader))
    result = survey(tree, jobs=1, reader=reader)
    # never misread: every file read again (the old rows have no survey columns to trust)
    assert len(reader.calls) == 3 and result.stats["parsed"] == 3
    assert [r["status"] for r in result.rows] == ["error", "ok", "ok"]
    assert len(result.notes) == 1 and f"older layout (schema {schema})" in result.notes[0]
    db = sqlite3.connect(cache_dir / CACHE_FILE)
    assert db.execute("PRAGMA user_version").fetchone() == (3,)
    assert db.execute("SELECT count(*) FROM parsed").fetchone() == (3,)
    db.close()
    reader.calls.clear()
    again = survey(tree, jobs=1, reader=reader)
    assert again.notes == [] and reader.calls == [] and again.rows == result.rows  # rebuilt and in use


def test_another_programs_database_is_moved_aside_and_rebuilt(tree, cache_dir):
    cache_dir.mkdir()
    db = sqlite3.connect(cache_dir / CACHE_FILE)
    db.execute("CREATE TABLE people (name TEXT)")
    db.commit()
    db.close()
    reader = CountingReader()
    result = survey(tree, jobs=1, reader=reader)
    assert len(result.notes) == 1 and "not a qcthermo parse cache" in result.notes[0]
    (aside,) = cache_dir.glob(f"{CACHE_FILE}.corrupt-*")
    assert sqlite3.connect(aside).execute("SELECT count(*) FROM people").fetchone() == (0,)  # kept, not emptied
    reader.calls.clear()
    assert survey(tree, jobs=1, reader=reader).notes == [] and reader.calls == []


@pytest.mark.parametrize("where", ["under a file", "read-only"])
def test_a_cache_folder_that_cannot_be_written_gives_one_warning(tree, tmp_path, monkeypatch, capsys, where):
    from qcthermo.cli import main

    if where == "under a file":
        (tmp_path / "a_file").write_text("")
        folder = tmp_path / "a_file" / "cache"
    else:
        folder = Path("/proc/self")  # a folder nobody can create files in, root included (Linux procfs)
        if not folder.is_dir():
            pytest.skip("no /proc")
    monkeypatch.setenv("QCTHERMO_CACHE_DIR", str(folder))
    monkeypatch.setattr(importlib.import_module("qcthermo.survey"), "default_reader", xyz_reader)
    result = survey(tree, jobs=1, reader=CountingReader())
    assert len(result.rows) == 3 and len(result.notes) == 1 and "parse cache disabled" in result.notes[0]
    assert main(["survey", str(tree), "--jobs", "1", "--quiet"]) == 1
    assert capsys.readouterr().err.count("warning: parse cache") == 1

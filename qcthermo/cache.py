"""The parse cache: what a reader made of each log, kept in SQLite so a second survey reads no log.

One table, one row per absolute path. The key is (path, size, mtime_ns, content digest, reader version);
the value is the normalised record as JSON (``Calculation.to_dict()``) or, for a file the reader
refused, its one-line reason, so a bad file is not parsed again either; beside it, the file's survey
row as real columns (:data:`ROW_COLUMNS`), so that a warm survey reads those columns of every file in one
query and decodes no record (a record is read back only for a file a later stage needs:
:meth:`ParseCache.record`). No pickle: the file holds nothing but text and numbers. The path is stored as
its bytes (``os.fsencode``), so a file name that is not UTF-8 is a key like any other. A row that cannot
be read back (a column of the wrong kind, invalid JSON, a record of the wrong shape) is a miss: the file
is read again and the row rewritten.

Lookup:

1. path, size and mtime_ns match a row of the same reader version: the row is trusted without opening
   the file (a warm survey only stats the files): :meth:`ParseCache.rows_under` for a whole directory
   (:meth:`ParseCache.lookup` for one file), in the parent;
2. otherwise the file is hashed (BLAKE2b, streamed) and any row with that digest and reader version is
   reused, whatever its path (a touched, copied or moved file is not parsed again): done by the worker
   that would parse the file (:class:`DigestIndex`, read-only), so hashing runs in parallel too;
3. otherwise the worker parses the file; either way the parent records the outcome under the file's
   new key with :meth:`ParseCache.store`.

Several processes may use the file at once: WAL journal, a busy timeout, and writes batched into
short ``BEGIN IMMEDIATE`` transactions by the parent process (workers never write). A file that is not
a database (or a damaged one, or another program's database) is moved aside and rebuilt, a cache of an
older layout is emptied and rebuilt, each with a one-line warning in :attr:`ParseCache.warnings`.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import sqlite3
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any, NamedTuple

from .fileio import display

#: bumped when the layout of the table or of the stored JSON changes; kept in SQLite's user_version
#: (2: path as bytes, user_version set; 3: the survey row as columns)
SCHEMA_VERSION = 3
CACHE_FILE = "parse-cache.sqlite"
#: seconds a writer waits for another process's transaction before giving up
BUSY_TIMEOUT_S = 30.0

#: the survey's columns of a file (all but its path; qcthermo.survey.COLUMNS), with what each may hold: a
#: row whose values are not of these kinds is a miss (checked in the query itself, in SQLite)
ROW_COLUMNS = (
    ("program", ("text",)), ("program_version", ("text", "null")), ("job_types", ("text",)),
    ("method", ("text", "null")), ("basis", ("text", "null")), ("solvent_model", ("text", "null")),
    ("charge", ("integer",)), ("multiplicity", ("integer", "null")), ("formula", ("text",)),
    ("natoms", ("integer",)), ("E_elec_Eh", ("real", "null")), ("lowest_frequency_cm1", ("real", "null")),
    ("n_imaginary", ("integer", "null")), ("normal_termination", ("integer", "null")),
    ("status", ("text",)), ("reason", ("text",)),
)
_ROW_NAMES = tuple(name for name, _ in ROW_COLUMNS)
#: a sound row: a read file with its survey columns of the right kinds, or a refused file with its reason
_SOUND = (
    "((ok = 1 AND status IN ('ok', 'warning') AND "
    + " AND ".join(f"typeof({name}) IN ({', '.join(repr(k) for k in kinds)})" for name, kinds in ROW_COLUMNS)
    + " AND (normal_termination IS NULL OR normal_termination IN (0, 1))"
    + ") OR (ok = 0 AND status = 'error' AND typeof(reason) = 'text'))"
)

# the record last: a large one (normal modes) spills into overflow pages, which reading the columns before it
# never touches
_SCHEMA = (
    f"""CREATE TABLE IF NOT EXISTS parsed (
    path BLOB PRIMARY KEY,
    size INTEGER NOT NULL,
    mtime_ns INTEGER NOT NULL,
    digest TEXT NOT NULL,
    reader_version TEXT NOT NULL,
    ok INTEGER NOT NULL,
    {", ".join(_ROW_NAMES)},
    payload TEXT NOT NULL
)""",
    "CREATE INDEX IF NOT EXISTS parsed_by_digest ON parsed (digest, reader_version)",
    f"PRAGMA user_version = {SCHEMA_VERSION}",
)


class ForeignDatabase(sqlite3.DatabaseError):
    """The cache file is an SQLite database, but not a qcthermo parse cache of a known layout."""


def default_cache_dir() -> Path:
    """$QCTHERMO_CACHE_DIR, else $XDG_CACHE_HOME/qcthermo, else ~/.cache/qcthermo (XDG base directories)."""
    explicit = os.environ.get("QCTHERMO_CACHE_DIR")
    if explicit:
        return Path(explicit).expanduser()
    xdg = os.environ.get("XDG_CACHE_HOME")
    base = Path(xdg).expanduser() if xdg else Path.home() / ".cache"
    return base / "qcthermo"


def file_digest(path: str | os.PathLike) -> str:
    """BLAKE2b hex digest of a file's bytes, read in blocks (the contents are never held whole)."""
    with open(path, "rb") as handle:
        return hashlib.file_digest(handle, "blake2b").hexdigest()


class FileKey(NamedTuple):
    """Where a file is and what it looked like when it was parsed: absolute path, bytes, mtime in ns.
    (A named tuple: a survey makes one per file, 100,000 of them in a campaign.)"""

    path: str
    size: int
    mtime_ns: int

    @classmethod
    def of(cls, path: str | os.PathLike) -> FileKey:
        st = os.stat(path)
        return cls(os.path.abspath(path), st.st_size, st.st_mtime_ns)


@dataclass(frozen=True)
class Entry:
    """A cached outcome: ``ok`` with ``record`` (the Calculation dict) and, to store it, ``row`` (the values of
    :data:`ROW_COLUMNS`, in order), or not ok with ``reason``."""

    ok: bool
    record: dict[str, Any] | None = None
    reason: str = ""
    row: tuple | None = None


#: what :meth:`ParseCache.rows_under` gives for a file, a plain tuple (no object more per file): path (bytes),
#: size, mtime_ns, ok (0 or 1), then the values of :data:`ROW_COLUMNS` in order (normal_termination 0, 1 or None)
CACHED_ROW = ("path", "size", "mtime_ns", "ok", *(name for name, _ in ROW_COLUMNS))


class ParseCache:
    """The SQLite parse cache at ``directory / parse-cache.sqlite`` for one reader version.

    Use as a context manager; :meth:`store` queues results, :meth:`flush` (also on exit and every
    ``batch_size`` stores) writes them in one transaction. Lookup step 1 is :meth:`lookup`; step 2 is
    :meth:`find` here, or :class:`DigestIndex` in a worker process, by whoever hashed the file.
    """

    def __init__(self, reader_version: str, directory: str | os.PathLike | None = None, batch_size: int = 64):
        self.reader_version = versioned(reader_version)
        # absolute: worker processes open it by URI
        self.directory = (Path(directory) if directory is not None else default_cache_dir()).absolute()
        self.path = self.directory / CACHE_FILE
        self.batch_size = batch_size
        self.warnings: list[str] = []
        self._pending: list[tuple] = []
        self._db: sqlite3.Connection | None = self._open()

    # -- opening, and recovering from a damaged file --------------------------------------------

    def _connect(self) -> sqlite3.Connection:
        # isolation_level=None: autocommit, so every write transaction is an explicit BEGIN IMMEDIATE
        # (a deferred read-then-write transaction can fail under WAL without waiting for the lock).
        db = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_S, isolation_level=None)
        db.text_factory = _text
        try:
            db.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
            db.execute("PRAGMA journal_mode = WAL")
            db.execute("PRAGMA synchronous = NORMAL")
            with _transaction(db):
                db.execute("BEGIN IMMEDIATE")
                self._check_layout(db)
                for statement in _SCHEMA:  # one by one: executescript would commit the open transaction first
                    db.execute(statement)
                db.execute("COMMIT")
            db.execute("SELECT count(*) FROM parsed WHERE rowid = 1").fetchone()
        except BaseException:
            db.close()
            raise
        return db

    def _check_layout(self, db: sqlite3.Connection) -> None:
        """Inside the opening transaction: an empty file or this layout passes; the table of an older
        qcthermo is dropped (rebuilt by the caller, one warning); anything else is :class:`ForeignDatabase`."""
        (version,) = db.execute("PRAGMA user_version").fetchone()
        tables = {name for (name,) in db.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
        if not tables or (version == SCHEMA_VERSION and tables == {"parsed"}):
            return
        if version < SCHEMA_VERSION and tables == {"parsed"}:
            db.execute("DROP TABLE parsed")
            self.warnings.append(f"parse cache {self.path} had an older layout (schema {version or 1}); "
                                 "emptied and rebuilt")
            return
        raise ForeignDatabase(f"not a qcthermo parse cache (schema {version}, tables {', '.join(sorted(tables))})")

    def _open(self) -> sqlite3.Connection | None:
        try:
            self.directory.mkdir(parents=True, exist_ok=True)
        except OSError as err:
            self.warnings.append(f"parse cache disabled: cannot create {self.directory}: {err.strerror}")
            return None
        try:
            return self._connect()
        except sqlite3.OperationalError as err:  # locked, read-only, I/O: the file may be fine, leave it
            self.warnings.append(f"parse cache disabled for this run: {self.path}: {err}")
            return None
        except sqlite3.DatabaseError as err:  # not a database, or a malformed one
            try:
                aside = self._move_aside()
            except OSError as move_err:
                self.warnings.append(f"parse cache disabled: {self.path} is damaged and cannot be moved: {move_err}")
                return None
            what = err if isinstance(err, ForeignDatabase) else f"was damaged ({err})"
            self.warnings.append(f"parse cache {self.path} {what}; moved to {aside.name} and rebuilt")
        try:
            return self._connect()
        except sqlite3.DatabaseError as err:
            self.warnings.append(f"parse cache disabled: cannot rebuild {self.path}: {err}")
            return None

    def _move_aside(self) -> Path:
        aside = self.path.with_name(f"{self.path.name}.corrupt-{time.strftime('%Y%m%dT%H%M%S')}-{os.getpid()}")
        os.replace(self.path, aside)
        for suffix in ("-wal", "-shm"):
            with contextlib.suppress(FileNotFoundError):
                os.unlink(f"{self.path}{suffix}")
        return aside

    def _disable(self, err: sqlite3.Error) -> None:
        """An error in the middle of a run: carry on without the cache rather than lose the survey.

        A damaged file (not merely a locked or read-only one) is also moved aside, so the next run
        rebuilds it instead of tripping over the same page again.
        """
        with contextlib.suppress(sqlite3.Error):
            self._db.close()
        self._db = None
        self._pending.clear()
        message = f"parse cache disabled for the rest of this run: {err}"
        if not isinstance(err, sqlite3.OperationalError):
            with contextlib.suppress(OSError):
                message += f"; moved to {self._move_aside().name}, the next run rebuilds it"
        self.warnings.append(message)

    @property
    def enabled(self) -> bool:
        return self._db is not None

    # -- lookups and stores ----------------------------------------------------------------------

    def lookup(self, key: FileKey) -> Entry | None:
        """The cached outcome for a file whose path, size and mtime_ns match a row; never opens the file."""
        if self._db is None:
            return None
        try:
            return _lookup(self._db, key, self.reader_version)
        except sqlite3.DatabaseError as err:
            self._disable(err)
            return None

    def rows_under(self, directory: str) -> dict[bytes, tuple]:
        """The rows of this reader version for every file under the absolute ``directory``, by path (as bytes),
        each a tuple of :data:`CACHED_ROW`, in one query (a range of the primary key); sound rows only, so a
        damaged one is a miss. No record is read."""
        if self._db is None:
            return {}
        prefix = os.fsencode(directory.rstrip("/") + "/")
        end = prefix[:-1] + b"0"  # the first byte string after every one that starts with prefix ("0" follows "/")
        query = (f"SELECT {', '.join(CACHED_ROW)} FROM parsed "
                 f"WHERE path >= ? AND path < ? AND reader_version = ? AND {_SOUND}")
        try:
            try:  # sqlite3's own decoding first (a Python text factory costs a call per value), and...
                self._db.text_factory = str
                return {row[0]: row for row in self._db.execute(query, (prefix, end, self.reader_version))}
            except sqlite3.OperationalError as err:  # ...only for text that is not UTF-8 (damage) the careful one
                if "decode" not in str(err):
                    raise
                self._db.text_factory = _text
                return {row[0]: row for row in self._db.execute(query, (prefix, end, self.reader_version))
                        if not any(isinstance(value, bytes) for value in row[4:])}
            finally:
                self._db.text_factory = _text
        except sqlite3.DatabaseError as err:
            self._disable(err)
            return {}

    def find(self, digest: str) -> Entry | None:
        """The cached outcome for any file with these bytes (step 2 of the lookup)."""
        if self._db is None:
            return None
        try:
            return _find(self._db, digest, self.reader_version)
        except sqlite3.DatabaseError as err:
            self._disable(err)
            return None

    def index(self) -> DigestIndex | None:
        """What a worker process needs for :meth:`find` (it opens its own read-only connection)."""
        return DigestIndex(str(self.path), self.reader_version) if self._db is not None else None

    def store(self, key: FileKey, digest: str, entry: Entry) -> None:
        """Queue the outcome for the file at ``key``: parsed now, or found by its digest."""
        if self._db is not None:
            self._queue(key, digest, entry)

    def _queue(self, key: FileKey, digest: str, entry: Entry) -> None:
        # ASCII JSON, and a reason naming an undecodable file name in its printable form: SQLite text is UTF-8
        if entry.ok:
            if entry.row is None or len(entry.row) != len(ROW_COLUMNS):
                raise ValueError("a read file is stored with its survey row")
            payload, row = json.dumps(entry.record), entry.row
            if not all(_utf8(value) for value in row):  # a name read with undecodable bytes: not kept, read again
                return
        else:
            payload = display(entry.reason)
            row = (None,) * (len(ROW_COLUMNS) - 2) + ("error", payload)
        self._pending.append((os.fsencode(key.path), key.size, key.mtime_ns, digest, self.reader_version,
                              int(entry.ok), *row, payload))
        if len(self._pending) >= self.batch_size:
            self.flush()

    def flush(self) -> None:
        """Write the queued rows in one transaction."""
        if self._db is None or not self._pending:
            return
        try:
            with _transaction(self._db):
                self._db.execute("BEGIN IMMEDIATE")
                self._db.executemany(_INSERT, self._pending)
                self._db.execute("COMMIT")
        except sqlite3.DatabaseError as err:
            self._disable(err)
            return
        self._pending.clear()

    def close(self) -> None:
        self.flush()
        if self._db is not None:
            self._db.close()
            self._db = None

    def __enter__(self) -> ParseCache:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


_INSERT = f"INSERT OR REPLACE INTO parsed VALUES ({', '.join('?' * (7 + len(ROW_COLUMNS)))})"


@contextlib.contextmanager
def _transaction(db: sqlite3.Connection):
    """Roll back an explicit transaction that failed half-way, then re-raise."""
    try:
        yield
    except BaseException:
        if db.in_transaction:
            with contextlib.suppress(sqlite3.Error):
                db.execute("ROLLBACK")
        raise


def versioned(reader_version: str) -> str:
    return f"schema{SCHEMA_VERSION}:{reader_version}"


def _lookup(db: sqlite3.Connection, key: FileKey, reader_version: str) -> Entry | None:
    row = db.execute(
        "SELECT ok, payload FROM parsed WHERE path = ? AND size = ? AND mtime_ns = ? AND reader_version = ?",
        (os.fsencode(key.path), key.size, key.mtime_ns, reader_version),
    ).fetchone()
    return None if row is None else _entry(*row)


def _find(db: sqlite3.Connection, digest: str, reader_version: str) -> Entry | None:
    row = db.execute(
        "SELECT ok, payload FROM parsed WHERE digest = ? AND reader_version = ? LIMIT 1", (digest, reader_version)
    ).fetchone()
    return None if row is None else _entry(*row)


#: read-only connections of this process, by (pid, database path): a connection never crosses a fork
_READONLY: dict[tuple[int, str], sqlite3.Connection] = {}


@dataclass(frozen=True)
class DigestIndex:
    """Read-only lookups on a connection of this process's own: step 2 from a worker process (workers never
    write), and a file's record read back when a later stage needs it (:meth:`lookup`)."""

    path: str
    reader_version: str

    def _db(self) -> sqlite3.Connection:
        db = _READONLY.get((os.getpid(), self.path))
        if db is None:
            db = sqlite3.connect(f"{Path(self.path).as_uri()}?mode=ro", uri=True, timeout=BUSY_TIMEOUT_S)
            db.text_factory = _text
            _READONLY[(os.getpid(), self.path)] = db
        return db

    def find(self, digest: str) -> Entry | None:
        try:
            return _find(self._db(), digest, self.reader_version)
        except sqlite3.Error:
            return None  # the parent reports a damaged cache; here the file is simply parsed

    def lookup(self, key: FileKey) -> Entry | None:
        """As :meth:`ParseCache.lookup`; None also when the cache cannot be read (the file is read again)."""
        try:
            return _lookup(self._db(), key, self.reader_version)
        except sqlite3.Error:
            return None


def _text(data: bytes) -> str | bytes:
    """A TEXT value as str, or its bytes when they are not UTF-8 (damage): sqlite3's own decoding would
    raise an OperationalError, taken for a locked file, that disabled the cache on every later run. A
    row holding bytes is a miss (:func:`_entry`): read again and rewritten."""
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data


def _utf8(value: Any) -> bool:
    """Whether SQLite can hold ``value`` (text must be UTF-8; a str with lone surrogates is not)."""
    if isinstance(value, str):
        try:
            value.encode("utf-8")
        except UnicodeEncodeError:
            return False
    return True


def _entry(ok: Any, payload: Any) -> Entry | None:
    """The row as an Entry, or None (a miss) for a row that cannot be one: a damaged or foreign value must
    cost a re-read, never a crash. Whether the record makes a Calculation is the caller's check."""
    if ok == 0 and isinstance(payload, str):
        return Entry(False, reason=payload)
    if ok != 1 or not isinstance(payload, str):
        return None
    try:
        record = json.loads(payload)
    except (ValueError, RecursionError):  # invalid JSON, or nested too deeply for the decoder
        return None
    return Entry(True, record=record) if isinstance(record, dict) else None

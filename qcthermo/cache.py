"""The parse cache: what a reader made of each log, kept in SQLite so a second survey reads no log.

One table, one row per absolute path. The key is (path, size, mtime_ns, content digest, reader version);
the value is the normalised record as JSON (``Calculation.to_dict()``) or, for a file the reader
refused, its one-line reason, so a bad file is not parsed again either. No pickle: the file holds
nothing but text and numbers.

Lookup (:meth:`ParseCache.lookup`):

1. path, size and mtime_ns match a row of the same reader version: the row is trusted without opening
   the file (a warm survey only stats the files);
2. otherwise the file is hashed (BLAKE2b, streamed) and any row with that digest and reader version is
   reused, whatever its path (a touched, copied or moved file is not parsed again); the row for this
   path is brought up to date;
3. otherwise the caller parses the file and :meth:`ParseCache.store` records the result.

Several processes may use the file at once: WAL journal, a busy timeout, and writes batched into
short ``BEGIN IMMEDIATE`` transactions by the parent process (workers never write). A file that is not
a database (or a damaged one) is moved aside and rebuilt, with a one-line warning in
:attr:`ParseCache.warnings`.
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
from typing import Any

#: bumped when the layout of the table or of the stored JSON changes
SCHEMA_VERSION = 1
CACHE_FILE = "parse-cache.sqlite"
#: seconds a writer waits for another process's transaction before giving up
BUSY_TIMEOUT_S = 30.0

_SCHEMA = """
CREATE TABLE IF NOT EXISTS parsed (
    path TEXT PRIMARY KEY,
    size INTEGER NOT NULL,
    mtime_ns INTEGER NOT NULL,
    digest TEXT NOT NULL,
    reader_version TEXT NOT NULL,
    ok INTEGER NOT NULL,
    payload TEXT NOT NULL
);
CREATE INDEX IF NOT EXISTS parsed_by_digest ON parsed (digest, reader_version);
"""


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


@dataclass(frozen=True)
class FileKey:
    """Where a file is and what it looked like when it was parsed: absolute path, bytes, mtime in ns."""

    path: str
    size: int
    mtime_ns: int

    @classmethod
    def of(cls, path: str | os.PathLike) -> FileKey:
        st = os.stat(path)
        return cls(os.path.abspath(path), st.st_size, st.st_mtime_ns)


@dataclass(frozen=True)
class Entry:
    """A cached outcome: ``ok`` with ``record`` (the Calculation dict), or not ok with ``reason``."""

    ok: bool
    record: dict[str, Any] | None = None
    reason: str = ""


class ParseCache:
    """The SQLite parse cache at ``directory / parse-cache.sqlite`` for one reader version.

    Use as a context manager; :meth:`store` queues results, :meth:`flush` (also on exit and every
    ``batch_size`` stores) writes them in one transaction. Hashes computed during lookups are counted
    in :attr:`hashed` (a warm survey hashes nothing).
    """

    def __init__(self, reader_version: str, directory: str | os.PathLike | None = None, batch_size: int = 64):
        self.reader_version = f"schema{SCHEMA_VERSION}:{reader_version}"
        self.directory = Path(directory) if directory is not None else default_cache_dir()
        self.path = self.directory / CACHE_FILE
        self.batch_size = batch_size
        self.warnings: list[str] = []
        self.hashed = 0
        self._pending: list[tuple] = []
        self._db: sqlite3.Connection | None = self._open()

    # -- opening, and recovering from a damaged file --------------------------------------------

    def _connect(self) -> sqlite3.Connection:
        # isolation_level=None: autocommit, so every write transaction is an explicit BEGIN IMMEDIATE
        # (a deferred read-then-write transaction can fail under WAL without waiting for the lock).
        db = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_S, isolation_level=None)
        db.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        db.execute("PRAGMA journal_mode = WAL")
        db.execute("PRAGMA synchronous = NORMAL")
        with _transaction(db):
            db.executescript("BEGIN IMMEDIATE;" + _SCHEMA + "COMMIT;")
        db.execute("SELECT count(*) FROM parsed WHERE rowid = 1").fetchone()
        return db

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
            self.warnings.append(f"parse cache {self.path} was damaged ({err}); moved to {aside.name} and rebuilt")
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
        """A damaged page found mid-run: carry on without the cache rather than lose the survey."""
        self.warnings.append(f"parse cache disabled for the rest of this run: {err}")
        with contextlib.suppress(sqlite3.Error):
            self._db.close()
        self._db = None
        self._pending.clear()

    @property
    def enabled(self) -> bool:
        return self._db is not None

    # -- lookups and stores ----------------------------------------------------------------------

    def lookup(self, key: FileKey) -> tuple[Entry | None, str | None]:
        """(entry, digest): the cached outcome for ``key`` or None, and the digest if one was computed.

        The file is opened only when no row matches path, size and mtime_ns.
        """
        if self._db is None:
            return None, None
        try:
            row = self._db.execute(
                "SELECT ok, payload FROM parsed WHERE path = ? AND size = ? AND mtime_ns = ? AND reader_version = ?",
                (key.path, key.size, key.mtime_ns, self.reader_version),
            ).fetchone()
            if row is not None:
                return _entry(*row), None
            digest = file_digest(key.path)
            self.hashed += 1
            row = self._db.execute(
                "SELECT ok, payload FROM parsed WHERE digest = ? AND reader_version = ? LIMIT 1",
                (digest, self.reader_version),
            ).fetchone()
        except sqlite3.DatabaseError as err:
            self._disable(err)
            return None, None
        if row is None:
            return None, digest
        entry = _entry(*row)
        self._queue(key, digest, entry)
        return entry, digest

    def store(self, key: FileKey, digest: str | None, entry: Entry) -> None:
        """Queue the outcome of parsing the file at ``key`` (``digest`` None: hash it now)."""
        if self._db is None:
            return
        if digest is None:
            try:
                digest = file_digest(key.path)
            except OSError:
                return  # the file went away: nothing worth remembering
            self.hashed += 1
        self._queue(key, digest, entry)

    def _queue(self, key: FileKey, digest: str, entry: Entry) -> None:
        payload = json.dumps(entry.record) if entry.ok else entry.reason
        self._pending.append((key.path, key.size, key.mtime_ns, digest, self.reader_version, int(entry.ok), payload))
        if len(self._pending) >= self.batch_size:
            self.flush()

    def flush(self) -> None:
        """Write the queued rows in one transaction."""
        if self._db is None or not self._pending:
            return
        try:
            with _transaction(self._db):
                self._db.execute("BEGIN IMMEDIATE")
                self._db.executemany("INSERT OR REPLACE INTO parsed VALUES (?, ?, ?, ?, ?, ?, ?)", self._pending)
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


def _entry(ok: int, payload: str) -> Entry:
    return Entry(True, record=json.loads(payload)) if ok else Entry(False, reason=payload)

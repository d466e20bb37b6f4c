"""Survey a directory of quantum-chemistry logs: find them, read them in parallel, audit each one.

``survey(directory)`` walks the tree, reads every candidate file with the reader (through the parse
cache, :mod:`qcthermo.cache`), and gives one row per file with its status: "ok", "warning" (usable,
but look: abnormal termination, unconverged optimisation, unexpected imaginary modes, unknown
multiplicity) or "error" (unreadable, with the reader's one-line reason). Decisions are in
docs/survey.md.
"""

from __future__ import annotations

import contextlib
import dataclasses
import functools
import gc
import hashlib
import importlib
import importlib.metadata
import importlib.util
import inspect
import multiprocessing
import operator
import os
import signal
import stat
import sys
import tracemalloc
from collections import Counter
from collections.abc import Callable, Iterator, Mapping
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, NamedTuple

import numpy as np

from . import __version__
from . import cache as parse_cache
from .cache import ROW_COLUMNS, DigestIndex, Entry, FileKey, ParseCache, default_cache_dir
from .callable_module import make_callable
from .errors import LogReadError, QcthermoError
from .fileio import display
from .progress import ProgressBar
from .records import JOB_TYPES, Calculation

if TYPE_CHECKING:
    from .cluster import Target

#: file names (case-insensitive endings) read as logs; the reader undoes gzip itself
LOG_SUFFIXES = (".out", ".log", ".output", ".nwo")
#: compressed logs: the reader recognises gzip, bzip2 and xz by their content (readers/source.py)
CANDIDATE_SUFFIXES = LOG_SUFFIXES + tuple(s + c for s in LOG_SUFFIXES for c in (".gz", ".bz2", ".xz"))
#: directory names never entered (besides hidden ones and virtual environments)
SKIPPED_DIRS = frozenset({"__pycache__", "node_modules", "site-packages"})
#: columns of the survey table (docs/survey.md, "Columns"): the path, then what the parse cache keeps of each
#: file (qcthermo.cache.ROW_COLUMNS: program, program_version, job_types, method, basis, solvent_model, charge,
#: multiplicity, formula, natoms, E_elec_Eh, lowest_frequency_cm1, n_imaginary, normal_termination, status, reason)
COLUMNS = ("path", *(name for name, _ in ROW_COLUMNS))
_STATUS, _REASON, _TERMINATION = COLUMNS.index("status"), COLUMNS.index("reason"), COLUMNS.index("normal_termination")
_METHOD, _BASIS = COLUMNS.index("method"), COLUMNS.index("basis")
#: most files sent to a worker at once (small enough to keep both cores busy to the end)
MAX_CHUNK = 8

Reader = Callable[[str], Calculation]


# -- finding the logs ------------------------------------------------------------------------------


class Candidate(NamedTuple):
    """A file to read: its path relative to the surveyed directory (POSIX form) and its stat key;
    ``skipped`` says why it is not read (it is no regular file), None for a file to read."""

    relpath: str
    key: FileKey
    skipped: str | None = None


#: what a name of a log may stand for besides a regular file, by stat.S_IFMT
_SPECIAL_KINDS = {stat.S_IFIFO: "a named pipe", stat.S_IFCHR: "a character device", stat.S_IFBLK: "a block device",
                  stat.S_IFSOCK: "a socket", stat.S_IFDIR: "a directory"}
#: kernel file systems whose "regular" files are no data on disk: some never end (/proc/self/pagemap)
_KERNEL_DIRS = ("/proc", "/sys")


def _not_regular(path: str) -> str | None:
    """Why ``path`` (named like a log) is not read, or None for a regular file: only regular files are read,
    so that a pipe, a device or a kernel file never hangs the survey (docs/survey.md, "Which files")."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        return "not read: a symbolic link to nothing (dangling)" if os.path.islink(path) else "not read: gone"
    except OSError as err:
        return f"not read: cannot stat ({err.strerror})"
    return _not_a_log(st, os.path.realpath(path))


def _not_a_log(st: os.stat_result, real: str) -> str | None:
    """Why a file of this stat, whose real path is ``real``, is not read; None for a regular file elsewhere than
    the kernel's file systems."""
    if not stat.S_ISREG(st.st_mode):
        return f"not read: {_SPECIAL_KINDS.get(stat.S_IFMT(st.st_mode), 'a special file')}, not a regular file"
    return f"not read: a kernel file ({real}), not a log" if _in_kernel_dir(real) else None


def _in_kernel_dir(real: str) -> bool:
    return any(real == d or real.startswith(d + "/") for d in _KERNEL_DIRS)


def _own_outputs() -> set[tuple[int, int]]:
    """(device, inode) of this process's standard output and error when they are regular files: a log of
    the run itself (`qcthermo run . > run.log`) is never read as a log."""
    own = set()
    for fd in (1, 2):
        try:
            st = os.fstat(fd)
        except OSError:
            continue
        if stat.S_ISREG(st.st_mode):
            own.add((st.st_dev, st.st_ino))
    return own


def find_candidates(
    root: str | os.PathLike, skip: tuple[str | os.PathLike, ...] = ()
) -> tuple[list[Candidate], list[str]]:
    """All candidate logs under ``root``, sorted by relative path, and notes on directories not listed.

    Hidden files and directories, virtual environments (a ``pyvenv.cfg`` inside), :data:`SKIPPED_DIRS`
    and the directories in ``skip`` (the cache) are left out. Symbolic links are followed, each
    directory entered once (by device and inode), so a link loop ends.
    """
    root = Path(root)
    seen: set[tuple[int, int]] = set()
    for path in skip:
        try:
            st = os.stat(path)
        except OSError:
            continue
        seen.add((st.st_dev, st.st_ino))
    found: list[Candidate] = []
    notes: list[str] = []
    _walk(root, "", seen, _own_outputs(), found, notes)
    found.sort(key=operator.itemgetter(0))
    return found, notes


def _walk(root: Path, prefix: str, seen: set[tuple[int, int]], own: set[tuple[int, int]], found: list[Candidate],
          notes: list[str]) -> None:
    """Add the candidates of folder ``root / prefix`` and of its subfolders to ``found``.

    Per file of a campaign (100,000 of them) this is the costliest step of a warm survey, so a plain file (no
    symbolic link) costs one stat, scandir's, and string work; its folder's real path, known once, says
    whether it lies in a kernel file system. A link is followed and resolved (:func:`_not_regular`).
    """
    directory = root / prefix if prefix else root
    try:
        st = directory.stat()
        if (st.st_dev, st.st_ino) in seen:
            return
        seen.add((st.st_dev, st.st_ino))
        with os.scandir(directory) as it:
            entries = sorted(it, key=lambda e: e.name)
    except OSError as err:
        notes.append(f"{prefix or '.'}: cannot list directory ({err.strerror})")
        return
    absolute, real = os.path.abspath(directory), os.path.realpath(directory)
    absolute, in_kernel = absolute.rstrip("/") + "/", _in_kernel_dir(real)
    for entry in entries:
        name = entry.name
        if name.startswith("."):
            continue
        relpath = f"{prefix}/{name}" if prefix else name
        try:
            is_dir = entry.is_dir()
        except OSError:
            is_dir = False
        if is_dir:
            if name not in SKIPPED_DIRS and not os.path.exists(os.path.join(entry.path, "pyvenv.cfg")):
                _walk(root, relpath, seen, own, found, notes)
            continue
        if not name.lower().endswith(CANDIDATE_SUFFIXES):
            continue
        path = absolute + name
        try:
            link = entry.is_symlink()
            st = entry.stat()  # a pipe or device too: its row says why it is not read
        except OSError as err:  # gone since it was listed, no permission to stat it, a dangling link
            st, skipped = None, _not_regular(path)
            if skipped is None:  # back since: still, nothing sure to read
                skipped = f"not read: cannot stat ({err.strerror})"
        else:
            skipped = _not_regular(path) if link else \
                _not_a_log(st, os.path.join(real, name)) if in_kernel or not stat.S_ISREG(st.st_mode) else None
        if skipped is not None:
            found.append(Candidate(relpath, FileKey(path, 0, 0), skipped))
        elif own and (st.st_dev, st.st_ino) in own:
            notes.append(f"{relpath}: not read: it is this command's own output (standard output or error)")
        else:
            found.append(Candidate(relpath, FileKey(path, st.st_size, st.st_mtime_ns)))


# -- reading, in this process or in workers ------------------------------------------------------


def default_reader(path: str) -> Calculation:
    """``qcthermo.read_log``, imported on first use (a fully cached survey never imports the parsers)."""
    from .readers import read_log

    return read_log(path)


def reader_version(reader: Reader | None = None) -> str:
    """A string that changes whenever the reader's results may change, to invalidate the cache.

    qcthermo's version, cclib's installed version, and a digest of the reader's source: every file of
    the ``qcthermo.readers`` package for the default reader (so any edit to a reader or a version
    constant in it counts), the defining file and name of any other reader; and a digest of what makes
    the survey row the cache keeps of each file (this module's audit, records.py's formula and counts).
    """
    digest = hashlib.blake2b(digest_size=8)
    if reader is None or reader is default_reader:
        spec = importlib.util.find_spec("qcthermo.readers")
        locations = list(spec.submodule_search_locations or []) if spec else []
        sources = sorted(p for loc in locations for p in Path(loc).rglob("*.py"))
        name = "qcthermo.readers"
    else:
        try:
            sources = [Path(inspect.getsourcefile(reader) or "")]
        except TypeError:
            sources = []
        name = f"{getattr(reader, '__module__', '')}.{getattr(reader, '__qualname__', repr(reader))}"
    for source in [*sources, Path(__file__), Path(__file__).with_name("records.py")]:
        if source.is_file():
            digest.update(source.read_bytes())
    try:
        cclib_version = importlib.metadata.version("cclib")
    except importlib.metadata.PackageNotFoundError:
        cclib_version = "none"
    return f"qcthermo-{__version__}:cclib-{cclib_version}:{name}:{digest.hexdigest()}"


class Outcome(NamedTuple):
    """What became of one file: kind "ok" (payload: the Calculation dict), "error" (payload: the reason,
    cached) or "failure" (payload: the reason; not cached, it may not happen again: out of memory, a dead
    worker, a file that could not be opened). ``digest`` when the file was hashed; ``source`` "parsed"
    (the reader ran), "digest" (found in the cache by its bytes) or "unread"."""

    kind: str
    payload: Any
    digest: str | None = None
    source: str = "parsed"


def parse_one(reader: Reader, path: str) -> tuple[str, Any]:
    """(kind, payload) of running the reader on one file; never raises."""
    try:
        calc = reader(path)
    except LogReadError as err:
        return "error", err.reason
    except MemoryError:
        return "failure", "ran out of memory while reading"
    except Exception as err:  # a reader bug must not stop the batch: report it on this file's row
        return "error", _one_line(f"reader failed unexpectedly: {type(err).__name__}: {err}")
    return "ok", calc.to_dict()


_NUMBER = (int, float)
_NONE = type(None)
#: what each field of a cached ``Calculation.to_dict()`` may be (JSON types; lists checked item by item); a
#: field not listed here (added since) is left to Calculation.from_dict
_RECORD_TYPES: dict[str, tuple[type, ...]] = {
    "path": (str,), "program": (str,), "symbols": (list,), "coordinates": (list,), "charge": (int,),
    "multiplicity": (int, _NONE), "energy": (*_NUMBER, _NONE), "frequencies": (list, _NONE),
    "normal_modes": (list, _NONE),
    "job_types": (list,), "normal_termination": (bool, _NONE), "optimization_converged": (bool, _NONE),
    "program_version": (str, _NONE), "method": (str, _NONE), "basis": (str, _NONE),
    "solvent_model": (str, _NONE), "solvent": (str, _NONE), "s2": (*_NUMBER, _NONE),
    "gas_energy": (*_NUMBER, _NONE), "thermo_printed": (dict,), "notes": (list,),
}
_STRING_LISTS = ("symbols", "job_types", "notes")
_CALCULATION_FIELDS = frozenset(f.name for f in dataclasses.fields(Calculation))


def cached_calculation(record: dict[str, Any]) -> Calculation | None:
    """The Calculation of a record read back from the cache, or None when the record is not one (keys
    missing or unknown, a value of the wrong kind, arrays of the wrong shape): a damaged or foreign row
    is a cache miss, never a crash or a wrong row."""
    if set(record) != _CALCULATION_FIELDS:
        return None
    for name, kinds in _RECORD_TYPES.items():
        value = record.get(name)
        if not isinstance(value, kinds) or (isinstance(value, bool) and bool not in kinds):
            return None
    if not all(isinstance(x, str) for name in _STRING_LISTS for x in record[name]):
        return None
    try:
        calc = Calculation.from_dict(record)
        ok = calc.coordinates.shape == (calc.natoms, 3) and (calc.frequencies is None or calc.frequencies.ndim == 1)
        ok = ok and (calc.normal_modes is None or (calc.frequencies is not None
                     and calc.normal_modes.shape == (len(calc.frequencies), calc.natoms, 3)))
    except (TypeError, ValueError):
        return None
    return calc if ok else None


def read_one(reader: Reader, path: str, index: Any = None) -> Outcome:
    """Steps 2 and 3 of the cache lookup for one file: hash it and ask ``index`` (anything with
    ``find(digest) -> Entry | None``; None: no cache), else parse it. Never raises."""
    digest = None
    if index is not None and not _beyond_size_cap(path):
        try:
            digest = parse_cache.file_digest(path)
        except OSError as err:
            return Outcome("failure", f"cannot read the file ({err.strerror})", source="unread")
        entry = index.find(digest)
        if entry is not None and (not entry.ok or cached_calculation(entry.record) is not None):
            return Outcome("ok", entry.record, digest, "digest") if entry.ok else \
                Outcome("error", entry.reason, digest, "digest")
    kind, payload = parse_one(reader, path)
    return Outcome(kind, payload, digest)


def _beyond_size_cap(path: str) -> bool:
    """True for a file larger than the readers' size cap (docs/readers.md): it is not hashed, since the
    reader refuses it from its size alone (a multi-GB file would otherwise be read once to no end)."""
    from .readers.source import max_log_bytes

    try:
        return os.path.getsize(path) > max_log_bytes()
    except OSError:
        return False


def read_chunk(reader: Reader, paths: list[str], index: Any = None) -> list[Outcome]:
    """:func:`read_one` over a few files (the unit of work sent to a worker process)."""
    return [read_one(reader, p, index) for p in paths]


def _one_line(text: str) -> str:
    return " ".join(str(text).split())


def _chunks(items: list, jobs: int) -> list[list]:
    size = max(1, min(MAX_CHUNK, len(items) // (jobs * 8)))
    return [items[i : i + size] for i in range(0, len(items), size)]


def _pool(workers: int) -> ProcessPoolExecutor:
    # fork shares the parent's already-imported reader (cclib takes most of a second to import); only on
    # Linux, where it is safe (macOS system libraries may crash in a forked child)
    context = multiprocessing.get_context("fork" if sys.platform.startswith("linux") else None)
    return ProcessPoolExecutor(max_workers=workers, mp_context=context, initializer=_start_worker)


def _start_worker() -> None:
    """Undo what a forked worker should not inherit from the parent.

    Ctrl-C is the parent's to handle (one message, not a traceback per worker), and allocation tracing
    a parent may have switched on to measure itself would slow every worker several-fold.
    """
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    tracemalloc.stop()


def read_parallel(reader: Reader, paths: list[str], jobs: int, report: Callable[[int, Outcome], None],
                  index: DigestIndex | None = None) -> None:
    """Read ``paths`` with ``jobs`` worker processes; ``report(k, outcome)`` as each file is done.

    A worker that dies (a crash in a compiled library, the out-of-memory killer) breaks the pool; the
    files it held are read again one at a time, each in a fresh pool, so only the file that kills its
    worker is reported as a failure.
    """
    indexed = list(enumerate(paths))
    retry: list[tuple[int, str]] = []
    pool = _pool(min(jobs, len(indexed)))
    try:
        futures = {pool.submit(read_chunk, reader, [p for _, p in chunk], index): chunk
                   for chunk in _chunks(indexed, jobs)}
        for future in as_completed(futures):
            chunk = futures[future]
            try:
                outcomes = future.result()
            except Exception:  # BrokenProcessPool, or a result that could not be sent back
                retry.extend(chunk)
                continue
            for (k, _), outcome in zip(chunk, outcomes, strict=True):
                report(k, outcome)
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
    for k, path in sorted(retry):
        report(k, _read_isolated(reader, path, index))


def _read_isolated(reader: Reader, path: str, index: DigestIndex | None) -> Outcome:
    with _pool(1) as pool:
        try:
            return pool.submit(read_one, reader, path, index).result()
        except Exception as err:
            reason = f"the reading process died ({type(err).__name__}); the file may be damaged"
            return Outcome("failure", _one_line(reason))


# -- auditing one file ---------------------------------------------------------------------------


def audit(calc: Calculation) -> list[str]:
    """The warnings a chemist wants to see before using this file; empty when nothing is wrong."""
    reasons = []
    if calc.normal_termination is False:
        reasons.append("abnormal termination")
    if "optimization" in calc.job_types and calc.optimization_converged is False:
        reasons.append("optimisation not converged")
    if calc.frequencies is not None:
        n_imag = calc.n_imaginary
        if "saddle-search" in calc.job_types:
            if n_imag != 1:
                reasons.append(f"saddle search with {n_imag} imaginary modes (a transition state has exactly 1)")
        elif n_imag:
            lowest = float(calc.frequencies.min())
            reasons.append(f"{n_imag} imaginary mode{'s' * (n_imag > 1)} (lowest {lowest:.1f} cm^-1) "
                           "on a job that is not a saddle search")
    if calc.multiplicity is None:
        reasons.append("multiplicity unknown")
    if not np.all(np.isfinite(calc.coordinates)):
        # some programs (xTB --hess) print no geometry; without one there is no rotational partition function
        reasons.append("no geometry in the file (thermochemistry impossible without the coordinate file)")
    return reasons


def is_transition_state(calc: Calculation, imaginary_threshold: float) -> bool:
    """A saddle-search job, or a frequency job with exactly one imaginary mode of at least
    ``imaginary_threshold`` cm^-1 (a transition-state frequency run: too large for the noise a minimum's
    imaginary-mode policy inverts)."""
    if "saddle-search" in calc.job_types:
        return True
    freqs = calc.frequencies
    imaginary = freqs[freqs < 0] if freqs is not None else freqs
    return imaginary is not None and len(imaginary) == 1 and abs(imaginary[0]) >= imaginary_threshold


def job_types_label(job_types) -> str:
    """"optimization+frequencies": known kinds in workflow order, then any others alphabetically."""
    known = [j for j in JOB_TYPES if j in job_types]
    return "+".join(known + sorted(set(job_types) - set(JOB_TYPES)))


def calculation_row(relpath: str, calc: Calculation) -> dict[str, Any]:
    """The survey row of a file that was read."""
    reasons = audit(calc)
    freqs = calc.frequencies
    return {
        "path": relpath,
        "program": calc.program,
        "program_version": calc.program_version,
        "job_types": job_types_label(calc.job_types),
        "method": calc.method,
        "basis": calc.basis,
        "solvent_model": calc.solvent_model,
        "charge": calc.charge,
        "multiplicity": calc.multiplicity,
        "formula": calc.formula,
        "natoms": calc.natoms,
        "E_elec_Eh": None if calc.energy is None else float(calc.energy),
        "lowest_frequency_cm1": float(freqs.min()) if freqs is not None and len(freqs) else None,
        # no frequency job: blank, not 0 (0 would read as "checked: a minimum")
        "n_imaginary": None if freqs is None else calc.n_imaginary,
        "normal_termination": calc.normal_termination,
        "status": "warning" if reasons else "ok",
        "reason": "; ".join(reasons),
    }


def error_row(relpath: str, reason: str) -> dict[str, Any]:
    """The survey row of a file that could not be read."""
    row = dict.fromkeys(COLUMNS)
    row.update(path=relpath, status="error", reason=reason)
    return row


# -- the survey ----------------------------------------------------------------------------------


class Calculations(Mapping[str, Calculation]):
    """Relative path -> Calculation of a survey's readable files, each made when it is first asked for.

    A file read in this survey holds its Calculation already; a file served by the parse cache holds only its
    key until then, so a warm survey of 100,000 files decodes no record and builds no Calculation. Its record
    is read back from the cache on first use (checked: a damaged or replaced one means the file is read again
    and its cache row rewritten), and kept. ``Calculation.path`` is ``directory / relative path``.
    """

    def __init__(self, root: Path, items: dict[str, Calculation | FileKey], reader: Reader | None = None,
                 index: DigestIndex | None = None, reopen: Callable[[], ParseCache] | None = None):
        """``items``: relative path -> Calculation, or the FileKey of a cached one; ``index``: the cache to read
        records back from; ``reopen``: opens it to rewrite a damaged row."""
        self._root, self._items, self._reader = root, items, reader or default_reader
        self._index, self._reopen = index, reopen

    def __getitem__(self, relpath: str) -> Calculation:
        item = self._items[relpath]
        if isinstance(item, FileKey):
            item = self._items[relpath] = self._load(relpath, item)
        return item

    def __iter__(self) -> Iterator[str]:
        return iter(self._items)

    def __len__(self) -> int:
        return len(self._items)

    def __repr__(self) -> str:
        return f"<{len(self)} calculations of {display(str(self._root))}>"

    def _load(self, relpath: str, key: FileKey) -> Calculation:
        entry = self._index.lookup(key) if self._index is not None else None
        calc = cached_calculation(entry.record) if entry is not None and entry.ok else None
        if calc is not None:
            return dataclasses.replace(calc, path=str(self._root / relpath))
        outcome = read_one(self._reader, key.path)
        if outcome.kind != "ok":
            raise QcthermoError(f"{display(relpath)}: its cached record is damaged and the file can no longer be "
                                f"read: {display(outcome.payload)}")
        calc = Calculation.from_dict(dict(outcome.payload, path=str(self._root / relpath)))
        if self._reopen is not None:
            with self._reopen() as store, contextlib.suppress(OSError):
                store.store(FileKey.of(key.path), parse_cache.file_digest(key.path),
                            cache_entry(outcome.payload, calculation_row(relpath, calc)))
        return calc


def cache_entry(record: dict[str, Any], row: dict[str, Any]) -> Entry:
    """What the parse cache keeps of a file that was read: its record, and its survey row but for the path."""
    return Entry(True, record=record, row=tuple(row.values())[1:])


def _row(values: tuple) -> dict[str, Any]:
    """A row of :attr:`SurveyResult.table` as a dict of :data:`COLUMNS` (normal_termination as a bool: the
    cache holds 0 or 1)."""
    row = dict(zip(COLUMNS, values, strict=True))
    if values[_TERMINATION] is not None:
        row["normal_termination"] = bool(values[_TERMINATION])
    return row


@dataclass
class SurveyResult:
    """What a survey found.

    Attributes:
        directory: the surveyed directory, as given.
        table: one tuple per candidate file, the values of :data:`COLUMNS` in order, sorted by path (what
            :attr:`rows` and :meth:`to_frame` are made of; ``normal_termination`` may be 0 or 1 here).
        calculations: relative path -> Calculation, for the files that were read (status ok or warning); a
            mapping (:class:`Calculations`) that makes each Calculation when it is first asked for; each
            Calculation's ``path`` is ``directory / relative path``.
        errors: relative path -> one-line reason, for the files that could not be read.
        notes: one-line warnings about the survey itself (directories not listed, the cache).
        stats: counts: "files", "parsed" (by the reader), "cached" (served by the cache), "hashed".
    """

    directory: str
    table: list[tuple] = field(default_factory=list, repr=False)
    calculations: Mapping[str, Calculation] = field(default_factory=dict)
    errors: dict[str, str] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    stats: dict[str, int] = field(default_factory=dict)
    _rows: list[dict[str, Any]] | None = field(default=None, init=False, repr=False, compare=False)

    def __repr__(self) -> str:
        """One line for a notebook (the generated one printed every Calculation's arrays)."""
        return f"<SurveyResult of {self.directory}: {self.summary()}; .to_frame() for the table>"

    @property
    def rows(self) -> list[dict[str, Any]]:
        """One dict per candidate file (keys :data:`COLUMNS`), sorted by path; made on first use."""
        if self._rows is None:
            self._rows = [_row(values) for values in self.table]
        return self._rows

    def rows_with(self, status: str) -> list[dict[str, Any]]:
        """The rows of the files with this status ("ok", "warning" or "error"), sorted by path."""
        return [_row(values) for values in self.table if values[_STATUS] == status]

    def count_by(self, column: str) -> Counter:
        """How many files have each value of ``column`` (one of :data:`COLUMNS`)."""
        j = COLUMNS.index(column)
        return Counter(values[j] for values in self.table)

    def counts(self) -> dict[str, int]:
        """{"ok": n, "warning": n, "error": n}."""
        return {"ok": 0, "warning": 0, "error": 0} | self.count_by("status")

    @property
    def exit_status(self) -> int:
        """0 every file read (warnings allowed), 1 some errors but something usable, 2 nothing usable."""
        if not self.calculations:
            return 2
        return 1 if self.errors else 0

    def summary(self) -> str:
        c = self.counts()
        n = len(self.table)
        return f"{n} file{'s' * (n != 1)}: {c['ok']} ok, {c['warning']} warning, {c['error']} error"

    def levels_of_theory(self) -> dict[str, int]:
        """How many readable files each level of theory ("method/basis") has, most common first.

        A lone file at a level nobody else uses (a structure left at a test level) shows up here.
        """
        counts = Counter("/".join(p for p in (v[_METHOD], v[_BASIS]) if p) or "unknown level"
                         for v in self.table if v[_STATUS] != "error")
        return dict(counts.most_common())

    def to_frame(self):
        """The rows as a pandas DataFrame with :data:`COLUMNS` (nullable integer and boolean columns)."""
        import pandas as pd

        frame = pd.DataFrame.from_records(self.table, columns=list(COLUMNS), nrows=len(self.table))
        dtypes = {c: "Int64" for c in ("charge", "multiplicity", "natoms", "n_imaginary")}
        dtypes.update({"E_elec_Eh": "Float64", "lowest_frequency_cm1": "Float64", "normal_termination": "boolean"})
        return frame.astype(dtypes)


def survey(
    directory: str | os.PathLike,
    *,
    jobs: int | None = None,
    cache: bool = True,
    progress: bool = False,
    reader: Reader | None = None,
    scheduler: Any = None,
    workers: int | None = None,
) -> SurveyResult:
    """Read every candidate log under ``directory`` and audit it; see :class:`SurveyResult`.

    Args:
        jobs: worker processes (None: every core; 1: read in this process, no pool).
        cache: use the parse cache (:func:`qcthermo.cache.default_cache_dir`).
        progress: show a progress bar on stderr (only if stderr is a terminal).
        reader: a function path -> Calculation raising LogReadError; default :func:`qcthermo.read_log`.
        scheduler: read on a Dask cluster instead of local processes (:mod:`qcthermo.cluster`): a
            ``distributed.Client``, ``"tcp://HOST:PORT"``, ``"local:N"`` or ``"slurm"|"pbs"|"sge"|"lsf"``
            (with ``workers``); ``jobs`` is then unused. Only files the cache does not hold are sent.

    Raises:
        QcthermoError: ``directory`` does not exist or is not a directory.
    """
    root = Path(directory)
    if not root.is_dir():
        raise QcthermoError(f"{directory}: {'not a directory' if root.exists() else 'no such directory'}")
    reader = reader or default_reader
    jobs, jobs_note = _worker_count(jobs)
    if scheduler is not None:
        from .cluster import target

        jobs = target(scheduler, workers)  # checked before any work; stands for the workers from here on
    cache_dir = default_cache_dir()
    with _without_gc():
        candidates, notes = find_candidates(root, skip=(cache_dir,))
    result = SurveyResult(str(directory), notes=notes + ([jobs_note] if jobs_note and scheduler is None else []))
    found = _Found(root, candidates)
    version = reader_version(reader) if cache and candidates else ""
    store = ParseCache(version, cache_dir) if version else None
    try:
        with ProgressBar(len(candidates), "reading logs", enabled=progress) as bar:
            with _without_gc():
                misses = _from_cache(store, found, bar)
            _read_misses(reader, found, misses, jobs, store, bar)
    finally:
        index = store.index() if store is not None else None  # None when the cache was (or became) disabled
        if store is not None:
            store.close()
            result.notes.extend(store.warnings)
    calculations = {}
    for cand, (kind, item) in zip(candidates, found.items, strict=True):  # in path order
        if kind == "error":
            result.errors[cand.relpath] = item
        else:
            calculations[cand.relpath] = item
    reopen = functools.partial(ParseCache, version, cache_dir) if index is not None else None
    result.table, result.calculations = found.table, Calculations(root, calculations, reader, index, reopen)
    found.stats["files"] = len(candidates)
    result.stats = found.stats
    return result


@contextlib.contextmanager
def _without_gc():
    """No cyclic garbage collection for a while: the walk and the cache lookup make a few tuples and strings
    per file and no cycles, and with 100,000 files the collector's passes over them cost 10-20 % of a warm
    survey. Never around the reading itself: forked workers would inherit the switch."""
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()


def usable_cores() -> int:
    """The cores this process may run on (its CPU affinity, e.g. a batch job's share), at least 1."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):  # not on Linux
        return max(1, os.cpu_count() or 1)


def _worker_count(jobs: int | None) -> tuple[int, str | None]:
    """Worker processes for ``jobs`` (None: every usable core): at most one per core, since reading a log is
    CPU work and more processes only share the cores (and their memory); a note when ``jobs`` is lowered."""
    cores = usable_cores()
    if jobs is None:
        return cores, None
    if jobs > cores:
        return cores, f"jobs = {jobs} lowered to {cores}, the cores this process may use"
    return max(1, jobs), None


class _Found:
    """What a survey has found so far, by candidate: its values of :data:`COLUMNS`, and ("calculation",
    Calculation or FileKey of a cached record) or ("error", reason)."""

    def __init__(self, root: Path, candidates: list[Candidate]):
        self.root, self.candidates = root, candidates
        self.table: list[tuple] = [()] * len(candidates)
        self.items: list[tuple[str, Any]] = [("", None)] * len(candidates)
        self.stats = dict.fromkeys(("files", "parsed", "cached", "hashed"), 0)

    def calculation(self, i: int, calc: Calculation) -> dict[str, Any]:
        """File ``i`` was read now; its row."""
        row = calculation_row(self.candidates[i].relpath, calc)
        self.table[i], self.items[i] = tuple(row.values()), ("calculation", calc)
        return row

    def error(self, i: int, reason: str) -> None:
        self.table[i] = tuple(error_row(self.candidates[i].relpath, reason).values())
        self.items[i] = ("error", reason)


def _from_cache(store: ParseCache | None, found: _Found, bar: ProgressBar) -> list[int]:
    """Fill in the files whose path, size and mtime match a sound row of the cache, all in one query (no record
    decoded: the row's columns are the survey's); return the others (a damaged row among them: read again,
    its row rewritten)."""
    cached = store.rows_under(os.path.abspath(found.root)) if store is not None else {}
    encoding = sys.getfilesystemencoding()  # os.fsencode without its cost per call (100,000 calls)
    misses = []
    for i, cand in enumerate(found.candidates):
        if cand.skipped is not None:
            found.error(i, cand.skipped)
            continue
        hit = cached.get(cand.key.path.encode(encoding, "surrogateescape"))  # path, size, mtime_ns, ok, columns
        if hit is None or hit[1] != cand.key.size or hit[2] != cand.key.mtime_ns:
            misses.append(i)
            continue
        found.table[i] = (cand.relpath, *hit[4:])
        found.items[i] = ("calculation", cand.key) if hit[3] else ("error", hit[-1])
    found.stats["cached"] = len(found.candidates) - len(misses) - sum(c.skipped is not None for c in found.candidates)
    bar.advance(len(found.candidates) - len(misses))
    return misses


def _read_misses(reader: Reader, found: _Found, misses: list[int], jobs: int | Target, store: ParseCache | None,
                 bar: ProgressBar) -> None:
    """Hash, look up by digest, or parse the files step 1 did not find; store and count the outcomes.
    ``jobs``: local worker processes, or the Dask cluster to read on."""
    if not misses:
        return
    candidates, stats = found.candidates, found.stats
    # largest files first, so that no big file is left for one worker at the end while the others idle
    misses = sorted(misses, key=lambda i: -candidates[i].key.size)
    paths = [candidates[i].key.path for i in misses]

    def report(k: int, outcome: Outcome) -> None:
        i = misses[k]
        stats["hashed"] += outcome.digest is not None
        stats["parsed"] += outcome.source == "parsed"
        stats["cached"] += outcome.source == "digest"
        if outcome.kind == "ok":
            # the record becomes a Calculation here once, and its row is computed from it: checked when
            # written, so that a warm survey can trust the row's columns without decoding the record
            calc = Calculation.from_dict(dict(outcome.payload, path=str(found.root / candidates[i].relpath)))
            entry = cache_entry(outcome.payload, found.calculation(i, calc))
        else:
            found.error(i, outcome.payload)
            entry = Entry(False, reason=outcome.payload)
        if store is not None and outcome.digest is not None and outcome.kind != "failure":
            store.store(candidates[i].key, outcome.digest, entry)
        bar.advance()

    index = store if store is not None and store.enabled else None
    if not isinstance(jobs, int):  # a Dask cluster (qcthermo.cluster.Target)
        from .cluster import read_on_cluster

        read_on_cluster(jobs, reader, paths, report, hash_files=index is not None)
        return
    if jobs == 1 or len(paths) == 1:
        for k, path in enumerate(paths):
            report(k, read_one(reader, path, index))
        return
    if reader is default_reader:
        from .readers import preload

        preload()  # the readers and cclib imported once here, shared by the forked workers
    read_parallel(reader, paths, jobs, report, index.index() if index is not None else None)


make_callable(__name__, survey)

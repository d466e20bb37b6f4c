"""Atomic file output, output-directory safety, and the printable form of file names.

Every file qcthermo writes goes through :func:`atomic_open`: written to a temporary file in the same
directory, flushed, then renamed over the target, so a reader never sees half a file and an
interrupted run leaves the old file intact. A write that fails (disk full, read-only directory,
file-size limit) removes its temporary file and raises a one-line :class:`QcthermoError` naming the
file. The rules are in docs/survey.md ("Output files").
"""

from __future__ import annotations

import codecs
import contextlib
import fnmatch
import json
import math
import os
import re
import secrets
import stat
from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import IO, Any

from .errors import QcthermoError

#: the codec error handler that writes an undecodable file-name byte as ``\xNN`` (see :func:`display`)
DISPLAY_ERRORS = "qcthermo-display"
#: what a run writes into --out (export/run_outputs.py): such a file not listed in the folder's run.json is a user's
RUN_OUTPUTS = (
    "run.json", "survey.csv", "species.*", "reactions.*", "rates.csv", "arrhenius.csv", "energy_span.csv",
    "coordinates.xyz", "thermo.yaml", "thermo.dat", "profile*.svg", "profile*.png", "profile*.pdf",
    "dG_T.svg", "arrhenius.svg", "si.md", "si.tex", "report.html", "heats_of_formation.*", "pka.*", "redox.*",
    "concentrations.*", "simulation.*", "rate_control.csv", "tof.csv", "conformers.*", "structures/*.xyz",
)
#: the folders of --out that a run owns (one level deep): it writes, lists in run.json and removes files in them
#: as in --out itself; such a name that is a file or a link is never written into
RUN_FOLDERS = ("structures",)
#: temporary files of :func:`atomic_open`: ``.<name>.<pid>-<16 hex>.tmp``
_TMP = re.compile(r"^\..+\.(\d+)-[0-9a-f]{16}\.tmp$")


def _display_errors(err: UnicodeError) -> tuple[str, int]:
    """Write a lone surrogate as the byte it stands for, ``\\xNN`` (Python's surrogateescape decodes a
    file-name byte that is not UTF-8 to U+DC80..U+DCFF), any other one as ``\\uNNNN``."""
    if not isinstance(err, UnicodeEncodeError):
        raise err
    bad = err.object[err.start : err.end]
    text = "".join(f"\\x{ord(c) - 0xDC00:02x}" if 0xDC80 <= ord(c) <= 0xDCFF else f"\\u{ord(c):04x}" for c in bad)
    return text, err.end


codecs.register_error(DISPLAY_ERRORS, _display_errors)


#: control characters (C0, DEL, C1): a name holding ESC can recolour or erase a terminal, and a workbook refuses them
_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f]")


def display(text: str) -> str:
    """``text`` as it can be printed and stored as UTF-8, on one line and without terminal escapes: a file
    name's undecodable bytes (b"caf\\xe9.out" -> ``caf\\xe9.out``) and control characters (ESC, newline,
    tab: ``\\x1b``, ``\\x0a``, ``\\x09``) as ``\\xNN``; any other text unchanged. Every name shown on the
    terminal or stored as text passes through here (docs/tables.md, "Names")."""
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        text = text.encode("utf-8", DISPLAY_ERRORS).decode("utf-8")
    return _CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", text)


def safe_stems(names: Sequence[str], prefix: str = "") -> list[str]:
    """File stems ``prefix + name`` of ``names``: anything but letters, digits, '.', '-' and '_' replaced by
    '_' (safe on every file system), numbered ``-2``, ``-3`` when two collide, ignoring case as some file
    systems do."""
    stems: list[str] = []
    for name in names:
        base = prefix + (re.sub(r"[^A-Za-z0-9._-]+", "_", name).strip("._") or "unnamed")
        stem, n = base, 1
        while stem.lower() in {x.lower() for x in stems}:
            n += 1
            stem = f"{base}-{n}"
        stems.append(stem)
    return stems


#: first characters that make a spreadsheet take a cell for a formula (OWASP, "CSV Injection")
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def formula_safe(value: Any) -> Any:
    """A text cell for a CSV file: ``value`` prefixed with ``'`` when a spreadsheet would take it for a
    formula (it starts with = + - @, tab or carriage return), as OWASP's CSV-injection guidance asks;
    anything else unchanged. The workbooks store such text as typed string cells instead."""
    return "'" + value if isinstance(value, str) and value.startswith(FORMULA_STARTS) else value


def csv_text(df: Any) -> str:
    """A pandas DataFrame as CSV (no index), every text cell in its :func:`display` form and
    :func:`formula_safe`; numbers, however negative, stay numbers. Every CSV qcthermo writes comes from here."""
    out = df.copy()
    for column in df.select_dtypes(include=["object", "string"]).columns:
        out[column] = df[column].map(lambda v: formula_safe(display(v)) if isinstance(v, str) else v)
    return out.to_csv(index=False)


def printable_frame(df: Any) -> Any:
    """A copy of a pandas DataFrame with every text cell in its :func:`display` form (for binary formats,
    such as a workbook, that no text encoding passes through)."""
    out = df.copy()
    for column in df.select_dtypes(include=["object", "string"]).columns:  # numeric columns keep their dtypes
        out[column] = df[column].map(lambda v: display(v) if isinstance(v, str) else v)
    return out


def json_ready(value: Any) -> Any:
    """``value`` for strict JSON: NaN and infinities become null, numpy values plain ones, file names
    their :func:`display` form; anything else unknown becomes its str."""
    if isinstance(value, dict):
        return {display(str(k)): json_ready(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_ready(v) for v in value]
    if hasattr(value, "tolist"):  # numpy arrays and scalars
        return json_ready(value.tolist())
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, str):
        return display(value)
    if value is None or isinstance(value, (bool, int)):
        return value
    return display(str(value))


def json_text(value: Any, indent: int | None = 1) -> str:
    """Strict JSON (no NaN or Infinity tokens, which most parsers refuse) of ``value``, newline-ended."""
    return json.dumps(json_ready(value), indent=indent, allow_nan=False) + "\n"


def _write_error(path: Path, err: OSError) -> QcthermoError:
    return QcthermoError(f"cannot write {display(str(path))}: {err.strerror or type(err).__name__}")


#: what an existing output path may be besides a regular file: written to as a stream, never renamed over
_STREAMS = {stat.S_IFCHR: "a character device", stat.S_IFIFO: "a named pipe"}
_REFUSED = {stat.S_IFSOCK: "a socket", stat.S_IFBLK: "a block device", stat.S_IFDIR: "a directory"}
#: system folders in which qcthermo never creates or renames a file (their entries are devices and magic links)
_SYSTEM_DIRS = ("/dev", "/proc", "/sys")


def _existing_kind(path: Path) -> int | None:
    """The file type (stat.S_IFMT) of what ``path`` names, links followed; None when nothing is there."""
    try:
        return stat.S_IFMT(os.stat(path).st_mode)
    except (FileNotFoundError, NotADirectoryError):
        return None
    except OSError as err:
        raise _write_error(path, err) from None


def _in_system_dir(path: Path) -> bool:
    parent = os.path.realpath(path.parent)
    return any(parent == d or parent.startswith(d + "/") for d in _SYSTEM_DIRS)


def output_kind(path: str | os.PathLike) -> str:
    """How :func:`atomic_open` writes ``path``: "file" (a new or regular file, replaced atomically) or
    "stream" (a character device such as /dev/null, or a named pipe: opened and written in place, never
    renamed over). Anything else (a socket, a block device, a directory, a regular file reached through
    /dev or /proc such as /dev/stdout redirected to a file) is a one-line QcthermoError."""
    path = Path(path)
    kind = _existing_kind(path)
    if kind in _STREAMS:
        return "stream"
    if kind in _REFUSED:
        raise QcthermoError(f"cannot write {display(str(path))}: it is {_REFUSED[kind]}")
    if kind is not None and kind != stat.S_IFREG:
        raise QcthermoError(f"cannot write {display(str(path))}: it is not a regular file")
    if _in_system_dir(path):
        raise QcthermoError(f"cannot write {display(str(path))}: qcthermo creates no file in "
                            f"{', '.join(_SYSTEM_DIRS)}; name the file itself")
    return "file"


def check_output_file(path: str | os.PathLike, force: bool) -> Path:
    """Refuse, before any work, an output file that cannot be written (:func:`output_kind`) or a regular
    file that exists, unless ``force``. A device or pipe (``--json /dev/null``) is written as a stream."""
    path = Path(path)
    if output_kind(path) == "file" and path.exists() and not force:
        raise QcthermoError(f"{display(str(path))} exists; use --force to overwrite it")
    return path


@contextlib.contextmanager
def _stream(path: Path, mode: str, encoding: str | None) -> Iterator[IO]:
    """``path`` (a device or a pipe) opened for writing as it is: no temporary file, no rename."""
    binary = "b" in mode
    try:
        fd = os.open(path, os.O_WRONLY)
        handle = os.fdopen(fd, "wb" if binary else "w", encoding=None if binary else encoding,
                           errors=None if binary else DISPLAY_ERRORS)
    except OSError as err:
        raise _write_error(path, err) from None
    try:
        with handle:
            yield handle
    except OSError as err:
        raise _write_error(path, err) from None


@contextlib.contextmanager
def atomic_open(path: str | os.PathLike, mode: str = "w", encoding: str | None = "utf-8") -> Iterator[IO]:
    """Open a temporary sibling of ``path`` for writing; rename it onto ``path`` on success.

    Text is written with :data:`DISPLAY_ERRORS`, so a file name that is not UTF-8 comes out in its
    :func:`display` form. An OSError (disk full, permissions, file-size limit) becomes a one-line
    QcthermoError naming ``path``; the temporary file is removed whatever went wrong. A device or a named
    pipe is written as a stream instead (:func:`output_kind`). Inside :func:`staged_outputs` of its
    folder, the rename waits for :meth:`Staging.commit`.
    """
    path = Path(path)
    if path.parent.exists() and not path.parent.is_dir():
        raise QcthermoError(f"cannot write {display(str(path))}: {display(str(path.parent))} is not a directory")
    staging = _staging_of(path)
    if staging is None and output_kind(path) == "stream":  # a run's folder gets files (Staging.check refuses others)
        with _stream(path, mode, encoding) as handle:
            yield handle
        return
    binary = "b" in mode
    tmp = path.parent / f".{path.name}.{os.getpid()}-{secrets.token_hex(8)}.tmp"
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        # mode 0o666 as a plain open() uses: the kernel applies the umask (mkstemp's files would be 0600)
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
    except OSError as err:
        raise _write_error(path, err) from None
    try:
        with os.fdopen(fd, mode, encoding=None if binary else encoding,
                       errors=None if binary else DISPLAY_ERRORS) as handle:
            yield handle
            handle.flush()
            os.fsync(handle.fileno())
        if staging is not None:
            staging.moves.append((tmp, path))
        else:
            os.replace(tmp, path)
    except BaseException as err:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if isinstance(err, OSError):
            raise _write_error(path, err) from None
        raise


def atomic_write(path: str | os.PathLike, data: str | bytes) -> Path:
    """Write ``data`` (text or bytes) to ``path`` atomically; return the path."""
    with atomic_open(path, "wb" if isinstance(data, bytes) else "w") as handle:
        handle.write(data)
    return Path(path)


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists, but another user's
        return True
    return True


def remove_stale_temporaries(directory: str | os.PathLike) -> list[Path]:
    """Delete the temporary files of :func:`atomic_open` in ``directory`` whose writing process is gone
    (a killed run); those of a live process are left to it. Returns what was removed."""
    removed = []
    with contextlib.suppress(OSError), os.scandir(directory) as entries:
        for entry in entries:
            match = _TMP.match(entry.name)
            if match and not _alive(int(match.group(1))):
                with contextlib.suppress(OSError):
                    os.unlink(entry.path)
                    removed.append(Path(entry.path))
    return removed


def _qcthermo_run_json(run_json: Path) -> dict | None:
    """The document of ``run_json`` when it is a run.json that qcthermo wrote (a JSON object with
    "tool": "qcthermo"), else None."""
    try:
        doc = json.loads(run_json.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError):
        return None
    return doc if isinstance(doc, dict) and doc.get("tool") == "qcthermo" else None


def _plain_name(name: str) -> bool:
    """A file name in the folder itself: no separator, not hidden (the lock and temporaries are not listed)."""
    return "/" not in name and "\\" not in name and not name.startswith(".")


def _listable(name: str) -> bool:
    """A name run.json may list: a plain file name in the folder, or in one of :data:`RUN_FOLDERS`
    (``structures/ch4.xyz``); nothing deeper, nothing hidden."""
    folder, _, file = name.rpartition("/")
    return (not folder or folder in RUN_FOLDERS) and _plain_name(file)


def _run_named(name: str) -> bool:
    return _listable(name) and any(fnmatch.fnmatchcase(name, p) for p in RUN_OUTPUTS)


def owned_outputs(out: str | os.PathLike) -> set[str] | None:
    """Names of the files of ``out`` that qcthermo may replace or remove without --force: those the
    folder's run.json lists (complete, or "incomplete": what a run was writing when it stopped), and
    run.json itself. None when ``out`` holds no run.json that qcthermo wrote."""
    doc = _qcthermo_run_json(Path(out) / "run.json")
    if doc is None:
        return None
    listed = doc.get("files")
    names = {n for n in listed if isinstance(n, str)} if isinstance(listed, list) else set()
    return {n for n in names | {"run.json"} if _listable(n)}


def _bookkeeping(name: str) -> bool:
    """The lock file and temporary files: qcthermo's own, never a user's."""
    return name == LOCK_NAME or _TMP.match(name) is not None


def _foreign(out: Path, owned: set[str] | None) -> str | None:
    """The first entry of ``out`` a run may not replace without --force, or None. Without a run.json of
    qcthermo's every entry is foreign; with one, every file named as a run writes them that it does not
    list (a hand-edited si.tex, a profile_draft.png, a structures/ts.xyz of one's own), in ``out`` and in
    the run's folders. Other files beside a run's (notes.txt, structures/notes.txt) are left alone."""
    for entry in sorted(os.listdir(out)):
        if _bookkeeping(entry):
            continue
        if owned is None:
            return entry
        names = [f"{entry}/{name}" for name in sorted(os.listdir(out / entry)) if not _bookkeeping(name)] \
            if entry in RUN_FOLDERS and _run_folder(out / entry) else [entry]
        foreign = next((n for n in names if _run_named(n) and n not in owned), None)
        if foreign is not None:
            return foreign
    return None


def _run_folder(path: Path) -> bool:
    """Whether ``path`` (``OUT/structures``) is a folder a run may write into: a directory, not a link."""
    return path.is_dir() and not path.is_symlink()


def _check_run_folders(out: Path) -> None:
    """Refuse, whatever --force says, a run's folder name (:data:`RUN_FOLDERS`) taken by a file or a link:
    writing through a link would put files elsewhere, and a user's file is not to become a folder."""
    for name in RUN_FOLDERS:
        path = out / name
        if os.path.lexists(path) and not _run_folder(path):
            raise QcthermoError(f"cannot write into {display(str(path))}: it is "
                                f"{'a link' if path.is_symlink() else 'not a folder'}; a run writes its "
                                f"{name}/ folder itself (move it away)")


def prepare_output_dir(out: str | os.PathLike, force: bool = False) -> Path:
    """Make sure ``out`` may be written to, clear stale temporary files from it, and return it.

    An absent or empty directory is fine, and so is one that a run wrote (its run.json is qcthermo's)
    as long as every file named as a run output in it is one that run.json lists. Anything else is
    refused unless ``force``: files the user had are never overwritten without being asked.
    """
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise QcthermoError(f"{display(str(out))} exists and is not a directory")
    if out.is_dir():
        _check_run_folders(out)
    if out.is_dir() and not force:
        owned = owned_outputs(out)
        foreign = _foreign(out, owned)
        if foreign is not None:
            why = "already holds other files" if owned is None else \
                f"holds {display(foreign)}, which its run.json does not list (not written by qcthermo)"
            raise QcthermoError(f"{display(str(out))} {why}; use --force to write into it anyway")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise QcthermoError(f"cannot create {display(str(out))}: {err.strerror}") from None
    for folder in (out, *(out / name for name in RUN_FOLDERS if _run_folder(out / name))):
        remove_stale_temporaries(folder)
    return out


# -- one run's folder: a lock, and files renamed into place only once run.json says what they are ----------

#: the lock file of an output folder (fcntl.flock); it stays, empty, so that no two runs lock different files
LOCK_NAME = ".qcthermo.lock"
_HELD: dict[str, list] = {}  # realpath of a locked folder -> [file descriptor, depth]: the lock is re-entrant


@contextlib.contextmanager
def output_lock(out: str | os.PathLike, create: bool = True) -> Iterator[None]:
    """Hold an exclusive lock on the folder ``out`` (``OUT/.qcthermo.lock``, fcntl.flock) so that two runs
    never write into it at once: the second gets a one-line QcthermoError. Re-entrant in one process.
    With ``create`` False an absent folder is not made (nor locked): the lock is then taken at writing time."""
    out = Path(out)
    if not create and not out.is_dir():
        yield
        return
    key = os.path.realpath(out)
    if key in _HELD:
        _HELD[key][1] += 1
        try:
            yield
        finally:
            _HELD[key][1] -= 1
        return
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise QcthermoError(f"cannot create {display(str(out))}: {err.strerror}") from None
    fd = _lock(out)
    _HELD[key] = [fd, 1]
    try:
        yield
    finally:
        del _HELD[key]
        os.close(fd)  # closing the descriptor releases the lock


def _lock(out: Path) -> int:
    import fcntl

    lock = out / LOCK_NAME
    try:
        fd = os.open(lock, os.O_RDWR | os.O_CREAT, 0o666)
    except OSError as err:
        raise _write_error(lock, err) from None
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        holder = os.read(fd, 32).decode("ascii", "replace").strip()
        os.close(fd)
        raise QcthermoError(f"{display(str(out))} is being written by another qcthermo run"
                            + (f" (process {holder})" if holder.isdigit() else "")
                            + "; wait for it to finish or choose another --out") from None
    with contextlib.suppress(OSError):  # who holds it, for the message above; the lock works without
        os.ftruncate(fd, 0)
        os.pwrite(fd, f"{os.getpid()}\n".encode(), 0)
    return fd


@contextlib.contextmanager
def checked_output_dir(out: str | os.PathLike, force: bool, create: bool = True) -> Iterator[None]:
    """``out`` checked (:func:`prepare_output_dir`) and locked (:func:`output_lock`) while inside. An
    existing folder is checked before its lock file is made, so that a user's folder that is refused
    gets no lock file, and again once locked (another run may have written into it meanwhile)."""
    if Path(out).exists():
        prepare_output_dir(out, force=force)
    with output_lock(out, create=create):
        if Path(out).exists():
            prepare_output_dir(out, force=force)
        yield


class Staging:
    """The files written into one folder, waiting as temporaries to be renamed into place together."""

    def __init__(self, out: Path):
        self.out = out
        self.moves: list[tuple[Path, Path]] = []

    @property
    def names(self) -> list[str]:
        """The files as run.json lists them: ``species.csv``, ``structures/ch4.xyz``."""
        return [listed_name(self.out, target) for _, target in self.moves]

    def discard(self) -> None:
        for tmp, _ in self.moves:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
        self.moves.clear()

    def check(self, owned: set[str], force: bool) -> None:
        """Refuse to rename over anything but a regular file, or over a file qcthermo did not write
        (not in ``owned``) unless ``force``: one line, and nothing renamed."""
        for _, target in self.moves:
            kind = _existing_kind(target) if os.path.lexists(target) else None
            if kind is None:
                continue
            if kind != stat.S_IFREG or os.path.islink(target):
                what = _STREAMS.get(kind) or _REFUSED.get(kind) or ("a link" if kind == stat.S_IFREG else "special")
                raise QcthermoError(f"cannot write {display(str(target))}: it is {what}, not a file a run wrote")
            if not force and listed_name(self.out, target) not in owned:
                raise QcthermoError(f"{display(str(target))} was not written by qcthermo (run.json does not "
                                    "list it); use --force to replace it")

    def commit(self) -> None:
        for tmp, target in self.moves:
            try:
                os.replace(tmp, target)
            except OSError as err:
                raise _write_error(target, err) from None
        self.moves.clear()


_STAGING: dict[str, Staging] = {}


def listed_name(out: str | os.PathLike, path: str | os.PathLike) -> str:
    """How run.json lists the file ``path`` of the folder ``out``: ``species.csv``, ``structures/ch4.xyz``
    (a file in one of its :data:`RUN_FOLDERS`)."""
    path = Path(path)
    return path.name if os.path.realpath(path.parent) == os.path.realpath(out) else f"{path.parent.name}/{path.name}"


def _staging_of(path: Path) -> Staging | None:
    """The staging of the folder ``path`` is written into: its own, or that of the run owning its folder
    (``OUT/structures/ch4.xyz`` is staged with ``OUT``)."""
    staging = _STAGING.get(os.path.realpath(path.parent))
    if staging is None and path.parent.name in RUN_FOLDERS:
        staging = _STAGING.get(os.path.realpath(path.parent.parent))
    return staging


@contextlib.contextmanager
def staged_outputs(out: Path) -> Iterator[Staging]:
    """Inside, every :func:`atomic_open` into ``out`` leaves its complete temporary file for
    :meth:`Staging.commit` to rename; an exception removes them all."""
    key = os.path.realpath(out)
    staging = _STAGING[key] = Staging(out)
    try:
        yield staging
    except BaseException:
        staging.discard()
        raise
    finally:
        del _STAGING[key]


def write_run_folder(out: str | os.PathLike, force: bool, write_all, final_json) -> list[Path]:
    """Write a run's files into the folder ``out`` so that it never claims what it does not hold.

    Under the folder's lock (:func:`output_lock`): ``write_all(out)`` writes every file as a temporary
    (:func:`staged_outputs`) and returns their paths; then run.json is written as "incomplete", listing
    the new files and those of the earlier run; then the files are renamed into place, the earlier run's
    files not written again are removed, and ``final_json(names)`` (the complete run.json, given the names it
    lists: :func:`listed_name`) is written last. A run stopped at any point leaves either the earlier run's
    folder as it was, or an incomplete run.json that lists every file qcthermo may have put there (the next
    run replaces them without --force). Files go into ``out`` and its :data:`RUN_FOLDERS` alike.
    """
    out = Path(out)
    with checked_output_dir(out, force):
        earlier = owned_outputs(out) or set()
        with staged_outputs(out) as staging:
            written = write_all(out)
        try:
            staging.check(earlier, force)
            names = set(staging.names)
            atomic_write(out / "run.json", json_text({"tool": "qcthermo", "status": "incomplete",
                                                      "files": sorted(names | earlier | {"run.json"})}))
            staging.commit()
        finally:
            staging.discard()  # what was not renamed (a refusal, a failed rename)
        remove_outputs(out, earlier - names - {"run.json"})
        atomic_write(out / "run.json", final_json([listed_name(out, p) for p in written]))
    return [*written, out / "run.json"]


def remove_outputs(out: str | os.PathLike, names: set[str]) -> None:
    """Delete the files ``names`` of ``out`` (an earlier run's that this run did not write again: a rates.csv
    of a temperature range, a figure of a profile since renamed, the structure of a species since removed),
    so no file contradicts the new run.json; a run's folder left empty by it goes too."""
    for path in (Path(out) / name for name in sorted(names)):
        try:
            path.unlink()
        except FileNotFoundError:
            continue
        except OSError as err:
            raise QcthermoError(f"cannot remove {display(str(path))} of an earlier run: "
                                f"{err.strerror or type(err).__name__}") from None
    for folder in {name.partition("/")[0] for name in names if "/" in name}:
        with contextlib.suppress(OSError):  # not empty (a user's notes, another run's temporary): it stays
            os.rmdir(Path(out) / folder)

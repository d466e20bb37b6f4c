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
from collections.abc import Iterator
from pathlib import Path
from typing import IO, Any

from .errors import QcthermoError

#: the codec error handler that writes an undecodable file-name byte as ``\xNN`` (see :func:`display`)
DISPLAY_ERRORS = "qcthermo-display"
#: what a run writes into --out (workflow.py); a directory holding nothing else is a run's, even a killed one's
RUN_OUTPUTS = (
    "run.json", "survey.csv", "species.*", "reactions.*", "rates.csv", "arrhenius.csv", "energy_span.csv",
    "coordinates.xyz", "thermo.yaml", "thermo.dat", "profile*.svg", "profile*.png", "profile*.pdf",
    "dG_T.svg", "arrhenius.svg", "si.md", "si.tex", "report.html",
)
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


def display(text: str) -> str:
    """``text`` as it can be printed and stored as UTF-8: a file name's undecodable bytes as ``\\xNN``
    (b"caf\\xe9.out" -> ``caf\\xe9.out``); any other text unchanged."""
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return text.encode("utf-8", DISPLAY_ERRORS).decode("utf-8")
    return text


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


@contextlib.contextmanager
def atomic_open(path: str | os.PathLike, mode: str = "w", encoding: str | None = "utf-8") -> Iterator[IO]:
    """Open a temporary sibling of ``path`` for writing; rename it onto ``path`` on success.

    Text is written with :data:`DISPLAY_ERRORS`, so a file name that is not UTF-8 comes out in its
    :func:`display` form. An OSError (disk full, permissions, file-size limit) becomes a one-line
    QcthermoError naming ``path``; the temporary file is removed whatever went wrong.
    """
    path = Path(path)
    binary = "b" in mode
    tmp = path.parent / f".{path.name}.{os.getpid()}-{secrets.token_hex(8)}.tmp"
    if path.parent.exists() and not path.parent.is_dir():
        raise QcthermoError(f"cannot write {display(str(path))}: {display(str(path.parent))} is not a directory")
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


def holds_only_run_outputs(out: Path) -> bool:
    """True when every entry of ``out`` is a file named as a run writes it (:data:`RUN_OUTPUTS`) or a
    temporary file of :func:`atomic_open`, and run.json, if there, is qcthermo's."""
    for entry in out.iterdir():
        ours = entry.is_file() and (any(fnmatch.fnmatchcase(entry.name, p) for p in RUN_OUTPUTS)
                                    or _TMP.match(entry.name))
        if not ours:
            return False
    return not (out / "run.json").exists() or _qcthermo_run_json(out / "run.json") is not None


def _run_named(name: str) -> bool:
    return "/" not in name and any(fnmatch.fnmatchcase(name, p) for p in RUN_OUTPUTS)


def earlier_run_outputs(out: str | os.PathLike) -> set[str]:
    """Names of the files an earlier run left in ``out``: those its run.json lists, or, without run.json
    (a killed run), every file of a directory that holds nothing but run outputs. A user's own files are
    never among them, also in a folder written with --force."""
    out = Path(out)
    doc = _qcthermo_run_json(out / "run.json")
    if doc is not None:
        listed = doc.get("files")
        names = {n for n in listed if isinstance(n, str)} if isinstance(listed, list) else set()
        return {n for n in names | {"run.json"} if _run_named(n)}
    if out.is_dir() and holds_only_run_outputs(out):
        return {p.name for p in out.iterdir() if p.is_file() and _run_named(p.name)}
    return set()


def remove_outputs(out: str | os.PathLike, names: set[str]) -> None:
    """Delete the files ``names`` of ``out`` (an earlier run's that this run did not write again: a rates.csv
    of a temperature range, a figure of a profile since renamed), so no file contradicts the new run.json."""
    for path in (Path(out) / name for name in sorted(names)):
        try:
            path.unlink()
        except FileNotFoundError:
            continue
        except OSError as err:
            raise QcthermoError(f"cannot remove {display(str(path))} of an earlier run: "
                                f"{err.strerror or type(err).__name__}") from None


def prepare_output_dir(out: str | os.PathLike, force: bool = False) -> Path:
    """Make sure ``out`` may be written to, clear stale temporary files from it, and return it.

    An absent or empty directory is fine, and so is one that a run wrote: its run.json is qcthermo's,
    or (a run killed or failed before it wrote run.json) it holds nothing but files a run writes. Any
    other non-empty directory is refused unless ``force``: files the user had are never overwritten
    without being asked.
    """
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise QcthermoError(f"{display(str(out))} exists and is not a directory")
    if out.is_dir() and not force and _qcthermo_run_json(out / "run.json") is None \
            and not holds_only_run_outputs(out):
        raise QcthermoError(f"{display(str(out))} already holds other files; use --force to write into it anyway")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise QcthermoError(f"cannot create {display(str(out))}: {err.strerror}") from None
    remove_stale_temporaries(out)
    return out

"""Load a log once and say which program wrote it, cheaply, before any parser runs.

The whole file is read once into memory (decoded text); the program is recognised from its banner in
the first :data:`SNIFF_CHARS` characters, so a binary file or a text file that is not a log is
refused at once without starting cclib.
"""

from __future__ import annotations

import bz2
import codecs
import gzip
import io
import lzma
import mmap
import os
import re
import stat
import zlib
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from ..errors import LogReadError

#: how much of the start of a file is searched for a program banner (input echoes come first)
SNIFF_CHARS = 65536

#: the largest log read, in bytes, on disk and after decompression alike (``QCTHERMO_MAX_LOG_MB`` changes it).
#: The largest real logs at hand are 1.5 MB (an NWChem saddle search with frequencies); a long Gaussian
#: optimisation of a 200-atom molecule prints tens of MB (from memory). 256 MB is ~170 times the largest at
#: hand and still fits a reader's memory (the text, then cclib's copy of it: about 1 GB per worker at the
#: cap); a compressed file that unpacks beyond it is a decompression bomb or no log, and is never unpacked whole.
MAX_LOG_BYTES = 256 * 2**20
#: the size of each piece read and unpacked: the memory in use never exceeds the cap by more than this
_CHUNK_BYTES = 2**16
#: a compressed log that has unpacked past BOMB_AFTER_BYTES at more than BOMB_RATIO times its packed size is
#: refused at once: real logs pack 5:1 to 22:1 (gzip -9 to xz -9 on the largest logs at hand), a bomb 1000:1,
#: so the cap is not waited for (unpacking 256 MB of zeros takes seconds)
BOMB_RATIO, BOMB_AFTER_BYTES = 200, 16 * 2**20

#: program family -> (banner regex in the first SNIFF_CHARS, cclib parser class name or None)
PROGRAMS: dict[str, tuple[str, str | None]] = {
    "gaussian": (r"Gaussian, Inc\.|Entering Gaussian System", "Gaussian"),
    "orca": (r"\*\s+O\s{3}R\s{3}C\s{3}A\s+\*", "ORCA"),
    "qchem": (r"A Quantum Leap Into The Future Of Chemistry|Welcome to Q-Chem", "QChem"),
    "nwchem": (r"Northwest Computational Chemistry Package", "NWChem"),
    "xtb": (r"\|\s+x T B\s+\||xtb version", "XTB"),
    "psi4": (r"Psi4: An Open-Source Ab Initio Electronic Structure Package", "Psi4"),
    "gamess": (r"GAMESS VERSION|Firefly \(PC GAMESS\)|GAMESS execution script", "GAMESS"),
    "gamess-uk": (r"G A M E S S - U K", "GAMESSUK"),
    "molpro": (r"PROGRAM SYSTEM MOLPRO", "Molpro"),
    "molcas": (r"MOLCAS", "Molcas"),
    "adf": (r"Amsterdam Density Functional", "ADF"),
    "dalton": (r"Dalton - An Electronic Structure Program", "DALTON"),
    "jaguar": (r"Jaguar version", "Jaguar"),
    "mopac": (r"MOPAC20\d\d", "MOPAC"),
    "turbomole": (r"TURBOMOLE", "Turbomole"),
}

#: programs recognised but not read (their outputs are not molecular quantum-chemistry logs cclib knows)
UNSUPPORTED: dict[str, str] = {
    "cp2k": r"CP2K\|",
    "vasp": r"^\s*vasp\.\d",
    "quantum-espresso": r"Program PWSCF",
    "cfour": r"CFOUR Coupled-Cluster techniques",
    "gromacs": r"GROMACS",
    "lammps": r"LAMMPS \(",
    "dftb+": r"DFTB\+",
    "crystal": r"CRYSTAL\d\d",
}

#: every banner in one regex, one named group per program: a single scan finds the earliest banner
_BANNERS = re.compile(
    "|".join(f"(?P<{name.replace('-', '_')}>{pattern})" for name, (pattern, _) in PROGRAMS.items()), re.MULTILINE
)
_GROUP_PROGRAM = {name.replace("-", "_"): name for name in PROGRAMS}
_UNSUPPORTED_RES = {name: re.compile(pattern, re.MULTILINE) for name, pattern in UNSUPPORTED.items()}

#: extensions of geometry-only files read with ASE
GEOMETRY_EXTENSIONS = {".xyz", ".extxyz", ".pdb", ".cif", ".sdf", ".mol", ".gen", ".vasp", ".poscar"}


@dataclass
class LogSource:
    """A file read into memory: its text and the program family that wrote it (None: geometry file).

    ``literals``: where the phrases the readers look for occur in ``text`` (literals.py), or None."""

    path: str
    text: str
    program: str | None
    literals: dict[str, list[int]] | None = None

    @property
    def head(self) -> str:
        return self.text[:SNIFF_CHARS]

    def tail(self, n: int = 20000) -> str:
        return self.text[-n:]


#: ``scan(program, data)``: where phrases occur in a log's bytes (literals.scan)
Scanner = Callable[[str, object], "dict[str, list[int]] | None"]


def load(path: str | Path, scan: Scanner | None = None) -> LogSource:
    """Read ``path`` once (gzip, bzip2, xz undone) and recognise the program; raise LogReadError if it is no log.

    A plain file is mapped (mmap) and decoded from the mapping, so the text is the only copy of the file in
    the process's memory; a compressed file or one that is not a regular file (a pipe) is read in pieces.
    ``scan``: given, the log's bytes are scanned with it too (``LogSource.literals``), while they are at hand."""
    path = str(path)
    limit = max_log_bytes()
    try:
        with open(path, "rb") as stream:
            status = os.fstat(stream.fileno())
            if status.st_size > limit:  # known beyond the cap without reading it
                _refuse_size(path, "file", limit)
            if stat.S_ISREG(status.st_mode) and status.st_size and not _packed(stream.read(8)):
                with mmap.mmap(stream.fileno(), 0, access=mmap.ACCESS_READ) as mapped:
                    return _source(path, mapped, scan)
            stream.seek(0)
            return _source(path, _decompressed(path, _read_capped(path, stream, limit, "file"), limit), scan)
    except IsADirectoryError:
        raise LogReadError(path, "is a directory, not a log file") from None
    except OSError as err:
        raise LogReadError(path, f"cannot be read: {err.strerror or err}") from None


def _source(path: str, raw, scan: Scanner | None) -> LogSource:
    """The LogSource of a file's bytes (``bytes`` or a mapping), scanned with ``scan`` when given: the bytes
    themselves when the text has one character per byte (an offset in one is an offset in the other), else
    the text encoded (a byte-order mark or CRLF line ends removed, UTF-16)."""
    text = _decoded(path, raw)
    program = sniff_program(path, text[:SNIFF_CHARS])
    if scan is None or program is None:
        return LogSource(path, text, program)
    aligned = len(text) == len(raw)
    return LogSource(path, text, program, scan(program, raw if aligned else text.encode("ascii", "replace")))


def _decoded(path: str, raw) -> str:
    """The text of a file's bytes (``bytes`` or a mapping): UTF-16, else ASCII with "?" for every other byte
    (:func:`_ascii_text`); "\n" line ends; a LogReadError for an empty or binary file."""
    encoding = _utf16(raw[:8192])
    if encoding is None and b"\x00" in raw[:8192]:
        raise LogReadError(path, "binary file, not a text log")
    text = str(raw, encoding, errors="replace").removeprefix("\ufeff") if encoding else _ascii_text(raw)
    if not text or text.isspace():  # isspace stops at the first other character: no copy of the text
        raise LogReadError(path, "empty file")
    if "\r" in text:  # logs copied from Windows: the parsers and patterns expect "\n" line ends
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    return text


#: a byte outside ASCII becomes "?" (the numbers, keywords and names read from logs are ASCII): one non-ASCII
#: character (an author's name in NWChem's banner, xTB's "Eh/α") would make Python store the whole text at 2 bytes
#: per character, 3x the file in memory, and every later pass over it would read twice the bytes
codecs.register_error("qcthermo-ascii", lambda err: ("?" * (err.end - err.start), err.end))
_UTF8_BOM = b"\xef\xbb\xbf"


def _ascii_text(raw) -> str:
    """The text of UTF-8 (or any ASCII-based) bytes, one character per byte, "?" for each byte beyond ASCII."""
    start = len(_UTF8_BOM) if raw[: len(_UTF8_BOM)] == _UTF8_BOM else 0
    with memoryview(raw) as whole, whole[start:] as text:  # released here: a mapping must not stay exported
        return str(text, "ascii", errors="qcthermo-ascii")


def max_log_bytes() -> int:
    """:data:`MAX_LOG_BYTES`, or ``QCTHERMO_MAX_LOG_MB`` megabytes (2**20 bytes) when that is set to a
    positive number (any other value keeps the default)."""
    try:
        megabytes = float(os.environ.get("QCTHERMO_MAX_LOG_MB", ""))
    except ValueError:
        return MAX_LOG_BYTES
    return int(megabytes * 2**20) if 0 < megabytes < 2**24 else MAX_LOG_BYTES


def _read_capped(path: str, stream, limit: int, what: str, packed=None) -> bytes:
    """All of ``stream`` in pieces of :data:`_CHUNK_BYTES`, or a LogReadError ("``what`` beyond N MB ...") as soon
    as it passes ``limit`` bytes (a file that never ends, or a decompression bomb, is never held whole).
    ``packed``: the compressed input the stream unpacks, whose position tells the ratio (:data:`BOMB_RATIO`)."""
    pieces, size = [], 0
    while piece := stream.read(_CHUNK_BYTES):
        size += len(piece)
        if size > limit:
            _refuse_size(path, what, limit)
        if packed is not None and size > BOMB_AFTER_BYTES and size > BOMB_RATIO * max(1, packed.tell()):
            raise LogReadError(path, f"{what} to {size / max(1, packed.tell()):.0f} times its size (real logs pack "
                                     f"below {BOMB_RATIO}:1): a decompression bomb, not a log")
        pieces.append(piece)
    return b"".join(pieces)


def _refuse_size(path: str, what: str, limit: int) -> None:
    raise LogReadError(path, f"{what} beyond {limit / 2**20:g} MB, the most a log is read to "
                             "(QCTHERMO_MAX_LOG_MB raises the limit)")


#: compressed formats by their magic bytes (the content decides, not the file name): name, streaming reader
_COMPRESSED = ((b"\x1f\x8b", "gzip", gzip.open), (b"BZh", "bzip2", bz2.open),
               (b"\xfd7zXZ\x00", "xz", lzma.open))


def _packed(head: bytes) -> bool:
    """Whether ``head`` (the first bytes of a file) starts with a gzip, bzip2 or xz signature."""
    return head.startswith(tuple(magic for magic, _, _ in _COMPRESSED))


def _decompressed(path: str, raw: bytes, limit: int) -> bytes:
    """``raw`` uncompressed if it starts with a gzip, bzip2 or xz signature, unpacked piece by piece and
    refused once it passes ``limit`` bytes; a damaged archive (cut short, CRC error, corrupt data) is a
    LogReadError. Anything else is returned as it is (a ".gz" that is not gzip is read as the text it holds)."""
    for magic, name, reader in _COMPRESSED:
        if raw.startswith(magic):
            try:
                packed = io.BytesIO(raw)
                with reader(packed) as stream:
                    return _read_capped(path, stream, limit, f"{name} file unpacking", packed)
            except LogReadError:
                raise
            except (OSError, EOFError, ValueError, zlib.error, lzma.LZMAError) as err:
                raise LogReadError(path, f"damaged {name} file ({err or type(err).__name__})") from None
    return raw


def _utf16(raw: bytes) -> str | None:
    """"utf-16" for text with a UTF-16 byte-order mark (Windows PowerShell's ``>`` writes a program's output
    so), "utf-16-le"/"utf-16-be" for ASCII text in UTF-16 without one (every other byte NUL), else None."""
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        return "utf-16"
    head = raw[:8192]
    if len(head) >= 64 and len(head) % 2 == 0:
        for order, nul, text in (("utf-16-le", head[1::2], head[0::2]), ("utf-16-be", head[0::2], head[1::2])):
            if not nul.strip(b"\x00") and b"\x00" not in text:
                return order
    return None


def sniff_program(path: str, head: str) -> str | None:
    """Program family from the banner in ``head``; None for a geometry-only file (by extension).

    Raises LogReadError for a recognised but unsupported program and for text that is no log.
    """
    # banners first: the earliest match wins, because inputs and citations may name other programs
    found = _BANNERS.search(head)
    if found:
        return _GROUP_PROGRAM[found.lastgroup]
    for name, rx in _UNSUPPORTED_RES.items():
        if rx.search(head):
            raise LogReadError(path, f"output of an unsupported program ({name})")
    if Path(path).suffix.lower() in GEOMETRY_EXTENSIONS:
        return None
    raise LogReadError(path, "not a quantum-chemistry log (no known program banner at the start of the file)")

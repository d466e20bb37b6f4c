"""Seeded fuzz of real logs: a damaged log gives a LogReadError or a record that is still the molecule's.

Each case applies one mutation (lines deleted, duplicated, swapped; the file cut; digits turned into
letters; a number replaced by nan/inf/0; garbage inserted; a geometry row dropped; the file doubled; an
element changed in a geometry row; a stray energy line of -1.0 Eh; another log pasted after it or spliced
into it, of another program or the same; the log packed as a decompression bomb) to a small real log,
mostly on the lines the readers use (energies, geometries, frequencies, counts). The reference is the
unmutated log as the reader reads it: its atom count and formula, finite numbers, and its energy where a
stray energy line was added to a log that restates its energy (docs/readers.md, "Stray energy lines").
The mutation is printed in the assertion message, so a failure can be replayed from the seed.
"""

from __future__ import annotations

import gzip
import random
import re
from pathlib import Path

import numpy as np
import pytest

import qcthermo

#: (folder fixture, log, cases): small logs of every reader path (NWChem through cclib and the fallback,
#: xTB, and the third-party ones when present)
SAMPLE_LOGS = [("gas/h2.out", 90), ("gas/h_atom.out", 60), ("sp/water_mp2.out", 90), ("sp/ch3_mp2.out", 90),
               ("conformers/pentane_tt.out", 90), ("flawed/butyne_eclipsed.out", 60)]
THIRD_PARTY_LOGS = [("gaussian16/water_hf_solvent_smd.log", 75), ("xtb6.6.1/dvb_ir.out", 60),
                    ("qchem5.4/dvb_ir.out", 60), ("orca6.0/dvb_ir.out", 60), ("gamess-us2018/nh3_ts_ir.out", 45)]
#: logs that restate their final energy (docs/readers.md, "Stray energy lines"): a stray energy line must be
#: refused or leave the energy as it was; elsewhere (single points of NWChem, GAMESS's semi-empirical run) it
#: is not detected, so it is not applied
RESTATING = {"h2.out", "pentane_tt.out", "butyne_eclipsed.out", "water_hf_solvent_smd.log", "dvb_ir.out"}
#: the logs pasted onto or spliced into another (one per reader path and program)
PARTNERS = ["sample:sp/water_mp2.out", "sample:conformers/pentane_tt.out", "third:xtb6.6.1/dvb_ir.out",
            "third:gaussian16/water_hf_solvent_smd.log", "third:qchem5.4/dvb_ir.out", "third:orca6.0/dvb_ir.out"]
#: a changed element: the symbol or nuclear charge written instead (same electron-count parity where it can)
_OTHER_ELEMENT = {"H": "Li", "C": "O", "N": "P", "O": "C", "1": "3", "6": "8", "7": "15", "8": "6",
                  "1.0": "3.0", "6.0": "8.0", "7.0": "15.0", "8.0": "6.0", "1.0000": "3.0000", "6.0000": "8.0000",
                  "7.0000": "15.0000", "8.0000": "6.0000"}
#: MB of zeros after the log in a bomb; the size cap is lowered to 2 MB for the fuzz (above every log and
#: paste of it here), so a case unpacks 2 MB, not 256 (tests/test_damaged_logs.py tests the real limits)
_BOMB_MB = 4

_NUMBER = re.compile(r"-?\d+\.\d+|\b\d+\b")
_ROW = re.compile(r"^\s*(\d+\s+)?[A-Za-z]{1,3}\d*(\s+-?\d+\.\d+){3,}\s*$|^\s*\d+\s+\d+\s+\d+(\s+-?\d+\.\d+){3}\s*$")
_KEY = ("energy", "ENERGY", "Frequen", "ultiplicity", "Mult", "harge", "oordinates", "COORDINATES", "orientation",
        "SCF Done", "Total", "TOTAL", "atoms", "eigval", "structure")
_GARBAGE = ("@@@ garbage %%%", "1 2 3 4 5 6 7", "nan nan nan", "H 0 0 0", "-" * 80, "", "\x01\x02")
_BAD_NUMBERS = ("nan", "inf", "-inf", "0", "0.0", "NaN", "1e999", "-0.0")


def _changed_element(line: str) -> str | None:
    """``line`` (a geometry row) with its element changed: the symbol, or the nuclear-charge column
    (Gaussian's atomic number, NWChem's and GAMESS's charge), whichever the row has; None if neither."""
    tokens = list(re.finditer(r"\S+", line))
    for i in [2, 1] if len(tokens) > 5 else [1, 0]:
        new = _OTHER_ELEMENT.get(tokens[i].group()) if i < len(tokens) else None
        if new:
            return line[: tokens[i].start()] + new + line[tokens[i].end() :]
    return None


def _stray_energy(lines: list[str], rng: random.Random) -> tuple[str, str] | None:
    """A copy of a random energy line with its number made -1.0, put right after the last line like it."""
    energy = [i for i, line in enumerate(lines) if re.search(r"(?i)energy|SCF Done", line) and re.search(
        r"-\d+\.\d{4,}", line)]
    if not energy:
        return None
    line = lines[rng.choice(energy)]
    stray = re.sub(r"-\d+\.\d{4,}", "-1.000000000", line, count=1)
    last = max(i for i in energy if lines[i].split()[:2] == line.split()[:2])
    return "\n".join([*lines[: last + 1], stray, *lines[last + 1 :]]), f"stray {stray.strip()!r} after line {last + 1}"


def mutate(text: str, rng: random.Random, partners: list[str]) -> tuple[str | bytes, str]:
    """One seeded mutation of ``text`` (bytes for a packed bomb) and its description; ``partners``: the text
    of other real logs to paste or splice in."""
    lines = text.split("\n")
    key = [i for i, line in enumerate(lines) if any(k in line for k in _KEY) or _ROW.match(line)]
    rows = [i for i, line in enumerate(lines) if _ROW.match(line)]

    def pick() -> int:  # mostly a line the readers use, sometimes any line
        return rng.choice(key) if key and rng.random() < 0.8 else rng.randrange(len(lines))

    kind = rng.choice(["delete", "duplicate", "swap", "truncate", "letters", "number", "garbage", "row", "double",
                       "element", "element", "stray", "stray", "paste", "splice", "bomb"])
    if kind == "element":  # a geometry row of the last half of the log, where the final block is
        late = [i for i in rows if i > len(lines) // 2 and _changed_element(lines[i])]
        if late:
            i = rng.choice(late)
            old, lines[i] = lines[i], _changed_element(lines[i])
            return "\n".join(lines), f"element changed, line {i + 1}: {old.strip()!r} -> {lines[i].strip()!r}"
    if kind == "stray" and (stray := _stray_energy(lines, rng)):
        return stray
    if kind in ("paste", "splice"):
        other = rng.choice(partners)
        if kind == "paste":
            return (text + other, "another log pasted after") if rng.random() < 0.5 else \
                (other + text, "another log pasted before")
        a, b = rng.randrange(len(text)), rng.randrange(len(other))
        return text[:a] + other[b:], f"spliced at {a} into another log at {b}"
    if kind == "bomb":
        return gzip.compress(text.encode() + b"\x00" * (_BOMB_MB * 2**20), 1), f"packed with {_BOMB_MB} MB of zeros"
    if kind == "truncate":
        at = rng.randrange(len(text))
        return text[:at], f"truncate at character {at}"
    if kind == "double":
        return text + text, "the file twice"
    if kind == "row" and rows:
        i = rng.choice(rows)
        return "\n".join(lines[:i] + lines[i + 1 :]), f"geometry row {i + 1} dropped"
    if kind in ("letters", "number"):
        i = rng.choice([j for j in key if _NUMBER.search(lines[j])] or [0])
        found = list(_NUMBER.finditer(lines[i]))
        if found:
            m = rng.choice(found)
            if kind == "letters":
                new = "".join(chr(ord("a") + int(c)) if c.isdigit() and rng.random() < 0.5 else c for c in m.group())
                new = new if new != m.group() else "x" + new[1:]
            else:
                new = rng.choice(_BAD_NUMBERS)
            lines[i] = lines[i][: m.start()] + new + lines[i][m.end() :]
            return "\n".join(lines), f"line {i + 1}: {m.group()!r} -> {new!r}"
    i = pick()
    if kind == "delete":
        k = rng.randint(1, 3)
        return "\n".join(lines[:i] + lines[i + k :]), f"lines {i + 1}-{i + k} deleted"
    if kind == "duplicate":
        return "\n".join(lines[: i + 1] + lines[i:]), f"line {i + 1} duplicated"
    if kind == "swap" and i + 1 < len(lines):
        lines[i], lines[i + 1] = lines[i + 1], lines[i]
        return "\n".join(lines), f"lines {i + 1} and {i + 2} swapped"
    garbage = rng.choice(_GARBAGE)
    return "\n".join([*lines[:i], garbage, *lines[i:]]), f"{garbage!r} inserted before line {i + 1}"


def fuzz(path: Path, cases: int, tmp_path: Path, partners: list[Path]) -> None:
    reference = qcthermo.read_log(path)
    known_geometry = bool(np.all(np.isfinite(reference.coordinates)))
    text = path.read_text()
    others = [p.read_text() for p in partners if p != path]
    rng = random.Random(f"{path.parent.name}/{path.name}")  # fixed seed per log
    for case in range(cases):
        damaged, what = mutate(text, rng, others)
        target = tmp_path / f"{case}_{path.name}"
        if isinstance(damaged, bytes):
            target.write_bytes(damaged)
        else:
            target.write_text(damaged)
        where = f"{path.name}, case {case}: {what}"
        try:
            calc = qcthermo.read_log(target)
        except qcthermo.LogReadError as err:
            assert "\n" not in str(err), where
            continue
        except Exception as err:  # anything but LogReadError is a reader bug
            pytest.fail(f"{where}: {type(err).__name__}: {err}")
        assert not what.startswith("packed"), where  # a bomb is never unpacked to the end
        # the unmutated log, as read, is the reference: same molecule, finite numbers
        assert (calc.natoms, calc.formula) == (reference.natoms, reference.formula), where
        assert not known_geometry or np.all(np.isfinite(calc.coordinates)), where
        assert calc.energy is not None and np.isfinite(calc.energy) and calc.energy != 0.0, where
        assert calc.multiplicity >= 1, where
        if calc.frequencies is not None:
            assert np.all(np.isfinite(calc.frequencies)) and np.all(calc.frequencies != 0.0), where
        if what.startswith("stray") and path.name in RESTATING:
            assert calc.energy == pytest.approx(reference.energy, abs=1e-4), where


def _partners(samples: Path, third_party: Path | None) -> list[Path]:
    return [(samples if where == "sample" else third_party) / name for where, name in
            (p.split(":") for p in PARTNERS) if where == "sample" or third_party is not None]


@pytest.fixture
def small_bomb_limit(monkeypatch):
    monkeypatch.setenv("QCTHERMO_MAX_LOG_MB", "2")


@pytest.mark.parametrize("name, cases", SAMPLE_LOGS)
def test_fuzzed_sample_logs(samples, tmp_path, small_bomb_limit, name, cases):
    from conftest import THIRD_PARTY

    fuzz(samples / name, cases, tmp_path, _partners(samples, THIRD_PARTY if THIRD_PARTY.is_dir() else None))


@pytest.mark.parametrize("name, cases", THIRD_PARTY_LOGS)
def test_fuzzed_third_party_logs(samples, third_party, tmp_path, small_bomb_limit, name, cases):
    fuzz(third_party / name, cases, tmp_path, _partners(samples, third_party))

"""Seeded fuzz of real logs: a damaged log gives a LogReadError or a record that is still the molecule's.

Each case applies one mutation (lines deleted, duplicated, swapped; the file cut; digits turned into
letters; a number replaced by nan/inf/0; garbage inserted; a geometry row dropped; the file doubled) to
a small real log, mostly on the lines the readers use (energies, geometries, frequencies, counts). The
reference is the unmutated log as the reader reads it: its atom count and formula, and finite numbers.
The mutation is printed in the assertion message, so a failure can be replayed from the seed.
"""

from __future__ import annotations

import random
import re
from pathlib import Path

import numpy as np
import pytest

import qcthermo

#: (folder fixture, log, cases): small logs of every reader path (NWChem through cclib and the fallback,
#: xTB, and the third-party ones when present)
SAMPLE_LOGS = [("gas/h2.out", 60), ("gas/h_atom.out", 40), ("sp/water_mp2.out", 60), ("sp/ch3_mp2.out", 60),
               ("conformers/pentane_tt.out", 60), ("flawed/butyne_eclipsed.out", 40)]
THIRD_PARTY_LOGS = [("gaussian16/water_hf_solvent_smd.log", 50), ("xtb6.6.1/dvb_ir.out", 40),
                    ("qchem5.4/dvb_ir.out", 40), ("orca6.0/dvb_ir.out", 40), ("gamess-us2018/nh3_ts_ir.out", 30)]

_NUMBER = re.compile(r"-?\d+\.\d+|\b\d+\b")
_ROW = re.compile(r"^\s*(\d+\s+)?[A-Za-z]{1,3}\d*(\s+-?\d+\.\d+){3,}\s*$|^\s*\d+\s+\d+\s+\d+(\s+-?\d+\.\d+){3}\s*$")
_KEY = ("energy", "ENERGY", "Frequen", "ultiplicity", "Mult", "harge", "oordinates", "COORDINATES", "orientation",
        "SCF Done", "Total", "TOTAL", "atoms", "eigval", "structure")
_GARBAGE = ("@@@ garbage %%%", "1 2 3 4 5 6 7", "nan nan nan", "H 0 0 0", "-" * 80, "", "\x01\x02")
_BAD_NUMBERS = ("nan", "inf", "-inf", "0", "0.0", "NaN", "1e999", "-0.0")


def mutate(text: str, rng: random.Random) -> tuple[str, str]:
    """One seeded mutation of ``text`` and its description."""
    lines = text.split("\n")
    key = [i for i, line in enumerate(lines) if any(k in line for k in _KEY) or _ROW.match(line)]
    rows = [i for i, line in enumerate(lines) if _ROW.match(line)]

    def pick() -> int:  # mostly a line the readers use, sometimes any line
        return rng.choice(key) if key and rng.random() < 0.8 else rng.randrange(len(lines))

    kind = rng.choice(["delete", "duplicate", "swap", "truncate", "letters", "number", "garbage", "row", "double"])
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


def fuzz(path: Path, cases: int, tmp_path: Path) -> None:
    reference = qcthermo.read_log(path)
    known_geometry = bool(np.all(np.isfinite(reference.coordinates)))
    text = path.read_text()
    rng = random.Random(f"{path.parent.name}/{path.name}")  # fixed seed per log
    for case in range(cases):
        damaged, what = mutate(text, rng)
        target = tmp_path / f"{case}_{path.name}"
        target.write_text(damaged)
        where = f"{path.name}, case {case}: {what}"
        try:
            calc = qcthermo.read_log(target)
        except qcthermo.LogReadError as err:
            assert "\n" not in str(err), where
            continue
        except Exception as err:  # anything but LogReadError is a reader bug
            pytest.fail(f"{where}: {type(err).__name__}: {err}")
        # the unmutated log, as read, is the reference: same molecule, finite numbers
        assert (calc.natoms, calc.formula) == (reference.natoms, reference.formula), where
        assert not known_geometry or np.all(np.isfinite(calc.coordinates)), where
        assert calc.energy is not None and np.isfinite(calc.energy) and calc.energy != 0.0, where
        assert calc.multiplicity >= 1, where
        if calc.frequencies is not None:
            assert np.all(np.isfinite(calc.frequencies)) and np.all(calc.frequencies != 0.0), where


@pytest.mark.parametrize("name, cases", SAMPLE_LOGS)
def test_fuzzed_sample_logs(samples, tmp_path, name, cases):
    fuzz(samples / name, cases, tmp_path)


@pytest.mark.parametrize("name, cases", THIRD_PARTY_LOGS)
def test_fuzzed_third_party_logs(third_party, tmp_path, name, cases):
    fuzz(third_party / name, cases, tmp_path)

"""cclib on a slice of a log gives the record cclib on the whole log gives (docs/readers.md, "Slices for cclib").

The reference is the same reader with slicing off (QCTHERMO_NO_SLICE=1), i.e. cclib 1.8.1 on the whole
text as the program printed it: every field of the Calculation must be identical, arrays exactly equal
(normal modes included), notes and errors word for word, on every real log the tests have whose program
has a slicer (the others are not sliced at all).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest
from conftest import SAMPLES, THIRD_PARTY

from qcthermo.errors import LogReadError
from qcthermo.readers import core, slices
from qcthermo.readers.source import load
from qcthermo.records import Calculation

_NOT_LOGS = {".md", ".txt", ".toml", ".sh", ".tsv", ".nw", ".inp", ".xyz", ".in", ".gjf", ".com"}


def real_logs() -> list[Path]:
    """Every real log of the tests: the samples and the third-party folders (when present)."""
    roots = [SAMPLES] + ([THIRD_PARTY] if THIRD_PARTY.is_dir() else [])
    return sorted(p for root in roots for p in root.rglob("*") if p.is_file() and p.suffix.lower() not in _NOT_LOGS
                  and "inputs" not in p.parts)


def sliceable_logs() -> list[Path]:
    """The real logs of a program with a slicer."""
    out = []
    for path in real_logs():
        try:
            program = load(path).program
        except LogReadError:
            continue
        if program in slices.SLICERS:
            out.append(path)
    return out


def outcome(path: Path) -> Calculation | str:
    """The record read from ``path``, or its one-line error."""
    try:
        return core.read_log(path)
    except LogReadError as err:
        return f"LogReadError: {err}"


def differences(whole: Calculation | str, sliced: Calculation | str) -> list[str]:
    """The fields in which two outcomes differ (arrays exactly, NaN equal to NaN)."""
    if isinstance(whole, str) or isinstance(sliced, str):
        return [] if whole == sliced else [f"outcome: {whole!r} vs {sliced!r}"]
    out = []
    for field in dataclasses.fields(Calculation):
        a, b = getattr(whole, field.name), getattr(sliced, field.name)
        if isinstance(a, np.ndarray) or isinstance(b, np.ndarray):
            same = a is not None and b is not None and np.array_equal(a, b, equal_nan=True) and a.shape == b.shape
        else:
            same = a == b
        if not same:
            out.append(field.name)
    return out


def both_ways(path: Path, monkeypatch) -> tuple[Calculation | str, Calculation | str]:
    """(whole text, slice) outcomes of one log."""
    with monkeypatch.context() as m:
        m.setenv(slices.NO_SLICE_VARIABLE, "1")
        whole = outcome(path)
    with monkeypatch.context() as m:
        m.delenv(slices.NO_SLICE_VARIABLE, raising=False)
        sliced = outcome(path)
    return whole, sliced


LOGS = sliceable_logs()


@pytest.mark.parametrize("path", LOGS, ids=[p.name for p in LOGS])
def test_slice_gives_the_whole_log_record(path, monkeypatch):
    # reference: cclib 1.8.1 on the whole text the program printed (QCTHERMO_NO_SLICE=1)
    whole, sliced = both_ways(path, monkeypatch)
    assert not differences(whole, sliced), f"{path}: {differences(whole, sliced)}"


def test_slicers_cut_real_logs():
    """The comparison above means something: every slicer cuts at least one real log (the others it may
    leave whole), and cuts it to a fraction."""
    cut: dict[str, int] = {}
    for path in LOGS:
        source = load(path)
        piece = slices.SLICERS[source.program](source.text)
        if piece is not None:
            assert len(piece) < len(source.text)
            cut[source.program] = cut.get(source.program, 0) + 1
    # the Gaussian optimisation of the third-party logs (dvb_gopt.out, 5 steps) is cut
    assert set(cut) >= {"gaussian"} & {load(p).program for p in LOGS}


def test_a_long_optimisation_gives_the_whole_log_record(tmp_path, monkeypatch):
    """A real optimisation made long (its second step printed 40 times more, as a long optimisation prints
    its steps): the slice drops 41 steps at once and the record is still the whole text's."""
    logs = [p for p in LOGS if p.name == "dvb_gopt.out"]
    if not logs:
        pytest.skip("the third-party Gaussian optimisation is absent")
    text = load(logs[0]).text
    steps = slices.line_starts(text, "Input orientation:")
    long_log = tmp_path / "dvb_gopt_long.out"
    long_log.write_text(text[: steps[2]] + text[steps[1] : steps[2]] * 40 + text[steps[2] :])
    whole, sliced = both_ways(long_log, monkeypatch)
    assert not differences(whole, sliced), differences(whole, sliced)
    # reference: the energy and final geometry printed in the real log, which the long one ends with
    original = core.read_log(logs[0])
    assert sliced.energy == original.energy and np.array_equal(sliced.coordinates, original.coordinates)
    assert len(slices.gaussian(load(long_log).text)) < len(text)


def test_a_slicer_that_drops_a_needed_section_is_caught(monkeypatch):
    """A broken slicer (it drops the last optimisation step, whose geometry and energy are the record's)
    makes the comparison fail: the test above has teeth."""
    logs = [p for p in LOGS if p.name == "dvb_gopt.out"]
    if not logs:
        pytest.skip("the third-party Gaussian optimisation is absent")
    text = load(logs[0]).text
    completed = text.rfind("Optimization completed")
    last_step = text.rfind("\n", 0, text.rfind("Input orientation", 0, completed)) + 1
    broken = text[:last_step] + text[text.rfind("\n", 0, completed) + 1 :]
    monkeypatch.setitem(slices.SLICERS, "gaussian", lambda _: broken)
    whole, sliced = both_ways(logs[0], monkeypatch)
    assert {"coordinates", "energy"} <= set(differences(whole, sliced))


def test_slicing_switch(monkeypatch):
    """QCTHERMO_NO_SLICE=1 (or any value but "0") turns slicing off; a program without a slicer is not sliced."""
    text = "x" * 100
    monkeypatch.setitem(slices.SLICERS, "gaussian", lambda t: t[:10])
    assert slices.cclib_slice("gaussian", text) == "x" * 10
    assert slices.cclib_slice("molpro", text) is None
    monkeypatch.setenv(slices.NO_SLICE_VARIABLE, "1")
    assert slices.cclib_slice("gaussian", text) is None
    monkeypatch.setenv(slices.NO_SLICE_VARIABLE, "0")
    assert slices.cclib_slice("gaussian", text) == "x" * 10

"""One pass for the phrases (literals.py): the index gives what the plain string searches give.

References: Python's own ``str.find``/``str.rfind`` for where a phrase occurs, and the reader with the index
off (``literals.scan`` returning None: every search a plain string search, as before the index existed) for
every field of every record, on every real log the tests have.
"""

from __future__ import annotations

import random
import re
from concurrent.futures import ThreadPoolExecutor

import pytest
from test_slices import differences, outcome, real_logs

from qcthermo.errors import LogReadError
from qcthermo.readers import literals, text
from qcthermo.readers.source import load


def _programs() -> dict:
    """Real log -> its program, for the logs of a program with an index."""
    out = {}
    for path in real_logs():
        try:
            out[path] = load(path).program
        except LogReadError:
            continue
    return {path: program for path, program in out.items() if program}


def _every_occurrence(haystack: str, phrase: str) -> list[int]:
    """Every offset of ``phrase`` in ``haystack``, overlapping ones included (str.find from each next offset)."""
    found, at = [], haystack.find(phrase)
    while at >= 0:
        found.append(at)
        at = haystack.find(phrase, at + 1)
    return found


def test_the_package_that_scans_is_installed():
    """hyperscan is a dependency (pyproject.toml): without it every test below compares the plain path with itself."""
    assert literals.available()


def test_scan_finds_every_occurrence_str_find_finds():
    """Reference: str.find over the decoded text, for every phrase of the program's vocabulary, every real log."""
    logs = _programs()
    assert len(logs) > 50
    for path, program in logs.items():
        source = load(path, scan=literals.scan)
        assert source.literals is not None
        for phrase in literals.vocabulary(program):
            assert source.literals[phrase] == _every_occurrence(source.text, phrase), (path.name, phrase)


def test_records_are_the_same_with_and_without_the_index(monkeypatch):
    """Every field of every real log's record (or its one-line error, word for word) with the index and without."""
    logs = list(_programs())
    indexed = {path: outcome(path) for path in logs}
    monkeypatch.setattr(literals, "scan", lambda program, data: None)
    for path in logs:
        assert differences(outcome(path), indexed[path]) == [], path.name


def test_a_wrong_index_is_caught(monkeypatch):
    """The comparison above has teeth: an index that loses the last occurrence of each phrase changes records."""
    logs = [path for path, program in _programs().items() if program in ("gaussian", "nwchem", "xtb", "psi4")]
    plain = {path: outcome(path) for path in logs}
    scan = literals.scan
    monkeypatch.setattr(literals, "scan",
                        lambda program, data: {k: v[:-1] for k, v in scan(program, data).items()})
    changed = [path for path in logs if differences(plain[path], outcome(path))]
    assert len(changed) > len(logs) // 2


def test_every_phrase_searched_while_reading_is_indexed(monkeypatch):
    """A phrase searched in an indexed text but missing from the vocabulary costs a whole pass: none is, on any
    real log (a new search in the readers must add its phrase to literals.PHRASES), but those left out on purpose
    (literals.NOT_INDEXED: searched a few lines from known points only)."""
    missing = set()
    positions = text._positions

    def recording(haystack, phrase):
        entry = getattr(text._INDEX, "entry", None)
        if entry is not None and entry[0] is haystack and phrase not in entry[1] and phrase not in literals.NOT_INDEXED:
            missing.add(phrase)
        return positions(haystack, phrase)

    monkeypatch.setattr(text, "_positions", recording)
    for path in _programs():
        outcome(path)
    assert missing == set()


def _random_text(rng: random.Random, size: int) -> str:
    return "".join(rng.choice("aab \n") for _ in range(size))


PHRASES = ("a", "aa", "ab", "a b", "ba", "aaa")


def test_searches_in_an_indexed_text_answer_as_str_does():
    """Reference: str.find, str.rfind and a str.find loop, on random texts full of overlapping occurrences,
    over random bounds."""
    rng = random.Random(20261204)
    for _ in range(200):
        haystack = _random_text(rng, rng.randint(0, 60))
        index = {phrase: _every_occurrence(haystack, phrase) for phrase in PHRASES}
        bounds = [(rng.randint(0, len(haystack) + 2), rng.randint(0, len(haystack) + 2)) for _ in range(5)]
        plain = _answers(haystack, bounds)
        with text.indexed(haystack, index):
            assert _answers(haystack, bounds) == plain, repr(haystack)
        for phrase in PHRASES:
            for start, end in bounds:
                assert text.find(haystack, phrase, start, end) == haystack.find(phrase, start, end)
                assert text.rfind(haystack, phrase, start, end) == haystack.rfind(phrase, start, end)


def _answers(haystack: str, bounds) -> list:
    line = re.compile(r"^.*a.*$", re.M)
    out = []
    for phrase in PHRASES:
        for start, end in bounds:
            out += [text.hits(haystack, phrase, start, end), text.find(haystack, phrase, start, end),
                    text.rfind(haystack, phrase, start, end), text.lines_with(haystack, phrase, start=start)]
            found = text.last_line_match(haystack, phrase, line, end)
            out.append(None if found is None else found.span())
        out.append(text.last_section(haystack, phrase, "b"))
    return out


def test_an_index_answers_for_its_own_text_only():
    """An equal text that is another object (a slice, a copy) is searched the plain way, and so is any text once
    the block ends."""
    haystack = "abc abc"
    wrong = {"abc": [1]}  # deliberately false, to see whether it is used
    with text.indexed(haystack, wrong):
        assert text.find(haystack, "abc") == 1
        assert text.find("".join(["abc", " abc"]), "abc") == 0
    assert text.find(haystack, "abc") == 0


@pytest.mark.parametrize("mangle", ["crlf", "bom"])
def test_a_log_with_windows_line_ends_or_a_byte_order_mark_reads_as_the_original(tmp_path, samples, mangle):
    """Their text is not aligned with their bytes, so they are scanned as their text encoded: the record is the
    original's (reference: the same log as the program wrote it)."""
    original = samples / "gas" / "water.out"
    raw = original.read_bytes()
    raw = raw.replace(b"\n", b"\r\n") if mangle == "crlf" else b"\xef\xbb\xbf" + raw
    copy = tmp_path / "water.out"
    copy.write_bytes(raw)
    source = load(copy, scan=literals.scan)
    assert source.literals["No. of atoms"] == _every_occurrence(source.text, "No. of atoms") != []
    assert set(differences(outcome(original), outcome(copy))) <= {"path"}


def test_threads_reading_at_once_each_use_their_own_index():
    """Dask's workers read in threads: logs of different programs read at once in four threads give the records
    read one after the other."""
    logs = [path for path, program in _programs().items() if program in ("gaussian", "nwchem", "xtb", "psi4")][:24]
    alone = [outcome(path) for path in logs]
    with ThreadPoolExecutor(4) as pool:
        together = list(pool.map(outcome, logs * 3))
    for a, b in zip(alone * 3, together, strict=True):
        assert differences(a, b) == []

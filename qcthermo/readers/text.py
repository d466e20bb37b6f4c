"""Fast searches in a whole log held in memory.

A regular expression that starts with ``^\\s*`` or a character class cannot use the regex engine's
literal-prefix scan, so ``re.findall`` over a 1.5 MB log steps through every character (~7 ns each,
milliseconds per field). Every field the readers take from the text contains a literal phrase, so the
plain string search (``str.find`` / ``str.rfind``, ~0.3 ns per character) first picks the few lines or
the one block that can match, and the regex runs on those alone. A match never spans more than its own
line (and the next, for a ``\\s+`` that ends a line), so the results are those of the regex on the
whole text.

While a log is read, its text can carry an index of where its phrases occur (literals.py, found in one pass
over the file): inside :func:`indexed`, every search here for an indexed phrase in that very text (the same
``str`` object) answers from the index instead of passing over the text, with the same result.
"""

from __future__ import annotations

import bisect
import contextlib
import re
import threading
from collections.abc import Iterator

#: the text being read and its index (phrase -> every offset it occurs at), per thread (Dask's threaded workers)
_INDEX = threading.local()


@contextlib.contextmanager
def indexed(text: str, positions: dict[str, list[int]] | None) -> Iterator[None]:
    """Within the block, searches of ``text`` for a phrase of ``positions`` answer from it (None: no index)."""
    before = getattr(_INDEX, "entry", None)
    _INDEX.entry = (text, positions) if positions is not None else None
    try:
        yield
    finally:
        _INDEX.entry = before


def _positions(text: str, phrase: str) -> list[int] | None:
    """Every offset of ``phrase`` in ``text`` (overlapping included), if indexed; None to search the text."""
    entry = getattr(_INDEX, "entry", None)
    if entry is None or entry[0] is not text:
        return None
    return entry[1].get(phrase)


def indexed_for(text: str, phrases) -> bool:
    """Whether every one of ``phrases`` is indexed for ``text``."""
    entry = getattr(_INDEX, "entry", None)
    return entry is not None and entry[0] is text and all(phrase in entry[1] for phrase in phrases)


def find(text: str, phrase: str, start: int = 0, end: int | None = None) -> int:
    """``text.find(phrase, start, end)``, from the index when ``phrase`` is indexed."""
    known = _positions(text, phrase)
    if known is None:
        return text.find(phrase, start, len(text) if end is None else end)
    end = len(text) if end is None else end
    i = bisect.bisect_left(known, start)
    return known[i] if i < len(known) and known[i] + len(phrase) <= end else -1


def rfind(text: str, phrase: str, start: int = 0, end: int | None = None) -> int:
    """``text.rfind(phrase, start, end)``, from the index when ``phrase`` is indexed."""
    known = _positions(text, phrase)
    end = len(text) if end is None else end
    if known is None:
        return text.rfind(phrase, start, end)
    i = bisect.bisect_right(known, end - len(phrase)) - 1
    return known[i] if i >= 0 and known[i] >= start else -1


def line_start(text: str, at: int) -> int:
    """Where the line holding index ``at`` starts."""
    return text.rfind("\n", 0, at) + 1


def line_bounds(text: str, at: int) -> tuple[int, int]:
    """(start, end) of the line holding index ``at``, newline excluded."""
    start = line_start(text, at)
    end = text.find("\n", at)
    return start, len(text) if end < 0 else end


def hits(text: str, phrase: str, start: int = 0, end: int | None = None) -> list[int]:
    """Where ``phrase`` occurs in ``text[start:end]``, not overlapping (one ``str.find`` pass over the text)."""
    end = len(text) if end is None else end
    found: list[int] = []
    known = _positions(text, phrase)
    if known is not None:  # the same greedy left-to-right choice among the (possibly overlapping) occurrences
        after = start
        for at in known[bisect.bisect_left(known, start):]:
            if at + len(phrase) > end:
                break
            if at >= after:
                found.append(at)
                after = at + len(phrase)
        return found
    at = text.find(phrase, start, end)
    while at >= 0:
        found.append(at)
        at = text.find(phrase, at + len(phrase), end)
    return found


def lines_with(text: str, *literals: str, start: int = 0) -> str:
    """The lines of ``text[start:]`` that contain any of ``literals``, in file order, each ending in a newline.

    Multi-line regexes (MULTILINE ``^``/``$``) give the same matches on this text as on the whole log
    for any pattern that contains one of the literals and stays on one line.
    """
    spans: set[tuple[int, int]] = set()
    for literal in literals:
        at = find(text, literal, start)
        while at >= 0:
            first, end = line_bounds(text, at)
            spans.add((max(first, start), end))  # a line cut at ``start`` as in text[start:]
            at = find(text, literal, end + 1)  # the next line (a literal never holds a newline)
    return "".join(text[first:end] + "\n" for first, end in sorted(spans))


def last_line_match(text: str, literal: str, regex: re.Pattern, end: int | None = None) -> re.Match | None:
    """The last match of a one-line ``regex`` (which every match contains ``literal``), searched from the end
    of ``text[:end]``.

    Each line holding ``literal``, last first, is searched together with the line after it (a ``\\s+``
    at the end of a pattern may run onto it), so the answer is the last of ``regex.finditer(text, 0, end)``.
    """
    stop = limit = len(text) if end is None else end
    while (at := rfind(text, literal, 0, stop)) >= 0:
        start, line_end = line_bounds(text, at)
        after = text.find("\n", line_end + 1, limit)
        found = [m for m in regex.finditer(text, start, limit if after < 0 else after) if m.start() <= line_end]
        if found:
            return found[-1]
        stop = start
    return None


def last_block_match(text: str, header: str, regex: re.Pattern) -> re.Match | None:
    """The last match of a block ``regex`` that begins with the literal ``header``, tried from the end.

    ``regex`` is matched where each occurrence of ``header`` starts, last first, so a block cut short
    (a truncated log) does not match and the one before it is tried.
    """
    stop = len(text)
    while (at := rfind(text, header, 0, stop)) >= 0:
        found = regex.match(text, at)
        if found:
            return found
        stop = at
    return None


def last_section(text: str, header: str, end: str) -> str | None:
    """The text from the last literal ``header`` to the first ``end`` after it (or to the end of the file,
    when the log stops before it); None when ``header`` is not in ``text``."""
    start = rfind(text, header)
    if start < 0:
        return None
    stop = find(text, end, start)
    return text[start : stop if stop > 0 else len(text)]

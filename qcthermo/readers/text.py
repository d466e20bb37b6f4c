"""Fast searches in a whole log held in memory.

A regular expression that starts with ``^\\s*`` or a character class cannot use the regex engine's
literal-prefix scan, so ``re.findall`` over a 1.5 MB log steps through every character (~7 ns each,
milliseconds per field). Every field the readers take from the text contains a literal phrase, so the
plain string search (``str.find`` / ``str.rfind``, ~0.3 ns per character) first picks the few lines or
the one block that can match, and the regex runs on those alone. A match never spans more than its own
line (and the next, for a ``\\s+`` that ends a line), so the results are those of the regex on the
whole text.
"""

from __future__ import annotations

import re


def _line_bounds(text: str, at: int) -> tuple[int, int]:
    """(start, end) of the line holding index ``at``, newline excluded."""
    start = text.rfind("\n", 0, at) + 1
    end = text.find("\n", at)
    return start, len(text) if end < 0 else end


def hits(text: str, phrase: str, start: int = 0, end: int | None = None) -> list[int]:
    """Where ``phrase`` occurs in ``text[start:end]``, not overlapping (one ``str.find`` pass over the text)."""
    end = len(text) if end is None else end
    found: list[int] = []
    at = text.find(phrase, start, end)
    while at >= 0:
        found.append(at)
        at = text.find(phrase, at + len(phrase), end)
    return found


def lines_with(text: str, *literals: str) -> str:
    """The lines of ``text`` that contain any of ``literals``, in file order, each ending in a newline.

    Multi-line regexes (MULTILINE ``^``/``$``) give the same matches on this text as on the whole log
    for any pattern that contains one of the literals and stays on one line.
    """
    spans: set[tuple[int, int]] = set()
    for literal in literals:
        at = text.find(literal)
        while at >= 0:
            span = _line_bounds(text, at)
            spans.add(span)
            at = text.find(literal, span[1] + 1)  # the next line (a literal never holds a newline)
    return "".join(text[start:end] + "\n" for start, end in sorted(spans))


def last_line_match(text: str, literal: str, regex: re.Pattern) -> re.Match | None:
    """The last match of a one-line ``regex`` (which every match contains ``literal``), searched from the end.

    Each line holding ``literal``, last first, is searched together with the line after it (a ``\\s+``
    at the end of a pattern may run onto it), so the answer is the last of ``regex.finditer(text)``.
    """
    stop = len(text)
    while (at := text.rfind(literal, 0, stop)) >= 0:
        start, end = _line_bounds(text, at)
        after = text.find("\n", end + 1)
        found = [m for m in regex.finditer(text, start, len(text) if after < 0 else after) if m.start() <= end]
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
    while (at := text.rfind(header, 0, stop)) >= 0:
        found = regex.match(text, at)
        if found:
            return found
        stop = at
    return None


def last_section(text: str, header: str, end: str) -> str | None:
    """The text from the last literal ``header`` to the first ``end`` after it (or to the end of the file,
    when the log stops before it); None when ``header`` is not in ``text``."""
    start = text.rfind(header)
    if start < 0:
        return None
    stop = text.find(end, start)
    return text[start : stop if stop > 0 else len(text)]

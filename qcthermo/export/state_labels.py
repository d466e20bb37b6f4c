"""The names of an energy diagram's states, typeset (docs/figures.md, "State names").

A state is a sum of terms, each a coefficient and a species shown by its label from the reaction file (else its
key). A name that reads as a chemical formula (CH4, CH3OH, H2O, Ca(OH)2, NO2-, SO4^2-) is set with its counts as
subscripts and its charge as a superscript, in matplotlib's mathtext in the figure's own upright font
(``\\mathregular``); coefficients stay in front ("2 H"); a transition state's double dagger goes on its own term
("TS‡ + H", not "TS + H‡"). Long states wrap between terms, the next line opening with "+", never inside a name.

Every other text of the figures is plain (``text.parse_math`` is off in the style): a name holding "$x$" is
printed as written. A state name is drawn with mathtext only when it holds a formula recognised here, and then
every character the user wrote is escaped, so that the only mathtext in it is what :func:`formula_mathtext`
built from a validated formula.
"""

from __future__ import annotations

import re
import textwrap
from collections.abc import Sequence

from ase.data import chemical_symbols

from ..reactions import format_terms
from .profile_data import ProfileState, Term

_ELEMENTS = frozenset(chemical_symbols[1:])  # [0] is ASE's placeholder "X"
_TOKEN = re.compile(r"(?P<symbol>[A-Z][a-z]?)(?P<count>\d*)|(?P<open>[(\[])|(?P<close>[)\]])(?P<group>\d*)")
_COUNT = re.compile(r"[2-9]|[1-9]\d+")  # a formula never writes a count of 1 nor a leading zero
_CHARGE = re.compile(r"\^(?P<size>[1-9]\d*)?(?P<sign>[+-])$|(?P<bare>[+-])$")
_PAIRS = {")": "(", "]": "["}
#: lone element symbols with a count that are typeset as molecules; any other (I2, P2, S1, C2) is how mechanisms
#: number their states (common practice) and is drawn as written
ELEMENT_MOLECULES = frozenset({"H2", "N2", "O2", "O3", "F2", "Cl2", "Br2"})
DAGGER = "‡"
CONTINUATION = "+ "  # opens a wrapped state's next line


def _formula_tokens(body: str) -> list[re.Match] | None:
    """The element and bracket tokens of ``body`` when they spell it whole, with real element symbols, counts
    a formula writes and balanced brackets; else None."""
    tokens = list(_TOKEN.finditer(body))
    if not body or "".join(m.group(0) for m in tokens) != body:
        return None
    stack: list[str] = []
    for m in tokens:
        count = m.group("count") or m.group("group") or ""
        if (m.group("symbol") and m.group("symbol") not in _ELEMENTS) or (count and not _COUNT.fullmatch(count)):
            return None
        if m.group("open"):
            stack.append(m.group("open"))
        elif m.group("close") and (not stack or stack.pop() != _PAIRS[m.group("close")]):
            return None
    return None if stack else tokens


def formula_mathtext(name: str) -> str | None:
    """``name`` as mathtext ("CH3OH" -> "$\\mathregular{CH_{3}OH}$", "SO4^2-" -> "...SO_{4}^{2-}...") when it
    is a chemical formula with a count or a charge to typeset, else None.

    A charge is a final "+" or "-" (NO2-, NH4+) or "^" with its size (SO4^2-, Fe^3+). A lone symbol with a
    count and a bare sign (Fe3+, O2-) is left as written: it may be a count or a charge size.
    """
    charge = _CHARGE.search(name)
    body = name[: charge.start()] if charge else name
    tokens = _formula_tokens(body)
    if tokens is None:
        return None
    symbols = [m for m in tokens if m.group("symbol")]
    counted = any(m.group("count") or m.group("group") for m in tokens)
    if not symbols or not (counted or charge):
        return None
    if len(tokens) == 1 and counted and (body not in ELEMENT_MOLECULES or (charge and charge.group("bare"))):
        return None
    parts = [m.group("symbol") or m.group("open") or m.group("close") for m in tokens]
    counts = [m.group("count") or m.group("group") for m in tokens]
    tex = "".join(p + (f"_{{{c}}}" if c else "") for p, c in zip(parts, counts, strict=True))
    if charge:
        tex += f"^{{{charge.group('size') or ''}{charge.group('sign') or charge.group('bare')}}}"
    return f"$\\mathregular{{{tex}}}$"


def name_text(name: str) -> tuple[str, bool]:
    """A species name as drawn (in a legend, say): its formula typeset, or the name as written; and whether it
    is mathtext (to draw with ``parse_math=True``)."""
    formula = formula_mathtext(name)
    return (formula, True) if formula else (name, False)


def _escape(text: str) -> str:
    """Text the user wrote, inside a label drawn with mathtext: a dollar escaped, a backslash drawn by mathtext
    (outside math only "\\$" is special, and a backslash before our own "$" would escape it)."""
    return re.sub(r"[$\\]", lambda m: r"\$" if m.group() == "$" else r"$\backslash$", text)


def _term(term: Term, math: bool) -> str:
    """A term as drawn: coefficient, name (typeset, escaped or plain), and its dagger."""
    formula = formula_mathtext(term.name) if math else None
    name = formula or (_escape(term.name) if math else term.name)
    coefficient = "" if term.coefficient == 1 else f"{term.coefficient:g} "
    return f"{coefficient}{name}{DAGGER if term.is_ts else ''}"


def _lines(pieces: Sequence[str], widths: Sequence[int], wrap: int | None) -> list[str]:
    """The pieces of a sum joined by " + " into lines of at most ``wrap`` characters where pieces allow
    (a piece is never split), a continued line opening with "+ "."""
    lines: list[list[str]] = []
    width = 0
    for piece, w in zip(pieces, widths, strict=True):
        if lines and (wrap is None or width + 3 + w <= wrap):
            lines[-1].append(piece)
            width += 3 + w
        else:
            lines.append([piece])
            width = w + (len(CONTINUATION) if len(lines) > 1 else 0)
    return [(CONTINUATION if i else "") + " + ".join(line) for i, line in enumerate(lines)]


def _balanced(line: str) -> str:
    """A line of a mathtext label that holds escaped dollars but no math would be drawn as plain text, the
    escapes shown: an empty math group makes matplotlib parse it (it counts unescaped dollars per line)."""
    return line + "${}$" if r"\$" in line and line.count("$") == line.count(r"\$") else line


def _typeset(terms: Sequence[Term], wrap: int | None) -> tuple[str, bool]:
    math = any(formula_mathtext(t.name) for t in terms)
    lines = _lines([_term(t, math) for t in terms], [len(_term(t, False)) for t in terms], wrap)
    return "\n".join(_balanced(line) for line in lines) if math else "\n".join(lines), math


def _plain(label: str, is_ts: bool, wrap: int | None) -> str:
    """A label the reaction file gives (or a state without terms), as written: wrapped between " + " terms,
    a term longer than the line at its words; the dagger at the end."""
    pieces = label.split(" + ")
    if wrap:
        pieces = [textwrap.fill(p, wrap, break_long_words=False) for p in pieces]
    text = "\n".join(_lines(pieces, [max(map(len, p.split("\n"))) for p in pieces], wrap))
    return f"{text}{DAGGER}" if is_ts and not text.endswith(DAGGER) else text


def state_text(state: ProfileState, wrap: int | None = None) -> tuple[str, bool]:
    """The name drawn above a state's level, lines of at most ``wrap`` characters where names allow, and
    whether it is mathtext (to draw with ``parse_math=True``). A state whose label is the sum of its terms
    (the reaction file gave no ``labels``) is typeset term by term; any other label is drawn as written."""
    if state.terms and state.label == format_terms([(t.coefficient, t.name) for t in state.terms]):
        return _typeset(state.terms, wrap)
    return _plain(state.label, state.is_ts, wrap), False

"""The names of energy-diagram states: formulas typeset, the double dagger on the transition state, wrapping.

Formula conventions from IUPAC, Nomenclature of Inorganic Chemistry (Red Book, 2005), IR-3.3 and IR-4.4 (from
memory): counts of atoms are right subscripts, never written when 1; an ion's charge is a right superscript,
its size before its sign (SO4^2-). Element symbols are ASE's ase.data.chemical_symbols.
"""

import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.cbook import is_math_text
from matplotlib.figure import Figure
from matplotlib.mathtext import MathTextParser

from qcthermo.export.profile_data import ProfileState, Term
from qcthermo.export.state_labels import formula_mathtext, state_text
from qcthermo.reactions import format_terms


def _state(*terms, label=None):
    terms = tuple(Term(*t) for t in terms)
    default = format_terms([(t.coefficient, t.name) for t in terms])
    return ProfileState(label or default, 0.0, any(t.is_ts for t in terms), tuple(t.name for t in terms), terms)


@pytest.mark.parametrize(("name", "tex"), [
    ("CH4", r"$\mathregular{CH_{4}}$"),
    ("CH3OH", r"$\mathregular{CH_{3}OH}$"),
    ("H2O", r"$\mathregular{H_{2}O}$"),
    ("Ca(OH)2", r"$\mathregular{Ca(OH)_{2}}$"),
    ("NO2-", r"$\mathregular{NO_{2}^{-}}$"),  # nitrite: the count, then the charge
    ("NH4+", r"$\mathregular{NH_{4}^{+}}$"),
    ("SO4^2-", r"$\mathregular{SO_{4}^{2-}}$"),  # the charge's size before its sign
    ("[Fe(CN)6]^3-", r"$\mathregular{[Fe(CN)_{6}]^{3-}}$"),
    ("H2", r"$\mathregular{H_{2}}$"),
    ("Cl-", r"$\mathregular{Cl^{-}}$"),
])
def test_formulas_are_typeset(name, tex):
    assert formula_mathtext(name) == tex


@pytest.mark.parametrize("name", [
    "ch4",  # a key in lower case is not a formula
    "HCN", "CO", "H",  # formulas with nothing to typeset stay plain text
    "TS1", "ts_hcn", "int1", "Int2", "cat", "Sub",  # not element symbols (T, Tt, In+t, Su)
    "P2", "I2", "S1", "C2",  # how mechanisms number states: a lone symbol with a number stays as written
    "CH1", "C02",  # a formula never writes a count of 1 nor a leading zero
    "Fe3+",  # a count or a charge of 3? left as written (write Fe^3+)
    "Ca(OH2", "Ca)OH(2", "[Fe(CN)6)",  # unbalanced brackets
    "PPh3", "$x$", "C H4", "",
])
def test_other_names_are_not_formulas(name):
    assert formula_mathtext(name) is None


def test_terms_use_their_labels_coefficients_and_the_dagger_on_the_transition_state():
    text, math = state_text(_state((1.0, "TS-abs", True), (1.0, "H")))
    assert (text, math) == ("TS-abs‡ + H", False)  # not "TS-abs + H‡"
    text, math = state_text(_state((1.0, "CH4"), (2.0, "H")))
    assert (text, math) == (r"$\mathregular{CH_{4}}$ + 2 H", True)  # stoichiometric coefficients stay


def test_a_label_from_the_reaction_file_is_drawn_as_written():
    text, math = state_text(_state((1.0, "TS1", True), (1.0, "CH4"), label="TS of the abstraction"))
    assert (text, math) == ("TS of the abstraction‡", False)


def test_long_states_wrap_between_terms_only():
    state = _state((1.0, "dissociated-complex"), (2.0, "CH3OH"), (1.0, "H"), (1.0, "ts-long-name", True))
    text, _ = state_text(state, wrap=14)
    assert text.split("\n") == ["dissociated-complex", r"+ 2 $\mathregular{CH_{3}OH}$ + H", "+ ts-long-name‡"]
    plain = ProfileState("ch3 + h2 + h", 0.0)  # a state without terms wraps at its " + " as well
    assert state_text(plain, wrap=9)[0] == "ch3 + h2\n+ h"


def _drawn(line: str) -> str:
    """The characters matplotlib draws for one line of a text with parse_math=True: a line with an even
    number of unescaped dollars is parsed as mathtext (matplotlib.cbook.is_math_text), else drawn as it is."""
    if not is_math_text(line):
        return line
    return "".join(chr(glyph[2]) for glyph in MathTextParser("path").parse(line, dpi=72).glyphs)


HOSTILE = ("$\\alpha$ $", "a\\", "\\$x$", "$$", "5$", "\\")


@pytest.mark.parametrize("hostile", HOSTILE)
def test_user_text_next_to_a_formula_is_printed_as_written(hostile):
    # mathtext is on for a state holding a formula: another name's dollar or backslash must not become math
    state = _state((1.0, "CH4"), (1.0, hostile))
    for wrap in (None, 6):  # on one line with the formula, and alone on a line of its own
        text, math = state_text(state, wrap)
        assert math
        drawn = "".join(_drawn(line) for line in text.split("\n"))
        assert drawn.replace(" ", "").replace("+", "") == "CH4" + hostile.replace(" ", "")  # glyphs of CH_{4}, name
        fig = Figure()
        FigureCanvasAgg(fig)
        fig.text(0.1, 0.5, text, parse_math=True)
        fig.canvas.draw()  # malformed mathtext would raise here

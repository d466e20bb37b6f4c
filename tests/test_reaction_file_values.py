"""Every value of a reaction file is checked for its type and range: a bad one is one ReactionFileError line
"FILE, line N: ...", never a traceback and never silently accepted (Python API and command line alike).

The TOML v1.0.0 specification (toml.io) is the outside reference for what the parser hands over: nan, inf,
booleans, arrays and inline tables are all valid TOML values, so the reaction-file reader must refuse the
ones that make no sense for a key itself.
"""

import os
from pathlib import Path

import numpy as np
import pytest

import qcthermo
from qcthermo.cli import main
from qcthermo.errors import ReactionFileError
from qcthermo.reactions import load_reaction_file

#: a valid file; each {placeholder} is one line, so the line of a bad value is known (the number beside it)
TEMPLATE = """\
[conditions]
{state}
{conditions}

{header}
logs = "a.out"
{species}
[species.b]
logs = "b.out"
[species.ts]
logs = "ts.out"

[[reaction]]
{name}
{reactants}
transition_state = "ts"
{products}
{reaction}

[[profile]]
name = "path"
{states}
{profile}
"""
LINES = {"state": 2, "conditions": 3, "header": 5, "species": 7, "name": 14, "reactants": 15, "products": 17,
         "reaction": 18, "states": 22, "profile": 23}
DEFAULTS = {"state": 'standard_state = "1M"', "conditions": "", "header": "[species.a]", "species": "",
            "name": 'name = "step"', "reactants": 'reactants = ["a"]', "products": 'products = ["b"]',
            "reaction": "", "states": 'states = [["a"], ["ts"], ["b"]]', "profile": ""}


def _write(tmp_path: Path, **lines: str) -> Path:
    for name in ("a.out", "b.out", "ts.out"):
        (tmp_path / name).write_text("placeholder\n")
    path = tmp_path / "reactions.toml"
    path.write_text(TEMPLATE.format(**{**DEFAULTS, **lines}))
    return path


def _refused(path: Path, line: int | None, needle: str) -> str:
    """The one-line error of loading ``path``: it names the file, the line and ``needle``."""
    with pytest.raises(ReactionFileError) as err:
        load_reaction_file(path)
    message = str(err.value)
    where = f"{path.resolve()}, line {line}: " if line else f"{path.resolve()}: "
    assert message.startswith(where), message
    assert needle in message, message
    assert "\n" not in message and len(message) < 500, message
    return message


def test_the_template_is_valid(tmp_path):
    # the reference point of every case below: unchanged, the file loads (and says what it read)
    rf = load_reaction_file(_write(tmp_path))
    assert rf.conditions == {"standard_state": "1M"}
    assert [r.name for r in rf.reactions] == ["step"] and rf.profiles[0].states[1] == [(1.0, "ts")]


# Temperatures are thermodynamic (absolute) temperatures, > 0 K; pressures and concentrations are > 0
# (definitions); the scale factors' range is Conditions' own check (published factors lie near 1, common practice).
CONDITIONS = [
    "temperature = []", 'temperature = ["a"]', "temperature = true", "temperature = [300, -5]",
    "temperature = nan", "temperature = inf", "temperature = -inf", "temperature = 0", 'temperature = "300"',
    "temperature = { value = 300 }", "temperature = [[300, 400]]", "temperature = [300, nan]",
    "pressure = 0", "pressure = -1e5", "pressure = nan", "pressure = inf", 'pressure = "1atm"',
    "pressure = { value = 1 }", "pressure = true", "pressure = [101325]",
    "low_mode_threshold = -10", "low_mode_threshold = nan", 'low_mode_threshold = "100"', "low_mode_threshold = true",
    "low_mode_model = 'grimme'", "low_mode_model = 3",
    "frequency_scale = true", 'frequency_scale = "0.98"', "frequency_scale = 9.7", "frequency_scale = 0",
    "frequency_scale = nan", "frequency_scale = [0.98]",
    "zpe_scale = 2.0", 'zpe_scale = "auto"', "zpe_scale = true", "zpe_scale = -inf",
    "rotor_inertia = 1.0", "rotor_inertia = -1e-44", 'rotor_inertia = "heavy"', "rotor_inertia = true",
    "imaginary_policy = 'ignore'", "imaginary_policy = 1",
    "imaginary_threshold = -5", "imaginary_threshold = nan", 'imaginary_threshold = "50"',
    "imaginary_threshold = true", "imaginary_threshold = inf",
]


@pytest.mark.parametrize("line", CONDITIONS)
def test_bad_conditions_name_file_and_line(tmp_path, line):
    key = line.split(" =")[0]
    _refused(_write(tmp_path, conditions=line), LINES["conditions"], f"[conditions] {key}")


@pytest.mark.parametrize("line", ["standard_state = 1", "standard_state = true", 'standard_state = "infM"',
                                  'standard_state = "nanM"', 'standard_state = "-1M"', 'standard_state = "2atm"',
                                  'standard_state = ["1M"]'])
def test_bad_standard_state(tmp_path, line):
    _refused(_write(tmp_path, state=line), LINES["state"], "[conditions] standard_state")


def test_good_conditions_are_converted(tmp_path):
    # the values a user writes for each key (docs/reactions.md, "Accepted values"), and what they become
    lines = ("temperature = [250, 298.15]\npressure = 1e5\nlow_mode_threshold = 0\nfrequency_scale = 'AUTO'\n"
             "rotor_inertia = 'Molecular'\nimaginary_threshold = 0\nzpe_scale = 0.98\nimaginary_policy = 'drop'")
    rf = load_reaction_file(_write(tmp_path, conditions=lines))
    np.testing.assert_array_equal(rf.conditions["temperature"], [250.0, 298.15])
    assert rf.conditions["frequency_scale"] == "auto" and rf.conditions["rotor_inertia"] == "molecular"
    assert rf.conditions["pressure"] == 1e5 and rf.conditions["zpe_scale"] == 0.98
    # they make Conditions without a complaint: the file's checks and Conditions' agree
    assert qcthermo.Conditions(**rf.conditions).imaginary_policy == "drop"


def test_more_temperatures_than_the_cap_are_refused(tmp_path):
    # 10 000 temperatures is the documented cap (docs/reactions.md); a grid that fine is no real study
    many = "temperature = [" + ", ".join(str(200 + 0.01 * i) for i in range(10_001)) + "]"
    _refused(_write(tmp_path, conditions=many), LINES["conditions"], "1 to 10000")


SPECIES = [
    "concentration = inf", "concentration = nan", "concentration = 0", "concentration = -1",
    'concentration = "abcM"', 'concentration = "infM"', 'concentration = "0M"', 'concentration = "-5M"',
    "concentration = true", 'concentration = "1atm"', "concentration = [55.3]",
    "symmetry_number = 121", "symmetry_number = 0", "symmetry_number = 1.5", "symmetry_number = 9223372036854775807",
    "symmetry_number = true", 'symmetry_number = "2"',
    "electronic_degeneracy = 101", "electronic_degeneracy = 0", "electronic_degeneracy = 2.0",
    "enantiomers = 3", "enantiomers = 2.0", "enantiomers = true", "enantiomers = 0",
    "label = 5", 'label = "a\\u0000b"', 'label = "tab\\there"', f'label = "{"x" * 201}"', 'label = ""',
    'transition_state = "yes"', "transition_state = 1",
    'imaginary_policy = "ignore"', 'imaginary_policy = ["drop"]',
]


@pytest.mark.parametrize("line", SPECIES)
def test_bad_species_values_name_file_and_line(tmp_path, line):
    key = line.split(" =")[0]
    _refused(_write(tmp_path, species=line), LINES["species"], f"[species.a] {key}")


@pytest.mark.parametrize(("header", "needle"), [
    ('[species."a\\u0000b"]', "control characters"), ('[species."a b"]', "spaces"),
    (f'[species.{"x" * 201}]', "at most 200"), ('[species.""]', "empty"),
])
def test_bad_species_names(tmp_path, header, needle):
    _refused(_write(tmp_path, header=header), LINES["header"], needle)


def test_good_species_values_at_their_limits(tmp_path):
    # the caps (common practice): sigma(I_h) = 60 and 2n for D_n groups stay below 120; 2S+1 and 2J+1 of real
    # molecules and atoms below 100
    lines = "symmetry_number = 120\nelectronic_degeneracy = 100\nenantiomers = 2\nconcentration = '55.3M'\n" \
            f"label = '{'x' * 200}'"
    a = load_reaction_file(_write(tmp_path, species=lines)).species["a"]
    assert (a.symmetry_number, a.electronic_degeneracy, a.enantiomers) == (120, 100, 2)
    assert a.concentration == pytest.approx(55.3) and len(a.label) == 200
    # water's own concentration as a bare number of mol/L: 55.3 M (docs/reactions.md; from memory: 997 g/L / 18.015)
    assert load_reaction_file(_write(tmp_path, species="concentration = 55.3")).species["a"].concentration == 55.3
    assert load_reaction_file(_write(tmp_path, species="enantiomers = 1")).species["a"].enantiomers == 1


REACTIONS = [
    ("name", 'name = "a\\u0000b"', "control characters"), ("name", f'name = "{"x" * 201}"', "at most 200"),
    ("name", 'name = "line\\nbreak"', "control characters"), ("name", "name = 5", "must be a string"),
    ("name", 'name = " "', "empty"),
    ("reaction", "degeneracy = nan", "degeneracy"), ("reaction", "degeneracy = inf", "degeneracy"),
    ("reaction", "degeneracy = 0", "degeneracy"), ("reaction", "degeneracy = -2", "degeneracy"),
    ("reaction", "degeneracy = true", "degeneracy"), ("reaction", 'degeneracy = "2"', "degeneracy"),
    ("reaction", 'tunnelling = "quantum"', "tunnelling"), ("reaction", "tunnelling = true", "tunnelling"),
    ("reaction", 'tunnelling = ["eckart"]', "tunnelling"),
    ("reactants", 'reactants = ["0 a"]', "'0 a'"), ("reactants", 'reactants = ["-2 a"]', "'-2 a'"),
    ("reactants", 'reactants = ["nan a"]', "'nan a'"), ("reactants", 'reactants = ["inf a"]', "'inf a'"),
    ("reactants", f'reactants = ["{"9" * 400} a"]', "finite number"),
    ("reactants", 'reactants = "0 a + b"', "'0 a'"), ("reactants", 'reactants = ["a + 0.0 b"]', "'0.0 b'"),
    ("reactants", 'reactants = ["1e3 a"]', "'1e3 a'"), ("reactants", "reactants = []", "non-empty"),
    ("reactants", "reactants = [2, 'a']", "non-empty"), ("reactants", "reactants = [['a']]", "non-empty"),
    ("products", 'products = ["a"]', "the products are the reactants"),
    ("reaction", '[[reaction]]\nname = "step"\nreactants = ["b"]\nproducts = ["a"]', "used twice"),
]


@pytest.mark.parametrize(("where", "line", "needle"), REACTIONS)
def test_bad_reaction_values_name_file_and_line(tmp_path, where, line, needle):
    _refused(_write(tmp_path, **{where: line}), LINES[where], needle)


def test_reactants_equal_to_products_after_summing(tmp_path):
    # a + a is 2 a (stoichiometry): nothing happens, so the reaction is refused as written
    path = _write(tmp_path, reactants='reactants = ["a", "a"]', products='products = "2 a"')
    _refused(path, LINES["products"], "the products are the reactants")


def test_a_plus_separated_string_is_a_sum(tmp_path):
    # "2 A + B" as chemists write it (IUPAC Gold Book, stoichiometric equation) equals ["2 A", "B"]
    rf = load_reaction_file(_write(tmp_path, reactants='reactants = "2 a + b"', products='products = ["ts", "1.5 b"]'))
    assert rf.reactions[0].reactants == [(2.0, "a"), (1.0, "b")]
    assert rf.reactions[0].products == [(1.0, "ts"), (1.5, "b")]


PROFILES = [
    ("states", "states = []", "at least two states"), ("states", 'states = [["a"]]', "at least two states"),
    ("states", 'states = "a"', "at least two states"), ("states", "states = [1, 2]", "non-empty list"),
    ("states", 'states = [["a"], []]', "non-empty list"), ("states", 'states = [["a"], ["zzz"]]', "'zzz'"),
    ("states", 'states = [["a"], { x = 1 }]', "non-empty list"), ("states", 'states = [["a"], [["b"]]]', "non-empty"),
    ("profile", 'labels = ["A", "B\\u0000", "C"]', "control characters"),
    ("profile", 'labels = ["A", "B"]', "3 strings"), ("profile", 'cyclic = "yes"', "cyclic"),
    ("profile", "order = nan", "order"), ("profile", "order = true", "order"), ("profile", "color = 5", "color"),
    ("profile", 'label_states = ["nope"]', "'nope'"), ("profile", 'label_states = "ts"', "label_states"),
    ("profile", 'style = "x\\ny"', "control characters"),
]


@pytest.mark.parametrize(("where", "line", "needle"), PROFILES)
def test_bad_profile_values_name_file_and_line(tmp_path, where, line, needle):
    _refused(_write(tmp_path, **{where: line}), LINES[where], needle)


@pytest.mark.parametrize("depth", [150, 1000, 100_000])
def test_deep_nesting_is_one_line(tmp_path, depth):
    # the TOML parser recurses per nesting level (Python's tomllib raises RecursionError from a few hundred on)
    nested = "temperature = " + "[" * depth + "300" + "]" * depth
    _refused(_write(tmp_path, conditions=nested), LINES["conditions"], "temperature" if depth < 200 else "deeply")
    tables = "label = " + "{ a = " * depth + "1" + " }" * depth
    _refused(_write(tmp_path, species=tables), LINES["species"], "label" if depth < 200 else "deeply")


def test_deep_dotted_header_is_one_line(tmp_path):
    # 2000 dotted parts are no nesting for the TOML parser; the unknown key gets the line of its table's header
    path = _write(tmp_path, species="[species.a." + ".".join(["x"] * 2000) + "]")
    _refused(path, LINES["header"], "unknown key 'x' in [species.a]")


def test_a_table_given_inline_is_checked_and_located(tmp_path):
    # an inline table has no header line: the line of its key is named instead
    path = tmp_path / "reactions.toml"
    (tmp_path / "a.out").write_text("placeholder\n")
    path.write_text('species.a = { logs = "a.out", symmetry_number = 0 }\n')
    _refused(path, 1, "symmetry_number")
    path.write_text('conditions = 5\n')
    _refused(path, 1, "[conditions] must be a table")


def test_toml_syntax_error_keeps_the_parsers_line(tmp_path):
    # "3 00" is not a TOML value (TOML v1.0.0: no spaces inside numbers)
    _refused(_write(tmp_path, conditions="temperature = 3 00"), LINES["conditions"], "TOML syntax error")


def test_unreadable_files_are_one_line(tmp_path):
    text = _write(tmp_path).read_bytes()
    latin1 = tmp_path / "latin1.toml"
    latin1.write_bytes(text.replace(b"[species.b]", b"# caf\xe9\n[species.b]"))  # Latin-1 e-acute is no UTF-8
    _refused(latin1, 8, "not UTF-8")
    _refused(tmp_path, None, "is a directory")
    _refused(tmp_path / "missing.toml", None, "no such reaction file")
    big = tmp_path / "big.toml"
    big.write_bytes(text + b"#" * 10_000_000)
    _refused(big, None, "larger than 1 MB")
    with pytest.raises(ReactionFileError, match="not a usable file name"):
        load_reaction_file("a\0b.toml")
    if os.geteuid() != 0:  # root reads anything
        locked = tmp_path / "locked.toml"
        locked.write_bytes(text)
        locked.chmod(0)
        _refused(locked, None, "cannot read the reaction file (Permission denied)")


def test_command_line_and_python_api_give_the_same_one_line(tmp_path, capsys):
    path = _write(tmp_path, conditions="pressure = nan")
    expected = f"{path}, line 3: [conditions] pressure nan: expected a finite number"
    with pytest.raises(ReactionFileError, match=r"line 3: \[conditions\] pressure nan"):
        qcthermo.load_reaction_file(path)
    with pytest.raises(ReactionFileError, match=r"line 3: \[conditions\] pressure nan"):
        qcthermo.run(tmp_path, path)
    assert main(["run", str(tmp_path), "--reactions", str(path), "--out", str(tmp_path / "out"), "--quiet",
                 "--no-cache", "--jobs", "1"]) == 2
    err = capsys.readouterr().err
    assert err.splitlines() == [f"qcthermo run: error: {expected}"] and "Traceback" not in err
    assert main(["profile", str(path), "-o", str(tmp_path / "fig.svg"), "--quiet", "--no-cache"]) == 2
    assert capsys.readouterr().err.splitlines() == [f"qcthermo profile: error: {expected}"]
    assert not (tmp_path / "out").exists() and not (tmp_path / "fig.svg").exists()


#: pieces a slip or a damaged file puts into TOML: values of every type, brackets, quotes, controls, non-ASCII
FUZZ_PIECES = ["nan", "inf", "-inf", "true", "0", "-1", "1e999", "9" * 30, "[", "]", "{", "}", "=", ",", ".", '"',
               "'", "+", "#", "\n", "\x00", "\t", "é", "[[", "]]", " + 0 a", "x" * 300, "[1, [2]]", "{ a = 1 }"]


def test_seeded_mutations_load_or_fail_in_one_line(tmp_path):
    # 600 seeded mutations of the valid template: each loads, or fails with one ReactionFileError line (the rule of
    # docs/reactions.md) naming a line; any other exception (TypeError, RecursionError, ...) fails the test
    rng = np.random.default_rng(20240611)
    base = _write(tmp_path).read_text()
    path = tmp_path / "fuzz.toml"
    outcomes = {"loaded": 0, "refused": 0}
    for _ in range(600):
        text = base
        for _ in range(int(rng.integers(1, 4))):
            at, cut = int(rng.integers(0, len(text))), int(rng.integers(0, 4))
            text = text[:at] + str(rng.choice(FUZZ_PIECES)) + text[at + cut:]
        path.write_text(text, encoding="utf-8")
        try:
            rf = load_reaction_file(path)
        except ReactionFileError as err:
            assert "\n" not in str(err) and str(err).startswith(f"{path}, line "), (text, str(err))
            outcomes["refused"] += 1
            continue
        outcomes["loaded"] += 1
        t = np.atleast_1d(rf.conditions.get("temperature", 298.15))
        assert np.all(np.isfinite(t) & (t > 0)), text  # nothing non-physical gets through silently
        assert all(c > 0 and np.isfinite(c) for r in rf.reactions for c, _ in r.reactants + r.products), text
    assert outcomes["loaded"] and outcomes["refused"]  # the mutations exercise both outcomes


def test_an_unclosed_string_names_the_last_line(tmp_path):
    # the TOML parser places an unclosed multi-line string "at end of document": the last line (23) is named
    message = _refused(_write(tmp_path, profile='style = """dashed'), 23, "TOML syntax error")
    assert "end of document" in message

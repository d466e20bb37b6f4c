"""The reaction file: schema, errors with line and name, balance, energetics."""

from collections import Counter
from pathlib import Path

import numpy as np
import pytest

from qcthermo.errors import ReactionFileError
from qcthermo.reactions import (
    QUANTITIES,
    balance_problem,
    check_balance,
    load_reaction_file,
    reaction_energetics,
    state_values,
)

GOOD = """\
[conditions]
temperature = 298.15
standard_state = "1M"
low_mode_model = "qrrho"

[ensemble]
rmsd_threshold = 0.2

[species.h2]
logs = ["h2.out"]
[species.o2]
logs = "o2.out"
symmetry_number = 2
[species.water]
logs = ["w*.out"]
concentration = "55.3M"
[species.ts]
logs = ["ts.out"]
transition_state = true

[[reaction]]
name = "combustion"
reactants = ["2 h2", "o2"]
transition_state = "ts"
products = ["2 water"]
tunnelling = "wigner"

[[profile]]
name = "path"
states = [
  ["2 h2", "o2"],
  ["ts"],
  ["2 water"],
]
color = "#0072B2"
label_states = ["ts"]
overlay = "oxidation"
"""


def _write(tmp_path: Path, text: str, files=("h2.out", "o2.out", "w1.out", "w2.out", "ts.out")) -> Path:
    for name in files:
        (tmp_path / name).write_text("placeholder\n")
    path = tmp_path / "reactions.toml"
    path.write_text(text)
    return path


def test_good_file_parses(tmp_path):
    rf = load_reaction_file(_write(tmp_path, GOOD))
    assert rf.conditions == {"temperature": 298.15, "standard_state": "1M", "low_mode_model": "qrrho"}
    assert rf.ensemble["rmsd_threshold"] == 0.2
    assert [p.name for p in rf.species["water"].logs] == ["w1.out", "w2.out"]
    assert rf.species["water"].concentration == pytest.approx(55.3)
    assert rf.species["o2"].symmetry_number == 2
    (r,) = rf.reactions
    assert r.reactants == [(2.0, "h2"), (1.0, "o2")] and r.products == [(2.0, "water")]
    assert r.transition_state == "ts" and r.tunnelling == "wigner" and r.line == 21
    assert r.molecularity_forward == 3 and r.molecularity_reverse == 2
    (p,) = rf.profiles
    assert p.labels == ["2 h2 + o2", "ts", "2 water"]
    assert p.presentation == {"color": "#0072B2", "label_states": ["ts"], "overlay": "oxidation"}
    assert rf.transition_states() == {"ts"}


def test_a_byte_order_mark_is_read_not_refused(tmp_path):
    # Unicode 15.0, section 23.8: U+FEFF at the start of a file is a signature (Notepad writes it), not text
    path = _write(tmp_path, GOOD)
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    assert load_reaction_file(path).conditions == load_reaction_file(_write(tmp_path, GOOD)).conditions


@pytest.mark.parametrize(
    ("change", "line", "needle"),
    [
        (('reactants = ["2 h2", "o2"]', 'reactants = ["2 h2", "ozone"]'), 23, "'ozone'"),
        (('tunnelling = "wigner"', 'tunneling = "wigner"'), 26, "'tunneling'"),
        (('logs = "o2.out"', 'logs = "o2_missing*.out"'), 12, "o2_missing"),
        (('symmetry_number = 2', 'symmetry_number = 0'), 13, "symmetry_number"),
        (('name = "path"', 'name = "path"\nwidth = 3'), 30, "'width'"),
        (('[species.ts]', '[species.ts'), 17, "syntax"),
        (('[[profile]]', '[[reaction]]\nname = "combustion"\nreactants = ["h2"]\nproducts = ["h2"]\n[[profile]]'), 28,
         "[[reaction]] 'combustion': the name is used twice"),
        (('name = "path"\n', ''), 28, "[[profile]] needs a 'name'"),
    ],
)
def test_bad_files_name_the_line_and_the_item(tmp_path, change, line, needle):
    with pytest.raises(ReactionFileError) as err:
        load_reaction_file(_write(tmp_path, GOOD.replace(*change)))
    message = str(err.value)
    assert f"line {line}" in message and needle in message
    assert "\n" not in message


def test_unbalanced_reaction_names_reaction_and_line(tmp_path):
    # Conservation of atoms: 2 H2 + O2 -> 2 H2O balances, H2 + O2 -> 2 H2O does not.
    formulas = {"h2": Counter(H=2), "o2": Counter(O=2), "water": Counter(H=2, O=1), "ts": Counter(H=4, O=2)}
    charges = dict.fromkeys(formulas, 0)
    rf = load_reaction_file(_write(tmp_path, GOOD))
    check_balance(rf, formulas, charges)  # balanced: no error
    rf = load_reaction_file(_write(tmp_path, GOOD.replace('"2 h2", "o2"]\ntransition', '"h2", "o2"]\ntransition')))
    with pytest.raises(ReactionFileError, match=r"line 21: reaction 'combustion': atoms do not balance.*H \+2"):
        check_balance(rf, formulas, charges)


def test_charge_balance():
    # Conservation of charge: A- -> A is unbalanced even with the same atoms.
    formulas = {"a": Counter(C=1), "a_minus": Counter(C=1)}
    assert "charge" in balance_problem([(1.0, "a_minus")], [(1.0, "a")], formulas, {"a": 0, "a_minus": -1})


def test_energetics_are_stoichiometric_sums(tmp_path):
    # dX = sum(nu X)_products - sum(nu X)_reactants; activation from the TS (definition of a reaction energy).
    rf = load_reaction_file(_write(tmp_path, GOOD))
    t = np.array([298.15, 400.0])
    # inputs only (the check is the definition): real final energies quoted in the third-party logs' README
    base = {"h2": -382.30824980, "o2": -74.96729878, "water": -382.05509182, "ts": -9.12869607}
    values = {n: {q: np.full_like(t, e * (1 + 0.001 * k)) for k, q in enumerate(QUANTITIES)}
              for n, e in base.items()}
    out = reaction_energetics(rf.reactions[0], values)
    for q in QUANTITIES:
        v = {n: values[n][q] for n in values}
        np.testing.assert_allclose(out["d" + q], 2 * v["water"] - 2 * v["h2"] - v["o2"])
        np.testing.assert_allclose(out["d" + q + "_act"], v["ts"] - 2 * v["h2"] - v["o2"])
        np.testing.assert_allclose(out["d" + q + "_act_rev"], v["ts"] - 2 * v["water"])
    rel = state_values(rf.profiles[0].states, values)
    np.testing.assert_allclose(rel[0]["G"], 0.0)
    np.testing.assert_allclose(rel[2]["G"], out["dG"])

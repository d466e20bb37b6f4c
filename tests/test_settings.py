"""Conditions: bounds on every option (one line, exit 2) and one merge of defaults, file and explicit values.

The bounds are stated in docs/reactions.md ("Conditions"); the cases are IEEE 754's non-finite values (nan,
inf), an overflow (1e308 K: exp(-hcν/kT) and the translational partition function stop being finite numbers),
and grids too large to hold (a step of 1e-300 K asks for 1e302 points). The merge is checked against the
command line itself, the published interface of the same computation (DESIGN.md section 10).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import qcthermo
from qcthermo.cli import main
from qcthermo.errors import QcthermoError
from qcthermo.records import Conditions

pytestmark = pytest.mark.usefixtures("cache_dir")

BAD_OPTIONS = [
    ["--temperature-range", "nan:300:10"],
    ["--temperature-range", "250:inf:10"],
    ["--temperature-range", "250:350:nan"],
    ["--temperature-range", "250:350:1e-300"],
    ["--temperature-range", "1:9000:0.0001"],  # 90 million temperatures
    ["--temperature", "1e308"],
    ["--temperature", "nan"],
    ["--temperature", "inf"],
    ["--standard-state", "infM"],
    ["--standard-state", "nanM"],
    ["--standard-state", "1e300M"],
    ["--low-mode-threshold", "1e300"],
    ["--low-mode-threshold", "nan"],
    ["--zpe-scale", "nan"],
    ["--frequency-scale", "inf"],
    ["--rotor-inertia", "nan"],
]


@pytest.mark.parametrize("option", BAD_OPTIONS, ids=lambda o: " ".join(o))
def test_every_option_out_of_bounds_is_one_line_and_exit_2(samples, tmp_path, capsys, option):
    for command in (["thermo", str(samples / "gas")],
                    ["run", str(samples / "gas"), "--reactions", str(samples / "reactions.toml"), "--out",
                     str(tmp_path / "out")]):
        assert main([*command, *option, "--jobs", "1", "--quiet"]) == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1 and "Traceback" not in err[0] and err[0].startswith(f"qcthermo {command[0]}: error:")
        assert not (tmp_path / "out").exists()  # refused before any work


def test_the_python_api_meets_the_same_bounds(samples):
    for bad in ({"temperature": 1e308}, {"temperature": np.arange(1.0, 1e6)}, {"standard_state": "infM"},
                {"low_mode_threshold": 1e300}, {"pressure": float("inf")}):
        with pytest.raises(ValueError):
            Conditions(**bad)
        with pytest.raises(QcthermoError):
            qcthermo.run(samples / "gas", jobs=1, cache=False, **bad)
    with pytest.raises(QcthermoError, match="unknown condition 'temprature'"):
        qcthermo.run(samples / "gas", jobs=1, cache=False, temprature=300)


@pytest.fixture
def cli_reactions(samples, tmp_path) -> pd.DataFrame:
    out = tmp_path / "out"
    assert main(["run", str(samples), "--reactions", str(samples / "reactions.toml"), "--out", str(out),
                 "--jobs", "1", "--no-cache", "--quiet"]) in (0, 1)
    return pd.read_csv(out / "reactions.csv").set_index("reaction")


def test_the_api_with_conditions_keeps_the_files_and_matches_the_command_line(samples, cli_reactions):
    # the sample file sets standard_state = "1M"; Conditions(temperature=298.15) sets nothing else, so the
    # file's 1 M must stay (it was dropped: h_abstraction's dG‡ at 1 atm, 1.89 kcal/mol above the command line's)
    results = qcthermo.run(samples, reactions=samples / "reactions.toml", conditions=Conditions(temperature=298.15),
                           jobs=1, cache=False)
    assert results.conditions.standard_state == "1M"
    api = results.reactions.set_index("reaction")
    column = "dG_qrrho_act_kcal_mol"
    pd.testing.assert_series_equal(api[column].dropna(), cli_reactions[column].dropna(), rtol=1e-9)
    assert api.loc["hcn_isomerisation", column] == pytest.approx(cli_reactions.loc["hcn_isomerisation", column])
    assert not [f for f in results.findings if f.subject == "conditions"]  # nothing overridden


def test_explicit_keywords_override_the_file_and_say_so(samples):
    results = qcthermo.run(samples, reactions=samples / "reactions.toml", temperature=350.0, standard_state="1atm",
                           jobs=1, cache=False)
    assert results.conditions.standard_state == "1atm" and float(results.temperatures[0]) == 350.0
    overridden = sorted(f.message for f in results.findings if f.subject == "conditions")
    assert overridden == ["standard_state = 1atm (given) overrides the reaction file's standard_state = 1M",
                          "temperature = 350 (given) overrides the reaction file's temperature = 298.15"]


def test_a_field_set_to_its_default_still_overrides_the_file(samples):
    # Conditions.given: what the caller set counts, even when it equals Conditions()'s default (1 atm)
    from qcthermo.settings import explicit_values

    assert explicit_values(Conditions(temperature=298.15)) == {"temperature": 298.15}
    assert set(explicit_values(Conditions(standard_state="1atm"))) == {"standard_state"}
    assert set(explicit_values(Conditions().replace(standard_state="1atm"))) == {"standard_state"}
    results = qcthermo.run(samples / "gas", reactions=samples / "reactions.toml",
                           conditions=Conditions(standard_state="1atm"), jobs=1, cache=False)
    assert results.conditions.standard_state == "1atm"

"""Hindered rotors through the command line, the reaction file and the run's tables.

Sources of the check values, named beside each check:
- "McQuarrie": the harmonic oscillator's entropy of one mode (McQuarrie, Statistical Mechanics, eq. 6-24;
  the engine's function is checked against ASE in test_thermo_ase.py).
- "printed": the number as printed in the log (ethane's torsion, the lowest P.Frequency, 314.28 cm^-1).
- "input": what sample_outputs/inputs/ and reactions.toml ask for.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from qcthermo.cli import main
from qcthermo.errors import ReactionFileError
from qcthermo.reactions import load_reaction_file
from qcthermo.thermo import harmonic_entropy, vibrational_temperatures


def _thermo_json(samples: Path, tmp_path: Path, *options: str) -> dict:
    out = tmp_path / f"thermo{len(options)}.json"
    assert main(["thermo", str(samples / "gas"), "--no-cache", "--jobs", "1", "--quiet", "--low-mode-model", "rrho",
                 "--json", str(out), *options]) == 0
    return {f["file"]: f for f in json.loads(out.read_text())["files"]}


def test_thermo_command_replaces_the_torsion(samples, tmp_path, cache_dir):
    harmonic = _thermo_json(samples, tmp_path)
    hindered = _thermo_json(samples, tmp_path, "--internal-rotors", "hindered")
    assert harmonic["ethane.out"]["rotors"] == [] and hindered["water.out"]["rotors"] == []
    assert harmonic["water.out"]["model"] == hindered["water.out"]["model"]  # no torsion: nothing changes
    (rotor,) = hindered["ethane.out"]["rotors"]
    assert rotor["frequency"] == pytest.approx(314.28)  # printed
    assert (rotor["n"], rotor["sigma_int"], rotor["source"]) == (3, 3, "frequency")
    # the rotor's S stands where the mode's harmonic S stood (McQuarrie)
    s_mode = harmonic_entropy(vibrational_temperatures(314.28), 298.15)
    s_harm, s_hind = (r["ethane.out"]["model"]["entropy_Eh_K"][0] for r in (harmonic, hindered))
    assert s_hind - s_harm == pytest.approx(rotor["S"][0] - s_mode, rel=1e-9)
    assert 314.28 not in hindered["ethane.out"]["frequencies_cm1"]


def _reaction_file(tmp_path: Path, samples: Path, body: str) -> Path:
    path = tmp_path / "r.toml"
    path.write_text(f'[species.ethane]\nlogs = ["{samples / "gas/ethane.out"}"]\n{body}\n')
    return path


def test_reaction_file_sets_the_treatment(samples, tmp_path):
    rf = load_reaction_file(_reaction_file(tmp_path, samples, '[conditions]\ninternal_rotors = "hindered"'))
    assert rf.conditions["internal_rotors"] == "hindered"


@pytest.mark.parametrize(("body", "message"), [
    ('[conditions]\ninternal_rotors = "free"', "internal_rotors 'free': expected one of harmonic, hindered"),
    ('rotors = [{atoms = [1, 2, 3]}]', "each entry needs 'atoms' and 'scan'"),
    ('rotors = [{atoms = [1, 2, 2, 4], scan = "x.out"}]', "four distinct atom numbers"),
    ('rotors = [{atoms = [0, 1, 2, 3], scan = "x.out"}]', "counted from 1"),
    ('rotors = "x.out"', "expected a list of tables"),
])
def test_reaction_file_refuses_bad_rotor_settings(samples, tmp_path, body, message):
    if body.startswith("[conditions]"):
        text = body + f'\n[species.ethane]\nlogs = ["{samples / "gas/ethane.out"}"]\n'
        path = tmp_path / "r.toml"
        path.write_text(text)
    else:
        path = _reaction_file(tmp_path, samples, body)
    with pytest.raises(ReactionFileError, match="line") as err:
        load_reaction_file(path)
    assert message in str(err.value)

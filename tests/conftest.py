"""Shared test fixtures: where the sample scenario and the third-party logs live."""

import os
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_outputs"
#: beside the project; QCTHERMO_THIRD_PARTY_LOGS names it for a checkout kept elsewhere (a git worktree)
THIRD_PARTY = Path(os.environ.get("QCTHERMO_THIRD_PARTY_LOGS")
                   or ROOT.parent / "shared" / "fixtures" / "third-party-logs")

#: a reaction file over three bundled NWChem outputs: HCN -> HNC through its transition state, and its profile
ISOMERISATION_TOML = """
[species.hcn]
logs = ["{gas}/hcn.out"]
[species.hnc]
logs = ["{gas}/hnc.out"]
[species.ts_hcn]
logs = ["{gas}/ts_hcn.out"]

[[reaction]]
name = "isomerisation"
reactants = ["hcn"]
transition_state = "ts_hcn"
products = ["hnc"]

[[profile]]
name = "isomerisation"
states = [["hcn"], ["ts_hcn"], ["hnc"]]
"""


@pytest.fixture
def third_party() -> Path:
    """The folder of real logs written by others (../shared); skip the test when absent."""
    if not THIRD_PARTY.is_dir():
        pytest.skip("../shared/fixtures/third-party-logs is absent (a plain clone)")
    return THIRD_PARTY


@pytest.fixture
def samples() -> Path:
    """The bundled sample scenario."""
    return SAMPLES


@pytest.fixture
def cache_dir(tmp_path, monkeypatch) -> Path:
    """A parse-cache folder of the test's own (QCTHERMO_CACHE_DIR), not yet created."""
    directory = tmp_path / "cache"
    monkeypatch.setenv("QCTHERMO_CACHE_DIR", str(directory))
    return directory


@pytest.fixture
def isomerisation_file(samples, tmp_path) -> Path:
    """reactions.toml in the test's folder, over the bundled HCN/HNC outputs (committed: never skipped)."""
    gas = samples / "gas"
    path = tmp_path / "reactions.toml"
    path.write_text(ISOMERISATION_TOML.format(gas=gas))
    return path


@pytest.fixture
def sample_run(samples, isomerisation_file):
    """The main job on three bundled NWChem outputs (:func:`isomerisation_file`) over a temperature range."""
    import numpy as np

    import qcthermo
    from qcthermo.records import Conditions

    cond = Conditions(temperature=np.array([250.0, 300.0, 350.0]), low_mode_model="qrrho")
    return qcthermo.run(samples / "gas", reactions=isomerisation_file, conditions=cond, jobs=1, cache=False)

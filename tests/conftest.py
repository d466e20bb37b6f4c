"""Shared test fixtures: where the sample scenario and the third-party logs live."""

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_outputs"
THIRD_PARTY = ROOT.parent / "shared" / "fixtures" / "third-party-logs"


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

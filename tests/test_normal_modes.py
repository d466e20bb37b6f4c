"""Normal-mode displacement vectors read from real logs (Calculation.normal_modes).

Sources of the check values, named beside each check:
- "printed": the numbers as printed in the log itself, read by a plain regular expression here.
- "Eckart": a vibration moves no centre of mass, sum_i m_i d_i = 0, and the modes are orthonormal in
  mass-weighted coordinates (E. B. Wilson, J. C. Decius, P. C. Cross, Molecular Vibrations, McGraw-Hill
  1955, chapter 2; from memory).
- "README": ../shared/fixtures/third-party-logs/README.md (the dvb jobs: 54 modes).
"""

from __future__ import annotations

import re

import numpy as np
import pytest

import qcthermo
from qcthermo.readers import fallback
from qcthermo.records import Calculation, atomic_masses
from qcthermo.survey import cached_calculation


def _eckart(calc: Calculation) -> tuple[float, float]:
    """(largest |sum_i m_i d_i| of a unit mode, largest off-diagonal of the mass-weighted overlap matrix)."""
    masses = atomic_masses(calc.symbols)
    modes = calc.normal_modes
    com = np.abs(np.einsum("i,kij->kj", masses, modes)).max() / masses.sum()
    weighted = (modes * np.sqrt(masses)[None, :, None]).reshape(len(modes), -1)
    weighted /= np.linalg.norm(weighted, axis=1)[:, None]
    return float(com), float(np.abs(weighted @ weighted.T - np.eye(len(modes))).max())


@pytest.mark.parametrize("name", ["gas/ch4.out", "gas/water.out", "gas/ts_abstraction.out", "solvent/methanediol.out"])
def test_sample_modes_are_the_vibrations(samples, name):
    calc = qcthermo.read_log(samples / name)
    assert calc.normal_modes.shape == (len(calc.frequencies), calc.natoms, 3)  # README of the field: one per mode
    com, overlap = _eckart(calc)
    assert com < 1e-4 and overlap < 1e-3  # Eckart (the log prints 5 decimals)


def test_nwchem_modes_match_the_printed_columns(samples):
    """gas/ch4.out is read by the fallback extractor: its 1373.10 cm^-1 mode is column 7 of the last block."""
    calc = qcthermo.read_log(samples / "gas/ch4.out")
    text = (samples / "gas/ch4.out").read_text()
    block = text[text.rfind("Projected Frequencies expressed in cm-1"):]
    column7 = [float(row.split()[1]) for row in re.findall(r"^\s+\d+(?:\s+-?\d+\.\d+){6}$", block, re.M)[15:30]]
    printed = np.array(column7).reshape(5, 3)  # printed: rows 1-15 of the block of columns 7-12
    mode = calc.normal_modes[0]  # the first vibration: column 7 (columns 1-6 are the projected zeros)
    assert calc.frequencies[0] == pytest.approx(1373.10)  # printed
    np.testing.assert_allclose(mode, printed / np.linalg.norm(printed), atol=1e-5)


def test_fallback_and_cclib_give_the_same_modes(third_party):
    """NWChem 7.0 dvb: cclib and the text extractor read the same block (README: 54 modes)."""
    from qcthermo.readers.normalise import normal_mode_vectors
    from qcthermo.readers.source import load

    source = load(third_party / "nwchem7.0/dvb_ir.out")
    by_text = fallback.nwchem(source.text)
    calc = qcthermo.read_log(source.path)
    modes = normal_mode_vectors(by_text["normal_modes"], by_text["frequencies"], calc.symbols, calc.coordinates, True)
    assert modes.shape == (54, 20, 3)  # README
    np.testing.assert_allclose(modes, calc.normal_modes, atol=2e-5)


@pytest.mark.parametrize("name", ["orca6.0/dvb_ir.out", "orca5.0/dvb_ir.out", "gaussian16/dvb_ir.out",
                                  "nwchem7.0/dvb_ir.out"])
def test_third_party_modes(third_party, name):
    calc = qcthermo.read_log(third_party / name)
    assert calc.normal_modes.shape == (54, 20, 3)  # README
    com, overlap = _eckart(calc)
    assert com < 2e-3 and overlap < 1e-3  # Eckart (ORCA's vectors are 'normalized but not orthogonal')


def test_modes_survive_the_cache_record(samples):
    calc = qcthermo.read_log(samples / "gas/ch4.out")
    back = cached_calculation(calc.to_dict())
    np.testing.assert_array_equal(back.normal_modes, calc.normal_modes)
    damaged = dict(calc.to_dict(), normal_modes=calc.to_dict()["normal_modes"][:-1])
    assert cached_calculation(damaged) is None  # a record whose modes do not fit its frequencies is a miss

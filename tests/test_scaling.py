"""Frequency scale factors: values against the published tables, lookup by level of theory, notes, and
their use by the engine.

Published values below were read from the reproduction of the tables named in qcthermo/scaling.py
(README of github.com/liyuanhe211/Collection_of_Frequency_Scale_Factors, commit 1bbe43b), each row there
marked with its source.
"""

from __future__ import annotations

import pytest
from test_thermo_cantera import molecule

from qcthermo import Conditions, thermochemistry
from qcthermo.scaling import (
    MERRICK_MORAN_RADOM,
    MINNESOTA,
    SCALE_FACTORS,
    SCOTT_RADOM,
    find_scale_factor,
    normalise_level,
    resolve_scale_factors,
)


@pytest.mark.parametrize(
    ("level", "thermal", "zpe", "source"),
    [
        # Scott & Radom 1996 (doi:10.1021/jp960976r): B3-LYP/6-31G(d) ZPVE 0.9806, S(T) 1.0015
        ("B3LYP/6-31G(d)", 1.0015, 0.9806, SCOTT_RADOM),
        # Scott & Radom 1996: HF/6-31G(d) ZPVE 0.9135, S(T) 0.8978
        ("HF/6-31G(d)", 0.8978, 0.9135, SCOTT_RADOM),
        # Scott & Radom 1996: B3-PW91/6-31G(d) ZPVE 0.9774 (the table had 0.9772 typed from memory), S(T) 0.9920
        ("B3PW91/6-31G(d)", 0.9920, 0.9774, SCOTT_RADOM),
        # Merrick, Moran, Radom 2007 (doi:10.1021/jp073974n): B3LYP/6-311+G(d,p) ZPVE 0.9887, S(T) 1.0161
        ("B3LYP/6-311+G(d,p)", 1.0161, 0.9887, MERRICK_MORAN_RADOM),
        # Minnesota database v3b2: M06-2X/6-31+G(d,p) ZPE 0.967; wB97X-D/def2-TZVP ZPE 0.975
        ("M06-2X/6-31+G(d,p)", 0.967, 0.967, MINNESOTA),
        ("wB97X-D/def2-TZVP", 0.975, 0.975, MINNESOTA),
    ],
)
def test_entries_match_the_published_tables(level, thermal, zpe, source):
    entry = find_scale_factor(level)
    assert entry is not None and entry.source == source
    assert (entry.thermal, entry.zpe) == (thermal, zpe)


def test_remark_keeps_the_other_factors_of_the_table():
    # Scott & Radom 1996: B3-LYP/6-31G(d) H(T)-H(0) 0.9989, fundamentals 0.9614
    remark = find_scale_factor("B3LYP/6-31G(d)").remark
    assert "0.9989" in remark and "0.9614" in remark and "S(T)" in remark


def test_every_entry_is_sourced_and_unconfirmed_ones_say_so():
    keys = [normalise_level(entry.level) for entry in SCALE_FACTORS]
    assert len(keys) == len(set(keys)), "two entries for one level: the lookup would keep only the last"
    for entry in SCALE_FACTORS:
        assert entry.source in (SCOTT_RADOM, MERRICK_MORAN_RADOM, MINNESOTA)
        assert 0.85 < entry.thermal < 1.1 and 0.85 < entry.zpe < 1.05
    unconfirmed = [entry.level for entry in SCALE_FACTORS if "from memory" in entry.remark]
    assert unconfirmed == ["M06-2X/6-311+G(2df,2p)"]


@pytest.mark.parametrize("text", ["B3LYP/6-31G*", "b3lyp/6-31g(d)", "B3LYP / 6-31G(d)", "RB3LYP/6-31G*"])
def test_lookup_ignores_case_and_punctuation(text):
    entry = find_scale_factor(text)
    assert entry is not None and entry.level == "B3LYP/6-31G(d)"


def test_polarisation_shorthand_and_program_spellings():
    assert normalise_level("6-31G(d,p)") == normalise_level("6-31G**")
    assert normalise_level("6-31+G(d,p)") != normalise_level("6-31G(d,p)")
    assert find_scale_factor("M06-2X/6-31+G**").level == "M06-2X/6-31+G(d,p)"
    assert find_scale_factor("wB97XD/def2TZVP").level == "wB97X-D/def2-TZVP"  # Gaussian's keyword spelling
    assert find_scale_factor("UM062X/def2-TZVP").level == "M06-2X/def2-TZVP"
    assert find_scale_factor("B3LYP/6-311+G(2df,p)") is None
    assert find_scale_factor(None) is None


def test_auto_says_which_entry_or_none():
    thermal, zpe, source, notes = resolve_scale_factors("auto", None, "HF/6-31G*")
    assert (thermal, zpe) == (0.8978, 0.9135) and source == SCOTT_RADOM and "HF/6-31G(d)" in notes[0]
    thermal, zpe, source, notes = resolve_scale_factors("auto", None, "M06-2X/6-311+G(2df,2p)")
    assert "from memory" in notes[0]
    thermal, zpe, source, notes = resolve_scale_factors("auto", None, "CCSD(T)/cc-pVQZ")
    assert (thermal, zpe, source) == (1.0, 1.0, None) and "no table entry" in notes[0]
    assert resolve_scale_factors("auto", 0.99, "HF/6-31G*")[:2] == (0.8978, 0.99)
    assert resolve_scale_factors(0.97, None, None)[:2] == (0.97, 0.97)
    with pytest.raises(ValueError):
        resolve_scale_factors("automatic", None, "HF/6-31G*")


def test_engine_uses_the_auto_factors():
    mol = molecule("H2O").replace(level_of_theory="B3LYP/6-31G(d)")
    auto = thermochemistry(mol, Conditions(frequency_scale="auto"))
    explicit = thermochemistry(mol, Conditions(frequency_scale=1.0015, zpe_scale=0.9806))
    assert auto.gibbs == pytest.approx(explicit.gibbs, rel=1e-12)
    assert auto.scale_factors["source"] == SCOTT_RADOM
    assert any("B3LYP/6-31G(d)" in n for n in auto.notes)

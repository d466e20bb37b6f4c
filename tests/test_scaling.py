"""Frequency scale factors: lookup by level of theory, notes, and their use by the engine."""

from __future__ import annotations

import pytest
from test_thermo_cantera import molecule

from qcthermo import Conditions, thermochemistry
from qcthermo.scaling import SCALE_FACTORS, find_scale_factor, normalise_level, resolve_scale_factors


def test_every_entry_names_its_source_and_how_it_was_typed():
    for entry in SCALE_FACTORS:
        assert any(mark in entry.source for mark in ("J. Phys. Chem.", "J. Chem. Theory Comput.", "CCCBDB"))
        assert "from memory" in entry.remark
        assert 0.85 < entry.thermal < 1.05 and 0.85 < entry.zpe < 1.05


@pytest.mark.parametrize("text", ["B3LYP/6-31G*", "b3lyp/6-31g(d)", "B3LYP / 6-31G(d)", "RB3LYP/6-31G*"])
def test_lookup_ignores_case_and_punctuation(text):
    entry = find_scale_factor(text)
    assert entry is not None and entry.level == "B3LYP/6-31G(d)"
    # Scott & Radom 1996: B3LYP/6-31G(d) 0.9614 (fundamentals), 0.9806 (ZPE) (from memory)
    assert (entry.thermal, entry.zpe) == (0.9614, 0.9806)


def test_polarisation_shorthand():
    assert normalise_level("6-31G(d,p)") == normalise_level("6-31G**")
    assert normalise_level("6-31+G(d,p)") != normalise_level("6-31G(d,p)")
    assert find_scale_factor("M06-2X/6-31+G**") is not None
    assert find_scale_factor("B3LYP/6-311+G(2d,p)") is None
    assert find_scale_factor(None) is None


def test_auto_says_which_entry_or_none():
    thermal, zpe, source, notes = resolve_scale_factors("auto", None, "HF/6-31G*")
    assert (thermal, zpe) == (0.8953, 0.9135) and "Scott" in source and "HF/6-31G(d)" in notes[0]
    thermal, zpe, source, notes = resolve_scale_factors("auto", None, "CCSD(T)/cc-pVQZ")
    assert (thermal, zpe, source) == (1.0, 1.0, None) and "no table entry" in notes[0]
    assert resolve_scale_factors("auto", 0.99, "HF/6-31G*")[:2] == (0.8953, 0.99)
    assert resolve_scale_factors(0.97, None, None)[:2] == (0.97, 0.97)


def test_engine_uses_the_auto_factors():
    mol = molecule("H2O").replace(level_of_theory="B3LYP/6-31G(d)")
    auto = thermochemistry(mol, Conditions(frequency_scale="auto"))
    explicit = thermochemistry(mol, Conditions(frequency_scale=0.9614, zpe_scale=0.9806))
    assert auto.gibbs == pytest.approx(explicit.gibbs, rel=1e-12)
    assert auto.scale_factors["source"].startswith("A. P. Scott")
    assert any("B3LYP/6-31G(d)" in n for n in auto.notes)

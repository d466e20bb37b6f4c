"""Frequency scale factors for levels of theory, each with its published source.

Harmonic frequencies from electronic-structure methods are systematically off; one factor per level of
theory and per quantity corrects most of it. A single factor cannot serve both the zero-point energy and
the thermal terms, so each entry holds two:

- ``zpe``: the published ZPE (ZPVE) factor.
- ``thermal``: the factor for the partition function behind the thermal energy, entropy and heat
  capacity. Where the source publishes factors fitted to thermal contributions (Scott & Radom 1996 and
  Merrick, Moran & Radom 2007 fit H(T)-H(0) and S(T) separately), the S(T) factor is used, since the
  engine takes one factor for all thermal terms and the entropy is the larger of the two in a free
  energy; the entry's remark gives the H(T)-H(0) and fundamental-frequency factors of the same table.
  Where the source publishes only a ZPE factor (the Minnesota database), that factor is used for both.
  The fundamental-frequency factor is never used for thermal terms: it is fitted to IR band positions
  and for most levels lies well below the thermal factors of the same table (B3LYP/6-31G(d): 0.9614
  against S(T) 1.0015).

Provenance. The values were read from a public reproduction of the published tables, which lists each
value with its source (the README of github.com/liyuanhe211/Collection_of_Frequency_Scale_Factors,
commit 1bbe43b: rows marked 10.1021/jp960976r, 10.1021/jp073974n, and "Truhlar" = the database at
comp.chem.umn.edu/freqscale/version3b2.htm); the original papers' tables could not be read here. An
entry whose value could not be found there keeps the remark "from memory".
"""

from __future__ import annotations

import re
from dataclasses import dataclass

SCOTT_RADOM = "A. P. Scott, L. Radom, J. Phys. Chem. 1996, 100, 16502 (doi:10.1021/jp960976r)"
MERRICK_MORAN_RADOM = "J. P. Merrick, D. Moran, L. Radom, J. Phys. Chem. A 2007, 111, 11683 (doi:10.1021/jp073974n)"
MINNESOTA = (
    "Truhlar group database of frequency scale factors, version 3b2 (comp.chem.umn.edu/freqscale/version3b2.htm),"
    " method of I. M. Alecu, J. Zheng, Y. Zhao, D. G. Truhlar, J. Chem. Theory Comput. 2010, 6, 2872"
)


@dataclass(frozen=True)
class ScaleFactor:
    """Published frequency scale factors of one level of theory.

    Attributes:
        level: "method/basis" as written in the source.
        thermal: factor for the thermal energy, entropy and heat capacity (dimensionless).
        zpe: factor for the zero-point energy (dimensionless).
        source: the publication.
        remark: how the entry was obtained (which published factor fills ``thermal``, or "from memory").
    """

    level: str
    thermal: float
    zpe: float
    source: str
    remark: str = ""


def _radom(level: str, zpe: float, enthalpy: float, entropy: float, fundamentals: float, source: str) -> ScaleFactor:
    """An entry from a table of ZPVE, H(T)-H(0), S(T) and fundamental-frequency factors (Radom group)."""
    remark = f"thermal = S(T) factor; H(T)-H(0) factor {enthalpy}, fundamentals {fundamentals}"
    return ScaleFactor(level, entropy, zpe, source, remark)


def _minnesota(level: str, zpe: float) -> ScaleFactor:
    """An entry from the Minnesota database, which gives a ZPE factor (used for the thermal terms too)."""
    return ScaleFactor(level, zpe, zpe, MINNESOTA, "ZPE factor also used for the thermal terms")


SCALE_FACTORS: tuple[ScaleFactor, ...] = (
    # Scott & Radom 1996: ZPVE, H(T)-H(0), S(T), fundamentals. MP2 and QCISD are frozen-core unless "full".
    _radom("HF/3-21G", 0.9207, 0.9444, 0.9666, 0.9085, SCOTT_RADOM),
    _radom("HF/6-31G(d)", 0.9135, 0.8905, 0.8978, 0.8953, SCOTT_RADOM),
    _radom("HF/6-31+G(d)", 0.9153, 0.8945, 0.9027, 0.8970, SCOTT_RADOM),
    _radom("HF/6-31G(d,p)", 0.9181, 0.8912, 0.8990, 0.8992, SCOTT_RADOM),
    _radom("HF/6-311G(d,p)", 0.9248, 0.8951, 0.9021, 0.9051, SCOTT_RADOM),
    _radom("HF/6-311G(df,p)", 0.9247, 0.8908, 0.8981, 0.9054, SCOTT_RADOM),
    _radom("MP2/6-31G(d)", 0.9670, 1.0211, 1.0444, 0.9434, SCOTT_RADOM),
    _radom("MP2(full)/6-31G(d)", 0.9661, 1.0084, 1.0228, 0.9427, SCOTT_RADOM),
    _radom("MP2/6-31G(d,p)", 0.9608, 1.0084, 1.0232, 0.9370, SCOTT_RADOM),
    _radom("MP2/6-311G(d,p)", 0.9748, 1.0061, 1.0175, 0.9496, SCOTT_RADOM),
    _radom("QCISD/6-31G(d)", 0.9776, 1.0080, 1.0187, 0.9538, SCOTT_RADOM),
    _radom("BLYP/6-31G(d)", 1.0126, 1.0633, 1.0670, 0.9945, SCOTT_RADOM),
    _radom("BLYP/6-311G(df,p)", 1.0167, 1.0593, 1.0641, 0.9986, SCOTT_RADOM),
    _radom("BP86/6-31G(d)", 1.0108, 1.0478, 1.0527, 0.9914, SCOTT_RADOM),
    _radom("B3LYP/6-31G(d)", 0.9806, 0.9989, 1.0015, 0.9614, SCOTT_RADOM),
    _radom("B3P86/6-31G(d)", 0.9759, 0.9864, 0.9902, 0.9558, SCOTT_RADOM),
    _radom("B3PW91/6-31G(d)", 0.9774, 0.9885, 0.9920, 0.9573, SCOTT_RADOM),
    # Merrick, Moran & Radom 2007: same four factors, more functionals and basis sets.
    _radom("B3LYP/6-31+G(d)", 0.9829, 1.0053, 1.0080, 0.9636, MERRICK_MORAN_RADOM),
    _radom("B3LYP/6-31G(d,p)", 0.9838, 1.0003, 1.0033, 0.9627, MERRICK_MORAN_RADOM),
    _radom("B3LYP/6-31+G(d,p)", 0.9857, 1.0062, 1.0099, 0.9648, MERRICK_MORAN_RADOM),
    _radom("B3LYP/6-31G(2df,p)", 0.9853, 0.9909, 0.9946, 0.9652, MERRICK_MORAN_RADOM),
    _radom("B3LYP/6-311G(d,p)", 0.9888, 1.0062, 1.0104, 0.9682, MERRICK_MORAN_RADOM),
    _radom("B3LYP/6-311+G(d,p)", 0.9887, 1.0102, 1.0161, 0.9688, MERRICK_MORAN_RADOM),
    _radom("B3LYP/6-311+G(2d,p)", 0.9898, 1.0040, 1.0094, 0.9692, MERRICK_MORAN_RADOM),
    _radom("B3LYP/6-311++G(3df,3pd)", 0.9876, 0.9904, 0.9950, 0.9673, MERRICK_MORAN_RADOM),
    _radom("B3LYP/cc-pVDZ", 0.9931, 1.0061, 1.0093, 0.9717, MERRICK_MORAN_RADOM),
    _radom("B3LYP/cc-pVTZ", 0.9878, 0.9960, 1.0010, 0.9682, MERRICK_MORAN_RADOM),
    _radom("B3LYP/aug-cc-pVDZ", 0.9947, 1.0266, 1.0339, 0.9713, MERRICK_MORAN_RADOM),
    _radom("B3LYP/aug-cc-pVTZ", 0.9884, 0.9987, 1.0043, 0.9687, MERRICK_MORAN_RADOM),
    _radom("B3PW91/6-311+G(d,p)", 0.9858, 0.9978, 1.0040, 0.9648, MERRICK_MORAN_RADOM),
    _radom("PBE0/6-31G(d)", 0.9726, 0.9777, 0.9814, 0.9512, MERRICK_MORAN_RADOM),
    _radom("PBE0/6-31+G(d,p)", 0.9771, 0.9827, 0.9875, 0.9547, MERRICK_MORAN_RADOM),
    _radom("PBE0/6-311+G(d,p)", 0.9812, 0.9856, 0.9915, 0.9594, MERRICK_MORAN_RADOM),
    _radom("M05-2X/6-31+G(d,p)", 0.9631, 0.9504, 0.9445, 0.9419, MERRICK_MORAN_RADOM),
    _radom("M05-2X/6-311+G(d,p)", 0.9658, 0.9467, 0.9398, 0.9446, MERRICK_MORAN_RADOM),
    _radom("MP2/6-31+G(d,p)", 0.9657, 1.0198, 1.0334, 0.9418, MERRICK_MORAN_RADOM),
    _radom("MP2/6-311+G(d,p)", 0.9768, 1.0071, 1.0158, 0.9523, MERRICK_MORAN_RADOM),
    # Minnesota database (lambda^ZPE), for the functionals and basis sets of current practice.
    _minnesota("M06-2X/6-31+G(d,p)", 0.967),
    _minnesota("M06-2X/6-311+G(d,p)", 0.970),
    _minnesota("M06-2X/6-311++G(d,p)", 0.970),
    _minnesota("M06-2X/aug-cc-pVTZ", 0.971),
    _minnesota("M06-2X/def2-TZVP", 0.971),
    _minnesota("M06-2X/def2-TZVPP", 0.970),
    _minnesota("M06-2X/def2-QZVP", 0.970),
    _minnesota("M06-2X/ma-TZVP", 0.972),
    _minnesota("M06-2X/MG3S", 0.970),
    _minnesota("M06/6-31+G(d,p)", 0.980),
    _minnesota("M06/def2-TZVP", 0.982),
    _minnesota("M06-L/6-31+G(d,p)", 0.978),
    _minnesota("M06-L/def2-TZVP", 0.976),
    _minnesota("wB97X-D/def2-TZVP", 0.975),
    _minnesota("wB97X-D/ma-TZVP", 0.975),
    _minnesota("wB97X-D/maug-cc-pVTZ", 0.974),
    _minnesota("wB97X/def2-TZVP", 0.970),
    _minnesota("B3LYP/def2-TZVP", 0.985),
    _minnesota("B3LYP/ma-TZVP", 0.986),
    _minnesota("B3LYP/MG3S", 0.983),
    _minnesota("B3LYP/6-31G(2df,2p)", 0.981),
    _minnesota("PBE/def2-TZVP", 1.011),
    _minnesota("PBE0/MG3S", 0.975),
    _minnesota("revTPSS/def2-TZVP", 0.998),
    _minnesota("MP2/cc-pVDZ", 0.977),
    # Not found in the reproduction read for this table: kept as recalled, flagged in every note.
    ScaleFactor(
        "M06-2X/6-311+G(2df,2p)", 0.970, 0.970, MINNESOTA, "ZPE factor also used for the thermal terms; from memory"
    ),
)


def normalise_level(level: str) -> str:
    """A key that ignores case and punctuation: "B3LYP/6-31G*" and "b3lyp / 6-31G(d)" give the same.

    Polarisation shorthand is rewritten first ("(d)" -> "*", "(d,p)" -> "**"), then everything but
    letters, digits, "+" and "*" is dropped.
    """
    key = level.lower().replace(" ", "")
    key = key.replace("(d,p)", "**").replace("(d)", "*")
    return re.sub(r"[^a-z0-9+*]", "", key)


#: normalised level -> entry
_BY_KEY = {normalise_level(f.level): f for f in SCALE_FACTORS}


def find_scale_factor(level: str | None) -> ScaleFactor | None:
    """The table entry for a level of theory, or None.

    A restricted/unrestricted prefix of the method ("RB3LYP", "UHF", "ROHF") is ignored when the
    level itself is not in the table, since the factors do not depend on it.
    """
    if not level:
        return None
    key = normalise_level(level)
    if key in _BY_KEY:
        return _BY_KEY[key]
    for prefix in ("ro", "r", "u"):
        if key.startswith(prefix) and key[len(prefix) :] in _BY_KEY:
            return _BY_KEY[key[len(prefix) :]]
    return None


def resolve_scale_factors(
    frequency_scale: float | str, zpe_scale: float | None, level: str | None
) -> tuple[float, float, str | None, list[str]]:
    """(thermal factor, ZPE factor, source, notes) for the requested scaling.

    ``frequency_scale`` is a number or "auto"; "auto" looks ``level`` up in :data:`SCALE_FACTORS` and
    falls back to 1.0 with a note when nothing fits. An explicit ``zpe_scale`` always wins for the ZPE;
    without one the ZPE uses the thermal factor (or, with "auto", the entry's own ZPE factor).
    """
    notes: list[str] = []
    source = None
    if isinstance(frequency_scale, str):
        if frequency_scale.strip().lower() != "auto":
            raise ValueError(f"frequency scale {frequency_scale!r}: expected a number or 'auto'")
        entry = find_scale_factor(level)
        if entry is None:
            thermal, zpe = 1.0, 1.0
            notes.append(f"scale factors: no table entry fits level {level!r}; frequencies unscaled (1.0)")
        else:
            thermal, zpe, source = entry.thermal, entry.zpe, entry.source
            notes.append(
                f"scale factors: {entry.level} (thermal {thermal}, ZPE {zpe}) from {entry.source}"
                + (f" [{entry.remark}]" if entry.remark else "")
            )
    else:
        thermal = float(frequency_scale)
        zpe = thermal
    if zpe_scale is not None:
        zpe = float(zpe_scale)
    return thermal, zpe, source, notes

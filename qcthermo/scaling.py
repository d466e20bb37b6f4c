"""Frequency scale factors for levels of theory, each with its published source.

Harmonic frequencies from electronic-structure methods are systematically too high; a single factor per
level of theory brings them close to experiment. Separate factors are published for the zero-point
energy and for the fundamentals (used here for the thermal and entropy terms), because one factor
cannot fit both.

Every number in :data:`SCALE_FACTORS` was typed in from memory of the cited table, not read from it
while writing this file; each is marked so beside the entry. Where a source gives only a ZPE factor,
that factor is used for the thermal terms too, and the entry says so.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

SCOTT_RADOM = "A. P. Scott, L. Radom, J. Phys. Chem. 1996, 100, 16502"
ALECU = "I. M. Alecu, J. Zheng, Y. Zhao, D. G. Truhlar, J. Chem. Theory Comput. 2010, 6, 2872"
CCCBDB = "NIST Computational Chemistry Comparison and Benchmark Database (CCCBDB), vibrational scaling factors"


@dataclass(frozen=True)
class ScaleFactor:
    """Published frequency scale factors of one level of theory.

    Attributes:
        level: "method/basis" as written in the source.
        thermal: factor for the fundamentals, used for the thermal energy and entropy (dimensionless).
        zpe: factor for the zero-point energy (dimensionless).
        source: the publication.
        remark: how the entry was obtained (e.g. "ZPE factor used for both").
    """

    level: str
    thermal: float
    zpe: float
    source: str
    remark: str = ""


SCALE_FACTORS: tuple[ScaleFactor, ...] = (
    # Scott & Radom 1996, Table of fundamental-frequency and ZPE factors (from memory)
    ScaleFactor("HF/3-21G", 0.9085, 0.9207, SCOTT_RADOM, "from memory"),
    ScaleFactor("HF/6-31G(d)", 0.8953, 0.9135, SCOTT_RADOM, "from memory"),
    ScaleFactor("MP2/6-31G(d)", 0.9434, 0.9670, SCOTT_RADOM, "frozen core; from memory"),
    ScaleFactor("BLYP/6-31G(d)", 0.9945, 1.0126, SCOTT_RADOM, "from memory"),
    ScaleFactor("B3PW91/6-31G(d)", 0.9573, 0.9772, SCOTT_RADOM, "from memory"),
    ScaleFactor("B3LYP/6-31G(d)", 0.9614, 0.9806, SCOTT_RADOM, "from memory"),
    # Alecu et al. 2010, ZPE scale factors (lambda^ZPE) of Minnesota functionals (from memory)
    ScaleFactor("M06-2X/6-31+G(d,p)", 0.967, 0.967, ALECU, "ZPE factor used for both; from memory"),
    ScaleFactor("M06-2X/6-311+G(2df,2p)", 0.970, 0.970, ALECU, "ZPE factor used for both; from memory"),
    ScaleFactor("M06-2X/MG3S", 0.970, 0.970, ALECU, "ZPE factor used for both; from memory"),
    # CCCBDB fundamental-frequency factors (one factor per level; from memory)
    ScaleFactor("B3LYP/cc-pVTZ", 0.965, 0.965, CCCBDB, "one factor for both; from memory"),
    ScaleFactor("B3LYP/6-311+G(d,p)", 0.964, 0.964, CCCBDB, "one factor for both; from memory"),
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

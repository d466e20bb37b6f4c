"""One meaning per field whatever the program: vibrational modes only, names, multiplicity, solvent models.

Each function fixes one quirk and returns a short note (or None) for ``Calculation.notes``.
"""

from __future__ import annotations

import re

import numpy as np

from ..geometry import is_linear
from ..records import atomic_masses

#: |nu| below this (cm^-1) is a projected translation/rotation as printed ("0.00", "-0.00")
PROJECTED_ZERO_CM = 0.5

#: atomic numbers of the elements, for the electron count (ASE's table)
_ELEMENT_Z: dict[str, int] | None = None


def n_vibrations(symbols, coordinates) -> int | None:
    """3N-6 vibrational modes, 3N-5 for a linear molecule, 0 for an atom (common practice).

    None when the geometry is unknown (NaN coordinates) and there are more than two atoms.
    """
    n = len(symbols)
    if n < 2:
        return 0
    if n > 2 and not np.all(np.isfinite(coordinates)):
        return None
    linear = n == 2 or is_linear(coordinates, atomic_masses(symbols))
    return 3 * n - (5 if linear else 6)


def vibrational_mode_index(frequencies, symbols, coordinates, projected: bool) -> tuple[np.ndarray, str | None]:
    """Indices of the 3N-6 (3N-5) vibrations in a list that may hold translations and rotations too.

    With ``projected`` (NWChem's "P.Frequency", xTB, ORCA), the program has projected the six (five)
    rigid-body motions out and prints them as exact zeros: those are removed, and nothing is chosen by
    size, so a real small imaginary mode survives (docs/readers.md). Without projection the
    extra entries are removed by the known count, smallest |nu| first, and the note says so.
    """
    freqs = np.asarray(frequencies, dtype=float).ravel()
    zero = np.abs(freqs) < PROJECTED_ZERO_CM
    expected = n_vibrations(symbols, coordinates)
    if expected is None:  # geometry unknown: linear or not cannot be told, trust the projection
        expected = freqs.size - int(zero.sum()) if projected else freqs.size
    extra = freqs.size - expected
    if extra <= 0:
        return np.arange(freqs.size), None
    if projected and int(zero.sum()) == extra:
        return np.flatnonzero(~zero), f"{extra} zero modes (projected translations/rotations) removed"
    order = np.argsort(np.abs(freqs), kind="stable")
    largest = float(np.abs(freqs[order[extra - 1]]))
    return np.sort(order[extra:]), (
        f"{extra} translation/rotation modes removed by count (the smallest |nu|, up to {largest:.2f} cm^-1)"
    )


def vibrational_modes(frequencies, symbols, coordinates, projected: bool) -> tuple[np.ndarray, str | None]:
    """The 3N-6 (3N-5) vibrations of a list that may hold translations and rotations too (see
    :func:`vibrational_mode_index`), and the note of what was removed."""
    keep, note = vibrational_mode_index(frequencies, symbols, coordinates, projected)
    return np.asarray(frequencies, dtype=float).ravel()[keep], note


#: decimals kept of the normal-mode vectors (NWChem prints 5; the torsion projection needs far fewer)
MODE_DECIMALS = 5


def normal_mode_vectors(displacements, frequencies, symbols, coordinates, projected: bool) -> np.ndarray | None:
    """The displacement vectors of the modes :func:`vibrational_modes` keeps, as (n_modes, N, 3).

    ``displacements`` holds one vector of 3N numbers per printed frequency, in the same order. Each
    vector is returned as a Cartesian displacement (not mass-weighted) of unit length, rounded to
    :data:`MODE_DECIMALS`: a vector printed mass-weighted (sum_i sqrt(m_i) L_i = 0 rather than
    sum_i m_i d_i = 0, the centre of mass at rest) is divided by sqrt(m_i) first. None when the
    vectors do not fit the frequencies and the atoms (an incomplete block).
    """
    if displacements is None:
        return None
    freqs = np.asarray(frequencies, dtype=float).ravel()
    vectors = np.asarray(displacements, dtype=float)
    natoms = len(symbols)
    if vectors.size != freqs.size * natoms * 3 or not np.all(np.isfinite(vectors)):
        return None
    keep, _ = vibrational_mode_index(freqs, symbols, coordinates, projected)
    vectors = vectors.reshape(freqs.size, natoms, 3)[keep]
    masses = atomic_masses(symbols)
    cartesian = np.linalg.norm(np.einsum("i,kij->kj", masses, vectors))
    weighted = np.linalg.norm(np.einsum("i,kij->kj", np.sqrt(masses), vectors))
    if weighted < cartesian:
        vectors = vectors / np.sqrt(masses)[None, :, None]
    norms = np.linalg.norm(vectors.reshape(len(keep), -1), axis=1)
    if np.any(norms == 0):
        return None
    return np.round(vectors / norms[:, None, None], MODE_DECIMALS)


#: spellings of the field that plain upper-casing gets wrong (common practice, as in the methods' papers)
_SPELLINGS = {
    "R2SCAN": "r2SCAN",
    "R2SCAN-3C": "r2SCAN-3c",
    "B97-3C": "B97-3c",
    "PBEH-3C": "PBEh-3c",
    "HF-3C": "HF-3c",
    "WB97X-3C": "wB97X-3c",
    "TPSSH": "TPSSh",
    "PBEH": "PBEh",
    "GFN1-XTB": "GFN1-xTB",
    "GFN2-XTB": "GFN2-xTB",
    "GFN0-XTB": "GFN0-xTB",
}


def method_name(name: str | None) -> str | None:
    """A method as the field writes it: upper case ("b3lyp" -> "B3LYP"), the omega of "wB97X-D" kept
    lower case, and a few mixed-case names spelled as published ("r2SCAN-3c", "GFN2-xTB")."""
    if not name:
        return None
    upper = name.strip().upper()
    if upper in _SPELLINGS:
        return _SPELLINGS[upper]
    if upper[:2] == "WB":
        return "w" + upper[1:]
    return upper


_POPLE = re.compile(r"(?i)^(sto-\d+g|\d+-\d+\+{0,2}g)(\*{0,2})(\(.*\))?$")
_DUNNING = re.compile(r"(?i)^((?:aug|jun|may|apr|d-aug|t-aug)-)?cc-p(w?c)?v([dtq56])z(-.*)?$")
_KARLSRUHE = re.compile(r"(?i)^(ma-|ma-zora-)?def2-([a-z]+)(.*)$")


def basis_name(name: str | None) -> str | None:
    """A basis set spelled as published whatever the program's case ("sto-3g" -> "STO-3G",
    "6-31g(D,P)" -> "6-31G(d,p)", "AUG-CC-PVTZ" -> "aug-cc-pVTZ", "DEF2-TZVP" -> "def2-TZVP"), so the
    same level of theory compares equal across programs; other names are kept as printed."""
    if not name:
        return None
    name = name.strip()
    if m := _POPLE.match(name):
        return m.group(1).upper() + m.group(2) + (m.group(3) or "").lower()
    if m := _DUNNING.match(name):
        core = (m.group(2) or "").replace("c", "C")
        return f"{(m.group(1) or '').lower()}cc-p{core}V{m.group(3).upper()}Z{m.group(4) or ''}"
    if m := _KARLSRUHE.match(name):
        return f"{(m.group(1) or '').lower()}def2-{m.group(2).upper()}{m.group(3)}"
    return name


def solvent_model_name(name: str | None) -> str | None:
    """Lower-case family of an implicit solvent model as programs print it ("SMD-IEFPCM" -> "smd")."""
    if not name:
        return None
    low = name.lower()
    for family in ("smd", "cpcm", "cosmo", "alpb", "gbsa", "ddcosmo"):
        if family in low:
            return family
    if "pcm" in low:
        return "pcm"
    return low


def electron_count(symbols, charge: int) -> int:
    """Number of electrons of the neutral atoms minus the charge (all-electron count)."""
    global _ELEMENT_Z
    if _ELEMENT_Z is None:
        from ase.data import atomic_numbers

        _ELEMENT_Z = dict(atomic_numbers)
    return sum(_ELEMENT_Z[s] for s in symbols) - int(charge)


def inferred_multiplicity(symbols, charge: int) -> tuple[int, str]:
    """Lowest multiplicity of the electron count (1 even, 2 odd) when the file prints none."""
    odd = electron_count(symbols, charge) % 2
    mult = 2 if odd else 1
    kind = "odd electron count: doublet assumed" if odd else "even electron count: singlet assumed"
    return mult, f"multiplicity not printed; {kind}"

"""Relaxed torsion scans: read_scan on the real NWChem scan of the sample scenario, and its rotor in the run.

Sources of the check values, named beside each check:
- "input": sample_outputs/inputs/scans/ethane_rot1.nw holds H3-C1-C2-H6 at 0, 20, ... 120 degrees.
- "printed": the energies of the log's "@" lines after each "Optimization converged", read here by a plain
  regular expression.
- "common practice": ethane's torsional barrier is that of the eclipsed over the staggered form.
"""

from __future__ import annotations

import re

import numpy as np
import pytest

import qcthermo
from qcthermo import rotors as R
from qcthermo.errors import LogReadError
from qcthermo.readers import read_scan
from qcthermo.units import WAVENUMBER_EH

SCAN = "scans/ethane_rot1.out"


def _printed_energies(text: str) -> list[float]:
    """The energy of the first "@" line after each "Optimization converged"."""
    return [float(re.search(r"^@\s+\d+\s+(-?\d+\.\d+)", part, re.M).group(1))
            for part in text.split("Optimization converged")[1:]]


def test_scan_points_are_read(samples):
    scan = read_scan(samples / SCAN)
    assert scan.program == "nwchem" and scan.symbols == ("C", "C", "H", "H", "H", "H", "H", "H")
    angles = np.degrees(np.abs(R.dihedral_angles(scan.coordinates, (2, 0, 1, 5))))
    np.testing.assert_allclose(angles, [0, 20, 40, 60, 80, 100, 120], atol=0.01)  # input
    np.testing.assert_allclose(scan.energies, _printed_energies((samples / SCAN).read_text()), atol=1e-9)  # printed


def test_a_log_without_scan_points_is_refused(samples, tmp_path):
    with pytest.raises(LogReadError, match="converged scan points"):
        read_scan(samples / "gas/ch4.out")  # one optimisation: one point
    other = tmp_path / "x.xyz"
    other.write_text("1\nno energy here\nH 0 0 0\n")
    with pytest.raises(LogReadError, match="not read"):
        read_scan(other)


def test_scan_rotor_in_the_sample_run(samples, tmp_path):
    """The sample reaction file gives ethane its scan: the rotor's barrier is the scan's eclipsed - staggered
    energy (printed; common practice), not the cosine of the frequency."""
    results = qcthermo.run(samples, reactions=samples / "reactions.toml", jobs=1, cache=False)
    ethane = results.species_results["ethane"].lowest.thermo
    (rotor,) = ethane.rotors
    printed = _printed_energies((samples / SCAN).read_text())
    assert rotor.source.endswith("ethane_rot1.out") and rotor.fit_rms < 1e-5  # 2 cm^-1 of a 1000 cm^-1 barrier
    assert rotor.barrier == pytest.approx(max(printed) - min(printed), rel=0.01)  # printed
    # the B3LYP barrier of ethane is about 2.9 kcal/mol (1000 cm^-1; from memory), as the frequency says too
    assert 800 < rotor.barrier / WAVENUMBER_EH < 1200
    row = results.species[results.species["species"] == "ethane"].iloc[0]
    assert "C1-C2: V0" in row["internal_rotors"] and "ethane_rot1.out" in row["internal_rotors"]


def test_xtb_scan_trajectory(tmp_path):
    """xTB writes a relaxed scan as xtbscan.log: xyz frames whose comment line reads
    " energy: <Eh> gnorm: <Eh/a0> xtb: <version>" (the layout of xTB 6.x, from memory)."""
    frames = []
    for energy, phi in ((-7.3360, 0.0), (-7.3385, 60.0), (-7.3361, 120.0)):
        xyz = np.array([[0, 0, 0.77], [0, 0, -0.77], [1.02, 0, 1.16], [-0.51, 0.88, 1.16], [-0.51, -0.88, 1.16],
                        [1.02 * np.cos(np.radians(phi)), 1.02 * np.sin(np.radians(phi)), -1.16],
                        [1.02 * np.cos(np.radians(phi + 120)), 1.02 * np.sin(np.radians(phi + 120)), -1.16],
                        [1.02 * np.cos(np.radians(phi + 240)), 1.02 * np.sin(np.radians(phi + 240)), -1.16]])
        rows = "\n".join(f"{s:2s} {x:12.6f} {y:12.6f} {z:12.6f}" for s, (x, y, z) in zip("CCHHHHHH", xyz, strict=True))
        frames.append(f"     8\n energy: {energy:.12f} gnorm: 0.000412345678 xtb: 6.5.1 (fac3b6b)\n{rows}\n")
    path = tmp_path / "xtbscan.log"
    path.write_text("".join(frames))
    scan = read_scan(path)
    assert scan.program == "xtb" and scan.symbols == tuple("CCHHHHHH")
    np.testing.assert_allclose(scan.energies, [-7.3360, -7.3385, -7.3361])  # the comment lines
    np.testing.assert_allclose(np.degrees(np.abs(R.dihedral_angles(scan.coordinates, (2, 0, 1, 5)))), [0, 60, 120],
                               atol=1e-3)  # as built

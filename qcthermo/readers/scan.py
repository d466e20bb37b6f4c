"""read_scan(): the points of a relaxed torsion scan (each point's final geometry and energy).

Read: NWChem (one constrained optimisation per point, "task ... optimize" repeated with a "zcoord ...
constant" torsion: each "Optimization converged" gives the energy of its "@" line and the geometry printed
after it) and xTB's scan trajectory ``xtbscan.log`` (xyz frames whose comment line holds "energy: E").
Other programs' scan logs are refused with a one-line reason. The dihedral of each point is computed from
its geometry by the engine (qcthermo/rotors.py), not read.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import LogReadError
from .fallback import NWCHEM_GEOMETRY, nwchem_geometry_rows
from .source import LogSource, load, max_log_bytes

_CONVERGED = re.compile(r"^\s+Optimization converged\s*$", re.M)
_STEP = re.compile(r"^@\s+\d+\s+(-?\d+\.\d+)", re.M)
_XYZ_ENERGY = re.compile(r"energy:\s*(-?\d+\.\d+)")


@dataclass
class ScanLog:
    """The converged points of a relaxed scan, in the order of the log.

    Attributes:
        path, program: the file read and its program ("nwchem", "xtb").
        symbols: element symbols.  coordinates: (P, N, 3) angstrom.  energies: (P,) hartree.
        notes: what the reader noticed (points left out).
    """

    path: str
    program: str
    symbols: tuple[str, ...]
    coordinates: np.ndarray
    energies: np.ndarray
    notes: list[str] = field(default_factory=list)


def read_scan(path: str | Path) -> ScanLog:
    """The points of a relaxed torsion scan log; raises LogReadError (one line) when there are none."""
    try:
        source = load(path)
    except LogReadError as err:  # no program banner: an xyz trajectory (xTB's xtbscan.log) or nothing
        source = _trajectory(path, err)
    if source.program == "nwchem":
        points = _nwchem_points(source.text)
    elif source.program is None and _XYZ_ENERGY.search(source.text[:2000]):
        points = _xyz_points(source.text)
    else:
        what = source.program or "this file"
        raise LogReadError(source.path, f"scan logs of {what} are not read (NWChem optimisations, xTB's xtbscan.log)")
    if len(points) < 3:
        raise LogReadError(source.path, f"{len(points)} converged scan points: a torsion scan needs at least 3")
    symbols = points[0][1]
    if any(p[1] != symbols for p in points):
        raise LogReadError(source.path, "the scan points are not all the same molecule")
    program = "xtb" if source.program is None else source.program
    return ScanLog(path=source.path, program=program, symbols=symbols,
                   coordinates=np.array([p[2] for p in points]), energies=np.array([p[0] for p in points]))


def _trajectory(path: str | Path, err: LogReadError) -> LogSource:
    """The text of a file without a program banner when it is an xyz trajectory with energies; else ``err``."""
    try:
        with open(path, "rb") as stream:
            text = stream.read(max_log_bytes()).decode("utf-8", errors="replace")
    except OSError:
        raise err from None
    if not _XYZ_ENERGY.search(text[:2000]):
        raise err
    return LogSource(str(path), text, None)


def _nwchem_points(text: str) -> list[tuple[float, tuple[str, ...], np.ndarray]]:
    points = []
    for marker in _CONVERGED.finditer(text):
        step = _STEP.search(text, marker.end())
        at = text.find("Output coordinates in angstroms", marker.end())
        block = NWCHEM_GEOMETRY.match(text, at) if at >= 0 else None
        if step is None or block is None:
            continue
        points.append((float(step.group(1)), *nwchem_geometry_rows(block.group(1))))
    return points


def _xyz_points(text: str) -> list[tuple[float, tuple[str, ...], np.ndarray]]:
    """Frames of an xyz trajectory with "energy: E" (hartree) in each comment line (xTB's xtbscan.log)."""
    lines = text.splitlines()
    points, at = [], 0
    while at + 1 < len(lines) and lines[at].strip():
        try:
            n = int(lines[at].split()[0])
            energy = float(_XYZ_ENERGY.search(lines[at + 1]).group(1))
            rows = [line.split() for line in lines[at + 2 : at + 2 + n]]
            xyz = np.array([[float(x) for x in row[1:4]] for row in rows]).reshape(n, 3)
        except (ValueError, AttributeError):  # a damaged or cut frame ends the trajectory
            break
        points.append((energy, tuple(row[0].capitalize() for row in rows), xyz))
        at += 2 + n
    return points

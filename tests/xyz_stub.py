"""A stub log reader built on ASE's XYZ parser (``ase.io.read``), and the small molecules it reads.

The survey and cache tests read XYZ files named like logs through it, so that they do not depend on any
quantum-chemistry reader.
"""

from __future__ import annotations

import time

from qcthermo.errors import LogReadError
from qcthermo.records import Calculation

# Water near its equilibrium geometry (O-H 0.958 A, H-O-H 104.5 degrees; from memory), as an XYZ file.
WATER_XYZ = """3
water
O 0.000000 0.000000 0.117300
H 0.000000 0.757200 -0.469200
H 0.000000 -0.757200 -0.469200
"""
# Dihydrogen, 0.741 A bond (from memory).
H2_XYZ = "2\nH2\nH 0 0 0\nH 0 0 0.741\n"


def xyz_reader(path: str) -> Calculation:
    """Stub reader: an XYZ file read by ASE becomes a Calculation; anything else is a LogReadError."""
    from ase.io import read

    try:
        atoms = read(path, format="xyz")
    except Exception as err:
        raise LogReadError(path, f"not an XYZ file ({type(err).__name__})") from None
    return Calculation(path=path, program="xyz", symbols=tuple(atoms.get_chemical_symbols()),
                       coordinates=atoms.positions, normal_termination=True)


def slow_xyz_reader(path: str) -> Calculation:
    """The stub reader, slowed down so that two surveys started together overlap."""
    time.sleep(0.005)
    return xyz_reader(path)

"""coordinates.xyz: every structure of a run, one block each, name and energies in the comment line.

The blocks are plain XYZ (atom count, comment, one "symbol x y z" line per atom, angstrom), written
with ASE's XYZ writer so that any viewer or ``ase.io.read(..., index=":")`` reads them back.
"""

from __future__ import annotations

import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..fileio import atomic_write


@dataclass
class XyzBlock:
    """One structure: ``symbols``, ``coordinates`` (N, 3) angstrom, and the comment line's fields.

    Attributes:
        name: species (and conformer) name.
        fields: ordered "key=value" items for the comment line, e.g. level, E_Eh, G_Eh, source file.
    """

    name: str
    symbols: tuple[str, ...]
    coordinates: np.ndarray
    fields: dict[str, str]

    def comment(self) -> str:
        """"name key=value key=value ..." on one line (values may not hold line breaks)."""
        items = [f"{k}={' '.join(str(v).split())}" for k, v in self.fields.items() if v is not None]
        return " ".join([self.name.replace(" ", "_"), *items])


def xyz_text(blocks: list[XyzBlock]) -> str:
    """The XYZ text of all ``blocks``, in order."""
    from ase import Atoms
    from ase.io.xyz import write_xyz

    buffer = io.StringIO()
    for block in blocks:
        atoms = Atoms(symbols=list(block.symbols), positions=np.asarray(block.coordinates, dtype=float))
        write_xyz(buffer, [atoms], comment=block.comment(), fmt="%14.8f")
    return buffer.getvalue()


def write_xyz_file(path: str | Path, blocks: list[XyzBlock]) -> Path:
    """Write ``blocks`` to ``path`` atomically; return the path."""
    return atomic_write(path, xyz_text(blocks))

"""coordinates.xyz: every structure of a run, one frame each, in the extended XYZ convention; and
structures/NAME.xyz: the same frames one per file, for the supporting information.

Each frame is an atom count, a comment line of ``key=value`` pairs (the species name, level of theory,
charge, multiplicity, energies in hartree, temperature, population, source file; text with spaces or
quotes quoted, numbers at full precision) and one "symbol x y z" line per atom (angstrom). It is written
by ASE's extended XYZ writer, so ``ase.io.read(path, index=":")`` gives back the structures with these
values in each ``Atoms.info``, typed (numbers as numbers); viewers that read plain XYZ read it as well.
"""

from __future__ import annotations

import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..fileio import atomic_write, display, safe_stems

#: the folder of a run's output folder that holds one extended-XYZ file per structure
STRUCTURES = "structures"


@dataclass
class XyzBlock:
    """One structure: ``symbols``, ``coordinates`` (N, 3) angstrom, and the comment line's fields.

    Attributes:
        name: species (and conformer) name, the frame's ``name`` value.
        fields: ordered further values of the comment line (e.g. level, E_Eh, G_Eh, source file); text or
            numbers, None for a value that is not known (left out).
    """

    name: str
    symbols: tuple[str, ...]
    coordinates: np.ndarray
    fields: dict[str, str | float | int | None]

    def info(self) -> dict[str, str | float | int]:
        """The frame's key=value pairs: ``name`` first, then ``fields`` (text on one line, control characters
        as ``\\xNN``: qcthermo.fileio.display)."""
        values = {"name": self.name, **{k: v for k, v in self.fields.items() if v is not None}}
        return {k: display(" ".join(v.split())) if isinstance(v, str) else v for k, v in values.items()}


def xyz_text(blocks: list[XyzBlock]) -> str:
    """The extended XYZ text of all ``blocks``, in order."""
    from ase import Atoms
    from ase.io import write

    frames = []
    for block in blocks:
        atoms = Atoms(symbols=list(block.symbols), positions=np.asarray(block.coordinates, dtype=float))
        atoms.info.update(block.info())
        frames.append(atoms)
    buffer = io.StringIO()
    write(buffer, frames, format="extxyz")
    return buffer.getvalue()


def write_xyz_file(path: str | Path, blocks: list[XyzBlock]) -> Path:
    """Write ``blocks`` to ``path`` atomically; return the path."""
    return atomic_write(path, xyz_text(blocks))


def write_structure_files(folder: str | Path, blocks: list[XyzBlock]) -> list[Path]:
    """One extended-XYZ file per block in ``folder``, each named by its block's name made safe for any file
    system (qcthermo.fileio.safe_stems: ``pentane/pentane_tt`` -> ``pentane_pentane_tt.xyz``); the paths."""
    stems = safe_stems([block.name for block in blocks])
    return [write_xyz_file(Path(folder) / f"{stem}.xyz", [block]) for stem, block in zip(stems, blocks, strict=True)]

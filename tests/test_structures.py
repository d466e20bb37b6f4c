"""structures/: one extended-XYZ file per structure of a run, for the supporting information (docs/reactions.md,
"Outputs"). Each file is read back with ASE's extended XYZ reader (ase.io) and checked against the frame of
coordinates.xyz and against the log itself as ASE's own NWChem reader reads it."""

import json
import re

import ase.io
import numpy as np
import pytest
from ase import units

from qcthermo.export.xyz import XyzBlock, write_structure_files


def test_one_file_per_structure_reads_back_as_its_frame_and_its_log(sample_run, samples, tmp_path):
    out = tmp_path / "out"
    sample_run.write(out)
    frames = {atoms.info["name"]: atoms for atoms in ase.io.read(out / "coordinates.xyz", index=":")}
    listed = sorted(n for n in json.loads((out / "run.json").read_text())["files"] if n.startswith("structures/"))
    assert listed == sorted(f"structures/{p.name}" for p in (out / "structures").iterdir())
    assert listed == ["structures/hcn.xyz", "structures/hnc.xyz", "structures/ts_hcn.xyz"]
    for si in ("si.md", "si.tex"):  # the supporting information names the folder
        assert "also in structures/, one extended-XYZ file per structure" in (out / si).read_text()
    for name in listed:
        (atoms,) = ase.io.read(out / name, index=":")
        frame = frames[atoms.info["name"]]
        assert atoms.info == frame.info and atoms.info["name"] == name.removeprefix("structures/").removesuffix(".xyz")
        assert atoms.get_chemical_symbols() == frame.get_chemical_symbols()
        assert np.array_equal(atoms.positions, frame.positions)
        # the log's final geometry and energy as ASE's NWChem reader gives them (eV -> hartree by ase.units)
        log = ase.io.read(samples / "gas" / atoms.info["source"], format="nwchem-out")
        assert atoms.get_chemical_symbols() == log.get_chemical_symbols()
        assert np.allclose(atoms.positions, log.positions, atol=1e-5)
        assert atoms.info["E_Eh"] == pytest.approx(log.get_potential_energy() / units.Hartree, abs=1e-7)


def test_structure_file_names_are_portable_and_unique(tmp_path):
    # POSIX's portable filename character set (IEEE Std 1003.1, 3.282: A-Z a-z 0-9 . _ -), no leading dot (hidden),
    # unique also on file systems that ignore case; species and conformer names are the user's, not file names
    names = ["pentane/pentane_tt", "Pentane/pentane_TT", "../etc/passwd", "ts 1 (eckart)", "", "café", ".hidden"]
    blocks = [XyzBlock(n, ("H", "H"), np.array([[0.0, 0.0, 0.0], [0.0, 0.0, 0.74]]), {}) for n in names]
    paths = write_structure_files(tmp_path / "structures", blocks)
    stems = [p.stem for p in paths]
    assert all(p.parent == tmp_path / "structures" for p in paths)
    assert all(re.fullmatch(r"[A-Za-z0-9_-][A-Za-z0-9._-]*", s) for s in stems), stems
    assert len({s.lower() for s in stems}) == len(names)
    assert stems[:2] == ["pentane_pentane_tt", "Pentane_pentane_TT-2"]
    assert stems[4] == "unnamed" and stems[2] == "etc_passwd"
    assert [ase.io.read(p).info["name"] for p in paths if p.stem != "unnamed"] == [n for n in names if n]

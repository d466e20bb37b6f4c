"""The NWChem, Psi4, GAMESS and xTB slicers keep what the record is read from (docs/readers.md, "Slices for cclib").

tests/test_slices.py compares every real log read whole and sliced; here each of these slicers is shown to cut
the real logs it is made for, and a slice that lost its final geometry, last energy or frequency section is
shown to be caught by that comparison. The reference is always the same reader on the whole text (cclib 1.8.1
on the log as the program printed it).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from conftest import SAMPLES, THIRD_PARTY
from test_slices import both_ways, differences

from qcthermo.readers import core, slices
from qcthermo.readers.source import load

#: (log, its program, what its slicer cuts): a real log of each kind of cut, and the share of it (of the text)
#: the slice keeps at most, measured on these logs
CUT_LOGS = [
    (SAMPLES / "gas" / "water.out", "nwchem", 0.65),  # optimisation steps 1-2 of 0-3
    (SAMPLES / "gas" / "c_atom.out", "nwchem", 0.6),  # a single point: its orbital analysis blocks (alpha, beta)
    (SAMPLES / "scans" / "ethane_rot1.out", "nwchem", 0.3),  # seven constrained optimisations
    (SAMPLES / "solvent" / "methanediol.out", "nwchem", 0.35),  # steps and a finite-difference Hessian
    (THIRD_PARTY / "psi4-1.2.1" / "dvb_ir_rhf.out", "psi4", 0.1),  # 72 of 74 displaced gradients
    (THIRD_PARTY / "gamess-us2018" / "nh3_ts_ir.out", "gamess", 0.35),  # displaced SCFs of a numerical Hessian
    (SAMPLES / "conformers" / "pentane_tt.out", "xtb", 0.3),  # cycles 2-5 of 6, and lines cclib ignores
]


def _present(path: Path) -> Path:
    if not path.is_file():
        pytest.skip(f"{path} is absent (the third-party logs are beside the project)")
    return path


def _without_section(text: str, marker: str, upto: str) -> str:
    """``text`` without the lines from the last one holding ``marker`` to the next one holding ``upto``."""
    start = text.rfind("\n", 0, text.rindex(marker)) + 1
    end = text.rfind("\n", 0, text.index(upto, start)) + 1
    return text[:start] + text[end:]


@pytest.mark.parametrize(("path", "program", "share"), CUT_LOGS, ids=[p.name for p, _, _ in CUT_LOGS])
def test_slicer_cuts_its_real_logs(path, program, share):
    text = load(_present(path)).text
    piece = slices.SLICERS[program](text)
    assert piece is not None and len(piece) < share * len(text)


#: (log, program, section dropped from the slice as (marker, up to), fields that must then differ): the final
#: geometry, the energy cclib keeps last, the thermochemistry, and the frequencies with their normal modes
BROKEN = [
    # the last step, "Optimization converged" and the final geometry (the last step's, printed again): cclib then
    # gives step 0's energy, which the damage check refuses against the whole text's restated "@" energy
    (SAMPLES / "gas" / "water.out", "nwchem", ("          Step", "NWChem Input Module"), {"outcome"}),
    (SAMPLES / "gas" / "water.out", "nwchem", ("(Projected Frequencies", "Projected Derivative Dipole"),
     {"normal_modes"}),
    (THIRD_PARTY / "psi4-1.2.1" / "dvb_ir_rhf.out", "psi4",
     ("==> Harmonic Vibrational Analysis <==", "==> Thermochemistry Components <=="), {"frequencies"}),
    # (not the displacements: the energy is the reference point's, read from the whole text whatever the slice)
    (THIRD_PARTY / "gamess-us2018" / "nh3_ts_ir.out", "gamess", ("THERMOCHEMISTRY AT", "END OF NORMAL COORDINATE"),
     {"thermo_printed"}),
    (THIRD_PARTY / "gamess-us2018" / "nh3_ts_ir.out", "gamess", ("NORMAL COORDINATE ANALYSIS IN", "THERMOCHEMISTRY AT"),
     {"frequencies"}),
    # without its final structure an xTB optimisation is refused (core.py: the block is printed, cclib has none)
    (SAMPLES / "conformers" / "pentane_tt.out", "xtb", ("final structure:", "total charge"), {"outcome"}),
]


@pytest.mark.parametrize(("path", "program", "section", "fields"), BROKEN,
                         ids=[f"{p.name}-{s[0][:12]}" for p, _, s, _ in BROKEN])
def test_a_slice_without_a_needed_section_is_caught(path, program, section, fields, monkeypatch):
    """The whole-versus-slice comparison has teeth for these slicers: the slice of a real log with one section
    the record needs dropped from it reads differently from the whole log."""
    text = load(_present(path)).text
    broken = _without_section(slices.SLICERS[program](text), *section)
    monkeypatch.setitem(slices.SLICERS, program, lambda _: broken)
    whole, sliced = both_ways(path, monkeypatch)
    found = differences(whole, sliced)
    assert fields <= {name.split(":")[0] for name in found}, found


def test_structures_not_recognised_are_not_cut():
    """An optimisation that does not start at step 0 or starts twice (NWChem), displaced calculations without
    cclib's finite-difference flag before them or of two computations (Psi4), molecular dynamics (NWChem): the
    slicer gives None and cclib reads the whole text."""
    step = "          Step   {}\n body\n"
    for numbers in ((1, 2, 3, 4), (0, 1, 2, 0, 1, 2)):
        assert slices.nwchem("NWChem Geometry Optimization\n" + "".join(step.format(n) for n in numbers)) is None
    assert slices.nwchem("NWChem Geometry Optimization\n" + "".join(step.format(n) for n in range(4))) is not None
    assert slices.nwchem("NWChem Geometry Optimization\n" + "".join(step.format(n) for n in range(5))
                         + "NWChem QMD Module\n") is None
    banner = "  //>>>>//\n  //    Loading displacement {} of 4   //\n"
    flag = "  Using finite-differences of gradients to determine vibrational frequencies\n"
    assert slices.psi4("".join(banner.format(n) for n in range(1, 5))) is None
    assert slices.psi4(flag + "".join(banner.format(n) for n in (1, 2, 3, 4, 1, 2, 3, 4))) is None
    assert slices.psi4(flag + "".join(banner.format(n) for n in (1, 2, 3, 4))) is not None


#: (log, program, the phrase that starts each repeated block): a real optimisation step or displaced-geometry
#: calculation of each slicer's kind, printed 40 times more as a long run prints them
LONG = [
    (SAMPLES / "gas" / "water.out", "nwchem", "          Step  "),
    (SAMPLES / "solvent" / "methanediol.out", "nwchem", "NWChem DFT Module"),
    (THIRD_PARTY / "psi4-1.2.1" / "dvb_ir_rhf.out", "psi4", "Loading displacement"),
    (THIRD_PARTY / "gamess-us2018" / "nh3_ts_ir.out", "gamess", "NUCLEAR COORDINATES"),
    (SAMPLES / "conformers" / "pentane_tt.out", "xtb", " CYCLE "),
]


@pytest.mark.parametrize(("path", "program", "phrase"), LONG, ids=[f"{p.name}-{ph.strip()[:8]}" for p, _, ph in LONG])
def test_a_long_run_gives_the_whole_log_record(path, program, phrase, tmp_path, monkeypatch):
    """A real log made long (one of its middle blocks printed 40 times more; the repeated block numbers are
    allowed, a step 0 or a displacement 1 is not repeated): the slice drops them all and the record is the
    whole text's, and the one of the real log it ends with."""
    text = load(_present(path)).text
    starts = slices.line_starts(text, phrase)
    middle = len(starts) // 2  # methanediol's DFT modules: one of the displaced calculations of its Hessian
    long_log = tmp_path / path.name
    long_log.write_text(text[: starts[middle + 1]] + text[starts[middle] : starts[middle + 1]] * 40
                        + text[starts[middle + 1] :])
    assert len(slices.SLICERS[program](load(long_log).text)) < len(text)
    whole, sliced = both_ways(long_log, monkeypatch)
    assert not differences(whole, sliced), differences(whole, sliced)
    # reference: the energy, final geometry and frequencies printed in the real log, which the long one ends with
    original = core.read_log(path)
    assert sliced.energy == original.energy and np.array_equal(sliced.coordinates, original.coordinates)
    assert np.array_equal(sliced.frequencies, original.frequencies)


def test_an_nwchem_orbital_block_ends_where_cclib_stops_reading_it(samples):
    """Reference: the real log's layout and cclib 1.8.1's loop (nwchemparser: the vectors, each up to a blank line,
    then one more line read to end the loop): each block cut out ends just before the next line cclib would read
    (here " center of mass", the line after the two blank ones), and begins at the analysis header's line."""
    text = load(samples / "solution" / "acetate.out").text
    blocks = slices._nwchem_orbital_blocks(text, [])
    assert len(blocks) == text.count("DFT Final Molecular Orbital Analysis") == 11
    for start, end in blocks:
        assert text[start:].lstrip().startswith("DFT Final Molecular Orbital Analysis")
        assert text[end:].startswith(" center of mass\n")
        assert text[start:end].count(" Vector ") == 66  # every orbital of the basis, none left behind


#: cclib 1.8.1's own tests of a line in its xTB parser (cclib/parser/xtbparser.py), each applied to a line on its
#: own: the reference for which lines the xTB slice may drop
def _cclib_xtb_tests():
    from cclib.parser import xtbparser as xp

    extractors = (xp._extract_version, xp._extract_program_call, xp._extract_coord_file, xp._extract_method,
                  xp._extract_charge, xp._extract_multiplicity, xp._extract_final_energy, xp._extract_symmetry,
                  xp._extract_zpve, xp._extract_enthalpy, xp._extract_free_energy, xp._extract_temperature,
                  xp._extract_wall_time, xp._extract_cpu_time)
    predicates = (xp._is_geom_cycle_line, xp._is_orbitals_line, xp._is_gfn1_atom_charges, xp._is_gfn2_atom_charges,
                  xp._is_freq_printout, xp._is_warning, xp._is_success, xp._is_grad_line, xp._is_hessian_line,
                  lambda line: "final structure:" in line)
    return extractors, predicates


def _fires(test, line: str) -> bool:
    try:
        result = test(line)
    except Exception:  # a test that raises on the line acts on it
        return True
    return result is not None and result is not False  # a charge of 0 is read


def test_the_xtb_slice_drops_only_lines_cclib_ignores(samples):
    """Reference: cclib 1.8.1's own line tests (xtbparser). Every line of a real xTB log outside the ranges the
    slice keeps passes all of them without effect, and at least half of each log's lines are dropped."""
    extractors, predicates = _cclib_xtb_tests()
    logs = [*sorted((samples / "conformers").glob("*.out")), samples / "flawed" / "butyne_eclipsed.out",
            THIRD_PARTY / "xtb6.6.1" / "dvb_ir.out"]  # the third-party log when it is beside the project
    for path in filter(Path.is_file, logs):
        text = load(path).text
        ranges = slices.xtb_ranges_read(text)
        dropped, at = [], 0
        for start, end in [*ranges, (len(text), len(text))]:
            dropped += text[at:start].splitlines(keepends=True)
            at = end
        assert len(dropped) > text.count("\n") / 2, path.name
        for line in dropped:
            assert not any(_fires(test, line) for test in (*extractors, *predicates)), (path.name, line)


def test_a_line_cclib_reads_is_never_dropped_from_an_xtb_log(samples):
    """The check above has teeth: a phrase cclib reads (its charge line), forgotten by the slice, fails it."""
    extractors, _ = _cclib_xtb_tests()
    text = load(samples / "conformers" / "pentane_tt.out").text
    kept = "".join(text[a:b] for a, b in slices.xtb_ranges_read(text))
    lost = [line for line in text.splitlines(keepends=True) if "total charge" in line]
    assert lost and all(line in kept for line in lost)
    assert any(_fires(test, lost[0]) for test in extractors)

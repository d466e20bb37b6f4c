"""Damaged real logs give a one-line LogReadError (or a record that is still right), never a wrong record.

Each test damages a real log (sample_outputs/ or the third-party folder) in the test's own folder, the way
a transfer, an editor or a shell redirection does, and checks the reason. The references are what the
logs themselves print (their atom counts, energies, multiplicities) and facts of the trade (3N-6 modes).
"""

from __future__ import annotations

import bz2
import gzip
import lzma
import re
from pathlib import Path

import numpy as np
import pytest
from log_text import last_printed

import qcthermo
from qcthermo.errors import ThermoError
from qcthermo.readers import checks
from qcthermo.records import Conditions, Molecule


def replace_last(text: str, old: str, new: str) -> str:
    """``text`` with the last occurrence of ``old`` replaced (the final block is the one read)."""
    at = text.rindex(old)
    return text[:at] + new + text[at + len(old) :]


def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text)
    return path


def refused(path: Path, reason: str) -> str:
    with pytest.raises(qcthermo.LogReadError, match=reason) as err:
        qcthermo.read_log(path)
    assert "\n" not in str(err.value)
    return str(err.value)


# ------------------------------------------------------------------ a bad row in the last geometry block


def test_nwchem_hcn_with_a_bad_row_is_not_read_as_a_smaller_molecule(samples, tmp_path):
    text = (samples / "gas" / "hcn.out").read_text()
    # printed in the log: "No. of atoms : 3" and three rows in every "Output coordinates" block
    assert set(re.findall(r"No\. of atoms\s+:\s+(\d+)", text)) == {"3"}
    row = re.findall(r"^\s+2 C\s+6\.0000 .*$", text, re.M)[-1]
    cut = row[: row.index("6.0000") + 6]  # the row's coordinates lost: the block seems to end before it
    damaged = write(tmp_path, "hcn.out", replace_last(text, row, cut))
    refused(damaged, "final geometry has 1 atoms but the log states 3")
    dropped = write(tmp_path, "hcn_dropped.out", replace_last(text, row + "\n", ""))
    refused(dropped, "final geometry has 2 atoms")


def test_orca6_bad_row_in_the_last_geometry_block(third_party, tmp_path):
    text = (third_party / "orca6.0" / "dvb_ir.out").read_text()
    # printed: "Number of atoms ... 20" (third-party README: dvb has 20 atoms)
    row = "  C      1.415253   -0.230222    0.000000\n"
    assert row in text
    refused(write(tmp_path, "dvb.out", replace_last(text, row, "  C      1.415253   -0.23O222\n")), "has 1 atoms")


def test_gaussian_row_lost_from_the_standard_orientation(third_party, tmp_path):
    text = (third_party / "gaussian16" / "water_hf_solvent_smd.log").read_text()
    row = "      3          1           0       -0.000000   -0.790650   -0.476640\n"
    assert row in text  # printed: NAtoms= 3, water
    refused(write(tmp_path, "water.log", replace_last(text, row, "")), "2 atoms but the log states 3")


def test_qchem_rows_lost_are_not_made_up_by_dropping_modes(third_party, tmp_path):
    # Q-Chem prints 54 = 3N-6 modes for dvb (20 atoms, README); with two rows lost 54 = 3 x 18, which a
    # removal "by count" would have fitted by dropping six real vibrations; the input echo has 20 rows
    text = (third_party / "qchem5.4" / "dvb_ir.out").read_text()
    block = text[text.index("Standard Nuclear Orientation") :]
    rows = re.findall(r"^\s+[12]\s+C\s.*\n", block, re.M)[:2]
    damaged = text.replace(rows[0] + rows[1], "", 1)
    refused(write(tmp_path, "dvb.out", damaged), "18 atoms but another geometry block of the log has 20")


def test_xtb_damaged_final_structure_is_not_an_unknown_geometry(samples, tmp_path):
    # xTB prints the optimised structure as an xyz block whose first line is the atom count (17, pentane)
    text = (samples / "conformers" / "pentane_tt.out").read_text()
    row = re.findall(r"^H\s+3\.99334617134915.*\n", text, re.M)[-1]
    damaged = write(tmp_path, "pentane.out", replace_last(text, row, ""))
    with pytest.raises(qcthermo.LogReadError):
        qcthermo.read_log(damaged)


def test_xtb_optimisation_without_its_final_structure_line_is_refused(samples, tmp_path):
    """Found by fuzzing: pentane_tt.out with the line " final structure:" lost (and the rule under it). The log
    still says "*** GEOMETRY OPTIMIZATION CONVERGED AFTER 6 ITERATIONS ***", after which xTB prints the final
    structure (every real xTB optimisation at hand does); the record had been read with unknown coordinates."""
    text = (samples / "conformers" / "pentane_tt.out").read_text()
    edited = text.replace(" final structure:\n================\n", "", 1)
    assert edited != text
    refused(write(tmp_path, "pentane.out", edited), "optimisation ended but its final structure block is missing")


def test_frequencies_for_another_atom_count_are_refused_not_trimmed():
    # 3N-6 or 3N-5 vibrations, or all 3N modes when the program lists the rigid-body ones (common practice)
    assert checks.frequency_problem(np.ones(54), 20, 54, all_modes=False) is None
    assert checks.frequency_problem(np.ones(60), 20, 54, all_modes=True) is None
    assert checks.frequency_problem(np.ones(40), 20, 54, all_modes=True) is None  # cut short: dropped with a note
    assert "54 frequencies printed for 18 atoms" in checks.frequency_problem(np.ones(54), 18, 48, all_modes=False)
    assert checks.frequency_problem(np.ones(9), 1, 0, all_modes=True)  # HCN's 9 modes read for an "H"


# ---------------------------------------------------------- an element changed in the final geometry

#: (log, the header of the last block the reader takes its atoms from, its row as printed, the row with one
#: element changed, the reason): the other statements of the elements are the log's own (input orientation,
#: the other coordinate block, the input echo, the nuclear charges table) or its printed nuclear repulsion
ELEMENT_FLIPS = [
    ("third:gaussian16/dvb_ir.out", "Standard orientation:", "      1          6           0 ",
     "      1          8           0 ", "atom 1 is O in the final geometry but C in another geometry block"),
    ("third:gaussian16/dvb_gopt.out", "Standard orientation:", "      1          6           0 ",
     "      1          8           0 ", "atom 1 is O in the final geometry but C in another geometry block"),
    ("third:orca5.0/dvb_ir.out", "CARTESIAN COORDINATES (ANGSTROEM)", "  C      1.415253",
     "  O      1.415253", "atom 2 is O in the final geometry but C in another geometry block"),
    ("third:orca6.0/dvb_ir.out", "CARTESIAN COORDINATES (ANGSTROEM)", "  C      1.415253",
     "  O      1.415253", "atom 2 is O in the final geometry but C in another geometry block"),
    ("third:qchem5.4/dvb_ir.out", "Standard Nuclear Orientation", "   1      C ", "   1      O ",
     "atom 1 is O in the final geometry but C in another geometry block"),
    # a single point: one coordinate block, whose charge column the reader takes; the printed repulsion disagrees
    ("third:nwchem7.0/dvb_ir.out", "Output coordinates in angstroms", "    1 C                    6.0000",
     "    1 C                    8.0000", "nuclear repulsion energy of the final geometry is 474.96"),
    ("sample:gas/hcn.out", "Output coordinates in angstroms", "    2 C                    6.0000",
     "    2 C                    8.0000", "atom 2 is O in the final geometry but C in another geometry block"),
    ("third:psi4-1.2.1/dvb_ir_rhf.out", "Geometry (in Angstrom)", "         C           -1.4152",
     "         O           -1.4152", "atom 1 is O in the final geometry but C in another geometry block"),
    # H -> Li keeps the electron count's parity, so only the repulsion (12.3176 Eh printed) tells
    ("third:gamess-us2018/nh3_ts_ir.out", "COORDINATES (BOHR)", " H           1.0", " H           3.0",
     "nuclear repulsion energy of the final geometry is 21.155"),
    ("sample:conformers/pentane_tt.out", "covCN", "     1   6 C ", "     1   8 O ",
     "atom 1 is O in the final geometry but C in another geometry block"),
]


@pytest.mark.parametrize(("log", "header", "row", "flipped", "reason"), ELEMENT_FLIPS)
def test_an_element_changed_in_the_final_geometry_is_refused(samples, third_party, tmp_path, log, header, row,
                                                            flipped, reason):
    # before the check these read as another molecule (C9H10O for C10H10) with the same energy, status ok
    text = _log_text(samples, third_party, log)
    at = text.index(row, text.rindex(header))
    damaged = write(tmp_path, Path(log).name, text[:at] + flipped + text[at + len(row) :])
    refused(damaged, reason)


def test_the_recomputed_nuclear_repulsion_matches_every_real_log(samples, third_party):
    # the check's premise: sum Z_i Z_j / r_ij over the final geometry equals a value each program printed
    # (to 7.5e-8 relative: NWChem's older bohr), here for dvb, C10H10, in five programs
    for log in ("gaussian16/dvb_ir.out", "orca6.0/dvb_ir.out", "qchem5.4/dvb_ir.out", "nwchem7.0/dvb_ir.out",
                "psi4-1.2.1/dvb_ir_rhf.out"):
        calc = qcthermo.read_log(third_party / log)
        printed = float(re.findall(r"[Nn]uclear [Rr]epulsion(?: [Ee]nergy)?\s*[=:]?\s+(\d+\.\d+)",
                                   (third_party / log).read_text())[0])
        assert checks.nuclear_repulsion(calc.symbols, calc.coordinates) == pytest.approx(printed, rel=1e-7), log


# ------------------------------------------------------------------------- a stray energy line

#: (log, the phrase of the line the reader takes its energy from (its last), the stray line put after it, the
#: log's own restatement of the energy that disagrees): an impossible value for the molecule (-1.0 Eh for
#: C10H10, whose B3LYP energy is -382 Eh and xTB's -26 Eh: no bound on the magnitude tells both apart)
STRAY_ENERGY_LINES = [
    ("third:gaussian16/dvb_ir.out", "SCF Done:", " SCF Done:  E(RB3LYP) =  -1.00000000000     A.U. after    1 cycles",
     "archive block gives -382.3082666"),
    ("third:gaussian16/dvb_gopt.out", "SCF Done:", " SCF Done:  E(RB3LYP) =  -1.00000000000     A.U. after    1 cycles",
     "archive block gives -382.3082666"),
    ("third:orca6.0/dvb_ir.out", "FINAL SINGLE POINT ENERGY", "FINAL SINGLE POINT ENERGY        -1.000000000000",
     r"restates it as -382.05510711 Eh \(\"Electronic energy\"\)"),
    ("third:xtb6.6.1/dvb_ir.out", "| TOTAL ENERGY", "          | TOTAL ENERGY               -1.000000000000 Eh   |",
     r"restates it as -26.438242468338 Eh \(\":: total energy\"\)"),
    ("sample:conformers/pentane_tt.out", "| TOTAL ENERGY",
     "          | TOTAL ENERGY               -1.000000000000 Eh   |", r"restates it as -16.829456631413 Eh"),
    ("third:qchem5.4/dvb_ir.out", "Total energy in the final basis set",
     " Total energy in the final basis set =       -1.0000000000",
     r"restates it as -382.3082745764 Eh \(\"Convergence criterion met\"\)"),
]


@pytest.mark.parametrize(("log", "phrase", "stray", "reason"), STRAY_ENERGY_LINES)
def test_a_stray_energy_line_is_refused(samples, third_party, tmp_path, log, phrase, stray, reason):
    # before the check these read with E = -1.0 Eh, status ok; the restatements are the log's own lines
    text = _log_text(samples, third_party, log)
    end = text.index("\n", text.rindex(phrase)) + 1
    refused(write(tmp_path, Path(log).name, text[:end] + stray + "\n" + text[end:]),
            rf"the final energy reads -1.0 Eh, but .*{reason}.*: a stray or damaged energy line")


def test_a_digit_changed_in_the_last_energy_line_is_refused(third_party, tmp_path):
    # printed in dvb_ir.out: "SCF Done:  E(RB3LYP) =  -382.308266557" and the archive's HF=-382.3082666; a
    # 2 read as 7 gives -387.3 Eh, inside the Thomas-Fermi bound, 3000 kcal/mol off
    text = (third_party / "gaussian16" / "dvb_ir.out").read_text()
    line = re.findall(r"SCF Done:.*", text)[-1]
    damaged = replace_last(text, line, line.replace("-382.3", "-387.3"))
    refused(write(tmp_path, "dvb_ir.out", damaged), r"the final energy reads -387.3\d+ Eh, but the job's archive")


# -------------------------------------------------------------------------- two jobs in one file


def test_two_nwchem_logs_of_different_molecules_are_refused(samples, tmp_path):
    text = (samples / "gas" / "ch4.out").read_text() + (samples / "sp" / "water_mp2.out").read_text()
    refused(write(tmp_path, "both.out", text), r"2 nwchem runs in one file for different molecules \(CH4, H2O\)")


def test_the_same_nwchem_run_twice_gives_the_last_with_a_note(samples, tmp_path):
    hcn = samples / "gas" / "hcn.out"
    calc = qcthermo.read_log(write(tmp_path, "twice.out", hcn.read_text() * 2))
    # printed in hcn.out: its last "Total DFT energy"; HCN is linear: 3N-5 = 4 modes
    assert calc.energy == pytest.approx(last_printed(hcn, r"Total DFT energy =\s+(-?\d+\.\d+)"), abs=1e-9)
    assert calc.formula == "CHN" and calc.frequencies.size == 4
    assert any("2 nwchem runs in one file" in n and "run 2" in n for n in calc.notes)


def test_two_gaussian_logs_of_different_molecules_are_refused(third_party, tmp_path):
    text = (third_party / "gaussian16" / "dvb_ir.out").read_text()
    text += (third_party / "gaussian16" / "water_hf_solvent_smd.log").read_text()
    refused(write(tmp_path, "both.log", text), r"different molecules \(C10H10, H2O\)")


def test_gaussian_link1_steps_stay_one_job(third_party, tmp_path):
    # A "--Link1--" job: the second step follows "Link1: Proceeding to internal job step number 2." with no
    # new "Entering Gaussian System" (one process). Built from the real optimisation and frequency logs.
    opt = (third_party / "gaussian16" / "dvb_gopt.out").read_text()
    freq = (third_party / "gaussian16" / "dvb_ir.out").read_text()
    step2 = freq[freq.index("\n", freq.index("Entering Gaussian System")) + 1 :]
    link1 = opt + " Link1:  Proceeding to internal job step number  2.\n" + step2
    calc = qcthermo.read_log(write(tmp_path, "opt_freq.log", link1))
    assert calc.frequencies.size == 54  # README: 54 real modes
    assert not any("runs in one file" in n for n in calc.notes)
    assert {"optimization", "frequencies"} <= calc.job_types


#: one real log of each program that prints a run banner and an end phrase (every one ends normally)
ONE_PER_PROGRAM = {"nwchem": "sample:sp/water_mp2.out", "xtb": "sample:conformers/pentane_tt.out",
                   "gaussian": "third:gaussian16/water_hf_solvent_smd.log", "orca": "third:orca6.0/dvb_sp_dft.out",
                   "qchem": "third:qchem5.4/dvb_ir.out", "gamess": "third:gamess-us2018/nh3_ts_ir.out",
                   "psi4": "third:psi4-1.2.1/dvb_ir_rhf.out"}


def _log_text(samples: Path, third_party: Path, where: str) -> str:
    folder, name = where.split(":")
    return ((samples if folder == "sample" else third_party) / name).read_text()


PAIRS = [(a, b) for a in ONE_PER_PROGRAM for b in ONE_PER_PROGRAM if a != b]


@pytest.mark.parametrize(("first", "second"), PAIRS)
def test_logs_of_two_programs_pasted_or_spliced_are_refused(samples, third_party, tmp_path, first, second):
    # each log prints its own run banner once and its end phrase once (read in each of them); a second
    # program's banner (the paste) or its end phrase (the splice: the first log's head, the second's tail)
    # means the file mixes two logs, whichever molecule each holds
    a, b = (_log_text(samples, third_party, ONE_PER_PROGRAM[p]) for p in (first, second))
    assert qcthermo.read_log(write(tmp_path, "a.out", a)).program == first
    reason = refused(write(tmp_path, "pasted.out", a + b), rf"a run of {second} at line \d+ of this {first} log: "
                                                           "logs of different programs pasted")
    assert int(re.search(r"at line (\d+)", reason).group(1)) > a.count("\n")  # in the second log
    refused(write(tmp_path, "spliced.out", a[: len(a) // 2] + b[len(b) // 2 :]),
            rf"the normal end of a run of {second} at line \d+ of this {first} log")


@pytest.mark.parametrize("log", ["sample:sp/water_mp2.out", "sample:gas/hcn.out", "third:gaussian16/dvb_ir.out",
                                 "third:orca6.0/dvb_ir.out", "third:qchem5.4/dvb_ir.out"])
def test_a_run_ending_inside_another_of_the_same_program_is_refused(samples, third_party, tmp_path, log):
    # the same log spliced into itself half-way (a job restarted into its own file while the first still
    # wrote): its end phrase, printed last in the real log, is now followed by the other half
    text = _log_text(samples, third_party, log)
    half = text.index("\n", len(text) // 2) + 1
    refused(write(tmp_path, "spliced.out", text[:half] + text + text[half:]),
            r"run ends normally at line \d+, but the log goes on for \d+ more lines: logs spliced")


def test_the_head_of_one_xtb_log_spliced_onto_the_tail_of_another_is_refused(samples, third_party, tmp_path):
    """Found by fuzzing: butyne_eclipsed.out's head (banner and setup, whose table of elements lists C 1-4, H 5-10)
    spliced onto the third-party dvb_ir.out's tail (its SCF, Hessian and charges table of 20 atoms: an --hess run,
    which prints no structure to compare). Both logs print their table of elements (the references); the record was
    dvb's C10H10 under butyne's header."""
    head = (samples / "flawed" / "butyne_eclipsed.out").read_text()
    tail = (third_party / "xtb6.6.1" / "dvb_ir.out").read_text()
    spliced = head[:5750] + tail[13727:]  # the fuzzer's cut: inside butyne's setup, inside dvb's first SCF
    assert "1    6 C      1-4" in spliced and "1    6 C      1-6, 11, 12, 16, 17" not in spliced
    refused(write(tmp_path, "spliced.out", spliced), "the final geometry has 20 atoms but the log's table of "
                                                     "elements lists 10 .logs of two molecules spliced together")


def test_an_xtb_table_of_elements_that_disagrees_atom_by_atom_is_refused(third_party, tmp_path):
    """dvb_ir.out lists C at 1-6, 11, 12, 16, 17 (its table of elements; the charges table agrees): with two of those
    numbers swapped for two hydrogens' the count still fits, the elements no longer do."""
    text = (third_party / "xtb6.6.1" / "dvb_ir.out").read_text()
    edited = text.replace("1-6, 11, 12, 16, 17", "1-6, 11, 12, 13, 14").replace("7-10, 13-15, 18-20", "7-10, 15-20")
    assert edited.count("7-10, 15-20") == 1
    refused(write(tmp_path, "dvb.out", edited), "atom 13 is H in the final geometry but element 6 in the log's table")


#: Firefly 8.0.1's header, as printed at the top of its dvb_sp.out in cclib's regression data
#: (data/GAMESS/basicFirefly8.0): it names "GAMESS VERSION" twice, and Firefly prints no other banner
FIREFLY_HEADER = """
          ******************************************************
          *      Firefly version 8.0.1, build number 8540      *
          ******************************************************

          ******************************************************
          *  PARTIALLY BASED ON  US GAMESS VERSION 6 JUN 1999, *
          *   US GAMESS VERSIONS  6 SEP 2001 AND 12 DEC 2003   *
          *             FROM IOWA STATE UNIVERSITY             *
          ******************************************************
"""


def test_a_firefly_header_is_one_run_not_two(third_party, tmp_path):
    # the real GAMESS-US log with Firefly's header and its "EXECUTION OF FIREFLY BEGUN/TERMINATED" lines (the
    # form of Firefly 8.0.1's output, above) in place of GAMESS's: one run, read as the GAMESS-US log is
    text = (third_party / "gamess-us2018" / "nh3_ts_ir.out").read_text()
    box = text[text.index("          ******") : text.index("BIT LINUX VERSION ****************\n") + 35]
    firefly = text.replace(box, FIREFLY_HEADER).replace("EXECUTION OF GAMESS", "EXECUTION OF FIREFLY")
    calc = qcthermo.read_log(write(tmp_path, "firefly.out", firefly))
    assert not any("runs in one file" in note for note in calc.notes), calc.notes
    assert calc.normal_termination is True
    # README: E = -9.12869607 (the first "FINAL R-AM1 ENERGY"; the Hessian's displaced points follow within
    # 4e-7 Eh), 6 modes, one imaginary
    assert calc.energy == pytest.approx(-9.12869607, abs=1e-6)
    assert (calc.frequencies < 0).sum() == 1 and calc.frequencies.size == 6


def test_openmolcas_modules_that_all_end_well_are_a_normal_termination():
    from qcthermo.readers.programs import terminated_normally

    # the end of OpenMolcas 18.0's water_mbpt2.out (cclib's regression data, data/Molcas/basicOpenMolcas18.0):
    # every module stops with "/rc=_RC_ALL_IS_WELL_", then the driver's timing line
    ended = ("--- Stop Module: scf at Thu Jul 26 18:40:30 2018 /rc=_RC_ALL_IS_WELL_ ---\n"
             "*** symbolic link created: INPORB -> water_mpbt2.ScfOrb\n"
             "--- Start Module: mbpt2 at Thu Jul 26 18:40:30 2018 ---\n"
             "::    Total MBPT2 energy                              -75.0008801966\n"
             "--- Stop Module: mbpt2 at Thu Jul 26 18:40:30 2018 /rc=_RC_ALL_IS_WELL_ ---\n"
             "*** files: xmldump\n    saved to directory /home/kunal/OpenMolcas/build\n\n"
             "    Timing: Wall=2.05 User=1.05 System=0.60\n")
    assert terminated_normally("molcas", ended) is True
    cut = ended[: ended.index("::")]  # stopped inside the mbpt2 module
    assert terminated_normally("molcas", cut) is False
    failed = ended.replace("mbpt2 at Thu Jul 26 18:40:30 2018 /rc=_RC_ALL_IS_WELL_",
                           "mbpt2 at Thu Jul 26 18:40:30 2018 /rc=_RC_NOT_CONVERGED_")
    assert terminated_normally("molcas", failed) is False


def test_gamess_uk_names_its_method_from_the_echoed_input():
    from qcthermo.readers.programs import gamess_uk_method

    # the input echo of GAMESS-UK 8.0's dvb_sp_ks.out (cclib's regression data, data/GAMESS-UK/basicGAMESS-UK8.0)
    echo = (" >>>>> BASIS STO3G\n >>>>> RUNTYPE SCF\n >>>>> SCFTYPE RHF\n >>>>> DFT B3LYP\n >>>>> ENTER\n"
            "   SCF TYPE  rhf\n")
    assert gamess_uk_method(echo) == "B3LYP"
    assert gamess_uk_method(echo.replace(" >>>>> DFT B3LYP\n", "")) == "HF"  # the dvb_sp_hf.out form
    assert gamess_uk_method(echo.replace("SCFTYPE RHF", "SCFTYPE MP3").replace(" >>>>> DFT B3LYP\n", "")) is None


# ------------------------------------------------------------- impossible values read from the file


@pytest.mark.parametrize("mult, reason", [("0", "multiplicity 0 is impossible"), ("2", "parity impossible"),
                                          ("99", "multiplicity 99 is impossible with 70 electrons")])
def test_orca_impossible_multiplicity(third_party, tmp_path, mult, reason):
    # dvb, C10H10: 70 electrons (6 x 10 + 10), neutral: an odd multiplicity up to 71
    text = (third_party / "orca6.0" / "dvb_ir.out").read_text()
    line = "Multiplicity           Mult            ....    1"
    refused(write(tmp_path, "dvb.out", replace_last(text, line, line[:-1] + mult)), reason)


def test_energy_exactly_zero_is_refused(third_party, tmp_path):
    text = (third_party / "orca6.0" / "dvb_ir.out").read_text()
    damaged = replace_last(text, "FINAL SINGLE POINT ENERGY      -382.055107107616", "FINAL SINGLE POINT ENERGY 0.0")
    refused(write(tmp_path, "dvb.out", damaged), "final energy reads 0.0")


@pytest.mark.parametrize("printed, reason", [("-3820.55107107616", "outside what these atoms allow"),
                                             ("382.055107107616", "outside what these atoms allow"),
                                             ("-38205.5107107616", "outside what these atoms allow")])
def test_energy_beyond_what_the_atoms_allow_is_refused(third_party, tmp_path, printed, reason):
    # a decimal point shifted or a sign lost in the energy line. Bound: 1.5 x the Thomas-Fermi energies
    # 0.7687 Z^(7/3) Eh (Lieb and Simon 1977, coefficient from memory): 766 Eh for C10H10, which the printed
    # -382.055 (third-party-logs README) is well inside
    text = (third_party / "orca6.0" / "dvb_ir.out").read_text()
    assert abs(checks.energy_bound(["C"] * 10 + ["H"] * 10) - 1.5 * 0.7687 * (10 * 6 ** (7 / 3) + 10)) < 1e-9
    line = "FINAL SINGLE POINT ENERGY      -382.055107107616"
    refused(write(tmp_path, "dvb.out", replace_last(text, line, f"FINAL SINGLE POINT ENERGY {printed}")), reason)


@pytest.mark.parametrize("value", ["22137.3", "2.21373e30", "-22137.3"])
def test_nwchem_frequency_beyond_any_vibration_is_refused(samples, tmp_path, value):
    # printed: hcn.out's projected frequencies end "766.48 2213.73 3480.91"; a digit too many (x 10) or a
    # damaged exponent puts the ZPE alone at tens of kcal/mol: no vibration exceeds H2's ~4400 cm^-1 (from memory)
    text = (samples / "gas" / "hcn.out").read_text()
    line = "P.Frequency      766.48     2213.73     3480.91"
    refused(write(tmp_path, "hcn.out", replace_last(text, line, line.replace("2213.73", value))),
            "beyond any molecular vibration")


@pytest.mark.parametrize("value", ["nan", "inf", "0.00"])
def test_nwchem_non_finite_or_zero_frequency(samples, tmp_path, value):
    # printed: hcn.out's projected frequencies end "766.48 2213.73 3480.91"
    text = (samples / "gas" / "hcn.out").read_text()
    line = "P.Frequency      766.48     2213.73     3480.91"
    damaged = replace_last(text, line, line.replace("2213.73", value))
    reason = "zero among the vibrations" if value == "0.00" else "not a finite number"
    refused(write(tmp_path, "hcn.out", damaged), reason)


@pytest.mark.parametrize("value, reason", [("nan", "not a finite number"), ("-0.230222", "lie within 0.2 A")])
def test_orca_non_finite_or_coincident_coordinates(third_party, tmp_path, value, reason):
    # the first two carbons of dvb are printed at (-1.415253, 0.230222, 0) and (1.415253, -0.230222, 0):
    # moving the first onto the second leaves the atom count right and two nuclei on one spot
    text = (third_party / "orca6.0" / "dvb_ir.out").read_text()
    row = "  C     -1.415253    0.230222    0.000000\n"
    new = f"  C      1.415253   {value}    0.000000\n" if value != "nan" else "  C     nan    0.230222    0.000000\n"
    refused(write(tmp_path, "dvb.out", replace_last(text, row, new)), reason)


def test_nwchem_ghost_atom_is_refused(samples, tmp_path):
    # a nuclear charge of 0 is NWChem's dummy/ghost ("Bq") atom
    text = (samples / "gas" / "ch4.out").read_text()
    row = re.findall(r"^\s+2 H\s+1\.0000 .*$", text, re.M)[-1]
    damaged = write(tmp_path, "ch4.out", replace_last(text, row, row.replace(" H ", " Bq").replace("1.0000", "0.0000")))
    refused(damaged, r"dummy or ghost atoms \(X\)")


def test_gaussian_atomic_number_zero_is_refused(third_party, tmp_path):
    text = (third_party / "gaussian16" / "water_hf_solvent_smd.log").read_text()
    row = "      3          1           0       -0.000000   -0.790650   -0.476640\n"
    damaged = text.replace(row, row.replace("          1   ", "          0   "))
    # cclib 1.8.1 itself raises on an atomic number 0 in this log; either way, a one-line reason
    refused(write(tmp_path, "water.log", damaged), "dummy or ghost atoms|cclib failed")


def test_thermochemistry_never_returns_a_non_finite_g(samples):
    # a vibration of exactly 0 cm^-1: the harmonic-oscillator entropy k[x/(e^x-1) - ln(1-e^-x)] diverges as
    # x = h c nu / kT -> 0 (McQuarrie, Statistical Mechanics, ch. 8; from memory): RRHO must refuse it
    from qcthermo.thermo import thermochemistry

    calc = qcthermo.read_log(samples / "gas" / "water.out")
    freqs = calc.frequencies.copy()
    freqs[0] = 0.0
    molecule = Molecule.from_calculation(calc, frequencies=freqs)
    with pytest.raises(ThermoError) as err:
        thermochemistry(molecule, Conditions(low_mode_model="rrho"))
    assert "\n" not in str(err.value)


# ------------------------------------------------------------------------------- compressed files


def test_compressed_logs_read_the_same_and_damaged_archives_are_refused(samples, tmp_path):
    source = samples / "gas" / "h2.out"
    raw = source.read_bytes()
    plain = qcthermo.read_log(source)
    for name, data in (("h2.out.gz", gzip.compress(raw)), ("h2.out.bz2", bz2.compress(raw)),
                       ("h2.out.xz", lzma.compress(raw))):
        (tmp_path / name).write_bytes(data)
        assert qcthermo.read_log(tmp_path / name).energy == plain.energy, name
        (tmp_path / ("cut_" + name)).write_bytes(data[: len(data) // 2])
        refused(tmp_path / ("cut_" + name), "damaged (gzip|bzip2|xz) file")
    crc = bytearray(gzip.compress(raw))
    crc[-6] ^= 0xFF  # the CRC-32 field of the gzip trailer (RFC 1952)
    (tmp_path / "crc.out.gz").write_bytes(bytes(crc))
    refused(tmp_path / "crc.out.gz", "damaged gzip file .*CRC")
    corrupt = bytearray(gzip.compress(raw))
    corrupt[40:48] = b"\xff" * 8  # inside the deflate stream
    (tmp_path / "corrupt.out.gz").write_bytes(bytes(corrupt))
    refused(tmp_path / "corrupt.out.gz", "damaged gzip file")
    (tmp_path / "text.out.gz").write_bytes(raw)  # named .gz, not gzip: read as the text it is
    assert qcthermo.read_log(tmp_path / "text.out.gz").energy == plain.energy
    (tmp_path / "noise.out.gz").write_bytes(bytes(range(1, 256)) * 40)
    refused(tmp_path / "noise.out.gz", "not a quantum-chemistry log")


def _bomb(pack, pieces: int) -> bytes:
    """``pieces`` MB of zeros as concatenated compressed streams (every format reads them as one file: RFC 1952
    members, bzip2 and xz streams), built from one packed MB, so a 2 GB bomb costs the test nothing to make."""
    return pack(b"\x00" * 2**20) * pieces


@pytest.mark.parametrize("pack", [bz2.compress, lzma.compress, gzip.compress])
def test_decompression_bombs_are_refused_without_being_unpacked(tmp_path, pack):
    import tracemalloc

    # 2 GB of zeros in at most 2 MB, as the report describes (gzip: 64 MB in one member, the usual form, since
    # Python's gzip reader unpacks concatenated members slowly); unpacked whole it is a MemoryError
    data = gzip.compress(b"\x00" * 64 * 2**20, 1) if pack is gzip.compress else _bomb(pack, 2048)
    assert len(data) <= 2 * 2**20
    path = tmp_path / "bomb.out.gz"
    path.write_bytes(data)
    tracemalloc.start()
    try:
        refused(path, r"(gzip|bzip2|xz) file unpacking to \d+ times its size .*a decompression bomb")
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 64 * 2**20  # streamed: a few tens of MB at most, never the bomb


def test_a_log_beyond_the_size_cap_is_refused_on_disk_and_packed(samples, tmp_path, monkeypatch):
    source = samples / "solvent" / "ts_hydration.out"  # 1.5 MB, the largest real log at hand
    monkeypatch.setenv("QCTHERMO_MAX_LOG_MB", "1")
    refused(source, "file beyond 1 MB, the most a log is read to")
    (tmp_path / "ts.out.xz").write_bytes(lzma.compress(source.read_bytes()))  # 14:1, a real log's ratio
    refused(tmp_path / "ts.out.xz", "xz file unpacking beyond 1 MB")
    monkeypatch.setenv("QCTHERMO_MAX_LOG_MB", "2")
    assert qcthermo.read_log(tmp_path / "ts.out.xz").energy == qcthermo.read_log(source).energy


# ------------------------------------------------------------------------------- text encodings


@pytest.mark.parametrize("encoding", ["utf-16", "utf-16-le", "utf-16-be", "utf-8-sig"])
def test_utf16_and_byte_order_marked_logs_read_as_the_utf8_log(samples, tmp_path, encoding):
    # Windows PowerShell's ">" writes a program's output as UTF-16 with a byte-order mark (Unicode's
    # definition of UTF-16 and its BOM); with CRLF line ends, as a copy from Windows has them
    source = samples / "gas" / "water.out"
    text = source.read_text()
    path = tmp_path / "water.out"
    path.write_bytes(text.replace("\n", "\r\n").encode(encoding))
    calc, plain = qcthermo.read_log(path), qcthermo.read_log(source)
    assert (calc.program, calc.formula, calc.energy) == ("nwchem", "H2O", plain.energy)
    # the last "Total DFT energy" the log prints (the frequency job's SCF, within 1e-6 Eh of the last step's)
    assert calc.energy == pytest.approx(last_printed(source, r"Total DFT energy =\s+(-?\d+\.\d+)"), abs=1e-5)
    assert len(calc.frequencies) == 3  # 3N - 6 = 3 vibrations of water, once the projected zeros are removed


def test_binary_and_nul_filled_files_are_still_refused(tmp_path):
    (tmp_path / "zeros.log").write_bytes(b"\x00" * 65536)  # a file of zeros (a preallocated, never written log)
    refused(tmp_path / "zeros.log", "binary file")
    (tmp_path / "odd.out").write_bytes(b"\x01\x00" * 4096)  # NUL every other byte, but no text either
    refused(tmp_path / "odd.out", "not a quantum-chemistry log|binary")


@pytest.mark.parametrize(("log", "line", "edited", "reference"), [
    ("gaussian16/dvb_ir.out", " Charge =  0 Multiplicity = 1", " Charge =  0 Multiplicity = 3", "RB3LYP"),
    ("orca5.0/dvb_ir.out", "Multiplicity           Mult            ....    1",
     "Multiplicity           Mult            ....    3", "RHF"),
])
def test_an_open_shell_multiplicity_on_a_closed_shell_scf_is_refused(third_party, tmp_path, log, line, edited,
                                                                      reference):
    # the logs print a restricted closed-shell SCF ("E(RB3LYP)", "HFTyp .... RHF"), which is a singlet by
    # construction; a triplet read from an edited charge/multiplicity line (parity still possible for
    # C10H10's 70 electrons) would shift G by RT ln 3 with status ok
    text = (third_party / log).read_text()
    assert reference in text and line in text
    refused(write(tmp_path, Path(log).name, text.replace(line, edited)), f"restricted closed-shell \\({reference}\\)")
    assert qcthermo.read_log(third_party / log).multiplicity == 1

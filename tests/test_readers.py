"""read_log on real program outputs: values from the fixtures' README and from the files' own text.

Sources of the check values, named beside each check:
- "README": ../shared/fixtures/third-party-logs/README.md (what each real log must give).
- "printed": the number as printed in the log itself, read by a plain regular expression here.
- "common practice": 3N-6 / 3N-5 vibrational modes, closed shells are singlets.
"""

from __future__ import annotations

import gzip
import logging
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from log_text import last_printed

import qcthermo
from qcthermo.readers.normalise import vibrational_modes
from qcthermo.units import to_hartree

# file, program, number of vibrational modes (None: no frequency job), README energy (hartree)
README_CASES = [
    ("gaussian16/dvb_ir.out", "gaussian", 54, -382.30824980),
    ("gaussian16/dvb_gopt.out", "gaussian", None, None),
    ("gaussian16/dvb_sp.out", "gaussian", None, -382.30824980),
    ("gaussian16/water_hf_solvent_smd.log", "gaussian", None, -74.96729878),
    ("orca5.0/dvb_ir.out", "orca", 54, -382.05509182),
    ("orca5.0/dvb_sp.out", "orca", None, -382.05509182),
    ("orca6.0/dvb_ir.out", "orca", 54, -382.055107107616),
    ("orca6.0/dvb_sp_dft.out", "orca", None, -382.055108392562),
    ("qchem5.4/dvb_ir.out", "qchem", 54, -382.30825777),
    ("nwchem7.0/dvb_ir.out", "nwchem", 54, -382.30822393),
    ("xtb6.6.1/dvb_ir.out", "xtb", 54, -26.43824131),
    ("gamess-us2018/nh3_ts_ir.out", "gamess", 6, -9.12869607),
    ("psi4-1.2.1/dvb_ir_rhf.out", "psi4", 54, -379.77009482),
]

# the last total energy as each program prints it (hartree): the outside source for unit handling
PRINTED_ENERGY = {
    "gaussian": r"SCF Done:\s+E\(\S+\)\s+=\s+(-?\d+\.\d+)",
    "orca": r"FINAL SINGLE POINT ENERGY\s+(-?\d+\.\d+)",
    "qchem": r"Total energy in the final basis set\s+=\s+(-?\d+\.\d+)",
    "nwchem": r"Total DFT energy =\s+(-?\d+\.\d+)",
    "xtb": r"\|\s+TOTAL ENERGY\s+(-?\d+\.\d+) Eh",
    "gamess": r"FINAL R-AM1 ENERGY IS\s+(-?\d+\.\d+)",
    "psi4": r"@DF-RHF Final Energy:\s+(-?\d+\.\d+)",
}
#: a numerical Hessian's displaced-geometry energies are printed after the stationary point's: its own, as printed
STATIONARY_ENERGY = {
    "gamess-us2018/nh3_ts_ir.out": -9.1286961082,  # line 311, "FINAL R-AM1 ENERGY IS" of COORD 0 (line 241)
}

#: the B3LYP/STO-3G dvb frequency jobs: same level of theory in five programs
B3LYP_DVB = [
    "gaussian16/dvb_ir.out",
    "orca5.0/dvb_ir.out",
    "orca6.0/dvb_ir.out",
    "qchem5.4/dvb_ir.out",
    "nwchem7.0/dvb_ir.out",
]


@pytest.mark.parametrize(("name", "program", "n_modes", "energy"), README_CASES)
def test_third_party_logs_give_the_readme_values(third_party, name, program, n_modes, energy):
    calc = qcthermo.read_log(third_party / name)
    assert calc.program == program
    if n_modes is None:
        assert calc.frequencies is None
    else:
        assert calc.frequencies.shape == (n_modes,)  # README
    # printed: energies in hartree exactly as the program printed them (8 or more decimals)
    printed = STATIONARY_ENERGY.get(name) or last_printed(third_party / name, PRINTED_ENERGY[program])
    assert calc.energy == pytest.approx(printed, abs=1e-8)
    if energy is not None:
        # README: its numbers are cclib's eV divided by CODATA 2018's hartree (27.211386 eV), while cclib
        # multiplied by 27.21138505: they sit 4.4e-8 relative (1.7e-5 Eh here) off the printed values
        assert calc.energy == pytest.approx(energy, abs=3e-5)
    assert calc.normal_termination is True
    assert calc.multiplicity == 1  # README: all closed shells
    assert isinstance(calc.multiplicity, int)


def test_dvb_frequency_jobs_agree_across_programs(third_party):
    calcs = {name: qcthermo.read_log(third_party / name) for name in B3LYP_DVB}
    reference = calcs[B3LYP_DVB[0]]
    assert reference.formula == "C10H10"  # README: p-divinylbenzene
    ref = np.sort(reference.frequencies)
    for name, calc in calcs.items():
        assert sorted(calc.symbols) == sorted(reference.symbols), name
        freqs = np.sort(calc.frequencies)
        assert freqs.shape == (54,), name  # README: 54 vibrational modes
        assert np.all(freqs > 0), name
        # README: same level of theory, so within a few cm^-1; the programs' integration grids differ,
        # which moves the soft modes most (up to ~12 cm^-1 seen for Q-Chem's lowest modes)
        assert np.median(np.abs(freqs - ref)) < 2.0, name
        assert np.max(np.abs(freqs - ref)) < 15.0, name


def test_dvb_rhf_and_gfn2_frequencies_only_roughly_like_b3lyp(third_party):
    # Psi4's job is RHF and xTB's is GFN2-xTB: other levels of theory, so only the mode count and the
    # known tendency are checked: HF overestimates harmonic frequencies by ~10-20 % against B3LYP
    # (common practice: HF scale factors ~0.9 against ~0.96 for B3LYP)
    b3lyp = np.sort(qcthermo.read_log(third_party / B3LYP_DVB[0]).frequencies)
    rhf = np.sort(qcthermo.read_log(third_party / "psi4-1.2.1/dvb_ir_rhf.out").frequencies)
    gfn2 = np.sort(qcthermo.read_log(third_party / "xtb6.6.1/dvb_ir.out").frequencies)
    assert rhf.shape == gfn2.shape == (54,)
    assert 1.05 < np.mean(rhf / b3lyp) < 1.3
    assert np.all(gfn2 > 0)


def test_level_of_theory_and_job_types(third_party):
    ir = qcthermo.read_log(third_party / "gaussian16/dvb_ir.out")
    assert (ir.method, ir.basis) == ("B3LYP", "STO-3G")  # printed: "#p b3lyp/sto-3g"
    assert ir.job_types == {"frequencies"}
    opt = qcthermo.read_log(third_party / "gaussian16/dvb_gopt.out")
    assert opt.job_types == {"optimization"} and opt.optimization_converged is True
    assert qcthermo.read_log(third_party / "gaussian16/dvb_sp.out").job_types == {"single-point"}
    assert qcthermo.read_log(third_party / "psi4-1.2.1/dvb_ir_rhf.out").method == "HF"  # README: RHF
    assert qcthermo.read_log(third_party / "orca6.0/dvb_ir.out").method == "B3LYP"  # printed: "! b3lyp sto-3g"


def test_gaussian_smd_solvent_recorded(third_party):
    calc = qcthermo.read_log(third_party / "gaussian16/water_hf_solvent_smd.log")
    # README: solvent model recorded; printed route: SCRF=(SMD, Solvent=Toluene)
    assert calc.solvent_model == "smd"
    assert calc.solvent.lower() == "toluene"
    assert calc.method == "HF"


def test_orca6_falls_back_and_drops_the_six_zero_modes(third_party):
    calc = qcthermo.read_log(third_party / "orca6.0/dvb_ir.out")
    assert any("fallback extractor used" in n and "AssertionError" in n for n in calc.notes)
    assert calc.frequencies.shape == (54,)
    assert calc.frequencies.min() == pytest.approx(43.87)  # README: lowest 43.87
    text = (third_party / "orca6.0/dvb_ir.out").read_text()
    # printed: ORCA's own thermochemistry as totals
    gibbs = float(re.search(r"Final Gibbs free energy\s+\.\.\.\s+(-?\d+\.\d+)", text).group(1))
    assert calc.thermo_printed["gibbs"] == pytest.approx(gibbs, abs=1e-8)
    assert calc.thermo_printed["temperature"] == pytest.approx(298.15)
    # printed: the coordinates of the last geometry block, angstrom
    assert calc.coordinates[0] == pytest.approx([-1.415253, 0.230222, 0.0])


@pytest.mark.parametrize("name", ["nwchem7.0/dvb_ir.out", "xtb6.6.1/dvb_ir.out"])
def test_projected_zero_modes_removed(third_party, name):
    calc = qcthermo.read_log(third_party / name)
    assert calc.frequencies.shape == (54,)  # README: 60 printed incl. 6 ~zero
    assert np.all(np.abs(calc.frequencies) > 1.0)
    assert any("6 zero modes" in n for n in calc.notes)


def test_small_real_imaginary_mode_survives_zero_mode_removal(third_party):
    # docs/readers.md: removing by smallest |nu| would drop a real small imaginary mode. NWChem's
    # projected list of dvb, with its lowest vibration turned imaginary (a soft mode of a nearly flat
    # minimum), keeps it, because the projected rigid-body modes are the exact zeros
    calc = qcthermo.read_log(third_party / "nwchem7.0/dvb_ir.out")
    text = (third_party / "nwchem7.0/dvb_ir.out").read_text()
    block = text[text.rfind("Projected Frequencies") :]
    projected = np.array([float(v) for line in re.findall(r"P\.Frequency\s+(.*)", block) for v in line.split()])
    assert projected.shape == (60,)  # README: 60 printed
    projected[6] = -projected[6]
    kept, _ = vibrational_modes(projected, calc.symbols, calc.coordinates, projected=True)
    assert kept.shape == (54,) and kept.min() == pytest.approx(projected[6])
    assert np.sum(kept < 0) == 1


def test_xtb_multiplicity_inferred_with_a_note(third_party):
    calc = qcthermo.read_log(third_party / "xtb6.6.1/dvb_ir.out")
    assert calc.multiplicity == 1  # README: no multiplicity printed (closed shell: 1)
    assert any("multiplicity not printed" in n for n in calc.notes)
    assert calc.method == "GFN2-xTB"


def test_qchem_thermal_corrections_become_totals(third_party):
    calc = qcthermo.read_log(third_party / "qchem5.4/dvb_ir.out")
    text = (third_party / "qchem5.4/dvb_ir.out").read_text()
    # printed: "Total Enthalpy: 117.424 kcal/mol" is the correction; kcal/mol per hartree from qcthermo.units
    correction = float(re.search(r"Total Enthalpy:\s+(\d+\.\d+) kcal/mol", text).group(1))
    h = to_hartree(correction, "kcal/mol")
    assert calc.thermo_printed["enthalpy"] == pytest.approx(calc.energy + h, abs=2e-6)
    assert abs(calc.thermo_printed["enthalpy"] - calc.energy) < 1.0  # a total, not a correction (README)


def test_gamess_transition_state_frequencies(third_party):
    calc = qcthermo.read_log(third_party / "gamess-us2018/nh3_ts_ir.out")
    assert calc.frequencies.shape == (6,)  # README: 6 modes
    assert calc.n_imaginary == 1  # README: exactly 1 imaginary
    assert calc.job_types == {"frequencies"}  # printed: RUNTYP=HESSIAN


def test_cclib_failure_is_silent(third_party, capsys, caplog):
    with caplog.at_level(logging.DEBUG):
        qcthermo.read_log(third_party / "orca6.0/dvb_sp_dft.out")
    out, err = capsys.readouterr()
    assert out == "" and err == ""
    assert not [r for r in caplog.records if r.levelno >= logging.WARNING]


def test_gzip_log_reads_the_same(third_party, tmp_path):
    plain = third_party / "qchem5.4/dvb_ir.out"
    packed = tmp_path / "dvb_ir.out.gz"
    packed.write_bytes(gzip.compress(plain.read_bytes()))
    assert qcthermo.read_log(packed).energy == qcthermo.read_log(plain).energy


# ----------------------------------------------------------------------------------------- bad input

TRUNCATED = [
    "gaussian16/dvb_ir.out",
    "orca6.0/dvb_ir.out",
    "orca5.0/dvb_ir.out",
    "nwchem7.0/dvb_ir.out",
    "qchem5.4/dvb_ir.out",
    "xtb6.6.1/dvb_ir.out",
    "psi4-1.2.1/dvb_ir_rhf.out",
    "gamess-us2018/nh3_ts_ir.out",
]


@pytest.mark.parametrize("name", TRUNCATED)
@pytest.mark.parametrize("fraction", [0.1, 0.5, 0.9])
def test_truncated_logs_give_a_reason_or_an_unfinished_calculation(third_party, tmp_path, name, fraction):
    raw = (third_party / name).read_bytes()
    cut = tmp_path / Path(name).name
    cut.write_bytes(raw[: int(len(raw) * fraction)])
    try:
        calc = qcthermo.read_log(cut)
    except qcthermo.LogReadError as err:
        assert "\n" not in str(err) and str(cut) in str(err)
        return
    assert calc.normal_termination is False
    assert calc.energy is not None and calc.coordinates.shape == (calc.natoms, 3)
    if calc.frequencies is not None:  # never a partial list: common practice 3N-6
        assert calc.frequencies.shape == (3 * calc.natoms - 6,)


@pytest.mark.parametrize(
    ("content", "reason"),
    [
        (b"", "empty"),
        (b"   \n\n", "empty"),
        (bytes(range(256)) * 40, "binary"),
        (b"Dear colleague,\nplease find the results attached.\n", "not a quantum-chemistry log"),
        (b" CP2K| version string:                                          CP2K version 9.1\n", "unsupported"),
    ],
)
def test_bad_files_raise_log_read_error_only(tmp_path, content, reason):
    path = tmp_path / "job.out"
    path.write_bytes(content)
    with pytest.raises(qcthermo.LogReadError, match=reason) as info:
        qcthermo.read_log(path)
    assert isinstance(info.value, ValueError)  # docs/readers.md: LogReadError is a ValueError


def test_missing_file_and_directory(tmp_path):
    with pytest.raises(qcthermo.LogReadError, match="cannot be read"):
        qcthermo.read_log(tmp_path / "absent.out")
    with pytest.raises(qcthermo.LogReadError, match="directory"):
        qcthermo.read_log(tmp_path)


def test_a_log_with_its_banner_but_garbage_after(third_party, tmp_path):
    head = (third_party / "gaussian16/dvb_sp.out").read_bytes()[:3000]
    path = tmp_path / "broken.log"
    path.write_bytes(head + b"\n".join([b"@@@ random text 1 2 3"] * 500))
    with pytest.raises(qcthermo.LogReadError):
        qcthermo.read_log(path)


def test_geometry_file_through_ase(tmp_path):
    from ase.build import molecule
    from ase.io import write

    water = molecule("H2O")  # ASE's own geometry: the outside source
    path = tmp_path / "water.xyz"
    write(path, water)
    calc = qcthermo.read_log(path)
    assert calc.symbols == ("O", "H", "H")
    assert calc.coordinates == pytest.approx(water.get_positions(), abs=1e-6)
    assert calc.energy is None and calc.frequencies is None and calc.job_types == frozenset()
    assert calc.multiplicity == 1


def test_importing_the_readers_does_not_import_cclib():
    code = "import qcthermo.readers, sys; print('cclib' in sys.modules, 'pandas' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.split() == ["False", "False"]


# ------------------------------------------------------------------------- NWChem 7 sample scenario


def sample(samples: Path, name: str) -> Path:
    return samples / name  # committed with the project: a missing file fails the test that reads it


def test_nwchem_opt_freq_fallback_on_the_samples(samples):
    path = sample(samples, "gas/ch4.out")
    calc = qcthermo.read_log(path)
    text = path.read_text()
    assert calc.program == "nwchem" and calc.method == "B3LYP" and calc.basis == "6-31G*"
    assert calc.job_types == {"optimization", "frequencies"} and calc.optimization_converged is True
    assert calc.energy == pytest.approx(float(re.findall(r"Total DFT energy =\s+(-?\d+\.\d+)", text)[-1]), abs=1e-10)
    assert calc.frequencies.shape == (9,)  # common practice: 3N-6
    assert np.all(calc.frequencies > 0)


@pytest.mark.parametrize(("name", "n_modes"), [("gas/hcn.out", 4), ("gas/h2.out", 1), ("gas/o2.out", 1)])
def test_linear_molecules_keep_3n_minus_5_modes(samples, name, n_modes):
    calc = qcthermo.read_log(sample(samples, name))
    assert calc.frequencies.shape == (n_modes,)  # common practice: 3N-5 for a linear molecule
    assert any("5 zero modes" in n for n in calc.notes)


def test_nwchem_saddle_search_with_one_imaginary_mode(samples):
    path = sample(samples, "gas/ts_hcn.out")
    calc = qcthermo.read_log(path)
    assert "saddle-search" in calc.job_types
    assert calc.n_imaginary == 1
    # printed: the first projected frequency, not the unprojected list (whose ~-50 cm^-1 rigid-body
    # residue would otherwise be mistaken for vibrations)
    first = float(re.findall(r"P\.Frequency\s+(-?\d+\.\d+)", path.read_text())[0])
    assert calc.frequencies.min() == pytest.approx(first)


def test_nwchem_open_shell_s2(samples):
    path = sample(samples, "gas/ch3.out")
    calc = qcthermo.read_log(path)
    assert calc.multiplicity == 2
    # printed: NWChem's "<S2> = ..." line
    assert calc.s2 == pytest.approx(float(re.findall(r"<S2> =\s+(\d+\.\d+)", path.read_text())[-1]))


def test_nwchem_cosmo_solvent_and_gas_energy(samples):
    path = sample(samples, "solvent/water.out")
    calc = qcthermo.read_log(path)
    text = path.read_text()
    assert calc.solvent_model == "cosmo"
    # printed: NWChem's gas- and solution-phase energies of the last COSMO cycle
    assert calc.gas_energy == pytest.approx(float(re.findall(r"gas phase energy =\s+(-?\d+\.\d+)", text)[-1]))
    assert calc.energy == pytest.approx(float(re.findall(r"sol phase energy =\s+(-?\d+\.\d+)", text)[-1]))
    assert calc.energy < calc.gas_energy  # solvation stabilises water


def test_hydrogen_atom_has_no_vibrations(samples):
    calc = qcthermo.read_log(sample(samples, "gas/h_atom.out"))
    assert calc.natoms == 1 and calc.multiplicity == 2 and calc.frequencies is None


def test_every_sample_log_reads(samples):
    logs = sorted(p for p in samples.rglob("*.out") if "inputs" not in p.parts)
    assert len(logs) >= 30  # sample_outputs/README.md lists 33
    for path in logs:
        try:
            calc = qcthermo.read_log(path)
        except qcthermo.LogReadError:
            continue  # the flawed examples are meant to fail, with a reason
        assert calc.program in ("nwchem", "xtb"), path
        assert isinstance(calc.multiplicity, int), path


def sample_logs(samples: Path, marker: str) -> list[Path]:
    """Sample outputs whose text contains ``marker`` (the scenario has some of each kind: none is a failure)."""
    found = [p for p in sorted(samples.rglob("*.out")) if "inputs" not in p.parts and marker in p.read_text()]
    assert found, f"no sample output with {marker!r}"
    return found


def test_nwchem_correlated_single_points_use_the_highest_level(samples):
    for path in sample_logs(samples, "Total MP2 energy"):
        calc = qcthermo.read_log(path)
        text = path.read_text()
        ccsd_t = re.findall(r"CCSD\(T\) total energy / hartree\s+=\s+(-?\d+\.\d+)", text)
        if ccsd_t:
            assert calc.method == "CCSD(T)", path
            assert calc.energy == pytest.approx(float(ccsd_t[-1]), abs=1e-8), path
        else:
            # printed: NWChem's MP2 total, not the SCF energy underneath it
            assert calc.method == "MP2", path
            assert calc.energy == pytest.approx(float(re.findall(r"Total MP2 energy\s+(-?\d+\.\d+)", text)[-1])), path


def test_xtb_ohess_samples(samples):
    for path in sample_logs(samples, "x T B"):
        calc = qcthermo.read_log(path)
        text = path.read_text()
        assert calc.program == "xtb" and calc.method == "GFN2-xTB", path
        assert np.all(np.isfinite(calc.coordinates)), path  # --ohess prints the final structure
        assert calc.frequencies.shape == (3 * calc.natoms - 6,), path  # common practice: 3N-6
        # printed: xTB's own totals, in hartree
        energy = float(re.findall(r"\|\s+TOTAL ENERGY\s+(-?\d+\.\d+) Eh", text)[-1])
        gibbs = float(re.findall(r"\|\s+TOTAL FREE ENERGY\s+(-?\d+\.\d+) Eh", text)[-1])
        assert calc.energy == pytest.approx(energy, abs=1e-10), path
        assert calc.thermo_printed["gibbs"] == pytest.approx(gibbs, abs=1e-10), path
        assert calc.multiplicity == 1 and any("multiplicity not printed" in n for n in calc.notes), path


def test_optimisation_stopped_at_its_step_limit(samples):
    path = sample(samples, "flawed/methanol_maxiter.out")
    calc = qcthermo.read_log(path)
    assert "Failed to converge in maximum number of steps" in path.read_text()  # printed
    assert calc.optimization_converged is False
    assert calc.normal_termination is False


def test_hartree_fock_level_read_from_the_scf_module(samples):
    path = sample(samples, "flawed/hnc_hf.out")
    calc = qcthermo.read_log(path)
    assert (calc.method, calc.basis) == ("HF", "3-21G")  # printed: task scf, basis 3-21G
    assert calc.multiplicity == 1  # printed: "open shells = 0"
    assert calc.frequencies.shape == (4,)  # common practice: linear HNC, 3N-5


@pytest.mark.parametrize(
    ("route", "jobs"),
    [
        ("#p b3lyp/6-31g* opt=(ts,calcfc,noeigentest) freq", {"saddle-search", "optimization", "frequencies"}),
        ("#p opt(ts,calcfc) freq b3lyp", {"saddle-search", "optimization", "frequencies"}),
        ("#p opt=qst2 b3lyp", {"saddle-search", "optimization"}),
        ("#p opt=(calcfc,tight) b3lyp", {"optimization"}),
        ("#p b3lyp/sto-3g guess=read freq=hpmodes geom=allcheck", {"frequencies"}),
        ("#p b3lyp/sto-3g irc=(calcfc,maxpoints=20)", {"irc"}),
    ],
)
def test_gaussian_route_keywords(route, jobs):
    # Gaussian's route syntax (its manual's Opt, Freq and IRC keywords; from memory)
    from qcthermo.readers.programs import job_types_from_spec

    assert job_types_from_spec("gaussian", route) == jobs


def test_mp2_single_points_keep_the_multiplicity_of_their_geometry_job(samples):
    # the UHF-MP2 outputs print no multiplicity, only alpha and beta electron counts; the B3LYP job of the
    # same species prints "Spin multiplicity": both must agree (O2 a triplet, CH3 and H doublets)
    pairs = [(p, samples / "gas" / p.name.replace("_mp2", "")) for p in sample_logs(samples, "Total MP2 energy")]
    pairs = [(sp, gas) for sp, gas in pairs if gas.is_file()]
    assert len(pairs) >= 3  # O2, CH3 and H at least (sample_outputs/README.md)
    for sp, gas in pairs:
        printed = int(re.findall(r"Spin multiplicity:\s+(\d+)", gas.read_text())[-1])
        assert qcthermo.read_log(sp).multiplicity == printed, sp
        text = sp.read_text()
        alpha = re.findall(r"alpha electrons\s+=\s+(\d+)", text)
        beta = re.findall(r"beta\s+electrons\s+=\s+(\d+)", text)
        if alpha and beta:  # printed: 2S+1 = n_alpha - n_beta + 1
            assert printed == int(alpha[-1]) - int(beta[-1]) + 1, sp


@pytest.mark.parametrize("name", ["gaussian16/dvb_ir.out", "orca6.0/dvb_ir.out", "nwchem7.0/dvb_ir.out"])
def test_damaged_logs_never_raise_anything_but_log_read_error(third_party, tmp_path, name):
    # lines deleted, numbers garbled, blocks repeated (seeded): a reason or a record, never a traceback
    import random

    rng = random.Random(7)
    lines = (third_party / name).read_bytes().split(b"\n")
    for trial in range(6):
        damaged = list(lines)
        at = rng.randrange(len(damaged))
        if trial % 3 == 0:
            del damaged[at : at + rng.randrange(1, 300)]
        elif trial % 3 == 1:
            for i in rng.sample(range(len(damaged)), 80):
                damaged[i] = damaged[i].replace(b".", b"x", 1)
        else:
            damaged[at:at] = damaged[max(0, at - 150) : at]
        path = tmp_path / f"{trial}_{Path(name).name}"
        path.write_bytes(b"\n".join(damaged))
        try:
            calc = qcthermo.read_log(path)
        except qcthermo.LogReadError:
            continue
        assert np.isfinite(calc.energy) and calc.coordinates.shape == (calc.natoms, 3)


def test_killed_saddle_search_is_returned_unfinished(samples):
    path = sample(samples, "flawed/ts_abstraction_killed.out")
    calc = qcthermo.read_log(path)
    text = path.read_text()
    assert calc.normal_termination is False  # printed: no "Total times" at the end
    assert calc.optimization_converged is False and "saddle-search" in calc.job_types
    # printed: the last energy the job got to
    assert calc.energy == pytest.approx(float(re.findall(r"Total DFT energy =\s+(-?\d+\.\d+)", text)[-1]), abs=1e-10)
    assert calc.frequencies is None


def test_windows_line_ends_read_the_same(third_party, tmp_path):
    plain = third_party / "orca6.0/dvb_ir.out"
    crlf = tmp_path / "dvb_ir.out"
    crlf.write_bytes(plain.read_bytes().replace(b"\n", b"\r\n"))
    a, b = qcthermo.read_log(plain), qcthermo.read_log(crlf)
    assert (a.energy, a.method, a.basis, a.job_types) == (b.energy, b.method, b.basis, b.job_types)
    assert np.array_equal(a.frequencies, b.frequencies)


@pytest.mark.parametrize("name", ["gas/water.out", "gas/ch4.out"])  # read by cclib / by the fallback
def test_nwchem_thermochemistry_as_totals_on_both_paths(samples, name):
    from qcthermo.units import HARTREE_J, N_A

    path = sample(samples, name)
    calc = qcthermo.read_log(path)
    text = path.read_text()
    # printed: NWChem's enthalpy correction (au) and total entropy (cal/mol-K); G = H - T S by definition,
    # thermochemical calorie 4.184 J
    h_corr = float(re.findall(r"Thermal correction to Enthalpy\s+=.*\(\s*(-?\d+\.\d+) au\)", text)[-1])
    entropy = float(re.findall(r"Total Entropy\s+=\s+(-?\d+\.\d+) cal/mol-K", text)[-1])
    h = calc.energy + h_corr
    assert calc.thermo_printed["enthalpy"] == pytest.approx(h, abs=1e-9)
    assert calc.thermo_printed["gibbs"] == pytest.approx(h - 298.15 * entropy * 4.184 / (HARTREE_J * N_A), abs=1e-9)
    assert calc.thermo_printed["temperature"] == pytest.approx(298.15)


@pytest.mark.parametrize(
    ("program", "name"),
    [("orca", "orca5.0/dvb_ir.out"), ("orca", "orca5.0/dvb_sp.out"), ("nwchem", "nwchem7.0/dvb_ir.out")],
)
def test_fallback_extractors_agree_with_cclib_where_cclib_works(third_party, program, name):
    # cclib 1.8.1 reads these files: it is the outside source for what the text extractors find
    from qcthermo.readers import cclib_data, fallback, source

    src = source.load(third_party / name)
    data, failure = cclib_data.parse(src)
    assert failure is None
    by_cclib = cclib_data.fields(data, program)
    by_text = fallback.EXTRACTORS[program](src.text)
    assert by_text["symbols"] == by_cclib["symbols"]
    assert by_text["coordinates"] == pytest.approx(by_cclib["coordinates"], abs=1e-6)
    assert by_text["energy"] == pytest.approx(by_cclib["energy"], abs=1e-8)
    assert (by_text["charge"], by_text["multiplicity"]) == (by_cclib["charge"], by_cclib["multiplicity"])
    if "frequencies" in by_cclib:
        kept, _ = vibrational_modes(by_text["frequencies"], by_text["symbols"], by_text["coordinates"], True)
        expected, _ = vibrational_modes(by_cclib["frequencies"], by_cclib["symbols"], by_cclib["coordinates"], True)
        assert kept == pytest.approx(expected, abs=0.01)


def all_real_logs(samples: Path) -> list[Path]:
    from conftest import THIRD_PARTY

    found = sorted(p for p in samples.rglob("*") if p.suffix in (".out", ".log"))
    if THIRD_PARTY.is_dir():
        found += sorted(p for p in THIRD_PARTY.rglob("*") if p.suffix in (".out", ".log"))
    return found


def without_fallback_note(calc) -> dict:
    out = calc.to_dict()
    out["notes"] = [n for n in out["notes"] if not n.startswith("fallback extractor used")]
    return out


def test_known_cclib_failures_are_exactly_the_logs_cclib_fails_on(samples):
    # outside source: cclib 1.8.1 itself, run on every real log; the reader skips it only where it raises
    import cclib

    from qcthermo.readers import cclib_data, source

    if cclib.__version__ != cclib_data.KNOWN_CCLIB:
        pytest.skip("the known failures are those of cclib 1.8.1")
    skipped = 0
    for path in all_real_logs(samples):
        src = source.load(path)
        predicted = cclib_data.known_failure(src)
        _, failure = cclib_data.parse(src)
        assert (predicted is None) == (failure is None), (path, predicted, failure)
        if predicted:
            skipped += 1
            assert failure.split()[-1] in predicted, (path, predicted, failure)  # the same exception type
    assert skipped >= 15  # ORCA 6 and the NWChem multi-task samples


def test_direct_fallback_gives_what_cclib_then_fallback_gives(samples, monkeypatch):
    # the route that runs cclib first (and falls back when it raises) is the reference
    from qcthermo.readers import cclib_data

    paths = [p for p in all_real_logs(samples) if cclib_data.known_failure(load_source(p))]
    direct = {p: without_fallback_note(qcthermo.read_log(p)) for p in paths}
    monkeypatch.setattr(cclib_data, "known_failure", lambda source: None)
    for path in paths:
        calc = qcthermo.read_log(path)
        assert any(n.startswith("fallback extractor used: cclib failed with") for n in calc.notes), path
        assert without_fallback_note(calc) == direct[path], path


def load_source(path: Path):
    from qcthermo.readers import source

    return source.load(path)


@pytest.mark.parametrize(
    ("literal", "pattern"),
    [
        ("Total DFT energy =", r"Total DFT energy =\s+(-?\d+\.\d+)"),
        ("Temperature", r"^\s*Temperature\s+=\s+(-?\d+\.\d+)K"),
        ("electrons", r"^\s*beta\s+electrons\s+=\s+(\d+)"),
        ("FINAL SINGLE POINT ENERGY", r"^FINAL SINGLE POINT ENERGY\s+(-?\d+\.\d+)"),
        ("SCF Done", r"SCF Done:\s+E\(\S+\)\s+=\s+(-?\d+\.\d+)"),
    ],
)
def test_last_line_match_is_the_last_regex_match_of_the_whole_text(samples, literal, pattern):
    # outside source: Python's re.findall over the whole text
    from qcthermo.readers.text import last_line_match, lines_with

    regex = re.compile(pattern, re.MULTILINE)
    checked = 0
    for path in all_real_logs(samples):
        text = path.read_text()
        everywhere = regex.findall(text)
        found = last_line_match(text, literal, regex)
        assert (found.group(1) if found else None) == (everywhere[-1] if everywhere else None), path
        assert regex.findall(lines_with(text, literal)) == everywhere, path
        checked += bool(everywhere)
    if not checked:
        from conftest import THIRD_PARTY

        if not THIRD_PARTY.is_dir():
            pytest.skip(f"no log here prints {literal!r}: only the third-party logs (absent) do")
    assert checked > 0


@pytest.mark.parametrize(("printed", "published"), [
    # basis-set names as their authors spell them (common practice): Pople, Dunning, Karlsruhe
    ("sto-3g", "STO-3G"), ("6-31g*", "6-31G*"), ("6-311++g(2DF,2P)", "6-311++G(2df,2p)"),
    ("cc-pvtz", "cc-pVTZ"), ("AUG-CC-PVDZ", "aug-cc-pVDZ"), ("cc-pwcvqz", "cc-pwCVQZ"),
    ("DEF2-TZVP", "def2-TZVP"), ("LANL2DZ", "LANL2DZ"),
])
def test_basis_names_spelled_as_published(printed, published):
    from qcthermo.readers.normalise import basis_name

    assert basis_name(printed) == published


def test_same_level_of_theory_compares_equal_across_programs(third_party):
    # third-party README: the dvb jobs of Gaussian 16 and NWChem 7.0 are both B3LYP/STO-3G
    # (the NWChem input spells the basis "sto-3g")
    gaussian = qcthermo.read_log(third_party / "gaussian16" / "dvb_ir.out")
    nwchem = qcthermo.read_log(third_party / "nwchem7.0" / "dvb_ir.out")
    assert gaussian.level_of_theory == nwchem.level_of_theory == "B3LYP/STO-3G"

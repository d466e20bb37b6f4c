"""The ``qcthermo thermo`` table: G broken down by motion, the long and JSON forms, the terminal table.

Real logs: sample_outputs/ (our NWChem 7.0.2 outputs, sample_outputs/README.md) and the third-party logs.
Outside references: the Sackur-Tetrode equation with CODATA constants (scipy.constants), JANAF's S of H(g),
ASE's ase.thermochemistry (IdealGasThermo, HarmonicThermo, QuasiHarmonicThermo) with a CODATA 2022 unit
set as in test_thermo_ase.py.
"""

from __future__ import annotations

import json
import re
import shutil

import ase.thermochemistry
import numpy as np
import pandas as pd
import pytest
from ase import Atoms
from ase.thermochemistry import HarmonicThermo, IdealGasThermo, QuasiHarmonicThermo
from ase.units import create_units
from scipy import constants

from qcthermo import Conditions, Molecule, free_energy_parts, read_log, thermochemistry
from qcthermo.cli import main
from qcthermo.units import HARTREE_EV, HARTREE_J, N_A

units = create_units("2022")
MODELS = ("rrho", "qrrho", "qrrho-enthalpy", "quasi-harmonic")
GAS = ("water.out", "o2.out", "h_atom.out", "hcn.out", "ts_abstraction.out")


@pytest.fixture
def ase_codata_2022(monkeypatch):
    monkeypatch.setattr(ase.thermochemistry, "units", units)


def result(samples, name: str, **conditions):
    calc = read_log(samples / name)
    mol = Molecule.from_calculation(calc, transition_state=name.startswith("gas/ts_"))
    return mol, thermochemistry(mol, Conditions(**conditions))


def j_mol_k(value):
    return value * HARTREE_J * N_A


@pytest.mark.parametrize("model", MODELS)
@pytest.mark.parametrize("name", GAS)
def test_parts_add_up_to_the_engine_g(samples, name, model):
    # reference: G = -kT ln(q/N) with q = q_t q_rot q_vib q_elec (McQuarrie, Statistical Mechanics, chapter 8)
    # factorises into a sum; the parts must add up to qcthermo.thermochemistry's G to 1e-12 Eh
    _, res = result(samples, f"gas/{name}", temperature=np.array([100.0, 298.15, 1000.0]), low_mode_model=model)
    parts = free_energy_parts(res)
    assert list(parts) == ["E_elec", "G_trans", "G_rot", "G_vib", "G_elec", "G_low_mode"]
    assert np.max(np.abs(sum(parts.values()) - res.gibbs)) < 1e-12
    # the low-mode column is exactly what the model changes
    assert np.array_equal(parts["G_low_mode"], res.gibbs - res.rrho["gibbs"])


def test_translational_part_is_sackur_tetrode_for_the_hydrogen_atom(samples):
    # reference: Sackur-Tetrode, S_t = R [ln((2 pi m k T / h^2)^{3/2} k T / p) + 5/2] (McQuarrie eq. 5-20),
    # CODATA constants from scipy.constants, m(1H) = 1.00782503223 u (NIST atomic masses, from memory);
    # G_t = U_t + pV - T S_t = 5/2 kT - T S_t
    t, p = 298.15, 1e5
    m = 1.00782503223 * constants.atomic_mass
    s_by_hand = constants.R * (np.log((2 * np.pi * m * constants.k * t / constants.h**2) ** 1.5
                                      * constants.k * t / p) + 2.5)  # fmt: skip
    _, res = result(samples, "gas/h_atom.out", temperature=t, standard_state="1bar")
    assert j_mol_k(res.components["translational"]["S"]) == pytest.approx(s_by_hand, rel=1e-9)
    g_by_hand = (2.5 * constants.R * t - t * s_by_hand) / (HARTREE_J * N_A)
    assert free_energy_parts(res)["G_trans"][0] == pytest.approx(g_by_hand, rel=1e-9)
    # JANAF: S(H, g, 298.15 K, 1 bar) = 114.717 J/(mol K) (from memory), translation + R ln 2 (doublet)
    s_total = res.components["translational"]["S"] + res.components["electronic"]["S"]
    assert j_mol_k(s_total) == pytest.approx(114.717, abs=0.01)
    assert free_energy_parts(res)["G_rot"][0] == 0.0  # an atom has no rotation


def test_electronic_part_of_triplet_oxygen(samples):
    # sample_outputs/README.md: O2 is the triplet (3Sigma_g-), g0 = 3: G_elec = -kT ln 3 (McQuarrie, chapter 8),
    # kT with scipy.constants (CODATA)
    _, res = result(samples, "gas/o2.out", temperature=298.15)
    kt = constants.k * 298.15 / HARTREE_J
    assert free_energy_parts(res)["G_elec"][0] == pytest.approx(-kt * np.log(3.0), rel=1e-12)


@pytest.mark.parametrize(("name", "geometry", "sigma"), [("water.out", "nonlinear", 2), ("hcn.out", "linear", 1)])
@pytest.mark.parametrize("model", ["rrho", "qrrho"])
def test_rotational_and_vibrational_parts_match_ase(samples, ase_codata_2022, name, geometry, sigma, model):
    # reference: ase.thermochemistry.IdealGasThermo (rotational U and S) and HarmonicThermo (vibrational
    # U - TS from the bottom of the well) for the same real NWChem log; sigma(H2O) 2, sigma(HCN) 1 (common
    # practice). The vib part is harmonic under every model (docs/thermo.md), so it matches under qrrho too.
    mol, res = result(samples, f"gas/{name}", temperature=np.array([150.0, 298.15, 800.0]), low_mode_model=model)
    assert res.symmetry_number == sigma
    atoms = Atoms(symbols=list(mol.symbols), positions=mol.coordinates, masses=mol.masses)
    vib_ev = np.asarray(mol.frequencies) * units.invcm
    gas = IdealGasThermo(vib_energies=vib_ev, geometry=geometry, atoms=atoms, symmetrynumber=sigma, spin=0)
    harmonic = HarmonicThermo(vib_ev)
    parts = free_energy_parts(res)
    for i, t in enumerate(res.temperature):
        s_rot = gas.get_ideal_entropy(t, rotation=True, geometry=geometry, symmetrynumber=sigma)[0]
        g_rot = gas.get_ideal_rotational_energy(geometry, t) - t * s_rot
        assert parts["G_rot"][i] * HARTREE_EV == pytest.approx(g_rot, rel=1e-6)
        assert parts["G_vib"][i] * HARTREE_EV == pytest.approx(harmonic.get_helmholtz_energy(t, verbose=False),
                                                               rel=1e-6)


def test_low_mode_part_matches_ase_quasi_harmonic(samples, ase_codata_2022):
    # reference: ase.thermochemistry.QuasiHarmonicThermo minus HarmonicThermo (Ribeiro et al. 2011: modes
    # below the threshold raised to it) for the real n-pentane log, whose lowest modes are 100-235 cm^-1
    mol, res = result(samples, "conformers/pentane_tt.out", temperature=298.15, low_mode_model="quasi-harmonic",
                      low_mode_threshold=250.0)
    vib_ev = np.asarray(mol.frequencies) * units.invcm
    qh = QuasiHarmonicThermo(vib_ev, raise_to=250.0 * units.invcm).get_helmholtz_energy(298.15, verbose=False)
    ho = HarmonicThermo(vib_ev).get_helmholtz_energy(298.15, verbose=False)
    assert free_energy_parts(res)["G_low_mode"][0] * HARTREE_EV == pytest.approx(qh - ho, rel=1e-6)


def run(directory, tmp_path, *options) -> int:
    return main(["thermo", str(directory), "--jobs", "1", "--quiet", *options])


def test_low_mode_column_is_zero_under_rrho_only(samples, tmp_path, cache_dir):
    # pentane's lowest mode is 100.28 cm^-1 (the log): Grimme's weight 1/(1 + (100/100.28)^4) is about 1/2,
    # so qRRHO moves G; under rrho the column is exactly zero
    tables = {}
    for model in ("rrho", "qrrho"):
        csv = tmp_path / f"{model}.csv"
        assert run(samples / "conformers", tmp_path, "--low-mode-model", model, "--csv", str(csv)) == 0
        tables[model] = pd.read_csv(csv)
    assert (tables["rrho"]["G_low_mode_Eh"] == 0.0).all()
    assert (tables["qrrho"]["G_low_mode_Eh"].abs() > 1e-6).all()
    # the other parts do not depend on the model
    for column in ("E_elec_Eh", "G_trans_Eh", "G_rot_Eh", "G_vib_Eh", "G_elec_Eh"):
        assert np.allclose(tables["rrho"][column], tables["qrrho"][column], rtol=0, atol=1e-13)


def test_command_end_to_end_on_the_samples(samples, tmp_path, cache_dir):
    # sample_outputs/README.md: gas/ holds 14 logs (ten opt + freq, four atoms' energies); the engine's G
    # is the reference for the total, the parts must add up to it as read back from the CSV
    csv, long, doc = tmp_path / "wide.csv", tmp_path / "long.csv", tmp_path / "thermo.json"
    options = ["--temperature-range", "250:350:50", "--low-mode-model", "qrrho-enthalpy"]
    assert run(samples / "gas", tmp_path, *options, "--csv", str(csv), "--long", str(long), "--json", str(doc)) == 0
    wide = pd.read_csv(csv)
    assert len(wide) == 42 and set(wide["status"]) == {"ok"}
    parts = wide[["E_elec_Eh", "G_trans_Eh", "G_rot_Eh", "G_vib_Eh", "G_elec_Eh", "G_low_mode_Eh"]].sum(axis=1)
    assert np.max(np.abs(parts - wide["G_total_Eh"])) < 1e-12
    water = wide[wide["file"] == "water.out"]
    _, res = result(samples, "gas/water.out", temperature=np.array([250.0, 300.0, 350.0]),
                    low_mode_model="qrrho-enthalpy")
    assert np.allclose(water["G_total_Eh"], res.gibbs, rtol=0, atol=1e-12)
    # the linear groups keep the engine's ASCII in files
    assert set(wide.loc[wide["file"] == "o2.out", "point_group"]) == {"D*h"}
    # HNC against HCN, same formula and level: the difference of their G
    at = wide[wide["T_K"] == 300.0].set_index("file")
    kcal_per_eh = HARTREE_J * N_A / 4184.0  # CODATA hartree, thermochemical calorie 4.184 J
    gap = (at.loc["hnc.out", "G_total_Eh"] - at.loc["hcn.out", "G_total_Eh"]) * kcal_per_eh
    assert at.loc["hnc.out", "dG_total_kcal_mol"] == pytest.approx(gap, rel=1e-6)
    assert at.loc["hcn.out", "dG_total_kcal_mol"] == 0.0

    # long form: the RRHO values the wide table no longer shows
    rows = pd.read_csv(long)
    one = rows[(rows["file"] == "water.out") & (rows["T_K"] == 300.0)].set_index(["model", "quantity"])["value"]
    assert one[("rrho", "G")] == pytest.approx(res.rrho["gibbs"][1], abs=1e-12)
    assert one[("qrrho-enthalpy", "G")] - one[("rrho", "G")] == pytest.approx(water["G_low_mode_Eh"].iloc[1],
                                                                               abs=1e-12)
    assert one[("rrho", "H")] - one[("rrho", "G")] == pytest.approx(300.0 * one[("rrho", "S")], rel=1e-12)
    assert set(rows["unit"]) == {"Eh", "Eh/K"}

    # JSON: strict (no NaN or Infinity token), the full record per file
    def refuse(token):
        raise ValueError(f"non-standard JSON token {token}")

    record = {f["file"]: f for f in json.loads(doc.read_text(), parse_constant=refuse)["files"]}
    assert len(record) == 14
    water_json = record["water.out"]
    assert water_json["rrho"]["gibbs_Eh"] == pytest.approx(list(res.rrho["gibbs"]), abs=1e-12)
    assert water_json["model"]["gibbs_Eh"] == pytest.approx(list(res.gibbs), abs=1e-12)
    assert water_json["components"]["vibrational"]["S_Eh_K"] == pytest.approx(
        list(res.components["vibrational"]["S"]), rel=1e-12)
    assert record["h_atom.out"]["imaginary_cm1"] is None and record["ts_hcn.out"]["imaginary_cm1"] < 0

    # nothing the user had is overwritten without --force
    before = {p: p.read_bytes() for p in (csv, long, doc)}
    assert run(samples / "gas", tmp_path, "--json", str(doc)) == 2
    assert doc.read_bytes() == before[doc]
    assert run(samples / "gas", tmp_path, "--json", str(doc), "--force") == 0
    assert doc.read_bytes() != before[doc]  # one temperature now, not three


def test_terminal_table_prints_names_verbatim_and_infinity(samples, tmp_path, cache_dir, capsys, monkeypatch):
    # rich reads "[/red]" and "[bold]" as markup; the file names must come out as they are on disk.
    # O2 is D*h in the engine (sample_outputs/README.md: triplet O2), printed D∞h (200 columns: every column)
    monkeypatch.setenv("COLUMNS", "200")
    logs = tmp_path / "logs"
    (logs / "a[").mkdir(parents=True)
    shutil.copy(samples / "gas" / "water.out", logs / "a[" / "red].out")
    shutil.copy(samples / "gas" / "o2.out", logs / "[bold]o2.out")
    assert main(["thermo", str(logs), "--jobs", "1"]) == 0
    out = capsys.readouterr().out
    assert "a[/red].out" in out and "[bold]o2.out" in out
    assert "D∞h" in out and "D*h" not in out


def test_terminal_table_shows_an_unreadable_log_as_an_error_row(samples, tmp_path, cache_dir, capsys, monkeypatch):
    # an error row has no point group (NaN in the frame); the terminal (no --quiet) names it under the table.
    # The damage: the water log emptied of its energies, which the reader refuses ("no energy")
    monkeypatch.setenv("COLUMNS", "200")
    logs = tmp_path / "logs"
    logs.mkdir()
    text = (samples / "gas" / "water.out").read_text()
    (logs / "water.out").write_text(text)
    (logs / "broken.out").write_text(re.sub(r"Total DFT energy =.*", "", text))
    assert main(["thermo", str(logs), "--jobs", "1"]) == 1
    out = capsys.readouterr().out
    assert "broken.out" in out and "no energy" in out
    assert "C2v" in out  # water's point group (sample_outputs/README.md), on the row of the good log


def test_thermo_command_table(third_party, tmp_path, capsys, cache_dir):
    # real logs (third-party-logs README): dvb is C2h with sigma 2; the GAMESS NH3 run is a
    # transition-state frequency job with exactly one imaginary mode
    logs = tmp_path / "logs"
    logs.mkdir()
    shutil.copy(third_party / "gaussian16" / "dvb_ir.out", logs / "dvb_ir.out")
    shutil.copy(third_party / "gamess-us2018" / "nh3_ts_ir.out", logs / "nh3_ts_ir.out")
    (logs / "broken.out").write_text("not a quantum-chemistry log\n")
    csv = tmp_path / "thermo.csv"
    args = ["thermo", str(logs), "--csv", str(csv), "--no-cache", "--jobs", "1", "--quiet",
            "--temperature-range", "250:350:50", "--low-mode-model", "qrrho-enthalpy"]
    assert main(args) == 1  # results written, one input unreadable
    table = pd.read_csv(csv)
    dvb = table[table["file"] == "dvb_ir.out"]
    assert list(dvb["T_K"]) == [250.0, 300.0, 350.0]
    assert set(dvb["symmetry_number"]) == {2} and set(dvb["point_group"]) == {"C2h"}
    for column in ("E_elec_Eh", "G_trans_Eh", "G_rot_Eh", "G_vib_Eh", "G_elec_Eh", "G_low_mode_Eh", "G_total_Eh",
                   "dG_total_kcal_mol"):
        assert dvb[column].notna().all()
    # the log prints "SCF Done:  E(RB3LYP) =  -382.308266602"
    assert list(dvb["E_elec_Eh"]) == pytest.approx([-382.308266602] * 3, abs=1e-9)
    ts = table[table["file"] == "nh3_ts_ir.out"]
    assert set(ts["imaginary_cm1"]) == {-825.18} and set(ts["status"]) == {"warning"}
    broken = table[table["file"] == "broken.out"]
    assert len(broken) == 1 and broken["status"].iloc[0] == "error" and "\n" not in broken["reason"].iloc[0]
    # an existing CSV is not overwritten without --force
    before = csv.read_text()
    assert main(args) == 2
    assert csv.read_text() == before
    assert "--force" in capsys.readouterr().err


def test_thermo_relative_free_energies_stay_within_one_program(tmp_path, third_party, cache_dir):
    # The same dvb structure at "B3LYP/STO-3G" from Gaussian 16 and ORCA 5 (third-party-logs README:
    # E = -382.308 and -382.055 Eh, the programs' B3LYP definitions differ): not an isomer gap of ~159 kcal/mol.
    logs = tmp_path / "logs"
    logs.mkdir()
    shutil.copy(third_party / "gaussian16" / "dvb_ir.out", logs / "dvb_gaussian.out")
    shutil.copy(third_party / "orca5.0" / "dvb_ir.out", logs / "dvb_orca.out")
    csv = tmp_path / "thermo.csv"
    assert main(["thermo", str(logs), "--csv", str(csv), "--no-cache", "--jobs", "1", "--quiet"]) == 0
    table = pd.read_csv(csv)
    assert set(table["program"]) == {"gaussian", "orca"}
    assert list(table["dG_total_kcal_mol"]) == [0.0, 0.0]


def test_thermo_summary_counts_the_logs_it_left_out(samples, capsys, tmp_path, cache_dir):
    # sample_outputs/README.md table: gas/ holds ten "opt + freq" jobs and four atoms' "energy" jobs;
    # an atom needs no frequencies, so all 14 get a row; sp/ holds MP2 single points of molecules and atoms
    table = tmp_path / "gas.csv"
    assert main(["thermo", str(samples / "gas"), "--no-cache", "--jobs", "1", "--quiet", "--csv", str(table)]) == 0
    summary = capsys.readouterr().out.strip().splitlines()[-1]
    assert summary.startswith("14 files: 0 refused or unreadable; model")
    assert "h_atom.out" in table.read_text()
    assert main(["thermo", str(samples / "sp"), "--no-cache", "--jobs", "1", "--quiet"]) == 0
    summary = capsys.readouterr().out.strip().splitlines()[-1]
    assert summary.startswith("4 files: 0 refused or unreadable; 6 without frequencies left out")


# -- the terminal: a table a person reads -----------------------------------------------------------------


def _row(out: str, name: str) -> list[str]:
    return next(line.split() for line in out.splitlines() if line.startswith(f"{name} "))


def test_terminal_table_names_its_reference_and_units_and_the_temperature_once(samples, tmp_path, cache_dir,
                                                                              capsys, monkeypatch):
    # the numbers on the terminal are the CSV's: the lowest pentane conformer (pentane_tt.out, sample_outputs/
    # README.md) at 0.00, the others at their G minus its G, in kcal/mol (CODATA hartree, 4.184 J per calorie)
    monkeypatch.setenv("LINES", "60")
    monkeypatch.setenv("COLUMNS", "200")
    csv = tmp_path / "conformers.csv"
    assert main(["thermo", str(samples / "conformers"), "--jobs", "1", "--csv", str(csv)]) == 0
    out = capsys.readouterr().out
    lines = out.splitlines()
    assert lines[0].startswith("G by motion at 298.15 K (qrrho, 1atm)")
    units, heading = lines[1].split(), lines[2].split()
    assert units == ["E_elec", "trans", "rot", "vib", "elec", "low-mode", "G", "G", "−", "G_min"]
    assert heading == ["file", "formula", "group", "σ", "Eh", *["kcal/mol"] * 5, "Eh", "kcal/mol"]
    assert "G_min: the lowest G of the same formula, program, level of theory and solvent model" in out
    assert "298.15" not in "".join(lines[1:])  # the temperature is in the title, not on every row
    table = pd.read_csv(csv).set_index("file")
    kcal_per_eh = HARTREE_J * N_A / 4184.0
    lowest = table["G_total_Eh"].min()
    assert table["G_total_Eh"].idxmin() == "pentane_tt.out" and _row(out, "pentane_tt.out")[-1] == "0.00"
    for name, g in table["G_total_Eh"].items():
        row = _row(out, name)
        assert float(row[-2]) == pytest.approx(g, abs=5e-7)
        assert float(row[-1]) == pytest.approx((g - lowest) * kcal_per_eh, abs=0.005)
    assert len(row) == 12  # every row "ok": no status column


def test_terminal_range_prints_a_table_per_temperature_and_a_refused_file_once(samples, tmp_path, cache_dir,
                                                                             capsys, monkeypatch):
    monkeypatch.setenv("LINES", "60")
    monkeypatch.setenv("COLUMNS", "200")
    logs = tmp_path / "logs"
    logs.mkdir()
    for name in ("pentane_tt.out", "pentane_gpgm.out"):
        shutil.copy(samples / "conformers" / name, logs / name)
    (logs / "broken.out").write_text("not a quantum-chemistry log\n")
    assert main(["thermo", str(logs), "--jobs", "1", "--temperature-range", "250:350:50"]) == 1
    out = capsys.readouterr().out
    titles = [line.split(" (")[0] for line in out.splitlines() if line.startswith("G by motion at")]
    assert titles == ["G by motion at 250 K", "G by motion at 300 K", "G by motion at 350 K"]
    assert out.count("pentane_tt.out ") == 3 and "T/K" not in out and "excluded" not in out
    assert out.count("broken.out") == 1
    assert "  error: broken.out: not a quantum-chemistry log" in out
    # the lowest conformer is 0.00 in each table (sample_outputs/README.md: tt is the lowest pentane conformer)
    assert [line.split()[-1] for line in out.splitlines() if line.startswith("pentane_tt.out")] == ["0.00"] * 3


def test_more_than_a_screenful_prints_an_overview(samples, tmp_path, cache_dir, capsys, monkeypatch):
    # sample_outputs/README.md: gas/ holds 14 logs that all get a row, three of formula CHN (HCN, HNC and the TS)
    logs = tmp_path / "logs"
    shutil.copytree(samples / "gas", logs)
    (logs / "broken.out").write_text("not a quantum-chemistry log\n")
    monkeypatch.setenv("LINES", "15")
    csv = tmp_path / "all.csv"
    assert main(["thermo", str(logs), "--jobs", "1", "--csv", str(csv)]) == 1
    out = capsys.readouterr().out.splitlines()
    assert out[0] == f"15 files, more than a screenful: the full table is in {csv}"
    assert out[1] == "status: ok (14), error (1)"
    assert out[2].startswith("formulas: CHN (3), ")
    assert out[3] == "levels of theory: nwchem B3LYP/6-31G* (14), unreadable (1)"
    assert out[4].startswith("  error: broken.out: not a quantum-chemistry log")
    assert out[-1].startswith("15 files: 1 refused or unreadable")
    assert not any(line.startswith("hnc.out") for line in out)
    assert len(csv.read_text().splitlines()) == 1 + 15  # every row is in the file
    monkeypatch.setenv("LINES", "40")  # a taller screen: the table
    assert main(["thermo", str(logs), "--jobs", "1"]) == 1
    assert _row(capsys.readouterr().out, "hnc.out")[:2] == ["hnc.out", "CHN"]


def test_a_narrow_terminal_leaves_columns_out_and_says_which(samples, cache_dir, capsys, monkeypatch):
    # 70 columns: the file, the formula, the vibrational and low-mode parts, G and G − G_min stay (NARROW_DROPS);
    # the values do not change with the width (pentane_tt.out is the lowest conformer, sample_outputs/README.md)
    monkeypatch.setenv("LINES", "60")
    wide = {}
    for columns in ("200", "70"):
        monkeypatch.setenv("COLUMNS", columns)
        assert main(["thermo", str(samples / "conformers"), "--jobs", "1"]) == 0
        wide[columns] = capsys.readouterr().out
    lines = wide["70"].splitlines()
    assert max(len(line.rstrip()) for line in lines[:11]) <= 70  # the title, two heading lines, 8 conformers
    assert lines[1].split() == ["vib", "low-mode", "G", "G", "−", "G_min"]
    assert "left out, the terminal being too narrow: group, σ, E_elec, trans, rot, elec" in wide["70"]
    narrow, full = _row(wide["70"], "pentane_gpgm.out"), _row(wide["200"], "pentane_gpgm.out")
    assert len(full) == 12 and narrow == [*full[:2], full[7], *full[9:]]  # file, formula, vib, low-mode, G, G − G_min
    assert "left out" not in wide["200"]

"""qcthermo.run on real NWChem/xTB outputs of the sample scenario: species, ensembles, reactions, exports."""

import hashlib
import json
import re
import shutil
import subprocess

import numpy as np
import pytest
from log_text import last_printed

import qcthermo
from qcthermo.errors import QcthermoError
from qcthermo.units import ENERGY_UNITS, K_B_EH, hartree_to

KCAL = ENERGY_UNITS["kcal/mol"]

#: a reaction file over the sample logs (paths filled in per test); only balanced chemistry
REACTIONS = """\
[conditions]
standard_state = "{state}"
low_mode_model = "qrrho"

[species.ch4]
logs = "{s}/gas/ch4.out"
[species.h]
logs = "{s}/gas/h_atom.out"
[species.ch3]
logs = "{s}/gas/ch3.out"
[species.h2]
logs = "{s}/gas/h2.out"
[species.ts_abs]
logs = "{s}/gas/ts_abstraction.out"
[species.hcn]
logs = "{s}/gas/hcn.out"
[species.hcn_as_ts]
logs = "{s}/gas/hcn.out"
transition_state = true
[species.hnc]
logs = "{s}/gas/hnc.out"
[species.water_solvent]
logs = "{s}/gas/water.out"
concentration = "55.3M"
[species.water]
logs = "{s}/gas/water.out"
[species.water_cosmo]
logs = "{s}/solvent/water.out"
[species.pentane]
logs = "{s}/conformers/pentane_*.out"

[[reaction]]
name = "abstraction"
reactants = ["ch4", "h"]
transition_state = "ts_abs"
products = ["ch3", "h2"]

[[reaction]]
name = "recombination"
reactants = ["ch3", "h"]
products = ["ch4"]

[[reaction]]
name = "bad_ts"
reactants = ["hcn"]
transition_state = "hcn_as_ts"
products = ["hnc"]

[[reaction]]
name = "solvation"
reactants = ["water"]
products = ["water_cosmo"]

[[profile]]
name = "abstraction"
states = [["ch4", "h"], ["ts_abs"], ["ch3", "h2"]]
"""


def _run(tmp_path, samples, state="1M", **kwargs):
    path = tmp_path / f"reactions_{state}.toml"
    path.write_text(REACTIONS.format(s=samples.as_posix(), state=state))
    kwargs.setdefault("conditions", None)
    return qcthermo.run(samples, reactions=path, jobs=1, cache=False, **kwargs)


@pytest.fixture(scope="module")
def results(tmp_path_factory):
    from conftest import SAMPLES

    return _run(tmp_path_factory.mktemp("run"), SAMPLES)


def _species(results, name, column):
    df = results.species
    return float(df.loc[df["species"] == name, column].iloc[0])


def _reaction(results, name, column):
    df = results.reactions
    return float(df.loc[df["reaction"] == name, column].iloc[0])


def test_reaction_recomputed_by_hand_from_species_values(results):
    # Definition of a reaction free energy: dG = sum G(products) - sum G(reactants), in kcal/mol (CODATA Eh).
    g = {n: _species(results, n, "G_qrrho_Eh") for n in ("ch4", "h", "ch3", "h2", "ts_abs")}
    assert _reaction(results, "abstraction", "dG_qrrho_kcal_mol") == pytest.approx(
        (g["ch3"] + g["h2"] - g["ch4"] - g["h"]) * KCAL, abs=1e-9)
    assert _reaction(results, "abstraction", "dG_qrrho_act_kcal_mol") == pytest.approx(
        (g["ts_abs"] - g["ch4"] - g["h"]) * KCAL, abs=1e-9)
    assert _reaction(results, "abstraction", "dG_qrrho_act_rev_kcal_mol") == pytest.approx(
        (g["ts_abs"] - g["ch3"] - g["h2"]) * KCAL, abs=1e-9)
    e = {n: _species(results, n, "E_elec_Eh") for n in ("ch4", "h", "ch3", "h2")}
    assert _reaction(results, "abstraction", "dE_kcal_mol") == pytest.approx(
        (e["ch3"] + e["h2"] - e["ch4"] - e["h"]) * KCAL, abs=1e-9)
    h = {n: _species(results, n, "H_Eh") for n in ("ch4", "h", "ch3")}
    assert _reaction(results, "recombination", "dH_kcal_mol") == pytest.approx((h["ch4"] - h["ch3"] - h["h"]) * KCAL)
    assert np.isnan(_reaction(results, "recombination", "dG_act_kcal_mol"))  # no transition state: empty


def test_standard_state_shift_of_a_reaction(tmp_path, samples):
    # 1 atm -> 1 M: (n_products - n_reactants) x RT ln(24.465) = 1.894 kcal/mol per species at 298.15 K
    # (common practice).
    atm = _run(tmp_path, samples, state="1atm")
    molar = _run(tmp_path, samples, state="1M")
    shift = _reaction(molar, "recombination", "dG_qrrho_kcal_mol") - _reaction(atm, "recombination",
                                                                                 "dG_qrrho_kcal_mol")
    assert shift == pytest.approx(-1 * 1.894, abs=1e-3)
    shift_act = _reaction(molar, "abstraction", "dG_act_kcal_mol") - _reaction(atm, "abstraction", "dG_act_kcal_mol")
    assert shift_act == pytest.approx(-1 * 1.894, abs=1e-3)
    assert _reaction(molar, "abstraction", "dG_kcal_mol") == pytest.approx(
        _reaction(atm, "abstraction", "dG_kcal_mol"), abs=1e-9)  # 2 -> 2: no shift


def test_own_concentration_shifts_g_by_rt_ln_c(results):
    # G(c) = G(1M) + RT ln(c / 1M) for the translational entropy of an ideal dilute solute (textbook).
    dg = _species(results, "water_solvent", "G_qrrho_Eh") - _species(results, "water", "G_qrrho_Eh")
    assert dg == pytest.approx(K_B_EH * 298.15 * np.log(55.3), rel=1e-9)


def test_ensemble_merges_duplicates_and_keeps_mirror_images(results):
    # The sample's inputs say (comment lines of inputs/conformers/*.xyz): pentane_tt_b is the tt basin again,
    # pentane_tgp_b the tgp basin again; tgm is the mirror image of tgp, gmgm of gpgp.
    pentane = results.species_results["pentane"]
    stem = lambda p: p.rsplit("/", 1)[-1].removesuffix(".out")  # noqa: E731
    dups = {frozenset((stem(c.path), stem(c.duplicate_of))) for c in pentane.conformers if c.status == "duplicate"}
    assert dups == {frozenset(("pentane_tt", "pentane_tt_b")), frozenset(("pentane_tgp", "pentane_tgp_b"))}
    mirrors = {frozenset((stem(c.path), stem(c.mirror_of))) for c in pentane.conformers if c.mirror_of}
    assert frozenset(("pentane_gpgp", "pentane_gmgm")) in mirrors
    assert len(pentane.used) == 6


def test_ensemble_free_energy_is_the_boltzmann_sum(results):
    # G = -RT ln sum_i exp(-G_i/RT) over the distinct conformers (the canonical ensemble), recomputed here.
    pentane = results.species_results["pentane"]
    g_i = np.array([c.values["G"][0] for c in pentane.used])
    kt = K_B_EH * 298.15
    expected = g_i.min() - kt * np.log(np.sum(np.exp(-(g_i - g_i.min()) / kt)))
    assert _species(results, "pentane", "G_qrrho_Eh") == pytest.approx(expected, abs=1e-10)
    pops = np.array([float(np.atleast_1d(c.population)[0]) for c in pentane.used])
    assert pops.sum() == pytest.approx(1.0)
    # the most stable conformer dominates but does not give the whole G: the ensemble lies below it
    assert _species(results, "pentane", "G_qrrho_Eh") < g_i.min()


def test_audit_excludes_bad_reactions_with_reason(results):
    # A minimum used as transition state has no imaginary mode (3N-6 real modes, common practice); gas phase
    # against COSMO energies is a mixed solvent model. Both are errors that exclude the reaction.
    status = dict(zip(results.reactions["reaction"], results.reactions["status"], strict=True))
    assert status == {"abstraction": "ok", "recombination": "ok", "bad_ts": "excluded", "solvation": "excluded"}
    notes = dict(zip(results.reactions["reaction"], results.reactions["notes"], strict=True))
    assert "exactly one imaginary mode" in notes["bad_ts"]
    assert "solvent" in notes["solvation"]
    assert results.exit_status == 1
    assert results.findings[0].severity == "error"


def test_profile_states_relative_to_first(results):
    (profile,) = results.profiles
    values = [float(np.atleast_1d(s["value_Eh"]["G"])[0]) for s in profile["states"]]
    assert values[0] == 0.0
    assert values[1] * KCAL == pytest.approx(_reaction(results, "abstraction", "dG_qrrho_act_kcal_mol"))
    assert values[2] * KCAL == pytest.approx(_reaction(results, "abstraction", "dG_qrrho_kcal_mol"))
    assert [s["is_ts"] for s in profile["states"]] == [False, True, False]


def test_write_exports_and_run_json(results, tmp_path):
    out = tmp_path / "out"
    written = {p.name for p in results.write(out)}
    for name in ("survey.csv", "species.csv", "reactions.csv", "coordinates.xyz", "run.json"):
        assert name in written and (out / name).is_file()
    doc = json.loads((out / "run.json").read_text())
    assert doc["version"] == qcthermo.__version__
    assert doc["settings"]["conditions"]["standard_state"] == "1M"
    assert {f["severity"] for f in doc["findings"]} == {"error", "warning"}
    ch4 = next(i for i in doc["inputs"] if i["path"].endswith("gas/ch4.out"))
    with open(ch4["path"], "rb") as handle:
        assert ch4["sha256"] == hashlib.sha256(handle.read()).hexdigest()
    # coordinates.xyz reads back with ASE: one frame per used structure
    from ase.io import read

    frames = read(out / "coordinates.xyz", index=":", format="xyz")
    assert len(frames) == sum(len(s.used) for s in results.species_results.values())


def test_coordinates_are_extended_xyz_that_ase_reads_back(results, samples, tmp_path):
    from ase.io import read

    results.write(tmp_path / "out")
    frames = {f.info["name"]: f for f in read(tmp_path / "out" / "coordinates.xyz", index=":", format="extxyz")}
    ch4 = frames["ch4"]
    calc = results.species_results["ch4"].used[0].calculation
    assert ch4.get_chemical_formula() == "CH4"
    assert np.allclose(ch4.positions, calc.coordinates, atol=1e-8)
    # the energy as NWChem prints it last in gas/ch4.out ("Total DFT energy"), a number, not text
    assert ch4.info["E_Eh"] == pytest.approx(last_printed(samples / "gas/ch4.out",
                                                          r"Total DFT energy =\s+(-?\d+\.\d+)"), abs=1e-9)
    row = results.species[results.species["species"] == "ch4"].iloc[0]
    assert ch4.info["G_qrrho_Eh"] == pytest.approx(row["G_qrrho_Eh"], abs=1e-12)
    assert ch4.info["level"] == "B3LYP/6-31G*"
    assert (ch4.info["charge"], ch4.info["multiplicity"], ch4.info["T_K"]) == (0, 1, 298.15)
    assert ch4.info["source"] == "ch4.out"


def test_write_does_not_clobber_without_force(results, tmp_path):
    out = tmp_path / "mine"
    out.mkdir()
    (out / "notes.txt").write_text("the user's own file\n")
    with pytest.raises(QcthermoError, match="--force"):
        results.write(out)
    assert (out / "notes.txt").read_text() == "the user's own file\n"
    results.write(out, force=True)
    results.write(out)  # a previous run's directory (it has run.json) may be rewritten
    assert (out / "notes.txt").exists()


def test_temperature_range_gives_long_tables(tmp_path, samples):
    cond = qcthermo.Conditions(temperature=np.array([250.0, 300.0, 350.0, 400.0]), standard_state="1M",
                               low_mode_model="qrrho")
    res = _run(tmp_path, samples, conditions=cond)
    assert sorted(set(res.reactions["T_K"])) == [250.0, 300.0, 350.0, 400.0]
    assert len(res.species) == 4 * len(res.species_results)
    assert res.rates is not None and set(res.rates["reaction"]) == {"abstraction"}
    assert set(res.arrhenius["direction"]) == {"forward", "reverse"}
    written = {p.name for p in res.write(tmp_path / "range")}
    assert {"rates.csv", "arrhenius.csv"} <= written


def test_without_reaction_file_one_species_per_frequency_log(samples):
    res = qcthermo.run(samples / "gas", jobs=1, cache=False)
    assert len(res.reactions) == 0
    assert set(res.species["species"]) == {"c_atom", "ch3", "ch4", "ethane", "h2", "h_atom", "hcn", "hnc", "n_atom",
                                           "o2", "o_atom", "ts_abstraction", "ts_hcn", "water"}
    assert res.species_results["ts_hcn"].options.transition_state  # a saddle-search job


def test_composite_energy_high_on_low(third_party):
    # G = E(high) + [G - E](low), the composite "high//low" scheme (docs/reactions.md, "Composite energies").
    # The Gaussian 16 dvb single point was run on the frequency job's geometry (both print the same final
    # energy, README).
    from qcthermo.species import build_species

    freq = qcthermo.read_log(third_party / "gaussian16" / "dvb_ir.out")
    sp = qcthermo.read_log(third_party / "gaussian16" / "dvb_sp.out")
    sp.energy = freq.energy + 0.01  # a higher level, in effect: its energy differs by 0.01 Eh
    cond = qcthermo.Conditions(low_mode_model="qrrho")
    species = build_species("dvb", [freq], cond, single_points=[sp])
    alone = qcthermo.thermochemistry(qcthermo.Molecule.from_calculation(freq), cond)
    assert species.values["G"][0] == pytest.approx(sp.energy + (alone.gibbs - alone.electronic_energy), abs=1e-10)
    assert species.values["E"][0] == pytest.approx(sp.energy, abs=1e-12)
    assert species.levels == ["B3LYP/STO-3G//B3LYP/STO-3G"]


def test_single_point_on_another_geometry_is_refused(third_party):
    # The ORCA 5 single point lists the atoms in another order than the Gaussian geometry: no pairing, so the
    # frequency job is left out with an error rather than mixed with an energy of another structure.
    from qcthermo.species import build_species

    freq = qcthermo.read_log(third_party / "gaussian16" / "dvb_ir.out")
    sp = qcthermo.read_log(third_party / "orca5.0" / "dvb_sp.out")
    species = build_species("dvb", [freq], qcthermo.Conditions(), single_points=[sp])
    assert not species.usable
    assert any(f.severity == "error" and "no single point matches" in f.message for f in species.findings)


CYCLE_REACTION = """
[[reaction]]
name = "iso"
reactants = ["hcn"]
transition_state = "ts"
products = ["hnc"]
"""


@pytest.mark.parametrize("with_reaction", [True, False], ids=["with a reaction", "profile alone"])
def test_cyclic_profile_energy_span_of_one_step(tmp_path, samples, with_reaction):
    # Energy span model (Kozuch and Shaik, Acc. Chem. Res. 2011, 44, 101): for a one-step cycle I -> TS -> I',
    # the TS follows the intermediate, so the span is G(TS) - G(I), the free energy of activation. A file with
    # the [[profile]] alone gets its span too.
    path = tmp_path / "cycle.toml"
    path.write_text(f"""
[species.hcn]
logs = "{samples.as_posix()}/gas/hcn.out"
[species.hnc]
logs = "{samples.as_posix()}/gas/hnc.out"
[species.ts]
logs = "{samples.as_posix()}/gas/ts_hcn.out"
transition_state = true
{CYCLE_REACTION if with_reaction else ""}
[[profile]]
name = "cycle"
states = [["hcn"], ["ts"], ["hnc"]]
cyclic = true
""")
    res = qcthermo.run(samples / "gas", reactions=path, jobs=1, cache=False)
    (row,) = res.energy_span.to_dict(orient="records")
    assert row["TDTS"] == "ts" and row["TDI"] == "hcn"
    values = res.species_results  # G(TS) - G(I), the same species' G as the reaction's dG‡ uses
    span = hartree_to(values["ts"].values["G"][0] - values["hcn"].values["G"][0], "kcal/mol")
    assert row["energy_span_kcal_mol"] == pytest.approx(span, abs=1e-9)
    if with_reaction:
        assert row["energy_span_kcal_mol"] == pytest.approx(_reaction(res, "iso", "dG_qrrho_act_kcal_mol"), abs=1e-9)
    assert res.profiles[0]["marks"] == {"tdts": "ts", "tdi": "hcn"}


def test_a_truncated_file_is_an_error_but_not_the_end_of_the_batch(tmp_path, samples):
    # A job killed mid-way: the first half of a real NWChem output. It is reported (naming the file) and left
    # out; the species goes on with its other file, and the run says "some inputs had errors" (exit 1).
    text = (samples / "gas" / "ch4.out").read_text()
    (tmp_path / "broken.out").write_text(text[: len(text) // 2])
    path = tmp_path / "reactions.toml"
    path.write_text(f'[species.ch4]\nlogs = ["broken.out", "{samples.as_posix()}/gas/ch4.out"]\n')
    res = qcthermo.run(tmp_path, reactions=path, jobs=1, cache=False)
    assert res.species_results["ch4"].usable and len(res.species_results["ch4"].used) == 1
    assert any(f.severity == "error" and f.subject.endswith("broken.out") for f in res.findings)
    assert res.exit_status == 1


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    """The bundled scenario run with its own reaction file (sample_outputs/README.md describes it)."""
    from conftest import SAMPLES

    return qcthermo.run(SAMPLES, reactions=SAMPLES / "reactions.toml", jobs=1, cache=False)


def test_scenario_end_to_end(scenario, tmp_path):
    df = scenario.reactions
    assert set(df["status"]) == {"ok"}, df[["reaction", "notes"]].to_string()
    level = dict(zip(df["reaction"], df["level"], strict=True))
    # the reaction file pairs MP2 single points with the abstraction's species (its comments say so)
    assert level["h_abstraction"] == "MP2/cc-pVTZ//B3LYP/6-31G*"
    assert level["hcn_isomerisation"] == "B3LYP/6-31G*"
    # water at its own 55.3 M: G(c) = G(1M) + RT ln(c/1M) (textbook)
    water = scenario.species_results["water"]
    assert water.options.concentration == pytest.approx(55.3)
    # composite scheme: G = E(MP2) + [G - E](B3LYP) for every conformer with a single point
    ch4 = scenario.species_results["ch4"].used[0]
    assert ch4.values["G"][0] == pytest.approx(ch4.single_point.energy + ch4.thermo.gibbs
                                               - ch4.thermo.electronic_energy, abs=1e-10)
    written = {p.name for p in scenario.write(tmp_path / "out")}
    assert {"species.tex", "reactions.xlsx", "coordinates.xyz", "run.json"} <= written
    doc = json.loads((tmp_path / "out" / "run.json").read_text())
    paths = {i["path"] for i in doc["inputs"]}
    assert any(p.endswith("sp/ch4_mp2.out") for p in paths) and any(p.endswith("reactions.toml") for p in paths)


def test_planted_flaws_of_the_scenario_are_caught(tmp_path, samples):
    # Each file under sample_outputs/flawed/ was made for one reason (sample_outputs/README.md, section 6).
    s = samples.as_posix()
    path = tmp_path / "flaws.toml"
    path.write_text(f"""
[species.hcn]
logs = "{s}/gas/hcn.out"
[species.hnc_hf]
logs = "{s}/flawed/hnc_hf.out"
[species.ts_killed]
logs = "{s}/flawed/ts_abstraction_killed.out"
transition_state = true
[species.methanol]
logs = "{s}/flawed/methanol_maxiter.out"
[species.butyne]
logs = "{s}/flawed/butyne_eclipsed.out"
[[reaction]]
name = "mixed"
reactants = ["hcn"]
products = ["hnc_hf"]
""")
    res = qcthermo.run(samples / "flawed", reactions=path, jobs=1, cache=False)
    row = res.reactions.iloc[0]
    assert row["status"] == "excluded" and "mixed levels of theory" in row["notes"]  # HF/3-21G vs B3LYP/6-31G*
    messages = {f.subject.rsplit("/", 1)[-1]: [] for f in res.findings}
    for f in res.findings:
        messages[f.subject.rsplit("/", 1)[-1]].append((f.severity, f.message))
    assert ("error", "species 'ts_killed': the job did not terminate normally") in messages["ts_abstraction_killed.out"]
    assert any(sev == "error" and "did not converge" in m for sev, m in messages["methanol_maxiter.out"])
    # the spurious 35i cm^-1 torsion: a warning, the engine's default policy inverts it; the species stays usable
    assert any(sev == "warning" and "imaginary" in m for sev, m in messages["butyne_eclipsed.out"])
    assert res.species_results["butyne"].usable
    assert not res.species_results["ts_killed"].usable and not res.species_results["methanol"].usable


def test_single_point_named_explicitly_gives_the_same_composite(tmp_path, samples):
    # An inline table pairs a frequency file with its single point by name; the scenario's sp/ch4_mp2.out was
    # run on the B3LYP geometry of gas/ch4.out (sample_outputs/README.md), so geometry pairing agrees.
    s = samples.as_posix()
    path = tmp_path / "explicit.toml"
    path.write_text(f"""
[species.by_name]
logs = "{s}/gas/ch4.out"
single_point = {{ "{s}/gas/ch4.out" = "{s}/sp/ch4_mp2.out" }}
[species.by_geometry]
logs = "{s}/gas/ch4.out"
single_point = "{s}/sp/*_mp2.out"
""")
    res = qcthermo.run(samples / "gas", reactions=path, jobs=1, cache=False)
    by_name, by_geometry = res.species_results["by_name"], res.species_results["by_geometry"]
    assert by_name.levels == by_geometry.levels == ["MP2/cc-pVTZ//B3LYP/6-31G*"]
    assert by_name.values["G"][0] == pytest.approx(by_geometry.values["G"][0], abs=1e-12)
    # the other single points of the glob match no CH4 geometry: warnings, not used
    assert any(f.severity == "warning" and "matches no frequency geometry" in f.message for f in res.findings)


def test_paper_tables_keep_the_papers_columns_and_csv_keeps_all(scenario, tmp_path):
    import pandas as pd

    from qcthermo.export.tables import paper_table

    out = tmp_path / "tables"
    scenario.write(out)
    tables = {}
    for stem, df in (("reactions", scenario.reactions), ("species", scenario.species)):
        assert list(pd.read_csv(out / f"{stem}.csv").columns) == list(df.columns)
        tables[stem] = list(paper_table(df, stem).frame.columns)
        header = next(line for line in (out / f"{stem}.md").read_text().splitlines() if line.startswith("| "))
        assert header.count(" | ") + 1 == len(tables[stem]) < len(df.columns)
    # the chosen model only (docs/tables.md), named in the caption: dE, dH, dG, dG‡ and k with its unit
    assert tables["reactions"] == ["reaction", "dE_kcal_mol", "dH_kcal_mol", "dG_kcal_mol", "dG_act_kcal_mol",
                                   "k_forward", "k_unit"]
    model = scenario.conditions.low_mode_model.replace("-", "_")
    md = (out / "reactions.md").read_text()
    for _, row in scenario.reactions.iterrows():
        if row["status"] == "ok" and row[f"dG_{model}_act_kcal_mol"] == row[f"dG_{model}_act_kcal_mol"]:
            assert f" {row[f'dG_{model}_act_kcal_mol']:.2f} |" in md  # the model's barrier, not RRHO's
    # species: energies relative within formula, charge and level, in the run's unit, no hartree
    assert "Eₕ" not in (out / "species.md").read_text().split("\n\n")[1]
    assert {"dE_elec_kcal_mol", "dH_kcal_mol", "dG_kcal_mol"} <= set(tables["species"])


PAPER_TABLES = ("species", "reactions", "pka", "redox", "heats_of_formation", "conformers")


@pytest.mark.skipif(shutil.which("pdflatex") is None, reason="pdflatex is not installed")
def test_paper_tables_of_the_sample_run_fit_the_page(scenario, tmp_path):
    # pdflatex itself measures the width: each .tex of the sample run, in a minimal article with booktabs and
    # the packages the file's first line names, compiles without an "Overfull \hbox" (a table wider than the
    # 345 pt text width of article's default page). Before the paper layout: species.tex 761 pt and
    # reactions.tex 948 pt too wide.
    out = tmp_path / "out"
    scenario.write(out)
    assert all((out / f"{stem}.tex").is_file() for stem in PAPER_TABLES)
    for stem in PAPER_TABLES:
        tex = (out / f"{stem}.tex").read_text(encoding="utf-8")
        packages = re.fullmatch(r"% requires \\usepackage\{([\w,]+)\}", tex.splitlines()[0]).group(1)
        folder = tmp_path / stem
        folder.mkdir()
        (folder / "doc.tex").write_text("\n".join([r"\documentclass{article}", r"\usepackage{booktabs}",
                                                   rf"\usepackage{{{packages}}}", r"\begin{document}", tex,
                                                   r"\end{document}"]), encoding="utf-8")
        proc = subprocess.run(["pdflatex", "-interaction=nonstopmode", "-halt-on-error", "doc.tex"], cwd=folder,
                              capture_output=True, text=True, timeout=120)
        log = (folder / "doc.log").read_text(encoding="utf-8", errors="replace")
        assert proc.returncode == 0, f"{stem}.tex: {proc.stdout[-1500:]}"
        assert "Overfull \\hbox" not in log, f"{stem}.tex: " + "; ".join(re.findall(r"Overfull \\hbox \([^)]*\)", log))


def test_species_paper_table_is_relative_within_formula_and_level(scenario, tmp_path):
    # HNC above HCN (same formula CHN, same level B3LYP/6-31G*) by the reaction's own dG: the species table's
    # relative G is G(HNC) - G(HCN), the hcn_isomerisation row of reactions.csv (the same two logs, printed
    # energies in sample_outputs/gas/hcn.out and hnc.out); the lowest of a group reads 0.00
    from qcthermo.export.tables import paper_table

    paper = paper_table(scenario.species, "species", "kcal/mol")
    frame = paper.frame.set_index("species")
    dg = scenario.reactions.set_index("reaction").loc["hcn_isomerisation", "dG_qrrho_kcal_mol"]
    assert frame.loc["hnc", "dG_kcal_mol"] == pytest.approx(dg, abs=1e-9)
    assert frame.loc["hcn", "dG_kcal_mol"] == 0.0
    assert paper.sections[list(frame.index).index("hnc")] == "B3LYP/6-31G*"


def test_run_results_repr_is_a_short_summary(results):
    # what a notebook shows for `results`: the counts, not every DataFrame and ThermoResult (was ~70 000 chars)
    text = repr(results)
    assert len(text) < 400 and "\n" not in text
    n_species = len(results.species_results)
    assert f"{n_species} species" in text and f"{len(results.errors)} errors" in text
    assert f"{results.reactions['reaction'].nunique()} reactions" in text


def test_run_without_reaction_file_takes_a_ts_frequency_job_as_thermo_does(tmp_path, third_party):
    # third-party-logs README: the GAMESS NH3 run is a transition-state frequency job with exactly one
    # imaginary mode; `qcthermo thermo` takes it for a transition state, and so must a run without reactions
    import shutil

    shutil.copy(third_party / "gamess-us2018" / "nh3_ts_ir.out", tmp_path / "nh3_ts.out")
    res = qcthermo.run(tmp_path, jobs=1, cache=False)
    species = res.species_results["nh3_ts"]
    assert species.usable and species.options.transition_state
    assert any("taken for a transition state" in f.message for f in res.findings if f.severity == "warning")


def test_a_single_point_caught_by_a_logs_glob_is_pointed_to_single_point(tmp_path, samples):
    # sample_outputs/README.md: sp/ch4_mp2.out is an MP2 single point ("energy" job) on the CH4 geometry
    path = tmp_path / "r.toml"
    root = samples.as_posix()
    path.write_text(f'[species.ch4]\nlogs = ["{root}/gas/ch4.out", "{root}/sp/ch4_mp2.out"]\n')
    res = qcthermo.run(samples, reactions=path, jobs=1, cache=False)
    messages = [f.message for f in res.findings if f.subject.endswith("ch4_mp2.out")]
    assert any("a single point belongs under single_point" in m for m in messages)


def test_run_without_a_reaction_file_and_inits_conditions_are_the_python_defaults(tmp_path, samples, cache_dir):
    # one set of defaults (docs/thermo.md): qcthermo.run with no reaction file takes Conditions() as the command line
    # does, and the [conditions] `qcthermo init` writes for gas-phase logs load back to the same Conditions
    # (Grimme's qRRHO at 100 cm^-1, Chem. Eur. J. 2012, 18, 9955; 298.15 K; 1 atm, the gas convention)
    from qcthermo.cli import main
    from qcthermo.reactions import load_reaction_file
    from qcthermo.records import Conditions
    from qcthermo.workflow import default_conditions

    assert qcthermo.run(samples / "gas", jobs=1).conditions == Conditions()
    target = tmp_path / "starter.toml"
    assert main(["init", str(samples / "gas"), "-o", str(target), "--jobs", "1", "--quiet"]) == 0
    assert default_conditions(load_reaction_file(target)) == Conditions()

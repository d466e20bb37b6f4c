"""Solution chemistry (qcthermo.solution, docs/solution.md): solvent single points on gas-phase structures,
solvation free energies, pKa and reduction potentials, checked against published values, equations done by
hand with scipy.constants, and the energies NWChem printed in the sample logs."""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import constants as sc

import qcthermo
from qcthermo import solution
from qcthermo.cli import main
from qcthermo.errors import ReactionFileError
from qcthermo.units import hartree_to, to_hartree

T = 298.15
KCAL_J = 4184.0  # thermochemical calorie (scipy.constants.calorie)
RT_LN10_KCAL = sc.R * T * math.log(10) / KCAL_J  # 1.364 kcal/mol
SP_NAMES = ("formic_acid", "formate", "acetic_acid", "acetate", "no2", "nitrite")


def test_proton_gas_free_energy_is_sackur_tetrode_on_a_bare_proton():
    # Sackur-Tetrode (McQuarrie, Statistical Mechanics, 1976) for a structureless particle (g = 1) of the
    # proton's mass at 1 atm, by hand with scipy.constants: G = 5/2 kT - T S
    m, kt = sc.physical_constants["proton mass"][0], sc.k * T
    s = sc.k * (math.log((2 * math.pi * m * kt / sc.h ** 2) ** 1.5 * kt / sc.atm) + 2.5)
    g_kcal = (2.5 * kt - T * s) * sc.N_A / KCAL_J
    assert hartree_to(float(solution.proton_gas_gibbs(T)), "kcal/mol") == pytest.approx(g_kcal, abs=1e-6)
    # the usual literature value is -6.28 kcal/mol (e.g. Kelly, Cramer & Truhlar 2006; from memory)
    assert g_kcal == pytest.approx(-6.28, abs=0.015)


def test_the_two_proton_solvation_values_are_one_value_in_two_standard_states():
    # Kelly, Cramer & Truhlar, J. Phys. Chem. B 2006, 110, 16066: -265.9 kcal/mol (1 M gas -> 1 M) is
    # Tissandier et al.'s -264.0 (1 atm gas -> 1 M) less RT ln 24.46 = 1.89 kcal/mol (common practice)
    a = hartree_to(float(solution.proton_solution_gibbs(T, "tissandier1998")), "kcal/mol")
    b = hartree_to(float(solution.proton_solution_gibbs(T, "kelly2006")), "kcal/mol")
    assert a == pytest.approx(b, abs=0.02)
    assert a == pytest.approx(-6.28 - 264.0, abs=0.02)  # G(H+, gas, 1 atm) + dG_solv (values above)


def test_pka_is_the_deprotonation_free_energy_over_rt_ln10():
    # pKa = dG / (RT ln 10) (common practice): 1.364 kcal/mol per unit at 298.15 K
    dg = to_hartree(10 * RT_LN10_KCAL, "kcal/mol")
    assert float(solution.pka_from_free_energy(dg, T)) == pytest.approx(10.0, rel=1e-12)


def test_a_pcet_couple_shifts_by_0_0592_v_per_ph_unit():
    # Nernst: -(m/n) 0.0592 V per pH unit at 298.15 K (common practice); RT ln 10 / F from scipy.constants
    slope = sc.R * T * math.log(10) / sc.physical_constants["Faraday constant"][0]
    assert slope == pytest.approx(0.0592, abs=5e-5)
    for protons, electrons in ((1, 1), (2, 1), (2, 2)):
        e0 = solution.reduction_potential(0.01, electrons, 4.28, T, protons, ph=0.0)
        e7 = solution.reduction_potential(0.01, electrons, 4.28, T, protons, ph=7.0)
        assert float(e7 - e0) == pytest.approx(-7 * slope * protons / electrons, rel=1e-10)


def test_iron_couple_from_tabulated_free_energies_of_formation():
    # Worked example: Fe3+ + e- -> Fe2+ from the NBS tables of chemical thermodynamic properties (Wagman et al.,
    # J. Phys. Chem. Ref. Data 1982, 11, Suppl. 2; from memory): dfG(Fe3+, aq) = -4.7, dfG(Fe2+, aq) =
    # -78.90 kJ/mol, on the conventional scale (SHE = 0, so the reference's absolute potential is 0 here).
    # Tabulated E = +0.771 V (Bard, Parsons & Jordan, Standard Potentials in Aqueous Solution, 1985; from memory)
    dg = to_hartree(-78.90 - (-4.7), "kJ/mol")
    assert float(solution.reduction_potential(dg, 1, 0.0)) == pytest.approx(0.771, abs=0.003)
    # and a two-electron couple: dG = -nFE (Cu2+/Cu, E = +0.342 V, same tables; dfG(Cu2+, aq) = 65.49 kJ/mol)
    assert float(solution.reduction_potential(to_hartree(-65.49, "kJ/mol"), 2, 0.0)) == pytest.approx(0.339,
                                                                                                       abs=0.005)


# -- the sample scenario: B3LYP/6-31G* gas-phase structures, B3LYP/6-31+G* single points (COSMO water, gas) --


def _solution_file(tmp_path: Path, samples: Path, body: str, cycle: bool = True, name: str = "r.toml") -> Path:
    species = []
    for sp in SP_NAMES:
        species.append(f'[species.{sp}]\nlogs = "{samples.as_posix()}/solution/{sp}.out"\n'
                       f'single_point = "{samples.as_posix()}/solution/sp/{sp}_cosmo.out"\n'
                       + (f'gas_single_point = "{samples.as_posix()}/solution/sp/{sp}_gas.out"\n' if cycle else ""))
    path = tmp_path / name
    path.write_text('[conditions]\nstandard_state = "1M"\n' + "\n".join(species) + body)
    return path


PKA = """
[[pka]]
name = "acetic"
acid = "acetic_acid"
base = "acetate"
[[pka]]
name = "formic"
acid = "formic_acid"
base = "formate"
[[redox]]
name = "nitrogen_dioxide"
oxidised = "no2"
reduced = "nitrite"
electrons = 1
"""


@pytest.fixture(scope="module")
def solution_run(tmp_path_factory):
    from conftest import SAMPLES

    tmp = tmp_path_factory.mktemp("solution")
    return qcthermo.run(SAMPLES / "solution", reactions=_solution_file(tmp, SAMPLES, PKA), cache=False)


def _g(results, name: str) -> float:
    return float(results.species.set_index("species").loc[name, "G_qrrho_Eh"])


def test_pka_by_hand_from_the_species_table(solution_run):
    # HA -> A- + H+(aq): dG = G(A-) + G(H+, aq, 1 M) - G(HA), pKa = dG / (RT ln 10) (common practice), the
    # proton's G from the two published values above (-6.28 - 264.0 kcal/mol at 1 M)
    res = solution_run
    row = res.pka.set_index("name").loc["acetic"]
    dg = hartree_to(_g(res, "acetate") - _g(res, "acetic_acid"), "kcal/mol") + (-6.28 - 264.0)
    assert row["dG_deprotonation_kcal_mol"] == pytest.approx(dg, abs=0.02)
    assert row["pKa"] == pytest.approx(dg / RT_LN10_KCAL, abs=0.02)
    assert row["G_proton_kcal_mol"] == pytest.approx(-270.28, abs=0.02) and row["status"] == "ok"


def test_direct_and_relative_schemes_agree_when_the_reference_is_its_own_computed_pka(solution_run, tmp_path,
                                                                                      samples):
    # pKa(HA) = pKa(HRef) + dG(HA + Ref- -> A- + HRef)/(RT ln 10): with pKa(HRef) set to its own direct value the
    # proton's G cancels and both schemes give the same number (the algebra of the two schemes)
    formic = float(solution_run.pka.set_index("name").loc["formic", "pKa"])
    body = PKA.split("[[redox]]")[0] + f"""
[[pka]]
name = "acetic_vs_formic"
acid = "acetic_acid"
base = "acetate"
scheme = "relative"
reference = {{acid = "formic_acid", base = "formate", pka = {formic!r}}}
"""
    res = qcthermo.run(samples / "solution", reactions=_solution_file(tmp_path, samples, body), cache=False)
    table = res.pka.set_index("name")
    assert table.loc["acetic_vs_formic", "pKa"] == pytest.approx(table.loc["acetic", "pKa"], abs=1e-9)
    assert np.isnan(table.loc["acetic_vs_formic", "G_proton_kcal_mol"])


def test_reduction_potential_by_hand_from_the_species_table(solution_run):
    # NO2 + e- -> NO2-: E = -dG/(nF) - E_abs(SHE), E_abs(SHE) = 4.28 V (Kelly, Cramer & Truhlar 2006), the
    # electron at 0 (the electron convention), F and the calorie from scipy.constants
    res = solution_run
    dg_kcal = hartree_to(_g(res, "nitrite") - _g(res, "no2"), "kcal/mol")
    row = res.redox.set_index("name").loc["nitrogen_dioxide"]
    assert row["dG_kcal_mol"] == pytest.approx(dg_kcal, abs=1e-6)
    e = -dg_kcal * KCAL_J / sc.physical_constants["Faraday constant"][0] - 4.28
    assert row["E_V"] == pytest.approx(e, abs=1e-6)
    assert row["reference"] == "SHE" and row["E_abs_reference_V"] == 4.28


def _printed(path: Path, pattern: str) -> float:
    return float(re.findall(pattern, path.read_text())[-1])


@pytest.mark.parametrize("name", SP_NAMES)
def test_solvation_free_energy_from_the_energies_printed_in_the_logs(solution_run, samples, name):
    # dG_solv = E(SP, COSMO water) - E(SP, gas), both B3LYP/6-31+G* on the B3LYP/6-31G* geometry: the "Total
    # DFT energy" lines NWChem printed in the two single points
    sp = samples / "solution" / "sp"
    total = r"Total DFT energy =\s+(-?\d+\.\d+)"
    e_solv, e_gas = _printed(sp / f"{name}_cosmo.out", total), _printed(sp / f"{name}_gas.out", total)
    species = solution_run.species.set_index("species")
    assert species.loc[name, "dG_solv_kcal_mol"] == pytest.approx(hartree_to(e_solv - e_gas, "kcal/mol"), abs=1e-5)
    # the COSMO run's own gas-phase step is the same calculation as the separate gas single point
    assert _printed(sp / f"{name}_cosmo.out", r"gas phase energy =\s+(-?\d+\.\d+)") == pytest.approx(e_gas, abs=2e-5)


def test_solvent_single_point_level_label_and_g(solution_run, samples):
    # G = E(SP, solvent) + [G - E](gas-phase frequency job), the composite scheme with a solvent single point
    res = solution_run
    species = res.species_results["acetic_acid"]
    assert species.levels == ["COSMO(water)-B3LYP/6-31+G*//B3LYP/6-31G*"]
    c = species.used[0]
    assert c.values["G"][0] == pytest.approx(c.single_point.energy + c.thermo.gibbs - c.thermo.electronic_energy,
                                             abs=1e-10)
    # the thermodynamic cycle gives the same G at 1 M: G(gas, 1 atm, high level) + dG_solv + RT ln 24.46
    gas_1atm = qcthermo.thermochemistry(c.molecule, qcthermo.Conditions(standard_state="1atm"))
    cycle = (c.gas_single_point.energy + gas_1atm.gibbs - gas_1atm.electronic_energy + c.solvation_energy
             + float(solution.to_one_molar(T, qcthermo.Conditions(standard_state="1atm"))))
    assert c.values["G"][0] == pytest.approx(cycle, abs=1e-10)
    assert hartree_to(float(solution.to_one_molar(T, qcthermo.Conditions(standard_state="1atm"))),
                      "kcal/mol") == pytest.approx(1.894, abs=1e-3)  # common practice


def test_the_tables_and_run_json(solution_run, tmp_path):
    written = {p.name for p in solution_run.write(tmp_path / "out")}
    assert {"pka.csv", "pka.md", "pka.tex", "redox.csv", "redox.md", "redox.tex"} <= written
    pka = pd.read_csv(tmp_path / "out" / "pka.csv")
    assert {"name", "acid", "base", "scheme", "dG_deprotonation_kcal_mol", "G_proton_kcal_mol", "pKa"} <= set(pka)
    redox = pd.read_csv(tmp_path / "out" / "redox.csv")
    assert {"name", "electrons", "dG_kcal_mol", "reference", "E_V"} <= set(redox)
    assert "COSMO(water)-B3LYP/6-31+G*//B3LYP/6-31G*" in (tmp_path / "out" / "pka.md").read_text()
    import json

    doc = json.loads((tmp_path / "out" / "run.json").read_text())
    assert doc["pka"] and doc["redox"] and "Tissandier" not in doc["settings"]["solution"]["proton_solvation"]
    assert "Kelly" in doc["settings"]["solution"]["absolute_she"]
    report = (tmp_path / "out" / "report.html").read_text()
    assert 'id="solution"' in report and "Kelly, Cramer &amp; Truhlar" in report


# -- bad input: one line with the file and line, exit 2 ----------------------------------------------------


@pytest.mark.parametrize("body, message", [
    ('[[pka]]\nname = "x"\nacid = "acetic_acid"\nbase = "formate"\n', "must differ by one H"),
    ('[[pka]]\nname = "x"\nacid = "formate"\nbase = "acetic_acid"\n', "must differ by one H"),
    ('[[pka]]\nname = "x"\nacid = "acetic_acid"\nbase = "acetate"\nscheme = "relative"\n'
     'reference = {acid = "formic_acid", base = "formate"}\n', "pka (the reference acid's known pKa)"),
    ('[[pka]]\nname = "x"\nacid = "acetic_acid"\nbase = "acetate"\nscheme = "relative"\n', "needs reference"),
    ('[[redox]]\nname = "x"\noxidised = "no2"\nreduced = "formate"\nelectrons = 1\n', "oxidised form's atoms"),
    ('[[redox]]\nname = "x"\noxidised = "no2"\nreduced = "nitrite"\nelectrons = 2\n', "do not differ by 2"),
    ('[[redox]]\nname = "x"\noxidised = "no2"\nreduced = "nitrite"\nelectrons = 1\nprotons = 1\n',
     "oxidised form's atoms and 1 H"),
])
def test_bad_entries_are_one_line_with_file_and_line(tmp_path, samples, cache_dir, capsys, body, message):
    path = _solution_file(tmp_path, samples, "\n" + body, cycle=False)
    out = tmp_path / "out"
    assert main(["run", str(samples / "solution"), "--reactions", str(path), "--out", str(out), "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and message in err and f"{path}, line " in err, err
    assert not out.exists()


def test_solvent_single_points_in_two_solvents_in_one_reaction_are_refused(tmp_path, samples):
    # the check itself (the sample has one solvent): a reaction whose species' solvent single points are in
    # different solvents names its line
    path = _solution_file(tmp_path, samples, '\n[[reaction]]\nname = "r"\nreactants = ["acetic_acid", "formate"]\n'
                                             'products = ["acetate", "formic_acid"]\n', cycle=False)
    rf = qcthermo.reactions.load_reaction_file(path)
    formulas = {n: None for n in rf.species}
    with pytest.raises(ReactionFileError, match=r"line \d+: reaction 'r': solvent single points in different "
                                                r"solvents \(COSMO\(methanol\), COSMO\(water\)\)"):
        solution.check_solution(rf, {}, {}, {**dict.fromkeys(formulas, "COSMO(water)"), "formate": "COSMO(methanol)"})


def test_init_proposes_the_solvent_protocol(tmp_path, samples, cache_dir):
    # the solvent single points on the gas-phase structures, with the gas-phase ones of the same level as the
    # thermodynamic cycle, and the protocol written as a comment
    target = tmp_path / "starter.toml"
    assert main(["init", str(samples / "solution"), "-o", str(target), "--jobs", "1", "--quiet"]) == 0
    text = target.read_text()
    assert "# protocol: COSMO(water)-B3LYP/6-31+G*//B3LYP/6-31G* by the thermodynamic cycle" in text
    rf = qcthermo.reactions.load_reaction_file(target)
    assert [p.name for p in rf.species["acetic_acid"].single_point] == ["acetic_acid_cosmo.out"]
    assert [p.name for p in rf.species["acetic_acid"].gas_single_point] == ["acetic_acid_gas.out"]


def test_the_named_constants_move_e_by_their_published_differences(solution_run, tmp_path, samples):
    # Trasatti's IUPAC 4.44 V against Kelly-Cramer-Truhlar's 4.28 V: E lower by 0.16 V; Bartmess's Fermi-Dirac
    # electron (-0.867 kcal/mol at 298.15 K, from memory) lowers E by 0.867 kcal/mol / F = 0.0376 V
    body = PKA.split("[[pka]]")[0] + '[solution]\nabsolute_she = "trasatti1986"\nelectron = "fermi-dirac"\n' + \
        "[[redox]]" + PKA.split("[[redox]]")[1]
    res = qcthermo.run(samples / "solution", reactions=_solution_file(tmp_path, samples, body), cache=False)
    shift = 0.867 * KCAL_J / sc.physical_constants["Faraday constant"][0]
    before = solution_run.redox.set_index("name").loc["nitrogen_dioxide", "E_V"]
    after = res.redox.set_index("name").loc["nitrogen_dioxide", "E_V"]
    assert after - before == pytest.approx(-0.16 - shift, abs=1e-9)


def test_a_mixed_route_reaction_is_a_warning(tmp_path, samples):
    # one species on the thermodynamic cycle, the other on the direct route: the same G, but not one protocol
    path = _solution_file(tmp_path, samples, '\n[[reaction]]\nname = "exchange"\n'
                                             'reactants = ["acetic_acid", "formate"]\nproducts = ["acetate", '
                                             '"formic_acid"]\n')
    text = path.read_text().replace(f'gas_single_point = "{samples.as_posix()}/solution/sp/formate_gas.out"\n', "")
    path.write_text(text)
    res = qcthermo.run(samples / "solution", reactions=path, cache=False)
    assert any(f.subject == "exchange" and "thermodynamic cycle for acetate, acetic_acid, formic_acid only"
               in f.message for f in res.findings), res.findings
    assert res.reactions["status"].iloc[0] == "ok"


def test_qcthermo_run_prints_the_pka_and_potentials(tmp_path, samples, cache_dir, capsys):
    # the command line's summary repeats the tables' values (pka.csv, redox.csv it wrote)
    path = _solution_file(tmp_path, samples, PKA)
    out = tmp_path / "out"
    assert main(["run", str(samples / "solution"), "--reactions", str(path), "--out", str(out)]) == 0
    text = capsys.readouterr().out
    pka = pd.read_csv(out / "pka.csv").set_index("name")
    redox = pd.read_csv(out / "redox.csv").set_index("name")
    assert f"pKa: acetic {pka.loc['acetic', 'pKa']:.2f} (direct), formic {pka.loc['formic', 'pKa']:.2f}" in text
    assert f"E: nitrogen_dioxide {redox.loc['nitrogen_dioxide', 'E_V']:+.3f} V vs SHE" in text

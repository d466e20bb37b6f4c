"""Heats of formation (qcthermo.formation) against experimental thermochemistry.

Sources: NIST-JANAF Thermochemical Tables, 4th ed. (Chase 1998) and Curtiss, Raghavachari, Redfern, Pople,
J. Chem. Phys. 1997, 106, 1063 (its table of atomic heats of formation at 0 K and of the elements'
H298 - H0); spectroscopic dissociation energies D0 of diatomics from Huber and Herzberg, Constants of
Diatomic Molecules (1979). Every number below is from memory of those tables, none read from a file.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_thermo_cantera import MOLECULES

from qcthermo import Conditions, Molecule, thermochemistry
from qcthermo.formation import (
    ELEMENT_REFERENCES,
    KJ_MOL_PER_EH,
    FormationInput,
    FormationScheme,
    atomization_energy,
    bonds,
    formation_enthalpy_0k,
    formation_enthalpy_298,
    heats_of_formation,
    reaction_route,
)

# Curtiss et al. 1997, atomic dfH(0 K) and element H298 - H0 in kcal/mol (from memory)
CURTISS_KCAL = {"H": (51.63, 1.01), "C": (169.98, 0.25), "N": (112.53, 1.04), "O": (58.99, 1.04),
                "F": (18.47, 1.05), "Si": (106.6, 0.76), "P": (75.42, 1.28), "S": (65.66, 1.05),
                "Cl": (28.59, 1.10)}


@pytest.mark.parametrize("element", sorted(CURTISS_KCAL))
def test_element_table_is_curtiss_1997(element):
    formation, increment = CURTISS_KCAL[element]
    ref = ELEMENT_REFERENCES[element]
    assert ref.formation_0k / 4.184 == pytest.approx(formation, abs=0.03)
    assert ref.increment / 4.184 == pytest.approx(increment, abs=0.01)


# (molecule, elements, spectroscopic D0 in kJ/mol: H2 36118.1 cm^-1, O2 5.115 eV, N2 9.759 eV; Huber & Herzberg)
DIATOMICS = [("H2", "HH", 432.07), ("O2", "OO", 493.6), ("N2", "NN", 941.6)]


@pytest.mark.parametrize("name, atoms, d0", DIATOMICS, ids=[d[0] for d in DIATOMICS])
def test_atomization_of_an_element_gives_zero(name, atoms, d0):
    # an element in its reference state has dfH = 0 (0 K, gaseous diatomic): the atomic heats of formation of
    # JANAF and the spectroscopic D0 meet to within their uncertainties (~0.2 kJ/mol)
    e_atom = -1.0
    e0 = 2 * e_atom - d0 / KJ_MOL_PER_EH
    d0_computed = atomization_energy(e0, [e_atom, e_atom]) * KJ_MOL_PER_EH
    assert d0_computed == pytest.approx(d0, abs=1e-9)
    dfh = formation_enthalpy_0k([ELEMENT_REFERENCES[a].formation_0k for a in atoms], d0_computed)
    assert dfh == pytest.approx(0.0, abs=0.2)


def test_methane_worked_example():
    # JANAF CH4: dfH(0 K) = -66.911, dfH(298.15) = -74.873, H298 - H0 = 10.016 kJ/mol; C(g) 711.185 and H(g)
    # 216.035 at 0 K give D0(CH4) = 711.185 + 4 * 216.035 + 66.911 = 1642.236 kJ/mol. The 298 K value follows
    # from Curtiss's eq. 2 with graphite's 1.051 and half of H2's 8.468 per H
    d0 = 711.185 + 4 * 216.035 + 66.911
    e = {"C": -37.8, "H": -0.5}
    e0 = e["C"] + 4 * e["H"] - d0 / KJ_MOL_PER_EH
    symbols = ["C", "H", "H", "H", "H"]
    d0_computed = atomization_energy(e0, [e[s] for s in symbols]) * KJ_MOL_PER_EH
    dfh0 = formation_enthalpy_0k([ELEMENT_REFERENCES[s].formation_0k for s in symbols], d0_computed)
    assert dfh0 == pytest.approx(-66.911, abs=1e-6)
    dfh298 = formation_enthalpy_298(dfh0, 10.016, [ELEMENT_REFERENCES[s].increment for s in symbols])
    assert dfh298 == pytest.approx(-74.873, abs=0.01)


def test_298_minus_0_from_the_engine_matches_janaf():
    # dfH(298) - dfH(0) = [H(298) - H(0)](engine) - sum of the elements' increments; JANAF: CH4 -74.873 - (-66.911)
    # = -7.962, H2O(g) -241.826 - (-238.921) = -2.905 kJ/mol. Experimental geometries and fundamentals from memory
    # (shared with the gri30 test); the RRHO H(298) - H(0) is within ~0.05 kJ/mol of JANAF for such stiff molecules
    for name, expected in (("CH4", -7.962), ("H2O", -2.905)):
        (symbols, xyz), freqs, mult, sigma = MOLECULES[name]
        mol = Molecule(symbols, xyz, freqs, multiplicity=mult, symmetry_number=sigma)
        r = thermochemistry(mol, Conditions(temperature=298.15, low_mode_model="rrho", standard_state="1atm"))
        s = FormationInput(name, tuple(symbols), "exp", float(r.electronic_energy + r.zpe), float(r.enthalpy))
        increments = [ELEMENT_REFERENCES[el].increment for el in symbols]
        assert formation_enthalpy_298(0.0, s.thermal_kj_mol, increments) == pytest.approx(expected, abs=0.06)


def test_reaction_route_is_hess_law():
    # JANAF dfH(298): CH3 145.69, CH4 -74.873, H 217.999, H2 0 -> dH_r(CH4 + H -> CH3 + H2) = 2.564 kJ/mol
    dh = 145.69 + 0.0 - (-74.873) - 217.999
    assert reaction_route(dh, 1.0, [(-1.0, -74.873), (-1.0, 217.999), (1.0, 0.0)]) == pytest.approx(145.69)
    assert reaction_route(dh, -1.0, [(-1.0, 217.999), (1.0, 145.69), (1.0, 0.0)]) == pytest.approx(-74.873)


def _janaf_species():
    """Species whose computed energies reproduce JANAF exactly (0 K D0 from JANAF dfH(0 K), H298 - H0 from
    JANAF): H2O(g) dfH0 -238.921, H298-H0 9.904; OH dfH0 37.25 (from memory), H298-H0 9.172; atoms' 6.197
    (5/2 RT). Energies of the atoms are arbitrary: only differences enter."""
    e_h, e_o = -0.5, -75.0
    rt52 = 2.5 * 8.314462618e-3 * 298.15

    def molecule(name, symbols, dfh0, thermal):
        d0 = sum(ELEMENT_REFERENCES[s].formation_0k for s in symbols) - dfh0
        e0 = sum({"H": e_h, "O": e_o}[s] for s in symbols) - d0 / KJ_MOL_PER_EH
        return FormationInput(name, tuple(symbols), "L", e0, e0 + thermal / KJ_MOL_PER_EH)

    return {
        "h": FormationInput("h", ("H",), "L", e_h, e_h + rt52 / KJ_MOL_PER_EH),
        "o": FormationInput("o", ("O",), "L", e_o, e_o + rt52 / KJ_MOL_PER_EH),
        "water": molecule("water", ["O", "H", "H"], -238.921, 9.904),
        "oh": molecule("oh", ["O", "H"], 37.25, 9.172),
    }


def test_routes_on_consistent_data():
    inputs = _janaf_species()
    scheme = FormationScheme(atoms=["h", "o"], references={"water": (-241.826, "JANAF"), "h": (217.999, "JANAF")},
                             reactions={"oh": ("split", [(1.0, "water")], [(1.0, "oh"), (1.0, "h")])})
    rows, notes = heats_of_formation(inputs, scheme)
    assert notes == []
    table = {(r["species"], r["route"].split()[0]): r for r in rows}
    # atomization of water: JANAF dfH(298) of H2O(g), -241.826 kJ/mol
    assert table["water", "atomization"]["dfH_298_kJ_mol"] == pytest.approx(-241.826, abs=0.01)
    # the H atom's own atomization value is the experimental one (217.999 at 298 K)
    assert table["h", "atomization"]["dfH_298_kJ_mol"] == pytest.approx(217.999, abs=0.01)
    # OH by the reaction water -> OH + H: JANAF-consistent dfH(298) of OH = 37.25 + 9.172 - 8.683/2 - 8.468/2
    expected_oh = 37.25 + 9.172 - 8.683 / 2 - 8.468 / 2
    assert table["oh", "reaction"]["dfH_298_kJ_mol"] == pytest.approx(expected_oh, abs=0.01)
    assert table["oh", "reaction"]["dfH_0K_kJ_mol"] == pytest.approx(37.25, abs=0.01)
    # the route NASA-7 data take: the reference value first, then the reaction, then atomization
    chosen = {r["species"]: r["route"] for r in rows if r["nasa7"]}
    assert chosen == {"water": "reference value", "h": "reference value", "oh": "reaction split", "o": "atomization"}


def test_an_ion_has_no_atomization_value():
    inputs = _janaf_species()
    w = inputs["water"]
    inputs["water"] = FormationInput("water", w.symbols, "L", w.e0, w.h298, charge=1)
    rows, notes = heats_of_formation(inputs, FormationScheme(atoms=["h", "o"], references={"ts": (1.0, "")}))
    assert "water" not in {r["species"] for r in rows}
    assert any(n == "water" and "an ion" in why for n, why in notes)
    assert any(n == "ts" and "not a usable minimum" in why for n, why in notes)  # a name the run left out


def test_corrections_and_missing_atoms():
    inputs = _janaf_species()
    inputs["water"] = FormationInput("water", ("O", "H", "H"), "L", inputs["water"].e0, inputs["water"].h298,
                                     bonds=("H-O", "H-O"))
    plain, _ = heats_of_formation(inputs, FormationScheme(atoms=["h", "o"]))
    corrected, _ = heats_of_formation(inputs, FormationScheme(atoms=["h", "o"], atom_corrections={"O": 1.0},
                                                             bond_corrections={"H-O": -2.0}))
    value = {r["species"]: r["dfH_298_kJ_mol"] for r in plain}
    shifted = {r["species"]: r["dfH_298_kJ_mol"] for r in corrected}
    assert shifted["water"] - value["water"] == pytest.approx(1.0 - 4.0)
    # without the O atom, only H has a value, and the others say why
    rows, notes = heats_of_formation(inputs, FormationScheme(atoms=["h"]))
    assert {r["species"] for r in rows} == {"h"}
    assert any(n == "water" and "no atom energy at L for O" in why for n, why in notes)


def test_bonds_of_methane(samples):
    import qcthermo

    calc = qcthermo.read_log(samples / "gas" / "ch4.out")
    assert sorted(bonds(calc.symbols, calc.coordinates)) == ["C-H"] * 4
    assert bonds(["H"], np.zeros((1, 3))) == []


# -- the main job on the sample scenario -------------------------------------------------------------------


@pytest.fixture(scope="module")
def sample_results():
    """The sample scenario (sample_outputs/reactions.toml, its [heats_of_formation]) over 300-1000 K."""
    from conftest import SAMPLES

    import qcthermo
    from qcthermo.reactions import load_reaction_file
    from qcthermo.workflow import default_conditions

    rf = load_reaction_file(SAMPLES / "reactions.toml")
    cond = default_conditions(rf).replace(temperature=np.arange(300.0, 1001.0, 100.0))
    return qcthermo.run(SAMPLES, reactions=rf, conditions=cond, jobs=1, cache=False)


@pytest.fixture(scope="module")
def sample_out(sample_results, tmp_path_factory):
    """The sample run's files."""
    out = tmp_path_factory.mktemp("formation") / "out"
    sample_results.write(out)
    return out


def _row(results, species, route):
    table = results.heats_of_formation
    return table[(table["species"] == species) & table["route"].str.startswith(route)].iloc[0]


def test_sample_atomization_of_methane_from_the_logs(sample_results):
    # numbers printed in the logs: MP2 energies (sp/ch4_mp2.out -40.411508166426, sp/c_atom_mp2.out
    # -37.758487696279, sp/h_atom_mp2.out -0.499809811302) and gas/ch4.out's "Zero-Point correction to Energy"
    # 0.045197 au and "Thermal correction to Enthalpy" 0.049004 au
    d0 = (-37.758487696279 + 4 * -0.499809811302 - (-40.411508166426 + 0.045197)) * KJ_MOL_PER_EH
    row = _row(sample_results, "ch4", "atomization")
    assert row["atomization_energy_kJ_mol"] == pytest.approx(d0, abs=0.1)
    assert row["H298_minus_H0_kJ_mol"] == pytest.approx((0.049004 - 0.045197) * KJ_MOL_PER_EH, abs=0.02)
    assert row["dfH_0K_kJ_mol"] == pytest.approx(711.185 + 4 * 216.035 - d0, abs=0.1)  # JANAF atoms (above)
    assert row["level"] == "MP2/cc-pVTZ" and not row["nasa7"]
    # ions and species whose energy is in a solvent get no atomization value (docs/formation.md), silently unless
    # asked for: the pKa species of the sample (COSMO single points), and the nitrite anion
    table = sample_results.heats_of_formation
    assert not {"formate", "formic_acid", "nitrite"} & set(table["species"])
    assert not any(f.subject in ("formate", "formic_acid") for f in sample_results.findings
                   if "heat of formation" in f.message)


def test_sample_reference_reaction_route(sample_results):
    # CH3 from CH4 + H -> CH3 + H2 with the JANAF values of reactions.toml: dfH(CH3) = dH_r + dfH(CH4) + dfH(H)
    # - dfH(H2), dH_r from the species table's H at 298.15 K (qrrho-enthalpy = RRHO for these stiff molecules)
    from conftest import SAMPLES

    import qcthermo

    one = qcthermo.run(SAMPLES, reactions=SAMPLES / "reactions.toml", jobs=1, cache=False)
    h = one.species.set_index("species")["H_Eh"]
    dh = (h["ch3"] + h["h2"] - h["ch4"] - h["h"]) * KJ_MOL_PER_EH
    row = _row(sample_results, "ch3", "reaction h_abstraction")
    assert row["dfH_298_kJ_mol"] == pytest.approx(dh - 74.873 + 217.999, abs=0.01)
    assert row["nasa7"]
    assert _row(sample_results, "ch4", "reference value")["nasa7"]
    assert _row(sample_results, "ch4", "reference value")["source"].startswith("NIST-JANAF")
    # no atoms at GFN2-xTB: pentane has no value, and the run says why
    assert "pentane" not in set(sample_results.heats_of_formation["species"])
    assert any(f.subject == "pentane" and "no atom energy at GFN2-xTB" in f.message for f in sample_results.findings)


def test_sample_tables_and_run_json(sample_results, sample_out):
    import json

    import pandas as pd

    table = pd.read_csv(sample_out / "heats_of_formation.csv")
    assert len(table) == len(sample_results.heats_of_formation)
    assert {"atomization", "reference value", "reaction h_abstraction"} <= set(table["route"])
    doc = json.loads((sample_out / "run.json").read_text())
    assert {r["species"] for r in doc["heats_of_formation"]} == set(table["species"])
    assert "ΔfH°(298.15 K)" in (sample_out / "heats_of_formation.md").read_text()
    assert doc["settings"]["nasa7_enthalpy_reference"].startswith("ENTHALPY REFERENCE: standard heats of formation")
    assert "Heats of formation" in (sample_out / "report.html").read_text()


def test_cantera_reads_the_heats_of_formation_back(sample_results, sample_out):
    # Cantera (the outside reader) loads thermo.yaml: h(298.15 K) of every species is the table's dfH(298.15)
    # (the NASA convention, McBride et al. 1993: a6 fixed by the heat of formation), and cp is the engine's
    # within the fit's own stated error
    import cantera as ct
    import pandas as pd

    from qcthermo.export.nasa7 import fit_model
    from qcthermo.species import species_thermo
    from qcthermo.units import entropy_to_j_mol_k

    gas = ct.Solution(str(sample_out / "thermo.yaml"))
    table = pd.read_csv(sample_out / "heats_of_formation.csv")
    chosen = table[table["nasa7"]].set_index("species")["dfH_298_kJ_mol"]
    assert set(gas.species_names) == set(chosen.index)
    gas.TP = 298.15, ct.one_atm
    h = dict(zip(gas.species_names, gas.standard_enthalpies_RT * ct.gas_constant * 298.15 / 1e6, strict=True))
    for name, value in chosen.items():
        assert h[name] == pytest.approx(value, abs=1e-6)
    assert h["ch4"] == pytest.approx(-74.873, abs=1e-6)  # JANAF, as reactions.toml gives it
    cond = sample_results.conditions.replace(temperature=np.array([298.15, 1000.0]), standard_state="1atm",
                                             low_mode_model=fit_model(sample_results.conditions.low_mode_model)[0])
    for name in ("ch3", "hcn", "water_gas"):
        engine = entropy_to_j_mol_k(species_thermo(sample_results.species_results[name], cond).values["cp"])
        species = gas.species(name)
        note = species.input_data["note"]
        limit = float(note.split("cp within ")[1].split(" %")[0]) / 100
        for t, cp in zip((298.15, 1000.0), engine, strict=True):
            assert species.thermo.cp(t) / 1000 == pytest.approx(cp, rel=1.05 * limit + 1e-6)
    # the left-out species are named at the top of the file, and in the findings
    text = (sample_out / "thermo.yaml").read_text()
    assert "left out (no heat of formation, so no place on this reference): formaldehyde" in text
    assert any(f.subject == "thermo.yaml" and "species left out of thermo.yaml" in f.message and "pentane" in f.message
               for f in sample_results.findings)


def test_anchoring_against_gri30_methane():
    # GRI-Mech 3.0 (Cantera's gri30.yaml) CH4: a fit of the engine's CH4 (experimental geometry and fundamentals,
    # from memory) anchored at gri30's own h(298.15) follows gri30's h(T) within the RRHO model's error
    import cantera as ct

    from qcthermo.export.nasa7 import nasa7_from_molecule

    gri = ct.Solution("gri30.yaml").species("CH4").thermo
    (symbols, xyz), freqs, mult, sigma = MOLECULES["CH4"]
    mol = Molecule(symbols, xyz, freqs, multiplicity=mult, symmetry_number=sigma)
    fit = nasa7_from_molecule(mol, Conditions(low_mode_model="rrho"), t_low=298.15, h_reference=gri.h(298.15) / 1e6)
    assert fit.enthalpy(298.15) == pytest.approx(gri.h(298.15) / 1000, abs=1e-6)
    for t in (400.0, 500.0):  # J/mol
        assert fit.enthalpy(t) == pytest.approx(gri.h(t) / 1000, abs=20.0)
    # at 1000 K the harmonic model of the fundamentals misses anharmonic heat capacity: 1.2 % of h(T) - h(298.15)
    rise = (gri.h(1000.0) - gri.h(298.15)) / 1000
    assert fit.enthalpy(1000.0) - fit.enthalpy(298.15) == pytest.approx(rise, rel=0.02)
    assert "heat of formation -74.600 kJ/mol" in fit.note  # gri30 CH4: -74.600 kJ/mol at 298.15 K


BAD_FORMATION = [
    ('atoms = ["nope"]', "unknown species 'nope'"),
    ("references = { ch4 = \"x\" }", "expected kJ/mol at 298.15 K"),
    ('reactions = { ch3 = "missing" }', "is not the name of a [[reaction]]"),
    ('reactions = { hcn = "h_abstraction" }', "does not hold 'hcn'"),
    ('bond_corrections = { "C=H" = 1.0 }', "expected two element symbols"),
    ("atom_corrections = { Xyz = 1.0 }", "is not an element symbol"),
    ("colour = 1", "unknown key 'colour'"),
]


@pytest.mark.parametrize("line, message", BAD_FORMATION, ids=[b[1] for b in BAD_FORMATION])
def test_bad_formation_table_is_one_line_with_its_line(samples, tmp_path, line, message):
    from qcthermo.errors import ReactionFileError
    from qcthermo.reactions import load_reaction_file

    text = (samples / "reactions.toml").read_text()
    start = text.index("[heats_of_formation]")
    end = text.index("\n\n", start)
    path = tmp_path / "reactions.toml"
    body = text[:start] + "[heats_of_formation]\n" + line + "\n" + text[end:]
    path.write_text(body.replace('"gas/', f'"{samples.as_posix()}/gas/').replace('"sp/', f'"{samples.as_posix()}/sp/')
                    .replace('"solvent/', f'"{samples.as_posix()}/solvent/')
                    .replace('"conformers/', f'"{samples.as_posix()}/conformers/')
                    .replace('"solution/', f'"{samples.as_posix()}/solution/')
                    .replace('"scans/', f'"{samples.as_posix()}/scans/'))
    with pytest.raises(ReactionFileError) as err:
        load_reaction_file(path)
    assert message in str(err.value) and "\n" not in str(err.value)
    assert f"line {body[:body.index(line)].count(chr(10)) + 1}" in str(err.value)


# -- the mechanism: reactions in thermo.yaml and thermo.dat ------------------------------------------------


def test_cantera_rate_constants_are_the_runs(sample_results, sample_out):
    # Cantera (the outside reader) loads thermo.yaml as a mechanism: its forward rate constants at the run's
    # temperatures are rates.csv's k_forward (1 M standard state: M^-1 s^-1 = m^3 kmol^-1 s^-1, Cantera's unit)
    # within the error each fit states; its reverse ones (from the thermo data) are the run's k_reverse within
    # that error and the stated thermo deviation
    import cantera as ct

    gas = ct.Solution(str(sample_out / "thermo.yaml"))
    equations = [r.equation for r in gas.reactions()]
    fits = {r.name: r for r in sample_results.mechanism}
    rates = sample_results.rates
    for equation, name in (("ch4 + h <=> ch3 + h2", "h_abstraction"), ("hcn <=> hnc", "hcn_isomerisation")):
        i = equations.index(equation)
        fit = fits[name]
        assert (fit.t_min, fit.t_max) == (300.0, 1000.0)
        assert 0 < fit.max_rel_error < 0.2
        rows = rates[rates["reaction"] == name]
        assert set(rows["k_unit_forward"]) <= {"M^-1 s^-1", "s^-1"}
        for t, kf, kr in zip(rows["T_K"], rows["k_forward"], rows["k_reverse"], strict=True):
            gas.TP = t, ct.one_atm
            assert gas.forward_rate_constants[i] == pytest.approx(kf, rel=1.0001 * fit.max_rel_error)
            assert gas.reverse_rate_constants[i] == pytest.approx(kr, rel=1.01 * fit.max_rel_error + 0.005)
    # the reactions without a transition state (and without a rate) or in solution are left out, and said so
    text = (sample_out / "thermo.yaml").read_text()
    assert "# formaldehyde_hydration: left out, not a gas-phase reaction" in text


def test_chemkin_mechanism_through_ck2yaml(sample_out, tmp_path):
    # Cantera's own Chemkin converter (cantera.ck2yaml) reads thermo.dat as a whole mechanism: the same species,
    # h(298.15) and rate constants as thermo.yaml, to the precision of Chemkin's printed columns
    import cantera as ct
    from cantera import ck2yaml

    out = tmp_path / "from_chemkin.yaml"
    ck2yaml.convert(str(sample_out / "thermo.dat"), out_name=str(out), quiet=True)
    chemkin, yaml = ct.Solution(str(out)), ct.Solution(str(sample_out / "thermo.yaml"))
    assert chemkin.species_names == yaml.species_names and chemkin.n_reactions == yaml.n_reactions >= 2
    for t in (300.0, 650.0, 1000.0):
        chemkin.TP = yaml.TP = t, ct.one_atm
        np.testing.assert_allclose(chemkin.forward_rate_constants, yaml.forward_rate_constants, rtol=1e-3)
        np.testing.assert_allclose(chemkin.standard_enthalpies_RT * t, yaml.standard_enthalpies_RT * t, atol=1e-3)
    assert "REACTIONS KJOULES/MOLE MOLES" in (sample_out / "thermo.dat").read_text()


def test_one_temperature_run_fits_the_mechanism_over_its_own_range(samples, isomerisation_file):
    # a run at one temperature has no Arrhenius fit of its own; the mechanism's k(T) is the same science over
    # 300-2000 K (docs/formation.md), checked against the Eyring equation at 1000 K from the run's own numbers
    import qcthermo
    from qcthermo.kinetics import eyring_rate
    from qcthermo.run_kinetics import MECHANISM_TEMPERATURES

    res = qcthermo.run(samples / "gas", reactions=isomerisation_file, jobs=1, cache=False)
    (reaction,) = res.mechanism
    assert (reaction.t_min, reaction.t_max) == (MECHANISM_TEMPERATURES[0], MECHANISM_TEMPERATURES[-1])
    at = list(reaction.temperature).index(1000.0)
    # unimolecular: k = kappa kT/h exp(-dG/RT) with no standard-state factor; kappa >= 1 (Eckart, a deep barrier)
    cond = res.conditions.replace(temperature=1000.0)
    run_k = qcthermo.run(samples / "gas", reactions=isomerisation_file, conditions=cond, jobs=1, cache=False)
    dg = float(run_k.reactions["dG_act_kcal_mol"].iloc[0]) * 4184.0 / (qcthermo.units.HARTREE_J * qcthermo.units.N_A)
    k_eyring, _ = eyring_rate(dg, 1000.0, 1)
    assert reaction.k_forward[at] == pytest.approx(float(run_k.reactions["k_forward"].iloc[0]), rel=1e-9)
    assert 1.0 <= reaction.k_forward[at] / k_eyring < 1.5


def test_report_states_the_enthalpy_reference(sample_out, samples, isomerisation_file, tmp_path):
    # without [heats_of_formation] the NASA-7 files are on absolute energies, and the report says so at its top
    import html

    import qcthermo

    report = html.unescape((sample_out / "report.html").read_text())
    assert "thermo.yaml, thermo.dat:</strong> ENTHALPY REFERENCE: standard heats of formation" in report
    res = qcthermo.run(samples / "gas", reactions=isomerisation_file, jobs=1, cache=False)
    res.write(tmp_path / "out")
    report = html.unescape((tmp_path / "out" / "report.html").read_text())
    assert report.index("ENTHALPY REFERENCE: absolute electronic energies") < report.index('id="audit"')
    assert "ENTHALPY REFERENCE: absolute electronic energies" in (tmp_path / "out" / "thermo.dat").read_text()


@pytest.mark.parametrize("state, factor", [("1M", 1.0), ("1atm", 6.02214076e23 / 1000.0)])
def test_a_given_rate_enters_the_mechanism(samples, state, factor):
    # a step without a transition state but with a rate constant in the reaction file (the unit of the run's rate
    # constants: M^-1 s^-1 at 1 M, cm^3 molecule^-1 s^-1 at 1 atm; N_A / 1000 L/mol per cm^3/molecule, CODATA):
    # Cantera reads it as k = A (n = 0, Ea = 0) in m^3 kmol^-1 s^-1, and its reverse from the thermo data is
    # k / K with K = exp(-dG/RT) of the run's species at 1 mol/L (the law of mass action)
    import cantera as ct

    import qcthermo
    from qcthermo.reactions import load_reaction_file
    from qcthermo.run_kinetics import in_solvent
    from qcthermo.workflow import default_conditions

    rf = load_reaction_file(samples / "reactions.toml")
    recombination = next(r for r in rf.reactions if r.name == "methyl_recombination")
    recombination.rate = 2.0e11 if state == "1M" else 2.0e11 / factor
    rf.heats_of_formation = None  # absolute energies: the file's K is the run's (heats of formation would
    # correct the computed H-H and C-H bond energies, and K with them: docs/formation.md, "Reversibility")
    cond = default_conditions(rf).replace(temperature=np.array([300.0, 600.0, 900.0]), standard_state=state)
    res = qcthermo.run(samples, reactions=rf, conditions=cond, jobs=1, cache=False)
    (mech,) = [r for r in res.mechanism if r.name == "methyl_recombination"]
    assert (mech.A, mech.n, mech.Ea) == pytest.approx((2.0e11, 0.0, 0.0), abs=1e-3)
    assert not in_solvent(res.species_results["ch3"])
    import tempfile
    from pathlib import Path

    from qcthermo.export.nasa7 import write_run_thermo

    with tempfile.TemporaryDirectory() as out:
        write_run_thermo(res, out)
        gas = ct.Solution(str(Path(out) / "thermo.yaml"))
    i = [r.equation for r in gas.reactions()].index("ch3 + h <=> ch4")
    g = {n: res.species_results[n].values["G"] for n in ("ch3", "h", "ch4")}
    for j, t in enumerate(cond.temperature):
        gas.TP = t, ct.one_atm
        assert gas.forward_rate_constants[i] == pytest.approx(2.0e11, rel=1e-9)
        if state == "1M":
            k_eq = np.exp(-(g["ch4"][j] - g["ch3"][j] - g["h"][j]) / (qcthermo.units.K_B_EH * t))  # 1/M
            assert gas.reverse_rate_constants[i] == pytest.approx(2.0e11 / k_eq, rel=5e-3)


def test_reverse_note_names_the_heats_of_formation_shift(sample_results, sample_out):
    # Hess's law: the file's K_c of CH3 + H -> CH4 holds dH_r from the table's heats of formation, the run's k_reverse
    # the computed dH_r; the note states the difference (MP2/cc-pVTZ's H-H bond error, as the H2 atomization row
    # shows), and Cantera's reverse rate constant is off the run's by exactly that factor
    import re

    import cantera as ct

    table = sample_results.heats_of_formation
    dfh = table[table["nasa7"]].set_index("species")["dfH_298_kJ_mol"]
    one = sample_results.species.set_index(["species", "T_K"])["H_Eh"]
    h = {n: one[n, 300.0] for n in ("ch3", "h", "ch4")}
    computed = (h["ch4"] - h["ch3"] - h["h"]) * KJ_MOL_PER_EH
    from_table = dfh["ch4"] - dfh["ch3"] - dfh["h"]
    text = (sample_out / "thermo.yaml").read_text()
    stated = float(re.search(r"methyl_recombination: k_forward given in the reaction file; reverse from the thermo "
                             r"data: its reaction free energy differs from the run's by up to ([0-9.]+) kJ/mol",
                             text)[1])
    assert stated == pytest.approx(abs(from_table - computed), abs=0.5)
    gas = ct.Solution(str(sample_out / "thermo.yaml"))
    i = [r.equation for r in gas.reactions()].index("ch3 + h <=> ch4")
    (mech,) = [r for r in sample_results.mechanism if r.name == "methyl_recombination"]
    gas.TP = mech.temperature[0], ct.one_atm
    ratio = gas.reverse_rate_constants[i] / mech.k_reverse[0]
    assert abs(8.314462618e-3 * mech.temperature[0] * np.log(ratio)) == pytest.approx(stated, abs=0.5)

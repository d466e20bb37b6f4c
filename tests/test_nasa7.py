"""NASA-7 fits and their hand-off to kinetics codes, checked with Cantera (a test dependency)."""

import html
from pathlib import Path

import cantera as ct  # a test dependency (pyproject.toml): missing is a failure, not a skip
import numpy as np
import pytest

import qcthermo
from qcthermo.errors import QcthermoError
from qcthermo.export.nasa7 import (
    Nasa7Fit,
    chemkin_text,
    enthalpy_offset,
    fit_nasa7,
    nasa7_from_molecule,
    write_cantera_yaml,
    write_chemkin,
)
from qcthermo.records import Conditions, Molecule
from qcthermo.units import HARTREE_J, N_A, entropy_to_j_mol_k

GAS = Path(__file__).resolve().parent.parent / "sample_outputs" / "gas"
T20 = np.linspace(300.0, 3000.0, 20)


def _cantera_values(species, temperatures):
    """cp, h, s (J/mol, J/(mol K)) of a Cantera species thermo object (Cantera works per kmol)."""
    cp = np.array([species.thermo.cp(t) for t in temperatures]) / 1000.0
    h = np.array([species.thermo.h(t) for t in temperatures]) / 1000.0
    s = np.array([species.thermo.s(t) for t in temperatures]) / 1000.0
    return cp, h, s


def test_fit_recovers_one_nasa_polynomial():
    # data evaluated by Cantera from one NASA-7 set (GRI-Mech 3.0's CH4 high-range coefficients, Cantera's
    # bundled gri30.yaml) on both ranges: the fit must give that set back on both sides of t_mid
    coeffs = ct.Solution("gri30.yaml").species("CH4").thermo.input_data["data"][1]
    poly = ct.NasaPoly2(300.0, 3000.0, ct.one_atm, [1000.0, *coeffs, *coeffs])
    temps = np.arange(300.0, 3001.0, 10.0)
    cp, h, s = (np.array([f(t) for t in temps]) / 1000.0 for f in (poly.cp, poly.h, poly.s))
    fit = fit_nasa7(temps, cp, h, s)
    np.testing.assert_allclose(fit.low, coeffs, rtol=1e-6)
    np.testing.assert_allclose(fit.high, coeffs, rtol=1e-6)
    assert fit.max_cp_rel_error < 1e-9


def test_fit_reproduces_gri_water_and_is_continuous():
    # GRI-Mech 3.0 H2O (Cantera's gri30.yaml) evaluated by Cantera over 300-3000 K
    water = ct.Solution("gri30.yaml").species("H2O")
    temps = np.arange(300.0, 3001.0, 10.0)
    cp, h, s = _cantera_values(water, temps)
    fit = fit_nasa7(temps, cp, h, s)
    assert fit.max_cp_rel_error < 1e-4 and fit.max_h_error < 1.0 and fit.max_s_error < 1e-3
    # continuity at t_mid of cp, h, s and of dcp/dT, the constraints of the fit
    for quantity in ("cp", "enthalpy", "entropy"):
        low = getattr(Nasa7Fit, quantity)(fit, 1000.0)
        high = getattr(_high_only(fit), quantity)(1000.0)
        assert low == pytest.approx(high, rel=1e-12)
    assert _slope(fit.low, 1000.0) == pytest.approx(_slope(fit.high, 1000.0), rel=1e-9)


def _high_only(fit: Nasa7Fit) -> Nasa7Fit:
    """The same fit evaluated with its high-range set everywhere."""
    return Nasa7Fit(fit.name, fit.composition, fit.t_low, 0.0, fit.t_high, fit.high, fit.high)


def _slope(a, t):
    """d(cp/R)/dT of the NASA-7 form: a2 + 2 a3 T + 3 a4 T^2 + 4 a5 T^3."""
    return a[1] + 2 * a[2] * t + 3 * a[3] * t**2 + 4 * a[4] * t**3


def _molecule(name: str) -> Molecule:
    return Molecule.from_calculation(qcthermo.read_log(GAS / f"{name}.out"), name=name.upper())


def _engine_molar(mol: Molecule, temperatures, conditions: Conditions | None = None):
    # what a default fit computes: Conditions()'s qrrho made thermodynamically consistent (docs/kinetics.md)
    base = conditions or Conditions(low_mode_model="qrrho-enthalpy")
    res = qcthermo.thermochemistry(mol, base.replace(temperature=temperatures, standard_state="1atm"))
    return (entropy_to_j_mol_k(np.asarray(res.cp)), np.asarray(res.enthalpy) * HARTREE_J * N_A,
            entropy_to_j_mol_k(np.asarray(res.entropy)))


@pytest.mark.parametrize(("names", "t_mid"), [(["water", "o2", "ch3", "h_atom", "h2"], 1000.0),
                                               (["ch4", "water"], "auto")])
def test_thermo_yaml_loaded_by_cantera_matches_the_engine(tmp_path, names, t_mid):
    # Cantera reads thermo.yaml; its cp, h, s at 20 temperatures agree with the engine's own values to 0.1 %
    # (h also to 10 J/mol, 0.0024 kcal/mol); the bundled sample scenario's B3LYP/6-31G* outputs
    molecules = [_molecule(n) for n in names]
    fits = [nasa7_from_molecule(m, t_mid=t_mid) for m in molecules]
    path = write_cantera_yaml(fits, tmp_path / "thermo.yaml")
    gas = ct.Solution(str(path))
    assert gas.species_names == [n.upper() for n in names]
    for mol in molecules:
        cp, h, s = _cantera_values(gas.species(mol.name), T20)
        cp_e, h_e, s_e = _engine_molar(mol, T20)
        np.testing.assert_allclose(cp, cp_e, rtol=1e-3)
        np.testing.assert_allclose(h, h_e, rtol=1e-3, atol=0)
        np.testing.assert_allclose(h, h_e, atol=10.0, rtol=0)
        np.testing.assert_allclose(s, s_e, rtol=1e-3)


def test_cantera_reaction_free_energy_matches_the_engine(tmp_path):
    # CH4 + H -> CH3 + H2 (the sample scenario's abstraction): the standard Gibbs energy of reaction that
    # Cantera computes from thermo.yaml (huge absolute H with E_elec inside) equals the engine's
    names = ["ch4", "h_atom", "ch3", "h2"]
    molecules = [_molecule(n) for n in names]
    gas = ct.Solution(str(write_cantera_yaml([nasa7_from_molecule(m) for m in molecules], tmp_path / "t.yaml")))
    stoich = np.array([-1, -1, 1, 1])
    temps = np.array([400.0, 1000.0, 2000.0])
    fitted = Conditions(low_mode_model="qrrho-enthalpy")  # what the default fit computed
    g_engine = np.array([[qcthermo.thermochemistry(m, fitted.replace(temperature=t)).gibbs for m in molecules]
                         for t in temps]) @ stoich * HARTREE_J * N_A
    g_cantera = []
    for t in temps:
        gas.TP = t, ct.one_atm
        g_cantera.append(gas.standard_gibbs_RT @ stoich * ct.gas_constant / 1000.0 * t)
    np.testing.assert_allclose(g_cantera, g_engine, atol=20.0)  # J/mol


def test_thermo_dat_parsed_by_ck2yaml(tmp_path):
    # Cantera's own Chemkin converter (cantera.ck2yaml) reads thermo.dat back to the same polynomials
    # (to the 9 significant digits of E15.8), including a five-element species on a continuation line
    from cantera import ck2yaml

    fits = [nasa7_from_molecule(_molecule(n), t_mid="auto") for n in ("ch4", "water", "h_atom")]
    many = Nasa7Fit("C2H5NOS", {"C": 2, "H": 5, "N": 1, "O": 1, "S": 1}, 300.0, 1000.0, 3000.0,
                    fits[0].low, fits[0].high)
    path = write_chemkin([*fits, many], tmp_path / "thermo.dat")
    ck2yaml.convert(None, thermo_file=str(path), out_name=str(tmp_path / "ck.yaml"), quiet=True)
    species = {sp.name: sp for sp in ct.Species.list_from_file(str(tmp_path / "ck.yaml"))}
    assert list(species) == ["CH4", "WATER", "H_ATOM", "C2H5NOS"]
    assert species["C2H5NOS"].composition == {"C": 2, "H": 5, "N": 1, "O": 1, "S": 1}
    for fit in fits:
        data = species[fit.name].thermo.input_data
        assert data["temperature-ranges"] == [fit.t_low, fit.t_mid, fit.t_high]
        np.testing.assert_allclose(data["data"][0], fit.low, rtol=6e-9)
        np.testing.assert_allclose(data["data"][1], fit.high, rtol=6e-9)
    # the fixed columns (Chemkin-II manual, Kee et al., SAND89-8009): 80 wide, line numbers in col 80
    entry = [line for line in path.read_text().splitlines() if line[:3] == "CH4" or line[-1:] in "234"][:4]
    assert [len(line) for line in entry] == [80] * 4 and [line[79] for line in entry] == list("1234")
    assert entry[0][44] == "G" and entry[0][24:34] == "C   1H   4"


def test_atomisation_enthalpy_reference():
    # atomisation-based heat of formation (Curtiss et al., J. Chem. Phys. 1997, 106, 1063):
    # dHf(M) = sum dHf(atoms) - [sum H(atoms) - H(M)], with H of the atom at the same level of theory (the
    # sample scenario's H atom) and dHf(H, 298.15 K) = 217.998 kJ/mol (ATcT, from memory)
    h2, h_atom = _molecule("h2"), _molecule("h_atom")
    h_atom_eh = qcthermo.thermochemistry(h_atom, Conditions(temperature=298.15)).enthalpy
    h_h2_eh = qcthermo.thermochemistry(h2, Conditions(temperature=298.15)).enthalpy
    reference = {"H": (h_atom_eh, 217.998)}
    fit = nasa7_from_molecule(h2, h_reference=reference)
    expected = 2 * 217.998e3 - (2 * h_atom_eh - h_h2_eh) * HARTREE_J * N_A
    assert fit.enthalpy(298.15) == pytest.approx(expected, abs=5.0)
    # dHf(H2) = 0 by definition (the element in its reference state); a DFT atomisation energy is good to
    # ~10 kJ/mol for a small molecule (common practice)
    assert abs(fit.enthalpy(298.15)) < 10e3
    assert "atomisation" in fit.note
    # the offset is a constant per element: the same reaction enthalpies as the electronic reference
    electronic = nasa7_from_molecule(h2)
    offset, _ = enthalpy_offset(h2.symbols, reference)
    assert fit.enthalpy(1500.0) - electronic.enthalpy(1500.0) == pytest.approx(offset, abs=5.0)
    with pytest.raises(QcthermoError, match="missing"):
        enthalpy_offset(_molecule("water").symbols, reference)


def test_bad_species_names_are_refused_with_a_reason():
    fit = Nasa7Fit("A B", {"H": 1}, 300.0, 1000.0, 3000.0, (2.5, 0, 0, 0, 0, 0, 0), (2.5, 0, 0, 0, 0, 0, 0))
    with pytest.raises(QcthermoError, match="without spaces"):
        chemkin_text([fit])
    # longer than Chemkin's 18 characters: short unique names (first characters and _k), never a refusal
    longs = [Nasa7Fit(name, {"H": 1}, 300.0, 1000.0, 3000.0, fit.low, fit.high)
             for name in ("X" * 19, "X" * 20, "X" * 16 + "_1")]
    entries = [line[:18].rstrip() for line in chemkin_text(longs).splitlines() if line.endswith("1")
               and line.startswith("X")]
    assert entries == ["X" * 16 + "_2", "X" * 16 + "_3", "X" * 16 + "_1"]
    twin = Nasa7Fit("H", {"H": 1}, 300.0, 1000.0, 3000.0, fit.low, fit.high)
    with pytest.raises(QcthermoError, match="unique"):
        chemkin_text([twin, twin])
    bar = Nasa7Fit("H", {"H": 1}, 300.0, 1000.0, 3000.0, fit.low, fit.high, reference_pressure=1e5)
    with pytest.raises(QcthermoError, match="1 atm"):
        chemkin_text([bar])


def _pentane(temperatures):
    """The sample scenario's n-pentane conformer ensemble (GFN2-xTB), built as the main job builds it."""
    from qcthermo.species import build_species

    calcs = [qcthermo.read_log(p) for p in sorted((GAS.parent / "conformers").glob("pentane_*.out"))]
    return build_species("pentane", calcs, Conditions(temperature=temperatures, low_mode_model="rrho"))


def test_ensemble_heat_capacity_is_the_derivative_of_the_ensemble_enthalpy():
    # cp of a Boltzmann ensemble = d<H>/dT (its definition), here by central differences of the main job's
    # own ensemble enthalpy (qcthermo.species.species_thermo, populations from G_i) against its cp
    temps = np.array([299.0, 300.0, 301.0, 999.0, 1000.0, 1001.0])
    sp = _pentane(temps)
    used = sp.used
    assert len(used) > 2
    numeric = (sp.values["H"][[2, 5]] - sp.values["H"][[0, 3]]) / 2.0
    np.testing.assert_allclose(sp.values["cp"][[1, 4]], numeric, rtol=1e-5)
    pops = np.array([c.population for c in used])
    cp = np.array([np.asarray(c.thermo.cp) for c in used])
    assert np.all(sp.values["cp"] > (pops * cp).sum(axis=0))  # the conformational term is positive


def test_species_fit_follows_the_main_jobs_ensemble():
    # the NASA-7 fit of a conformer ensemble reproduces the ensemble S and G that the main job computes
    # (qcthermo.species: Boltzmann sum over distinct conformers, mirror images counted)
    from qcthermo.export.nasa7 import nasa7_from_species

    temps = np.array([300.0, 500.0, 800.0, 1200.0, 2000.0])
    sp = _pentane(temps)
    fit = nasa7_from_species(sp, Conditions(low_mode_model="rrho"))
    s_main = entropy_to_j_mol_k(sp.values["S"])
    g_main = sp.values["G"] * HARTREE_J * N_A
    np.testing.assert_allclose(fit.entropy(temps), s_main, atol=0.1)  # J/(mol K)
    np.testing.assert_allclose(fit.enthalpy(temps) - temps * fit.entropy(temps), g_main, atol=60.0)  # J/mol
    assert "conformers" in fit.note


def test_run_thermo_files_and_a_name_too_long_for_chemkin(tmp_path):
    from types import SimpleNamespace

    from qcthermo.export.nasa7 import write_run_thermo
    from qcthermo.species import SpeciesOptions, build_species

    cond = Conditions(temperature=298.15)
    species = {name: build_species(name, [qcthermo.read_log(GAS / f"{log}.out")], cond)
               for name, log in (("water", "water"), ("methyl_radical_long_name", "ch3"))}
    ts = build_species("ts", [qcthermo.read_log(GAS / "ts_abstraction.out")], cond,
                       SpeciesOptions(transition_state=True))
    results = SimpleNamespace(species_results={**species, "ts": ts}, conditions=cond, findings=[])
    written = write_run_thermo(results, tmp_path)
    assert [p.name for p in written] == ["thermo.yaml", "thermo.dat"]
    assert ct.Solution(str(tmp_path / "thermo.yaml")).species_names == ["water", "methyl_radical_long_name"]
    # Chemkin's 18 characters (Chemkin-II manual, SAND89-8009): a short unique name, the full one in the header;
    # Cantera's converter reads the file with the short name
    text = (tmp_path / "thermo.dat").read_text()
    assert "!   methyl_radical_l_1 = methyl_radical_long_name" in text
    from cantera import ck2yaml

    ck2yaml.convert(None, thermo_file=str(tmp_path / "thermo.dat"), out_name=str(tmp_path / "ck.yaml"), quiet=True)
    assert "methyl_radical_l_1" in (tmp_path / "ck.yaml").read_text()


def test_real_log_fit_reports_its_own_error_honestly(third_party, tmp_path):
    # a real Gaussian 16 log (p-divinylbenzene, many low modes): Cantera's values from thermo.yaml differ
    # from the engine's by no more than the errors the fit reports (checked on a grid the fit did not use)
    mol = Molecule.from_calculation(qcthermo.read_log(third_party / "gaussian16" / "dvb_ir.out"), name="dvb")
    fit = nasa7_from_molecule(mol)
    gas = ct.Solution(str(write_cantera_yaml([fit], tmp_path / "thermo.yaml")))
    temps = np.linspace(305.0, 2995.0, 37)  # between the fitted 10 K points
    cp, h, s = _cantera_values(gas.species("dvb"), temps)
    cp_e, h_e, s_e = _engine_molar(mol, temps)
    assert np.max(np.abs(cp / cp_e - 1)) <= 1.05 * fit.max_cp_rel_error
    assert np.max(np.abs(h - h_e)) <= 1.05 * fit.max_h_error
    assert np.max(np.abs(s - s_e)) <= 1.05 * fit.max_s_error
    assert fit.max_cp_rel_error < 5e-3  # a few tenths of a percent: the limit of the NASA-7 form


@pytest.mark.parametrize("model, fitted", [("qrrho", "qrrho-enthalpy"), ("rrho", "rrho"),
                                           ("quasi-harmonic", "quasi-harmonic")])
def test_thermo_files_and_report_name_the_model_of_the_fit(tmp_path, samples, isomerisation_file, model, fitted):
    # docs/kinetics.md, "Low-mode model": a NASA-7 s is the integral of cp/T (McBride et al., NASA TM-4513), which
    # Grimme's qrrho S is not, so a qrrho run is fitted with qrrho-enthalpy and every file says so; other models
    # are fitted as the tables have them
    cond = Conditions(temperature=np.array([250.0, 300.0]), low_mode_model=model)
    res = qcthermo.run(samples / "gas", reactions=isomerisation_file, conditions=cond, jobs=1, cache=False)
    res.write(tmp_path / "out")
    sentence = f"fitted with low-mode model {fitted}, not the tables' {model}" if fitted != model \
        else f"fitted with the tables' low-mode model, {model}"
    yaml_text = (tmp_path / "out" / "thermo.yaml").read_text()
    dat_text = (tmp_path / "out" / "thermo.dat").read_text()
    assert yaml_text.startswith(f"# {sentence}") and f"! {sentence}" in dat_text.splitlines()[1]
    assert f"low-mode model {fitted}" in ct.Solution(str(tmp_path / "out" / "thermo.yaml")).species("hcn").input_data[
        "note"]
    report = html.unescape((tmp_path / "out" / "report.html").read_text())
    assert sentence in res.settings["nasa7"] and sentence in report

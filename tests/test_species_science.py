"""The species function (qcthermo.species.species_thermo) against values from outside the project: energies
and thermal corrections printed in the sample logs (NWChem 7.0.2, xTB 6.5.1), textbook equations, Eyring."""

import re
from dataclasses import replace

import numpy as np
import pytest
from scipy import constants

import qcthermo
from qcthermo.records import Conditions
from qcthermo.species import SpeciesOptions, build_species, species_thermo
from qcthermo.units import ENERGY_UNITS, K_B_EH

KCAL = ENERGY_UNITS["kcal/mol"]
T = 298.15
#: cal/(mol K) -> hartree/K per molecule
CAL_MOL_K = constants.calorie / constants.N_A / constants.physical_constants["Hartree energy"][0]
#: multiplicities of the sample species (sample_outputs/README.md, "Every file")
MULTIPLICITY = {"h2": 1, "o2": 3, "water": 1, "ch4": 1, "ts_abstraction": 2, "ch3": 2}


def _printed(path, pattern) -> float:
    """The last number a log prints after ``pattern`` (the final value of an optimisation)."""
    return float(re.findall(pattern + r"\s*(-?\d+\.\d+)", path.read_text())[-1])


def _by_hand(samples, name) -> tuple[float, float]:
    """H and G (hartree, 298.15 K, 1 atm) of a gas species from its logs' printed numbers alone:
    H = E(MP2) + the NWChem "Thermal correction to Enthalpy" (au), G = H - T S with NWChem's "Total Entropy"
    (translation, rotation, vibration) plus the electronic R ln(2S+1) it leaves out (McQuarrie eq. 5-27)."""
    freq = samples / "gas" / f"{name}.out"
    e_mp2 = _printed(samples / "sp" / f"{name}_mp2.out", r"Total MP2 energy")
    h = e_mp2 + _printed(freq, r"Thermal correction to Enthalpy\s*=\s*-?\d+\.\d+ kcal/mol\s*\(")
    s = _printed(freq, r"Total Entropy\s*=") * CAL_MOL_K + K_B_EH * np.log(MULTIPLICITY[name])
    return h, h - T * s


def _h_atom_by_hand(samples) -> tuple[float, float]:
    """H and G of the H atom (no frequencies): H = E(MP2) + 5/2 kT, S = Sackur-Tetrode + k ln 2 (the ideal
    monatomic gas, McQuarrie eq. 5-20, from memory), mass of 1H 1.00782503 u (from memory), 1 atm."""
    e = _printed(samples / "sp" / "h_atom_mp2.out", r"Total MP2 energy")
    m = 1.00782503 * constants.atomic_mass
    kt = constants.k * T
    q_per_v = (2 * np.pi * m * kt / constants.h**2) ** 1.5
    s = K_B_EH * (np.log(q_per_v * kt / constants.atm) + 2.5 + np.log(2))
    h = e + 2.5 * K_B_EH * T
    return h, h - T * s


COMPOSITE = """
[conditions]
temperature = 298.15
standard_state = "1atm"
low_mode_model = "qrrho"
{species}
[[reaction]]
name = "water_formation"
reactants = ["2 h2", "o2"]
products = ["2 water"]

[[reaction]]
name = "abstraction"
reactants = ["ch4", "h"]
transition_state = "ts_abstraction"
products = ["ch3", "h2"]
"""


def _composite_file(tmp_path, samples, single_points=True):
    sp = {n: f'\nsingle_point = "{samples}/sp/{n}_mp2.out"' if single_points else "" for n in [*MULTIPLICITY, "h_atom"]}
    parts = [f'[species.{n}]\nlogs = "{samples}/gas/{n}.out"{sp[n]}\n' for n in MULTIPLICITY]
    parts.append(f'[species.h]\nlogs = "{samples}/gas/h_atom.out"{sp["h_atom"]}\n')
    path = tmp_path / f"composite_{single_points}.toml"
    path.write_text(COMPOSITE.format(species="".join(parts)))
    return path


def test_composite_reaction_enthalpy_and_free_energy_by_hand(tmp_path, samples):
    # MP2/cc-pVTZ//B3LYP/6-31G*: X = E(MP2) + [X - E](B3LYP) for H and G, every thermal term from the numbers
    # NWChem printed. Leaving the shift E(MP2) - E(B3LYP) out of H or G, or applying it twice, moves these
    # by kcal/mol; the engine's thermal corrections and those NWChem printed agree within 0.015 kcal/mol per
    # species (measured: constants and the printed rounding), within 0.006 kcal/mol for these reactions.
    res = qcthermo.run(samples, reactions=_composite_file(tmp_path, samples), jobs=1, cache=False)
    rows = res.reactions.set_index("reaction")
    v = {n: _by_hand(samples, n) for n in MULTIPLICITY} | {"h": _h_atom_by_hand(samples)}
    d_h = 2 * v["water"][0] - 2 * v["h2"][0] - v["o2"][0]
    d_g = 2 * v["water"][1] - 2 * v["h2"][1] - v["o2"][1]
    assert rows.loc["water_formation", "level"] == "MP2/cc-pVTZ//B3LYP/6-31G*"
    assert rows.loc["water_formation", "dH_kcal_mol"] == pytest.approx(d_h * KCAL, abs=0.02)
    assert rows.loc["water_formation", "dG_kcal_mol"] == pytest.approx(d_g * KCAL, abs=0.02)
    d_h_act = v["ts_abstraction"][0] - v["ch4"][0] - v["h"][0]
    d_g_act = v["ts_abstraction"][1] - v["ch4"][1] - v["h"][1]
    assert rows.loc["abstraction", "dH_act_kcal_mol"] == pytest.approx(d_h_act * KCAL, abs=0.02)
    assert rows.loc["abstraction", "dG_act_kcal_mol"] == pytest.approx(d_g_act * KCAL, abs=0.02)
    # the chosen model (qrrho) has the RRHO enthalpy (Grimme, Chem. Eur. J. 2012, 18, 9955: S alone changes) ...
    for name, (h, _) in v.items():
        assert res.species_results[name].values["H"][0] == pytest.approx(h, abs=0.015 / KCAL)
    # ... and its low-mode correction to G does not depend on the level of E: composite dG(qrrho) is the
    # by-hand RRHO value plus the correction of the B3LYP-only run (the scheme, applied to every model)
    low = qcthermo.run(samples, reactions=_composite_file(tmp_path, samples, False), jobs=1, cache=False)
    low_rows = low.reactions.set_index("reaction")
    for reaction, column, by_hand in (("water_formation", "dG", d_g), ("abstraction", "dG_act", d_g_act)):
        correction = low_rows.loc[reaction, column.replace("dG", "dG_qrrho") + "_kcal_mol"] \
            - low_rows.loc[reaction, f"{column}_kcal_mol"]
        assert rows.loc[reaction, column.replace("dG", "dG_qrrho") + "_kcal_mol"] == \
            pytest.approx(by_hand * KCAL + correction, abs=0.02)
    assert abs(correction) > 1e-4  # the correction is there (qrrho on the TS's soft modes)
    # E(MP2) itself, as printed, is the species' electronic energy
    water = res.species.set_index("species").loc["water"]
    assert water["E_elec_Eh"] == pytest.approx(_printed(samples / "sp" / "water_mp2.out", r"Total MP2 energy"),
                                               abs=1e-9)


def test_nasa7_fit_carries_the_composite_shift_once(samples):
    # the NASA-7 h of a composite species is E(MP2) + [H - E](B3LYP) at 298.15 K as NWChem printed it (its
    # "Thermal correction to Enthalpy"): the engine's correction differs from the printed one by 32 J/mol here
    # (measured), the shift E(MP2) - E(B3LYP) is about 0.1 Eh (2.6e5 J/mol)
    from qcthermo.export.nasa7 import nasa7_from_species
    from qcthermo.units import HARTREE_J, N_A

    sp = build_species("water", [qcthermo.read_log(samples / "gas" / "water.out")], Conditions(temperature=T),
                       single_points=[qcthermo.read_log(samples / "sp" / "water_mp2.out")])
    fit = nasa7_from_species(sp, Conditions(temperature=T, low_mode_model="rrho"))
    h_hand = _by_hand(samples, "water")[0] * HARTREE_J * N_A
    assert fit.enthalpy(T) == pytest.approx(h_hand, abs=fit.max_h_error + 50.0)  # J/mol


def _water(samples):
    return qcthermo.read_log(samples / "gas" / "water.out"), qcthermo.read_log(samples / "sp" / "water_mp2.out")


@pytest.mark.parametrize("change, why", [
    ({"multiplicity": 3}, "multiplicity"),
    ({"charge": 1}, "charge"),
])
def test_a_single_point_of_another_state_is_never_paired(samples, change, why):
    # the MP2 single point sp/water_mp2.out was run on the geometry of gas/water.out (RMSD 0, README); as
    # another solvent model, multiplicity or charge it is not that structure's energy: the conformer is left
    # out with an error naming the reason (docs/reactions.md, "Composite energies")
    freq, sp = _water(samples)
    species = build_species("water", [freq], Conditions(), single_points=[replace(sp, **change)])
    assert not species.usable
    errors = [f.message for f in species.findings if f.severity == "error"]
    assert any("no single point matches" in m and why in m for m in errors), errors


def test_a_gas_phase_single_point_of_a_solvated_structure_is_never_paired(samples):
    # the reverse of the solution protocol: a gas-phase energy is not the energy of a COSMO structure (the
    # MP2 water is on the gas-phase geometry, here declared as computed in COSMO)
    freq, sp = _water(samples)
    species = build_species("water", [replace(freq, solvent_model="cosmo")], Conditions(), single_points=[sp])
    assert not species.usable
    assert any("solvent model none (gas) is not cosmo" in f.message for f in species.findings), species.findings


def test_the_cosmo_water_is_not_the_single_point_of_the_gas_water(samples):
    # a real COSMO water on nearly the same geometry (solvent/water.out, its own COSMO optimisation, RMSD 0.004 A
    # from the gas-phase one): a solvent energy on a gas structure is the solution protocol, but only on the
    # structure's own geometry (1e-3 A, docs/reactions.md): this one is another geometry, never paired
    freq, _ = _water(samples)
    cosmo = qcthermo.read_log(samples / "solvent" / "water.out")
    species = build_species("water", [freq], Conditions(), single_points=[cosmo])
    assert not species.usable
    assert any("single point on another geometry: RMSD 0.00" in f.message for f in species.findings), \
        species.findings


def test_an_explicit_single_point_of_another_molecule_is_an_error(tmp_path, samples):
    # issue 10: single_point = {ch4.out = water_mp2.out} gave dG of 22534 kcal/mol with status ok; a formula
    # mismatch is an error and the energy is never used (CH4 and H2O, as the logs say)
    s = samples.as_posix()
    path = tmp_path / "mismatch.toml"
    path.write_text(f"""
[species.ch4]
logs = "{s}/gas/ch4.out"
single_point = {{ "{s}/gas/ch4.out" = "{s}/sp/water_mp2.out" }}
[species.h]
logs = "{s}/gas/h_atom.out"
[species.ch3]
logs = "{s}/gas/ch3.out"
[[reaction]]
name = "recombination"
reactants = ["ch3", "h"]
products = ["ch4"]
""")
    res = qcthermo.run(samples / "gas", reactions=path, jobs=1, cache=False)
    ch4 = res.species_results["ch4"]
    assert not ch4.usable and ch4.conformers[0].single_point is None
    assert any(f.severity == "error" and "formula H2O is not CH4" in f.message for f in ch4.findings)
    row = res.reactions.iloc[0]
    assert row["status"] == "excluded" and np.isnan(row["dG_kcal_mol"])
    assert res.exit_status == 1


def test_of_duplicate_conformers_the_lower_energy_copy_is_kept(samples):
    # pentane_tt/_tt_b and pentane_tgp/_tgp_b end in the same minima (sample_outputs/README.md); the copy kept is
    # the one of lower "TOTAL ENERGY" as xTB prints it, whichever order the files come in
    names = ["tt", "tt_b", "tgp", "tgp_b"]
    paths = {n: samples / "conformers" / f"pentane_{n}.out" for n in names}
    printed = {n: _printed(p, r"\| TOTAL ENERGY") for n, p in paths.items()}
    for order in (names, names[::-1]):
        sp = build_species("pentane", [qcthermo.read_log(paths[n]) for n in order], Conditions())
        kept = {c.path.rsplit("pentane_", 1)[1][:-4] for c in sp.used}
        expected = {min(pair, key=printed.get) for pair in (("tt", "tt_b"), ("tgp", "tgp_b"))}
        assert kept == expected == {"tt", "tgp_b"}


@pytest.mark.parametrize("model", ["rrho", "qrrho", "qrrho-enthalpy", "quasi-harmonic"])
def test_the_engines_cp_is_the_derivative_of_its_enthalpy(samples, model):
    # cp = (dH/dT)_p (its definition) by central differences of the engine's own H, on a real xTB log with soft
    # torsions (pentane G+G-, modes below the 100 cm^-1 threshold); for qrrho-enthalpy this is the
    # Head-Gordon Cv = w Cv_HO + (1 - w) k/2 (Li et al., J. Phys. Chem. C 2015, 119, 1840) plus k
    mol = qcthermo.Molecule.from_calculation(qcthermo.read_log(samples / "conformers" / "pentane_gpgm.out"))
    assert np.min(mol.frequencies) < 100.0
    t, step = np.array([150.0, 298.15, 1000.0]), 0.01
    grid = np.concatenate([t - step, t, t + step])
    r = qcthermo.thermochemistry(mol, Conditions(temperature=grid, low_mode_model=model))
    h, cp = np.asarray(r.enthalpy), np.asarray(r.cp)
    numeric = (h[6:] - h[:3]) / (2 * step)
    np.testing.assert_allclose(cp[3:6], numeric, rtol=1e-7)


def test_the_ensemble_cp_is_the_derivative_of_the_ensemble_enthalpy(samples):
    # the same for the species function on the pentane ensemble under qrrho-enthalpy (Head-Gordon H): its cp,
    # with the conformational term, is d<H>/dT by central differences
    t, step = np.array([200.0, 298.15, 800.0]), 0.01
    grid = np.concatenate([t - step, t, t + step])
    calcs = [qcthermo.read_log(p) for p in sorted((samples / "conformers").glob("pentane_*.out"))]
    sp = build_species("pentane", calcs, Conditions(temperature=grid, low_mode_model="qrrho-enthalpy"))
    h, cp = sp.values["H"], sp.values["cp"]
    np.testing.assert_allclose(cp[3:6], (h[6:] - h[:3]) / (2 * step), rtol=1e-6)


HYDRATION = """
[conditions]
temperature = [298.15, 350.0]
standard_state = "1M"
[species.formaldehyde]
logs = "{s}/solvent/formaldehyde.out"
[species.water]
logs = "{s}/solvent/water.out"
concentration = "55.3M"
[species.methanediol]
logs = "{s}/solvent/methanediol.out"
[species.ts]
logs = "{s}/solvent/ts_hydration.out"
{extra}
[[reaction]]
name = "hydration"
reactants = ["formaldehyde", "water"]
transition_state = "ts"
products = ["methanediol"]
"""


def _hydration(tmp_path, samples, extra):
    path = tmp_path / f"hydration_{len(extra)}.toml"
    path.write_text(HYDRATION.format(s=samples.as_posix(), extra=extra))
    return qcthermo.run(samples / "solvent", reactions=path, jobs=1, cache=False)


def test_both_enantiomers_of_a_chiral_transition_state_double_k(tmp_path, samples):
    # the four-centre saddle point is C1, chiral (qcthermo.symmetry); counted with its mirror image its G takes
    # -RT ln 2, and Eyring's k ~ exp(-dG_act/RT) (Eyring 1935) is then exactly twice as large, both ways
    one = _hydration(tmp_path, samples, "")
    both = _hydration(tmp_path, samples, "enantiomers = 2")  # a key of [species.ts]
    a, b = one.reactions, both.reactions
    np.testing.assert_allclose(b["k_forward"] / a["k_forward"], 2.0, rtol=1e-9)
    np.testing.assert_allclose(b["k_reverse"] / a["k_reverse"], 2.0, rtol=1e-9)
    np.testing.assert_allclose(a["kappa"], b["kappa"], rtol=1e-12)  # the barrier's shape is not the TS's G
    rt_ln2 = K_B_EH * b["T_K"].to_numpy() * np.log(2) * KCAL
    np.testing.assert_allclose(a["dG_act_kcal_mol"] - b["dG_act_kcal_mol"], rt_ln2, rtol=1e-9)
    ts_one, ts_both = one.species_results["ts"].values, both.species_results["ts"].values
    np.testing.assert_allclose(ts_both["S"] - ts_one["S"], K_B_EH * np.log(2), rtol=1e-9)
    np.testing.assert_allclose(ts_both["H"], ts_one["H"], rtol=0, atol=1e-12)
    # without the key: a warning on each chiral species; with it, a note in the species table instead
    warned = {f.subject.rsplit("/", 1)[1] for f in one.findings if "counted as one enantiomer" in f.message}
    assert warned == {"ts_hydration.out", "methanediol.out"}
    assert not any("ts_hydration.out" in f.subject and "one enantiomer" in f.message for f in both.findings)
    notes = both.species.set_index("species").loc["ts", "notes"].iloc[0]
    assert "enantiomers = 2" in notes and "RT ln 2" in notes


def test_a_mirror_image_in_both_the_ts_and_the_degeneracy_is_flagged(tmp_path, samples):
    # docs/kinetics.md: the mirror-image path is counted by enantiomers = 2 or by L, never both
    text = HYDRATION.format(s=samples.as_posix(), extra="enantiomers = 2")
    path = tmp_path / "both.toml"
    path.write_text(text.replace('products = ["methanediol"]', 'products = ["methanediol"]\ndegeneracy = 2'))
    res = qcthermo.run(samples / "solvent", reactions=path, jobs=1, cache=False)
    assert [f.severity for f in res.findings if f.subject == "hydration" and "doubled twice" in f.message] == [
        "warning"]
    alone = _hydration(tmp_path, samples, "enantiomers = 2")
    assert not any("doubled twice" in f.message for f in alone.findings)


def test_enantiomers_of_an_achiral_species_change_nothing_and_say_so(samples):
    # water is C2v, its own mirror image: enantiomers = 2 would be a wrong -RT ln 2
    calc = qcthermo.read_log(samples / "gas" / "water.out")
    plain = build_species("water", [calc], Conditions())
    marked = build_species("water", [calc], Conditions(), SpeciesOptions(enantiomers=2))
    assert marked.values["G"] == pytest.approx(plain.values["G"], abs=0)
    assert any("enantiomers = 2 changes nothing" in f.message for f in marked.findings)


def test_a_computed_mirror_image_is_not_counted_twice(samples):
    # pentane TG+ and TG- are both computed (mirror images, README): enantiomers = 2 doubles only the chiral
    # G+G- whose mirror image is absent, so G falls by less than RT ln 2 and the pair's populations stay equal
    calcs = [qcthermo.read_log(p) for p in sorted((samples / "conformers").glob("pentane_*.out"))]
    cond = Conditions(low_mode_model="rrho")
    plain = build_species("pentane", calcs, cond)
    both = build_species("pentane", calcs, cond, SpeciesOptions(enantiomers=2))
    images = species_thermo(both).images
    by_file = dict(zip((c.path.rsplit("_", 1)[1] for c in both.used), images, strict=True))
    assert by_file["gpgm.out"] == 2 and by_file["tgm.out"] == by_file["tt.out"] == 1
    drop = float(plain.values["G"][0] - both.values["G"][0])
    assert 0 < drop < K_B_EH * T * np.log(2)


def test_the_sample_hydration_counts_both_mirror_images(tmp_path, samples):
    # sample_outputs/reactions.toml sets enantiomers = 2 on the chiral TS (C1) and product (C2) of the hydration:
    # k_forward is twice that of the same file without the key (Eyring), k_reverse unchanged (both carry -RT ln 2),
    # and no chiral species is left counted as one enantiomer without saying so
    text = (samples / "reactions.toml").read_text()
    plain = tmp_path / "reactions.toml"
    plain.write_text(text.replace("enantiomers = 2\n", "").replace('logs = "', f'logs = "{samples.as_posix()}/')
                     .replace('single_point = "', f'single_point = "{samples.as_posix()}/')
                     .replace('scan = "', f'scan = "{samples.as_posix()}/'))
    runs = [qcthermo.run(samples, reactions=path, jobs=1, cache=False) for path in (samples / "reactions.toml", plain)]
    (sample, without) = (r.reactions.set_index("reaction").loc["formaldehyde_hydration"] for r in runs)
    assert sample["k_forward"] / without["k_forward"] == pytest.approx(2.0, rel=1e-9)
    assert sample["k_reverse"] / without["k_reverse"] == pytest.approx(1.0, rel=1e-9)
    assert not any("counted as one enantiomer" in f.message for f in runs[0].findings)


def _moved(sp, rmsd: float):
    """The single point's geometry with its first bond stretched (atom 1 moved away from atom 0) so that the
    aligned RMSD to the original is of the order of ``rmsd`` (angstrom)."""
    xyz = np.array(sp.coordinates, dtype=float)
    bond = xyz[1] - xyz[0]
    xyz[1] += bond / np.linalg.norm(bond) * rmsd * np.sqrt(len(xyz))
    return replace(sp, coordinates=xyz)


@pytest.mark.parametrize("explicit", [False, True])
def test_a_single_point_on_another_geometry_is_a_finding_not_a_composite(samples, explicit):
    # the MP2 water of sp/water_mp2.out is on the B3LYP geometry of gas/water.out (RMSD < 1e-5 A, README); moved by
    # ~0.02 A (a geometry of another level) it is another structure's energy: never paired, found or named
    freq, sp = _water(samples)
    moved = _moved(sp, 0.024)
    species = build_species("water", [freq], Conditions(), single_points=[moved],
                            explicit_pairs={freq.path: moved} if explicit else None)
    assert not species.usable
    assert any(f.severity == "error" and "single point on another geometry: RMSD 0.0" in f.message
               for f in species.findings), species.findings


def test_a_loosened_single_point_tolerance_is_a_warning_and_reported(tmp_path, samples, cache_dir):
    # [ensemble] single_point_rmsd = 0.05 accepts the COSMO water (its own optimisation, RMSD 0.004 A from the
    # gas-phase geometry) as a single point, with a warning on the pair and the loosened value in the caption
    freq, _ = _water(samples)
    cosmo = qcthermo.read_log(samples / "solvent" / "water.out")
    species = build_species("water", [freq], Conditions(), single_points=[cosmo],
                            settings={"single_point_rmsd": 0.05})
    assert species.usable
    assert any("accepted by a loosened [ensemble] single_point_rmsd" in f.message for f in species.findings)
    path = tmp_path / "r.toml"
    path.write_text(f'[ensemble]\nsingle_point_rmsd = 0.05\n[species.water]\nlogs = "{samples.as_posix()}/gas/'
                    f'water.out"\nsingle_point = "{samples.as_posix()}/solvent/water.out"\n')
    res = qcthermo.run(samples / "gas", reactions=path, cache=False)
    res.write(tmp_path / "out")
    assert "single points paired up to 0.05 A from their structure (loosened from 0.001 A)" in \
        (tmp_path / "out" / "species.md").read_text()

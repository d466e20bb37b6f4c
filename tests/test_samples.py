"""The bundled sample scenario (sample_outputs/): every file is read as what it is, every flaw is seen.

The outside source of every expectation below is the set of inputs in sample_outputs/inputs/ (what was
run: program, task, level of theory, charge and multiplicity, atoms) and the chemistry of those inputs,
not what the reader returns. The number of vibrational modes, 3N-6 or 3N-5, is common practice.
"""

from __future__ import annotations

import re
import tomllib
from collections import Counter
from pathlib import Path

import numpy as np
import pytest

import qcthermo

# what each kind of job in inputs/ asks the program for; a saddle search is also reported as an
# optimisation (the convention of docs/readers.md)
OPT_FREQ = frozenset({"optimization", "frequencies"})  # NWChem "task optimize" + "task freq"; xTB --ohess
SADDLE_FREQ = frozenset({"saddle-search", "optimization", "frequencies"})  # "task saddle" + "task freq"
ENERGY = frozenset({"single-point"})  # "task dft energy", "task mp2 energy"

B3LYP = ("B3LYP", "6-31G*")
MP2 = ("MP2", "cc-pVTZ")
GFN2 = ("GFN2-xTB", None)

# (file, program, jobs, (method, basis), solvent model, charge, multiplicity, atoms, linear, imaginary modes)
# from the inputs: gas/*.nw, solvent/*.nw (cosmo block), sp/*.nw (written by generate.sh), conformers/*.xyz
CLEAN = [
    ("gas/ch4.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 1, 5, False, 0),
    ("gas/h_atom.out", "nwchem", ENERGY, B3LYP, None, 0, 2, 1, False, None),
    ("gas/ch3.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 2, 4, False, 0),
    ("gas/h2.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 1, 2, True, 0),
    ("gas/ts_abstraction.out", "nwchem", SADDLE_FREQ, B3LYP, None, 0, 2, 6, False, 1),
    ("gas/hcn.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 1, 3, True, 0),
    ("gas/hnc.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 1, 3, True, 0),
    ("gas/ts_hcn.out", "nwchem", SADDLE_FREQ, B3LYP, None, 0, 1, 3, False, 1),
    ("gas/o2.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 3, 2, True, 0),
    ("gas/water.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 1, 3, False, 0),
    ("gas/c_atom.out", "nwchem", ENERGY, B3LYP, None, 0, 3, 1, False, None),  # 3P
    ("gas/n_atom.out", "nwchem", ENERGY, B3LYP, None, 0, 4, 1, False, None),  # 4S
    ("gas/o_atom.out", "nwchem", ENERGY, B3LYP, None, 0, 3, 1, False, None),  # 3P
    ("gas/ethane.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 1, 8, False, 0),
    # "print low" in the scan's dft block hides the functional's name and the multiplicity: a DFT energy
    ("scans/ethane_rot1.out", "nwchem", frozenset({"optimization"}), ("DFT", "6-31G*"), None, 0, 1, 8, False, None),
    ("solvent/water.out", "nwchem", OPT_FREQ, B3LYP, "cosmo", 0, 1, 3, False, 0),
    ("solvent/formaldehyde.out", "nwchem", OPT_FREQ, B3LYP, "cosmo", 0, 1, 4, False, 0),
    ("solvent/methanediol.out", "nwchem", OPT_FREQ, B3LYP, "cosmo", 0, 1, 7, False, 0),
    ("solvent/ts_hydration.out", "nwchem", SADDLE_FREQ, B3LYP, "cosmo", 0, 1, 7, False, 1),
    ("sp/ch4_mp2.out", "nwchem", ENERGY, MP2, None, 0, 1, 5, False, None),
    ("sp/h_atom_mp2.out", "nwchem", ENERGY, MP2, None, 0, 2, 1, False, None),
    ("sp/ts_abstraction_mp2.out", "nwchem", ENERGY, MP2, None, 0, 2, 6, False, None),
    ("sp/ch3_mp2.out", "nwchem", ENERGY, MP2, None, 0, 2, 4, False, None),
    ("sp/h2_mp2.out", "nwchem", ENERGY, MP2, None, 0, 1, 2, True, None),
    ("sp/o2_mp2.out", "nwchem", ENERGY, MP2, None, 0, 3, 2, True, None),
    ("sp/water_mp2.out", "nwchem", ENERGY, MP2, None, 0, 1, 3, False, None),
    ("sp/c_atom_mp2.out", "nwchem", ENERGY, MP2, None, 0, 3, 1, False, None),
    ("sp/n_atom_mp2.out", "nwchem", ENERGY, MP2, None, 0, 4, 1, False, None),
    ("sp/o_atom_mp2.out", "nwchem", ENERGY, MP2, None, 0, 3, 1, False, None),
    # solution part: gas-phase structures, B3LYP/6-31+G* single points in COSMO water and in the gas phase
    ("solution/formic_acid.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 1, 5, False, 0),
    ("solution/formate.out", "nwchem", OPT_FREQ, B3LYP, None, -1, 1, 4, False, 0),
    ("solution/acetic_acid.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 1, 8, False, 0),
    ("solution/acetate.out", "nwchem", OPT_FREQ, B3LYP, None, -1, 1, 7, False, 0),
    ("solution/no2.out", "nwchem", OPT_FREQ, B3LYP, None, 0, 2, 3, False, 0),
    ("solution/nitrite.out", "nwchem", OPT_FREQ, B3LYP, None, -1, 1, 3, False, 0),
    *[
        (f"solution/sp/{name}_{solvent}.out", "nwchem", ENERGY, ("B3LYP", "6-31+G*"), model, charge, mult, n,
         False, None)
        for name, charge, mult, n in (("formic_acid", 0, 1, 5), ("formate", -1, 1, 4), ("acetic_acid", 0, 1, 8),
                                      ("acetate", -1, 1, 7), ("no2", 0, 2, 3), ("nitrite", -1, 1, 3))
        for solvent, model in (("cosmo", "cosmo"), ("gas", None))
    ],
    *[
        (f"conformers/pentane_{c}.out", "xtb", OPT_FREQ, GFN2, None, 0, 1, 17, False, 0)
        for c in ("tt", "tt_b", "tgp", "tgp_b", "tgm", "gpgp", "gmgm", "gpgm")
    ],
]

# (file, the flaw it was made with; see generate.sh and inputs/flawed/)
FLAWED = [
    ("flawed/ts_abstraction_killed.out", "killed"),  # first 60 % of the bytes of gas/ts_abstraction.out
    ("flawed/methanol_maxiter.out", "unconverged"),  # driver maxiter 3 from a poor start
    ("flawed/butyne_eclipsed.out", "spurious_imaginary"),  # xTB opt+hessian held at the eclipsed D3h start
    ("flawed/hnc_hf.out", "other_level"),  # HF/3-21G where the scenario is B3LYP/6-31G*
]

# (high-level single point, the frequency job whose final geometry generate.sh copied into its input)
SINGLE_POINT_PAIRS = [
    ("sp/ch4_mp2.out", "gas/ch4.out"),
    ("sp/h_atom_mp2.out", "gas/h_atom.out"),
    ("sp/ts_abstraction_mp2.out", "gas/ts_abstraction.out"),
    ("sp/ch3_mp2.out", "gas/ch3.out"),
    ("sp/h2_mp2.out", "gas/h2.out"),
    ("sp/o2_mp2.out", "gas/o2.out"),
    ("sp/water_mp2.out", "gas/water.out"),
    ("sp/c_atom_mp2.out", "gas/c_atom.out"),
    ("sp/n_atom_mp2.out", "gas/n_atom.out"),
    ("sp/o_atom_mp2.out", "gas/o_atom.out"),
    *[(f"solution/sp/{name}_{solvent}.out", f"solution/{name}.out") for solvent in ("cosmo", "gas")
      for name in ("formic_acid", "formate", "acetic_acid", "acetate", "no2", "nitrite")],
]


def read(samples: Path, name: str) -> qcthermo.Calculation:
    return qcthermo.read_log(samples / name)  # committed with the project: a missing file is a failure


def same_text(a: str | None, b: str | None) -> bool:
    return (a or "").lower() == (b or "").lower()


@pytest.mark.parametrize(
    "name, program, jobs, level, solvent, charge, mult, natoms, linear, n_imag", CLEAN, ids=[r[0] for r in CLEAN]
)
def test_clean_sample_is_read_as_run(
    samples, name, program, jobs, level, solvent, charge, mult, natoms, linear, n_imag
):
    calc = read(samples, name)
    assert calc.program == program
    assert calc.job_types == jobs
    assert same_text(calc.method, level[0]) and same_text(calc.basis, level[1]), calc.level_of_theory
    assert calc.solvent_model == solvent
    assert (calc.charge, calc.multiplicity, calc.natoms) == (charge, mult, natoms)
    assert calc.normal_termination is True
    assert calc.energy is not None and calc.energy < 0
    if "optimization" in jobs:
        assert calc.optimization_converged is True
    if n_imag is None:
        assert calc.frequencies is None
    else:
        assert len(calc.frequencies) == 3 * natoms - (5 if linear else 6)  # common practice
        assert calc.n_imaginary == n_imag


def check_killed(calc: qcthermo.Calculation | None) -> None:
    assert calc is None or calc.normal_termination is False


def check_unconverged(calc: qcthermo.Calculation | None) -> None:
    assert calc is not None and "optimization" in calc.job_types
    assert calc.optimization_converged is False
    assert calc.normal_termination is False  # NWChem stops the job when the optimiser gives up


def check_spurious_imaginary(calc: qcthermo.Calculation | None) -> None:
    # the methyl torsion of 2-butyne is nearly free (barrier of a few cal/mol, from memory); the optimiser
    # never leaves the exact D3h symmetry of the eclipsed start (the torsional gradient is zero by
    # symmetry), so the torsion comes out as one small imaginary mode on a job that never asked for a
    # saddle point
    assert calc is not None and calc.program == "xtb" and calc.job_types == OPT_FREQ
    assert calc.normal_termination is True
    assert calc.n_imaginary == 1
    assert -50.0 < calc.frequencies.min() < 0.0
    assert len(calc.frequencies) == 3 * 10 - 6  # common practice


def check_other_level(calc: qcthermo.Calculation | None) -> None:
    assert calc is not None and calc.normal_termination is True
    assert same_text(calc.method, "HF") and same_text(calc.basis, "3-21G"), calc.level_of_theory
    assert not (same_text(calc.method, B3LYP[0]) and same_text(calc.basis, B3LYP[1]))


FLAW_CHECKS = {
    "killed": check_killed,
    "unconverged": check_unconverged,
    "spurious_imaginary": check_spurious_imaginary,
    "other_level": check_other_level,
}


@pytest.mark.parametrize("name, flaw", FLAWED, ids=[r[0] for r in FLAWED])
def test_flawed_sample_is_flagged_for_its_flaw(samples, name, flaw):
    path = samples / name
    try:
        calc = qcthermo.read_log(path)
    except qcthermo.LogReadError as err:
        assert flaw == "killed", f"only the killed job may be unreadable: {err}"
        assert "\n" not in str(err)
        calc = None
    FLAW_CHECKS[flaw](calc)


def test_every_output_is_listed_here_and_in_the_readme(samples):
    outputs = {p.relative_to(samples).as_posix() for p in samples.rglob("*.out")}
    listed = {r[0] for r in CLEAN} | {r[0] for r in FLAWED}
    assert outputs == listed
    readme = (samples / "README.md").read_text()
    assert all(name in readme for name in listed), sorted(n for n in listed if n not in readme)


def test_folder_is_small(samples):
    size = sum(p.stat().st_size for p in samples.rglob("*") if p.is_file())
    assert size < 30e6  # issue 4: the folder stays under 30 MB


@pytest.mark.parametrize("sp, low", SINGLE_POINT_PAIRS, ids=[r[0] for r in SINGLE_POINT_PAIRS])
def test_single_point_is_on_the_low_level_geometry(samples, sp, low):
    high, freq = read(samples, sp), read(samples, low)
    assert high.symbols == freq.symbols
    assert (high.charge, high.multiplicity) == (freq.charge, freq.multiplicity)
    # generate.sh copies the 8-decimal coordinates; NWChem may move the molecule as a whole (centre, axes). The
    # formate optimisation (started without symmetry) ends 2e-4 A short of C2v; NWChem symmetrises the copied
    # geometry of its single points to C2v (autosym), still well inside the pairing tolerance of 1e-3 A
    assert rmsd(freq.coordinates, high.coordinates) < (5e-4 if "formate_" in sp else 1e-5)


def rmsd(a: np.ndarray, b: np.ndarray, reflect: bool = False) -> float:
    """Unweighted RMSD after the best proper rotation (Kabsch, Acta Cryst. A 1976, 32, 922) of b onto a,
    or of b's mirror image (z -> -z) when ``reflect``."""
    a = a - a.mean(axis=0)
    b = (b * ([1, 1, -1] if reflect else 1)) - (b * ([1, 1, -1] if reflect else 1)).mean(axis=0)
    u, _, vt = np.linalg.svd(b.T @ a)
    d = np.sign(np.linalg.det(u @ vt))
    rot = u @ np.diag([1.0, 1.0, d]) @ vt
    return float(np.sqrt(((b @ rot - a) ** 2).sum(axis=1).mean()))


# (conformer, conformer, relation): the starts were built that way (inputs/conformers/*.xyz comments)
CONFORMER_RELATIONS = [
    ("tt", "tt_b", "duplicate"),
    ("tgp", "tgp_b", "duplicate"),
    ("tgp", "tgm", "mirror"),
    ("gpgp", "gmgm", "mirror"),
    ("tt", "tgp", "different"),
    ("gpgp", "gpgm", "different"),
]


@pytest.mark.parametrize("first, second, relation", CONFORMER_RELATIONS)
def test_conformers_are_duplicates_mirror_images_or_distinct_as_built(samples, first, second, relation):
    a = read(samples, f"conformers/pentane_{first}.out").coordinates
    b = read(samples, f"conformers/pentane_{second}.out").coordinates
    proper, mirrored = rmsd(a, b), rmsd(a, b, reflect=True)
    if relation == "duplicate":
        assert proper < 0.05
    elif relation == "mirror":
        assert mirrored < 0.05 < 0.5 < proper
    else:
        assert min(proper, mirrored) > 0.3


def reaction_file(samples: Path) -> dict:
    return tomllib.loads((samples / "reactions.toml").read_text())


def terms(entries: list[str]) -> Counter:
    """["2 h2", "o2"] -> Counter({"h2": 2, "o2": 1})."""
    out: Counter = Counter()
    for entry in entries:
        m = re.fullmatch(r"\s*(?:(\d+)\s+)?(\w+)\s*", entry)
        out[m.group(2)] += int(m.group(1) or 1)
    return out


def atoms(samples: Path, data: dict, counts: Counter) -> Counter:
    total: Counter = Counter()
    for species, n in counts.items():
        logs = data["species"][species]["logs"]
        first = sorted(samples.glob(logs if isinstance(logs, str) else logs[0]))[0]
        for symbol, k in Counter(read(samples, first.relative_to(samples).as_posix()).symbols).items():
            total[symbol] += n * k
    return total


def test_reaction_file_is_accepted_by_the_reaction_parser(samples):
    from qcthermo.reactions import load_reaction_file

    data = reaction_file(samples)
    parsed = load_reaction_file(samples / "reactions.toml")
    assert parsed is not None
    # issue 4: at least three reactions, one cyclic (catalytic) profile, water as a reactant at its own
    # concentration (55.3 mol/L, pure water at 298 K: common practice)
    assert len(data["reaction"]) >= 3
    assert any(p.get("cyclic") for p in data["profile"])
    assert data["species"]["water"]["concentration"] == "55.3M"
    assert any("water" in terms(r["reactants"]) for r in data["reaction"])


def test_every_reaction_and_profile_balances_its_atoms(samples):
    data = reaction_file(samples)
    for reaction in data["reaction"]:
        left = atoms(samples, data, terms(reaction["reactants"]))
        assert left == atoms(samples, data, terms(reaction["products"])), reaction["name"]
        if "transition_state" in reaction:
            assert left == atoms(samples, data, Counter({reaction["transition_state"]: 1})), reaction["name"]
    for profile in data["profile"]:
        first = atoms(samples, data, terms(profile["states"][0]))
        assert all(atoms(samples, data, terms(s)) == first for s in profile["states"]), profile["name"]

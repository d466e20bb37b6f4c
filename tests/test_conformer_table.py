"""The conformer table and figure of a run (conformers.csv/.md/.tex/.xlsx, conformers.svg), on the sample's
n-pentane ensemble: eight GFN2-xTB optimisations, two of them duplicates, two mirror-image pairs and one
chiral minimum without its computed mirror image (sample_outputs/README.md)."""

import numpy as np
import pandas as pd
import pytest

import qcthermo
from qcthermo.units import ENERGY_UNITS, K_B_EH

KCAL = ENERGY_UNITS["kcal/mol"]


@pytest.fixture(scope="module")
def pentane_run(tmp_path_factory):
    from conftest import SAMPLES

    folder = tmp_path_factory.mktemp("pentane")
    reactions = folder / "reactions.toml"
    reactions.write_text(f'[species.pentane]\nlogs = "{(SAMPLES / "conformers").as_posix()}/pentane_*.out"\n'
                         "enantiomers = 2\n")
    results = qcthermo.run(SAMPLES / "conformers", reactions=reactions, jobs=1, cache=False,
                           conditions=qcthermo.Conditions(temperature=np.array([298.15, 400.0]), standard_state="1M"))
    out = folder / "out"
    results.write(out)
    return results, out


def test_one_row_per_file_with_its_fate(pentane_run):
    _, out = pentane_run
    table = pd.read_csv(out / "conformers.csv")
    at_298 = table[table["T_K"] == 298.15].set_index("conformer")
    assert len(at_298) == 8  # every file, used or not (sample_outputs/README.md)
    # the second TT and TG+ starts end in the minima of the first ones (README: duplicates by construction)
    assert at_298.loc["pentane_tt_b.out", "status"] == "duplicate"
    assert at_298.loc["pentane_tt_b.out", "same_as"] == "pentane_tt.out"
    assert (at_298["status"] == "used").sum() == 6
    # TG- is the mirror image of TG+ (README): both used, each naming the other
    used = at_298[at_298["status"] == "used"]
    assert {"pentane_tgm.out", "pentane_gmgm.out"} & set(used.index)
    # G+G- is C1 with no computed mirror image: with enantiomers = 2 it stands for two structures
    assert at_298.loc["pentane_gpgm.out", "mirror_images"] == 2
    assert used.drop("pentane_gpgm.out")["mirror_images"].eq(1).all()


def test_populations_follow_boltzmann_and_give_the_species_free_energy(pentane_run):
    results, out = pentane_run
    table = pd.read_csv(out / "conformers.csv")
    species = results.species.set_index("T_K")
    conformers = results.species_results["pentane"].used
    for k, t in enumerate((298.15, 400.0)):
        used = table[(table["T_K"] == t) & (table["status"] == "used")]
        dg = used["dG_kcal_mol"].to_numpy() / KCAL  # hartree per molecule
        n = used["mirror_images"].to_numpy()
        assert used["dG_kcal_mol"].min() == 0.0
        # Boltzmann populations p_i = n_i exp(-dG_i/kT) / sum (McQuarrie, Statistical Mechanics, 1976)
        weights = n * np.exp(-dg / (K_B_EH * t))
        assert used["population"].to_numpy() == pytest.approx(weights / weights.sum(), abs=1e-12)
        # and the ensemble G of species.csv is G_lowest - kT ln sum n_i exp(-dG_i/kT)
        lowest = min(float(c.values["G"][k]) for c in conformers)
        assert species.loc[t, "G_qrrho_Eh"] == pytest.approx(lowest - K_B_EH * t * np.log(weights.sum()), abs=1e-10)
    not_used = table[table["status"] != "used"]
    assert not_used["dG_kcal_mol"].isna().all() and (not_used["population"] == 0).all()


def test_paper_tables_and_figure(pentane_run):
    _, out = pentane_run
    md = (out / "conformers.md").read_text()
    assert "pentane_gpgm.out" in md and "population" in md.lower()
    svg = (out / "conformers.svg").read_text()
    # text stays text in the SVG (svg.fonttype none): each used conformer is named on its bar
    for stem in ("pentane_tt", "pentane_tgp_b", "pentane_tgm", "pentane_gpgp", "pentane_gmgm", "pentane_gpgm"):
        assert f">{stem}<" in svg
    assert "pentane_tt_b<" not in svg  # a duplicate has no bar


def test_no_table_without_an_ensemble(tmp_path):
    from conftest import SAMPLES

    reactions = tmp_path / "r.toml"
    reactions.write_text(f'[species.hcn]\nlogs = "{(SAMPLES / "gas/hcn.out").as_posix()}"\n')
    written = {p.name for p in qcthermo.run(SAMPLES / "gas", reactions=reactions, jobs=1, cache=False)
               .write(tmp_path / "out")}
    assert not {n for n in written if n.startswith("conformers")}

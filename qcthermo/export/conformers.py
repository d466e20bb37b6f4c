"""Conformer ensembles for the supporting information: one row per conformer file, and a figure.

For every species computed from more than one file, :func:`conformer_table` gives each file's fate (used
in the ensemble, merged as a duplicate, excluded), its free energy relative to the species' lowest used
conformer at each temperature (chosen low-mode model, high level when composite) and its Boltzmann
population. The population of a used conformer i is

    p_i = n_i exp(-dG_i / RT) / sum_j n_j exp(-dG_j / RT),

with n_i the mirror images the structure stands for (``mirror_images``: 2 for a chiral structure whose
enantiomer was not computed, with ``enantiomers = 2``; docs/reactions.md), as in
:func:`qcthermo.species.ensemble_values`. :func:`plot_conformers` draws the populations at one
temperature, one panel per species. Formatting only: every number comes from the species' results.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..fileio import display
from ..units import hartree_to, unit_suffix


def _relative_name(path: str, root: str | None) -> str:
    """The file as the user knows it: relative to the run's directory when inside it."""
    if root:
        try:
            return display(str(Path(path).resolve().relative_to(Path(root).resolve())))
        except ValueError:
            pass
    return display(str(path))


def conformer_table(results):
    """One row per conformer file and temperature of every species with several files (a pandas DataFrame;
    empty when there is none). Columns: species, conformer, status, same_as (the kept copy of a duplicate,
    or the computed mirror image), mirror_images, T_K, dG_<unit> (relative to the lowest used conformer;
    empty unless used), population (0 unless used)."""
    import pandas as pd

    from ..species import mirror_images

    root = (getattr(results, "settings", None) or {}).get("directory")
    t = np.atleast_1d(np.asarray(results.conditions.temperature, dtype=float))
    unit = results.energy_unit
    rows = []
    for name, species in results.species_results.items():
        if len(species.conformers) < 2:
            continue
        used = species.used
        g = np.array([c.values["G"] for c in used]) if used else np.zeros((0, len(t)))
        lowest = g.min(axis=0) if used else np.full(len(t), np.nan)
        images = dict(zip((c.path for c in used), mirror_images(species, used), strict=True))
        for c in species.conformers:
            other = c.duplicate_of or c.mirror_of
            g_rel = hartree_to(c.values["G"] - lowest, unit) if c.path in images else np.full(len(t), np.nan)
            population = np.broadcast_to(np.asarray(c.population, dtype=float), t.shape)
            for k, temperature in enumerate(t):
                rows.append({"species": display(species.label or name), "conformer": _relative_name(c.path, root),
                             "status": c.status, "same_as": _relative_name(other, root) if other else "",
                             "mirror_images": int(images.get(c.path, 1)), "T_K": float(temperature),
                             f"dG_{unit_suffix(unit)}": float(g_rel[k]),
                             "population": float(population[k]) if c.path in images else 0.0})
    return pd.DataFrame(rows)


def plot_conformers(table, unit: str, temperature: float):
    """Populations of the used conformers at ``temperature`` (K), one panel per species, each bar labelled
    with its dG; ``table`` from :func:`conformer_table`."""
    import matplotlib

    from .figure_common import COLUMN_WIDTH_IN, PALETTE, STYLE, UNIT_LABELS, new_figure, style_axes

    rows = table[(table["status"] == "used") & np.isclose(table["T_K"], temperature)]
    species = list(dict.fromkeys(rows["species"]))
    dg = f"dG_{unit_suffix(unit)}"
    with matplotlib.rc_context(STYLE):
        fig = new_figure(COLUMN_WIDTH_IN)
        heights = [max(len(rows[rows["species"] == s]), 1) for s in species]
        fig.set_size_inches(COLUMN_WIDTH_IN, 0.6 + 0.22 * sum(heights) + 0.45 * len(species))
        axes = fig.subplots(len(species), 1, squeeze=False, gridspec_kw={"height_ratios": heights})[:, 0]
        for ax, name in zip(axes, species, strict=True):
            part = rows[rows["species"] == name].sort_values(dg)
            y = np.arange(len(part))[::-1]
            ax.barh(y, 100 * part["population"], color=PALETTE[0], height=0.6)
            ax.set_yticks(y, [Path(c).stem for c in part["conformer"]])
            for yi, p, g in zip(y, part["population"], part[dg], strict=True):
                ax.text(100 * p + 1.5, yi, f"{g:.2f}", va="center", fontsize="small")
            ax.set_xlim(0, 118)  # room for the last label beyond 100 %
            ax.set_xticks(range(0, 101, 20))
            ax.set_title(name, loc="left", fontsize="medium")
            style_axes(ax)
        axes[-1].set_xlabel(f"population / % at {temperature:g} K (bar labels: ΔG / {UNIT_LABELS[unit]})")
        fig.tight_layout()
    return fig


def write_conformers(results, out_dir: str | Path, caption_context: str, write_table) -> list[Path]:
    """conformers.csv/.xlsx/.md/.tex (``write_table(df, out_dir, stem, caption, notes, energy_unit)``) and
    conformers.svg into ``out_dir``; nothing when no species has several conformer files. Returns the paths written."""
    from .figure_common import save_figure
    from .profile_data import profile_temperature_index

    table = conformer_table(results)
    if not len(table):
        return []
    unit = results.energy_unit
    caption = (f"Conformers: free energy relative to each species' lowest conformer, {unit}, and Boltzmann "
               f"population (mirror images counted); {caption_context}.")
    written = write_table(table, Path(out_dir), "conformers", caption, [], unit)
    temperature = float(np.atleast_1d(np.asarray(results.conditions.temperature, dtype=float))[
        profile_temperature_index(results)])
    written.append(save_figure(plot_conformers(table, unit, temperature), Path(out_dir) / "conformers.svg"))
    return written

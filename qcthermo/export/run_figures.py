"""A run's figures: every profile diagram and, with a temperature range, dG_T and arrhenius (docs/figures.md)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from matplotlib.figure import Figure

from .figure_common import save_figure
from .profile_data import profile_stems, run_profiles
from .profile_figures import overview_figure, plot_profiles


def run_figures(results, *, overview: bool = True) -> dict[str, Figure]:
    """Every figure of a run by file stem: "profile" (all profiles: see :func:`overview_figure`; left out
    with ``overview=False``), "profile_<name>" for each profile alone, and with several temperatures
    "dG_T" and "arrhenius". A profile figure's label (``Figure.get_label()``) holds its profiles' names.
    """
    figures: dict[str, Figure] = {}
    profiles = run_profiles(results)
    if profiles and overview:
        figures["profile"] = overview_figure(profiles)
        figures["profile"].set_label(", ".join(p.name for p in profiles))
    for stem, profile in zip(profile_stems(profiles), profiles, strict=True):
        figures[stem] = plot_profiles([profile])
        figures[stem].set_label(profile.name)
    reactions = getattr(results, "reactions", None)
    if reactions is not None and len(reactions) and "T_K" in reactions and reactions["T_K"].nunique() > 1:
        unit = getattr(results, "energy_unit", "kcal/mol")
        from .temperature_figures import plot_arrhenius, plot_dG_T

        figures["dG_T"] = plot_dG_T(reactions, unit, getattr(results.conditions, "low_mode_model", None))
        if "k_forward" in reactions and np.any(np.asarray(reactions["k_forward"], dtype=float) > 0):
            figures["arrhenius"] = plot_arrhenius(reactions)
    return figures


def write_profile_figures(results, out_dir: str | Path) -> list[Path]:
    """Write the run's figures into ``out_dir``: profile.svg/.png (every profile, see
    :func:`overview_figure`), profile_<name>.svg/.png for each profile and, with a temperature range,
    dG_T.svg and arrhenius.svg. Returns the paths written."""
    out_dir = Path(out_dir)
    written = []
    for stem, fig in run_figures(results).items():
        suffixes = (".svg", ".png") if stem.startswith("profile") else (".svg",)
        written += [save_figure(fig, out_dir / f"{stem}{suffix}") for suffix in suffixes]
    return written

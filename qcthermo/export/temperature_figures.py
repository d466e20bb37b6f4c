"""Figures of a temperature range: dG_T.svg (reaction and activation free energies against T) and
arrhenius.svg (ln k against 1000 K / T), drawn from the long reactions table (docs/figures.md).

Quantities of different kinds never share an axis: ΔG and ΔG‡ are two panels over one T axis, and rate
constants of different units (s⁻¹, M⁻¹ s⁻¹, ...) are one panel each, the unit on the axis, ln(k / unit).
"""

from __future__ import annotations

import re

import matplotlib
import numpy as np
from matplotlib.figure import Figure

from ..units import unit_suffix
from .figure_common import (
    COLUMN_WIDTH_IN,
    FIGURE_HEIGHT_IN,
    PALETTE,
    STYLE,
    UNIT_LABELS,
    legend_below,
    new_figure,
    style_axes,
)
from .tables import plain_typeset

#: height of one panel, inches, when a figure stacks several over one x axis
PANEL_HEIGHT_IN = 0.75 * FIGURE_HEIGHT_IN


def _reaction_series(reactions, column: str):
    """(reaction name, T array, values array) for every reaction with finite values in ``column``."""
    for name, group in reactions.groupby("reaction", sort=False):
        group = group.sort_values("T_K")
        t = group["T_K"].to_numpy(dtype=float)
        y = group[column].to_numpy(dtype=float)
        ok = np.isfinite(y)
        if ok.any():
            yield str(name), t[ok], y[ok]


def energy_column(reactions, stem: str, unit: str, model: str | None) -> str:
    """The reactions-table column of ``stem`` ("dG", "dG_act") under the chosen low-mode model when the
    table has one (e.g. dG_qrrho_kcal_mol), else the plain column (dG_kcal_mol)."""
    suffix = unit_suffix(unit)
    tagged = f"{stem}_{model.replace('-', '_')}_{suffix}" if model else None
    return tagged if tagged and tagged in reactions else f"{stem}_{suffix}"


def _stacked_axes(n_panels: int) -> tuple[Figure, list]:
    """A one-column figure of ``n_panels`` axes stacked over a shared x axis."""
    fig = new_figure(COLUMN_WIDTH_IN)
    fig.set_size_inches(COLUMN_WIDTH_IN, 0.5 + PANEL_HEIGHT_IN * n_panels)
    axes = list(fig.subplots(n_panels, 1, sharex=True, squeeze=False)[:, 0])
    for ax in axes:
        style_axes(ax)
    return fig, axes


def plot_dG_T(reactions, unit: str = "kcal/mol", model: str | None = None) -> Figure:
    """ΔG of every reaction against temperature, and below it on its own panel ΔG‡ of those with a transition
    state, from a long reactions table (under the low-mode ``model`` when the table has its columns); one colour
    per reaction on both panels."""
    unit_label = UNIT_LABELS.get(unit, unit)
    panels = [(energy_column(reactions, stem, unit, model), f"{symbol} / {unit_label}")
              for stem, symbol in (("dG", "ΔG"), ("dG_act", "ΔG‡"))]
    panels = [(c, label) for c, label in panels if c in reactions and np.isfinite(
        np.asarray(reactions[c], dtype=float)).any()]
    with matplotlib.rc_context(STYLE):
        fig, axes = _stacked_axes(max(len(panels), 1))
        colors: dict[str, str] = {}
        for ax, (column, label) in zip(axes, panels, strict=False):
            for name, t, y in _reaction_series(reactions, column):
                color = colors.setdefault(name, PALETTE[len(colors) % len(PALETTE)])
                ax.plot(t, y, color=color, marker="o", ms=2.5, label=name, gid=f"{column}:{name}")
            ax.set_ylabel(label)
        axes[-1].set_xlabel("T / K")
        legend_below(fig, axes)
    return fig


def rate_unit(reactions, name: str) -> str | None:
    """The unit of a reaction's rate constant from the table's k_unit column, without its remark and with
    typeset exponents ("cm^3 molecule^-1 s^-1" -> "cm³ molecule⁻¹ s⁻¹"); None when the table has none."""
    if "k_unit" not in reactions:
        return None
    units = reactions.loc[reactions["reaction"] == name, "k_unit"].dropna()
    if not len(units):
        return None
    return plain_typeset(re.sub(r"\s*\(.*\)\s*$", "", str(units.iloc[0])))


def plot_arrhenius(reactions, rate_column: str = "k_forward") -> Figure:
    """ln(k / unit) against 1000 K / T for every reaction with a rate constant, one panel per unit of k (a
    unimolecular and a bimolecular k on one axis would compare numbers of different dimensions)."""
    by_unit: dict[str | None, list] = {}
    for name, t, rate in _reaction_series(reactions, rate_column):
        ok = rate > 0
        if ok.any():
            by_unit.setdefault(rate_unit(reactions, name), []).append((name, t[ok], rate[ok]))
    with matplotlib.rc_context(STYLE):
        fig, axes = _stacked_axes(max(len(by_unit), 1))
        k = 0
        for ax, (unit, series) in zip(axes, by_unit.items(), strict=False):
            for name, t, rate in series:
                ax.plot(1000.0 / t, np.log(rate), color=PALETTE[k % len(PALETTE)], marker="o", ms=2.5, label=name,
                        gid=f"arrhenius:{name}")
                k += 1
            ax.set_ylabel(f"ln(k / {unit})" if unit else "ln k")
        axes[-1].set_xlabel("1000 K / T")
        legend_below(fig, axes)
    return fig

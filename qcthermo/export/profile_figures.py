"""Energy profile diagrams (docs/figures.md, "Energy profile diagrams").

An energy profile is a row of short horizontal levels (one per state, x = its position in the
sequence) joined by thin dashed connectors. Each level carries its name above and its value below;
transition states get a double dagger. The labels are placed by :mod:`.profile_labels`. Only related
profiles share axes (see :func:`.profile_data.overlay_groups`); a run draws each profile alone as well.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import matplotlib
import numpy as np
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from ..errors import QcthermoError
from .figure_common import (
    COLUMN_WIDTH_IN,
    FIGURE_HEIGHT_IN,
    MAX_WIDTH_IN,
    PALETTE,
    STYLE,
    UNIT_LABELS,
    new_figure,
    style_axes,
)
from .profile_data import QUANTITY_SYMBOLS, ProfileData, ProfileState, overlay_groups
from .profile_labels import LABEL_GAP_PT, MAX_NUDGE_STEPS, NUDGE_STEP_PT, Label, Levels, arrange_labels
from .state_labels import state_text

#: what the marks of the energy-span analysis are called on the figure
MARK_TAGS = {"tdts": "TDTS", "tdi": "TDI"}

#: colour of a state name shared by several overlaid profiles
SHARED_NAME_COLOR = "#444444"

LEVEL_HALF_WIDTH = 0.34  # data units; states sit at x = 0, 1, 2, ...
WRAP_FRACTION = 0.8  # names wrap to this fraction of a slot: a little wider than the level, clear of connectors
LEVEL_LINEWIDTH = 1.8  # points
NAME_CROSS_AFTER_PT = 10.0  # a name crosses to below its level only when the space above is crowded
DODGE_STEP = 0.06  # data units: overlaid profiles' levels shift this much apart along x, so none hides another
DODGE_SPREAD = 0.18  # ... and at most this much between the first and the last


def axis_label(quantity: str, unit: str) -> str:
    """y-axis label such as "ΔG / kcal mol⁻¹" (quantity over unit, the IUPAC way of labelling axes)."""
    return f"{QUANTITY_SYMBOLS.get(quantity, quantity)} / {UNIT_LABELS.get(unit, unit)}"


def format_value(value: float, precision: int) -> str:
    """A level's value with ``precision`` decimals and a typographic minus; never "−0.0"."""
    text = f"{value:.{precision}f}"
    if float(text) == 0.0:
        text = text.lstrip("-")
    return text.replace("-", "−")


def state_name(state: ProfileState, wrap: int | None = None) -> str:
    """The name shown above a level (see :func:`.state_labels.state_text`)."""
    return state_text(state, wrap)[0]


def _profile_width(n_states: int) -> float:
    """One column up to five states; wider (up to two columns) so that states stay ~1.3 cm apart."""
    return float(np.clip(0.5 + 0.5 * n_states, COLUMN_WIDTH_IN, MAX_WIDTH_IN))


def _wrap_width(ax, fig) -> int:
    """How many characters of 7-pt text fit over one state's slot (a DejaVu Sans glyph ~0.55 em wide)."""
    x0, x1 = ax.get_xlim()
    slot_pt = ax.get_window_extent().width / (x1 - x0) * 72.0 / fig.dpi
    return max(5, int(WRAP_FRACTION * slot_pt / (0.55 * STYLE["font.size"])))


def _draw_profile(ax, profile: ProfileData, color: str, dx: float) -> tuple[list, list, list, list]:
    """Levels and energy-span halos, the state column of each and whether it is a level (not a halo),
    and the connectors of one profile, shifted by ``dx`` along x."""
    levels, columns, is_level, connectors = [], [], [], []
    values = profile.values
    marked = set(profile.marks.values())
    for i, state in enumerate(profile.states):
        x = (i + dx - LEVEL_HALF_WIDTH, i + dx + LEVEL_HALF_WIDTH)
        if state.label in marked:  # the halo is an obstacle for labels like the level itself
            levels += ax.plot(x, (state.value, state.value), color=color, lw=LEVEL_LINEWIDTH * 3, alpha=0.18,
                              solid_capstyle="butt", gid=f"mark:{profile.name}:{i}", zorder=1)
            columns.append(i)
            is_level.append(False)
        (line,) = ax.plot(x, (state.value, state.value), color=color, lw=LEVEL_LINEWIDTH,
                          solid_capstyle="butt", gid=f"level:{profile.name}:{i}", zorder=3)
        levels.append(line)
        columns.append(i)
        is_level.append(True)
        if i:
            (conn,) = ax.plot((i - 1 + dx + LEVEL_HALF_WIDTH, i + dx - LEVEL_HALF_WIDTH), (values[i - 1], state.value),
                              color=color, lw=0.6, ls=profile.style, gid=f"connector:{profile.name}:{i}", zorder=2)
            connectors.append(conn)
    return levels, columns, is_level, connectors


@dataclass
class _Text:
    """A label to be drawn for one profile's state, before labels shared by several profiles merge."""

    column: int
    text: str
    height: float  # the level's value
    x: float  # the level's centre, data units
    color: str
    owner: int  # index of the profile
    gid: str
    math: bool = False  # mathtext built by .state_labels (every other text is plain)


def _state_texts(profile: ProfileData, owner: int, color: str, dx: float, precision: int,
                 wrap: int) -> tuple[list[_Text], list[_Text]]:
    """The value and name texts of one profile's labelled states."""
    marked = {label: MARK_TAGS.get(kind, kind) for kind, label in profile.marks.items()}
    shown = None if profile.label_states is None else set(profile.label_states)
    values, names = [], []
    for i, state in enumerate(profile.states):
        if shown is not None and state.label not in shown:
            continue
        value = format_value(state.value, precision)
        if state.label in marked:
            value = f"{value}\n{marked[state.label]}"
        values.append(_Text(i, value, state.value, i + dx, color, owner, f"value:{profile.name}:{i}"))
        name, math = state_text(state, wrap)
        names.append(_Text(i, name, state.value, i + dx, color, owner, f"name:{i}:{name}", math))
    return values, names


def _annotate(ax, text: str, xy: tuple[float, float], direction: int, color: str, gid: str, math: bool = False):
    """A label anchored at a level's centre, offset in points above (+1) or below (-1) it; ``math`` only for
    a name typeset by :mod:`.state_labels`."""
    return ax.annotate(text, xy=xy, xytext=(0, direction * LABEL_GAP_PT), textcoords="offset points",
                       ha="center", va="bottom" if direction > 0 else "top", color=color,
                       fontsize=STYLE["font.size"], zorder=4, annotation_clip=False, gid=gid, parse_math=math)


def _draw_texts(ax, texts: list[_Text], direction: int, cross_after_pt: float) -> list[Label]:
    """One label per (column, text): the same name or the same rounded value of several overlaid
    profiles is written once, in grey, at the column's centre, over the highest (names) or under the
    lowest (values) of their levels; any other text in its profile's colour at its own level."""
    groups: dict[tuple[int, str], list[_Text]] = {}
    for t in texts:
        groups.setdefault((t.column, t.text), []).append(t)
    labels = []
    for (i, text), members in groups.items():
        height = (max if direction > 0 else min)(t.height for t in members)
        if len(members) == 1:
            (only,) = members
            artist = _annotate(ax, text, (only.x, height), direction, only.color, only.gid, only.math)
        else:
            colors = {t.color for t in members}
            color = colors.pop() if len(colors) == 1 else SHARED_NAME_COLOR
            gid = members[0].gid if direction > 0 else f"value:*:{i}:{text}"
            artist = _annotate(ax, text, (i, height), direction, color, gid, members[0].math)
        labels.append(Label(artist, direction, height, cross_after_pt, i, frozenset(t.owner for t in members)))
    return labels


def _check_shared_axis(profiles: Sequence[ProfileData]) -> None:
    if not profiles:
        raise QcthermoError("no profile to draw")
    if len({(p.quantity, p.unit) for p in profiles}) > 1:
        raise QcthermoError("profiles drawn together must share one quantity and one unit")


def _axes_rect(n_profiles: int, title: str | None, band: tuple[float, float] = (0.0, 1.0)):
    """(left, bottom, width, height) of a profile's axes inside the vertical ``band`` of the figure:
    room below for the legend when profiles are overlaid, above for a title."""
    lo, height = band[0], band[1] - band[0]
    bottom = 0.08 if n_profiles > 1 else 0.04
    return (0.15, lo + bottom * height, 0.83, (0.84 if title else 0.9) * height)


def plot_profiles(
    profiles: Sequence[ProfileData], *, precision: int = 1, ax=None, title: str | None = None
) -> Figure:
    """Draw one or several (overlaid) energy profiles; returns the matplotlib Figure.

    All profiles must share quantity and unit (the y axis). Level heights are exactly the states'
    values; a legend names the profiles when there are several. A figure of its own (no ``ax``) is drawn
    wider, by a quarter at a time up to two columns, while some name finds room only far from its level
    (names wider than a state's slot).
    """
    profiles = list(profiles)
    _check_shared_axis(profiles)
    with matplotlib.rc_context(STYLE):
        if ax is not None:
            _draw_profiles(ax, profiles, precision, title)
            return ax.figure
        width = _profile_width(max(len(p.states) for p in profiles))
        while True:
            fig = new_figure(width)
            near = _draw_profiles(fig.add_axes(_axes_rect(len(profiles), title)), profiles, precision, title)
            if near or width >= MAX_WIDTH_IN:
                return fig
            width = min(1.25 * width, MAX_WIDTH_IN)


def plot_profile_panels(groups: Sequence[Sequence[ProfileData]], *, precision: int = 1) -> Figure:
    """Several unrelated diagrams as small multiples: one panel per group, stacked, each with its own
    energy axis and a title naming its profile (a legend when the panel overlays several)."""
    groups = [list(g) for g in groups]
    _check_shared_axis([p for g in groups for p in g])
    n_states = max(len(p.states) for g in groups for p in g)
    with matplotlib.rc_context(STYLE):
        fig = new_figure(_profile_width(n_states), FIGURE_HEIGHT_IN * len(groups))
        for row, group in enumerate(groups):
            band = (1.0 - (row + 1) / len(groups), 1.0 - row / len(groups))
            title = group[0].name if len(group) == 1 else None
            _draw_profiles(fig.add_axes(_axes_rect(len(group), title, band)), group, precision, title)
    return fig


def _dodges(n_profiles: int) -> np.ndarray:
    """Shifts along x (data units) of overlaid profiles' levels, centred on each state's slot."""
    step = DODGE_STEP if n_profiles < 2 else min(DODGE_STEP, DODGE_SPREAD / (n_profiles - 1))
    return (np.arange(n_profiles) - (n_profiles - 1) / 2) * step


def _draw_profiles(ax, profiles: list[ProfileData], precision: int, title: str | None) -> bool:
    """Draw the profiles into ``ax``; whether every label sits by its level (:func:`.profile_labels.arrange_labels`)."""
    fig = ax.figure
    n_states = max(len(p.states) for p in profiles)
    style_axes(ax)
    ax.spines["bottom"].set_visible(False)
    ax.set_xticks([])
    ax.set_xlim(-0.5, n_states - 0.5)
    values = np.concatenate([p.values for p in profiles])
    span = max(float(np.ptp(values)), 1e-3)
    ax.set_ylim(values.min() - 0.1 * span, values.max() + 0.1 * span)
    ax.set_ylabel(axis_label(profiles[0].quantity, profiles[0].unit))
    wrap = _wrap_width(ax, fig)
    lines, columns, owners, is_level, connectors = [], [], [], [], []
    values_text, names_text, handles = [], [], []
    for k, (profile, dx) in enumerate(zip(profiles, _dodges(len(profiles)), strict=True)):
        color = profile.color or PALETTE[k % len(PALETTE)]
        lv, cols, kinds, cn = _draw_profile(ax, profile, color, dx)
        lines += lv
        columns += cols
        owners += [k] * len(lv)
        is_level += kinds
        connectors += cn
        vt, nt = _state_texts(profile, k, color, dx, precision, wrap)
        values_text += vt
        names_text += nt
        handles.append(Line2D([], [], color=color, lw=LEVEL_LINEWIDTH, label=profile.name))
    labels = _draw_texts(ax, values_text, -1, MAX_NUDGE_STEPS * NUDGE_STEP_PT)
    labels += _draw_texts(ax, names_text, +1, NAME_CROSS_AFTER_PT)
    near = arrange_labels(ax, labels, Levels(lines, np.array(columns), np.array(owners), np.array(is_level),
                                             connectors))
    if len(profiles) > 1:
        ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, 0.0), ncol=min(len(profiles), 3),
                  handlelength=1.5, columnspacing=1.2)
    if title:
        ax.set_title(title, loc="left")
    return near


def overview_figure(profiles: Sequence[ProfileData], precision: int = 1) -> Figure:
    """The diagram of several profiles: overlaid when they form one group (:func:`overlay_groups`),
    else one panel per group."""
    groups = overlay_groups(profiles)
    return plot_profiles(groups[0], precision=precision) if len(groups) == 1 else plot_profile_panels(groups,
                                                                                                      precision=precision)

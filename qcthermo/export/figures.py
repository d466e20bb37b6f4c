"""Figures: reaction energy profiles, ΔG(T) and Arrhenius plots.

Everything is drawn with matplotlib's object API on an Agg canvas (no pyplot, no global state), in a
quiet style sized for a journal's single column (8.5 cm wide, text >= 7 pt). Colours come from the
Okabe-Ito palette, which stays distinguishable under the common forms of colour-vision deficiency
(M. Okabe and K. Ito, "Color Universal Design", 2008, https://jfly.uni-koeln.de/color/; recommended by
B. Wong, Nat. Methods 2011, 8, 441).

An energy profile is a row of short horizontal levels (one per state, x = its position in the
sequence) joined by thin dashed connectors. Each level carries its name above and its value below;
transition states get a double dagger. Labels are placed by a greedy collision search in display
space: every label is moved vertically, in steps of a point, away from its level until its box
touches no other label, no level and no connector, and sits nearer its own level than any other
profile's level of the same state; where overlaid levels are too close for that, a thin leader joins
label and level (see :func:`_place_labels`). Only related profiles share axes (see
:func:`overlay_groups`); a run draws each profile alone as well.
"""

from __future__ import annotations

import re
import textwrap
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import matplotlib
import matplotlib.colors
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg  # figures are files: no window, no pyplot
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.transforms import Bbox

from ..errors import QcthermoError
from ..fileio import atomic_open
from ..units import hartree_to

#: Okabe-Ito colours, ordered so that the first few are the most distinct on white (yellow last)
PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000", "#F0E442")

#: quantities a profile can show, with the symbol of the y axis label
QUANTITY_SYMBOLS = {"G": "ΔG", "G_rrho": "ΔG(RRHO)", "H": "ΔH", "E_zpe": "Δ(E+ZPE)", "E": "ΔE"}

#: typeset units for axis labels
UNIT_LABELS = {"kcal/mol": "kcal mol⁻¹", "kJ/mol": "kJ mol⁻¹", "eV": "eV", "Eh": "Eₕ"}

#: what the marks of the energy-span analysis are called on the figure
MARK_TAGS = {"tdts": "TDTS", "tdi": "TDI"}

#: line styles a profile's connectors may take (the reaction file's ``style``)
CONNECTOR_STYLES = ("dashed", "dotted", "solid", "dashdot")

#: colour of a state name shared by several overlaid profiles
SHARED_NAME_COLOR = "#444444"

#: matplotlib settings for every figure (also at save time: the font types are read then)
STYLE: dict[str, Any] = {
    "font.family": "DejaVu Sans",
    "font.size": 7.0,
    "axes.labelsize": 8.0,
    "axes.titlesize": 8.0,
    "axes.linewidth": 0.6,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "xtick.labelsize": 7.0,
    "ytick.labelsize": 7.0,
    "xtick.major.width": 0.6,
    "ytick.major.width": 0.6,
    "xtick.major.size": 2.5,
    "ytick.major.size": 2.5,
    "legend.fontsize": 7.0,
    "legend.frameon": False,
    "lines.linewidth": 1.0,
    "svg.fonttype": "none",  # text stays text: searchable, editable by the journal
    "pdf.fonttype": 42,  # TrueType, not Type 3: what publishers ask for
    "svg.hashsalt": "qcthermo",  # reproducible element ids
    # every text is plain: a name or label holding "$x$" is printed as written, not taken for mathtext (which
    # raises on "$\\alpha$ $"); the figures typeset with Unicode (ΔG, kcal mol⁻¹) and need no mathtext
    "text.parse_math": False,
}

#: width of one journal column, inches (8.5 cm), and the widest figure we make (17.8 cm, two columns)
COLUMN_WIDTH_IN = 8.5 / 2.54
MAX_WIDTH_IN = 17.8 / 2.54
FIGURE_HEIGHT_IN = 2.6

LEVEL_HALF_WIDTH = 0.34  # data units; states sit at x = 0, 1, 2, ...
WRAP_FRACTION = 0.8  # names wrap to this fraction of a slot: a little wider than the level, clear of connectors
LEVEL_LINEWIDTH = 1.8  # points
LABEL_GAP_PT = 1.5  # clearance kept between a label and anything else
NUDGE_STEP_PT = 1.0
MAX_NUDGE_STEPS = 200
MAX_WIDENINGS = 12  # of the y range, by 20 % each, while labels do not fit
NAME_CROSS_AFTER_PT = 10.0  # a name crosses to below its level only when the space above is crowded
ATTACH_MARGIN_PT = 0.5  # a label counts as nearest its own level only when nearer by this much
DODGE_STEP = 0.06  # data units: overlaid profiles' levels shift this much apart along x, so none hides another
DODGE_SPREAD = 0.18  # ... and at most this much between the first and the last
LEADER_LINEWIDTH = 0.5  # points
LEADER_AFTER_PT = 12.0  # a label farther than this from its level gets a leader
LEADER_REACH_PT = 30.0  # how far a label with a leader may go before an unambiguous spot farther away is preferred
LEADER_TRIALS = 80  # nearest free spots tried for a label with a leader
LEADER_CROSSING_COST_PT = 20.0  # a leader may cross another level rather than its label move this much farther
LABEL_CROSSING_COST_PT = 1e3  # ... and another label only when no spot is free otherwise


@dataclass
class ProfileState:
    """One state of an energy profile.

    Attributes:
        label: the state's name as shown (e.g. "int1", "cat + sub").
        value: its energy in the profile's display unit, relative to the first state of the profile.
        is_ts: True for a transition state (drawn with a double dagger).
        species: the species that make up the state.
    """

    label: str
    value: float
    is_ts: bool = False
    species: tuple[str, ...] = ()


@dataclass
class ProfileData:
    """One energy profile ready to draw.

    Attributes:
        name: the profile's name (the legend entry).
        states: the states in order.
        unit: display unit of the values, one of ``qcthermo.units.ENERGY_UNITS``.
        quantity: "G" | "G_rrho" | "H" | "E_zpe" | "E" (G under the chosen low-mode model).
        cyclic: a catalytic cycle (the last state closes it).
        color: a matplotlib colour; None takes the next palette colour.
        label_states: labels of the states that get text; None labels all.
        marks: results of the energy-span analysis, {"tdts": state label, "tdi": state label}, drawn as
            a faint halo behind the level and a tag under its value.
        style: line style of the connectors, one of :data:`CONNECTOR_STYLES`.
        overlay: name of the overlay group the profile is drawn with; None groups it with the profiles
            that start from the same species (see :func:`overlay_groups`).
    """

    name: str
    states: list[ProfileState]
    unit: str = "kcal/mol"
    quantity: str = "G"
    cyclic: bool = False
    color: str | None = None
    label_states: list[str] | None = None
    marks: dict[str, str] = field(default_factory=dict)
    style: str = "dashed"
    overlay: str | None = None

    @property
    def values(self) -> np.ndarray:
        return np.array([s.value for s in self.states], dtype=float)


# ---------------------------------------------------------------------------------------------------
# from the main job's records to ProfileData


def _pick_temperature(value: Any, index: int) -> float:
    """A state's energy at one temperature: arrays over T are indexed, scalars pass through."""
    arr = np.asarray(value, dtype=float)
    return float(arr) if arr.ndim == 0 else float(arr.reshape(-1)[index])


def _profile_from_record(record: dict[str, Any], quantity: str, unit: str, index: int) -> ProfileData:
    name = str(record.get("name", "profile"))
    raw_states = record.get("states") or []
    if not raw_states:
        raise QcthermoError(f"profile {name!r} has no states")
    absolute = []
    for state in raw_states:
        energies = state.get("value_Eh") or {}
        value = energies.get(quantity)
        value = np.nan if value is None else _pick_temperature(value, index)
        if not np.isfinite(value):
            raise QcthermoError(f"profile {name!r}: state {state.get('label')!r} has no {quantity} energy")
        absolute.append(value)
    relative = hartree_to(np.asarray(absolute) - absolute[0], unit)
    states = [
        ProfileState(str(s.get("label")), float(v), bool(s.get("is_ts", False)), tuple(s.get("species", ())))
        for s, v in zip(raw_states, relative, strict=True)
    ]
    labels = [s.label for s in states]
    label_states = record.get("label_states")
    for wanted in [*(label_states or []), *(record.get("marks") or {}).values()]:
        if wanted not in labels:
            raise QcthermoError(f"profile {name!r}: no state {wanted!r} (states: {', '.join(labels)})")
    style = str(record.get("style") or "dashed")
    if style not in CONNECTOR_STYLES:
        raise QcthermoError(f"profile {name!r}: style {style!r}; choose one of {', '.join(CONNECTOR_STYLES)}")
    color = record.get("color")
    if color is not None and not matplotlib.colors.is_color_like(color):
        raise QcthermoError(f"profile {name!r}: {color!r} is not a colour (a name like 'black' or '#0072B2')")
    return ProfileData(
        name=name,
        states=states,
        unit=unit,
        quantity=quantity,
        cyclic=bool(record.get("cyclic", False)),
        color=color,
        label_states=list(label_states) if label_states is not None else None,
        marks=dict(record.get("marks") or {}),
        style=style,
        overlay=None if record.get("overlay") is None else str(record["overlay"]),
    )


def profiles_from_records(
    records: Iterable[dict[str, Any]],
    quantity: str = "G",
    unit: str = "kcal/mol",
    *,
    temperature_index: int = 0,
    names: Sequence[str] | None = None,
) -> list[ProfileData]:
    """Turn the main job's profile records into :class:`ProfileData` in ``unit``, relative to state one.

    ``records`` are dicts ``{name, states: [{label, value_Eh: {quantity: Eh or array over T}, is_ts,
    species}], cyclic, color, label_states, style, order, marks}`` (see docs/figures.md). Profiles are
    sorted by their ``order`` key (stable; without one they keep the file's order); ``names`` keeps
    only those profiles, in that order. Raises ``QcthermoError`` for an unknown quantity, profile or
    state name, or a state without the quantity.
    """
    if quantity not in QUANTITY_SYMBOLS:
        raise QcthermoError(f"unknown quantity {quantity!r}; choose one of {', '.join(QUANTITY_SYMBOLS)}")
    records = list(records)
    records.sort(key=lambda r: r.get("order") if r.get("order") is not None else float("inf"))
    if names:
        by_name = {str(r.get("name")): r for r in records}
        missing = [n for n in names if n not in by_name]
        if missing:
            raise QcthermoError(f"no profile named {missing[0]!r} (profiles: {', '.join(by_name) or 'none'})")
        records = [by_name[n] for n in names]
    return [_profile_from_record(r, quantity, unit, temperature_index) for r in records]


def _overlay_key(profile: ProfileData) -> tuple[str, ...]:
    """What decides which profiles share a figure: the explicit overlay group, else the species of the
    first state (its label when the state lists no species)."""
    if profile.overlay is not None:
        return ("group", profile.overlay)
    first = profile.states[0]
    return ("start", *sorted(set(first.species))) if first.species else ("start-label", first.label)


def overlay_groups(profiles: Sequence[ProfileData]) -> list[list[ProfileData]]:
    """Profiles that belong in one overlaid diagram, in drawing order.

    Alternative pathways, catalysts compared on one substrate, or levels of theory of one mechanism start
    from the same reactants, so by default profiles whose first states hold the same species are
    overlaid; an explicit ``overlay`` group name overrides that. Unrelated profiles never share axes:
    their levels would sit side by side on one energy scale and their labels could be read as each
    other's. Groups keep the order of their first profile.
    """
    groups: dict[tuple[str, ...], list[ProfileData]] = {}
    for profile in profiles:
        groups.setdefault(_overlay_key(profile), []).append(profile)
    return list(groups.values())


def profile_stems(profiles: Sequence[ProfileData]) -> list[str]:
    """File stems ``profile_<name>`` of single-profile figures: the name with anything but letters,
    digits, '.', '-' and '_' replaced by '_' (safe on every file system), numbered when two collide."""
    stems: list[str] = []
    for profile in profiles:
        base = "profile_" + (re.sub(r"[^A-Za-z0-9._-]+", "_", profile.name).strip("._") or "unnamed")
        stem, n = base, 1
        while stem.lower() in {x.lower() for x in stems}:  # some file systems ignore case
            n += 1
            stem = f"{base}-{n}"
        stems.append(stem)
    return stems


# ---------------------------------------------------------------------------------------------------
# drawing


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
    """The name shown above a level, wrapped at ``wrap`` characters (whole words and hyphenated parts
    kept together); transition states get a double dagger."""
    name = textwrap.fill(state.label, wrap, break_long_words=False) if wrap else state.label
    return f"{name}‡" if state.is_ts and not name.endswith("‡") else name


@dataclass
class _Label:
    """A text being placed: its artist, the sign it prefers to move in, its level's height (display),
    the state column it labels and the profiles (indices) whose level there it belongs to."""

    artist: Any
    direction: int  # +1 above its level, -1 below
    anchor_y: float
    cross_after_pt: float = MAX_NUDGE_STEPS * NUDGE_STEP_PT  # how far it moves on its own side before trying the other
    column: int = 0
    owners: frozenset[int] = frozenset()
    leader: np.ndarray | None = None  # (x0, y0, x1, y1) display units, from its level to the text, when needed


@dataclass
class _Levels:
    """The obstacles of a diagram: level lines (and energy-span halos) with, per line, its state column,
    its profile's index and whether it is a level (not a halo); and the connectors."""

    lines: list[Line2D]
    columns: np.ndarray
    owners: np.ndarray
    is_level: np.ndarray
    connectors: list[Line2D]


def _new_figure(width_in: float) -> Figure:
    fig = Figure(figsize=(width_in, FIGURE_HEIGHT_IN))
    FigureCanvasAgg(fig)
    return fig


def _style_axes(ax) -> None:
    ax.spines["top"].set_visible(False)
    ax.spines["right"].set_visible(False)
    ax.tick_params(direction="out")


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
        name = state_name(state, wrap)
        names.append(_Text(i, name, state.value, i + dx, color, owner, f"name:{i}:{name}"))
    return values, names


def _annotate(ax, text: str, xy: tuple[float, float], direction: int, color: str, gid: str):
    """A label anchored at a level's centre, offset in points above (+1) or below (-1) it."""
    return ax.annotate(text, xy=xy, xytext=(0, direction * LABEL_GAP_PT), textcoords="offset points",
                       ha="center", va="bottom" if direction > 0 else "top", color=color,
                       fontsize=STYLE["font.size"], zorder=4, annotation_clip=False, gid=gid)


def _draw_texts(ax, texts: list[_Text], direction: int, cross_after_pt: float) -> list[_Label]:
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
            artist = _annotate(ax, text, (only.x, height), direction, only.color, only.gid)
        else:
            colors = {t.color for t in members}
            color = colors.pop() if len(colors) == 1 else SHARED_NAME_COLOR
            gid = members[0].gid if direction > 0 else f"value:*:{i}:{text}"
            artist = _annotate(ax, text, (i, height), direction, color, gid)
        labels.append(_Label(artist, direction, height, cross_after_pt, i, frozenset(t.owner for t in members)))
    return labels


def _segments_px(lines: list[Line2D]) -> np.ndarray:
    """Each two-point line as (x_a, y_a, x_b, y_b) in display (pixel) coordinates, shape (n, 4)."""
    if not lines:
        return np.zeros((0, 4))
    return np.array([line.get_transform().transform(line.get_xydata()).reshape(-1) for line in lines])


def _level_boxes(levels: list[Line2D], fig, pad_px: float) -> np.ndarray:
    """The ink of each level line (its own width in points) plus ``pad_px``, as (x0, x1, y0, y1) rows."""
    seg = _segments_px(levels)
    half = np.array([line.get_linewidth() for line in levels]) / 2 * fig.dpi / 72.0 + pad_px
    x0, x1 = np.minimum(seg[:, 0], seg[:, 2]), np.maximum(seg[:, 0], seg[:, 2])
    return np.column_stack([x0 - pad_px, x1 + pad_px, seg[:, 1] - half, seg[:, 1] + half])


def _blocked_spans(x0: float, x1: float, boxes: np.ndarray, connectors: np.ndarray) -> np.ndarray:
    """The y ranges (lo, hi) that anything occupies within the vertical slab x0..x1 (display units).

    A box blocks its own y range where it overlaps the slab in x. A straight connector blocks the y
    range it sweeps between the slab's edges: a label spanning the whole slab crosses it exactly when
    their y ranges meet.
    """
    in_x = (boxes[:, 0] <= x1) & (boxes[:, 1] >= x0)
    spans = [boxes[in_x][:, 2:4]]
    if len(connectors):
        xa, ya, xb, yb = connectors.T
        left, right = np.maximum(np.minimum(xa, xb), x0), np.minimum(np.maximum(xa, xb), x1)
        hit = left <= right
        vertical = xb == xa  # a vertical segment (a leader) sweeps its whole height
        slope = (yb - ya) / np.where(vertical, 1.0, xb - xa)
        y_left = np.where(vertical, ya, ya + slope * (left - xa))
        y_right = np.where(vertical, yb, ya + slope * (right - xa))
        spans.append(np.column_stack([np.minimum(y_left, y_right), np.maximum(y_left, y_right)])[hit])
    return np.concatenate(spans)


def _candidate_offsets(label: _Label, height_pt: float) -> np.ndarray:
    """Offsets (points) to try, nearest first: away from the level on its own side, and, once that has
    moved more than ``label.cross_after_pt``, alternately on the level's other side."""
    d, k = label.direction, np.arange(MAX_NUDGE_STEPS) * NUDGE_STEP_PT
    lag = min(int(label.cross_after_pt / NUDGE_STEP_PT), MAX_NUDGE_STEPS)
    own = d * (LABEL_GAP_PT + k)
    other = -d * (LABEL_GAP_PT + height_pt + k)
    interleaved = np.column_stack([own[lag:], other[: MAX_NUDGE_STEPS - lag]]).reshape(-1)
    return np.concatenate([own[:lag], interleaved, other[MAX_NUDGE_STEPS - lag:]])


def _box_distances(box: tuple[float, float], bottoms: np.ndarray, height: float, ink: np.ndarray) -> np.ndarray:
    """Distance (display units) between a label box (x range ``box``, one bottom per candidate) and each
    level's ink box (rows x0, x1, y0, y1): 0 where they touch, else the gap between the rectangles."""
    dx = np.maximum(np.maximum(ink[:, 0] - box[1], box[0] - ink[:, 1]), 0.0)
    dy = np.maximum(np.maximum(ink[None, :, 2] - (bottoms + height)[:, None], bottoms[:, None] - ink[None, :, 3]), 0.0)
    return np.hypot(dx[None, :], dy)


def _attachment(label: _Label, box: tuple[float, float], bottoms: np.ndarray, height: float, ink: np.ndarray,
                levels: _Levels, px_per_pt: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, bool]:
    """Where a label is attached to its level, for every candidate position.

    Returns: whether it is within :data:`LEADER_AFTER_PT` of one of its own levels and nearer to it than
    to any other profile's level of its state column (attached, no leader needed); whether it is at
    least the nearer (unambiguous, though perhaps far); which own level is nearest (index into
    ``levels.lines``); and whether the column holds other profiles' levels at all (without them
    every position is unambiguous).
    """
    in_column = np.flatnonzero(levels.is_level & (levels.columns == label.column))
    own = np.isin(levels.owners[in_column], list(label.owners))
    dist = _box_distances(box, bottoms, height, ink[in_column])
    own_dist = np.where(own[None, :], dist, np.inf)
    nearest_own = in_column[np.argmin(own_dist, axis=1)]
    near = own_dist.min(axis=1) <= LEADER_AFTER_PT * px_per_pt
    if own.all():
        return near, np.ones(len(bottoms), dtype=bool), nearest_own, False
    nearer = own_dist.min(axis=1) + ATTACH_MARGIN_PT * px_per_pt < np.where(own[None, :], np.inf, dist).min(axis=1)
    return near & nearer, nearer, nearest_own, True


def _crosses_boxes(leaders: np.ndarray, boxes: np.ndarray, skip: np.ndarray | None = None,
                   samples: int = 24) -> np.ndarray:
    """Whether each leader passes through any of the boxes (rows x0, x1, y0, y1), tested at points along
    it; ``skip`` gives, per leader, the index of a box it may touch (its own level)."""
    near = np.flatnonzero((boxes[:, 1] > leaders[:, [0, 2]].min()) & (boxes[:, 0] < leaders[:, [0, 2]].max()))
    if not near.size or not len(leaders):
        return np.zeros(len(leaders), dtype=bool)
    boxes = boxes[near]
    t = np.linspace(0.0, 1.0, samples)[None, :]
    xs = (leaders[:, :1] + t * (leaders[:, 2:3] - leaders[:, :1]))[..., None]
    ys = (leaders[:, 1:2] + t * (leaders[:, 3:4] - leaders[:, 1:2]))[..., None]
    inside = ((xs > boxes[:, 0]) & (xs < boxes[:, 1]) & (ys > boxes[:, 2]) & (ys < boxes[:, 3])).any(axis=1)
    if skip is not None:
        inside &= near[None, :] != skip[:, None]
    return inside.any(axis=1)


def _clashes(x0: float, x1: float, bottoms: np.ndarray, height: float, occupied: np.ndarray, segments: np.ndarray,
             bounds: Bbox | None) -> np.ndarray:
    """For every candidate bottom: does the padded box x0..x1 x bottom..bottom+height touch anything
    placed, cross a connector or leader, or (with ``bounds``) leave them?"""
    spans = _blocked_spans(x0, x1, occupied, segments)
    clash = ((bottoms[:, None] <= spans[None, :, 1]) & (bottoms[:, None] + height >= spans[None, :, 0])).any(1)
    if bounds is not None:
        clash |= (bottoms < bounds.y0) | (bottoms + height > bounds.y1) | (x0 < bounds.x0) | (x1 > bounds.x1)
    return clash


def _place_labels(fig, labels: list[_Label], levels: _Levels, bounds: Bbox | None = None) -> tuple[list[Bbox], bool]:
    """Greedy placement: each label takes the first offset at which it clashes with nothing placed and
    is close to its own level, and nearer to it than to any other profile's level of its column; a
    label alone in its column takes the first free offset when no close one is free.

    Values go first (they matter most and sit right under their level), from the lowest level up, then
    names from the highest level down, so that near-degenerate levels stack their labels outwards in
    order. A label's box moves rigidly with its offset, so it is measured once and every candidate
    offset is tested at once against the occupied y ranges. With ``bounds`` (display units) a label
    must also stay inside them. When no offset attaches a label (overlaid, near-degenerate levels),
    it gets a leader: see :func:`_place_with_leader`. Returns the final boxes and whether every label
    found a free spot.
    """
    renderer = fig.canvas.get_renderer()
    px_per_pt = fig.dpi / 72.0
    pad = LABEL_GAP_PT / 2 * px_per_pt
    occupied = _level_boxes(levels.lines, fig, pad)  # rows (x0, x1, y0, y1); placed labels are appended
    ink = _level_boxes(levels.lines, fig, 0.0)
    segments = _segments_px(levels.connectors)  # leaders are appended
    order = sorted(labels, key=lambda lab: (lab.direction > 0, -lab.direction * lab.anchor_y))
    placed: list[Bbox] = []
    all_free = True
    for label in order:
        start = label.direction * LABEL_GAP_PT
        label.artist.xyann = (0.0, start)
        box = label.artist.get_window_extent(renderer)
        x0, x1, height = box.x0 - pad, box.x1 + pad, box.height + 2 * pad
        offsets = _candidate_offsets(label, box.height / px_per_pt)
        bottoms = box.y0 - pad + (offsets - start) * px_per_pt
        free = ~_clashes(x0, x1, bottoms, height, occupied, segments, bounds)
        attached, nearer, nearest, rivals = _attachment(label, (box.x0, box.x1), bottoms + pad, box.height, ink,
                                                        levels, px_per_pt)
        good, unambiguous = np.flatnonzero(free & attached), np.flatnonzero(free & nearer)
        label.leader, shift, ok = None, 0.0, True
        if good.size:
            choice = good[0]
        elif not rivals and unambiguous.size:  # alone in its column: a far spot is still unambiguous
            choice = unambiguous[0]
        else:  # a short leader; else the nearest spot that is unambiguous; else a long leader
            level = int(nearest[np.flatnonzero(free)[0]] if free.any() else nearest[0])
            args = ((x0, x1), bottoms, height, offsets, pad, level, ink, occupied, segments, bounds, len(levels.lines))
            choice, shift, label.leader, ok = _place_with_leader(*args, reach_pt=LEADER_REACH_PT)
            if not ok and unambiguous.size:
                choice, label.leader, ok = unambiguous[0], None, True
            elif not ok:
                choice, shift, label.leader, ok = _place_with_leader(*args, reach_pt=np.inf)
        if label.leader is not None:
            segments = np.vstack([segments, label.leader[None, :]])
        all_free &= ok
        label.artist.xyann = (shift / px_per_pt, float(offsets[choice]))
        bottom = float(bottoms[choice])
        occupied = np.vstack([occupied, [x0 + shift, x1 + shift, bottom, bottom + height]])
        placed.append(Bbox.from_extents(x0 + shift, bottom, x1 + shift, bottom + height))
    return placed, all_free


def _place_with_leader(x_range: tuple[float, float], bottoms: np.ndarray, height: float, offsets: np.ndarray,
                       pad: float, level: int, ink: np.ndarray, occupied: np.ndarray, segments: np.ndarray,
                       bounds: Bbox | None, n_levels: int, reach_pt: float) -> tuple[int, float, np.ndarray, bool]:
    """Where a label that cannot sit by its own level goes, and its leader.

    Three columns are tried: over the level's centre (leader from the level's right end to the
    label's right side), and beside the level's right and left ends (leader from that end to the
    label's near side), each at every candidate height. The cheapest wins: the distance moved in
    points, plus :data:`LEADER_CROSSING_COST_PT` when the leader crosses another level and
    :data:`LABEL_CROSSING_COST_PT` when it crosses another label; spots farther than ``reach_pt`` from
    the level are not tried (a long leader takes the room of many labels). ``level`` indexes the
    level's row in ``ink``; the first ``n_levels`` rows of ``occupied`` are the levels. Returns
    (candidate index, x shift in display units, leader as (x0, y0, x1, y1) display units from the level
    to the label, whether the spot is free).
    """
    x0, x1 = x_range
    lx0, lx1, ly = ink[level, 0], ink[level, 1], (ink[level, 2] + ink[level, 3]) / 2
    labels_placed = occupied[n_levels:]
    best = (np.inf, len(offsets) - 1, 0.0, np.array([lx1, ly, x1 - pad, bottoms[-1] + height / 2]))
    # (x shift of the box, the level end the leader starts from, the label side it ends on, extra cost)
    for shift, start_x, end_x, extra in ((0.0, lx1, x1 - pad, 0.0), (lx1 - x0, lx1, lx1 + pad, 2.0),
                                         (lx0 - x1, lx0, lx0 - pad, 2.0)):
        free = np.flatnonzero(~_clashes(x0 + shift, x1 + shift, bottoms, height, occupied, segments, bounds)
                              & (np.abs(offsets) <= reach_pt))
        free = free[np.argsort(np.abs(offsets[free]), kind="stable")][:LEADER_TRIALS]  # the nearest free spots
        if not free.size:
            continue
        n = len(free)
        leaders = np.column_stack([np.full(n, start_x), np.full(n, ly), np.full(n, end_x),
                                   bottoms[free] + height / 2])
        cost = (np.abs(offsets[free]) + extra
                + LEADER_CROSSING_COST_PT * _crosses_boxes(leaders, ink, np.full(n, level))
                + LABEL_CROSSING_COST_PT * _crosses_boxes(leaders, labels_placed))
        k = int(np.argmin(cost))
        if cost[k] < best[0]:
            best = (cost[k], int(free[k]), shift, leaders[k])
    return best[1], best[2], best[3], bool(np.isfinite(best[0]))


def _fit_ylim(ax, boxes: list[Bbox]) -> None:
    """Widen the y range so that every label box (display units) would be inside the axes."""
    inv = ax.transData.inverted()
    ys = [inv.transform((0.0, y))[1] for b in boxes for y in (b.y0, b.y1)]
    lo, hi = ax.get_ylim()
    new_lo, new_hi = min([lo, *ys]), max([hi, *ys])
    margin = 0.02 * (new_hi - new_lo)
    ax.set_ylim(new_lo - margin, new_hi + margin)


def _arrange_labels(ax, labels: list[_Label], levels: _Levels) -> None:
    """Place every label inside the axes without a clash, then draw the leaders some of them need.

    A first free placement shows how much room the labels need; the y range is widened to hold it.
    Widening moves the levels closer together on the page, so the labels are placed again, now kept
    inside the axes; while some label finds no free spot the range is widened by a further 20 %.
    """
    fig = ax.figure
    _fit_ylim(ax, _place_labels(fig, labels, levels)[0])
    for _ in range(MAX_WIDENINGS):
        if _place_labels(fig, labels, levels, ax.get_window_extent())[1]:
            break
        lo, hi = ax.get_ylim()
        ax.set_ylim(lo - 0.1 * (hi - lo), hi + 0.1 * (hi - lo))
    else:  # a last resort for absurd crowding: room for everything, labels placed for the final range
        _fit_ylim(ax, _place_labels(fig, labels, levels)[0])
        _place_labels(fig, labels, levels)
    _draw_leaders(ax, labels)


def _draw_leaders(ax, labels: list[_Label]) -> None:
    """A thin line in the label's colour from its level to each label that sits nearer another level."""
    to_data = ax.transData.inverted()
    for label in labels:
        if label.leader is not None:
            (x0, y0), (x1, y1) = to_data.transform(label.leader.reshape(2, 2))
            ax.plot((x0, x1), (y0, y1), color=label.artist.get_color(), lw=LEADER_LINEWIDTH, zorder=2.5,
                    solid_capstyle="butt", gid=f"leader:{label.artist.get_gid()}")


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
    values; a legend names the profiles when there are several.
    """
    profiles = list(profiles)
    _check_shared_axis(profiles)
    with matplotlib.rc_context(STYLE):
        if ax is None:
            fig = _new_figure(_profile_width(max(len(p.states) for p in profiles)))
            ax = fig.add_axes(_axes_rect(len(profiles), title))
        _draw_profiles(ax, profiles, precision, title)
    return ax.figure


def plot_profile_panels(groups: Sequence[Sequence[ProfileData]], *, precision: int = 1) -> Figure:
    """Several unrelated diagrams as small multiples: one panel per group, stacked, each with its own
    energy axis and a title naming its profile (a legend when the panel overlays several)."""
    groups = [list(g) for g in groups]
    _check_shared_axis([p for g in groups for p in g])
    n_states = max(len(p.states) for g in groups for p in g)
    with matplotlib.rc_context(STYLE):
        fig = Figure(figsize=(_profile_width(n_states), FIGURE_HEIGHT_IN * len(groups)))
        FigureCanvasAgg(fig)
        for row, group in enumerate(groups):
            band = (1.0 - (row + 1) / len(groups), 1.0 - row / len(groups))
            title = group[0].name if len(group) == 1 else None
            _draw_profiles(fig.add_axes(_axes_rect(len(group), title, band)), group, precision, title)
    return fig


def _dodges(n_profiles: int) -> np.ndarray:
    """Shifts along x (data units) of overlaid profiles' levels, centred on each state's slot."""
    step = DODGE_STEP if n_profiles < 2 else min(DODGE_STEP, DODGE_SPREAD / (n_profiles - 1))
    return (np.arange(n_profiles) - (n_profiles - 1) / 2) * step


def _draw_profiles(ax, profiles: list[ProfileData], precision: int, title: str | None) -> None:
    fig = ax.figure
    n_states = max(len(p.states) for p in profiles)
    _style_axes(ax)
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
    _arrange_labels(ax, labels, _Levels(lines, np.array(columns), np.array(owners), np.array(is_level), connectors))
    if len(profiles) > 1:
        ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, 0.0), ncol=min(len(profiles), 3),
                  handlelength=1.5, columnspacing=1.2)
    if title:
        ax.set_title(title, loc="left")


# ---------------------------------------------------------------------------------------------------
# files

FORMATS = {".svg": "svg", ".png": "png", ".pdf": "pdf"}
_METADATA = {"svg": {"Date": None}, "pdf": {"CreationDate": None}, "png": {}}  # reproducible files


def save_figure(fig: Figure, path: str | Path) -> Path:
    """Write ``fig`` as SVG, PNG (300 dpi) or PDF, chosen by the extension, atomically."""
    path = Path(path)
    fmt = FORMATS.get(path.suffix.lower())
    if fmt is None:
        raise QcthermoError(f"{path}: figure format must be .svg, .png or .pdf")
    with matplotlib.rc_context(STYLE), atomic_open(path, "wb") as handle:
        fig.savefig(handle, format=fmt, dpi=300, bbox_inches="tight", pad_inches=0.03, metadata=_METADATA[fmt])
    return path


def figure_svg(fig: Figure) -> str:
    """The figure as an SVG string ready to inline in HTML: no XML prolog, no RDF metadata block."""
    import io

    buffer = io.BytesIO()
    with matplotlib.rc_context(STYLE):
        fig.savefig(buffer, format="svg", bbox_inches="tight", pad_inches=0.03, metadata=_METADATA["svg"])
    text = buffer.getvalue().decode("utf-8")
    return re.sub(r"\s*<metadata>.*?</metadata>", "", text[text.index("<svg"):], flags=re.S)


def profile_temperature_index(results) -> int:
    """The temperature a profile shows: the one nearest 298.15 K of the run's (common practice)."""
    temps = np.atleast_1d(np.asarray(getattr(results.conditions, "temperature", 298.15), dtype=float))
    return int(np.argmin(np.abs(temps - 298.15)))


def run_profiles(results) -> list[ProfileData]:
    """The run's drawable profiles (free energy under the chosen model, at the temperature nearest 298.15 K).

    Profiles that cannot be drawn (a state without energies) are left out; the audit names the cause.
    """
    unit = getattr(results, "energy_unit", "kcal/mol")
    index = profile_temperature_index(results)
    profiles = []
    for record in getattr(results, "profiles", None) or []:
        try:
            profiles += profiles_from_records([record], "G", unit, temperature_index=index)
        except QcthermoError:
            continue
    return profiles


def overview_figure(profiles: Sequence[ProfileData], precision: int = 1) -> Figure:
    """The diagram of several profiles: overlaid when they form one group (:func:`overlay_groups`),
    else one panel per group."""
    groups = overlay_groups(profiles)
    return plot_profiles(groups[0], precision=precision) if len(groups) == 1 else plot_profile_panels(groups,
                                                                                                      precision=precision)


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

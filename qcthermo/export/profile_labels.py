"""Where the labels of an energy diagram go: a collision-free layout measured in display space.

Every label is moved vertically, in steps of a point, away from its level until its box touches no
other label, no level and no connector, and sits nearer its own level than any other profile's level
of the same state; where overlaid levels are too close for that, a thin leader joins label and level
(see :func:`_place_labels`; docs/figures.md, "Labels never overlap").
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.transforms import Bbox

LABEL_GAP_PT = 1.5  # clearance kept between a label and anything else
NUDGE_STEP_PT = 1.0
MAX_NUDGE_STEPS = 200
MAX_WIDENINGS = 12  # of the y range, by 20 % each, while labels do not fit
NEAR_WIDENINGS = 3  # ... and at most this many more while some label fits only far from its level
ATTACH_MARGIN_PT = 0.5  # a label counts as nearest its own level only when nearer by this much
LEADER_LINEWIDTH = 0.5  # points
LEADER_AFTER_PT = 12.0  # a label farther than this from its level gets a leader
LEADER_REACH_PT = 30.0  # how far a label with a leader may go before an unambiguous spot farther away is preferred
LEADER_TRIALS = 80  # nearest free spots tried for a label with a leader
LEADER_CROSSING_COST_PT = 20.0  # a leader may cross another level rather than its label move this much farther
LABEL_CROSSING_COST_PT = 1e3  # ... and another label only when no spot is free otherwise

@dataclass
class Label:
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
class Levels:
    """The obstacles of a diagram: level lines (and energy-span halos) with, per line, its state column,
    its profile's index and whether it is a level (not a halo); and the connectors."""

    lines: list[Line2D]
    columns: np.ndarray
    owners: np.ndarray
    is_level: np.ndarray
    connectors: list[Line2D]


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


def _candidate_offsets(label: Label, height_pt: float) -> np.ndarray:
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


def _attachment(label: Label, box: tuple[float, float], bottoms: np.ndarray, height: float, ink: np.ndarray,
                levels: Levels, px_per_pt: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, bool]:
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


def _inward_shift(x0: float, x1: float, bounds: Bbox | None) -> float:
    """How far (display units) a label's box x0..x1 moves sideways to stay inside ``bounds``: a long name
    over the first or last level stays clear of the axis and of the figure's edge."""
    if bounds is None or x1 - x0 > bounds.width:
        return 0.0
    return max(bounds.x0 - x0, 0.0) + min(bounds.x1 - x1, 0.0)


def _place_labels(fig, labels: list[Label], levels: Levels,
                  bounds: Bbox | None = None) -> tuple[list[Bbox], bool, bool]:
    """Greedy placement: each label takes the first offset at which it clashes with nothing placed and
    is close to its own level, and nearer to it than to any other profile's level of its column; a
    label alone in its column takes the first free offset when no close one is free.

    Values go first (they matter most and sit right under their level), from the lowest level up, then
    names from the highest level down, so that near-degenerate levels stack their labels outwards in
    order. A label's box moves rigidly with its offset, so it is measured once and every candidate
    offset is tested at once against the occupied y ranges. With ``bounds`` (display units) a label
    must also stay inside them. When no offset attaches a label (overlaid, near-degenerate levels),
    it gets a leader: see :func:`_place_with_leader`. With ``bounds`` a label also moves sideways to stay
    inside them. Returns the final boxes, whether every label found a free spot, and whether every label
    sits by its own level (within :data:`LEADER_AFTER_PT`, or with a leader).
    """
    renderer = fig.canvas.get_renderer()
    px_per_pt = fig.dpi / 72.0
    pad = LABEL_GAP_PT / 2 * px_per_pt
    occupied = _level_boxes(levels.lines, fig, pad)  # rows (x0, x1, y0, y1); placed labels are appended
    ink = _level_boxes(levels.lines, fig, 0.0)
    segments = _segments_px(levels.connectors)  # leaders are appended
    order = sorted(labels, key=lambda lab: (lab.direction > 0, -lab.direction * lab.anchor_y))
    placed: list[Bbox] = []
    all_free = all_near = True
    for label in order:
        start = label.direction * LABEL_GAP_PT
        label.artist.xyann = (0.0, start)
        box = label.artist.get_window_extent(renderer)
        inward = _inward_shift(box.x0 - pad, box.x1 + pad, bounds)
        x0, x1, height = box.x0 - pad + inward, box.x1 + pad + inward, box.height + 2 * pad
        offsets = _candidate_offsets(label, box.height / px_per_pt)
        bottoms = box.y0 - pad + (offsets - start) * px_per_pt
        free = ~_clashes(x0, x1, bottoms, height, occupied, segments, bounds)
        attached, nearer, nearest, rivals = _attachment(label, (box.x0 + inward, box.x1 + inward), bottoms + pad,
                                                        box.height, ink, levels, px_per_pt)
        good, unambiguous = np.flatnonzero(free & attached), np.flatnonzero(free & nearer)
        label.leader, shift, ok = None, 0.0, True
        if good.size:
            choice = good[0]
        elif not rivals and unambiguous.size:  # alone in its column: a far spot is still unambiguous
            choice, all_near = unambiguous[0], False
        else:  # a short leader; else the nearest spot that is unambiguous; else a long leader
            level = int(nearest[np.flatnonzero(free)[0]] if free.any() else nearest[0])
            args = ((x0, x1), bottoms, height, offsets, pad, level, ink, occupied, segments, bounds, len(levels.lines))
            choice, shift, label.leader, ok = _place_with_leader(*args, reach_pt=LEADER_REACH_PT)
            if not ok and unambiguous.size:
                choice, label.leader, ok, all_near = unambiguous[0], None, True, False
            elif not ok:
                choice, shift, label.leader, ok = _place_with_leader(*args, reach_pt=np.inf)
        if label.leader is not None:
            segments = np.vstack([segments, label.leader[None, :]])
        all_free &= ok
        label.artist.xyann = ((inward + shift) / px_per_pt, float(offsets[choice]))
        bottom = float(bottoms[choice])
        occupied = np.vstack([occupied, [x0 + shift, x1 + shift, bottom, bottom + height]])
        placed.append(Bbox.from_extents(x0 + shift, bottom, x1 + shift, bottom + height))
    return placed, all_free, all_near


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


def arrange_labels(ax, labels: list[Label], levels: Levels) -> bool:
    """Place every label inside the axes without a clash, then draw the leaders some of them need.

    A first free placement shows how much room the labels need; the y range is widened to hold it.
    Widening moves the levels closer together on the page, so the labels are placed again, now kept
    inside the axes; while some label finds no free spot, or (at most :data:`NEAR_WIDENINGS` times) some
    label finds one only far from its level (a tall name over the highest level), the range is widened
    by a further 20 %. Returns whether every label ended by its level.
    """
    fig = ax.figure
    _fit_ylim(ax, _place_labels(fig, labels, levels)[0])
    first_free, widened_since = None, 0  # the first y range at which every label is free, and widenings since
    for _ in range(MAX_WIDENINGS):
        _, free, near = _place_labels(fig, labels, levels, ax.get_window_extent())
        if free and near:
            break
        first_free = first_free or (ax.get_ylim() if free else None)
        widened_since += first_free is not None
        if widened_since > NEAR_WIDENINGS:
            break
        lo, hi = ax.get_ylim()
        ax.set_ylim(lo - 0.1 * (hi - lo), hi + 0.1 * (hi - lo))
    if not (free and near) and first_free is not None:  # never by every level: the first range all were free
        ax.set_ylim(*first_free)
        _place_labels(fig, labels, levels, ax.get_window_extent())
    elif not free:  # a last resort for absurd crowding: room for everything, labels placed for the final range
        _fit_ylim(ax, _place_labels(fig, labels, levels)[0])
        _place_labels(fig, labels, levels)
    _draw_leaders(ax, labels)
    return free and near


def _draw_leaders(ax, labels: list[Label]) -> None:
    """A thin line in the label's colour from its level to each label that sits nearer another level."""
    to_data = ax.transData.inverted()
    for label in labels:
        if label.leader is not None:
            (x0, y0), (x1, y1) = to_data.transform(label.leader.reshape(2, 2))
            ax.plot((x0, x1), (y0, y1), color=label.artist.get_color(), lw=LEADER_LINEWIDTH, zorder=2.5,
                    solid_capstyle="butt", gid=f"leader:{label.artist.get_gid()}")

"""Energy profile diagrams and temperature plots.

Drawing tests use made-up level heights: they check that what is drawn equals what was given (the
heights of the Line2D artists, the text boxes measured by matplotlib's renderer), not chemistry.
"""

import itertools
import re
import struct
import xml.etree.ElementTree as ET
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from log_text import last_printed
from matplotlib.path import Path as MplPath

from qcthermo.errors import QcthermoError
from qcthermo.export import figures, temperature_figures
from qcthermo.export.figures import ProfileData, ProfileState, plot_profiles, profiles_from_records, save_figure
from qcthermo.export.profile_data import Term
from qcthermo.reactions import format_terms

# Final SCF energies of p-divinylbenzene printed by two programs, hartree (third-party-logs/README.md:
# gaussian16/dvb_ir.out and orca5.0/dvb_ir.out).
E_GAUSSIAN = -382.30824980
E_ORCA = -382.05509182
# 1 hartree = 627.509474 kcal/mol = 2625.4996 kJ/mol (CODATA 2018, from memory)
KCAL_PER_EH = 627.509474
KJ_PER_EH = 2625.4996


def _profile(name, heights, ts=(), names=None, **kw):
    names = names or [f"S{i}" for i in range(len(heights))]
    states = [ProfileState(n, float(h), i in ts) for i, (n, h) in enumerate(zip(names, heights, strict=True))]
    return ProfileData(name, states, **kw)


def _artists(fig, prefix):
    ax = fig.axes[0]
    return [a for a in [*ax.lines, *ax.texts] if (a.get_gid() or "").startswith(prefix)]


def _text_boxes(fig):
    fig.canvas.draw()  # lays out the legend
    renderer = fig.canvas.get_renderer()
    texts = [t for t in fig.axes[0].texts if t.get_text()]
    legend = fig.axes[0].get_legend()
    if legend is not None:
        texts += legend.get_texts()
    return [(t.get_text(), t.get_window_extent(renderer)) for t in texts]


def _assert_no_overlaps(fig):
    """Text boxes pairwise disjoint, none touches a level line (or its halo) or crosses a connector."""
    boxes = _text_boxes(fig)
    for (ta, a), (tb, b) in itertools.combinations(boxes, 2):
        assert not a.overlaps(b), f"labels {ta!r} and {tb!r} overlap"
    for line in _artists(fig, "level:") + _artists(fig, "mark:"):  # levels and energy-span halos, with their ink
        half_lw = line.get_linewidth() / 2 * fig.dpi / 72
        (x0, y), (x1, _) = line.get_transform().transform(line.get_xydata())
        for text, box in boxes:
            assert not (box.x0 < x1 and box.x1 > x0 and box.y0 < y + half_lw and box.y1 > y - half_lw), (
                f"label {text!r} overlaps the level {line.get_gid()}"
            )
    for line in _artists(fig, "connector:"):
        path = MplPath(line.get_transform().transform(line.get_xydata()))
        for text, box in boxes:
            assert not path.intersects_bbox(box, filled=False), f"label {text!r} crosses {line.get_gid()}"
    axes_box = fig.axes[0].get_window_extent()
    for text, box in boxes[: len(fig.axes[0].texts)]:
        assert axes_box.y0 <= box.y0 and box.y1 <= axes_box.y1, f"label {text!r} outside the axes"


def _ink(line, fig):
    """A level's ink box (x0, x1, y0, y1) in display units: its segment and its own line width."""
    (x0, y), (x1, _) = line.get_transform().transform(line.get_xydata())
    half = line.get_linewidth() / 2 * fig.dpi / 72
    return min(x0, x1), max(x0, x1), y - half, y + half


def _box_distance(box, ink):
    dx = max(ink[0] - box.x1, box.x0 - ink[1], 0.0)
    dy = max(ink[2] - box.y1, box.y0 - ink[3], 0.0)
    return float(np.hypot(dx, dy))


def _compact(text):
    return re.sub(r"\s+", "", text)


def _owners(gid, text, profiles, precision):
    """The column a label belongs to and the names of the profiles it labels, from the drawn text and
    the input profiles (not from the layout)."""
    kind, rest = gid.split(":", 1)
    if kind == "name":
        column = int(rest.split(":", 1)[0])
        return column, {p.name for p in profiles if column < len(p.states)
                        and _compact(figures.state_name(p.states[column])) == _compact(text)}
    if rest.startswith("*:"):  # a value several overlaid profiles share
        column = int(rest.split(":")[1])
        shown = text.split("\n")[0]
        return column, {p.name for p in profiles if column < len(p.states)
                        and figures.format_value(p.states[column].value, precision) == shown}
    name, column = rest.rsplit(":", 1)
    return int(column), {name}


def _assert_labels_attached(fig, profiles, precision=1):
    """Every label is nearer (box to level ink) one of its own levels than any other level of its state
    column, or a leader in its colour runs from one of its own levels to it, crossing no other label."""
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    ax = fig.axes[0]
    levels = [(line, *line.get_gid()[len("level:"):].rsplit(":", 1)) for line in _artists(fig, "level:")]
    leaders = {line.get_gid()[len("leader:"):]: line for line in _artists(fig, "leader:")}
    texts = [t for t in ax.texts if t.get_text()]
    boxes = {t.get_gid(): t.get_window_extent(renderer) for t in texts}
    checked = 0
    for t in texts:
        column, owners = _owners(t.get_gid(), t.get_text(), profiles, precision)
        assert owners, f"label {t.get_text()!r} matches no profile"
        box = boxes[t.get_gid()]
        here = [(name, _box_distance(box, _ink(line, fig)), line) for line, name, i in levels if int(i) == column]
        own = min(d for name, d, _ in here if name in owners)
        others = [d for name, d, _ in here if name not in owners]
        if not others or own < min(others):
            checked += 1
            continue
        leader = leaders.get(t.get_gid())
        assert leader is not None, f"label {t.get_text()!r} sits nearer another profile's level, with no leader"
        assert leader.get_color() == t.get_color()
        start, end = leader.get_transform().transform(leader.get_xydata())
        own_inks = [_ink(line, fig) for name, _, line in here if name in owners]
        assert any(i[0] - 1 <= start[0] <= i[1] + 1 and i[2] - 1 <= start[1] <= i[3] + 1 for i in own_inks), (
            f"the leader of {t.get_text()!r} does not start on its level")
        assert box.expanded(1.0, 1.0).padded(3.0).contains(*end), f"the leader of {t.get_text()!r} misses it"
        path = MplPath(np.array([start, end]))
        for gid, other in boxes.items():
            assert gid == t.get_gid() or not path.intersects_bbox(other, filled=True), (
                f"the leader of {t.get_text()!r} crosses the label {gid}")
        checked += 1
    assert checked == len(texts)
    return len(leaders)


def test_level_heights_equal_the_values():
    heights = [0.0, 12.5, -3.25, 20.0, -8.0]
    fig = plot_profiles([_profile("path", heights, ts=(1, 3))])
    levels = _artists(fig, "level:")
    assert [tuple(line.get_ydata()) for line in levels] == [(h, h) for h in heights]
    # levels are horizontal and in sequence along x
    xs = [np.mean(line.get_xdata()) for line in levels]
    assert xs == sorted(xs)


def test_labels_show_names_values_and_ts_dagger():
    fig = plot_profiles([_profile("path", [0.0, 12.54, -3.25], ts=(1,), names=["A", "TS1", "B"])], precision=1)
    texts = {t.get_gid(): t.get_text() for t in fig.axes[0].texts}
    assert texts["name:1:TS1‡"] == "TS1‡"
    assert texts["name:0:A"] == "A"
    assert [texts[f"value:path:{i}"] for i in range(3)] == ["0.0", "12.5", "−3.2"]
    fig = plot_profiles([_profile("path", [0.0, 12.546], names=["A", "B"])], precision=2)
    assert {t.get_text() for t in fig.axes[0].texts} >= {"0.00", "12.55"}


def test_label_states_limits_the_labels():
    fig = plot_profiles([_profile("p", [0.0, 5.0, -2.0], names=["A", "B", "C"], label_states=["B"])])
    assert sorted(t.get_text() for t in fig.axes[0].texts) == ["5.0", "B"]


def test_energy_span_marks_are_drawn():
    profile = _profile("cycle", [0.0, -6.0, 14.0, -20.0], ts=(2,), names=["c", "i1", "t1", "p"],
                       marks={"tdts": "t1", "tdi": "i1"})
    fig = plot_profiles([profile])
    assert {a.get_gid() for a in _artists(fig, "mark:")} == {"mark:cycle:1", "mark:cycle:2"}
    texts = [t.get_text() for t in fig.axes[0].texts]
    assert "14.0\nTDTS" in texts and "−6.0\nTDI" in texts


def test_axis_label_names_quantity_and_unit():
    fig = plot_profiles([_profile("p", [0.0, 1.0], unit="kJ/mol", quantity="H")])
    assert fig.axes[0].get_ylabel() == "ΔH / kJ mol⁻¹"
    fig = plot_profiles([_profile("p", [0.0, 1.0])])
    assert fig.axes[0].get_ylabel() == "ΔG / kcal mol⁻¹"


def test_journal_sizes():
    fig = plot_profiles([_profile("p", [0.0, 10.0, -5.0])])
    assert fig.get_figwidth() * 2.54 == pytest.approx(8.5)  # one column (common practice: 8.5 cm)
    fig.canvas.draw()
    sizes = [t.get_fontsize() for t in fig.findobj(lambda a: hasattr(a, "get_fontsize") and a.get_text())]
    assert min(sizes) >= 7.0
    wide = plot_profiles([_profile("p", np.arange(30.0))])
    assert wide.get_figwidth() * 2.54 <= 17.8 + 1e-9  # two columns at most


def test_simple_profile_labels_do_not_overlap():
    _assert_no_overlaps(plot_profiles([_profile("p", [0.0, 15.2, -4.1, 9.8, -12.0], ts=(1, 3))]))


def test_crowded_profiles_labels_do_not_overlap():
    # three overlaid pathways with near-degenerate levels (0.05 apart) and long names
    long_names = ["catalyst + substrate", "pre-reactive complex", "TS-oxidative-addition", "intermediate",
                  "TS-reductive-elimination", "catalyst + product", "x", "dissociated product complex"]
    base = np.array([0.0, -2.0, 18.0, -6.0, 16.0, -15.0, -15.05, -14.9])
    profiles = [
        _profile(f"pathway {k}", base + 0.05 * k, ts=(2, 4), names=long_names, marks={"tdts": long_names[2]})
        for k in range(3)
    ]
    fig = plot_profiles(profiles, title="three pathways")
    _assert_no_overlaps(fig)
    assert _assert_labels_attached(fig, profiles) > 0  # near-degenerate levels: some labels need leaders
    # shared names once; a value once per distinct rounded text at each state: nothing lost
    shown = {(i, figures.format_value(p.values[i], 1)) for p in profiles for i in range(8)}
    assert len(fig.axes[0].texts) == 8 + len(shown)


def test_many_crossing_pathways_do_not_overlap():
    # drawing test: random heights (fixed seed) make connectors cross everywhere
    rng = np.random.default_rng(0)
    profiles = [_profile(f"p{k}", np.r_[0.0, rng.normal(0.0, 10.0, 14)], ts=range(1, 15, 2)) for k in range(3)]
    fig = plot_profiles(profiles)
    _assert_no_overlaps(fig)
    _assert_labels_attached(fig, profiles)
    assert [tuple(line.get_ydata()) for line in _artists(fig, "level:p2:")] == [(v, v) for v in profiles[2].values]


def test_overlaid_pathways_labels_stay_with_their_levels():
    # drawing test: three pathways from one start, distinct intermediates, two near-degenerate pairs
    names = [["cat + sub", f"TS1{c}", f"int-{c}", f"TS2{c}", "cat + prod"] for c in "abc"]
    heights = [[0.0, 12.3, -4.0, 20.1, -10.0], [0.0, 11.8, -3.2, 24.0, -10.0], [0.0, 15.0, -3.6, 19.7, -10.0]]
    profiles = [_profile(f"path {c}", h, ts=(1, 3), names=n) for c, h, n in zip("ABC", heights, names, strict=True)]
    fig = plot_profiles(profiles)
    _assert_no_overlaps(fig)
    _assert_labels_attached(fig, profiles)
    texts = [t.get_text() for t in fig.axes[0].texts]
    assert texts.count("0.0") == 1 and texts.count("−10.0") == 1  # the same value of all three, written once
    # levels at the same height are shifted apart along x, so that none hides another
    starts = [_ink(_artists(fig, f"level:path {c}:0")[0], fig) for c in "ABC"]
    assert len({round(s[1], 3) for s in starts}) == 3 and len({s[2] for s in starts}) == 1


def test_a_single_profile_needs_no_leader():
    for heights in ([0.0, 15.2, -4.1, 9.8, -12.0], [0.0, 0.0, 0.0, 0.01], [0.0, 250.0, 0.3, 0.2, 249.9, -0.1]):
        profile = _profile("p", heights, ts=(1,))
        fig = plot_profiles([profile])
        assert _assert_labels_attached(fig, [profile]) == 0


def test_draws_into_a_given_axes():
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(7, 3))
    FigureCanvasAgg(fig)
    left, right = fig.subplots(1, 2)
    assert plot_profiles([_profile("p", [0.0, 4.0, -1.0])], ax=right) is fig
    assert not left.lines and len(right.lines) == 3 + 2


def test_wild_spread_and_flat_profiles_do_not_overlap():
    _assert_no_overlaps(plot_profiles([_profile("flat", [0.0, 0.0, 0.0, 0.01])]))
    _assert_no_overlaps(plot_profiles([_profile("p", [0.0, 250.0, 0.3, 0.2, 249.9, -0.1], ts=(1, 4))]))


def test_colours_default_to_the_palette_and_honour_the_file():
    fig = plot_profiles([_profile("a", [0.0, 1.0]), _profile("b", [0.0, 2.0], color="#123456")])
    colors = {line.get_gid(): line.get_color() for line in _artists(fig, "level:")}
    assert colors["level:a:0"] == figures.PALETTE[0]
    assert colors["level:b:0"] == "#123456"
    assert [t.get_text() for t in fig.axes[0].get_legend().get_texts()] == ["a", "b"]


def test_profiles_from_records_subtracts_the_first_state_and_converts():
    records = [{"name": "dvb", "states": [
        {"label": "g", "value_Eh": {"G": E_GAUSSIAN, "E": E_GAUSSIAN}, "is_ts": False},
        {"label": "o", "value_Eh": {"G": E_ORCA, "E": E_ORCA}, "is_ts": True},
    ]}]
    (kcal,) = profiles_from_records(records, "E", "kcal/mol")
    assert kcal.values[0] == 0.0
    assert kcal.values[1] == pytest.approx((E_ORCA - E_GAUSSIAN) * KCAL_PER_EH, rel=1e-6)
    assert kcal.states[1].is_ts and kcal.unit == "kcal/mol" and kcal.quantity == "E"
    (kj,) = profiles_from_records(records, "G", "kJ/mol")
    assert kj.values[1] == pytest.approx((E_ORCA - E_GAUSSIAN) * KJ_PER_EH, rel=1e-6)


def test_profiles_from_records_picks_the_temperature():
    shift = np.array([0.0, 0.001, 0.002])  # hartree, one value per temperature
    records = [{"name": "p", "states": [
        {"label": "a", "value_Eh": {"G": E_GAUSSIAN + 0 * shift}},
        {"label": "b", "value_Eh": {"G": E_ORCA + shift}},
    ]}]
    for index in range(3):
        (p,) = profiles_from_records(records, temperature_index=index)
        assert p.values[1] == pytest.approx((E_ORCA + shift[index] - E_GAUSSIAN) * KCAL_PER_EH, rel=1e-6)


def test_profiles_from_records_order_names_and_presentation_keys():
    def rec(name, **kw):
        return {"name": name, "states": [{"label": "a", "value_Eh": {"G": 0.0}}], **kw}

    records = [rec("late", order=2), rec("early", order=1, color="#000000", label_states=["a"]), rec("none")]
    assert [p.name for p in profiles_from_records(records)] == ["early", "late", "none"]
    early = profiles_from_records(records, names=["early"])[0]
    assert early.color == "#000000" and early.label_states == ["a"]
    with pytest.raises(QcthermoError, match="no profile named 'missing'"):
        profiles_from_records(records, names=["missing"])
    with pytest.raises(QcthermoError, match="no state 'zz'"):
        profiles_from_records([rec("p", label_states=["zz"])])
    with pytest.raises(QcthermoError, match="unknown quantity"):
        profiles_from_records(records, "S")
    with pytest.raises(QcthermoError, match="has no H energy"):
        profiles_from_records(records, "H")
    with pytest.raises(QcthermoError, match="style 'wavy'"):
        profiles_from_records([rec("p", style="wavy")])
    with pytest.raises(QcthermoError, match="'blurple' is not a colour"):
        profiles_from_records([rec("p", color="blurple")])


def test_connector_style_from_the_file():
    record = {"name": "p", "style": "dotted",
              "states": [{"label": "a", "value_Eh": {"G": 0.0}}, {"label": "b", "value_Eh": {"G": 0.01}}]}
    fig = plot_profiles(profiles_from_records([record]))
    (connector,) = _artists(fig, "connector:")
    assert connector.get_linestyle() == ":"


def _png_dpi(data: bytes) -> float:
    """Pixels per inch from the PNG pHYs chunk (PNG specification, ISO/IEC 15948, section 11.3.5.3)."""
    pos = 8
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        if kind == b"pHYs":
            ppu_x, _, unit = struct.unpack(">IIB", data[pos + 8:pos + 17])
            assert unit == 1  # metre
            return ppu_x * 0.0254
        pos += 12 + length
    raise AssertionError("no pHYs chunk")


def test_files_are_valid_svg_png_pdf(tmp_path):
    fig = plot_profiles([_profile("p", [0.0, 10.0, -5.0], ts=(1,))])
    svg, png, pdf = (save_figure(fig, tmp_path / f"f.{ext}") for ext in ("svg", "png", "pdf"))
    root = ET.parse(svg).getroot()
    assert root.tag.endswith("svg") and "<svg" in svg.read_text()
    assert "S1‡" in svg.read_text()  # text kept as text, searchable
    data = png.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    assert _png_dpi(data) == pytest.approx(300, abs=0.1)
    raw = pdf.read_bytes()
    assert raw.startswith(b"%PDF-") and raw.rstrip().endswith(b"%%EOF")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["f.pdf", "f.png", "f.svg"]  # no temporary left
    with pytest.raises(QcthermoError, match="figure format must be"):
        save_figure(fig, tmp_path / "f.jpg")


def _reactions_table():
    temps = np.array([250.0, 300.0, 350.0])
    rows = []
    for name, dg0, act in (("r1", -5.0, 20.0), ("r2", 3.0, np.nan)):
        for t in temps:
            k = np.exp(-act / t) if np.isfinite(act) else np.nan  # a made-up increasing series
            rows.append({"reaction": name, "T_K": t, "dG_kcal_mol": dg0 + 0.01 * t, "dG_act_kcal_mol": act,
                         "k_forward": k})
    return pd.DataFrame(rows)


def test_log_axis_labels_are_superscript_powers_of_ten():
    # the figures' text is plain (text.parse_math off): a log axis writes 10⁻⁴ in Unicode superscripts
    assert [figures.power_of_ten(v) for v in (1e-4, 1.0, 1e12, 3e-4, 0.0)] == ["10⁻⁴", "10⁰", "10¹²", "", ""]


def test_concentration_legend_typesets_formulas_and_keeps_constant_lines_apart():
    # drawing test on made-up curves: species labels in the legend, a formula typeset (IUPAC Red Book IR-3: counts
    # as subscripts), any other name as written; two species held at one concentration drawn in two line styles
    from qcthermo.export.simulation import concentration_figure

    t = np.logspace(-3, 3, 7)
    curves = pd.DataFrame({"ch4": 1e-3 * np.exp(-t / 100), "h": np.ones(7), "h2": np.ones(7), "x": 1e-4 * t},
                          index=pd.Index(t, name="time_s"))
    sim = SimpleNamespace(curves=curves, settings=SimpleNamespace(fixed=["h", "h2"]),
                          summary=pd.DataFrame({"species": ["ch4", "x"]}))
    fig = concentration_figure(sim, names={"ch4": "CH4", "h": "H", "h2": "H2", "x": "$\\alpha$"})
    legend = {text.get_text(): text.get_parse_math() for text in fig.legends[0].get_texts()}
    assert legend == {r"$\mathregular{CH_{4}}$": True, "H": False, r"$\mathregular{H_{2}}$": True, "$\\alpha$": False}
    styles = {line.get_gid(): line.get_linestyle() for line in fig.axes[0].lines}
    assert styles["concentration:h"] != styles["concentration:h2"] and styles["concentration:ch4"] == "-"


def test_temperature_plots_draw_the_table():
    table = _reactions_table()
    fig = temperature_figures.plot_dG_T(table)
    dg_axis, act_axis = fig.axes[:2]  # ΔG and ΔG‡ on panels of their own over one T axis
    line = next(a for a in dg_axis.lines if a.get_gid() == "dG_kcal_mol:r1")
    assert np.allclose(line.get_xdata(), [250, 300, 350])
    assert np.allclose(line.get_ydata(), -5.0 + 0.01 * np.array([250, 300, 350]))
    assert dg_axis.get_ylabel() == "ΔG / kcal mol⁻¹" and act_axis.get_ylabel() == "ΔG‡ / kcal mol⁻¹"
    assert {a.get_gid() for a in act_axis.lines} == {"dG_act_kcal_mol:r1"}  # r2 has no TS: no line
    assert dg_axis.get_shared_x_axes().joined(dg_axis, act_axis)
    fig = temperature_figures.plot_arrhenius(table)
    (line,) = fig.axes[0].lines
    assert np.allclose(line.get_xdata(), 1000 / np.array([250, 300, 350]))
    assert np.allclose(line.get_ydata(), -20.0 / np.array([250, 300, 350]))


def test_arrhenius_panels_hold_one_unit_each():
    # a unimolecular (s^-1) and two bimolecular (M^-1 s^-1) rate constants: qcthermo.kinetics.rate_constant_unit
    temps = np.array([300.0, 400.0])
    rows = [{"reaction": name, "T_K": t, "k_forward": k0 * np.exp(-1000.0 / t), "k_unit": unit}
            for name, k0, unit in (("uni", 1e13, "s^-1"), ("bi", 1e9, "M^-1 s^-1"),
                                   ("bi2", 1e8, "M^-1 s^-1 (forward), s^-1 (reverse)"))
            for t in temps]
    fig = temperature_figures.plot_arrhenius(pd.DataFrame(rows))
    panels = {ax.get_ylabel(): sorted(line.get_gid() for line in ax.lines) for ax in fig.axes if ax.lines}
    assert panels == {"ln(k / s⁻¹)": ["arrhenius:uni"], "ln(k / M⁻¹ s⁻¹)": ["arrhenius:bi", "arrhenius:bi2"]}
    # the y values are ln of k in its unit: ln(1e13) - 1000/T for the unimolecular one
    uni = next(line for ax in fig.axes for line in ax.lines if line.get_gid() == "arrhenius:uni")
    assert np.allclose(uni.get_ydata(), np.log(1e13) - 1000.0 / temps)


def test_write_profile_figures_writes_the_run_figures(tmp_path):
    records = [{"name": "p", "states": [{"label": "a", "value_Eh": {"G": np.array([0.0, 0.0, 0.0])}},
                                        {"label": "b", "value_Eh": {"G": np.array([0.01, 0.02, 0.03])},
                                         "is_ts": True}]},
               {"name": "broken", "states": [{"label": "a", "value_Eh": {}}]}]
    results = SimpleNamespace(profiles=records, energy_unit="kcal/mol", reactions=_reactions_table(),
                              conditions=SimpleNamespace(temperature=np.array([250.0, 300.0, 350.0])))
    written = figures.write_profile_figures(results, tmp_path)
    assert sorted(p.name for p in written) == ["arrhenius.svg", "dG_T.svg", "profile.png", "profile.svg",
                                               "profile_p.png", "profile_p.svg"]
    # the profile shows the temperature nearest 298.15 K (300 K: index 1)
    fig = figures.run_figures(results)["profile"]
    assert _artists(fig, "level:p:1")[0].get_ydata()[0] == pytest.approx(0.02 * KCAL_PER_EH, rel=1e-6)
    single = SimpleNamespace(profiles=records, energy_unit="kcal/mol", reactions=_reactions_table().iloc[:1],
                             conditions=SimpleNamespace(temperature=298.15))
    assert [p.name for p in figures.write_profile_figures(single, tmp_path / "one")] == [
        "profile.svg", "profile.png", "profile_p.svg", "profile_p.png"]


def _record(name, species_per_state, heights_eh):
    return {"name": name, "states": [{"label": " + ".join(sp), "value_Eh": {"G": h}, "species": sp}
                                     for sp, h in zip(species_per_state, heights_eh, strict=True)]}


def _run_with(records):
    return SimpleNamespace(profiles=records, energy_unit="kcal/mol", reactions=None,
                           conditions=SimpleNamespace(temperature=298.15))


def test_unrelated_profiles_get_their_own_figures_and_panels():
    # the sample reaction file's three unrelated profiles: different first states
    records = [_record("h_recombination", [["ch4", "h"], ["ts_abstraction", "h"], ["ch4", "h2"]], [0.0, 0.03, -0.1]),
               _record("hcn/hnc", [["hcn"], ["ts_hcn"], ["hnc"]], [0.0, 0.07, 0.02]),
               _record("hydration", [["formaldehyde", "water"], ["ts_hydration"], ["methanediol"]], [0.0, 0.06, 0.0])]
    figs = figures.run_figures(_run_with(records))
    assert list(figs) == ["profile", "profile_h_recombination", "profile_hcn_hnc", "profile_hydration"]
    overview = figs["profile"]
    assert len(overview.axes) == 3  # one panel per profile: no two share an energy axis
    assert [ax.get_title(loc="left") for ax in overview.axes] == ["h_recombination", "hcn/hnc", "hydration"]
    for ax, record in zip(overview.axes, records, strict=True):
        assert {line.get_gid().split(":")[1] for line in ax.lines if not line.get_gid().startswith("leader:")} == {
            record["name"]}
    for stem in list(figs)[1:]:
        (ax,) = figs[stem].axes
        assert len({line.get_gid().split(":")[1] for line in _artists(figs[stem], "level:")}) == 1
        assert ax.get_legend() is None
    assert figs["profile_hcn_hnc"].get_label() == "hcn/hnc"


def test_profiles_from_the_same_start_are_overlaid():
    start = ["cat", "sub"]
    records = [_record("path A", [start, ["tsA"], ["prod"]], [0.0, 0.03, -0.01]),
               _record("other", [["x"], ["y"]], [0.0, 0.01]),
               _record("path B", [list(reversed(start)), ["tsB"], ["prod"]], [0.0, 0.02, -0.01])]
    profiles = profiles_from_records(records)
    assert [[p.name for p in g] for g in figures.overlay_groups(profiles)] == [["path A", "path B"], ["other"]]
    overview = figures.overview_figure(profiles)
    assert len(overview.axes) == 2
    assert [t.get_text() for t in overview.axes[0].get_legend().get_texts()] == ["path A", "path B"]
    # an explicit overlay group overrides the rule
    records[1]["overlay"] = records[0]["overlay"] = "compare"
    groups = figures.overlay_groups(profiles_from_records(records))
    assert [[p.name for p in g] for g in groups] == [["path A", "other"], ["path B"]]


def test_profile_file_stems_are_safe_and_unique():
    profiles = [_profile(name, [0.0, 1.0]) for name in ("a b/c", "a_b_c", "A B C", "..", "ok-1.2")]
    assert figures.profile_stems(profiles) == ["profile_a_b_c", "profile_a_b_c-2", "profile_A_B_C-3",
                                               "profile_unnamed", "profile_ok-1.2"]


# --- typeset state names ------------------------------------------------------------------------------


def _sum_state(terms, height):
    """A state of terms (coefficient, display name, is_ts) labelled as the reaction file labels it by default."""
    terms = tuple(Term(*t) for t in terms)
    label = format_terms([(t.coefficient, t.name) for t in terms])
    return ProfileState(label, float(height), any(t.is_ts for t in terms), tuple(t.name for t in terms), terms)


def _column(text):
    """The state column of a single profile's label, from its gid ("value:<profile>:<i>", "name:<i>:<text>")."""
    kind, rest = text.get_gid().split(":", 1)
    return int(rest.rsplit(":", 1)[1] if kind == "value" else rest.split(":", 1)[0])


def _catalytic(name="cycle", shift=0.0, long=False):
    pre = "pre-reactive-complex-of-the-catalyst" if long else "cat"
    terms = [[(1, pre), (1, "CH4"), (2, "H")], [(1, "TS-abstraction", True), (1, "H")],
             [(1, "CH3"), (1, "H2"), (1, "H")], [(1, "Ca(OH)2"), (1, "SO4^2-")],
             [(1, "dissociated-product-complex"), (1, "CH3OH"), (1, "NO2-")]]
    heights = np.array([0.0, 21.7, 2.7, -15.0, -30.0]) + shift
    return ProfileData(name, [_sum_state(s, h) for s, h in zip(terms, heights, strict=True)])


def test_typeset_labels_keep_the_layout_rules():
    # the no-overlap and nearest-own-level rules hold for typeset, wrapped names, alone and overlaid
    single = [_catalytic(long=True)]
    overlaid = [_catalytic("a"), _catalytic("b", 0.4), _catalytic("c", -0.3)]
    for profiles in (single, overlaid):
        fig = plot_profiles(profiles)
        assert any(t.get_parse_math() for t in fig.axes[0].texts)  # the formulas are mathtext
        _assert_no_overlaps(fig)
        _assert_labels_attached(fig, profiles)


def test_the_dagger_is_on_the_transition_state_term():
    fig = plot_profiles([ProfileData("p", [_sum_state([(1, "CH4"), (1, "H")], 0.0),
                                           _sum_state([(1, "TS1", True), (1, "CH4")], 10.0)])])
    (name,) = [t.get_text() for t in fig.axes[0].texts if t.get_gid().startswith("name:1:")]
    assert name.replace("\n", " ") == r"TS1‡ + $\mathregular{CH_{4}}$"  # not "... CH4‡"


def test_long_states_wrap_at_plus_and_stay_inside_the_figure():
    profile = _catalytic(long=True)
    fig = plot_profiles([profile])
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    names = {t.get_gid(): t.get_text() for t in fig.axes[0].texts if t.get_gid().startswith("name:")}
    for i, state in enumerate(profile.states):
        (text,) = [v for k, v in names.items() if k.startswith(f"name:{i}:")]
        whole = [figures.state_name(ProfileState(t.name, 0.0, t.is_ts, (), (t,))) for t in state.terms]
        pieces = [p for line in text.split("\n") for p in line.removeprefix("+ ").split(" + ")]
        assert [p.removeprefix(f"{c:g} ") for p, c in zip(pieces, [t.coefficient for t in state.terms],
                                                          strict=True)] == whole  # whole names, in order
    assert any("\n" in text for text in names.values())
    # every label and the axis label inside the figure, clear of its edge
    texts = [*fig.axes[0].texts, fig.axes[0].yaxis.label]
    for text in texts:
        box = text.get_window_extent(renderer)
        assert fig.bbox.x0 < box.x0 and box.x1 < fig.bbox.x1 and fig.bbox.y0 < box.y0 and box.y1 < fig.bbox.y1, (
            f"{text.get_text()!r} touches the figure's edge")
    # and the names clear of the y axis' ticks, each over its own level (moved sideways, not beside it)
    axes_box = fig.axes[0].get_window_extent()
    for text in fig.axes[0].texts:
        box = text.get_window_extent(renderer)
        x0, x1, _, _ = _ink(_artists(fig, f"level:cycle:{_column(text)}")[0], fig)
        assert axes_box.x0 <= box.x0 and box.x0 < x1 and box.x1 > x0, f"{text.get_text()!r} is not over its level"


def test_a_tall_name_over_the_highest_level_stays_by_it():
    # the figure: a transition state's name sat far below its level rather than above it
    profile = ProfileData("p", [_sum_state([(1, "cat"), (1, "CH4")], 0.0),
                                _sum_state([(1, "TS-oxidative-addition", True), (1, "C6H5Br"), (1, "NO2-")], 22.0),
                                _sum_state([(1, "int1"), (1, "SO4^2-")], -5.0),
                                _sum_state([(1, "product-complex"), (2, "CH3OH")], -12.0)])
    _assert_by_their_levels(plot_profiles([profile]), "p")


def _assert_by_their_levels(fig, name):
    """Every label of the single profile ``name`` within 12 pt (the layout's reach without a leader) of its level."""
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    for text in fig.axes[0].texts:
        level = _artists(fig, f"level:{name}:{_column(text)}")[0]
        gap = _box_distance(text.get_window_extent(renderer), _ink(level, fig)) * 72 / fig.dpi
        assert gap <= 12.0, f"{text.get_text()!r} is {gap:.0f} pt from its level"


def test_names_wider_than_their_slots_widen_the_figure():
    # five states of long names in one journal column leave names far from their levels: the figure grows
    fig = plot_profiles([_catalytic(long=True)])
    assert figures.COLUMN_WIDTH_IN < fig.get_figwidth() <= 17.8 / 2.54  # at most two columns (17.8 cm)
    _assert_by_their_levels(fig, "cycle")
    assert plot_profiles([_catalytic()]).get_figwidth() == pytest.approx(figures.COLUMN_WIDTH_IN)  # short: one


def test_species_labels_of_the_reaction_file_are_typeset(samples, tmp_path):
    # end to end: label = "CH4" in the reaction file, drawn with the count as a subscript (IUPAC Red Book IR-3:
    # counts are right subscripts): in the SVG a smaller "4" below the line of "C" and "H"
    gas = samples / "gas"
    path = tmp_path / "reactions.toml"
    path.write_text(f"""
[species.ch4]
logs = "{gas}/ch4.out"
label = "CH4"
[species.h]
logs = "{gas}/h_atom.out"
[species.ts]
logs = "{gas}/ts_abstraction.out"
label = "TS1"
transition_state = true
[species.ch3]
logs = "{gas}/ch3.out"
label = "CH3"
[species.h2]
logs = "{gas}/h2.out"
label = "H2"

[[profile]]
name = "abstraction"
states = [["ch4", "h"], ["ts"], ["ch3", "h2"]]
""")
    out = tmp_path / "fig.svg"
    assert _run_profile(path, "-o", out, "--directory", gas) == 0
    root = ET.parse(out).getroot()
    ns = "{http://www.w3.org/2000/svg}"
    (group,) = [g for g in root.iter(f"{ns}g") if g.get("id", "").startswith("name:0:")]
    spans = [(s.text, float(re.search(r"font-size: ([\d.]+)px", s.get("style")).group(1)), float(s.get("y")))
             for s in group.iter(f"{ns}tspan")]
    letters = {text: (size, y) for text, size, y in spans if text in ("C", "H")}
    (four,) = [(size, y) for text, size, y in spans if text == "4"]
    assert four[0] < letters["C"][0] and four[1] > letters["C"][1]  # smaller, and lower (SVG's y grows down)
    assert "TS1‡" in out.read_text()


# --- the profile command, on the bundled NWChem sample outputs ------------------------------------

#: the total energy of NWChem's DFT module, hartree, as it prints it
NWCHEM_DFT_ENERGY = r"Total DFT energy =\s+(-?\d+\.\d+)"


def _run_profile(*argv):
    from qcthermo.cli import main

    return main(["profile", *map(str, argv), "--no-cache", "--quiet", "--jobs", "1"])


def test_profile_command_draws_the_logs_energies(isomerisation_file, samples, tmp_path):
    out = tmp_path / "fig.svg"
    assert _run_profile(isomerisation_file, "-o", out, "--directory", samples / "gas", "--quantity", "E",
                        "--precision", "3") == 0
    svg = out.read_text()
    assert ET.fromstring(svg.encode()).tag.endswith("svg")
    gas = samples / "gas"
    e_hnc, e_hcn = (last_printed(gas / name, NWCHEM_DFT_ENERGY) for name in ("hnc.out", "hcn.out"))
    d_e = (e_hnc - e_hcn) * KCAL_PER_EH
    assert f">{figures.format_value(d_e, 3)}<" in svg  # the product's label, ΔE in kcal/mol
    assert "ts_hcn‡" in svg and "ΔE / kcal mol⁻¹" in svg


def test_profile_command_overlays_only_related_profiles(isomerisation_file, samples, tmp_path):
    # the reverse reaction starts from other species: its own panel, unless both are asked for
    isomerisation_file.write_text(isomerisation_file.read_text() + """
[[profile]]
name = "reverse"
states = [["hnc"], ["ts_hcn"], ["hcn"]]
""")
    both, chosen = tmp_path / "both.svg", tmp_path / "chosen.svg"
    assert _run_profile(isomerisation_file, "-o", both, "--directory", samples / "gas") == 0
    assert _run_profile(isomerisation_file, "-o", chosen, "--directory", samples / "gas", "--profile", "reverse",
                        "--profile", "isomerisation") == 0
    assert all(ET.parse(path).getroot().tag.endswith("svg") for path in (both, chosen))
    axes = [re.findall(r'<g id="axes_\d+"', path.read_text()) for path in (both, chosen)]
    assert [len(a) for a in axes] == [2, 1]  # two panels; one axes overlaying what was asked for
    assert "legend_1" in chosen.read_text() and "legend_1" not in both.read_text()


def test_profile_command_keeps_an_existing_figure(isomerisation_file, samples, tmp_path, capsys):
    out = tmp_path / "fig.png"
    out.write_bytes(b"mine")
    assert _run_profile(isomerisation_file, "-o", out, "--directory", samples / "gas") == 2
    assert out.read_bytes() == b"mine"
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--force" in err[0]
    assert _run_profile(isomerisation_file, "-o", out, "--directory", samples / "gas", "--force") == 0
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_profile_command_bad_input_is_one_line(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text("[[profile]\nname = 1\n")
    assert _run_profile(bad, "-o", tmp_path / "f.svg") == 2
    assert _run_profile(tmp_path / "absent.toml", "-o", tmp_path / "f.svg") == 2
    assert _run_profile(bad, "-o", tmp_path / "f.gif") == 2
    lines = capsys.readouterr().err.strip().splitlines()
    assert len(lines) == 3 and not any("Traceback" in line for line in lines)
    assert not (tmp_path / "f.svg").exists()


def test_profile_command_unwritable_output_is_one_line(isomerisation_file, samples, tmp_path, capsys):
    blocker = tmp_path / "not_a_directory"
    blocker.write_text("a file where the figure's folder should be")
    assert _run_profile(isomerisation_file, "-o", blocker / "fig.svg", "--directory", samples / "gas") == 2
    (line,) = capsys.readouterr().err.strip().splitlines()
    assert "cannot write" in line and "fig.svg" in line and "not a directory" in line


def test_profile_command_says_which_temperature_it_drew(isomerisation_file, samples, tmp_path, capsys):
    # of 250, 300 and 350 K the diagram shows the one nearest 298.15 K (common practice); the message says so
    from qcthermo.cli import main

    out = tmp_path / "fig.svg"
    assert main(["profile", str(isomerisation_file), "-o", str(out), "--directory", str(samples / "gas"),
                 "--temperature-range", "250:350:50", "--no-cache", "--jobs", "1"]) == 0
    assert "G in kcal/mol at 300 K" in capsys.readouterr().out

"""report.html: one self-contained page with everything a run found.

The page needs nothing but a browser: the figures are inline SVG, the style sheet is inline, there is
no script and no network reference. Order, as a reader checks a run: the audit findings first (errors,
then warnings, each naming its file), then the settings, the species and reaction tables (and the
Arrhenius fits, energy spans, pKa values and reduction potentials when the run has them), and the figures.
"""

from __future__ import annotations

import html
import json
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from .. import __version__
from ..fileio import atomic_write, json_ready, printable_frame
from .tables import anchored_notes, display_cells, note_mark, paper_table

#: order of the audit findings by severity; anything else comes last
SEVERITY_ORDER = {"error": 0, "warning": 1, "info": 2, "note": 2}

#: what every energy profile shows
PROFILE_CAPTION = "free energies under the chosen low-mode model, relative to the first state"

#: captions of the run's figures (stems as in :func:`qcthermo.export.run_figures.run_figures`)
FIGURE_CAPTIONS = {
    "profile": "All energy profiles, those that belong together overlaid (one panel per group): {names}; "
               + PROFILE_CAPTION + ".",
    "profile_": "Energy profile {names}: " + PROFILE_CAPTION + ".",
    "dG_T": "Reaction (solid) and activation (dashed) free energies against temperature.",
    "arrhenius": "Arrhenius plot: ln k against 1000 K / T (k in the units of the reactions table).",
}

#: text columns whose cells may wrap (long prose); every other cell stays on one line
WRAPPED_COLUMNS = {"finding", "value", "notes", "populations", "message", "degree_of_control", "why_they_differ"}

CSS = """
body { font: 14px/1.45 system-ui, -apple-system, "Segoe UI", "DejaVu Sans", sans-serif; color: #222;
       max-width: 1200px; margin: 2em auto; padding: 0 1em; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; } h2 { font-size: 1.2em; margin-top: 2em;
     border-bottom: 1px solid #ddd; padding-bottom: 0.2em; }
.meta { color: #666; }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; font-size: 12px; margin: 0.5em 0; }
th, td { padding: 2px 8px; border-bottom: 1px solid #e5e5e5; text-align: right; white-space: nowrap; }
th { border-bottom: 1px solid #999; background: #f7f7f7; }
td.text, th.text { text-align: left; } td.wrap { white-space: normal; min-width: 20em; }
tr.section td { font-style: italic; background: #fafafa; }
.details td.wrap { min-width: 0; overflow-wrap: anywhere; } details { margin: 0.2em 0; }
ul.notes { font-size: 12px; color: #444; margin: 0.2em 0 1em; padding-left: 1.2em; }
tr.error td { background: #fdecea; } tr.warning td { background: #fff8e1; }
.count { font-weight: 600; } .ok { color: #1b5e20; }
figure { margin: 1em 0; } figure svg { width: 100%; max-width: 680px; height: auto; }
figcaption { color: #555; font-size: 12px; }
"""


def _table(headers: list[str], rows: Iterable[Iterable[Any]], numeric: list[bool] | None = None,
           wrapped: list[bool] | None = None, row_classes: Iterable[str] | None = None,
           sections: list[str] | None = None, marks: list[list[str]] | None = None) -> str:
    """An HTML table of text cells (escaped here): numeric columns right-aligned, prose columns may wrap;
    ``sections`` (per row) a heading row across the table wherever it changes; ``marks`` (per row) footnote
    marks set as superscripts after the first cell."""
    rows = [list(r) for r in rows]
    numeric = numeric or [False] * len(headers)
    wrapped = wrapped or [h in WRAPPED_COLUMNS for h in headers]
    kinds = ["num" if n else ("text wrap" if w else "text") for n, w in zip(numeric, wrapped, strict=True)]
    head = "".join(f'<th class="{k}">{html.escape(h)}</th>' for h, k in zip(headers, kinds, strict=True))
    classes = list(row_classes) if row_classes is not None else [""] * len(rows)
    body = []
    for i, (row, cls) in enumerate(zip(rows, classes, strict=True)):
        if sections is not None and (i == 0 or sections[i] != sections[i - 1]):
            body.append(f'<tr class="section"><td class="text" colspan="{len(headers)}">'
                        f"{html.escape(sections[i])}</td></tr>")
        cells = [html.escape(str(v)) for v in row]
        if marks and marks[i]:
            cells[0] += f"<sup>{html.escape(','.join(marks[i]))}</sup>"
        cells = "".join(f'<td class="{k}">{c}</td>' for c, k in zip(cells, kinds, strict=True))
        body.append(f'<tr class="{html.escape(cls)}">{cells}</tr>')
    return f'<div class="scroll"><table><thead><tr>{head}</tr></thead><tbody>{"".join(body)}</tbody></table></div>'


def _frame_table(frame, what: str, stem: str | None = None, unit: str = "kcal/mol") -> str:
    """A DataFrame as the tables for people show it (typeset headers with units, the same number formats
    as species.md), or a line saying there is none. With ``stem``, what a paper prints
    (:func:`~qcthermo.export.tables.paper_table`: the chosen model's columns, rows under their level of
    theory, footnotes anchored in their rows), then every column per subject in collapsible blocks."""
    if frame is None or len(frame) == 0:
        return f"<p>No {what}.</p>"
    frame = printable_frame(frame)  # names from files: control characters as \xNN
    if stem is None:
        headers, numeric, rows = display_cells(frame)
        return _table(headers, rows, numeric, [str(c) in WRAPPED_COLUMNS for c in frame.columns])
    paper = paper_table(frame, stem, unit)
    headers, numeric, rows = display_cells(paper.frame)
    marks, anchored = anchored_notes(paper.row_notes, len(rows))
    notes = "".join(f"<li><sup>{note_mark(i)}</sup> {html.escape(n)}</li>" for i, n in enumerate(anchored))
    table = _table(headers, rows, numeric, sections=paper.sections, marks=marks)
    key = str(frame.columns[0])
    return table + (f'<ul class="notes">{notes}</ul>' if notes else "") + _details(frame, key, what)


#: temperatures side by side in a detail block (more go to a further table below)
DETAIL_TEMPERATURES = 6


def _details(frame, key: str, what: str) -> str:
    """Every column of ``frame`` (all models, absolute energies) per subject (``key``: species, reaction,
    name), each in a collapsible block: one row per quantity, one column per temperature."""
    headers, _, rows = display_cells(frame)
    keys = [str(k) for k in frame[key]]
    temperatures = list(frame["T_K"]) if "T_K" in frame else None
    skip = {0} | ({list(frame.columns).index("T_K")} if temperatures else set())
    blocks = []
    for name in dict.fromkeys(keys):
        indices = [i for i, k in enumerate(keys) if k == name]
        tables = []
        for start in range(0, len(indices), DETAIL_TEMPERATURES):
            chunk = indices[start : start + DETAIL_TEMPERATURES]
            columns = [f"T = {temperatures[i]:g} K" if temperatures else f"#{i + 1}" for i in chunk]
            body = [[h, *(rows[i][j] for i in chunk)] for j, h in enumerate(headers) if j not in skip]
            tables.append(_table(["quantity", *columns], body, wrapped=[False] + [True] * len(chunk)))
        blocks.append(f"<details><summary>{html.escape(name)}</summary>{''.join(tables)}</details>")
    return f'<div class="details"><p class="meta">Every column of the csv ({html.escape(what)}: all models, ' \
        f"absolute energies), per entry:</p>{''.join(blocks)}</div>"


def sorted_findings(findings: Iterable[Any]) -> list[tuple[str, str, str]]:
    """(severity, subject, message) triples, errors first, then warnings, then the rest (stable)."""
    triples = [tuple(str(x) for x in f) for f in findings or []]
    return sorted(triples, key=lambda f: SEVERITY_ORDER.get(f[0].lower(), 3))


def _findings_section(findings: list[tuple[str, str, str]]) -> str:
    if not findings:
        return '<h2 id="audit">Audit</h2><p class="ok">No errors and no warnings.</p>'
    counts = {sev: sum(1 for f in findings if f[0].lower() == sev) for sev in ("error", "warning")}
    summary = ", ".join(f'<span class="count">{n}</span> {sev}{"s" if n != 1 else ""}' for sev, n in counts.items())
    table = _table(["severity", "file or species", "finding"], findings, row_classes=[f[0].lower() for f in findings])
    return f'<h2 id="audit">Audit</h2><p>{summary}.</p>{table}'


def _settings_value(value: Any) -> str:
    if isinstance(value, (dict, list, tuple)):
        return json.dumps(json_ready(value), ensure_ascii=False, allow_nan=False)  # as run.json has it
    return str(value)


def _settings_section(settings: dict[str, Any] | None) -> str:
    rows = [[str(k), _settings_value(v)] for k, v in (settings or {}).items()]
    if not rows:
        return '<h2 id="settings">Settings</h2><p>No settings recorded.</p>'
    return f'<h2 id="settings">Settings</h2>{_table(["setting", "value"], rows)}'


def _caption(stem: str, fig) -> str:
    key = "profile_" if stem.startswith("profile_") else stem
    return html.escape(FIGURE_CAPTIONS.get(key, stem).format(names=fig.get_label()))


def _figures_section(results) -> str:
    """Every profile alone, the overlay when some profiles share a diagram (otherwise it would only
    repeat them), and the temperature plots."""
    from .figure_common import figure_svg
    from .profile_data import overlay_groups, run_profiles
    from .run_figures import run_figures

    overlaid = any(len(group) > 1 for group in overlay_groups(run_profiles(results)))
    parts = []
    for stem, fig in run_figures(results, overview=overlaid).items():
        caption = _caption(stem, fig)
        parts.append(f'<figure id="figure-{stem}">{figure_svg(fig)}<figcaption>{caption}</figcaption></figure>')
    return '<h2 id="figures">Figures</h2>' + ("".join(parts) or "<p>No profiles and no temperature range.</p>")


#: further tables of a run, shown only when the run has them: attribute -> (anchor, heading)
OPTIONAL_TABLES = {"arrhenius": ("arrhenius-fits", "Arrhenius fits"), "energy_span": ("energy-span", "Energy span"),
                   "heats_of_formation": ("heats-of-formation", "Heats of formation")}
#: optional tables shown as a paper prints them, with every column in collapsible blocks
PAPER_LAYOUT = {"heats_of_formation"}


def _optional_tables(results) -> list[str]:
    out = []
    for attr, (anchor, heading) in OPTIONAL_TABLES.items():
        frame = getattr(results, attr, None)
        if frame is not None and len(frame):
            stem = attr if attr in PAPER_LAYOUT else None
            out.append(f'<h2 id="{anchor}">{heading}</h2>' + _frame_table(frame, heading.lower(), stem))
    return out


def _solution_section(results) -> list[str]:
    """pKa values and reduction potentials, after the literature constants they used and their sources."""
    pka, redox = getattr(results, "pka", None), getattr(results, "redox", None)
    if pka is None and redox is None:
        return []
    constants = (getattr(results, "settings", None) or {}).get("solution", {})
    out = ['<h2 id="solution">pKa and reduction potentials</h2>',
           _table(["constant", "value"], [[k, v] for k, v in constants.items()], wrapped=[False, True])]
    for frame, stem, what in ((pka, "pka", "pKa values"), (redox, "redox", "Reduction potentials")):
        if frame is not None:
            unit = getattr(results, "energy_unit", "kcal/mol")
            out.append(f"<h3>{what}</h3>" + _frame_table(frame, what, stem, unit))
    return out


def _enthalpy_reference(settings: dict[str, Any] | None) -> list[str]:
    """The NASA-7 files' enthalpy reference, at the top: absolute energies cannot join another mechanism."""
    reference = (settings or {}).get("nasa7_enthalpy_reference")
    return [f'<p class="meta"><strong>thermo.yaml, thermo.dat:</strong> {html.escape(reference)}</p>'] \
        if reference else []


def _simulation_section(results) -> list[str]:
    """The microkinetic simulation: its notes, the per-species summary, rate control, TOF and the figure."""
    sim = getattr(results, "simulation", None)
    if sim is None:
        return []
    from .figure_common import figure_svg
    from .simulation import concentration_figure, species_names

    notes = "".join(f"<li>{html.escape(n)}</li>" for n in sim.notes)
    out = ['<h2 id="simulation">Simulation</h2>', f"<ul>{notes}</ul>" if notes else "",
           _frame_table(sim.summary, "species simulated")]
    if sim.rate_control is not None and len(sim.rate_control):
        out.append("<h3>Degree of rate control</h3>" + _frame_table(sim.rate_control, "degrees of rate control"))
    if sim.tof_comparison is not None and len(sim.tof_comparison):
        out.append("<h3>Turnover frequency</h3>" + _frame_table(sim.tof_comparison, "turnover frequencies"))
    fig = concentration_figure(sim, (getattr(results, "settings", None) or {}).get("time_axis", "auto"),
                               species_names(results))
    out.append(f'<figure id="figure-concentrations">{figure_svg(fig)}<figcaption>Concentrations against time '
               "(fixed species and species at their own concentration dashed).</figcaption></figure>")
    return out


def render_report(results) -> str:
    """The whole page as a string (see the module docstring for its order)."""
    findings = sorted_findings(getattr(results, "findings", None))
    unit = str(getattr(results, "energy_unit", "kcal/mol"))
    body = [
        "<h1>qcthermo report</h1>",
        f'<p class="meta">qcthermo {html.escape(__version__)}; energies in '
        f"{html.escape(str(getattr(results, 'energy_unit', 'kcal/mol')))} where a column does not say hartree.</p>",
        *_enthalpy_reference(getattr(results, "settings", None)),
        _findings_section(findings),
        _settings_section(getattr(results, "settings", None)),
        '<h2 id="species">Species</h2>' + _frame_table(getattr(results, "species", None), "species", "species", unit),
        '<h2 id="reactions">Reactions</h2>'
        + _frame_table(getattr(results, "reactions", None), "reactions", "reactions", unit),
        *_optional_tables(results),
        *_solution_section(results),
        *_simulation_section(results),
        _figures_section(results),
    ]
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>qcthermo report</title><style>{CSS}</style></head><body>\n" + "\n".join(body) + "\n</body></html>\n"
    )


def write_report(results, out_dir: str | Path) -> Path:
    """Write ``report.html`` into ``out_dir`` (atomically) and return its path."""
    return atomic_write(Path(out_dir) / "report.html", render_report(results))

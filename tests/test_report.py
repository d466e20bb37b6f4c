"""report.html: content, escaping, self-containment, and rendering in a real headless browser."""

import re
import shutil
import subprocess
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

from qcthermo.export.report import render_report, sorted_findings, write_report

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")

# Final SCF energies of p-divinylbenzene, hartree (third-party-logs/README.md: Gaussian 16, ORCA 5)
E_GAUSSIAN = -382.30824980
E_ORCA = -382.05509182


def _results(temperatures=(298.15,)):
    temps = np.asarray(temperatures, dtype=float)
    species = pd.DataFrame({"species": ["dvb_g", "dvb_o", "<b>odd & name</b>"],
                            "file": ["gaussian16/dvb_ir.out", "orca5.0/dvb_ir.out", "x.out"],
                            "E_elec_Eh": [E_GAUSSIAN, E_ORCA, np.nan]})
    reactions = pd.DataFrame([{"reaction": "g_to_o", "T_K": t, "dG_kcal_mol": 158.8 + 0.001 * t,
                               "dG_act_kcal_mol": np.nan, "k_forward": np.nan} for t in temps])
    profile = {"name": "dvb", "states": [{"label": "g", "value_Eh": {"G": E_GAUSSIAN + 0 * temps}},
                                         {"label": "o", "value_Eh": {"G": E_ORCA + 0 * temps}, "is_ts": True}]}
    findings = [("warning", "orca5.0/dvb_ir.out", "a warning"), ("error", "x.out", "could not be read <here>"),
                ("warning", "species dvb_o", "second warning")]
    return SimpleNamespace(settings={"temperature_K": list(temps), "low_mode_model": "qrrho", "standard_state": "1M"},
                           conditions=SimpleNamespace(temperature=temps), energy_unit="kcal/mol", species=species,
                           reactions=reactions, findings=findings, profiles=[profile])


class _Collector(HTMLParser):
    """Tags, and the text of the first column of the audit table, in document order."""

    def __init__(self):
        super().__init__()
        self.tags, self.links = [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        attrs = dict(attrs)
        for key in ("src", "href"):
            if attrs.get(key):
                self.links.append(attrs[key])


def test_findings_order_errors_then_warnings():
    ordered = sorted_findings(_results().findings)
    assert [f[0] for f in ordered] == ["error", "warning", "warning"]
    assert ordered[1][1] == "orca5.0/dvb_ir.out"  # stable within a severity


def test_report_is_self_contained_and_escaped(tmp_path):
    path = write_report(_results(), tmp_path)
    assert path.name == "report.html"
    text = path.read_text(encoding="utf-8")
    parser = _Collector()
    parser.feed(text)
    assert "script" not in parser.tags and "link" not in parser.tags and parser.links == []
    assert "http" not in re.sub(r'xmlns(:\w+)?="[^"]*"|<!DOCTYPE svg[^>]*>', "", text)  # no network reference
    assert "&lt;b&gt;odd &amp; name&lt;/b&gt;" in text and "<b>odd" not in text
    assert "could not be read &lt;here&gt;" in text
    # audit before settings before tables before figures
    positions = [text.index(f'id="{s}"') for s in ("audit", "settings", "species", "reactions", "figures")]
    assert positions == sorted(positions)
    assert text.index("x.out</td>") < text.index("orca5.0/dvb_ir.out</td>")  # the error comes first
    assert "-382.308250" in text  # hartree to the microhartree
    assert parser.tags.count("svg") == 1  # the profile, inline
    assert "Energy profile dvb:" in text  # the caption names it


def _profile_record(name, start, heights_eh):
    labels = [start, f"ts_{name}", f"p_{name}"]
    return {"name": name, "states": [{"label": lab, "value_Eh": {"G": E_GAUSSIAN + h + 0 * np.zeros(1)},
                                      "species": [lab]} for lab, h in zip(labels, heights_eh, strict=True)]}


def test_report_shows_every_profile_and_the_overlay_only_when_there_is_one():
    results = _results()
    results.profiles = [_profile_record("a", "r1", [0.0, 0.02, -0.01]), _profile_record("b", "r2", [0.0, 0.03, 0.0])]
    text = render_report(results)
    assert 'id="figure-profile_a"' in text and 'id="figure-profile_b"' in text
    assert 'id="figure-profile"' not in text  # two unrelated profiles: a combined figure would only repeat them
    results.profiles.append(_profile_record("c", "r1", [0.0, 0.01, -0.02]))  # starts like "a": overlaid with it
    text = render_report(results)
    assert [m for m in re.findall(r'id="figure-([^"]+)"', text)] == ["profile", "profile_a", "profile_b", "profile_c"]
    assert "All energy profiles, those that belong together overlaid (one panel per group): a, b, c;" in text


def test_report_with_a_temperature_range_has_the_temperature_plot():
    text = render_report(_results(temperatures=(250.0, 300.0, 350.0)))
    assert 'id="figure-dG_T"' in text and 'id="figure-profile_dvb"' in text
    assert 'id="figure-arrhenius"' not in text  # no rate constants in this table


@pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed (apt-get install -y chromium)")
def test_report_renders_in_a_headless_browser(tmp_path):
    path = write_report(_results(temperatures=(250.0, 300.0, 350.0)), tmp_path)
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update", "--disable-sync",
             f"--user-data-dir={tmp_path / 'profile'}"]
    url = path.resolve().as_uri()
    dom = subprocess.run([CHROMIUM, *flags, "--dump-dom", url], capture_output=True, text=True, timeout=120,
                         check=True).stdout
    main = re.sub(r"<details>.*?</details>", "", dom, flags=re.S)
    assert main.count("<table") == 4  # audit, settings, species, reactions
    assert dom.count("<details>") == 4  # every column of each species (3) and reaction (1), collapsed
    assert dom.count("<svg") == 2  # profile and dG(T)
    assert "dvb_ir.out" in dom and "g_to_o" in dom
    # the browser's DOM keeps the figures as SVG with their text
    svg = re.search(r"<svg.*?</svg>", dom, flags=re.S).group(0)
    assert "o‡" in svg
    shot = tmp_path / "report.png"
    subprocess.run([CHROMIUM, *flags, f"--screenshot={shot}", "--window-size=1200,2400", url],
                   capture_output=True, timeout=120, check=True)
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_inline_svg_is_well_formed():
    text = render_report(_results())
    svg = re.search(r"<svg.*?</svg>", text, flags=re.S).group(0)
    assert ET.fromstring(svg).tag.endswith("svg")


@pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed (apt-get install -y chromium)")
def test_report_of_a_real_run_renders(sample_run, tmp_path):
    from qcthermo.export.figures import write_profile_figures

    path = write_report(sample_run, tmp_path / "out")
    names = sorted(p.name for p in write_profile_figures(sample_run, tmp_path / "out"))
    assert names == ["arrhenius.svg", "dG_T.svg", "profile.png", "profile.svg", "profile_isomerisation.png",
                     "profile_isomerisation.svg"]
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update", "--disable-sync",
             f"--user-data-dir={tmp_path / 'profile'}"]
    dom = subprocess.run([CHROMIUM, *flags, "--dump-dom", path.resolve().as_uri()], capture_output=True, text=True,
                         timeout=120, check=True).stdout
    assert dom.count("<svg") == 3  # the one profile (no overlay to show), dG(T), Arrhenius
    for name in ("hcn", "hnc", "ts_hcn", "isomerisation"):
        assert f">{name}</td>" in dom
    assert "ts_hcn‡" in dom  # the transition state is marked on the profile
    assert len(sample_run.arrhenius) and 'id="arrhenius-fits"' in dom  # the fits over the range are shown


def test_report_tables_are_the_tables_for_people(sample_run):
    # the same typeset headers and number formats as reactions.md (qcthermo.export.tables), not csv names
    from qcthermo.export.report import render_report
    from qcthermo.export.tables import human_header

    text = render_report(sample_run)
    assert f"<th class=\"num\">{human_header('dG_act_kcal_mol', 'md')}</th>" in text
    headers = re.findall(r"<th[^>]*>([^<]*)</th>", text)
    assert "dG_act_kcal_mol" not in headers and "E_elec_Eh" not in headers
    # a hartree energy to the microhartree, as in species.md
    e = sample_run.species["E_elec_Eh"].iloc[0]
    assert f">{e:.6f}</td>" in text


def test_report_footnote_marks_are_superscripts_with_their_notes(sample_run):
    # the convention of journals' table footnotes: a superscript letter in the row, the same letter before the
    # note below the table (the run's reactions table has notes: each reaction's equation)
    from qcthermo.export.report import render_report

    text = render_report(sample_run)
    cell_marks = re.findall(r"<td class=\"text\">[^<]+<sup>([a-z,]+)</sup></td>", text)
    note_marks = re.findall(r"<li><sup>([a-z]+)</sup> ", text)
    assert cell_marks and {m for ms in cell_marks for m in ms.split(",")} <= set(note_marks)
    assert not re.search(r"<td class=\"text\">[^<]* [a-z](,[a-z])*</td>", text.split("<details")[0])


#: run in a copy of the report: opens every collapsible block, then lists each table wider than its box
_MEASURE = """<script>
document.querySelectorAll("details").forEach(d => d.open = true);
const wide = [...document.querySelectorAll(".scroll")].filter(e => e.scrollWidth > e.clientWidth + 1)
  .map(e => e.previousElementSibling ? e.previousElementSibling.textContent.slice(0, 40) : "?");
if (document.documentElement.scrollWidth > window.innerWidth) wide.push("page");
document.body.setAttribute("data-wide", JSON.stringify(wide));
</script>"""


@pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed (apt-get install -y chromium)")
def test_report_tables_of_the_sample_run_need_no_sideways_scrolling(tmp_path):
    # Chromium's own layout at a 1280 px wide window: no table of the sample run's report (every collapsible
    # block opened) is wider than its box, so nothing is reachable only by scrolling sideways
    from conftest import SAMPLES

    import qcthermo

    results = qcthermo.run(SAMPLES, reactions=SAMPLES / "reactions.toml", jobs=1, cache=False)
    page = tmp_path / "measure.html"
    page.write_text(render_report(results).replace("</body>", _MEASURE + "</body>"), encoding="utf-8")
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update", "--disable-sync",
             f"--user-data-dir={tmp_path / 'profile'}", "--window-size=1280,2000"]
    dom = subprocess.run([CHROMIUM, *flags, "--dump-dom", page.resolve().as_uri()], capture_output=True, text=True,
                         timeout=120, check=True).stdout
    wide = re.search(r'data-wide="([^"]*)"', dom)
    assert wide is not None, "the measuring script did not run"
    assert wide.group(1) == "[]", wide.group(1)

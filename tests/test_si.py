"""Supporting-information document (si.md, si.tex) from real third-party logs."""

import re
import shutil
import subprocess
from types import SimpleNamespace

import numpy as np
import pytest
from log_text import last_printed

import qcthermo
from qcthermo.export.si import tex_escape, write_si
from qcthermo.records import Conditions
from qcthermo.species import SpeciesOptions, build_species


@pytest.fixture
def run_like(third_party):
    dvb = qcthermo.read_log(third_party / "gaussian16/dvb_ir.out")
    ts = qcthermo.read_log(third_party / "gamess-us2018/nh3_ts_ir.out")
    cond = Conditions(low_mode_model="qrrho", standard_state="1M")
    species = {"dvb": build_species("dvb", [dvb], cond),
               "nh3_ts": build_species("nh3_ts", [ts], cond, SpeciesOptions(transition_state=True)),
               "na_me&_%x": build_species("na_me&_%x", [dvb], cond),
               # a single point has no frequencies: no thermochemistry, so no block
               "sp_only": build_species("sp_only", [qcthermo.read_log(third_party / "gaussian16/dvb_sp.out")], cond)}
    return SimpleNamespace(conditions=cond, species_results=species, settings={"directory": str(third_party)})


def _block(text, name):
    start = text.index(f"## {name}\n")
    end = text.find("\n## ", start + 1)
    return text[start:] if end < 0 else text[start:end]


def test_markdown_block_holds_the_logs_numbers(run_like, third_party, tmp_path):
    md, tex = write_si(run_like, tmp_path)
    assert (md.name, tex.name) == ("si.md", "si.tex")
    text = md.read_text()
    assert "T = 298.15 K, standard state 1M" in text and "qrrho" in text
    dvb = _block(text, "dvb")
    log = third_party / "gaussian16/dvb_ir.out"
    # energy as printed by Gaussian ("SCF Done"), to the microhartree
    energy = last_printed(log, r"SCF Done:\s+E\(\w+\)\s+=\s+(-?\d+\.\d+)")
    assert f"| E / Eh | {energy:.6f} |" in dvb
    # the lowest wavenumber Gaussian prints (54 real modes: no imaginary ones; README of the logs)
    lowest = float(re.findall(r"Frequencies --\s+(-?\d+\.\d+)", log.read_text(errors="replace"))[0])
    assert f"| lowest real frequency / cm-1 | {lowest:.1f} |" in dvb
    assert "| imaginary frequencies / cm-1 | none |" in dvb
    # p-divinylbenzene is C2h, symmetry number 2 (README of the third-party logs)
    assert "| point group (symmetry number) | C2h (2) |" in dvb
    assert "| file | gaussian16/dvb\\_ir.out |" in dvb  # relative to the run's directory
    assert "| charge, multiplicity | 0, 1 |" in dvb
    for key in ("ZPE", "H", "G (qrrho)", "G (rrho)"):
        assert re.search(rf"\| {re.escape(key)} / Eh \| -?\d+\.\d{{6}} \|", dvb), key


def test_species_without_a_usable_calculation_is_listed_not_dropped(run_like, tmp_path):
    md, tex = write_si(run_like, tmp_path)
    assert "## sp\\_only" not in md.read_text()
    assert "Not included (no usable calculation): sp\\_only." in md.read_text()
    assert r"Not included (no usable calculation): sp\_only." in tex.read_text()


def test_markdown_coordinates_are_the_final_geometry(run_like, tmp_path):
    md, _ = write_si(run_like, tmp_path)
    dvb = _block(md.read_text(), "dvb")
    rows = re.search(r"```\n(.*?)```", dvb, flags=re.S).group(1).splitlines()
    calc = run_like.species_results["dvb"].lowest.calculation
    assert len(rows) == 20  # C10H10 (README of the third-party logs)
    symbols = [r.split()[0] for r in rows]
    xyz = np.array([[float(v) for v in r.split()[1:]] for r in rows])
    assert symbols.count("C") == 10 and symbols.count("H") == 10
    assert np.allclose(xyz, calc.coordinates, atol=5e-7)  # 6 decimals
    assert all(re.fullmatch(r"[A-Z][a-z]?\s+(-?\d+\.\d{6}\s*){3}", r) for r in rows)


def test_transition_state_lists_its_imaginary_mode(run_like, third_party, tmp_path):
    md, _ = write_si(run_like, tmp_path)
    block = _block(md.read_text(), "nh3\\_ts")
    # GAMESS prints the mode as "825.18 I"; exactly one imaginary mode (README of the third-party logs)
    printed = last_printed(third_party / "gamess-us2018/nh3_ts_ir.out", r"FREQUENCY:\s+(\d+\.\d+) I")
    assert f"| imaginary frequencies / cm-1 | {printed:.1f}i |" in block


def _environments(tex):
    """(name, column spec, body) of every tabular/longtable; raises if begin/end do not balance."""
    stack, found = [], []
    for m in re.finditer(r"\\(begin|end)\{(\w+)\}(\{[^}]*\})?", tex):
        kind, name, spec = m.groups()
        if kind == "begin":
            stack.append((name, spec, m.end()))
        else:
            top, top_spec, start = stack.pop()
            assert top == name, f"\\end{{{name}}} closes \\begin{{{top}}}"
            if name in ("tabular", "longtable"):
                found.append((name, top_spec.strip("{}"), tex[start:m.start()]))
    assert not stack, f"unclosed {stack}"
    return found


def test_latex_environments_balance_with_the_right_column_count(run_like, tmp_path):
    _, tex = write_si(run_like, tmp_path)
    text = tex.read_text()
    tables = _environments(text)
    assert [t[0] for t in tables].count("longtable") == 3  # one coordinate table per species
    for _name, spec, body in tables:
        ncols = len(re.findall(r"[lrc]", spec))
        rows = [r for r in body.split("\\\\") if re.search(r"(?<!\\)&", r)]  # skip the caption line
        assert rows
        for row in rows:
            assert len(re.findall(r"(?<!\\)&", row)) == ncols - 1, row
    assert r"\subsection*{na\_me\&\_\%x}" in text
    # typeset formula and point group of p-divinylbenzene, C10H10, C2h, sigma 2 (README of the logs)
    assert r"formula & C$_{10}$H$_{10}$ \\" in text
    assert r"point group (symmetry number) & C$_{2h}$ (2) \\" in text


def test_tex_escape_handles_the_special_characters():
    assert tex_escape("a_b & 50% $x$ #1 {y} ~ ^ \\") == (
        r"a\_b \& 50\% \$x\$ \#1 \{y\} \textasciitilde{} \textasciicircum{} \textbackslash{}")


@pytest.mark.skipif(shutil.which("pdflatex") is None, reason="no TeX engine (pdflatex) installed")
def test_latex_compiles(run_like, tmp_path):
    _, tex = write_si(run_like, tmp_path)
    done = subprocess.run(["pdflatex", "-interaction=nonstopmode", "-halt-on-error", tex.name], cwd=tmp_path,
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stdout[-2000:]
    assert (tmp_path / "si.pdf").read_bytes().startswith(b"%PDF-")


def test_si_of_a_real_run(sample_run, tmp_path):
    md, tex = write_si(sample_run, tmp_path)
    text = md.read_text()
    assert [line[3:] for line in text.splitlines() if line.startswith("## ")] == ["hcn", "hnc", "ts\\_hcn"]
    assert "T = 250.00 K" in text  # the first temperature of the range
    assert "| file | hcn.out |" in text  # relative to the run's directory
    ts = _block(text, "ts\\_hcn")
    assert re.search(r"\| imaginary frequencies / cm-1 \| \d+\.\di \|", ts)  # exactly one
    if shutil.which("pdflatex"):
        done = subprocess.run(["pdflatex", "-interaction=nonstopmode", "-halt-on-error", tex.name], cwd=tmp_path,
                              capture_output=True, text=True, timeout=120)
        assert done.returncode == 0, done.stdout[-2000:]


def test_composite_species_name_their_single_point_file(samples, tmp_path):
    # sample_outputs/reactions.toml pairs gas/ch4.out (B3LYP frequencies) with sp/ch4_mp2.out (MP2 energy)
    ch4 = qcthermo.read_log(samples / "gas/ch4.out")
    sp = qcthermo.read_log(samples / "sp/ch4_mp2.out")
    cond = Conditions(standard_state="1M")
    run = SimpleNamespace(conditions=cond, settings={"directory": str(samples)},
                          species_results={"ch4": build_species("ch4", [ch4], cond, single_points=[sp])})
    md, tex = write_si(run, tmp_path)
    assert "| file | gas/ch4.out |" in md.read_text()
    assert "| single-point file | sp/ch4\\_mp2.out |" in md.read_text()
    # the energy shown is the single point's, as NWChem prints it ("Total MP2 energy")
    energy = last_printed(samples / "sp/ch4_mp2.out", r"Total MP2 energy\s+(-?\d+\.\d+)")
    assert f"| E / Eh | {energy:.6f} |" in md.read_text()
    assert r"single-point file & sp/ch4\_mp2.out \\" in tex.read_text()


def test_latex_uses_scalable_fonts(run_like, tmp_path):
    # T1 encoding without a scalable font family falls back to bitmap (Type 3) EC fonts in the PDF
    _, tex = write_si(run_like, tmp_path)
    preamble = tex.read_text().split(r"\begin{document}")[0]
    assert r"\usepackage[T1]{fontenc}" in preamble and r"\usepackage{lmodern}" in preamble

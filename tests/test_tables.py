"""Paper tables: csv, Markdown, LaTeX and xlsx written from a DataFrame.

The outside checks: a TeX engine compiles the LaTeX (when one is installed), pandas re-reads the csv,
the Markdown pipe table and the xlsx, openpyxl reads the workbook's cells and number formats.
"""

from __future__ import annotations

import io
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from qcthermo.errors import QcthermoError
from qcthermo.export.tables import (
    HEADER_ROW,
    LONGTABLE_ROWS,
    human_header,
    latex_escape,
    to_latex,
    to_markdown,
    write_tables,
    write_xlsx,
)

CAPTION = "Gibbs energies at T = 298.15 K, standard state 1M, quasi-RRHO (threshold 100 cm^-1), B3LYP/6-31G*"
NOTES = ["warning: ts_1: mixed levels of theory", "100% of the population in one conformer & one more"]


def species_table() -> pd.DataFrame:
    """A species table with the column names of the run's species.csv (values are arbitrary inputs of
    the formatter, not results)."""
    return pd.DataFrame(
        {
            "species": ["ts_1", "A&B", "water #2"],
            "T_K": [298.15, 298.15, 298.15],
            "formula": ["C2H4", "H2", "H2O"],
            "charge": [0, 0, 0],
            "E_elec_Eh": [-78.5876543219, -1.1754, -76.4089],
            "ZPE_Eh": [0.0512, 0.0101, np.nan],
            "S_Eh_K": [1.2345678e-4, 6.2e-5, 7.1e-5],
            "G_qrrho_Eh": [-78.55, -1.18, None],
            "point_group": ["D2h", "D*h", "C2v"],
            "symmetry_number": [4, 2, 2],
            "transition_state": [True, False, False],
            "notes": ["50% conversion", "", "a long note that has to wrap: " + "mixed levels of theory; " * 3],
        }
    )


def reactions_table(temperatures) -> pd.DataFrame:
    """A long reactions table (one row per temperature) with the run's reactions.csv column names."""
    t = np.asarray(temperatures, dtype=float)
    return pd.DataFrame(
        {
            "reaction": ["cyclo_add"] * len(t),
            "T_K": t,
            "dE_kcal_mol": np.full(len(t), -20.123),
            "dG_kcal_mol": -20.0 + 0.01 * t,
            "dG_qrrho_kcal_mol": -19.5 + 0.01 * t,
            "dG_act_kcal_mol": np.where(t > 400, np.nan, 15.0 + 0.001 * t),
            "k_forward": 1.2345e5 * t / 298.15,
            "kappa": np.full(len(t), 1.234),
        }
    )


# -- LaTeX ------------------------------------------------------------------------------------------


def _unescaped_ampersands(line: str) -> int:
    """Column separators of a row, a \\multicolumn{n} counting as the n - 1 it spans."""
    spans = sum(int(n) - 1 for n in re.findall(r"\\multicolumn\{(\d+)\}", line))
    return len(re.findall(r"(?<!\\)&", line)) + spans


def check_latex(tex: str, ncols: int) -> None:
    """A small structural checker: environments balanced and properly nested, booktabs rules in order,
    every row of the tabular/longtable with ncols-1 column separators."""
    stack = []
    for kind, env in re.findall(r"\\(begin|end)\{(\w+)\}", tex):
        if kind == "begin":
            stack.append(env)
        else:
            assert stack and stack.pop() == env, f"\\end{{{env}}} does not close the open environment"
    assert not stack, f"unclosed environments {stack}"
    rules = [m.group(1) for m in re.finditer(r"\\(toprule|midrule|bottomrule)", tex)]
    assert rules[0] == "toprule" and "midrule" in rules and "bottomrule" in rules
    body = re.search(r"\\begin\{(tabular|longtable)\}\{((?:[lrc]|p\{[^}]+\})+)\}(.*?)\\end\{\1\}", tex, re.S)
    assert body is not None
    assert len(re.findall(r"[lrc]|p\{[^}]+\}", body.group(2))) == ncols
    rows = [
        line
        for line in body.group(3).splitlines()
        if line.rstrip().endswith(r"\\") and not line.lstrip().startswith(r"\caption")
    ]
    assert rows
    for line in rows:
        assert _unescaped_ampersands(line) == ncols - 1, line
    assert tex.count("{") - tex.count(r"\{") == tex.count("}") - tex.count(r"\}")


def test_latex_structure_and_escaping():
    df = species_table()
    tex = to_latex(df, CAPTION, NOTES, label="tab:species")
    check_latex(tex, len(df.columns))
    assert tex.splitlines()[0].startswith("% requires \\usepackage{booktabs")
    assert r"ts\_1" in tex and r"A\&B" in tex and r"water \#2" in tex and r"50\% conversion" in tex
    assert r"\caption{Gibbs energies at T = 298.15 K" in tex and r"cm$^{-1}$" in tex
    assert r"\label{tab:species}" in tex
    # the table's notes in a small-print block below the tabular, without marks (no row anchors them)
    assert tex.index(r"\end{tabular}") < tex.index(r"warning: ts\_1") < tex.index(r"\end{table}")
    assert "\n100\\% of the population in one conformer \\& one more\\par" in tex and r"\textsuperscript{a}" not in tex


def test_latex_headers_units_and_numbers():
    df = species_table()
    tex = to_latex(df, CAPTION)
    # symbols on the first header line, units on the second; one unit over neighbouring columns spans them
    names, units = [line for line in tex.splitlines() if line.endswith(r"\\")][:2]
    assert r"$E_{\mathrm{elec}}$" in names and r"$S$" in names and "/" not in names
    assert r"\multicolumn{2}{c}{$E_\mathrm{h}$} & $E_\mathrm{h}$\,K$^{-1}$ & $E_\mathrm{h}$" in units
    row = next(line for line in tex.splitlines() if line.startswith(r"ts\_1"))
    cells = [c.strip() for c in re.split(r"(?<!\\)&", row.removesuffix(r"\\"))]
    # hartree 6 decimals, entropy scientific, integers plain, flags as words, formula with subscripts
    assert cells[4] == "$-78.587654$"
    assert cells[6] == r"$1.2346\times10^{-4}$"
    assert cells[3] == "0" and cells[9] == "4" and cells[10] == "yes"
    assert cells[2] == "C$_{2}$H$_{4}$" and cells[8] == "$D_{2h}$"
    assert r"$D_{\infty h}$" in tex
    water = next(line for line in tex.splitlines() if line.startswith(r"water"))
    assert water.count("--") == 2  # missing ZPE and G
    assert next(line for line in tex.splitlines() if line.startswith(r"A\&B")).endswith("-- \\\\")  # empty note
    assert r"p{5cm}" in tex  # the long notes wrap


def test_long_latex_table_breaks_across_pages():
    df = reactions_table(np.arange(250.0, 250.0 + 10 * LONGTABLE_ROWS, 10.0))
    tex = to_latex(df, "Reaction free energies over a temperature range", ["dG_act empty above 400 K"])
    check_latex(tex, len(df.columns))
    assert r"\begin{longtable}" in tex and r"\endhead" in tex and "longtable" in tex.splitlines()[0]
    assert r"$\Delta G^{\ddagger}$ & " in tex and r"$\Delta G_{\mathrm{qRRHO}}$ & " in tex
    assert r"\multicolumn{4}{c}{kcal\,mol$^{-1}$}" in tex
    # rate constants: scientific, 3 significant digits (1.2345e5 * 250 / 298.15 = 1.035e5 in the first row)
    rows = [line for line in tex.splitlines() if line.startswith("cyclo")]
    k_cells = [re.split(r"(?<!\\)&", line)[6].strip() for line in rows]
    assert k_cells[0] == r"$1.04\times10^{5}$"
    assert all(re.fullmatch(r"\$\d\.\d\d\\times10\^\{\d+\}\$", cell) for cell in k_cells)
    # missing activation energies (above 400 K) are "--"
    assert sum(re.split(r"(?<!\\)&", line)[5].strip() == "--" for line in rows) == sum(df["T_K"] > 400)


def _tex_engine():
    for engine in ("pdflatex", "lualatex"):
        if shutil.which(engine):
            return engine
    pytest.skip("no TeX engine (pdflatex or lualatex) on this machine")


def _compile(engine: str, path: Path, packages: str, tex: str) -> Path:
    """Compile ``tex`` in a minimal document using ``packages``, written to ``path``; assert that the engine
    succeeds and return the path of the PDF it would write."""
    document = "\n".join(
        [r"\documentclass{article}", rf"\usepackage{{{packages}}}", r"\begin{document}", tex, r"\end{document}"]
    )
    path.write_text(document, encoding="utf-8")
    proc = subprocess.run(
        [engine, "-interaction=nonstopmode", "-halt-on-error", path.name],
        cwd=path.parent,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert proc.returncode == 0, proc.stdout[-2000:]
    return path.with_suffix(".pdf")


@pytest.mark.parametrize("rows", [3, LONGTABLE_ROWS + 5])
def test_latex_compiles(tmp_path, rows):
    """The table compiles in a minimal document with the packages its first line names."""
    engine = _tex_engine()
    if rows == 3:
        tex = to_latex(species_table(), CAPTION, NOTES, label="tab:species")
    else:
        tex = to_latex(reactions_table(np.linspace(200, 600, rows)), CAPTION, NOTES, label="tab:reactions")
    packages = re.match(r"% requires \\usepackage\{([\w,]+)\}", tex).group(1)
    assert _compile(engine, tmp_path / "table.tex", packages, tex).stat().st_size > 0


NASTY_NAMES = [
    "ts_1",
    "A&B",
    "50% yield",
    "α-pinene → TS‡",
    "x^2",
    "{brace}",
    "back\\slash",
    "~tilde",
    "#2",
    "$5",
    "a<b>c",
]


def test_latex_with_special_characters_compiles(tmp_path):
    """Species names with every LaTeX special character (and a few symbols the tool writes) compile."""
    engine = _tex_engine()
    df = pd.DataFrame({"species": NASTY_NAMES, "G_Eh": np.linspace(-1, -2, len(NASTY_NAMES))})
    tex = to_latex(df, "names & symbols: 100% ~ ^-1 _ # $", ["note with ΔG‡ and σ = 2"])
    check_latex(tex, 2)
    _compile(engine, tmp_path / "names.tex", "booktabs", tex)


def test_latex_escape_specials():
    assert latex_escape("a_b & c% $d #e {f} ~g ^h \\i") == (
        r"a\_b \& c\% \$d \#e \{f\} \textasciitilde{}g \textasciicircum{}h \textbackslash{}i"
    )
    assert latex_escape("100 cm^-1") == "100 cm$^{-1}$"


# -- Markdown ---------------------------------------------------------------------------------------


def _pipe_rows(md: str) -> list[str]:
    return [line for line in md.splitlines() if line.startswith("|")]


def test_markdown_pipes_headers_and_notes():
    df = species_table()
    md = to_markdown(df, CAPTION, NOTES)
    lines = md.splitlines()
    assert lines[0] == "Table: " + CAPTION.replace("cm^-1", "cm⁻¹")
    rows = _pipe_rows(md)
    assert len(rows) == len(df) + 2
    for row in rows:
        assert len(re.findall(r"(?<!\\)\|", row)) == len(df.columns) + 1, row
    header = [h.strip() for h in rows[0].strip("|").split("|")]
    assert header[:2] == ["Species", "T / K"]
    assert "E (elec) / Eₕ" in header and "S / Eₕ K⁻¹" in header and "G (qRRHO) / Eₕ" in header
    assert "σ" in header
    assert set(rows[1].strip("|").split("|")) <= {"---:", ":---"}
    assert lines[-2:] == [f"- {NOTES[0]}", f"- {NOTES[1]}"]


def test_markdown_reads_back_with_pandas():
    """pandas parses the pipe table (separator "|") and finds the values at the column's precision;
    missing values are empty cells."""
    df = species_table()
    md = to_markdown(df, CAPTION)
    table = "\n".join(row.strip().strip("|") for i, row in enumerate(_pipe_rows(md)) if i != 1)
    back = pd.read_csv(io.StringIO(table), sep="|", skipinitialspace=True, dtype=str, keep_default_na=False)
    back = back.apply(lambda col: col.str.strip())
    back.columns = [c.strip() for c in back.columns]
    assert list(back["Species"]) == ["ts_1", "A&B", "water #2"]
    assert list(back["E (elec) / Eₕ"]) == ["-78.587654", "-1.175400", "-76.408900"]
    assert list(back["ZPE / Eₕ"]) == ["0.051200", "0.010100", ""]
    assert list(back["Formula"]) == ["C₂H₄", "H₂", "H₂O"]
    assert list(back["Point group"]) == ["D2h", "D∞h", "C2v"]
    assert float(back["S / Eₕ K⁻¹"][0]) == pytest.approx(1.2345678e-4, rel=1e-4)


def test_markdown_escapes_pipes():
    df = pd.DataFrame({"species": ["a|b"], "G_Eh": [-1.0]})
    row = _pipe_rows(to_markdown(df, "x"))[2]
    assert row == "| a\\|b | -1.000000 |"


# -- headers ----------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("column", "md", "tex"),
    [
        ("dG_act_kcal_mol", "ΔG‡ / kcal mol⁻¹", r"$\Delta G^{\ddagger}$ / kcal\,mol$^{-1}$"),
        (
            "dG_qrrho_act_rev_kJ_mol",
            "ΔG‡ (qRRHO, reverse) / kJ mol⁻¹",
            r"$\Delta G^{\ddagger}_{\mathrm{qRRHO,reverse}}$ / kJ\,mol$^{-1}$",
        ),
        ("dE_zpe_kcal_mol", "Δ(E+ZPE) / kcal mol⁻¹", r"$\Delta (E+\mathrm{ZPE})$ / kcal\,mol$^{-1}$"),
        ("dH_eV", "ΔH / eV", r"$\Delta H$ / eV"),
        ("G_Eh", "G / Eₕ", r"$G$ / $E_\mathrm{h}$"),
        ("S_Eh_K", "S / Eₕ K⁻¹", r"$S$ / $E_\mathrm{h}$\,K$^{-1}$"),
        ("T_K", "T / K", r"$T$ / K"),
        ("k_forward", "k (forward)", r"$k_{\mathrm{forward}}$"),
        ("kappa", "κ", r"$\kappa$"),
        ("population", "Population", "Population"),
        ("imaginary_frequency_cm1", "ν̃ (imag) / cm⁻¹", r"$\tilde{\nu}_{\mathrm{imag}}$ / cm$^{-1}$"),
        ("my_own_column", "my own column", "my own column"),
        ("weird_%_col", "weird % col", r"weird \% col"),
    ],
)
def test_human_header(column, md, tex):
    assert human_header(column, "md") == md
    assert human_header(column, "xlsx") == md
    assert human_header(column, "tex") == tex


def test_human_header_bad_style():
    with pytest.raises(QcthermoError, match="style"):
        human_header("G_Eh", "html")


# -- xlsx -------------------------------------------------------------------------------------------


def test_xlsx_reads_back(tmp_path):
    from openpyxl import load_workbook

    df = species_table()
    path = write_xlsx(df, tmp_path / "species.xlsx", CAPTION, NOTES)
    sheet = load_workbook(path)["table"]
    assert sheet.cell(row=1, column=1).value == CAPTION.replace("cm^-1", "cm⁻¹")
    headers = [sheet.cell(row=HEADER_ROW, column=j + 1).value for j in range(len(df.columns))]
    assert headers == [human_header(c, "xlsx") for c in df.columns]
    energy = sheet.cell(row=HEADER_ROW + 1, column=list(df.columns).index("E_elec_Eh") + 1)
    assert energy.value == -78.5876543219 and energy.number_format == "0.000000"  # full value, shown to 6
    assert sheet.cell(row=HEADER_ROW + 3, column=list(df.columns).index("ZPE_Eh") + 1).value is None
    notes = [sheet.cell(row=r, column=1).value for r in range(HEADER_ROW + len(df) + 2, HEADER_ROW + len(df) + 4)]
    assert notes == [f"Note: {n}" for n in NOTES]
    # pandas reads the values back under the typeset headers
    back = pd.read_excel(path, sheet_name="table", header=HEADER_ROW - 1, nrows=len(df))
    for column in ("E_elec_Eh", "ZPE_Eh", "S_Eh_K", "G_qrrho_Eh", "T_K"):
        np.testing.assert_array_equal(back[human_header(column, "xlsx")].to_numpy(float), df[column].to_numpy(float))
    assert list(back["Species"]) == list(df["species"])
    legend = pd.read_excel(path, sheet_name="columns")
    assert list(legend["column"]) == list(df.columns)


# -- all formats ------------------------------------------------------------------------------------


def test_write_tables_all_formats(tmp_path):
    df = reactions_table([298.15, 350.0, 450.0])
    paths = write_tables(df, tmp_path, "reactions", caption=CAPTION, notes=NOTES, label="tab:reactions")
    assert [p.name for p in paths] == ["reactions.csv", "reactions.md", "reactions.tex", "reactions.xlsx"]
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(p.name for p in paths)  # no temporary files left
    back = pd.read_csv(paths[0])
    assert list(back.columns) == list(df.columns)  # the csv keeps the machine names
    pd.testing.assert_frame_equal(back, df, check_dtype=False)
    check_latex(paths[2].read_text(encoding="utf-8"), len(df.columns))
    md = paths[1].read_text(encoding="utf-8")
    assert "| ΔG‡ / kcal mol⁻¹ |" in md
    assert "| cyclo_add | 450.00 | -20.12 | -15.50 | -15.00 |  | 1.86e+05 | 1.234 |" in md


def test_write_tables_some_formats_and_bad_format(tmp_path):
    df = species_table()
    paths = write_tables(df, tmp_path / "new", "species", caption=CAPTION, formats=("md",))
    assert [p.name for p in paths] == ["species.md"]
    with pytest.raises(QcthermoError, match="unknown table format 'html'"):
        write_tables(df, tmp_path, "species", caption=CAPTION, formats=("csv", "html"))
    assert not (tmp_path / "species.csv").exists()  # refused before anything is written


def test_reaction_arrows_and_unit_strings():
    """Equations and unit strings as the run writes them read as typeset text."""
    df = pd.DataFrame({"equation": ["A + B -> [TS] -> C"], "k_unit": ["cm^3 molecule^-1 s^-1"]})
    md_row = _pipe_rows(to_markdown(df, "x"))[2]
    assert md_row == "| A + B → [TS] → C | cm³ molecule⁻¹ s⁻¹ |"
    tex = to_latex(df, "x")
    assert r"A + B $\rightarrow$ [TS] $\rightarrow$ C & cm$^{3}$ molecule$^{-1}$ s$^{-1}$ \\" in tex

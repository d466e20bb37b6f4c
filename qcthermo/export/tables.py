"""Paper tables from a DataFrame: csv (machine names), Markdown, LaTeX (booktabs) and xlsx.

Machine column names are snake_case with the unit last (``dG_act_kcal_mol``, ``S_Eh_K``, ``T_K``); the
human tables typeset them (ΔG‡ / kcal mol⁻¹ in Markdown and xlsx, ``$\\Delta G^{\\ddagger}$ /
kcal\\,mol$^{-1}$`` in LaTeX). Every column has one number format chosen from its unit or name
(hartree 6 decimals, kcal/mol and kJ/mol 2, eV 3, entropies and rate constants scientific), so decimals
line up when the column is right-aligned. The choices are written down in docs/tables.md.

pandas and openpyxl are imported inside the functions that need them.
"""

from __future__ import annotations

import io
import math
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import QcthermoError
from ..fileio import atomic_write, csv_text, display

FORMATS = ("csv", "md", "tex", "xlsx")
#: from this many rows on, LaTeX tables are written as a longtable that breaks across pages
LONGTABLE_ROWS = 40
#: LaTeX packages a document needs for the tables written here
LATEX_PACKAGES = ("booktabs",)
LATEX_LONG_PACKAGES = ("booktabs", "longtable")
#: text columns with a cell longer than this are set as wrapping paragraphs of WRAP_WIDTH
WRAP_CHARACTERS = 40
WRAP_WIDTH = "5cm"
#: the type size of the LaTeX tables (8 pt in a 10 pt document, as journals set their tables)
TABLE_SIZE = "footnotesize"


# ---------------------------------------------------------------------------------------------------
# units and symbols


@dataclass(frozen=True)
class Unit:
    """A unit suffix of a machine column name, its typeset forms and the number format it implies."""

    suffix: str
    text: str  # Markdown / xlsx (Unicode)
    tex: str
    kind: str  # number format, see NUMBER_FORMATS


#: longest suffixes first, so that "_Eh_K" wins over "_K"
UNITS = (
    Unit("J_mol_K", "J mol⁻¹ K⁻¹", r"J\,mol$^{-1}$\,K$^{-1}$", "fixed2"),
    Unit("cal_mol_K", "cal mol⁻¹ K⁻¹", r"cal\,mol$^{-1}$\,K$^{-1}$", "fixed2"),
    Unit("kcal_mol", "kcal mol⁻¹", r"kcal\,mol$^{-1}$", "fixed2"),
    Unit("kJ_mol", "kJ mol⁻¹", r"kJ\,mol$^{-1}$", "fixed2"),
    Unit("Eh_K", "Eₕ K⁻¹", r"$E_\mathrm{h}$\,K$^{-1}$", "sci5"),
    Unit("Eh", "Eₕ", r"$E_\mathrm{h}$", "fixed6"),
    Unit("eV", "eV", "eV", "fixed3"),
    Unit("cm1", "cm⁻¹", r"cm$^{-1}$", "fixed1"),
    Unit("s-1", "s⁻¹", r"s$^{-1}$", "sci3"),
    Unit("V", "V", "V", "fixed3"),
    Unit("K", "K", "K", "fixed2"),
    Unit("M", "mol L⁻¹", r"mol\,L$^{-1}$", "sci3"),
    Unit("s", "s", "s", "sci3"),
)

#: quantity symbols: machine token -> (Unicode, LaTeX math)
SYMBOLS = {
    "E": ("E", "E"),
    "H": ("H", "H"),
    "G": ("G", "G"),
    "S": ("S", "S"),
    "U": ("U", "U"),
    "A": ("A", "A"),
    "T": ("T", "T"),
    "Cv": ("Cᵥ", r"C_{V}"),
    "Cp": ("Cₚ", r"C_{p}"),
    "ZPE": ("ZPE", r"\mathrm{ZPE}"),
    "Ea": ("Eₐ", r"E_{\mathrm{a}}"),
    "k": ("k", "k"),
    "kappa": ("κ", r"\kappa"),
}

#: qualifiers that become a subscript (LaTeX) or a parenthesis (Markdown); multi-token ones first
QUALIFIERS = (
    (("qrrho", "enthalpy"), "qRRHO-H"),
    (("quasi", "harmonic"), "QH"),
    (("qrrho",), "qRRHO"),
    (("rrho",), "RRHO"),
    (("elec",), "elec"),
    (("forward",), "forward"),
    (("reverse",), "reverse"),
    (("rev",), "reverse"),
    (("min",), "min"),
    (("max",), "max"),
    (("wigner",), "Wigner"),
    (("eckart",), "Eckart"),
    (("solv",), "solv"),
    (("deprotonation",), "deprotonation"),
    (("proton",), "H+"),
)

#: plain-word headers for the usual descriptive columns
WORDS = {
    "species": "Species",
    "reaction": "Reaction",
    "equation": "Equation",
    "level": "Level of theory",
    "formula": "Formula",
    "charge": "Charge",
    "multiplicity": "Multiplicity",
    "conformers": "Conformers",
    "conformer": "Conformer",
    "duplicates": "Duplicates",
    "point_group": "Point group",
    "standard_state": "Standard state",
    "transition_state": "TS",
    "populations": "Populations",
    "population": "Population",
    "status": "Status",
    "notes": "Notes",
    "k_unit": "Unit of k",
    "symmetry_number": "σ",
    "route": "Route",
    "source": "Source",
    "nasa7": "NASA-7",
    "dfH_0K_kJ_mol": "ΔfH°(0 K) / kJ mol⁻¹",
    "dfH_298_kJ_mol": "ΔfH°(298.15 K) / kJ mol⁻¹",
    "H298_minus_H0_kJ_mol": "H(298.15 K) − H(0) / kJ mol⁻¹",
    "atomization_energy_kJ_mol": "ΣD₀ / kJ mol⁻¹",
    "correction_kJ_mol": "Correction / kJ mol⁻¹",
    "name": "Name",
    "acid": "Acid",
    "base": "Base",
    "scheme": "Scheme",
    "reference_acid": "Reference acid",
    "reference_pKa": "Reference pKa",
    "oxidised": "Oxidised",
    "reduced": "Reduced",
    "electrons": "n(e⁻)",
    "protons": "m(H⁺)",
    "electron": "Electron",
    "reference": "Reference",
    "E_abs_reference_V": "E_abs(reference) / V",
    "imaginary_frequency_cm1": "ν̃ (imag) / cm⁻¹",
}
WORDS_TEX = {"symmetry_number": r"$\sigma$",
             "imaginary_frequency_cm1": r"$\tilde{\nu}_{\mathrm{imag}}$ / cm$^{-1}$",
             "dfH_0K_kJ_mol": r"$\Delta_{\mathrm{f}}H^{\circ}(0\,\mathrm{K})$ / kJ\,mol$^{-1}$",
             "dfH_298_kJ_mol": r"$\Delta_{\mathrm{f}}H^{\circ}(298.15\,\mathrm{K})$ / kJ\,mol$^{-1}$",
             "H298_minus_H0_kJ_mol": r"$H(298.15\,\mathrm{K}) - H(0)$ / kJ\,mol$^{-1}$",
             "atomization_energy_kJ_mol": r"$\sum D_0$ / kJ\,mol$^{-1}$",
             "correction_kJ_mol": r"Correction / kJ\,mol$^{-1}$"}

#: number formats by name; "int" and "text" are decided from the data
NUMBER_FORMATS = {
    "fixed1": "{:.1f}",
    "fixed2": "{:.2f}",
    "fixed3": "{:.3f}",
    "fixed4": "{:.4f}",
    "fixed6": "{:.6f}",
    "sci3": "{:.2e}",
    "sci5": "{:.4e}",
    "general": "{:.6g}",
}
EXCEL_FORMATS = {
    "fixed1": "0.0",
    "fixed2": "0.00",
    "fixed3": "0.000",
    "fixed4": "0.0000",
    "fixed6": "0.000000",
    "sci3": "0.00E+00",
    "sci5": "0.0000E+00",
    "general": "General",
    "int": "0",
}


def split_unit(column: str) -> tuple[str, Unit | None]:
    """``"dG_act_kcal_mol"`` -> ("dG_act", kcal/mol unit); a name without a known unit -> (name, None)."""
    for unit in UNITS:
        if column.endswith("_" + unit.suffix) and len(column) > len(unit.suffix) + 1:
            return column[: -len(unit.suffix) - 1], unit
    return column, None


def _symbol(stem: str) -> tuple[str, str] | None:
    """Typeset quantity of a machine stem such as ``dG_qrrho_act_rev``: (Unicode, LaTeX), or None when
    the stem is not a quantity this module knows (it is then shown as words)."""
    tokens = stem.split("_")
    head, rest = tokens[0], tokens[1:]
    delta = head.startswith("d") and head[1:] in SYMBOLS
    base = head[1:] if delta else head
    if base not in SYMBOLS:
        return None
    text, tex = SYMBOLS[base]
    if delta and rest[:1] == ["zpe"]:  # ΔE+ZPE, the zero-point corrected electronic energy
        text, tex, rest = "(E+ZPE)", r"(E+\mathrm{ZPE})", rest[1:]
    dagger = False
    labels = []
    while rest:
        if rest[0] == "act":
            dagger, rest = True, rest[1:]
            continue
        for words, label in QUALIFIERS:
            if tuple(rest[: len(words)]) == words:
                labels.append(label)
                rest = rest[len(words) :]
                break
        else:
            return None
    text = ("Δ" if delta else "") + text + ("‡" if dagger else "") + (f" ({', '.join(labels)})" if labels else "")
    tex = (
        (r"\Delta " if delta else "")
        + tex
        + (r"^{\ddagger}" if dagger else "")
        + (r"_{\mathrm{" + ",".join(labels) + "}}" if labels else "")
    )
    return text, f"${tex}$"


def human_header(column: str, style: str = "md") -> str:
    """Typeset header of a machine column name, with its unit after a slash.

    ``style`` is "md" or "xlsx" (Unicode: ``ΔG‡ / kcal mol⁻¹``) or "tex" (``$\\Delta G^{\\ddagger}$ /
    kcal\\,mol$^{-1}$``). Unknown names pass through with underscores as spaces (escaped for LaTeX).
    """
    if style not in ("md", "tex", "xlsx"):
        raise QcthermoError(f"unknown header style {style!r}; use md, tex or xlsx")
    tex = style == "tex"
    if tex and column in WORDS_TEX:
        return WORDS_TEX[column]
    if column in WORDS:
        return latex_escape(WORDS[column]) if tex else WORDS[column]
    stem, unit = split_unit(column)
    symbol = _symbol(stem)
    if symbol is not None:
        name = symbol[1] if tex else symbol[0]
    else:
        words = stem.replace("_", " ")
        name = latex_escape(words) if tex else words
    if unit is None:
        return name
    return f"{name} / {unit.tex if tex else unit.text}"


def number_kind(column: str, values: Sequence[Any]) -> str:
    """The number format of a column: from its unit, else from its name, else from its values."""
    unit = split_unit(column)[1]
    if unit is not None:
        return unit.kind
    if re.fullmatch(r"k(_[a-z]+)?", column) and column != "k_unit":
        return "sci3"  # rate constants span many decades: 3 significant digits
    if column.startswith("kappa") or column == "population":
        return "fixed3"
    if column in ("pKa", "reference_pKa", "pH"):
        return "fixed2"
    numbers = [v for v in values if _is_number(v) and not _missing(v)]
    if not numbers:
        return "text"
    if all(float(v).is_integer() for v in numbers):
        return "int"
    return "general"


# ---------------------------------------------------------------------------------------------------
# cells


def _missing(value: Any) -> bool:
    if value is None:
        return True
    try:
        return bool(value != value)  # NaN, pandas NA
    except (TypeError, ValueError):
        return False


def _is_number(value: Any) -> bool:
    """A real number (Python or numpy scalar), not a flag."""
    if isinstance(value, (int, float)):
        return not isinstance(value, bool)
    return getattr(getattr(value, "dtype", None), "kind", None) in ("i", "u", "f")


def _is_bool(value: Any) -> bool:
    return isinstance(value, bool) or getattr(getattr(value, "dtype", None), "kind", None) == "b"


def format_number(value: Any, kind: str) -> str:
    """A number as text in the column's format ("int", "fixed2", "sci3", ...)."""
    if kind == "int":
        return str(round(float(value)))
    if not math.isfinite(float(value)):
        return str(float(value))
    return NUMBER_FORMATS.get(kind, NUMBER_FORMATS["general"]).format(float(value))


def _cell_text(value: Any, kind: str) -> str | None:
    """Display text of one cell; None for a missing value (an empty text counts as missing)."""
    if _missing(value) or (isinstance(value, str) and not value.strip()):
        return None
    if _is_bool(value):
        return "yes" if value else "no"
    if _is_number(value) and kind != "text":
        return format_number(value, kind)
    return " ".join(str(value).split())


_SCI = re.compile(r"^(-?\d+(?:\.\d+)?)e([+-])0*(\d+)$")


def _tex_number(text: str) -> str:
    """``1.23e+05`` -> ``$1.23\\times10^{5}$``; a minus sign in math mode for negatives."""
    match = _SCI.match(text)
    if match:
        mantissa, sign, exponent = match.groups()
        return f"${mantissa}\\times10^{{{'-' if sign == '-' else ''}{exponent}}}$"
    if re.fullmatch(r"-\d+(\.\d+)?", text):
        return f"${text}$"
    return text


_LATEX_SPECIAL = {
    "\\": r"\textbackslash{}",
    "&": r"\&",
    "%": r"\%",
    "$": r"\$",
    "#": r"\#",
    "_": r"\_",
    "{": r"\{",
    "}": r"\}",
    "~": r"\textasciitilde{}",
    "^": r"\textasciicircum{}",
    "<": r"\textless{}",
    ">": r"\textgreater{}",
    # characters the tool itself writes into names, captions and notes, spelled for pdflatex too
    "Δ": r"$\Delta$",
    "‡": r"\ddag{}",
    "σ": r"$\sigma$",
    "κ": r"$\kappa$",
    "ν": r"$\nu$",
    "α": r"$\alpha$",
    "β": r"$\beta$",
    "γ": r"$\gamma$",
    "→": r"$\rightarrow$",
    "±": r"$\pm$",
    "×": r"$\times$",
    "°": r"\textdegree{}",
    "Å": r"\AA{}",
    "⁻": r"\textsuperscript{-}",
    "¹": r"\textsuperscript{1}",
    "⁺": r"\textsuperscript{+}",
}
#: "^-1", "^2", "^(-1)" in plain text (units in captions and notes)
_SUPERSCRIPT = re.compile(r"\^(?:\((-?\d+)\)|(-?\d+))")


def latex_escape(text: str) -> str:
    """Text safe for LaTeX: special characters escaped; ``^-1`` (as in cm^-1) becomes a superscript and
    ``->`` an arrow."""
    text, out, start = str(text), [], 0
    for match in _SUPERSCRIPT.finditer(text):
        out.append(_escape_chars(text[start : match.start()]))
        out.append(f"$^{{{match.group(1) or match.group(2)}}}$")
        start = match.end()
    out.append(_escape_chars(text[start:]))
    return "".join(out)


def _escape_chars(text: str) -> str:
    return tex_text(text.replace("->", "→"))


def tex_text(text: Any) -> str:
    """Text safe in LaTeX's text mode, the one place every LaTeX file makes a name safe: on one line
    (:func:`~qcthermo.fileio.display`) and the ten special characters escaped."""
    return "".join(_LATEX_SPECIAL.get(ch, ch) for ch in display(str(text)))


_UNICODE_SUPERSCRIPTS = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def plain_typeset(text: str) -> str:
    """Unicode typesetting of plain text: ``cm^-1`` -> ``cm⁻¹``, ``->`` -> ``→`` (captions, notes, cells)."""
    text = _SUPERSCRIPT.sub(lambda m: (m.group(1) or m.group(2)).translate(_UNICODE_SUPERSCRIPTS), str(text))
    return text.replace("->", "→")


def md_text(text: Any) -> str:
    """Text for Markdown, the one place every Markdown file makes a name safe: on one line
    (:func:`~qcthermo.fileio.display`), < and > as entities (a name "<img src=x>" is shown, not rendered:
    Markdown passes raw HTML on; & is left, no tag starts without <), backslash, pipe (a table's cell
    border) and dollar (math in many renderers) escaped."""
    text = display(str(text)).replace("<", "&lt;").replace(">", "&gt;")  # no tag; "A&B" stays as typed
    return text.replace("\\", "\\\\").replace("|", "\\|").replace("$", "\\$")


# ---------------------------------------------------------------------------------------------------
# the table model shared by the writers


@dataclass(frozen=True)
class _Column:
    name: str
    kind: str
    cells: list[str | None]  # formatted text, None when missing
    values: list[Any]  # the raw values (xlsx writes numbers as numbers)

    @property
    def numeric(self) -> bool:
        return self.kind != "text"


def _columns(df) -> list[_Column]:
    out = []
    for name in df.columns:
        values = [None if _missing(v) else v for v in df[name].tolist()]
        kind = number_kind(str(name), values)
        if any(v is not None and (_is_bool(v) or not _is_number(v)) for v in values):
            kind = "text"  # words, flags, or numbers mixed with words
        out.append(_Column(str(name), kind, [_cell_text(v, kind) for v in values], values))
    return out


def _rows(columns: list[_Column]) -> Iterable[list[str | None]]:
    n = len(columns[0].cells) if columns else 0
    return ([c.cells[i] for c in columns] for i in range(n))


#: model tags of the chosen low-mode model in column names (longest first); RRHO columns have none
MODEL_TAGS = ("qrrho_enthalpy", "quasi_harmonic", "qrrho")

#: what a paper prints of each table, in order; "{m}" is the chosen model's tag (its columns replace the RRHO
#: ones), "{u}" the energy unit's suffix. Columns of the csv not named here stay in the csv, xlsx and SI.
PAPER_COLUMNS = {
    "species": ("species", "T_K", "formula", "dE_elec_{u}", "dH_{m}_{u}", "dG_{m}_{u}", "point_group",
                "symmetry_number", "imaginary_frequency_cm1", "dG_solv_{u}"),
    "reactions": ("reaction", "T_K", "dE_{u}", "dH_{m}_{u}", "dG_{m}_{u}", "dG_{m}_act_{u}", "k_forward", "k_unit"),
    "pka": ("name", "T_K", "dG_deprotonation_{u}", "reference_acid", "reference_pKa", "pKa"),
    "redox": ("name", "T_K", "electrons", "protons", "pH", "dG_{u}", "reference", "E_V"),
    "heats_of_formation": ("species", "formula", "route", "dfH_0K_kJ_mol", "dfH_298_kJ_mol"),
    "conformers": ("species", "conformer", "T_K", "dG_{u}", "population"),
}
#: footnotes anchored in a row of the paper tables, from the row's columns, as (status, template): a template
#: is used when the row has that status (None: any) and a value in every column it names. They hold what is
#: too long for a column: the equation, the acid and base, ...
ROW_NOTES = {
    "reactions": ((None, "{equation}"),),
    "pka": ((None, "{acid} -> {base} + H+"),),
    "redox": ((None, "{oxidised} + n e- + m H+ -> {reduced}; electron: {electron}"),),
    "heats_of_formation": ((None, "source: {source}"),),
    "conformers": (("duplicate", "a duplicate of {same_as}, not counted"), ("used", "the mirror image of {same_as}"),
                   ("used", "stands for {mirror_images} mirror images")),
}
#: the paper tables group their rows under a heading per level of theory (energies of different levels are
#: not comparable), except the conformer table (one level per species)
SECTION_COLUMN = "level"
#: the caption's note on the species table's relative energies (docs/tables.md)
SPECIES_RELATIVE = ("energies relative to the structure of lowest G of the same formula, charge and level of "
                    "theory at each temperature, in {unit}; absolute energies in hartree in species.csv and "
                    "species.xlsx")


@dataclass(frozen=True)
class PaperTable:
    """A table as a paper prints it: ``frame`` (the chosen model's columns), per row the notes anchored in
    it (``row_notes``), and per row the heading it falls under (``sections``, the level of theory; None
    when the table has no headings). Rows are grouped by heading, in the order the headings first appear."""

    frame: Any
    row_notes: list[list[str]]
    sections: list[str] | None


def model_tag_of(df) -> str:
    """The chosen low-mode model's tag among ``df``'s columns ("qrrho", ...), "" for RRHO."""
    names = " ".join(f" {c}" for c in df.columns)
    return next((m for m in MODEL_TAGS if f"_{m}_" in names), "")


def _resolve(pattern: str, df, model: str, unit: str) -> str | None:
    """The column of ``df`` a :data:`PAPER_COLUMNS` pattern names: the chosen model's, else the plain one."""
    for tag in (f"_{model}" if model else "", ""):
        name = pattern.replace("_{m}", tag).replace("{u}", unit)
        if name in df.columns:
            return name
    return None


def paper_columns(df, stem: str, energy_unit: str = "kcal/mol") -> list[str]:
    """The columns of ``df`` a paper prints (:data:`PAPER_COLUMNS`, the chosen model's only); T_K only
    over a temperature range (the caption gives a single one). A table without a layout keeps them all."""
    from ..units import unit_suffix

    if stem not in PAPER_COLUMNS:
        return list(df.columns)
    model, unit = model_tag_of(df), unit_suffix(energy_unit)
    columns = [_resolve(p, df, model, unit) for p in PAPER_COLUMNS[stem]]
    return [c for c in dict.fromkeys(columns) if c and (c != "T_K" or df[c].nunique() > 1)]


def relative_species(df, energy_unit: str = "kcal/mol"):
    """species.csv with dE_elec, dH and dG (chosen model) in ``energy_unit`` relative to the structure of
    lowest G of the same formula, charge and level of theory at the same temperature (:data:`SPECIES_RELATIVE`)."""
    import pandas as pd

    from ..units import hartree_to, unit_suffix

    model, unit = model_tag_of(df), unit_suffix(energy_unit)
    tag = f"_{model}" if model else ""
    g = f"G{tag}_Eh"
    h = f"H{tag}_Eh" if f"H{tag}_Eh" in df.columns else "H_Eh"
    if g not in df.columns:
        return df
    keys = [k for k in ("formula", "charge", "level", "T_K") if k in df.columns]
    reference = pd.Series(index=df.index, dtype=object)
    for _, group in df.groupby(keys, dropna=False, sort=False) if keys else [(None, df)]:
        g_values = group[g].astype(float)
        reference[group.index] = g_values.idxmin() if g_values.notna().any() else None
    out = df.copy()
    ref = [r if r is not None and r == r else None for r in reference]
    for name, column in (("dE_elec", "E_elec_Eh"), (f"dH{tag}", h), (f"dG{tag}", g)):
        if column not in df.columns:
            continue
        base = [df.at[r, column] if r is not None else float("nan") for r in ref]
        out[f"{name}_{unit}"] = hartree_to(df[column].astype(float) - pd.Series(base, index=df.index, dtype=float),
                                           energy_unit)
    return out


def paper_table(df, stem: str, energy_unit: str = "kcal/mol") -> PaperTable:
    """What the Markdown and LaTeX tables of ``stem`` print (:class:`PaperTable`): the chosen model's
    columns (:func:`paper_columns`; species energies relative, :func:`relative_species`), the row's notes,
    its equation or other long text as footnotes anchored in the row, rows under a heading per level."""
    df = df.reset_index(drop=True)
    if stem == "species":
        df = relative_species(df, energy_unit)
    sections = None
    if SECTION_COLUMN in df.columns and stem != "conformers":
        levels = [str(v) if isinstance(v, str) and v.strip() else "level of theory not known" for v in df["level"]]
        order = {level: i for i, level in enumerate(dict.fromkeys(levels))}
        df = df.iloc[sorted(range(len(df)), key=lambda i: order[levels[i]])].reset_index(drop=True)
        sections = sorted(levels, key=order.__getitem__)
    notes = [_row_notes(row, stem) for _, row in df.iterrows()]
    frame = df[paper_columns(df, stem, energy_unit)]
    model = model_tag_of(frame)
    # one model in the table: the caption names it, the headers need no subscript
    return PaperTable(frame.rename(columns=lambda c: c.replace(f"_{model}_", "_")) if model else frame, notes,
                      sections)


def _row_notes(row, stem: str) -> list[str]:
    """The footnotes of one row: :data:`ROW_NOTES`, else a status other than "ok" or "used", and the row's
    notes."""
    values = {k: v for k, v in row.items() if not _missing(v) and str(v).strip()}
    status = values.get("status", "ok")
    if values.get("mirror_images") == 1:
        del values["mirror_images"]  # a structure that stands for itself alone
    notes = [t.format_map(values) for when, t in ROW_NOTES.get(stem, ())
             if when in (None, status) and all(f in values for f in re.findall(r"{(\w+)}", t))]
    if status not in ("ok", "used") and not any(when == status for when, _ in ROW_NOTES.get(stem, ())):
        notes.append(str(status))
    if "notes" in values:
        notes.append(" ".join(str(values["notes"]).split()))
    return notes


def anchored_notes(row_notes: Sequence[Sequence[str]] | None, n_rows: int) -> tuple[list[list[str]], list[str]]:
    """Per row the marks (a, b, ...) of its notes, and the notes in the order of their marks (a note shared
    by several rows has one mark)."""
    texts: dict[str, str] = {}
    marks = []
    for notes in row_notes or [[]] * n_rows:
        marks.append([texts.setdefault(n, note_mark(len(texts))) for n in dict.fromkeys(notes)])
    return marks, list(texts)


# ---------------------------------------------------------------------------------------------------
# Markdown


def to_markdown(df, caption: str, notes: Iterable[str] = (), row_notes: Sequence[Sequence[str]] | None = None,
                sections: Sequence[str] | None = None) -> str:
    """A pipe table with a caption line above and the notes as a list below.

    Numbers are right-aligned with a fixed number of decimals per column; missing values are empty cells.
    ``row_notes`` (per row): footnotes marked ᵃ, ᵇ, ... in the row's first cell and listed first;
    ``sections`` (per row): a heading row in bold wherever it changes.
    """
    columns = _columns(df)
    marks, anchored = anchored_notes(row_notes, len(df))
    lines = [f"Table: {md_text(plain_typeset(' '.join(caption.split())))}", ""]
    lines.append("| " + " | ".join(md_text(human_header(c.name, "md")) for c in columns) + " |")
    lines.append("|" + "|".join("---:" if c.numeric else ":---" for c in columns) + "|")
    for i, row in enumerate(_rows(columns)):
        if sections is not None and (i == 0 or sections[i] != sections[i - 1]):
            heading = md_text(sections[i]).replace("*", r"\*")  # B3LYP/6-31G* inside the bold marks
            lines.append("| " + " | ".join([f"**{heading}**"] + [""] * (len(columns) - 1)) + " |")
        cells = [_md_cell(cell, c) for cell, c in zip(row, columns, strict=True)]
        cells[0] += "".join(m.translate(_UNICODE_LETTERS) for m in marks[i])
        lines.append("| " + " | ".join(cells) + " |")
    notes = [f"{note_mark(i).translate(_UNICODE_LETTERS)} {n}" for i, n in enumerate(anchored)] + \
        [" ".join(str(n).split()) for n in notes]
    if notes:
        lines.append("")
        lines += [f"- {md_text(plain_typeset(n))}" for n in notes]
    return "\n".join(lines) + "\n"


#: superscript letters for the footnote marks of Markdown (Unicode has no superscript q)
_UNICODE_LETTERS = str.maketrans("abcdefghijklmnoprstuvwxyz", "ᵃᵇᶜᵈᵉᶠᵍʰⁱʲᵏˡᵐⁿᵒᵖʳˢᵗᵘᵛʷˣʸᶻ")


_UNICODE_SUBSCRIPTS = str.maketrans("0123456789", "₀₁₂₃₄₅₆₇₈₉")


def _typeset_cell(cell: str | None, column: _Column) -> str:
    """A cell as the human tables show it in Unicode: subscripts in formulas, ∞ in point groups."""
    if cell is None:
        return ""
    if column.name == "formula":
        cell = cell.translate(_UNICODE_SUBSCRIPTS)
    if column.name == "point_group":
        cell = cell.replace("*", "∞")
    return cell if column.numeric else plain_typeset(cell)


def _md_cell(cell: str | None, column: _Column) -> str:
    return md_text(_typeset_cell(cell, column))


def display_cells(df) -> tuple[list[str], list[bool], list[list[str]]]:
    """What a view of ``df`` for people shows (the Markdown table without its pipes; the HTML report):
    typeset headers with units, whether each column is numeric, every cell as formatted text ("" when
    missing)."""
    columns = _columns(df)
    rows = [[_typeset_cell(cell, c) for cell, c in zip(row, columns, strict=True)] for row in _rows(columns)]
    return [human_header(c.name, "md") for c in columns], [c.numeric for c in columns], rows


# ---------------------------------------------------------------------------------------------------
# LaTeX


def to_latex(df, caption: str, notes: Iterable[str] = (), label: str | None = None,
             row_notes: Sequence[Sequence[str]] | None = None, sections: Sequence[str] | None = None) -> str:
    """A booktabs table: caption, header with typeset symbols and their units on a second header line
    (a unit shared by neighbouring columns spans them), right-aligned numbers with a fixed number of
    decimals per column (so the decimal points line up), "--" for missing values, and the notes as a
    small-print block below the tabular. ``row_notes`` (per row) become footnotes whose marks (a, b, ...)
    sit in the row's first cell; ``sections`` (per row) a heading row wherever it changes. Long tables
    (LONGTABLE_ROWS rows or more) become a longtable that repeats its header on every page. The packages
    needed are named in the first line.
    """
    columns = _columns(df)
    marks, anchored = anchored_notes(row_notes, len(df))
    spec = "".join(_tex_column_spec(c) for c in columns)
    header = _tex_header(columns)
    body = []
    for i, row in enumerate(_rows(columns)):
        if sections is not None and (i == 0 or sections[i] != sections[i - 1]):
            body += ([r"\addlinespace"] if i else []) + \
                [rf"\multicolumn{{{len(columns)}}}{{l}}{{\emph{{{latex_escape(sections[i])}}}}} \\"]
        cells = ["--" if cell is None else _tex_cell(cell, c) for cell, c in zip(row, columns, strict=True)]
        if marks[i]:
            cells[0] += rf"\textsuperscript{{{','.join(marks[i])}}}"
        body.append(" & ".join(cells) + r" \\")
    caption_tex = r"\caption{" + latex_escape(" ".join(caption.split())) + "}"
    label_tex = r"\label{" + re.sub(r"[^A-Za-z0-9:_.-]", "-", label) + "}" if label else ""
    footnotes = _tex_notes(anchored, notes)
    if len(df) >= LONGTABLE_ROWS:
        lines = [
            f"% requires \\usepackage{{{','.join(LATEX_LONG_PACKAGES)}}}",
            rf"\begin{{{TABLE_SIZE}}}",
            r"\setlength{\tabcolsep}{3pt}",
            rf"\begin{{longtable}}{{{spec}}}",
            caption_tex + label_tex + r" \\",
            r"\toprule",
            *header,
            r"\midrule",
            r"\endfirsthead",
            r"\toprule",
            *header,
            r"\midrule",
            r"\endhead",
            r"\bottomrule",
            r"\endlastfoot",
            *body,
            r"\end{longtable}",
            *footnotes,
            rf"\end{{{TABLE_SIZE}}}",
        ]
    else:
        lines = [
            f"% requires \\usepackage{{{','.join(LATEX_PACKAGES)}}}",
            r"\begin{table}[htbp]",
            r"\centering",
            rf"\{TABLE_SIZE}",
            r"\setlength{\tabcolsep}{3pt}",
            caption_tex,
            *([label_tex] if label_tex else []),
            rf"\begin{{tabular}}{{{spec}}}",
            r"\toprule",
            *header,
            r"\midrule",
            *body,
            r"\bottomrule",
            r"\end{tabular}",
            *footnotes,
            r"\end{table}",
        ]
    return "\n".join(lines) + "\n"


def _tex_header(columns: list[_Column]) -> list[str]:
    """The header lines: the typeset names, then (when some column has one) the units, a unit shared by
    neighbouring columns written once across them."""
    parts = [human_header(c.name, "tex").rpartition(" / ") for c in columns]
    names = [name if sep else unit for name, sep, unit in parts]
    units = [unit if sep else "" for _, sep, unit in parts]
    lines = [" & ".join(names) + r" \\"]
    if any(units):
        cells, i = [], 0
        while i < len(units):
            j = i
            while units[i] and j + 1 < len(units) and units[j + 1] == units[i]:
                j += 1
            width = j - i + 1
            cells.append(units[i] if width == 1 else rf"\multicolumn{{{width}}}{{c}}{{{units[i]}}}")
            i = j + 1
        lines.append(" & ".join(cells) + r" \\")
    return lines


def _tex_column_spec(column: _Column) -> str:
    """r for numbers (fixed decimals: the points line up), l for short text, a wrapping paragraph column
    for long text such as notes."""
    if column.numeric:
        return "r"
    longest = max((len(c) for c in column.cells if c), default=0)
    return f"p{{{WRAP_WIDTH}}}" if longest > WRAP_CHARACTERS else "l"


def _tex_cell(cell: str, column: _Column) -> str:
    if column.numeric:
        return _tex_number(cell)
    if column.name == "formula":
        return re.sub(r"(\d+)", r"$_{\1}$", latex_escape(cell))
    if column.name == "point_group":
        return _tex_point_group(cell)
    return latex_escape(cell)


def _tex_point_group(name: str) -> str:
    r"""Schoenflies symbol in math: ``D3h`` -> ``$D_{3h}$``, ``C*v`` -> ``$C_{\infty v}$``."""
    match = re.fullmatch(r"([CDSTOIK])([0-9]+|\*)?([a-z]?)", name)
    if not match:
        return latex_escape(name)
    letter, order, suffix = match.groups()
    order = r"\infty " if order == "*" else order or ""
    sub = (order + suffix).strip()
    return f"${letter}_{{{sub}}}$" if sub else f"${letter}$"


def _tex_notes(anchored: Sequence[str], notes: Iterable[str]) -> list[str]:
    """The notes as a small-print block: first those anchored in rows, each after its mark (a, b, ...),
    then the table's general notes."""
    lines = [rf"\textsuperscript{{{note_mark(i)}}}~{latex_escape(' '.join(n.split()))}\par"
             for i, n in enumerate(anchored)]
    lines += [latex_escape(" ".join(str(n).split())) + r"\par" for n in notes]
    if not lines:
        return []
    return [r"\par\smallskip", r"\begin{minipage}{\linewidth}\footnotesize", *lines, r"\end{minipage}"]


def note_mark(i: int) -> str:
    """a, b, ..., z, aa, ab, ... for note i (0-based)."""
    letters = "abcdefghijklmnopqrstuvwxyz"
    return letters[i] if i < 26 else note_mark(i // 26 - 1) + letters[i % 26]


# ---------------------------------------------------------------------------------------------------
# xlsx


def write_xlsx(df, path: str | Path, caption: str, notes: Iterable[str] = ()) -> Path:
    """An Excel workbook, written atomically: sheet "table" holds the caption (row 1), the typeset
    headers with units (row 3), the data (numbers stay numbers, with the column's number format, missing
    values empty) and the notes below; sheet "columns" maps each header to its machine column name.
    """
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font
    from openpyxl.utils import get_column_letter

    columns = _columns(df)
    workbook = Workbook()
    sheet = workbook.active
    sheet.title = "table"
    sheet.cell(row=1, column=1, value=display(plain_typeset(" ".join(caption.split())))).font = Font(bold=True)
    for j, column in enumerate(columns, start=1):
        cell = sheet.cell(row=HEADER_ROW, column=j, value=human_header(column.name, "xlsx"))
        cell.font = Font(bold=True)
        cell.alignment = Alignment(horizontal="right" if column.numeric else "left")
        for i, value in enumerate(column.values, start=HEADER_ROW + 1):
            target = sheet.cell(row=i, column=j, value=_xlsx_value(value, column))
            if isinstance(target.value, str):
                target.data_type = "s"  # text, never a formula, whatever it starts with ("=cmd|...": OWASP)
            elif column.numeric and target.value is not None:
                target.number_format = EXCEL_FORMATS.get(column.kind, "General")
        width = max([len(human_header(column.name, "xlsx"))] + [len(c or "") for c in column.cells])
        sheet.column_dimensions[get_column_letter(j)].width = min(60, width + 2)
    sheet.freeze_panes = sheet.cell(row=HEADER_ROW + 1, column=1)
    row = HEADER_ROW + len(df) + 2
    for note in notes:
        sheet.cell(row=row, column=1, value="Note: " + display(plain_typeset(" ".join(str(note).split()))))
        row += 1
    legend = workbook.create_sheet("columns")
    legend.append(["header", "column", "unit"])
    for column in columns:
        unit = split_unit(column.name)[1]
        legend.append([human_header(column.name, "xlsx"), column.name, unit.text if unit else None])
    # built in memory, then written: a failed disk write must not leave openpyxl's zip archive open on a closed file
    buffer = io.BytesIO()
    workbook.save(buffer)
    return atomic_write(path, buffer.getvalue())


#: the row of the typeset headers in the "table" sheet (row 1 caption, row 2 empty)
HEADER_ROW = 3


def _xlsx_value(value: Any, column: _Column) -> Any:
    if value is None:
        return None
    if _is_bool(value):
        return "yes" if value else "no"
    if column.numeric and _is_number(value):
        number = float(value)
        if not math.isfinite(number):
            return str(number)
        return round(number) if column.kind == "int" else number
    return display(str(value))  # a workbook refuses control characters


# ---------------------------------------------------------------------------------------------------
# all formats


def write_tables(
    df,
    out_dir: str | Path,
    stem: str,
    *,
    caption: str,
    notes: Iterable[str] = (),
    formats: Iterable[str] = FORMATS,
    label: str | None = None,
    row_notes: Sequence[Sequence[str]] | None = None,
    sections: Sequence[str] | None = None,
) -> list[Path]:
    """Write ``df`` as ``out_dir/stem.{csv,md,tex,xlsx}`` (atomically) and return the paths written.

    The csv keeps the machine column names and full precision; the others are the human tables
    (``row_notes`` and ``sections``: see :func:`to_latex`, for Markdown and LaTeX). The caller decides
    whether ``out_dir`` may be written to (qcthermo.fileio.prepare_output_dir).
    """
    formats = list(formats)
    unknown = [f for f in formats if f not in FORMATS]
    if unknown:
        raise QcthermoError(f"unknown table format {unknown[0]!r}; choose from {', '.join(FORMATS)}")
    notes = list(notes)
    out = Path(out_dir)
    written = []
    for fmt in formats:
        path = out / f"{stem}.{fmt}"
        if fmt == "csv":
            written.append(atomic_write(path, csv_text(df)))
        elif fmt == "md":
            written.append(atomic_write(path, to_markdown(df, caption, notes, row_notes, sections)))
        elif fmt == "tex":
            written.append(atomic_write(path, to_latex(df, caption, notes, label, row_notes, sections)))
        else:
            written.append(write_xlsx(df, path, caption, notes))
    return written

"""Supporting-information document: one block per species, as Markdown (si.md) and LaTeX (si.tex).

Each block gives what a reviewer needs to reproduce a number: formula, charge and multiplicity, level
of theory, the file, point group and rotational symmetry number, the energies of the structure shown
(E, ZPE, H, G in hartree per molecule at the run's first temperature), its lowest real and any
imaginary frequencies, and its Cartesian coordinates (angstrom, 6 decimals). The structure shown is the
species' most populated conformer (the lowest in free energy); the Boltzmann-weighted ensemble free
energy follows when there are several conformers.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..fileio import atomic_write
from .tables import md_text, tex_text


@dataclass
class SpeciesBlock:
    """What the document says about one species; energies hartree per molecule, frequencies cm^-1."""

    name: str
    formula: str
    charge: int
    multiplicity: int | None
    level: str | None
    source: str
    single_point_source: str | None
    point_group: str | None
    symmetry_number: int | None
    energies: dict[str, float]  # display name -> hartree, in document order
    lowest_frequency: float | None
    imaginary_frequencies: list[float]
    symbols: tuple[str, ...]
    coordinates: np.ndarray
    n_conformers: int = 1
    ensemble_gibbs: float | None = None


def _at(values: dict[str, Any], key: str, index: int) -> float | None:
    if key not in values:
        return None
    return float(np.atleast_1d(values[key])[index])


def _energies(values: dict[str, Any], index: int, model: str) -> dict[str, float]:
    """E, ZPE, H and G (chosen model, and RRHO when different) of one conformer, hartree."""
    out = {"E": _at(values, "E", index), "ZPE": _at(values, "ZPE", index), "H": _at(values, "H", index),
           f"G ({model})": _at(values, "G", index)}
    if model != "rrho":
        out["G (rrho)"] = _at(values, "G_rrho", index)
    return {k: v for k, v in out.items() if v is not None}


def species_block(species, index: int = 0, model: str = "rrho") -> SpeciesBlock | None:
    """The block of one :class:`qcthermo.species.SpeciesResult` at temperature ``index``; None when the
    species has no usable conformer."""
    conf = species.lowest
    if conf is None:
        return None
    calc, thermo = conf.calculation, conf.thermo
    freqs = np.asarray(calc.frequencies if calc.frequencies is not None else [], dtype=float)
    real = freqs[freqs > 0]
    used = species.used
    return SpeciesBlock(
        name=species.label or species.name,
        formula=calc.formula,
        charge=calc.charge,
        multiplicity=calc.multiplicity,
        level=conf.level,
        source=str(calc.path),
        single_point_source=str(conf.single_point.path) if conf.single_point is not None else None,
        point_group=thermo.point_group if thermo is not None else None,
        symmetry_number=thermo.symmetry_number if thermo is not None else None,
        energies=_energies(conf.values, index, model),
        lowest_frequency=float(real.min()) if real.size else None,
        imaginary_frequencies=[float(f) for f in np.sort(freqs[freqs < 0])],
        symbols=tuple(calc.symbols),
        coordinates=np.asarray(calc.coordinates, dtype=float).reshape(-1, 3),
        n_conformers=len(used),
        ensemble_gibbs=_at(species.values, "G", index) if len(used) > 1 else None,
    )


def _relative_source(source: str, root: str | None) -> str:
    """The file as the user knows it: relative to the run's directory when inside it."""
    if root:
        try:
            return str(Path(source).resolve().relative_to(Path(root).resolve()))
        except ValueError:
            pass
    return source


def run_blocks(results) -> tuple[list[SpeciesBlock], list[str]]:
    """Blocks of every usable species of a run, and the names of those left out."""
    model = results.conditions.low_mode_model
    root = (getattr(results, "settings", None) or {}).get("directory")
    blocks, left_out = [], []
    for name, species in results.species_results.items():
        block = species_block(species, 0, model)
        if block is None:
            left_out.append(name)
            continue
        block.source = _relative_source(block.source, root)
        if block.single_point_source is not None:
            block.single_point_source = _relative_source(block.single_point_source, root)
        blocks.append(block)
    return blocks, left_out


def _frequency_text(value: float) -> str:
    """An imaginary wavenumber is written as its magnitude with an "i" (e.g. 1234.5i), as in papers."""
    return f"{abs(value):.1f}i" if value < 0 else f"{value:.1f}"


def conditions_text(results) -> str:
    """One sentence naming temperature, standard state and low-mode model of the energies."""
    cond = results.conditions
    t = float(np.atleast_1d(np.asarray(cond.temperature, dtype=float))[0])
    model = cond.low_mode_model
    threshold = f", threshold {cond.low_mode_threshold:g} cm-1" if model != "rrho" else ""
    return (f"Energies in hartree per molecule at T = {t:.2f} K, standard state {cond.standard_state}, "
            f"low-frequency modes: {model}{threshold}; frequencies in cm-1, unscaled; coordinates in angstrom.")


def _properties(block: SpeciesBlock) -> list[tuple[str, str]]:
    """(label, value) rows shared by both formats; energies keep 6 decimals (microhartree)."""
    imag = ", ".join(_frequency_text(f) for f in block.imaginary_frequencies) or "none"
    rows = [
        ("formula", block.formula),
        ("charge, multiplicity", f"{block.charge}, {block.multiplicity if block.multiplicity else 'unknown'}"),
        ("level of theory", block.level or "unknown"),
        ("file", block.source),
        *([("single-point file", block.single_point_source)] if block.single_point_source else []),
        ("point group (symmetry number)", f"{block.point_group or 'unknown'} ({block.symmetry_number or '?'})"),
    ]
    rows += [(f"{label} / Eh", f"{value:.6f}") for label, value in block.energies.items()]
    if block.ensemble_gibbs is not None:
        rows.append((f"G of the ensemble of {block.n_conformers} conformers / Eh", f"{block.ensemble_gibbs:.6f}"))
    lowest = _frequency_text(block.lowest_frequency) if block.lowest_frequency is not None else "none"
    rows += [("lowest real frequency / cm-1", lowest), ("imaginary frequencies / cm-1", imag)]
    return rows


def _coordinate_lines(block: SpeciesBlock) -> list[str]:
    return [f"{s:<2s} {x:12.6f} {y:12.6f} {z:12.6f}" for s, (x, y, z) in zip(block.symbols, block.coordinates,
                                                                                strict=True)]


# ---------------------------------------------------------------------------------------------------
# Markdown


def _md_escape(text: str) -> str:
    return md_text(text).replace("*", "\\*").replace("_", "\\_")  # names are no emphasis


def render_markdown(blocks: list[SpeciesBlock], note: str, left_out: list[str]) -> str:
    lines = ["# Supporting information: computed structures and energies", "", note, ""]
    for block in blocks:
        lines += [f"## {_md_escape(block.name)}", "", "| property | value |", "|---|---|"]
        lines += [f"| {_md_escape(k)} | {_md_escape(v)} |" for k, v in _properties(block)]
        lines += ["", f"Cartesian coordinates ({len(block.symbols)} atoms, angstrom):", "", "```",
                  *_coordinate_lines(block), "```", ""]
    if left_out:
        lines += [f"Not included (no usable calculation): {', '.join(_md_escape(n) for n in left_out)}.", ""]
    return "\n".join(lines)


# ---------------------------------------------------------------------------------------------------
# LaTeX

#: LaTeX text of a name (qcthermo.export.tables.tex_text)
tex_escape = tex_text


def _tex_label(label: str) -> str:
    """Property labels with typeset units: "/ Eh" -> "/ $E_\\mathrm{h}$", "cm-1" -> "cm$^{-1}$"."""
    return tex_escape(label).replace("/ Eh", r"/ $E_\mathrm{h}$").replace("cm-1", r"cm$^{-1}$")


def tex_formula(formula: str) -> str:
    """A Hill formula with subscript counts: "C10H10" -> "C$_{10}$H$_{10}$"."""
    return re.sub(r"(\d+)", r"$_{\1}$", tex_escape(formula))


def tex_point_group(group: str) -> str:
    r"""A Schoenflies symbol with its subscript: "C2h" -> "C$_{2h}$", "D*h" -> "D$_{\infty h}$"."""
    m = re.fullmatch(r"([A-Z])(.+)", group)
    if not m or group == "Kh":
        return tex_escape(group)
    subscript = m.group(2).replace("*", "\\infty ")
    return m.group(1) + "$_{" + subscript + "}$"


def _tex_number(text: str) -> str:
    """Numbers in math mode so that a minus is a minus, not a hyphen."""
    return f"${text}$"


def _tex_value(value: str) -> str:
    """A property's value: numbers in math mode, text escaped."""
    try:
        float(value)
    except ValueError:
        return tex_escape(value)
    return _tex_number(value)


TEX_PREAMBLE = r"""\documentclass[10pt]{article}
\usepackage[T1]{fontenc}
\usepackage[utf8]{inputenc}
\usepackage{lmodern}
\usepackage[margin=2.5cm]{geometry}
\usepackage{booktabs}
\usepackage{longtable}
\begin{document}
"""


def render_latex(blocks: list[SpeciesBlock], note: str, left_out: list[str]) -> str:
    out = [TEX_PREAMBLE, r"\section*{Supporting information: computed structures and energies}",
           tex_escape(note).replace("cm-1", r"cm$^{-1}$"), ""]
    for block in blocks:
        out += [rf"\subsection*{{{tex_escape(block.name)}}}", r"\begin{tabular}{ll}", r"\toprule"]
        typeset = {"formula": tex_formula(block.formula),
                   "point group (symmetry number)": f"{tex_point_group(block.point_group or 'unknown')} "
                                                    f"({block.symmetry_number or '?'})"}
        out += [rf"{_tex_label(k)} & {typeset.get(k) or _tex_value(v)} \\" for k, v in _properties(block)]
        out += [r"\bottomrule", r"\end{tabular}", "", r"\begin{longtable}{lrrr}",
                rf"\caption*{{Cartesian coordinates of {tex_escape(block.name)} (\AA)}}\\",
                r"\toprule", r"atom & $x$ & $y$ & $z$ \\", r"\midrule", r"\endhead"]
        out += [rf"{s} & {_tex_number(f'{x:.6f}')} & {_tex_number(f'{y:.6f}')} & {_tex_number(f'{z:.6f}')} \\"
                for s, (x, y, z) in zip(block.symbols, block.coordinates, strict=True)]
        out += [r"\bottomrule", r"\end{longtable}", ""]
    if left_out:
        out += [f"Not included (no usable calculation): {tex_escape(', '.join(left_out))}.", ""]
    out.append(r"\end{document}")
    return "\n".join(out) + "\n"


def write_si(results, out_dir: str | Path, structure_folder: str | None = None) -> list[Path]:
    """Write si.md and si.tex into ``out_dir`` (atomically); returns both paths. ``structure_folder``: the folder
    beside them holding one extended-XYZ file per structure, named in the opening note."""
    out_dir = Path(out_dir)
    blocks, left_out = run_blocks(results)
    note = conditions_text(results)
    if structure_folder:
        note += (f" The coordinates are also in {structure_folder}/, one extended-XYZ file per structure "
                 "(energies and the source log on its comment line).")
    return [atomic_write(out_dir / "si.md", render_markdown(blocks, note, left_out)),
            atomic_write(out_dir / "si.tex", render_latex(blocks, note, left_out))]

"""What every figure shares: the journal style, the sizes, the palette, and writing files.

Everything is drawn with matplotlib's object API on an Agg canvas (no pyplot, no global state), in a
quiet style sized for a journal's single column (8.5 cm wide, text >= 7 pt). Colours come from the
Okabe-Ito palette, which stays distinguishable under the common forms of colour-vision deficiency
(M. Okabe and K. Ito, "Color Universal Design", 2008, https://jfly.uni-koeln.de/color/; recommended by
B. Wong, Nat. Methods 2011, 8, 441). The figure modules: profile_figures (energy diagrams, laid out by
profile_labels from profile_data), temperature_figures, conformers, simulation; run_figures gathers a run's.
"""

from __future__ import annotations

import io
import re
from pathlib import Path
from typing import Any

import matplotlib
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg  # figures are files: no window, no pyplot
from matplotlib.figure import Figure
from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

from ..errors import QcthermoError
from ..fileio import atomic_open

#: Okabe-Ito colours, ordered so that the first few are the most distinct on white (yellow last)
PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000", "#F0E442")

#: typeset units for axis labels
UNIT_LABELS = {"kcal/mol": "kcal mol⁻¹", "kJ/mol": "kJ mol⁻¹", "eV": "eV", "Eh": "Eₕ"}

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

FORMATS = {".svg": "svg", ".png": "png", ".pdf": "pdf"}
_METADATA = {"svg": {"Date": None}, "pdf": {"CreationDate": None}, "png": {}}  # reproducible files


def new_figure(width_in: float, height_in: float = FIGURE_HEIGHT_IN) -> Figure:
    """An empty figure on its own Agg canvas."""
    fig = Figure(figsize=(width_in, height_in))
    FigureCanvasAgg(fig)
    return fig


def style_axes(ax) -> None:
    """Left and bottom spines only, ticks outwards."""
    ax.spines["top"].set_visible(False)
    ax.spines["right"].set_visible(False)
    ax.tick_params(direction="out")


def legend_below(fig, axes) -> None:
    """One legend for every panel, under the figure, out of the data's way (the saved file's box grows)."""
    handles, labels = {}, {}
    for ax in axes:
        for h, label in zip(*ax.get_legend_handles_labels(), strict=True):
            handles.setdefault(label, h)
            labels[label] = label
    fig.tight_layout()
    fig.legend(list(handles.values()), list(labels), loc="upper center", bbox_to_anchor=(0.5, 0.0), ncol=2,
               handlelength=2.0, columnspacing=1.2)


_SUPERSCRIPTS = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def power_of_ten(value: float, _position=None) -> str:
    """A log axis' tick label "10⁻⁴" in Unicode superscripts (the figures' text is plain, not mathtext, so
    matplotlib's own "$10^{-4}$" would be printed as written); "" between the powers of ten."""
    exponent = float(np.log10(value)) if value > 0 else np.nan
    if not np.isfinite(exponent) or abs(exponent - round(exponent)) > 1e-9:
        return ""
    return "10" + str(round(exponent)).translate(_SUPERSCRIPTS)


def log_axis(axis, max_ticks: int = 8) -> None:
    """Labels of a logarithmic ``axis`` (ax.xaxis or ax.yaxis, after set_xscale/set_yscale("log")): at most
    ``max_ticks`` powers of ten, in superscripts, the minor ticks unlabelled."""
    axis.set_major_locator(LogLocator(base=10.0, numticks=max_ticks))
    axis.set_major_formatter(FuncFormatter(power_of_ten))
    axis.set_minor_formatter(NullFormatter())


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

    buffer = io.BytesIO()
    with matplotlib.rc_context(STYLE):
        fig.savefig(buffer, format="svg", bbox_inches="tight", pad_inches=0.03, metadata=_METADATA["svg"])
    text = buffer.getvalue().decode("utf-8")
    return re.sub(r"\s*<metadata>.*?</metadata>", "", text[text.index("<svg"):], flags=re.S)

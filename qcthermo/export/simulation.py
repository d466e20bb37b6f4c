"""The files of a simulation (qcthermo.simulate): concentrations, summary, rate control, TOF, the figure.

Only formatting: the numbers are those of :class:`qcthermo.simulate.SimulationResult`. Written into a run's
output folder (docs/simulate.md, "Outputs"):

- concentrations.csv: long form, one row per time and species (time_s, species, concentration_M);
- concentrations.md / .tex: the concentrations at the output times asked for (or at every decade of the
  default grid), one column per species, as a paper prints them;
- simulation.csv / .md / .tex: per species initial and final concentration, conversion, half-life, time to
  90 % conversion, yield and selectivity;
- rate_control.csv: the degree of rate control of every reaction; tof.csv: the TOF against the energy span;
- concentrations.svg / .png: concentration against time.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

#: rows of the paper's concentration table when the default time grid was used: one per decade
_DECADES = 10
#: concentrations below this fraction of the largest are not drawn on the log axis
_FLOOR = 1e-20


def long_concentrations(sim):
    """time_s, species, concentration_M: one row per output time and species."""
    frame = sim.concentrations.reset_index().melt(id_vars="time_s", var_name="species", value_name="concentration_M")
    return frame.sort_values(["time_s", "species"], kind="stable").reset_index(drop=True)


def paper_concentrations(sim):
    """The wide table a paper prints: the asked-for output times (every decade of the end time's default
    grid otherwise), one column per species, mol/L."""
    frame = sim.concentrations
    if sim.settings.times is not None:
        rows = frame.loc[[t for t in frame.index if t == 0 or np.isclose(sim.settings.times, t).any()]]
    else:
        end = sim.settings.end_time
        marks = [0.0, *(end * 10.0 ** -np.arange(_DECADES - 1, -1, -1))]
        rows = frame.iloc[[int(np.argmin(np.abs(frame.index.to_numpy() - m))) for m in marks]].drop_duplicates()
    out = rows.reset_index()
    return out.rename(columns={c: f"{c}_M" for c in out.columns if c != "time_s"})


def _caption(sim, what: str) -> str:
    t = sim.settings.temperature
    where = "at the run's temperature" if t is None else (f"at {t:g} K" if np.ndim(t) == 0 else
                                                           "under the temperature program")
    fixed = f"; held fixed: {', '.join(sim.settings.fixed)}" if sim.settings.fixed else ""
    return (f"{what}, mol/L, {where}, constant volume; mass-action kinetics of the run's rate constants "
            f"(solver {sim.settings.method}, rtol {sim.settings.rtol:g}, atol {sim.settings.atol:g} M){fixed}.")


#: line styles of the species held constant, in turn: two at the same concentration both stay visible
_CONSTANT_STYLES = ("--", ":", "-.", (0, (6, 2, 1, 2, 1, 2)))


def species_names(results) -> dict[str, str]:
    """Each species' display name (its label in the reaction file, else its key)."""
    return {n: s.label for n, s in (getattr(results, "species_results", None) or {}).items()}


def concentration_figure(sim, time_axis: str = "auto", names: dict[str, str] | None = None):
    """Concentration against time, one line per species (fixed species and species at their own
    concentration dashed); log concentration axis; the time axis log, linear, or "auto" (log when the
    output times span more than three decades). The legend names species by ``names`` (key -> display name),
    formulas typeset as in the profiles (:mod:`.state_labels`)."""
    import matplotlib

    from .figure_common import PALETTE, STYLE, legend_below, log_axis, new_figure, style_axes
    from .state_labels import name_text

    frame = sim.curves
    t = frame.index.to_numpy()
    positive = t[t > 0]
    log_time = time_axis == "log" or (time_axis == "auto" and positive.size and positive.max() / positive.min() > 1e3)
    constant = [c for c in frame.columns if c in set(sim.settings.fixed) or c not in set(sim.summary["species"])]
    top = float(np.nanmax(frame.to_numpy())) if frame.size else 1.0
    typeset = set()
    with matplotlib.rc_context(STYLE):
        fig = new_figure(2 * 8.5 / 2.54 * 0.75)
        ax = fig.subplots()
        style_axes(ax)
        for k, name in enumerate(frame.columns):
            c = frame[name].to_numpy(dtype=float)
            keep = (c > top * _FLOOR) & ((t > 0) if log_time else True)
            label, math = name_text((names or {}).get(name, name))
            typeset |= {label} if math else set()
            style = _CONSTANT_STYLES[constant.index(name) % len(_CONSTANT_STYLES)] if name in constant else "-"
            if keep.any():
                ax.plot(t[keep], c[keep], color=PALETTE[k % len(PALETTE)], ls=style, label=label,
                        gid=f"concentration:{name}")
        ax.set_yscale("log")
        log_axis(ax.yaxis)
        if log_time:
            ax.set_xscale("log")
            log_axis(ax.xaxis)
        ax.set_xlabel("t / s")
        ax.set_ylabel("c / mol L⁻¹")
        legend_below(fig, [ax])
        for text in fig.legends[-1].get_texts():
            text.set_parse_math(text.get_text() in typeset)
    fig.set_label("concentrations")
    return fig


def write_simulation(results, out_dir: str | Path, time_axis: str = "auto") -> list[Path]:
    """Write the files listed in the module docstring into ``out_dir``; the paths written."""
    from ..fileio import atomic_write
    from .figure_common import save_figure
    from .tables import write_tables

    sim = results.simulation
    out_dir = Path(out_dir)
    notes = list(sim.notes)
    written = [atomic_write(out_dir / "concentrations.csv", long_concentrations(sim).to_csv(index=False))]
    written += write_tables(paper_concentrations(sim), out_dir, "concentrations", formats=("md", "tex"),
                            caption=_caption(sim, "Concentrations"), notes=notes, label="tab:concentrations")
    written += write_tables(sim.summary, out_dir, "simulation", formats=("csv", "md", "tex"),
                            caption=_caption(sim, "Conversion, half-lives (s), time to 90 % conversion (s), "
                                             "yields and selectivities at the end time"), notes=notes,
                            label="tab:simulation")
    for stem, frame in (("rate_control", sim.rate_control), ("tof", sim.tof_comparison)):
        if frame is not None and len(frame):
            written.append(atomic_write(out_dir / f"{stem}.csv", frame.to_csv(index=False)))
    fig = concentration_figure(sim, time_axis, species_names(results))
    written += [save_figure(fig, out_dir / f"concentrations{suffix}") for suffix in (".svg", ".png")]
    return written

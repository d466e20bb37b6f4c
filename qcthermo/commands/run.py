"""``qcthermo run DIR --reactions F --out OUT``: the main job, a short summary on the terminal."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from ..errors import QcthermoError
from .common import console_for_stdout, explicit_conditions, reading_options, screenful

#: how many findings of each severity the terminal shows (all are in run.json and the tables' notes)
SHOWN_FINDINGS = 12


def solution_lines(results) -> list[str]:
    """"pKa: name 4.65 (direct), ..." and "E: name +1.070 V vs SHE, ..." at the first temperature, when the run
    has them (the tables hold every column)."""
    from ..fileio import display

    lines = []
    for frame, head, cell in (
            (results.pka, "pKa", lambda r: f"{r['pKa']:.2f} ({r['scheme']})"),
            (results.redox, "E", lambda r: f"{r['E_V']:+.3f} V vs {r['reference']}" + (f" at pH {r['pH']:g}"
                                                                                       if r["protons"] else ""))):
        if frame is not None and len(frame):
            rows = frame.drop_duplicates("name")
            lines.append(f"{head}: " + ", ".join(f"{display(str(r['name']))} " + (cell(r) if r["status"] == "ok"
                                                                                  else "excluded")
                                                 for _, r in rows.iterrows()))
    return lines


def print_summary(results, out: Path | None, quiet: bool) -> None:
    """Species count, the reactions table in the run's unit, findings (errors first), where the files are.

    Names (files, species, reactions) reach rich as escaped markup or Text, so "b[1].out" or "[bold]x" is
    printed as named, and a file name that is not UTF-8 in its display form (qcthermo.fileio.display).
    """
    from rich.markup import escape
    from rich.text import Text

    from ..fileio import display

    console = console_for_stdout(160)
    usable = sum(s.usable for s in results.species_results.values())
    df = results.reactions
    n_reactions = df["reaction"].nunique() if len(df) else 0
    excluded = df.loc[df["status"] != "ok", "reaction"].nunique() if len(df) else 0
    console.print(f"{len(results.species_results)} species ({usable} usable), {n_reactions} reactions"
                  + (f" ({excluded} excluded)" if excluded else "") + f"; {results.survey_result.summary()}")
    if not quiet and len(df):
        table, left_out = reactions_table(df, results.energy_unit, results.conditions.low_mode_model)
        console.print(table)
        if left_out:
            console.print(Text(left_out))
    if not quiet:
        for line in solution_lines(results):
            console.print(Text(line))
    for note in results.survey_result.notes if results.survey_result is not None else []:
        console.print(Text(f"note: {display(note)}"), soft_wrap=True)
    for severity, style in (("error", "red"), ("warning", "yellow")):
        found = [f for f in results.findings if f.severity == severity]
        for f in found[:SHOWN_FINDINGS]:
            console.print(f"[{style}]{severity}[/{style}]: {escape(display(f.subject))}: {escape(display(f.message))}",
                          markup=True, soft_wrap=True)
        if len(found) > SHOWN_FINDINGS:
            console.print(f"... and {len(found) - SHOWN_FINDINGS} more {severity}s (all in run.json)")
    sim = getattr(results, "simulation", None)
    if sim is not None:
        tof = f"; TOF {sim.tof:.3g} s^-1" if sim.tof is not None else ""
        console.print(Text(f"simulation: {len(sim.reactions)} reactions to t = {sim.settings.end_time:g} s{tof}; "
                           + "; ".join(sim.notes[:3])))
    if out is not None:
        console.print(Text(f"results written to {display(str(out))}/ (run.json lists every file and finding)"))


def terminal_rows(df):
    """The rows of the reactions table the terminal shows: a reaction excluded at every temperature once (its
    reason is among the findings), and above a screenful only the lowest and highest temperature."""
    excluded = df.groupby("reaction", sort=False)["status"].transform(lambda s: (s != "ok").all())
    rows = df[~excluded | ~df["reaction"].duplicated()]
    if len(rows) > screenful():
        rows = rows[excluded.loc[rows.index] | rows["T_K"].isin([df["T_K"].min(), df["T_K"].max()])]
    return rows, excluded


def reactions_table(df, energy_unit: str, model: str) -> tuple[Any, str]:
    """The reactions in ``energy_unit`` under the low-mode ``model`` as a rich Table, each unit on the second
    line of its heading (k's on each row: s⁻¹, M⁻¹ s⁻¹, ... differ per reaction); one temperature is in the
    title, several in a T column (:func:`terminal_rows`). With the line saying which temperatures the table
    leaves out, or ""."""
    from rich.table import Table
    from rich.text import Text

    from ..export.tables import plain_typeset
    from ..fileio import display
    from ..units import unit_suffix

    u = unit_suffix(energy_unit)
    m = model.replace("-", "_")
    g = f"dG_{m}_{u}" if f"dG_{m}_{u}" in df else f"dG_{u}"
    g_act = f"dG_act_{m}_{u}" if f"dG_act_{m}_{u}" in df else f"dG_act_{u}"
    rows, excluded = terminal_rows(df)
    temperatures = df["T_K"].nunique() > 1  # one temperature: in the title, not on every row
    at = "" if temperatures else f" at {df['T_K'].iloc[0]:g} K"
    table = Table(box=None, pad_edge=False, header_style="bold", title=f"reactions ({model}){at}")
    headings = ["reaction", *(["T\nK"] if temperatures else []),
                *(f"{q}\n{energy_unit}" for q in ("ΔE", "ΔH", "ΔG", "ΔG‡")), "k (forward)", "k unit", "status"]
    for heading in headings:
        table.add_column(heading, justify="left" if heading in ("reaction", "k unit", "status") else "right")
    for i, row in rows.iterrows():
        k, unit = row.get("k_forward"), row.get("k_unit")
        has_k = not (k is None or k != k)
        t = "" if excluded[i] else f"{row['T_K']:g}"  # excluded at every temperature: one row, no T
        table.add_row(Text(display(str(row["reaction"]))), *([t] if temperatures else []),
                      _num(row[f"dE_{u}"]), _num(row[f"dH_{u}"]), _num(row[g]), _num(row[g_act]),
                      f"{k:.3g}" if has_k else "", plain_typeset(str(unit)) if has_k and unit else "",
                      str(row["status"]), style="red" if row["status"] != "ok" else None)
    n, (low, high) = df["T_K"].nunique(), (df["T_K"].min(), df["T_K"].max())
    left_out = "" if rows["T_K"].nunique() == n else (
        f"{n} temperatures from {low:g} to {high:g} K, more than a screenful: the table shows {low:g} and {high:g} K, "
        "reactions.csv every temperature")
    return table, left_out


def _num(value) -> str:
    return "" if value is None or value != value else f"{value:.2f}"


def execute(directory: str | Path, reactions, args: argparse.Namespace, simulation_required: bool = False) -> int:
    """Shared by ``run``, ``demo`` and ``simulate``: load, compute, write, summarise; the exit status.
    ``reactions`` is a path or a loaded ReactionFile; ``simulation_required``: a simulation that could not be
    run is bad input (exit 2, its one-line reason), not a finding among others."""
    from ..fileio import checked_output_dir

    with checked_output_dir(args.out, args.force, create=False):  # an existing --out: checked, locked for the run
        return _execute(directory, reactions, args, simulation_required)


def _execute(directory: str | Path, reactions, args: argparse.Namespace, simulation_required: bool) -> int:
    from ..reactions import ReactionFile, load_reaction_file
    from ..workflow import run

    rf = reactions if isinstance(reactions, ReactionFile) or not reactions else load_reaction_file(reactions)
    results = run(directory, reactions=rf, energy_unit=args.energy_unit, **reading_options(args),
                  **explicit_conditions(args))
    if results.exit_status == 2:
        print_summary(results, None, args.quiet)
        raise QcthermoError(f"nothing usable in {directory}: no species could be computed")
    if simulation_required and results.simulation is None:
        reason = next((f.message for f in results.findings if f.subject == "simulation"), "no simulation")
        raise QcthermoError(f"simulation: {reason}")
    results.settings["time_axis"] = getattr(args, "time_axis", "auto")
    results.write(args.out, force=args.force)
    print_summary(results, Path(args.out), args.quiet)
    return results.exit_status


def main(args: argparse.Namespace) -> int:
    if args.reactions is None:
        print("qcthermo run: no --reactions file: one species per frequency log, no reactions", file=sys.stderr)
    return execute(args.directory, args.reactions, args)

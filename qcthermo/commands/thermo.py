"""``qcthermo thermo DIR``: one row per frequency log (and temperature) with G broken down by motion.

The wide table (terminal, ``--csv``) gives, for the chosen low-mode model, E_elec and the free energy of
each motion, translational, rotational, vibrational (harmonic) and electronic, then one low-mode column,
G(model) - G(RRHO), so that the parts add up to G; and G relative to the lowest of the same formula,
program, level of theory and solvent model (conformers and isomers) at the same temperature.
``--long`` writes every quantity (RRHO and model totals, the components) one row per file, temperature
and quantity; ``--json`` the full record of each file. The convention is in docs/thermo.md.
A log the engine refuses is a row with its one-line reason.
"""

from __future__ import annotations

import argparse
import sys
from collections import Counter
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np

from .. import __version__
from ..errors import QcthermoError
from ..fileio import atomic_write, csv_text, display, json_text
from ..records import Conditions, Molecule, ThermoResult
from ..thermo import (
    COMPONENTS,
    MOTIONS,
    PARTS,
    ROTOR_QUANTITIES,
    TOTALS,
    free_energy_parts,
    per_temperature,
    rotor_records,
    temperatures_of,
)
from ..units import hartree_to, unit_suffix
from .common import (
    SHOWN_ERRORS,
    conditions_from_args,
    console_for_stdout,
    print_flagged,
    print_overview_heading,
    reading_options,
    screenful,
)

#: ThermoResult totals -> (long-form quantity, unit)
TOTAL_NAMES = {"zpe": ("ZPE", "Eh"), "thermal_energy": ("U", "Eh"), "enthalpy": ("H", "Eh"),
               "entropy": ("S", "Eh/K"), "gibbs": ("G", "Eh"), "cv": ("Cv", "Eh/K"), "cp": ("Cp", "Eh/K")}  # fmt: skip


#: under the terminal's tables: what the columns are (the CSV's are in docs/thermo.md)
LEGEND = ("G = E_elec + trans + rot + vib + elec + low-mode; vib harmonic, low-mode = G({model}) − G(RRHO)\n"
          "G_min: the lowest G of the same formula, program, level of theory and solvent model at that temperature")


#: the terminal's columns that leave first when it is too narrow for all (file, G and G − G_min stay)
NARROW_DROPS = ("G_elec_Eh", "E_elec_Eh", "point_group", "G_trans_Eh", "G_rot_Eh", "symmetry_number", "formula",
                "G_low_mode_Eh", "G_vib_Eh")


@dataclass
class Entry:
    """One log of the table: its result, or the one-line reason it has none."""

    path: str
    formula: str | None
    calc: Any = None
    result: ThermoResult | None = None
    reason: str = ""
    notes: list[str] = field(default_factory=list)

    @property
    def status(self) -> str:
        if self.result is None:
            return "error"
        return "warning" if any(n.startswith("warning") for n in self.notes) else "ok"


def molecule_of(path: str, calc, cond: Conditions) -> tuple[Molecule, list[str]]:
    """The engine's input for one log, and a note when it is taken for a transition state.

    A saddle-search job is a transition state; so is a frequency job with exactly one imaginary mode
    too large for the default policy to invert (a transition-state frequency run), with a warning.
    """
    from ..survey import is_transition_state

    molecule = Molecule.from_calculation(calc, name=path)
    if molecule.transition_state or not is_transition_state(calc, cond.imaginary_threshold):
        return molecule, []
    note = f"warning: one imaginary mode ({molecule.frequencies.min():.1f} cm^-1): treated as a transition state"
    return molecule.replace(transition_state=True), [note]


def compute_entries(calculations: dict[str, Any], read_errors: dict[str, str], cond: Conditions) -> list[Entry]:
    """An :class:`Entry` per frequency log among ``calculations`` (sorted), then per unreadable file."""
    from ..thermo import thermochemistry

    entries = []
    for path in sorted(calculations):
        calc = calculations[path]
        if not calc.has_vibrations:
            continue
        try:
            molecule, notes = molecule_of(path, calc, cond)
            res = thermochemistry(molecule, cond)
        except (QcthermoError, ValueError) as err:  # ValueError: e.g. an element without a mass
            reason = " ".join(str(err).removeprefix(f"{path}: ").split())
            entries.append(Entry(path, calc.formula, calc, reason=reason))
            continue
        # the model is named in its own column
        notes += [n for n in res.notes if not n.startswith("low-mode model")]
        entries.append(Entry(path, molecule.formula, calc, res, notes=notes))
    entries += [Entry(path, None, reason=read_errors[path]) for path in sorted(read_errors)]
    return entries


def _wide_rows(entry: Entry) -> list[dict[str, Any]]:
    res, calc = entry.result, entry.calc
    head = {"file": entry.path, "formula": entry.formula}
    if res is None:
        return [{**head, "status": "error", "reason": entry.reason}]
    head |= {"program": calc.program, "level_of_theory": calc.level_of_theory, "solvent_model": calc.solvent_model,
             "point_group": res.point_group, "symmetry_number": res.symmetry_number,
             "imaginary_cm1": res.imaginary_frequency}  # fmt: skip
    parts = free_energy_parts(res)
    total = per_temperature(res.gibbs, len(temperatures_of(res)))  # the engine's G; the parts add up to it
    rows = []
    for i, t in enumerate(temperatures_of(res)):
        row = {**head, "T_K": float(t), "low_mode_model": res.conditions.low_mode_model}
        row |= {f"{name}_Eh": float(value[i]) for name, value in parts.items()}
        row |= {"G_total_Eh": float(total[i]), "status": entry.status, "reason": "; ".join(entry.notes)}
        rows.append(row)
    return rows


def add_relative_column(frame, unit: str):
    """dG_total_<unit>: G minus the lowest G of the same formula, program, level of theory and solvent model
    at the same temperature. Programs apart: one functional's name covers different definitions (B3LYP with
    VWN3 or VWN5), so absolute energies of two programs differ by far more than any isomer gap."""
    keys = ["formula", "program", "level_of_theory", "solvent_model", "T_K"]
    lowest = frame.groupby(keys, dropna=False)["G_total_Eh"].transform("min")
    frame.insert(frame.columns.get_loc("G_total_Eh") + 1, f"dG_total_{unit_suffix(unit)}",
                 hartree_to(frame["G_total_Eh"] - lowest, unit))
    return frame


def thermo_table(entries: list[Entry], unit: str):
    """The wide table: (DataFrame, number of refused or unreadable logs)."""
    import pandas as pd

    frame = pd.DataFrame([row for entry in entries for row in _wide_rows(entry)])
    errors = sum(entry.result is None for entry in entries)
    if "T_K" in frame:
        frame = add_relative_column(frame, unit)
        # reason last, the rest in the order the rows were built
        frame = frame[[c for c in frame.columns if c not in ("status", "reason")] + ["status", "reason"]]
        frame["symmetry_number"] = frame["symmetry_number"].astype("Int64")
    return frame, errors


def long_table(entries: list[Entry]):
    """Every number of the usable logs, one row per file, temperature and quantity: file, formula, T_K,
    model ("rrho" or the chosen one), quantity, value, unit. Totals under RRHO and under the model, the
    components of the model (U_trans, S_trans, Cv_trans, ...), the free-energy parts, and each hindered
    rotor's V0, n, sigma_int, I_red, frequency replaced, overlap, ZPE, S and Cp (rotor_<bond>_<quantity>)."""
    import pandas as pd

    rows = []
    for entry in entries:
        res = entry.result
        if res is None:
            continue
        model = res.conditions.low_mode_model
        t = temperatures_of(res)
        sets = {"rrho": res.rrho, model: {k: getattr(res, k) for k in TOTALS}}  # one set under rrho
        series = [(label, *TOTAL_NAMES[k], values[k]) for label, values in sets.items() for k in TOTALS]
        for c in COMPONENTS:
            series += [(model, f"{q}_{MOTIONS[c]}", "Eh" if q == "U" else "Eh/K", v)
                       for q, v in res.components[c].items()]
        series += [(model, name, "Eh", value) for name, value in free_energy_parts(res).items()]
        series += [(model, f"rotor_{rotor['label']}_{key}", unit, rotor[key])
                   for rotor in rotor_records(res) for key, unit in ROTOR_QUANTITIES]
        for label, quantity, unit, value in series:
            values = per_temperature(value, len(t))
            rows += [{"file": entry.path, "formula": entry.formula, "T_K": float(ti), "model": label,
                      "quantity": quantity, "value": float(v), "unit": unit} for ti, v in zip(t, values, strict=True)]
    return pd.DataFrame(rows, columns=["file", "formula", "T_K", "model", "quantity", "value", "unit"])


def _json_record(entry: Entry) -> dict[str, Any]:
    res, calc = entry.result, entry.calc
    record: dict[str, Any] = {"file": entry.path, "formula": entry.formula, "status": entry.status}
    if res is None:
        return record | {"reason": entry.reason}
    n = len(temperatures_of(res))

    def totals(values) -> dict[str, list[float]]:
        # the ZPE does not depend on T: one number
        return {f"{k}_{TOTAL_NAMES[k][1].replace('/', '_')}":
                float(values[k]) if k == "zpe" else per_temperature(values[k], n) for k in TOTALS}

    return record | {
        "notes": entry.notes, "program": calc.program, "level_of_theory": calc.level_of_theory,
        "solvent_model": calc.solvent_model, "point_group": res.point_group,
        "symmetry_number": res.symmetry_number, "chiral": res.chiral, "linear": res.linear,
        "imaginary_cm1": res.imaginary_frequency, "scale_factors": res.scale_factors,
        "frequencies_cm1": res.frequencies_used, "electronic_energy_Eh": res.electronic_energy,
        "rrho": totals(res.rrho), "model": totals({k: getattr(res, k) for k in TOTALS}),
        "components": {c: {f"{q}_{'Eh' if q == 'U' else 'Eh_K'}": per_temperature(v, n)
                           for q, v in res.components[c].items()} for c in COMPONENTS},
        "free_energy_parts_Eh": free_energy_parts(res),
        "internal_rotors": res.conditions.internal_rotors, "rotors": rotor_records(res),
    }  # fmt: skip


def json_document(entries: list[Entry], cond: Conditions) -> str:
    """Strict JSON (no NaN tokens) of every entry; values per temperature are lists over ``temperatures_K``."""
    doc = {"tool": "qcthermo", "version": __version__, "command": "thermo",
           "conditions": asdict(cond) | {"temperature": np.atleast_1d(cond.temperature)},
           "temperatures_K": np.atleast_1d(np.asarray(cond.temperature, dtype=float)),
           "files": [_json_record(entry) for entry in entries]}  # fmt: skip
    return json_text(doc)


def point_group_text(symbol: str | None) -> str:
    """The engine's ASCII "C*v", "D*h" as printed in books, "C∞v", "D∞h" (the terminal only; files keep ASCII)."""
    return symbol.replace("*", "∞") if isinstance(symbol, str) else ""  # an error row's is NaN in the frame


def _terminal_notes(record: dict[str, Any]) -> str:
    """The notes, less what repeats the point-group and σ columns ("point group C1, symmetry number 1, chiral"
    is "chiral") and the "warning: " the status column says."""
    same = f"point group {record.get('point_group')}, symmetry number {record.get('symmetry_number')}"
    notes = (n.removeprefix(same).removeprefix(", ").removeprefix("warning: ")
             for n in str(record.get("reason") or "").split("; "))
    return "; ".join(n for n in notes if n)


def _shown_columns(frame, unit: str) -> list[tuple[str, str, bool, str]]:
    """The terminal's columns present in ``frame`` (status only when some row is not "ok"): (frame column,
    two-line heading "name\\nunit", whether the value is converted from Eh to ``unit``, format)."""
    parts = [(f"{name}_Eh", f"{name.removeprefix('G_').replace('_', '-')}\n{unit}", True, "{:.2f}")
             for name in PARTS[1:]]
    shown = [("file", "file", False, "{}"), ("formula", "formula", False, "{}"), ("point_group", "group", False, "{}"),
             ("symmetry_number", "σ", False, "{:.0f}"), ("E_elec_Eh", "E_elec\nEh", False, "{:.6f}"), *parts,
             ("G_total_Eh", "G\nEh", False, "{:.6f}"), (f"dG_total_{unit_suffix(unit)}", f"G − G_min\n{unit}", False,
             "{:.2f}"), ("status", "status", False, "{}")]  # fmt: skip
    # a status column that says "ok" on every row says nothing (warnings and errors are listed under the table)
    return [s for s in shown if s[0] in frame and (s[0] != "status" or (frame["status"] != "ok").any())]


def _cell(value, scale: float | None, fmt: str) -> str:
    import pandas as pd

    if pd.isna(value):
        return ""
    if scale:  # round first, so that -0.001 kcal/mol shows as 0.00, not -0.00
        value = round(value * scale, 2) + 0.0
    return display(fmt.format(value))


def _fitting_columns(shown: list[tuple[str, str, bool, str]], cells: list[list[str]], width: int) -> list[int]:
    """Indices of the columns of ``shown`` that fit ``width`` characters whole: all of them, or without the
    first of :data:`NARROW_DROPS` until they fit (2 spaces between columns)."""
    widths = [max([len(line) for line in heading.split("\n")] + [len(row[j]) for row in cells])
              for j, (_, heading, _, _) in enumerate(shown)]
    keep = list(range(len(shown)))
    for key in NARROW_DROPS:
        if sum(widths[j] for j in keep) + 2 * (len(keep) - 1) <= width:
            break
        keep = [j for j in keep if shown[j][0] != key]
    return keep


def print_table(records: list[dict[str, Any]], cells: list[list[str]], columns: list[tuple[str, str]], title: str,
                console) -> None:
    """One temperature's rows of the wide table on ``console`` (rich): ``columns`` (frame column, heading) and
    their ``cells``, one list per record. Every cell is a rich Text, so a file name such as ``a[/red].out`` is
    printed verbatim, not read as markup."""
    from rich.table import Table
    from rich.text import Text

    table = Table(box=None, pad_edge=False, header_style="bold", title=title, title_justify="left")
    for key, heading in columns:
        table.add_column(heading, overflow="fold", no_wrap=key != "file",
                         justify="right" if key.endswith(("_Eh", "_mol", "_eV")) else "left")
    styles = {"warning": "yellow", "error": "red"}
    for record, row in zip(records, cells, strict=True):
        table.add_row(*(Text(c) for c in row), style=styles.get(record["status"]))
    console.print(table)


def _flagged(frame) -> list[tuple[str, str, str]]:
    """(status, file, notes) once per file: every file refused (its one-line reason), and every file with
    notes other than the repeat of its point group and σ ("note" for a file whose status is ok)."""
    once = frame.drop_duplicates("file")
    return [(r["status"] if r["status"] != "ok" else "note", r["file"], notes)
            for r in once.to_dict("records") if (notes := _terminal_notes(r))]


def _table_lines(frame) -> int:
    """The lines of :func:`print_tables`' output: per temperature a title, a two-line heading and a row per
    usable file; the legend (2 lines); a line per note and per refused file."""
    usable = frame[frame["status"] != "error"]
    temperatures = usable["T_K"].nunique() if "T_K" in usable else 0
    return temperatures * 3 + len(usable) + 2 + len(_flagged(frame))


def print_tables(frame, cond: Conditions, unit: str) -> None:
    """The wide table on stdout: one table per temperature (its temperature in the title, not on every row),
    parts of G and G − G_min in ``unit``, E_elec and G in Eh, each unit on the second line of its heading; then
    the legend, then each file's notes and each refused file's reason, once. Columns that do not fit the
    terminal are left out (:data:`NARROW_DROPS`) and named."""
    from rich.text import Text

    console = console_for_stdout(200)
    records = frame[frame["status"] != "error"].to_dict("records")
    shown, factor = _shown_columns(frame[frame["status"] != "error"], unit), hartree_to(1.0, unit)
    for record in records:
        record["point_group"] = point_group_text(record.get("point_group"))
    cells = [[_cell(r.get(key), factor if scaled else None, fmt) for key, _, scaled, fmt in shown] for r in records]
    keep = _fitting_columns(shown, cells, console.width)
    model = cond.low_mode_model
    for t in sorted({r["T_K"] for r in records}):
        at = [i for i, r in enumerate(records) if r["T_K"] == t]
        print_table([records[i] for i in at], [[cells[i][j] for j in keep] for i in at],
                    [shown[j][:2] for j in keep], f"G by motion at {t:g} K ({model}, {_state(cond)})", console)
    console.print(Text(LEGEND.format(model=model), style="dim"), soft_wrap=True)
    if len(keep) < len(shown):
        names = ", ".join(shown[j][1].split("\n")[0] for j in range(len(shown)) if j not in keep)
        console.print(Text(f"left out, the terminal being too narrow: {names} (--csv FILE has every column)"),
                      soft_wrap=True)
    styles = {"warning": "yellow", "error": "red"}
    for status, path, notes in _flagged(frame):
        console.print(Text(f"  {status}: {display(path)}: {display(notes)}", style=styles.get(status)), soft_wrap=True)


def print_overview(frame, entries: list[Entry], written: list[str], rows: int) -> None:
    """In place of tables longer than ``rows``: where the full table is, the files by status, by formula and by
    level of theory, then the refused files and those with a warning (at most ``rows``)."""
    temperatures = frame["T_K"].dropna().unique() if "T_K" in frame else []
    at = f" at {len(temperatures)} temperatures" if len(temperatures) > 1 else ""
    print_overview_heading(f"{len(entries)} files{at}", written, "--csv FILE, --long FILE or --json FILE")
    print("status: " + ", ".join(f"{s} ({n})" for s, n in Counter(e.status for e in entries).most_common()))
    for what, key in (("formulas", lambda e: e.formula or "unreadable"),
                      ("levels of theory", lambda e: " ".join(x for x in (e.calc.program, e.calc.level_of_theory)
                                                              if x) if e.calc is not None else "unreadable")):
        counts = Counter(key(e) for e in entries).most_common()
        more = f", ... and {len(counts) - SHOWN_ERRORS} more" if len(counts) > SHOWN_ERRORS else ""
        print(f"{what}: " + ", ".join(f"{display(name)} ({n})" for name, n in counts[:SHOWN_ERRORS]) + more)
    print_flagged([f for f in _flagged(frame) if f[0] != "note"], rows)


def _state(cond: Conditions) -> str:
    return cond.standard_state if cond.pressure is None else f"{cond.pressure} Pa"


def _rotor_summary(entries: list[Entry]) -> str:
    """"; internal rotors hindered: 3 torsions in 2 files (docs/rotors.md)", or "" under "harmonic"."""
    results = [e.result for e in entries if e.result is not None]
    if not results or results[0].conditions.internal_rotors != "hindered":
        return ""
    counts = [len(r.rotors) for r in results]
    return (f"; internal rotors hindered: {sum(counts)} torsion{'s' * (sum(counts) != 1)} in "
            f"{sum(c > 0 for c in counts)} file{'s' * (sum(c > 0 for c in counts) != 1)} (the others harmonic)")


def main(args: argparse.Namespace) -> int:
    from ..survey import survey
    from .survey import check_outputs

    check_outputs([args.csv, args.long, args.json], args.force)
    cond = conditions_from_args(args)
    result = survey(args.directory, **reading_options(args))
    for note in result.notes:
        print(f"qcthermo thermo: warning: {display(note)}", file=sys.stderr)
    entries = compute_entries(result.calculations, result.errors, cond)
    frame, errors = thermo_table(entries, args.energy_unit)
    if len(entries) == errors:
        for entry in entries:
            print(f"qcthermo thermo: {display(entry.path)}: {entry.reason}", file=sys.stderr)
        print(f"qcthermo thermo: no usable frequency log under {display(args.directory)}", file=sys.stderr)
        return 2
    if args.csv:
        atomic_write(args.csv, csv_text(frame))
    if args.long:
        atomic_write(args.long, csv_text(long_table(entries)))
    if args.json:
        atomic_write(args.json, json_document(entries, cond))
    if args.quiet:
        pass
    elif _table_lines(frame) > screenful():
        print_overview(frame, entries, [p for p in (args.csv, args.long, args.json) if p], screenful())
    else:
        print_tables(frame, cond, args.energy_unit)
    n_files = len(entries)
    # say what became of the other logs, so a count below the directory's is not a puzzle
    n_other = sum(not c.has_vibrations for c in result.calculations.values())
    other = f"; {n_other} without frequencies left out (see `qcthermo survey`)" if n_other else ""
    print(f"{n_files} file{'s' * (n_files != 1)}: {errors} refused or unreadable{other}; "
          f"model {cond.low_mode_model}, {_state(cond)}"
          + _rotor_summary(entries))
    return 1 if errors else 0

"""``qcthermo thermo DIR``: one row per frequency log (and temperature) with E, ZPE, H, T*S and G.

The G, H and T*S columns without a model name are plain RRHO; the chosen low-mode model's values sit
beside them (``G_qrrho_Eh`` ...). Relative free energies in the chosen unit are given within each
formula, program, level of theory and solvent model (conformers and isomers), against the lowest at the
same temperature.
A log the engine refuses is a row with its one-line reason.
"""

from __future__ import annotations

import argparse
import sys
from typing import Any

import numpy as np

from ..errors import QcthermoError
from ..fileio import atomic_write
from ..records import Conditions, Molecule, ThermoResult
from ..units import hartree_to, unit_suffix
from .common import conditions_from_args


def model_tag(model: str) -> str:
    """Column tag of a low-mode model: "qrrho-enthalpy" -> "qrrho_enthalpy"."""
    return model.replace("-", "_")


def result_rows(path: str, calc, molecule: Molecule, res: ThermoResult, unit: str) -> list[dict[str, Any]]:
    """One row per temperature of ``res`` (of ``calc``'s log); hartree columns and the free-energy correction
    in ``unit``."""
    cond = res.conditions
    temps = np.atleast_1d(np.asarray(cond.temperature, dtype=float))
    tag = model_tag(cond.low_mode_model)
    suffix = unit_suffix(unit)

    def at(value, i):
        return float(np.atleast_1d(value)[i]) if np.ndim(value) else float(value)

    rows = []
    for i, t in enumerate(temps):
        rrho = {k: at(v, i) for k, v in res.rrho.items()}
        row: dict[str, Any] = {
            "file": path,
            "formula": molecule.formula,
            "program": calc.program,
            "level_of_theory": calc.level_of_theory,
            "solvent_model": calc.solvent_model,
            "point_group": res.point_group,
            "symmetry_number": res.symmetry_number,
            "imaginary_cm1": res.imaginary_frequency,
            "T_K": float(t),
            "E_elec_Eh": res.electronic_energy,
            "ZPE_Eh": rrho["zpe"],
            "H_Eh": rrho["enthalpy"],
            "S_Eh_K": rrho["entropy"],
            "TS_Eh": t * rrho["entropy"],
            "G_Eh": rrho["gibbs"],
        }
        if tag != "rrho":
            row[f"H_{tag}_Eh"] = at(res.enthalpy, i)
            row[f"TS_{tag}_Eh"] = t * at(res.entropy, i)
            row[f"G_{tag}_Eh"] = at(res.gibbs, i)
        row[f"G_corr_{tag}_{suffix}"] = hartree_to(at(res.gibbs, i) - res.electronic_energy, unit)
        row["status"] = "warning" if any(n.startswith("warning") for n in res.notes) else "ok"
        # the model is named in the column names already
        row["reason"] = "; ".join(n for n in res.notes if not n.startswith("low-mode model"))
        rows.append(row)
    return rows


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


def error_row(path: str, formula: str | None, reason: str) -> dict[str, Any]:
    return {"file": path, "formula": formula, "status": "error", "reason": reason}


def add_relative_columns(frame, model: str, unit: str):
    """dG_<model>_<unit>: G minus the lowest G of the same formula, program, level of theory and solvent model
    at the same temperature. Programs apart: one functional's name covers different definitions (B3LYP with
    VWN3 or VWN5), so absolute energies of two programs differ by far more than any isomer gap."""
    tag = model_tag(model)
    column = "G_Eh" if tag == "rrho" else f"G_{tag}_Eh"
    if column not in frame:
        return frame
    keys = ["formula", "program", "level_of_theory", "solvent_model", "T_K"]
    lowest = frame.groupby(keys, dropna=False)[column].transform("min")
    frame[f"dG_{tag}_{unit_suffix(unit)}"] = hartree_to(frame[column] - lowest, unit)
    return frame


def thermo_table(calculations: dict[str, Any], read_errors: dict[str, str], cond: Conditions, unit: str):
    """(DataFrame, number of refused or unreadable logs) for the frequency logs among ``calculations``."""
    import pandas as pd

    from ..thermo import thermochemistry

    rows: list[dict[str, Any]] = []
    errors = 0
    for path in sorted(calculations):
        calc = calculations[path]
        if not calc.has_vibrations:
            continue
        try:
            molecule, notes = molecule_of(path, calc, cond)
            res = thermochemistry(molecule, cond)
            res.notes[:0] = notes
            rows += result_rows(path, calc, molecule, res, unit)
        except (QcthermoError, ValueError) as err:  # ValueError: e.g. an element without a mass
            rows.append(error_row(path, calc.formula, " ".join(str(err).removeprefix(f"{path}: ").split())))
            errors += 1
    for path in sorted(read_errors):
        rows.append(error_row(path, None, read_errors[path]))
        errors += 1
    frame = pd.DataFrame(rows)
    if "T_K" in frame:
        frame = add_relative_columns(frame, cond.low_mode_model, unit)
        # reason last, the rest in the order the rows were built
        frame = frame[[c for c in frame.columns if c not in ("status", "reason")] + ["status", "reason"]]
        frame["symmetry_number"] = frame["symmetry_number"].astype("Int64")
    return frame, errors


def print_table(frame, model: str, unit: str) -> None:
    """The main columns on stdout with rich; CSV has them all."""
    from rich.console import Console
    from rich.table import Table

    tag = model_tag(model)
    suffix = unit_suffix(unit)
    shown = [("file", "file", "{}"), ("formula", "formula", "{}"), ("point_group", "PG", "{}"),
             ("symmetry_number", "σ", "{:.0f}"), ("T_K", "T / K", "{:.2f}"), ("E_elec_Eh", "E / Eh", "{:.6f}"),
             ("ZPE_Eh", "ZPE / Eh", "{:.6f}"), ("G_Eh", "G(RRHO) / Eh", "{:.6f}"),
             (f"G_{tag}_Eh", f"G({model}) / Eh", "{:.6f}"), (f"dG_{tag}_{suffix}", f"ΔG / {unit}", "{:.2f}"),
             ("status", "status", "{}"), ("reason", "notes", "{}")]  # fmt: skip
    shown = [s for s in shown if s[0] in frame]
    table = Table(box=None, pad_edge=False, header_style="bold")
    for _, heading, _ in shown:
        table.add_column(heading, overflow="fold", no_wrap=heading not in ("file", "notes"))
    styles = {"warning": "yellow", "error": "red"}
    for record in frame.to_dict("records"):
        cells = []
        for key, _, fmt in shown:
            value = record.get(key)
            cells.append("" if value is None or (isinstance(value, float) and np.isnan(value)) else fmt.format(value))
        table.add_row(*cells, style=styles.get(record.get("status")))
    console = Console()
    if not console.is_terminal:
        console = Console(width=200)
    console.print(table)


def main(args: argparse.Namespace) -> int:
    from ..survey import survey
    from .survey import check_outputs

    check_outputs([args.csv], args.force)
    cond = conditions_from_args(args)
    result = survey(args.directory, jobs=args.jobs, cache=not args.no_cache, progress=not args.quiet)
    for note in result.notes:
        print(f"qcthermo thermo: warning: {note}", file=sys.stderr)
    frame, errors = thermo_table(result.calculations, result.errors, cond, args.energy_unit)
    usable = int((frame["status"] != "error").sum()) if len(frame) else 0
    if usable == 0:
        for record in frame.to_dict("records"):
            print(f"qcthermo thermo: {record['file']}: {record['reason']}", file=sys.stderr)
        print(f"qcthermo thermo: no usable frequency log under {args.directory}", file=sys.stderr)
        return 2
    if not args.quiet:
        print_table(frame, cond.low_mode_model, args.energy_unit)
    if args.csv:
        atomic_write(args.csv, frame.to_csv(index=False))
    n_files = frame["file"].nunique()
    # say what became of the other logs, so a count below the directory's is not a puzzle
    n_other = sum(not c.has_vibrations for c in result.calculations.values())
    other = f"; {n_other} without frequencies left out (see `qcthermo survey`)" if n_other else ""
    print(f"{n_files} file{'s' * (n_files != 1)}: {errors} refused or unreadable{other}; "
          f"model {cond.low_mode_model}, {cond.standard_state if cond.pressure is None else f'{cond.pressure} Pa'}")
    return 1 if errors else 0

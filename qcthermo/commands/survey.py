"""``qcthermo survey DIR``: one row per log with its status, as a table, CSV and/or JSON."""

from __future__ import annotations

import argparse
import sys
from collections import Counter
from pathlib import Path

from ..fileio import atomic_write, check_output_file, csv_text, display, json_text
from ..survey import LOG_SUFFIXES, SurveyResult, survey
from .common import (
    SHOWN_ERRORS,
    console_for_stdout,
    print_flagged,
    print_overview_heading,
    reading_options,
    screenful,
)

#: the columns of the terminal table: (heading, how to show a row)
_TABLE = (
    ("file", lambda r: display(r["path"])),
    ("program", lambda r: r["program"] or ""),
    ("jobs", lambda r: r["job_types"] or ""),
    ("level", lambda r: "/".join(x for x in (r["method"], r["basis"]) if x)),
    ("solvent", lambda r: r["solvent_model"] or ""),
    ("q/2S+1", lambda r: "" if r["charge"] is None else f"{r['charge']}/{_blank(r['multiplicity'])}"),
    ("formula", lambda r: r["formula"] or ""),
    ("E / Eh", lambda r: "" if r["E_elec_Eh"] is None else f"{r['E_elec_Eh']:.6f}"),
    ("lowest / cm⁻¹", lambda r: "" if r["lowest_frequency_cm1"] is None else f"{r['lowest_frequency_cm1']:.1f}"),
    ("imag", lambda r: "" if r["n_imaginary"] is None else str(r["n_imaginary"])),
    ("status", lambda r: r["status"]),
    ("reason", lambda r: r["reason"]),
)
#: which columns stay when the terminal is narrow, most useful first (indices into _TABLE; reason always)
_PRIORITY = (0, 10, 1, 6, 7, 9, 8, 5, 3, 2, 4)
#: numbers, right-aligned so that their digits line up
_NUMERIC = {"E / Eh", "lowest / cm⁻¹", "imag"}
_REASON_MIN = 24
#: columns that, holding one value in every row of a table of several, are named once above it instead
_SHARED = ("program", "jobs", "level", "solvent", "q/2S+1", "formula")
_STATUS_STYLE = {"warning": "yellow", "error": "red"}


def _blank(value) -> str:
    return "?" if value is None else str(value)


def check_outputs(paths: list[str | None], force: bool) -> list[Path]:
    """The requested output files; refuse (before any work) to overwrite one without ``force``, or to write
    one that is no file (qcthermo.fileio.check_output_file; a device or a pipe is written as a stream)."""
    return [check_output_file(p, force) for p in paths if p]


def write_csv(result: SurveyResult, path: str | Path) -> Path:
    return atomic_write(path, csv_text(result.to_frame()))


def write_json(result: SurveyResult, path: str | Path) -> Path:
    """A JSON list of row objects (the CSV columns), null where the CSV is empty (and for a non-finite
    number: strict JSON has no NaN or Infinity); file names in their :func:`~qcthermo.fileio.display` form."""
    return atomic_write(path, json_text(result.rows))


def _fitting_columns(cells: list[list[str]], width: int) -> list[int]:
    """Indices of the columns to show: never an empty one, and on a narrow terminal the most useful
    ones (:data:`_PRIORITY`) that fit whole, leaving the reason at least :data:`_REASON_MIN` characters."""
    widths = [max([len(_TABLE[j][0])] + [len(c[j]) for c in cells]) for j in range(len(_TABLE))]
    reason = len(_TABLE) - 1
    budget = width - (min(widths[reason], _REASON_MIN) if any(c[reason] for c in cells) else 0)
    keep = []
    for j in _PRIORITY:
        if any(c[j] for c in cells) and (widths[j] + 2 <= budget or not keep):
            keep.append(j)
            budget -= widths[j] + 2
    if any(c[reason] for c in cells):
        keep.append(reason)
    return sorted(keep)


def _shared_columns(cells: list[list[str]]) -> list[int]:
    """Indices of the :data:`_SHARED` columns that hold one value, not empty, in every row of several."""
    if len(cells) < 2:
        return []
    return [j for j, (heading, _) in enumerate(_TABLE)
            if heading in _SHARED and cells[0][j] and all(c[j] == cells[0][j] for c in cells)]


def print_table(result: SurveyResult) -> None:
    """The rows on stdout, fitted to the terminal (a pipe gets $COLUMNS or 200 characters). Cells are Text, not
    markup: a file called "[bold]x.log" is shown as named."""
    from rich.table import Table
    from rich.text import Text

    console = console_for_stdout(200)
    cells = [[show(row) for _, show in _TABLE] for row in result.rows]
    shared = _shared_columns(cells)
    if shared:
        console.print(Text(f"every file: {' · '.join(f'{_TABLE[j][0]} {display(cells[0][j])}' for j in shared)}"))
    keep = [j for j in _fitting_columns(cells, console.width) if j not in shared]
    table = Table(box=None, pad_edge=False, header_style="bold")
    for j in keep:
        heading = _TABLE[j][0]
        table.add_column(heading, overflow="fold", no_wrap=heading != "reason",
                         justify="right" if heading in _NUMERIC else "left")
    for row, row_cells in zip(result.rows, cells, strict=True):
        table.add_row(*(Text(display(row_cells[j])) for j in keep), style=_STATUS_STYLE.get(row["status"]))
    console.print(table)


def print_overview(result: SurveyResult, written: list[str], rows: int) -> None:
    """In place of a table longer than ``rows``: the programs, then the files with a warning or an error (errors
    first, at most ``rows`` of them); the levels of theory and the status counts follow, as after a table."""
    print_overview_heading(f"{len(result.table)} files", written, "--csv FILE or --json FILE")
    programs: Counter = Counter()
    for program, n in result.count_by("program").items():  # counted from the rows' tuples: no dict per row
        programs[program or "unreadable"] += n
    print("programs: " + ", ".join(f"{name} ({n})" for name, n in programs.most_common()))
    flagged = result.rows_with("error") + result.rows_with("warning")
    print_flagged([(r["status"], r["path"], r["reason"]) for r in flagged], rows)


def print_errors(command: str, errors: dict[str, str], limit: int = SHOWN_ERRORS) -> None:
    """The first ``limit`` unreadable files on stderr, one line each, and how many more there are."""
    for relpath, reason in list(errors.items())[:limit]:
        print(f"qcthermo {command}: error: {display(relpath)}: {display(reason)}", file=sys.stderr)
    if len(errors) > limit:
        print(f"qcthermo {command}: ... and {len(errors) - limit} more unreadable files", file=sys.stderr)


def main(args: argparse.Namespace) -> int:
    check_outputs([args.csv, args.json], args.force)
    result = survey(args.directory, **reading_options(args))
    for note in result.notes:
        print(f"qcthermo survey: warning: {display(note)}", file=sys.stderr)
    if not result.table:
        patterns = ", ".join(f"*{s}" for s in LOG_SUFFIXES)
        print(f"qcthermo survey: no log files ({patterns}, also gzipped) under {display(args.directory)}",
              file=sys.stderr)
        return 2
    if args.csv:
        write_csv(result, args.csv)
    if args.json:
        write_json(result, args.json)
    if args.quiet:
        print_errors("survey", result.errors)
    elif len(result.table) > screenful():
        print_overview(result, [p for p in (args.csv, args.json) if p], screenful())
    else:
        print_table(result)
    levels = result.levels_of_theory()
    if levels and not args.quiet:
        print("levels of theory: " + ", ".join(f"{display(level)} ({n})" for level, n in levels.items()))
    print(result.summary())
    return result.exit_status

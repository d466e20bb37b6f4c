"""What several sub-commands share: the explicit conditions of the options (merged by qcthermo.settings), and
the size of a screen with the overview printed in place of a longer table."""

from __future__ import annotations

import argparse
import os
import sys
from typing import Any

from ..fileio import display
from ..records import CONDITION_KEYS, Conditions
from ..settings import merge_conditions, parse_temperature_range


def explicit_conditions(args: argparse.Namespace) -> dict[str, Any]:
    """The conditions the options set: every option named as a Conditions field (CONDITION_KEYS) that was
    given, and --temperature-range as the temperature."""
    explicit = {k: getattr(args, k) for k in CONDITION_KEYS if getattr(args, k, None) is not None}
    if getattr(args, "temperature_range", None):
        explicit["temperature"] = parse_temperature_range(args.temperature_range)
    return explicit


def reading_options(args: argparse.Namespace) -> dict[str, Any]:
    """The survey's keyword arguments from the "reading" options every command that reads logs has."""
    return {"jobs": args.jobs, "cache": not args.no_cache, "progress": not args.quiet,
            "scheduler": args.scheduler or args.cluster, "workers": args.workers}


def conditions_from_args(args: argparse.Namespace, file_settings: dict[str, Any] | None = None) -> Conditions:
    """Conditions from, in rising priority: Conditions()'s defaults (the command line has no others), a
    reaction file's [conditions], options (qcthermo.settings.merge_conditions)."""
    return merge_conditions(file_settings, explicit_conditions(args))[0]


#: failing files named under --quiet (the table, which names them all, is not shown)
SHOWN_ERRORS = 10
#: lines of a "screen" when stdout is not a terminal (a pipe, a batch job's log) and $LINES is not set
PIPE_LINES = 100
#: lines around the table: its heading, the levels of theory, the summary, the shell's prompt
AROUND_TABLE = 5


def screenful() -> int:
    """How many rows the terminal table may have: $LINES, else the terminal's height, else :data:`PIPE_LINES`,
    less :data:`AROUND_TABLE`."""
    lines = os.environ.get("LINES", "")
    if lines.isdigit():
        height = int(lines)
    elif sys.stdout.isatty():
        height = os.get_terminal_size(sys.stdout.fileno()).lines
    else:
        height = PIPE_LINES
    return max(height - AROUND_TABLE, SHOWN_ERRORS)


def print_overview_heading(what: str, written: list[str], options: str) -> None:
    """The first line of an overview printed in place of a table longer than a screenful: ``what`` (e.g.
    "240 files") and where the full table went, the files written or else the ``options`` that write it."""
    where = " and ".join(display(p) for p in written) or options
    print(f"{what}, more than a screenful: the full table is in {where}")


def print_flagged(flagged: list[tuple[str, str, str]], rows: int) -> None:
    """(status, file, reason) of the files with an error or a warning, one line each, errors first, at most
    ``rows`` of them and how many more."""
    ordered = [f for f in flagged if f[0] == "error"] + [f for f in flagged if f[0] != "error"]
    for status, path, reason in ordered[:rows]:
        print(f"  {status}: {display(path)}: {display(reason)}")
    if len(ordered) > rows:
        print(f"  ... and {len(ordered) - rows} more with a warning or an error")


def console_for_stdout(pipe_width: int):
    """A rich Console on stdout, without highlighting of numbers and names: the terminal's width, ``$COLUMNS``
    when set, else ``pipe_width`` characters when stdout is a pipe or a file (a table is not cut to 80 there)."""
    from rich.console import Console

    console = Console(highlight=False)
    if not console.is_terminal and not os.environ.get("COLUMNS", "").isdigit():
        console = Console(width=pipe_width, highlight=False)
    return console

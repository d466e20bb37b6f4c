"""What several sub-commands share: the explicit conditions of the options (merged by qcthermo.settings)."""

from __future__ import annotations

import argparse
from typing import Any

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

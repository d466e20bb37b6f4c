"""``qcthermo profile F -o fig.svg``: the energy diagram(s) of a reaction file, and nothing else.

The logs are looked for in ``--directory`` (default: the reaction file's folder). ``--profile NAME``
(repeatable) draws the named profiles, overlaid in the order given. Without it every ``[[profile]]`` is
drawn: overlaid when all start from the same species, else one panel per group of profiles that do
(``qcthermo.export.profile_figures.overview_figure``). An existing figure is kept unless
``--force``. Exit status: 0 drawn from clean inputs, 1 drawn but some of its inputs had errors (listed; errors
about other files of the folder are counted in one note), 2 nothing drawn (one line saying why).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..errors import QcthermoError
from .common import explicit_conditions, reading_options


def _check_output(path: Path, force: bool) -> None:
    """Refuse, before any work, a bad extension or a file that would be overwritten without --force."""
    from ..export.figure_common import FORMATS
    from ..fileio import check_output_file

    if path.suffix.lower() not in FORMATS:
        raise QcthermoError(f"{path}: figure format must be .svg, .png or .pdf")
    check_output_file(path, force)


def main(args: argparse.Namespace) -> int:
    from ..export.figure_common import save_figure
    from ..export.profile_data import profile_temperature_index, profiles_from_records
    from ..export.profile_figures import overview_figure, plot_profiles
    from ..export.run_tables import profile_subjects
    from ..fileio import display
    from ..reactions import load_reaction_file
    from ..workflow import run

    output = Path(args.output)
    _check_output(output, args.force)
    reaction_file = Path(args.reactions)
    if not reaction_file.is_file():
        raise QcthermoError(f"{reaction_file}: no such reaction file")
    rf = load_reaction_file(reaction_file)
    if not rf.profiles:
        raise QcthermoError(f"{reaction_file}: no [[profile]] table to draw")
    directory = Path(args.directory) if args.directory else rf.path.parent
    results = run(directory, reactions=rf, energy_unit=args.energy_unit, **reading_options(args),
                  **explicit_conditions(args))
    # only the errors about the profiles drawn, their species and files: a folder's other broken logs are counted
    mine = profile_subjects(results, args.profiles)
    errors = [f for f in results.findings if f.severity == "error"]
    for _, subject, message in [f for f in errors if f.subject in mine]:
        print(f"error: {display(subject)}: {display(message)}", file=sys.stderr)
    others = sum(f.subject not in mine for f in errors)
    if others:
        print(f"note: {others} other error(s) under {display(str(directory))}, none about these profiles "
              f"(`qcthermo survey {display(str(directory))}` lists them)", file=sys.stderr)
    if not results.profiles:
        raise QcthermoError(f"{reaction_file}: no profile could be computed (see the errors above)")
    t_index = profile_temperature_index(results)
    profiles = profiles_from_records(results.profiles, args.quantity, args.energy_unit, names=args.profiles,
                                     temperature_index=t_index)
    if args.profiles:
        fig = plot_profiles(profiles, precision=args.precision)
    else:
        fig = overview_figure(profiles, precision=args.precision)
    save_figure(fig, output)  # an OSError is a one-line QcthermoError naming the file (qcthermo.fileio)
    if not args.quiet:
        # a --temperature-range draws one of its temperatures: say which
        t_shown = float(results.temperatures[t_index])
        print(f"{display(str(output))}: {len(profiles)} profile(s), {args.quantity} in {args.energy_unit} "
              f"at {t_shown:g} K")
    return 1 if any(f.subject in mine for f in errors) else 0

"""The ``qcthermo`` command line.

Only argparse and the standard library are imported here; each sub-command's module (under
``qcthermo.commands``) is imported when that command runs, so ``qcthermo --help`` stays fast.
Exit status: 0 all good, 1 results written but some inputs had errors, 2 nothing usable / bad
arguments. Bad input never ends in a traceback.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from . import __version__

COMMANDS = {
    "survey": "one row per file: program, jobs, level of theory, charge/mult, energy, status",
    "thermo": "one row per frequency log: G by motion (translation, rotation, vibration, electronic, low-mode)",
    "run": "the main job: survey, species, reactions and every export, into --out",
    "profile": "draw the reaction energy diagram(s) of a reaction file",
    "init": "write a starter reactions.toml listing the species found in DIR",
    "demo": "run the main job on the bundled sample scenario",
    "simulate": "the main job, then the microkinetic simulation of the reaction file's [simulation] table",
}
DIR_HELP = "folder of logs, searched recursively (docs/survey.md: which files are read)"


def _count(lowest: int, highest: int | None = None):
    """An argparse type: an integer in [lowest, highest], else the usual one-line usage error."""

    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not an integer") from None
        if value < lowest or (highest is not None and value > highest):
            bound = f"from {lowest} to {highest}" if highest is not None else f"{lowest} or more"
            raise argparse.ArgumentTypeError(f"{value}: expected {bound}")
        return value

    return parse


def _positive(text: str) -> float:
    """An argparse type: a finite number > 0."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not (0 < value < float("inf")):
        raise argparse.ArgumentTypeError(f"{text}: expected a finite number > 0")
    return value


def _add_reading(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("reading")
    g.add_argument("--jobs", type=_count(1), default=None, metavar="N",
                   help="worker processes (default: every core this process may use; more is lowered to that)")
    g.add_argument("--no-cache", action="store_true", help="neither read nor write the parse cache")
    g.add_argument("--quiet", action="store_true", help="no progress bar, no table on the terminal")
    g = p.add_argument_group("reading on a Dask cluster (pip install 'qcthermo[cluster]'; docs/cluster.md)")
    where = g.add_mutually_exclusive_group()
    where.add_argument("--scheduler", metavar="tcp://HOST:PORT", help="send the reading to this running Dask scheduler")
    where.add_argument("--cluster", metavar="local:N|slurm|pbs|sge|lsf",
                       help="start a Dask cluster: N processes here, or jobs of a batch system (jobqueue.yaml)")
    g.add_argument("--workers", type=_count(1), default=None, metavar="N", help="worker processes --cluster starts")


def _add_conditions(p: argparse.ArgumentParser, reaction_file: bool = True) -> None:
    g = p.add_argument_group("conditions (override the reaction file's [conditions])" if reaction_file
                             else "conditions")
    one_or_range = g.add_mutually_exclusive_group()  # both given, one would be dropped without a word
    one_or_range.add_argument("--temperature", type=float, default=None, metavar="K", help="temperature, K (298.15)")
    one_or_range.add_argument("--temperature-range", default=None, metavar="START:STOP:STEP",
                              help="a range of temperatures, K, STOP included: every table becomes long")
    g.add_argument("--standard-state", default=None, metavar="STATE",
                   help="1atm | 1bar | 1M (default 1atm; a reaction file may set it)")
    g.add_argument("--low-mode-model", default=None,
                   choices=["rrho", "qrrho", "qrrho-enthalpy", "quasi-harmonic"],
                   help="treatment of low-frequency modes (default qrrho)")
    g.add_argument("--low-mode-threshold", type=float, default=None, metavar="CM-1",
                   help="threshold of the low-mode model, cm^-1 (100)")
    g.add_argument("--frequency-scale", default=None, metavar="F|auto",
                   help="frequency scale factor, or 'auto' to look up the level of theory (1.0)")
    g.add_argument("--zpe-scale", type=float, default=None, metavar="F",
                   help="scale factor for the ZPE alone (default: the frequency scale factor)")
    g.add_argument("--rotor-inertia", default=None, metavar="KG_M2|molecular",
                   help="B_av of the qRRHO free-rotor limit, kg m^2 (1e-44), or 'molecular'")
    g.add_argument("--internal-rotors", default=None, choices=["harmonic", "hindered"],
                   help="torsions about single bonds as harmonic modes or 1-D hindered rotors (default harmonic; "
                   "docs/rotors.md)")
    g.add_argument("--imaginary-policy", default=None, choices=["error", "invert", "drop"],
                   help="unexpected imaginary modes: refuse, make real, or leave out (default: invert "
                   "small ones with a warning, refuse large ones)")
    g.add_argument("--energy-unit", default="kcal/mol", choices=["kcal/mol", "kJ/mol", "eV"],
                   help="unit of the human-readable energies (kcal/mol)")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="qcthermo",
        description="Audited thermochemistry, reaction free energies, rate constants and paper tables "
        "from a directory of quantum-chemistry logs.",
    )
    parser.add_argument("--version", action="version", version=f"qcthermo {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("survey", help=COMMANDS["survey"], description=COMMANDS["survey"])
    p.add_argument("directory", metavar="DIR", help=DIR_HELP)
    p.add_argument("--csv", metavar="FILE", help="write the table as CSV")
    p.add_argument("--json", metavar="FILE", help="write the table as JSON")
    p.add_argument("--force", action="store_true", help="overwrite existing --csv/--json files")
    _add_reading(p)

    p = sub.add_parser("thermo", help=COMMANDS["thermo"], description=COMMANDS["thermo"])
    p.add_argument("directory", metavar="DIR", help=DIR_HELP)
    p.add_argument("--csv", metavar="FILE", help="write the table (G broken down by motion) as CSV")
    p.add_argument("--long", metavar="FILE", help="write every quantity, RRHO and the model's, as CSV: "
                   "one row per file, temperature and quantity")
    p.add_argument("--json", metavar="FILE", help="write the full record of each file as JSON")
    p.add_argument("--force", action="store_true", help="overwrite existing --csv/--long/--json files")
    _add_conditions(p, reaction_file=False)
    _add_reading(p)

    for name in ("run", "demo"):
        p = sub.add_parser(name, help=COMMANDS[name], description=COMMANDS[name])
        if name == "run":
            p.add_argument("directory", metavar="DIR", help=DIR_HELP)
            p.add_argument("--reactions", metavar="FILE", help="reaction file (TOML); without it, one "
                           "species per frequency log and no reactions")
        out = "qcthermo_results" if name == "run" else "demo_results"
        p.add_argument("--out", metavar="DIR", default=out, help=f"output directory ({out})")
        p.add_argument("--force", action="store_true", help="write into an --out that holds other files")
        _add_conditions(p)
        _add_reading(p)

    p = sub.add_parser("simulate", help=COMMANDS["simulate"], description=COMMANDS["simulate"] +
                       " (docs/simulate.md); writes every file of run plus the simulation's")
    p.add_argument("directory", metavar="DIR", help=DIR_HELP)
    p.add_argument("--reactions", metavar="FILE", required=True, help="reaction file (TOML) with a [simulation] table")
    p.add_argument("--out", metavar="DIR", default="simulation_results", help="output directory (simulation_results)")
    p.add_argument("--force", action="store_true", help="write into an --out that holds other files")
    g = p.add_argument_group("simulation (override the file's [simulation])")
    g.add_argument("--method", default=None, choices=["LSODA", "BDF", "Radau"], help="stiff solver (LSODA)")
    g.add_argument("--rtol", type=_positive, default=None, metavar="R", help="relative tolerance (1e-8)")
    g.add_argument("--atol", type=_positive, default=None, metavar="MOL_L", help="absolute tolerance, mol/L (1e-20)")
    g.add_argument("--engine", default=None, choices=["scipy", "cantera"],
                   help="integrator: qcthermo's own (scipy) or a Cantera ideal-gas reactor on the run's thermo.yaml")
    g.add_argument("--time-axis", default="auto", choices=["auto", "log", "linear"],
                   help="time axis of the concentration figure (auto: log when the times span > 3 decades)")
    _add_conditions(p)
    _add_reading(p)

    p = sub.add_parser("profile", help=COMMANDS["profile"], description=COMMANDS["profile"])
    p.add_argument("reactions", metavar="FILE", help="reaction file (TOML) with [[profile]] tables")
    p.add_argument("-o", "--output", metavar="FIG", default="profile.svg",
                   help="figure file: .svg, .png or .pdf (profile.svg)")
    p.add_argument("--directory", metavar="DIR", default=None,
                   help="where the logs are (default: the reaction file's folder)")
    p.add_argument("--quantity", default="G", choices=["G", "G_rrho", "H", "E_zpe", "E"],
                   help="what the levels show (G under the chosen low-mode model)")
    p.add_argument("--profile", dest="profiles", action="append", metavar="NAME",
                   help="only this profile (repeatable, overlaid); default: every profile, those that start from "
                   "the same species (or share an `overlay` group) overlaid, the others in panels of their own")
    p.add_argument("--precision", type=_count(0, 6), default=1, help="decimals of the labels, 0 to 6 (1)")
    p.add_argument("--force", action="store_true", help="overwrite an existing figure")
    _add_conditions(p)
    _add_reading(p)

    p = sub.add_parser("init", help=COMMANDS["init"], description=COMMANDS["init"])
    p.add_argument("directory", metavar="DIR", help=DIR_HELP)
    p.add_argument("-o", "--output", metavar="FILE", default=None,
                   help="where to write it (default: DIR/reactions.toml)")
    p.add_argument("--force", action="store_true", help="overwrite an existing file")
    _add_reading(p)
    return parser


def _printable_streams() -> None:
    """stdout and stderr write a file name that is not UTF-8 as ``\\xNN`` (qcthermo.fileio.display)
    instead of raising UnicodeEncodeError half-way through a table or a message."""
    from .fileio import DISPLAY_ERRORS

    for stream in (sys.stdout, sys.stderr):
        if hasattr(stream, "reconfigure"):  # io.TextIOWrapper; a replaced stream keeps its own rules
            stream.reconfigure(errors=DISPLAY_ERRORS)


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 2
    from .errors import QcthermoError
    from .fileio import display

    _printable_streams()
    try:
        command = importlib.import_module(f"qcthermo.commands.{args.command}")
        return int(command.main(args) or 0)
    except QcthermoError as err:
        print(f"qcthermo {args.command}: error: {display(str(err))}", file=sys.stderr)
        return 2
    except OSError as err:  # a write no atomic file covers (or the terminal itself): one line, not a traceback
        where = f"{err.filename}: " if err.filename else ""
        print(f"qcthermo {args.command}: error: {display(where + str(err.strerror or err))}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("qcthermo: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())

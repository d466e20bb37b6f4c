"""Reading production-size logs: qcthermo's read_log (cclib on a slice, slices.py) against a plain cclib loop.

Production optimisations print 5-50 MB (50-100 atoms, tens of steps). The real logs at hand are small, so
for each program with a slicer this builds, in a temporary folder, logs of about 5 MB and 30 MB from a real
optimisation log by repeating one of its middle steps (and, for Gaussian, an opt+freq log: the built
optimisation followed by a real frequency job as a Link1 step); for NWChem and xTB from real opt+freq logs by
repeating an optimisation step, for Psi4 and GAMESS (whose real logs at hand are frequency jobs) by repeating a
displaced-geometry calculation of their finite-difference Hessian (``GROWN``). Then, in this one process, for each built
log (CPU time, the best of ``--repeat`` runs; the machine is shared and a busy neighbour only ever adds time):

- ``cclib.io.ccread`` on the file (the baseline: what a plain cclib loop costs per file);
- ``read_log`` with slicing off (``QCTHERMO_NO_SLICE=1``), with slicing on but without the one-pass phrase index
  (readers/literals.py: every search a ``str.find``), and with both (the default), and the ratio ccread / read_log
  (targets: >= 10x at 5 MB, >= 20x at 30 MB);
- read_log's rate in MB/s next to the limits of the same file: reading it from the page cache, one pass
  of a line-anchored bytes regex over it, and the phrase index's one pass (Hyperscan) over it;
- the share of the text cclib is given (the slice), and the slice's own cost (with the phrase index, as in a read);
- the peak memory of read_log (tracemalloc) against the file's size (target: flat, about one copy of it);
- a check that the built log reads as the real one does (energy, frequencies) and the same with slicing on
  and off (every field).

Then the small real logs of every program (sample_outputs/ and the third-party folder beside the project), each
marked with whether it has a slicer: a loop of ccread against a loop of read_log with slicing off and on (target
>= 1.5x; slicing must not slow them).
Run: ``.venv/bin/python benchmarks/bench_read.py [--sizes 5,30] [--repeat 2]``.
"""

from __future__ import annotations

import argparse
import contextlib
import dataclasses
import logging
import os
import re
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np

from qcthermo.errors import LogReadError
from qcthermo.readers import core, literals, slices
from qcthermo.readers.source import load
from qcthermo.readers.text import indexed

ROOT = Path(__file__).resolve().parent.parent
THIRD_PARTY = ROOT.parent / "shared" / "fixtures" / "third-party-logs"
SOURCES = [THIRD_PARTY, ROOT / "sample_outputs"]

#: program -> (real optimisation log, the phrase that starts each of its steps, real frequency job or None)
BUILDS = {
    "gaussian": ("gaussian16/dvb_gopt.out", "Input orientation:", "gaussian16/dvb_ir.out"),
}
#: (program, kind, real log, the phrase that starts each of its repeated blocks): real logs that already end with
#: their frequency job, grown by repeating one of their optimisation steps (NWChem, xTB) or one of the
#: displaced-geometry calculations of their finite-difference Hessian (Psi4, GAMESS: the real logs at hand of
#: these two are frequency jobs, no optimisations); paths in the third-party folder or the project
GROWN = [
    ("nwchem", "opt+freq", "sample_outputs/solution/acetate.out", "          Step  "),
    ("nwchem", "opt+fd-freq COSMO", "sample_outputs/solvent/methanediol.out", "          Step  "),
    ("psi4", "fd-freq", "psi4-1.2.1/dvb_ir_rhf.out", "Loading displacement"),
    ("gamess", "fd-hessian", "gamess-us2018/nh3_ts_ir.out", "NUCLEAR COORDINATES"),
    ("xtb", "opt+hess", "sample_outputs/conformers/pentane_tt.out", " CYCLE "),
]
#: a line-anchored regex: the engine visits every byte (no literal-prefix skip), the bound of any text pass
_LINE_REGEX = re.compile(rb"^ SCF Done:.*$", re.M)


def repeated_steps(text: str, phrase: str, size: int) -> str:
    """``text`` with its second step (from the second line holding ``phrase`` to the third) repeated until the
    whole is about ``size`` characters; the other steps, the last one included, as they were."""
    starts = slices.line_starts(text, phrase)
    if len(starts) < 3:
        raise ValueError(f"fewer than 3 steps of {phrase!r}")
    step = text[starts[1] : starts[2]]
    copies = max(1, (size - len(text)) // len(step))
    return text[: starts[2]] + step * copies + text[starts[2] :]


def gaussian_link1(opt: str, freq: str) -> str:
    """A Gaussian opt+freq log: the optimisation, then the frequency job from its Link0 lines as a Link1 step."""
    return opt + " Link1:  Proceeding to internal job step number  2.\n" + freq[freq.index(" %chk=") :]


def build(folder: Path, sizes_mb: list[float]) -> list[tuple[str, str, Path, Path]]:
    """(program, kind, built file, the real log whose last job it ends with) for every program and size."""
    built = []
    for program, (opt_name, phrase, freq_name) in BUILDS.items():
        opt_path = THIRD_PARTY / opt_name
        if not opt_path.is_file():
            print(f"{program}: {opt_name} absent (../shared/fixtures/third-party-logs): skipped")
            continue
        opt = load(opt_path).text
        for mb in sizes_mb:
            kinds = [("opt", repeated_steps(opt, phrase, int(mb * 2**20)), opt_path)]
            if freq_name and (THIRD_PARTY / freq_name).is_file():
                freq = load(THIRD_PARTY / freq_name).text
                body = repeated_steps(opt, phrase, int(mb * 2**20) - len(freq))
                kinds.append(("opt+freq", gaussian_link1(body, freq), THIRD_PARTY / freq_name))
            for kind, text, original in kinds:
                path = folder / f"{program}_{kind}_{mb:g}MB.log"
                path.write_text(text)
                built.append((program, kind, path, original))
    for program, kind, name, phrase in GROWN:
        real = THIRD_PARTY / name if (THIRD_PARTY / name).is_file() else ROOT / name
        if not real.is_file():
            print(f"{program}: {name} absent: skipped")
            continue
        text = load(real).text
        for mb in sizes_mb:
            path = folder / f"{program}_{kind.replace(' ', '_')}_{mb:g}MB.log"
            path.write_text(repeated_steps(text, phrase, int(mb * 2**20)))
            built.append((program, kind, path, real))
    return built


def best(repeat: int, func, *args):
    """(least CPU seconds of ``repeat`` runs, the last value): CPU time, because the machine is shared and a
    busy neighbour stretches wall-clock time by several times while it barely changes CPU time."""
    times = []
    for _ in range(repeat):
        start = time.process_time()
        value = func(*args)
        times.append(time.process_time() - start)
    return min(times), value


def ccread(path: Path):
    import cclib

    try:
        return cclib.io.ccread(str(path), loglevel=logging.CRITICAL + 1)
    except Exception:  # cclib 1.8.1 raises on some real NWChem logs (cclib_data.known_failure): timed all the same
        return None


@contextlib.contextmanager
def slicing(on: bool):
    """Slicing on or off (QCTHERMO_NO_SLICE) for the block."""
    before = os.environ.pop(slices.NO_SLICE_VARIABLE, None)
    if not on:
        os.environ[slices.NO_SLICE_VARIABLE] = "1"
    try:
        yield
    finally:
        os.environ.pop(slices.NO_SLICE_VARIABLE, None)
        if before is not None:
            os.environ[slices.NO_SLICE_VARIABLE] = before


@contextlib.contextmanager
def indexing(on: bool):
    """The one-pass phrase index (readers/literals.py) on or off for the block (off: every search a str.find)."""
    scan = literals.scan
    if not on:
        literals.scan = lambda program, data: None
    try:
        yield
    finally:
        literals.scan = scan


def read(path: Path, sliced: bool = True, indexed: bool = True):
    with slicing(sliced), indexing(indexed):
        return core.read_log(path)


def differing_fields(a, b) -> list[str]:
    """Fields of two Calculations that differ (arrays exactly)."""
    out = []
    for field in dataclasses.fields(a):
        x, y = getattr(a, field.name), getattr(b, field.name)
        if isinstance(x, np.ndarray) or isinstance(y, np.ndarray):
            same = x is not None and y is not None and x.shape == y.shape and np.array_equal(x, y, equal_nan=True)
        else:
            same = x == y
        if not same and field.name != "path":
            out.append(field.name)
    return out


def peak_mb(func, *args) -> float:
    """Peak traced memory (MB) of one call."""
    tracemalloc.start()
    try:
        func(*args)
        return tracemalloc.get_traced_memory()[1] / 2**20
    finally:
        tracemalloc.stop()


def bench_built(built, repeat: int) -> None:
    print(f"{'log':<28}{'MB':>6}{'ccread s':>10}{'whole s':>9}{'no index s':>11}{'read s':>8}{'ratio':>7}"
          f"{'read MB/s':>11}{'cache MB/s':>12}{'regex MB/s':>12}{'scan MB/s':>11}{'slice %':>9}{'slice ms':>10}"
          f"{'peak/size':>11}  check")
    for program, kind, path, original in built:
        size = path.stat().st_size / 2**20
        t_cache, data = best(3, path.read_bytes)
        t_regex, _ = best(3, lambda d: sum(1 for _ in _LINE_REGEX.finditer(d)), data)
        t_cc, _ = best(repeat, ccread, path)
        t_whole, whole = best(1, read, path, False)
        t_plain, plain = best(1, read, path, True, False)
        t_read, calc = best(repeat, read, path)
        program_of = load(path).program
        t_scan, _ = best(3, literals.scan, program_of, data)
        source = load(path, scan=literals.scan)
        text = source.text
        with indexed(text, source.literals):  # as read_log slices: with the phrase index
            t_slice, piece = best(3, slices.cclib_slice, program, text)
        share = 100 * len(piece or text) / len(text)
        peak = peak_mb(read, path)
        reference = read(original)
        same = not differing_fields(whole, calc) and not differing_fields(plain, calc)
        as_real = calc.energy == reference.energy and (
            (calc.frequencies is None and reference.frequencies is None)
            or np.array_equal(calc.frequencies, reference.frequencies))
        check = ("ok" if same and as_real else
                 f"DIFFERS: {differing_fields(whole, calc) or differing_fields(plain, calc)} "
                 f"{'' if as_real else 'energy/frequencies'}")
        print(f"{program + ' ' + kind:<28}{size:6.1f}{t_cc:10.2f}{t_whole:9.2f}{t_plain:11.3f}{t_read:8.3f}"
              f"{t_cc / t_read:6.1f}x{size / t_read:11.0f}{size / t_cache:12.0f}{size / t_regex:12.0f}"
              f"{size / t_scan:11.0f}{share:9.2f}{1000 * t_slice:10.1f}{peak / size:11.2f}  {check}")


def bench_small(repeat: int) -> None:
    """ccread loop against read_log loop over the real logs of every program (a slicer or not)."""
    logs: dict[str, list[Path]] = {}
    for root in SOURCES:
        for path in sorted(root.rglob("*")) if root.is_dir() else []:
            if path.suffix.lower() in (".out", ".log") and "inputs" not in path.parts:
                with contextlib.suppress(Exception):
                    program = load(path).program
                    if program:
                        logs.setdefault(program, []).append(path)
    print("\nsmall real logs (loop over all of a program's logs, best of", repeat, "runs)")
    print(f"{'program':<12}{'slicer':>7}{'logs':>5}{'MB':>7}{'ccread s':>10}{'whole s':>9}{'read s':>9}{'ratio':>7}")
    for program, paths in sorted(logs.items()):
        size = sum(p.stat().st_size for p in paths) / 2**20
        t_cc, _ = best(repeat, lambda ps: [ccread(p) for p in ps], paths)
        t_whole, _ = best(repeat, lambda ps: [read_or_none(p, False) for p in ps], paths)
        t_read, _ = best(repeat, lambda ps: [read_or_none(p) for p in ps], paths)
        sliced = "yes" if program in slices.SLICERS else "no"
        print(f"{program:<12}{sliced:>7}{len(paths):5d}{size:7.2f}{t_cc:10.3f}{t_whole:9.3f}{t_read:9.3f}"
              f"{t_cc / t_read:6.2f}x")


def read_or_none(path: Path, sliced: bool = True):
    """read_log's record, or None for a log it refuses (timed all the same: a survey reads those too)."""
    try:
        return read(path, sliced)
    except LogReadError:
        return None


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--sizes", default="5,30", help="sizes of the built logs, MB (comma-separated)")
    parser.add_argument("--repeat", type=int, default=2, help="runs per timing (the best is kept)")
    args = parser.parse_args()
    import cclib  # noqa: F401 - imported before any timing
    with tempfile.TemporaryDirectory() as tmp:
        built = build(Path(tmp), [float(s) for s in args.sizes.split(",")])
        bench_built(built, args.repeat)
    bench_small(max(args.repeat, 3))


if __name__ == "__main__":
    main()

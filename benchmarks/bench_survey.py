"""Survey speed and memory: cold (empty cache) against a plain cclib loop, warm (cached) against cold.

For each tree size a fresh process builds a temporary tree of copies of the real logs (the third-party
folder beside the project, if present, and sample_outputs/), each copy made distinct by trailing
newlines so that the cache cannot reuse one copy's entry for another, then times in that one process:

- a plain loop of ``cclib.io.ccread`` over the files (the baseline: one core, no audit, no cache);
- a plain loop of qcthermo's reader (the same work as a cold survey on one core: parallel speed-up);
- a cold survey with ``--jobs`` workers and a fresh cache directory;
- a warm survey (everything cached);
- a second cold survey under tracemalloc for the parent's peak memory; the workers' peak resident size
  comes from ``resource.getrusage(RUSAGE_CHILDREN)``;
- end to end, each in a fresh process (start-up and the import of cclib included, in every worker of
  the survey): ``qcthermo survey DIR --jobs N --quiet`` with an empty cache against a script running the
  plain cclib loop.

Each timing is the best of ``--repeat`` runs (the least wall-clock time and, separately, the least CPU
time), because the machine this is run on is shared and a busy neighbour only ever adds time.

Targets (printed, not asserted): cold >= 1.7x the loop with 2 jobs, warm >= 20x cold, memory that does
not grow with the total size of the logs. Run: ``.venv/bin/python benchmarks/bench_survey.py``.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import logging
import os
import resource
import subprocess
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SOURCES = [ROOT.parent / "shared" / "fixtures" / "third-party-logs", ROOT / "sample_outputs"]
SUFFIXES = (".out", ".log", ".output", ".nwo")


def source_logs() -> list[Path]:
    return sorted(p for d in SOURCES if d.is_dir() for p in d.rglob("*") if p.suffix.lower() in SUFFIXES)


def build_tree(root: Path, n_files: int) -> int:
    """``n_files`` distinct copies of the source logs under ``root``, 50 per folder; total bytes."""
    logs = source_logs()
    total = 0
    for i in range(n_files):
        src = logs[i % len(logs)]
        dest = root / f"batch{i // 50:02d}" / f"{i:04d}_{src.name}"
        dest.parent.mkdir(parents=True, exist_ok=True)
        data = src.read_bytes() + b"\n" * (1 + i // len(logs))
        dest.write_bytes(data)
        total += len(data)
    return total


def cpu_seconds() -> float:
    """CPU time (user + system) of this process and of its finished children, s."""
    own, children = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + children.ru_utime + children.ru_stime


def timed(repeat: int, func, *args, **kwargs):
    """(wall s, CPU s, value of the last run): the best of ``repeat`` runs; CPU time is the steadier."""
    walls, cpus = [], []
    for _ in range(repeat):
        start, cpu = time.perf_counter(), cpu_seconds()
        value = func(*args, **kwargs)
        walls.append(time.perf_counter() - start)
        cpus.append(cpu_seconds() - cpu)
    return min(walls), min(cpus), value


#: the baseline as a script of its own, for the end-to-end comparison
CCLIB_SCRIPT = """
import contextlib, logging, sys
import cclib
for path in sys.argv[1:]:
    with contextlib.suppress(Exception):
        cclib.io.ccread(path, loglevel=logging.CRITICAL)
"""


def run_process(args: list[str], env: dict | None = None) -> None:
    subprocess.run(args, check=False, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env)


def fresh_cache_survey(tree: Path, tmp: Path, jobs: int):
    """A cold survey in this process: a new, empty cache directory each time."""
    from qcthermo.survey import survey

    cache = tempfile.mkdtemp(dir=tmp, prefix="cache-")
    os.environ["QCTHERMO_CACHE_DIR"] = cache
    return survey(tree, jobs=jobs)


def fresh_cache_command(tree: Path, tmp: Path, jobs: int) -> None:
    """``qcthermo survey`` as a user runs it: a new process, an empty cache."""
    env = dict(os.environ, QCTHERMO_CACHE_DIR=tempfile.mkdtemp(dir=tmp, prefix="cache-"))
    run_process([sys.executable, "-m", "qcthermo", "survey", str(tree), "--jobs", str(jobs), "--quiet"], env)


def cclib_loop(paths: list[Path]) -> int:
    """The baseline: what a script of five lines does. Returns how many files cclib read."""
    import cclib

    read = 0
    for path in paths:
        with contextlib.suppress(Exception):  # ORCA 6 and some NWChem outputs raise inside cclib
            read += cclib.io.ccread(str(path), loglevel=logging.CRITICAL) is not None
    return read


def reader_loop(paths: list[Path]) -> None:
    """qcthermo's reader in a plain loop: the same work as a cold survey, on one core, without cache."""
    from qcthermo.survey import default_reader, read_one

    for path in paths:
        read_one(default_reader, str(path))


def measure(n_files: int, jobs: int, repeat: int) -> dict:
    import cclib  # noqa: F401  imported before any timing, for the loop and for the workers alike

    import qcthermo.readers  # noqa: F401
    from qcthermo.survey import survey

    with tempfile.TemporaryDirectory(prefix="qcthermo-bench-") as tmp:
        tree = Path(tmp) / "logs"
        total_bytes = build_tree(tree, n_files)
        paths = sorted(tree.rglob("*.*"))
        t_loop, cpu_loop, cclib_read = timed(repeat, cclib_loop, paths)
        t_reader, cpu_reader, _ = timed(repeat, reader_loop, paths)
        t_cold, cpu_cold, cold = timed(repeat, fresh_cache_survey, tree, Path(tmp), jobs)
        t_warm, cpu_warm, warm = timed(repeat, survey, tree, jobs=jobs)  # the last cold run's cache
        assert warm.stats["parsed"] == 0, warm.stats
        os.environ["QCTHERMO_CACHE_DIR"] = str(Path(tmp) / "cache-memory")
        tracemalloc.start()
        survey(tree, jobs=jobs)
        parent_peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        children_kib = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss  # KiB on Linux
        script = [sys.executable, "-c", CCLIB_SCRIPT, *map(str, paths)]
        t_loop_e2e, cpu_loop_e2e, _ = timed(repeat, run_process, script)
        t_cmd, cpu_cmd, _ = timed(repeat, fresh_cache_command, tree, Path(tmp), jobs)
    return {
        "files": n_files, "MB": total_bytes / 1e6, "jobs": jobs, "loop_s": t_loop, "cclib_read": cclib_read,
        "reader_s": t_reader, "cold_s": t_cold, "load": os.getloadavg()[0], "loop_cpu": cpu_loop,
        "reader_cpu": cpu_reader, "cold_cpu": cpu_cold, "warm_cpu": cpu_warm,
        "warm_s": t_warm, "counts": cold.counts(), "parent_peak_MB": parent_peak / 1e6,
        "workers_maxrss_MB": children_kib / 1024, "same_rows": cold.rows == warm.rows, "repeat": repeat,
        "loop_e2e_s": t_loop_e2e, "loop_e2e_cpu": cpu_loop_e2e, "cmd_s": t_cmd, "cmd_cpu": cpu_cmd,
    }


def report(r: dict) -> None:
    mb, n = r["MB"], r["files"]
    print(f"{n} files, {mb:.1f} MB ({r['counts']}), --jobs {r['jobs']}, best of {r['repeat']}, "
          f"load average {r['load']:.1f}")
    for label, key in (("cclib loop", "loop_s"), ("reader loop", "reader_s"), ("cold survey", "cold_s"),
                       ("warm survey", "warm_s")):
        cpu = r[key.replace("_s", "_cpu")]
        print(f"  {label:12s} {r[key]:8.3f} s  {n / r[key]:9.1f} files/s  {mb / r[key]:8.1f} MB/s   CPU {cpu:7.3f} s")
    print(f"  (the cclib loop got a result from {r['cclib_read']} of {n} files; it fails fast on the others)")
    print(f"  cold vs cclib loop: {r['loop_s'] / r['cold_s']:.2f}x (aim >= 1.7)   "
          f"cold vs reader loop: {r['reader_s'] / r['cold_s']:.2f}x   "
          f"warm vs cold: {r['cold_s'] / r['warm_s']:.1f}x (aim >= 20)   warm rows == cold rows: {r['same_rows']}")
    # what the wall-clock ratio would be on idle cores, from CPU time: the loop uses one core, the survey's
    # CPU time spreads over `jobs` workers (the parent's share is small)
    idle = r["loop_cpu"] / (r["cold_cpu"] / r["jobs"])
    print(f"  from CPU time, on {r['jobs']} idle cores: cold vs cclib loop ~{idle:.2f}x, "
          f"cold vs reader loop ~{r['reader_cpu'] / (r['cold_cpu'] / r['jobs']):.2f}x")
    print(f"  end to end (fresh processes, imports included): cclib script {r['loop_e2e_s']:.3f} s "
          f"(CPU {r['loop_e2e_cpu']:.3f} s), qcthermo survey {r['cmd_s']:.3f} s (CPU {r['cmd_cpu']:.3f} s): "
          f"{r['loop_e2e_s'] / r['cmd_s']:.2f}x wall, ~{r['loop_e2e_cpu'] / (r['cmd_cpu'] / r['jobs']):.2f}x "
          f"from CPU time on {r['jobs']} idle cores")
    print(f"  peak memory: parent (tracemalloc) {r['parent_peak_MB']:.1f} MB "
          f"({1000 * r['parent_peak_MB'] / n:.1f} kB per file: the records kept, not the {1000 * mb / n:.0f} kB logs), "
          f"workers (max RSS) {r['workers_maxrss_MB']:.1f} MB")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="150,450", help="tree sizes, files (150,450)")
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--repeat", type=int, default=3, help="runs per timing; the best is kept (3)")
    parser.add_argument("--child", type=int, default=None, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child is not None:
        print(json.dumps(measure(args.child, args.jobs, args.repeat)))
        return 0
    if not source_logs():
        print("no source logs found", file=sys.stderr)
        return 1
    print(f"sources: {len(source_logs())} logs; {os.cpu_count()} cores; python {sys.version.split()[0]}")
    if os.getloadavg()[0] > (os.cpu_count() or 1):
        # with the kernel's session autogroups, a session's processes share one slice of a saturated machine
        print(f"note: load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores: wall-clock ratios of "
              "parallel work mean little here; the CPU-time estimates below do not depend on the load")
    for size in (int(s) for s in args.sizes.split(",")):
        child = [sys.executable, __file__, "--child", str(size), "--jobs", str(args.jobs), "--repeat", str(args.repeat)]
        out = subprocess.run(child, capture_output=True, text=True, check=True).stdout
        report(json.loads(out.strip().splitlines()[-1]))
    return 0


if __name__ == "__main__":
    sys.exit(main())

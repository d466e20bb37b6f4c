"""The warm survey at campaign size: 100,000 cached files, against a cold survey and against a bare walk.

The parent process builds one temporary tree: ``--files`` copies of the smallest real logs (the third-party
folder beside the project, if present, and sample_outputs/; each at most ``--max-kb``), 50 per folder, each
copy made distinct by trailing newlines (as benchmarks/bench_survey.py does). The first ``--cold`` of them lie
under ``cold/``, the others under ``rest/``. It then times the floor: a bare recursive ``os.scandir`` walk
that stats every file (what any survey that trusts size and mtime must do at least).

Then, for each checkout of qcthermo given (``--baseline DIR``: the code before a change, e.g. made with
``git archive``; then this checkout), a fresh process with that code on ``sys.path``:

- a cold survey of ``cold/`` (``--jobs`` workers, an empty cache), once: the reader runs on every file;
- a warm survey of ``cold/`` (best of ``--repeat``): the warm/cold ratio;
- the cache filled for ``rest/`` without parsing: each file's row is the row of the copy of the same log under
  ``cold/`` (what the reader gave for those bytes less the trailing newlines), with the file's own path, size,
  mtime and BLAKE2b digest, written by SQL whatever the cache's layout (its key columns are the same);
- a warm survey of the whole tree (best of ``--repeat``; wall and CPU time), then once more under tracemalloc;
- in a fresh process: peak resident size of a warm survey of the whole tree (``ru_maxrss``) less that of the
  process before the survey (Python, qcthermo imported);
- ``qcthermo survey TREE --quiet --jobs 1`` in a fresh process (start-up and imports included).

Targets (issue 18; printed, not asserted): warm >= 30x cold per file, 100,000 cached files in <= 2 s, memory
flat (not growing with the logs' size). Run: ``.venv/bin/python benchmarks/bench_warm.py [--baseline DIR]``.
The tree takes ~``files`` x 30 kB of disk for the length of the run.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import resource
import sqlite3
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from bench_survey import ROOT, SOURCES, SUFFIXES, cpu_seconds, timed

PER_FOLDER = 50
CACHE_FILE = "parse-cache.sqlite"
KEY_COLUMNS = ("path", "size", "mtime_ns", "digest")


def small_logs(max_bytes: int) -> list[Path]:
    return sorted(p for d in SOURCES if d.is_dir() for p in d.rglob("*")
                  if p.suffix.lower() in SUFFIXES and p.stat().st_size <= max_bytes)


def build_tree(root: Path, n_files: int, n_cold: int, logs: list[Path]) -> dict:
    """The copies (cold/ then rest/); for every copy under rest/, the copy under cold/ of the same log and its
    own digest: {"rest relpath": ["cold relpath", digest]}."""
    texts = [p.read_bytes() for p in logs]
    twins = {}
    for i in range(n_files):
        part, j = ("cold", i) if i < n_cold else ("rest", i - n_cold)
        k = i % len(logs)
        rel = f"{part}/batch{j // PER_FOLDER:04d}/{i:06d}_{logs[k].name}"
        data = texts[k] + b"\n" * (1 + i // len(logs))
        (root / rel).parent.mkdir(parents=True, exist_ok=True)
        (root / rel).write_bytes(data)
        if part == "rest":
            twin = i % len(logs) + len(logs) * ((i // len(logs)) % (n_cold // len(logs)))
            twin_rel = f"cold/batch{twin // PER_FOLDER:04d}/{twin:06d}_{logs[k].name}"
            twins[rel] = [twin_rel, hashlib.blake2b(data).hexdigest()]
    return twins


def scandir_walk(directory: str) -> int:
    """The floor: every file of the tree listed and stat-ed, nothing else. Returns the count."""
    n = 0
    with os.scandir(directory) as it:
        for entry in it:
            if entry.is_dir():
                n += scandir_walk(entry.path)
            else:
                entry.stat()
                n += 1
    return n


def fill_cache(cache: Path, tree: Path, twins: dict) -> None:
    """Rows for the files under rest/, copied from their twins' rows, each under its own key."""
    db = sqlite3.connect(cache / CACHE_FILE)
    columns = [row[1] for row in db.execute("PRAGMA table_info(parsed)")]
    rest = [c for c in columns if c not in KEY_COLUMNS]
    sql = (f"INSERT OR REPLACE INTO parsed ({', '.join(KEY_COLUMNS + tuple(rest))}) "
           f"SELECT ?, ?, ?, ?, {', '.join(rest)} FROM parsed WHERE path = ?")
    values = []
    for rel, (twin, digest) in twins.items():
        st = os.stat(tree / rel)
        values.append((os.fsencode(os.path.abspath(tree / rel)), st.st_size, st.st_mtime_ns, digest,
                       os.fsencode(os.path.abspath(tree / twin))))
    with db:
        db.executemany(sql, values)
    db.close()


def measure(tree: Path, cache: Path, twins_file: Path, jobs: int, repeat: int) -> dict:
    """In a process with the code under test on sys.path (see main)."""
    import tracemalloc

    os.environ["QCTHERMO_CACHE_DIR"] = str(cache)
    from qcthermo.readers import preload
    from qcthermo.survey import survey

    preload()  # cclib imported before any timing
    t_cold, cpu_cold, cold = timed(1, survey, tree / "cold", jobs=jobs)
    t_warm, cpu_warm, warm = timed(repeat, survey, tree / "cold", jobs=jobs)
    assert warm.stats["parsed"] == 0 and warm.rows == cold.rows, warm.stats
    fill_cache(cache, tree, json.loads(twins_file.read_text()))
    t_all, cpu_all, everything = timed(repeat, survey, tree, jobs=jobs)
    assert everything.stats["parsed"] == 0, everything.stats
    tracemalloc.start()
    survey(tree, jobs=jobs)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return {"cold_files": len(cold.rows), "files": len(everything.rows), "cold_s": t_cold, "cold_cpu": cpu_cold,
            "warm_cold_s": t_warm, "warm_cold_cpu": cpu_warm, "warm_s": t_all, "warm_cpu": cpu_all,
            "tracemalloc_MB": peak / 1e6, "counts": everything.counts()}


def rss_child(tree: Path, cache: Path) -> dict:
    """Peak resident size of a warm survey in a fresh process, less what the process held before it."""
    os.environ["QCTHERMO_CACHE_DIR"] = str(cache)
    from qcthermo.survey import survey

    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    survey(tree, jobs=1)
    after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return {"rss_before_MB": before / 1024, "rss_peak_MB": after / 1024}


def child(code: Path, *args: str) -> dict:
    env = dict(os.environ, PYTHONPATH=str(code))
    # run outside any checkout: the current directory comes first on sys.path
    out = subprocess.run([sys.executable, __file__, *args], capture_output=True, text=True, env=env, cwd="/")
    if out.returncode:
        raise SystemExit(f"child {args[0]} with {code} failed:\n{out.stderr}")
    return json.loads(out.stdout.strip().splitlines()[-1])


def command(code: Path, tree: Path, cache: Path) -> tuple[float, float]:
    """``qcthermo survey TREE --quiet --jobs 1`` in a fresh process: (wall s, CPU s)."""
    env = dict(os.environ, PYTHONPATH=str(code), QCTHERMO_CACHE_DIR=str(cache))
    start, cpu = time.perf_counter(), cpu_seconds()
    subprocess.run([sys.executable, "-m", "qcthermo", "survey", str(tree), "--quiet", "--jobs", "1"],
                   stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env, check=False, cwd="/")
    return time.perf_counter() - start, cpu_seconds() - cpu


def report(label: str, r: dict, floor: float) -> None:
    n, n_cold = r["files"], r["cold_files"]
    per_cold = r["cold_s"] / n_cold
    print(f"{label}:")
    print(f"  cold survey of {n_cold} files: {r['cold_s']:.2f} s (CPU {r['cold_cpu']:.2f} s); "
          f"warm {r['warm_cold_s']:.3f} s (CPU {r['warm_cold_cpu']:.3f} s): "
          f"warm/cold {r['cold_s'] / r['warm_cold_s']:.1f}x wall, "
          f"{r['cold_cpu'] / r['warm_cold_cpu']:.1f}x CPU (aim >= 30)")
    print(f"  warm survey of {n} files: {r['warm_s']:.3f} s (CPU {r['warm_cpu']:.3f} s; aim <= 2 s); "
          f"per file {1e6 * r['warm_s'] / n:.1f} us against {1e6 * per_cold:.0f} us cold: "
          f"{per_cold * n / r['warm_s']:.0f}x; the scandir floor is {floor:.3f} s ({r['warm_s'] / floor:.1f}x it)")
    print(f"  memory of that warm survey: tracemalloc peak {r['tracemalloc_MB']:.1f} MB; peak RSS "
          f"{r['rss_peak_MB']:.0f} MB in a fresh process ({r['rss_before_MB']:.0f} MB before the survey)")
    print(f"  qcthermo survey TREE --quiet --jobs 1 (fresh process): {r['cmd_s']:.3f} s (CPU {r['cmd_cpu']:.3f} s)")
    print(f"  statuses: {r['counts']}")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--files", type=int, default=100_000)
    parser.add_argument("--cold", type=int, default=5_000, help="files surveyed cold (the ratio's base)")
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--max-kb", type=int, default=40, help="largest source log copied, kB")
    parser.add_argument("--baseline", type=Path, action="append", default=[],
                        help="a checkout of qcthermo to measure first (the code before a change)")
    parser.add_argument("--code", type=Path, default=ROOT, help="the checkout measured last (this one)")
    parser.add_argument("--mode", choices=("measure", "rss"), help=argparse.SUPPRESS)
    parser.add_argument("--tree", type=Path, help=argparse.SUPPRESS)
    parser.add_argument("--cache", type=Path, help=argparse.SUPPRESS)
    parser.add_argument("--twins", type=Path, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.mode == "measure":
        print(json.dumps(measure(args.tree, args.cache, args.twins, args.jobs, args.repeat)))
        return 0
    if args.mode == "rss":
        print(json.dumps(rss_child(args.tree, args.cache)))
        return 0
    logs = small_logs(args.max_kb * 1000)
    cold = max(len(logs), args.cold - args.cold % len(logs))
    print(f"{len(logs)} source logs of at most {args.max_kb} kB; {os.cpu_count()} cores; "
          f"load average {os.getloadavg()[0]:.1f}; python {sys.version.split()[0]}")
    with tempfile.TemporaryDirectory(prefix="qcthermo-warm-") as tmp:
        tree = Path(tmp) / "logs"
        start = time.perf_counter()
        twins = build_tree(tree, args.files, cold, logs)
        twins_file = Path(tmp) / "twins.json"
        twins_file.write_text(json.dumps(twins))
        print(f"tree of {args.files} files ({cold} under cold/) built in {time.perf_counter() - start:.0f} s")
        floor, floor_cpu, n = timed(args.repeat, scandir_walk, str(tree))
        print(f"floor: bare os.scandir walk stat-ing {n} files: {floor:.3f} s (CPU {floor_cpu:.3f} s)")
        for k, code in enumerate([*args.baseline, args.code]):
            cache = Path(tmp) / f"cache-{k}"
            r = child(code, "--mode", "measure", "--tree", str(tree), "--cache", str(cache), "--twins",
                      str(twins_file), "--jobs", str(args.jobs), "--repeat", str(args.repeat))
            r.update(child(code, "--mode", "rss", "--tree", str(tree), "--cache", str(cache)))
            r["cmd_s"], r["cmd_cpu"] = min(command(code, tree, cache) for _ in range(args.repeat))
            report(f"{'baseline ' if code != args.code else ''}{code}", r, floor)
            print(f"  load average now {os.getloadavg()[0]:.1f}", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())

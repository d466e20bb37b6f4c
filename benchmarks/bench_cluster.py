"""The Dask back end against the process pool, and what 10^6 files on 100 workers would take (on paper).

In one process: a temporary tree of ``--files`` hard links to the logs of sample_outputs/ (200 per folder),
then, each the best of ``--repeat`` runs and with the parse cache off (hard links share their bytes, and
the pool's workers would reuse one parse for every link by its digest; the cluster's do not look):

- ``survey(tree, jobs=W)``: the process pool, W workers (the baseline);
- ``survey(tree, scheduler=client)``: a LocalCluster of W single-threaded worker processes on 127.0.0.1,
  started before the timing (its start-up is printed apart) and warmed up by one small survey;
- the same with a fresh cache: the client hashes nothing, but stores every record (one writer);
- the scheduler's cost per task: ``--tasks`` trivial tasks submitted and gathered.

Printed: the overhead ratio (cluster / pool, aim <= 1.2 at 10^4 files on 2 workers), the worker's CPU
time per file (the pool workers' CPU over the files), the client's CPU time per file (its main thread:
rows, cache; plus unpickling a batch of records) and, from those, a paper estimate for ``--estimate-files`` files on
``--estimate-workers`` workers: the workers' share N c_file / W, the scheduler's (N / batch) c_task and the
client's N c_client, which run side by side (the run takes about the largest) and at worst one after the
other (their sum). The shared file system's bandwidth is not in it.

Run: ``.venv/bin/python benchmarks/bench_cluster.py`` (about 5 minutes on 2 idle cores).
"""

from __future__ import annotations

import argparse
import logging
import os
import pickle
import resource
import shutil
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_outputs"


def build_tree(root: Path, n_files: int) -> tuple[int, float]:
    """``n_files`` hard links (copies where links are refused) to the sample logs; (files, mean kB)."""
    logs = sorted(p for p in SAMPLES.rglob("*.out"))
    sizes = 0
    for i in range(n_files):
        src = logs[i % len(logs)]
        dest = root / f"batch{i // 200:03d}" / f"{i:05d}_{src.name}"
        dest.parent.mkdir(parents=True, exist_ok=True)
        try:
            os.link(src, dest)
        except OSError:
            shutil.copyfile(src, dest)
        sizes += src.stat().st_size
    return n_files, sizes / n_files / 1e3


def cpu(who: int) -> float:
    usage = resource.getrusage(who)
    return usage.ru_utime + usage.ru_stime


def timed(repeat: int, func, *args, **kwargs) -> dict:
    """Best wall time of ``repeat`` runs, with the CPU time in that run of this thread (the client's own work:
    the main thread, not the event loops of the client and the in-process scheduler) and of the reaped children."""
    best: dict = {}
    for _ in range(repeat):
        start, own, children = time.perf_counter(), time.thread_time(), cpu(resource.RUSAGE_CHILDREN)
        value = func(*args, **kwargs)
        run = {"wall": time.perf_counter() - start, "thread_cpu": time.thread_time() - own,
               "children_cpu": cpu(resource.RUSAGE_CHILDREN) - children, "value": value}
        if not best or run["wall"] < best["wall"]:
            best = run
    return best


def fresh_cache(tmp: Path, func, *args, **kwargs):
    os.environ["QCTHERMO_CACHE_DIR"] = tempfile.mkdtemp(dir=tmp, prefix="cache-")
    return func(*args, **kwargs)


def unpickle_cost(tree: Path, n_files: int = 250) -> float:
    """Seconds per file for the client to unpickle a batch of records as a worker sends them back."""
    from qcthermo.survey import default_reader, read_chunk

    outcomes = read_chunk(default_reader, [str(p) for p in sorted(tree.rglob("*.out"))[:n_files]])
    data = pickle.dumps(outcomes)
    start = time.thread_time()
    pickle.loads(data)
    return (time.thread_time() - start) / len(outcomes)


def per_task_cost(client, n_tasks: int) -> float:
    """Seconds per trivial task, submitted and gathered by the client (scheduler and round trips)."""
    start = time.perf_counter()
    client.gather(client.map(abs, range(n_tasks), pure=False))
    return (time.perf_counter() - start) / n_tasks


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--files", type=int, default=10_000)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--repeat", type=int, default=1, help="runs per timing; the best is kept (1)")
    parser.add_argument("--tasks", type=int, default=2000, help="trivial tasks for the per-task cost (2000)")
    parser.add_argument("--estimate-files", type=int, default=1_000_000)
    parser.add_argument("--estimate-workers", type=int, default=100)
    args = parser.parse_args()
    logging.getLogger("distributed").setLevel(logging.ERROR)
    from distributed import Client, LocalCluster

    from qcthermo import cluster
    from qcthermo.readers import preload
    from qcthermo.survey import survey

    preload()
    w = args.workers
    with tempfile.TemporaryDirectory(prefix="qcthermo-bench-cluster-") as tmp_name:
        tmp = Path(tmp_name)
        n, mean_kb = build_tree(tmp / "logs", args.files)
        tree = tmp / "logs"
        print(f"{n} files (links to {SAMPLES.name}/, mean {mean_kb:.0f} kB), {w} workers, {os.cpu_count()} cores, "
              f"python {sys.version.split()[0]}, load average {os.getloadavg()[0]:.1f}")
        pool = timed(args.repeat, survey, tree, jobs=w, cache=False)
        start = time.perf_counter()
        with LocalCluster(n_workers=w, threads_per_worker=1, processes=True, host="127.0.0.1",
                          dashboard_address=None) as lc, Client(lc) as client:
            started = time.perf_counter() - start
            survey(SAMPLES, scheduler=client, cache=False)  # the workers import the readers and cclib
            dask = timed(args.repeat, survey, tree, scheduler=client, cache=False)
            cached = timed(args.repeat, fresh_cache, tmp, survey, tree, scheduler=client)
            c_task = per_task_cost(client, args.tasks)
        c_client = cached["thread_cpu"] / n + unpickle_cost(tree)
    same = dask["value"].rows == pool["value"].rows == cached["value"].rows
    ratio = dask["wall"] / pool["wall"]
    c_file = pool["children_cpu"] / n
    print(f"  process pool        {pool['wall']:8.2f} s  {n / pool['wall']:7.0f} files/s")
    print(f"  Dask LocalCluster   {dask['wall']:8.2f} s  {n / dask['wall']:7.0f} files/s   (cluster start-up "
          f"{started:.1f} s, not counted)")
    print(f"  Dask, fresh cache   {cached['wall']:8.2f} s  {n / cached['wall']:7.0f} files/s   same rows: {same}")
    print(f"  overhead ratio Dask / pool: {ratio:.2f} (aim <= 1.2); with the cache written: "
          f"{cached['wall'] / pool['wall']:.2f}")
    print(f"  worker CPU per file {1e3 * c_file:.2f} ms; client CPU per file {1e3 * c_client:.3f} ms (rows, cache, "
          f"unpickling); "
          f"scheduler per task {1e3 * c_task:.2f} ms ({len(cluster.batches(list(range(n)), w))} tasks of <= "
          f"{cluster.MAX_BATCH} files here)")
    big_n, big_w = args.estimate_files, args.estimate_workers
    n_tasks = len(cluster.batches(range(big_n), big_w))
    t_workers, t_tasks, t_client = big_n * c_file / big_w, n_tasks * c_task, big_n * c_client
    side_by_side, one_after_other = max(t_workers, t_tasks, t_client), t_workers + t_tasks + t_client
    print(f"  paper estimate, {big_n:.0e} files on {big_w} workers ({n_tasks} tasks): workers {t_workers / 60:.1f} "
          f"min, scheduler {t_tasks / 60:.1f} min, client {t_client / 60:.1f} min -> about {side_by_side / 60:.0f} min "
          f"(at worst {one_after_other / 60:.0f} min), plus the file system's time to serve the bytes")
    return 0


if __name__ == "__main__":
    sys.exit(main())

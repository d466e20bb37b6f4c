"""The Dask back end of the survey: read the logs on the workers of a Dask cluster, keep the cache here.

``survey(directory, scheduler=...)`` sends the files the parse cache does not already hold to a Dask
cluster in batches (:data:`MAX_BATCH` files per task); each worker reads its files by path (the cluster's
shared file system), hashes them and returns one :class:`~qcthermo.survey.Outcome` per file. Only this
process writes the SQLite cache: SQLite on a network file system must never be written by many hosts.
Workers do not open the cache at all, so a file is not looked up by its digest on the cluster (a file
touched or copied since it was cached is parsed again there; docs/cluster.md).

Where the cluster comes from (:func:`target`): a ``distributed.Client`` given by the caller, the address of
a running scheduler (``tcp://HOST:PORT``), ``local:N`` (a LocalCluster of N single-threaded worker
processes on this machine) or ``slurm|pbs|sge|lsf`` (dask-jobqueue, configured by Dask's own
``jobqueue.yaml``; ``workers`` worker processes). dask is imported only here, and only when one of these
is asked for, so ``qcthermo --help`` and a plain survey never load it.

Failures: a worker that dies (crash, out-of-memory killer, node lost) has its tasks run again elsewhere by
the scheduler, up to its ``distributed.scheduler.allowed-failures`` (3 by default); a batch that still
fails is split into one task per file, and a file whose own task fails too is read once more with nothing
else in flight (a dying worker takes the tasks queued on it down with it), so only the file that kills its
workers ends as an error row.
"""

from __future__ import annotations

import contextlib
import importlib.util
import math
import os
import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any

from .errors import QcthermoError
from .survey import Outcome, Reader, _one_line, read_chunk, reader_version

#: most files in one task: enough that the scheduler's per-task cost (~1 ms) is small beside reading them
MAX_BATCH = 250
#: fewest tasks per worker, so that the last batches do not leave workers idle at the end
TASKS_PER_WORKER = 4
#: batch systems dask-jobqueue starts workers on
JOB_QUEUES = {"slurm": "SLURMCluster", "pbs": "PBSCluster", "sge": "SGECluster", "lsf": "LSFCluster"}
#: seconds to wait for a scheduler to answer
CONNECT_TIMEOUT_S = 10
_ADDRESS = re.compile(r"^(tcp|tls|ws|wss|ucx)://[^\s/]+:\d{1,5}/?$")
INSTALL_HINT = "pip install 'qcthermo[cluster]'"


@dataclass(frozen=True)
class Target:
    """Where to read: ``kind`` "client" (``client`` given), "address", "local" or a key of :data:`JOB_QUEUES`;
    ``address`` for "address"; ``workers``: how many worker processes to start (local and job queues)."""

    kind: str
    address: str = ""
    workers: int | None = None
    client: Any = None


def target(scheduler: Any, workers: int | None = None) -> Target:
    """Check what the caller asked for, before any work (and without importing dask): a Client, an address,
    ``local``, ``local:N``, or a batch system. A one-line :class:`QcthermoError` otherwise, also when
    dask.distributed (or dask-jobqueue for a batch system) is not installed."""
    if workers is not None and workers < 1:
        raise QcthermoError(f"workers {workers}: expected 1 or more")
    if not isinstance(scheduler, str):
        if not all(hasattr(scheduler, name) for name in ("submit", "scheduler_info")):  # a distributed.Client
            raise QcthermoError(f"scheduler {scheduler!r}: expected a distributed.Client, tcp://HOST:PORT, "
                                f"local:N or one of {', '.join(JOB_QUEUES)}")
        return Target("client", client=scheduler)
    text = scheduler.strip()
    kind, _, count = text.lower().partition(":")
    if _ADDRESS.match(text):
        result = Target("address", address=text.rstrip("/"))
    elif kind == "local":
        result = Target("local", workers=_local_workers(text, count, workers))
    elif kind in JOB_QUEUES and not count:
        if workers is None:
            raise QcthermoError(f"cluster {text!r}: say how many workers to start (--workers N, or workers=N)")
        result = Target(kind, workers=workers)
    else:
        raise QcthermoError(f"scheduler {text!r}: expected tcp://HOST:PORT (a running Dask scheduler), "
                            f"local:N or one of {', '.join(JOB_QUEUES)}")
    _require("distributed", "dask.distributed")
    if result.kind in JOB_QUEUES:
        _require("dask_jobqueue", "dask-jobqueue")
    return result


def _local_workers(text: str, count: str, workers: int | None) -> int:
    if not count:
        return workers or os.cpu_count() or 1
    if not count.isdigit() or int(count) < 1 or (workers is not None and workers != int(count)):
        raise QcthermoError(f"cluster {text!r}: expected local:N with N >= 1 (and --workers, if given, equal to N)")
    return int(count)


def _require(module: str, package: str) -> None:
    if importlib.util.find_spec(module) is None:
        raise QcthermoError(f"reading on a Dask cluster needs {package}, which is not installed: {INSTALL_HINT}")


# -- connecting ------------------------------------------------------------------------------------


@contextlib.contextmanager
def connect(where: Target) -> Iterator[Any]:
    """A ``distributed.Client`` for ``where``; what was started here (client, cluster) is closed on exit,
    a Client the caller gave is left open."""
    if where.kind == "client":
        yield where.client
        return
    from distributed import Client

    with contextlib.ExitStack() as stack:
        try:
            if where.kind == "address":
                client = Client(where.address, timeout=CONNECT_TIMEOUT_S)
            else:
                cluster = stack.enter_context(start_cluster(where.kind, where.workers))
                client = Client(cluster, timeout=CONNECT_TIMEOUT_S)
        except (OSError, TimeoutError, ValueError) as err:
            hint = " (docs/cluster.md: ~/.config/dask/jobqueue.yaml)" if where.kind in JOB_QUEUES else ""
            raise QcthermoError(f"cannot use the Dask cluster {where.address or where.kind}: {_reason(err)}{hint}") \
                from None
        stack.enter_context(client)
        yield client


def start_cluster(kind: str, workers: int | None):
    """A LocalCluster of ``workers`` single-threaded processes on 127.0.0.1, or a :func:`job_queue_cluster`
    of the batch system ``kind`` scaled to ``workers`` processes (its jobs are submitted now)."""
    if kind == "local":
        from distributed import LocalCluster

        return LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                            dashboard_address=None)
    cluster = job_queue_cluster(kind)
    cluster.scale(n=workers)
    return cluster


def job_queue_cluster(kind: str):
    """The dask-jobqueue cluster of the batch system ``kind`` as Dask's configuration (jobqueue.yaml) sets
    it up, with no job submitted yet. ValueError when the configuration lacks cores or memory.

    Reading a log is Python code holding the GIL: one thread per worker process reads fastest, so a
    configuration that leaves ``processes`` unset gets one process per core (dask-jobqueue's own default
    is about the square root of the cores, for numerical work that releases the GIL).
    """
    import dask
    import dask_jobqueue

    options: dict[str, Any] = {}
    cores = dask.config.get(f"jobqueue.{kind}.cores", None)
    if dask.config.get(f"jobqueue.{kind}.processes", None) is None and cores:
        options["processes"] = cores
    return getattr(dask_jobqueue, JOB_QUEUES[kind])(**options)


# -- reading ----------------------------------------------------------------------------------------


class NoIndex:
    """The digest index of a worker that must not open the cache: :func:`~qcthermo.survey.read_one` hashes
    the file (the client stores the outcome under its digest) and, finding nothing, parses it."""

    def find(self, digest: str) -> None:
        return None


def read_on_cluster(where: Target, reader: Reader, paths: list[str], report: Callable[[int, Outcome], None],
                    hash_files: bool) -> None:
    """Read ``paths`` on the cluster; ``report(k, outcome)`` here, as each batch comes back."""
    with connect(where) as client:
        _check_workers(client, reader)
        _read_batches(client, reader, paths, report, NoIndex() if hash_files else None, _worker_count(client, where))


def _check_workers(client: Any, reader: Reader) -> None:
    """The workers must read as this process does, or the cache would file their records under the wrong
    reader version: same qcthermo, same cclib, same reader source."""
    try:
        theirs = client.submit(reader_version, reader, pure=False).result()
    except Exception as err:  # qcthermo not importable there, the reader not picklable, ...
        raise QcthermoError(f"the Dask workers cannot run qcthermo's reader: {_reason(err)}") from None
    ours = reader_version(reader)
    if theirs != ours:
        raise QcthermoError(f"the Dask workers run another qcthermo or cclib ({theirs}) than this one ({ours}); "
                            "install the same on both")


def _worker_count(client: Any, where: Target) -> int:
    return max(where.workers or 0, len(client.scheduler_info().get("workers", {})), 1)


def batches(items: list, workers: int) -> list[list]:
    """``items`` dealt round-robin into batches of at most :data:`MAX_BATCH`, at least
    :data:`TASKS_PER_WORKER` per worker; dealt, not cut, so the largest files (first) spread over all."""
    n = max(math.ceil(len(items) / MAX_BATCH), min(len(items), workers * TASKS_PER_WORKER), 1)
    return [items[i::n] for i in range(n) if items[i::n]]


def _read_batches(client: Any, reader: Reader, paths: list[str], report: Callable[[int, Outcome], None],
                  index: NoIndex | None, workers: int) -> None:
    from distributed import as_completed

    def submit(batch: list[tuple[int, str]]):
        return client.submit(read_chunk, reader, [p for _, p in batch], index, pure=False)

    pending = {submit(b): b for b in batches(list(enumerate(paths)), workers)}
    suspects: list[tuple[int, str]] = []
    done = as_completed(list(pending))
    for future in done:
        batch = pending.pop(future)
        try:
            outcomes = future.result()
        except Exception as err:  # KilledWorker: the scheduler gave up on it after its own retries
            _check_scheduler(client, err)
            if len(batch) > 1:  # one task per file: only the file that kills its workers fails
                for item in batch:
                    retry = submit([item])
                    pending[retry] = [item]
                    done.add(retry)
            else:
                suspects.append(batch[0])
            continue
        finally:
            future.release()
        for (k, _), outcome in zip(batch, outcomes, strict=True):
            report(k, outcome)
    for item in suspects:
        _read_alone(client, submit, item, report)


def _read_alone(client: Any, submit: Callable, item: tuple[int, str], report: Callable[[int, Outcome], None]) -> None:
    """Read one file that failed as a task of its own, with nothing else in flight: a worker killed by
    another file counts the tasks queued on it as suspects too, so only a file that fails alone is given up."""
    future = submit([item])
    try:
        report(item[0], future.result()[0])
    except Exception as err:
        _check_scheduler(client, err)
        reason = f"the reading process died ({type(err).__name__}) every time; the file may be damaged"
        report(item[0], Outcome("failure", reason))
    finally:
        future.release()


def _check_scheduler(client: Any, err: BaseException) -> None:
    if client.status not in ("running", "connecting"):
        raise QcthermoError(f"lost the Dask scheduler: {_reason(err)}") from None


def _reason(err: BaseException) -> str:
    return _one_line(str(err) or type(err).__name__)

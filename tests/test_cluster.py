"""The Dask back end of the survey (qcthermo/cluster.py), on a real scheduler and worker processes on 127.0.0.1.

The reference for the rows is the local survey of the same files (itself checked against the logs in
test_survey.py) and, for one number, the energy NWChem printed in the log.
"""

import os
import signal
import sqlite3
import sys
from pathlib import Path

import pytest

distributed = pytest.importorskip("distributed")
dask = pytest.importorskip("dask")
cloudpickle = pytest.importorskip("cloudpickle")
pytest.importorskip("dask_jobqueue")  # imported before dask.config.set: it registers the jobqueue defaults

from qcthermo import cluster  # noqa: E402
from qcthermo.cli import main  # noqa: E402
from qcthermo.readers import read_log  # noqa: E402
from qcthermo.survey import survey  # noqa: E402

SAMPLES = Path(__file__).resolve().parent.parent / "sample_outputs"

# the test readers below travel to the workers by value (the worker processes cannot import this file)
cloudpickle.register_pickle_by_value(sys.modules[__name__])

#: a file of the sample tree whose worker is killed (sample_outputs/README.md lists it)
KILLER = "h2.out"


def local_cluster():
    """A LocalCluster of two worker processes (distributed's own Nanny and Worker processes) on 127.0.0.1, and
    its Client.

    allowed-failures 1 (Dask's default is 3): a task is run again once after its worker died, then given up,
    so the test of a file that kills every worker costs six worker restarts, not twelve."""
    with (dask.config.set({"distributed.scheduler.allowed-failures": 1}),
          distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                   dashboard_address=None) as lc,
          distributed.Client(lc) as c):
        yield c


#: one cluster for the tests whose workers live
client = pytest.fixture(scope="module")(local_cluster)
#: a cluster of its own for each test that kills workers: on a loaded machine the restarted workers may
#: not be back when the next test submits, and a test on the shared cluster would wait for them
doomed_client = pytest.fixture(local_cluster)


@pytest.fixture(scope="module")
def local():
    """The local survey of the sample tree, in this process: what every cluster survey must give."""
    return survey(SAMPLES, jobs=1, cache=False)


def test_rows_on_the_cluster_are_the_local_surveys(client, samples, local):
    remote = survey(samples, scheduler=client, cache=False)
    n = len(local.rows)
    assert remote.rows == local.rows and n > 30
    assert remote.stats == {"files": n, "parsed": n, "cached": 0, "hashed": 0}
    # the last energy NWChem printed in ch3.out: "Total DFT energy =      -39.838291827530" (line 3059)
    assert remote.calculations["gas/ch3.out"].energy == pytest.approx(-39.838291827530, abs=1e-9)


def test_cache_is_filled_by_the_client_alone_and_cached_files_are_not_sent(client, samples, cache_dir):
    cold = survey(samples, scheduler=client)
    n = len(cold.rows)
    assert cold.stats["parsed"] == n and cold.stats["hashed"] == n
    with sqlite3.connect(cache_dir / "parse-cache.sqlite") as db:
        assert db.execute("SELECT count(*) FROM parsed").fetchone() == (n,)

    def cache_connections():
        cache = sys.modules.get("qcthermo.cache")
        return len(cache._READONLY) if cache else 0

    assert set(client.run(cache_connections).values()) == {0}  # no worker opened the cache
    # a warm survey sends nothing: the scheduler it names does not even exist (port 1 refuses)
    warm = survey(samples, scheduler="tcp://127.0.0.1:1")
    assert warm.rows == cold.rows and warm.stats["cached"] == n and warm.stats["parsed"] == 0


def set_marker(path: str) -> None:
    os.environ["QCTHERMO_TEST_MARKER"] = path


def killing_reader(path: str):
    """read_log, but the first worker to meet KILLER dies with it (SIGKILL: no clean-up, as the out-of-memory
    killer does), once; a marker file beside the cache says it happened."""
    marker = Path(os.environ["QCTHERMO_TEST_MARKER"])
    if path.endswith(KILLER) and not marker.exists():
        marker.touch()
        os.kill(os.getpid(), signal.SIGKILL)
    return read_log(path)


@pytest.mark.slow
def test_a_worker_killed_mid_run_is_replaced_and_its_files_read(doomed_client, samples, local, tmp_path,
                                                                 monkeypatch):
    marker = tmp_path / "killed"
    monkeypatch.setenv("QCTHERMO_TEST_MARKER", str(marker))
    doomed_client.run(set_marker, str(marker))
    remote = survey(samples, scheduler=doomed_client, cache=False, reader=killing_reader)
    assert marker.exists()  # a worker did die
    assert remote.rows == local.rows


def poisoned_reader(path: str):
    """read_log, except that KILLER kills the process that reads it, every time."""
    if path.endswith(KILLER):
        os.kill(os.getpid(), signal.SIGKILL)
    return read_log(path)


@pytest.mark.slow
def test_a_file_that_kills_every_worker_is_an_error_row(doomed_client, samples, tmp_path, monkeypatch):
    for name in ("ch4.out", "water.out", KILLER):
        (tmp_path / name).symlink_to(samples / "gas" / name)
    monkeypatch.setattr(cluster, "batches", lambda items, workers: [items])  # the three files in one task
    result = survey(tmp_path, scheduler=doomed_client, cache=False, reader=poisoned_reader)
    assert [r["status"] for r in result.rows] == ["ok", "error", "ok"]
    assert "the reading process died (KilledWorker)" in result.errors[KILLER]
    assert result.exit_status == 1


def test_command_line_on_a_running_scheduler(client, samples, local, capsys):
    assert main(["survey", str(samples), "--scheduler", client.scheduler.address, "--no-cache", "--quiet"]) == 0
    assert capsys.readouterr().out.strip().splitlines()[-1] == local.summary()


@pytest.mark.parametrize(("options", "message"), [
    (["--scheduler", "localhost:8786"], "expected tcp://HOST:PORT"),
    (["--cluster", "slurm"], "say how many workers"),
    (["--cluster", "local:0"], "expected local:N with N >= 1"),
    (["--scheduler", "tcp://127.0.0.1:1"], "cannot use the Dask cluster tcp://127.0.0.1:1"),
])
def test_bad_cluster_options_are_one_line_errors(samples, capsys, monkeypatch, options, message):
    monkeypatch.setattr(cluster, "CONNECT_TIMEOUT_S", 1)
    assert main(["survey", str(samples), "--no-cache", *options]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and message in err[0]


def test_missing_dask_is_a_one_line_error(samples, capsys, monkeypatch):
    real = cluster.importlib.util.find_spec
    monkeypatch.setattr(cluster.importlib.util, "find_spec", lambda name: None if name == "distributed" else real(name))
    assert main(["survey", str(samples), "--cluster", "local:2"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "pip install 'qcthermo[cluster]'" in err[0]


def test_batches_are_hundreds_of_files_dealt_over_the_workers():
    items = list(range(10_000))
    two = cluster.batches(items, 2)
    assert max(map(len, two)) <= cluster.MAX_BATCH and len(two) == 40
    assert sorted(x for b in two for x in b) == items
    assert two[0][:2] == [0, 40]  # dealt: the largest files (first) are spread over the batches
    assert len(cluster.batches(items[:30], 2)) == 8  # few files: still 4 tasks per worker


def test_slurm_job_script_from_jobqueue_configuration():
    # dask-jobqueue renders the batch script from the jobqueue.slurm section of Dask's configuration;
    # the directive names are sbatch's own (sbatch(1): -p partition, --cpus-per-task, --mem, -t time)
    settings = {"cores": 8, "memory": "16GB", "walltime": "02:00:00", "queue": "short",
                "job-script-prologue": ["source /shared/venv/bin/activate"],
                "scheduler-options": {"host": "127.0.0.1", "dashboard_address": None}}
    with dask.config.set({f"jobqueue.slurm.{k}": v for k, v in settings.items()}):
        jq = cluster.job_queue_cluster("slurm")
        try:
            script = jq.job_script()
        finally:
            jq.close()
    lines = script.splitlines()
    for directive in ("#SBATCH -p short", "#SBATCH --cpus-per-task=8", "#SBATCH -t 02:00:00"):
        assert directive in lines
    assert any(line.startswith("#SBATCH --mem=15G") or line.startswith("#SBATCH --mem=16G") for line in lines)
    worker = lines[-1]
    assert lines.index("source /shared/venv/bin/activate") < len(lines) - 1
    # one single-threaded worker process per core (reading is GIL-bound), pointed at this scheduler
    assert "--nworkers 8" in worker and "--nthreads 1" in worker and jq.scheduler_address in worker


def test_run_reads_on_the_cluster_and_records_where(client, samples, isomerisation_file, sample_run):
    import qcthermo

    results = qcthermo.run(samples / "gas", reactions=isomerisation_file, conditions=sample_run.conditions,
                           cache=False, scheduler=client)
    # the same species and reactions as the local run (test_workflow.py checks those against the logs)
    assert results.species.equals(sample_run.species) and results.reactions.equals(sample_run.reactions)
    assert client.scheduler.address in results.settings["scheduler"]


@pytest.mark.slow
def test_command_line_starts_and_stops_a_local_cluster(samples, local, capsys):
    assert main(["survey", str(samples), "--cluster", "local:1", "--no-cache", "--quiet"]) == 0
    assert capsys.readouterr().out.strip().splitlines()[-1] == local.summary()

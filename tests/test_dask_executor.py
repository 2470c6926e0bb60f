"""Campaigns on a Dask cluster (dask.distributed's LocalCluster, two worker processes).

The same campaign gives the same run records (all but timing and host) in this process,
in the pool of supervised workers and on the cluster; a Dask worker killed in the middle of
a run has the run started again elsewhere, and its record equals an undisturbed one; a
misbehaving evolver fails its own run on the cluster with the same reason as in the pool;
the command line's cluster options fail with one line and status 2 on bad input.
"""

from __future__ import annotations

import json
import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import distributed
import pytest

from neuroyard.cli.main import main
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute, plan_run
from neuroyard.execution.dask_executor import DaskExecutor, local_cluster
from neuroyard.execution.executors import make_executor
from neuroyard.execution.runner import run_one
from neuroyard.execution.supervisor import Limits
from neuroyard.records.runs import FAILED
from neuroyard.records.store import ResultStore

HERE = Path(__file__).parent
GUIDE = HERE.parent / "harness" / "README.md"  # the harness guide
PLAN = CampaignPlan(
    [
        EvolverSpec("neat", {"population_size": 50}),
        EvolverSpec("rwg", {"batch_size": 20}),
        EvolverSpec("hill-climber", {}),
    ],
    [TaskChoice("xor-v2"), TaskChoice("parity-v2", {"bits": 3})],
    3,
    11,
    600,
)


def comparable(record) -> dict:
    """A record without what may differ between undisturbed runs: timing and host."""
    return {k: v for k, v in record.to_dict().items() if k not in ("timing", "host")}


def stored(path: Path) -> dict[tuple, dict]:
    """Comparable records by run, apart from ``isolated``: whether the evolver ran in a
    process of its own (not in-process) is the one thing the executors may change."""
    with ResultStore(path, write=False) as store:
        return {
            (r.evolver, r.config_hash, r.task, r.run_index): {
                k: v for k, v in comparable(r).items() if k != "isolated"
            }
            for r in store.records()
        }


@pytest.fixture(scope="module", autouse=True)
def _test_evolvers_importable():
    sys.path.insert(0, str(HERE))  # workers inherit sys.path when they start
    yield
    sys.path.remove(str(HERE))


@pytest.fixture(scope="module")
def cluster():
    with local_cluster(2) as started:
        yield started


def test_same_records_in_process_in_the_pool_and_on_a_cluster(tmp_path, cluster):
    runs = {}
    for name in ("in-process", "pool", "dask"):
        path = tmp_path / f"{name}.sqlite"
        if name == "dask":
            executor = DaskExecutor(distributed.Client(cluster), Limits())
        else:
            executor = make_executor(name, 2, Limits())
        with ResultStore(path) as store:
            outcome = execute(PLAN, store, executor, progress=False)
            isolated = {r.isolated for r in store.records(with_log=False)}
        assert outcome.done == len(PLAN.expand()) and outcome.internal_errors == 0
        assert isolated == {name != "in-process"}
        runs[name] = stored(path)
    assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")  # loopback only
    assert all(w.startswith("tcp://127.0.0.1:") for w in cluster.scheduler_info["workers"])
    assert len(runs["in-process"]) == 18
    assert any(record["status"] == "solved" for record in runs["in-process"].values())
    assert runs["pool"] == runs["in-process"]
    assert runs["dask"] == runs["in-process"]


def _worker_running(client: distributed.Client, key: str, within: float = 20.0) -> str:
    """The address of the Dask worker processing task ``key``."""
    deadline = time.monotonic() + within
    while time.monotonic() < deadline:
        for address, keys in client.processing().items():
            if key in keys:
                return address
        time.sleep(0.05)
    raise AssertionError(f"task {key} never started")


def test_a_worker_killed_mid_run_has_its_run_started_again_with_the_same_record(cluster):
    spec = plan_run(EvolverSpec("faulty_evolvers:Unhurried", {"pause": 0.05}), "xor-v2", 0, 3, 300)
    undisturbed = run_one(spec, isolate=True)
    executor = DaskExecutor(distributed.Client(cluster), Limits())
    try:
        executor.submit(spec)
        address = _worker_running(executor.client, f"run-{spec.key}")
        time.sleep(1.0)  # well into the run: 60 generations of at least 0.05 s each
        pid = executor.client.run(os.getpid, workers=[address])[address]
        os.kill(pid, signal.SIGKILL)
        finished = []
        deadline = time.monotonic() + 60
        while not finished and time.monotonic() < deadline:
            finished = executor.collect(timeout=1.0)
        assert finished and finished[0].record is not None, finished
        assert comparable(finished[0].record) == comparable(undisturbed)
        assert finished[0].record.host  # made on a worker of this machine
    finally:
        executor.client.close()  # the module's cluster stays up; the nanny restarts its worker


@pytest.mark.parametrize(
    ("kind", "reason"),
    [
        ("RaisesInAsk", "ask() in generation 2 raised RuntimeError: cannot ask"),
        ("HangsInAsk", "ask() in generation 2 ran past 1 s (the time limit)"),
        ("ExitsInAsk", "evolver process exited with status 1 during ask() in generation 2"),
    ],
)
def test_a_misbehaving_evolver_fails_its_own_run_on_the_cluster(tmp_path, cluster, kind, reason):
    plan = CampaignPlan(
        [EvolverSpec(f"faulty_evolvers:{kind}", {}), EvolverSpec("rwg", {"batch_size": 20})],
        [TaskChoice("xor-v2")],
        1,
        5,
        200,
    )
    executor = DaskExecutor(distributed.Client(cluster), Limits(time_limit=1.0))
    with ResultStore(tmp_path / "runs.sqlite") as store:
        outcome = execute(plan, store, executor, progress=False)
        records = {r.evolver: r for r in store.records(with_log=False)}
    assert outcome.done == 2
    assert records[f"faulty_evolvers:{kind}"].status == FAILED
    assert records[f"faulty_evolvers:{kind}"].failure == reason
    assert records["rwg"].status != FAILED


def test_an_unreachable_scheduler_is_one_line_and_status_2(tmp_path, capsys):
    store = tmp_path / "runs.sqlite"
    status = main(["run", "--scheduler", "tcp://127.0.0.1:9", "--store", str(store), "--quiet"])
    err = capsys.readouterr().err
    assert status == 2
    assert err.startswith(
        "neuroyard: error: cannot reach the Dask scheduler at 'tcp://127.0.0.1:9'"
    )
    assert len(err.strip().splitlines()) == 1


def test_two_executors_at_once_is_one_line_and_status_2(tmp_path, capsys):
    store = tmp_path / "runs.sqlite"
    status = main(["run", "--cluster", "local", "--in-process", "--store", str(store)])
    err = capsys.readouterr().err
    assert status == 2
    assert (
        err.strip()
        == "neuroyard: error: run: --in-process and --cluster exclude each other; give one"
    )
    assert not store.exists()


def test_the_command_line_runs_a_campaign_on_a_local_cluster(tmp_path, capsys):
    store = tmp_path / "runs.sqlite"
    args = ["run", "--task", "xor-v2", "--runs", "2", "--budget", "400", "--store", str(store)]
    assert main([*args, "--cluster", "local", "--workers", "2", "--quiet"]) == 0
    assert main([*args, "--quiet"]) == 0  # the same campaign through the pool: nothing to do
    with ResultStore(store, write=False) as opened:
        assert len(list(opened.records(with_log=False))) == 2


@pytest.fixture
def scheduler_and_worker(tmp_path, request):
    """A Dask scheduler and one worker started as separate processes by Dask's own command
    line, as a batch system starts them; the worker daemonic or not (``request.param``)."""
    info = tmp_path / "scheduler.json"
    quiet = {"stdout": subprocess.DEVNULL, "stderr": subprocess.DEVNULL}
    scheduler = subprocess.Popen(
        [sys.executable, "-m", "distributed.cli.dask_scheduler", "--host", "127.0.0.1"]
        + ["--port", "0", "--no-dashboard", "--scheduler-file", str(info)],
        **quiet,
    )
    env = {**os.environ, "DASK_DISTRIBUTED__WORKER__DAEMON": str(request.param)}
    worker = None
    try:
        deadline = time.monotonic() + 30
        while not info.exists() and time.monotonic() < deadline:
            time.sleep(0.1)
        address = json.loads(info.read_text())["address"]
        worker = subprocess.Popen(
            [sys.executable, "-m", "distributed.cli.dask_worker", address, "--nthreads", "1"]
            + ["--host", "127.0.0.1", "--no-dashboard"],
            env=env,
            **quiet,
        )
        with distributed.Client(address) as client:
            client.wait_for_workers(1, timeout=30)
        yield address
    finally:
        for process in (worker, scheduler):
            if process is not None:
                process.terminate()
                process.wait(timeout=30)


@pytest.mark.parametrize("scheduler_and_worker", [False], indirect=True)
def test_a_campaign_runs_on_an_existing_scheduler(tmp_path, scheduler_and_worker):
    store = tmp_path / "runs.sqlite"
    args = ["run", "--evolver", "rwg", "--task", "xor-v2", "--runs", "3", "--budget", "300"]
    assert main([*args, "--scheduler", scheduler_and_worker, "--store", str(store), "--quiet"]) == 0
    with ResultStore(store, write=False) as opened:
        records = list(opened.records(with_log=False))
    assert sorted(r.run_index for r in records) == [0, 1, 2]


@pytest.mark.parametrize("scheduler_and_worker", [True], indirect=True)
def test_a_daemonic_worker_is_refused_before_any_run(tmp_path, capsys, scheduler_and_worker):
    store = tmp_path / "runs.sqlite"
    status = main(["run", "--scheduler", scheduler_and_worker, "--store", str(store), "--quiet"])
    err = capsys.readouterr().err.strip()
    assert status == 2
    assert re.fullmatch(
        r"neuroyard: error: the Dask worker at tcp://127\.0\.0\.1:\d+ is a daemonic process "
        r"and cannot supervise runs: start the workers with distributed\.worker\.daemon off "
        r"\(DASK_DISTRIBUTED__WORKER__DAEMON=False in their environment\)",
        err,
    ), err
    assert not store.exists()


def test_the_guides_batch_system_configuration_starts_workers_that_can_supervise_runs():
    """The dask-jobqueue example of harness/README.md (its first ``python`` block after "HPC
    batch system"), built without submitting: the job script starts one single-threaded, not
    daemonic worker per job, on the scheduler's address."""
    jobqueue = pytest.importorskip("dask_jobqueue")
    text = GUIDE.read_text()
    block = re.search(r"HPC batch system.*?```python\n(.*?)```", text, re.S)
    assert block, "harness/README.md: no python block after 'HPC batch system'"
    code = block.group(1).split("cluster.scale")[0]  # build the cluster, submit no job
    namespace: dict = {}
    exec(code, namespace)
    cluster = namespace["cluster"]
    try:
        assert isinstance(cluster, jobqueue.SLURMCluster)
        script = cluster.job_script()
        assert "export DASK_DISTRIBUTED__WORKER__DAEMON=False" in script
        assert "--nthreads 1" in script
        assert cluster.scheduler_address in script
    finally:
        cluster.close()


def test_ctrl_c_on_a_local_cluster_is_one_line_and_130_within_5_s(tmp_path):
    # 20 tries, each interrupted at another moment: while the cluster starts, while the
    # first runs are handed out, and well into the campaign. A terminal sends SIGINT to the
    # whole foreground process group, and so does this test; the child must not inherit
    # SIGINT ignored from a suite started in the background of a non-interactive shell.
    neuroyard = str(Path(sys.executable).with_name("neuroyard"))
    results = []
    for k in range(20):
        store = tmp_path / f"c{k}.db"
        cmd = [neuroyard, "run", "--cluster", "local", "--workers", "2", "--runs", "30",
               "--store", str(store)]  # fmt: skip
        proc = subprocess.Popen(cmd, start_new_session=True, stdout=subprocess.PIPE,
                                stderr=subprocess.PIPE, text=True,
                                preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))  # fmt: skip
        time.sleep(0.3 + 0.2 * k)
        pressed = time.monotonic()
        os.killpg(proc.pid, signal.SIGINT)
        try:
            _, err = proc.communicate(timeout=30)
        except subprocess.TimeoutExpired:
            os.killpg(proc.pid, signal.SIGKILL)
            _, err = proc.communicate()
        seconds = time.monotonic() - pressed
        lines = [line for line in err.splitlines() if line.strip() and "%|" not in line]
        results.append((k, proc.returncode, round(seconds, 2), lines))
    bad = [r for r in results if r[1] != 130 or r[2] > 5.0 or r[3] != [
        "neuroyard: interrupted; finished runs are kept in the store"
    ]]  # fmt: skip
    assert bad == []

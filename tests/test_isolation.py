"""An evolver cannot fool the harness from inside its own calls: each cheat of
tests/isolation_cheats.py (the attacks of issue 33) runs beside honest evolvers under one
and two workers. The cheat fails or gains nothing, the honest records are identical to a
campaign without the cheats, and no process it started is left once the campaign is over.
Run in this process instead (``--in-process``, which the record marks as not isolated),
the first cheats do fool the harness: the attacks are real, and isolation is what stops
them.

Outside reference: the networks the cheats ask cannot solve XOR (no hidden node; XOR is
not linearly separable, Minsky & Papert's classic example), so any stored solution is a
fooled one; the sizes are counted on the stored network itself; the processes are the
kernel's (``os.kill(pid, 0)``)."""

from __future__ import annotations

import os
import subprocess
import sys
import time
from pathlib import Path

import pytest

from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.core.network import Network
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.descendants import descendants
from neuroyard.execution.supervisor import Limits, Supervisor
from neuroyard.records.store import ResultStore

HERE = Path(__file__).parent
NEUROYARD = Path(sys.executable).with_name("neuroyard")
TIME_LIMIT, MEMORY_LIMIT = 1.0, 300
LIMITS = Limits(time_limit=TIME_LIMIT, memory_limit_mb=MEMORY_LIMIT)
BUDGET, RUNS, BATCH = 200, 2, 5

# cheat -> (status, reasons it may fail with: empty when it must not fail)
CHEATS: dict[str, tuple[str, set[str]]] = {
    "TaskPatcher": ("unsolved", set()),
    "RecordForger": ("unsolved", set()),
    "SizeLiar": ("unsolved", set()),
    "LimitRaiser": (
        "failed",
        {f"ask() in generation 2 ran out of memory (memory limit {MEMORY_LIMIT} MB)"},
    ),
    "StatusIdler": (
        "failed",
        {
            "evolver process was killed by signal 11 (SIGSEGV) during ask() in generation 2",
            "ask() in generation 2 ran past 1 s (the time limit)",
        },
    ),
    "Detacher": ("unsolved", set()),
    # the evolver's process asks generation 2's batch as soon as it has answered tell() of
    # generation 1, so the worker it kills may still be in that call, or between calls
    "ParentKiller": (
        "failed",
        {
            "evolver process was killed by signal 9 (SIGKILL) during ask() in generation 2",
            "evolver process was killed by signal 9 (SIGKILL) during tell() in generation 1",
            "worker process was killed by signal 9 (SIGKILL) outside any evolver call in "
            "generation 1, twice",
        },
    ),
    "Printer": ("unsolved", set()),
    "Interrupter": ("failed", {"ask() in generation 2 raised KeyboardInterrupt: "}),
    "Exiter": ("failed", {"tell() in generation 1 raised SystemExit: 3"}),
}
HONEST = [EvolverSpec("rwg", {"batch_size": 20}), EvolverSpec("hill-climber", {})]


@pytest.fixture(scope="module", autouse=True)
def _plugins_importable():
    sys.path.insert(0, str(HERE))  # workers inherit sys.path when they start
    yield
    sys.path.remove(str(HERE))


def cheat(kind: str, pids: Path) -> EvolverSpec:
    config = {"pids": str(pids)} if kind == "Detacher" else {}
    return EvolverSpec(f"isolation_cheats:{kind}", config)


def plan(evolvers) -> CampaignPlan:
    return CampaignPlan(evolvers, [TaskChoice("xor-v2")], RUNS, 5, BUDGET)


def comparable(record) -> dict:
    return {k: v for k, v in record.to_dict().items() if k not in ("timing", "host")}


def alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    return _state(pid) != "Z"


def _state(pid: int) -> str:
    try:
        text = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return "Z"
    return text[text.rfind(")") + 2]


@pytest.fixture(scope="module")
def honest(tmp_path_factory) -> list[dict]:
    path = tmp_path_factory.mktemp("honest") / "honest.db"
    with ResultStore(path) as store:
        execute(plan(HONEST), store, Supervisor(1, LIMITS), progress=False)
        return [comparable(r) for r in store.records()]


@pytest.fixture(scope="module", params=[1, 2], ids=["workers1", "workers2"])
def campaign(request, tmp_path_factory):
    """(records by evolver, pid file) of every cheat beside the honest evolvers."""
    folder = tmp_path_factory.mktemp(f"cheats{request.param}")
    pids = folder / "pids"
    evolvers = [cheat(kind, pids) for kind in CHEATS] + HONEST
    with ResultStore(folder / "cheats.db") as store:
        execute(plan(evolvers), store, Supervisor(request.param, LIMITS), progress=False)
        records = list(store.records())
    by_evolver: dict[str, list] = {}
    for record in records:
        by_evolver.setdefault(record.evolver, []).append(record)
    return by_evolver, pids


@pytest.mark.parametrize("kind", CHEATS)
def test_a_cheat_fails_or_gains_nothing(campaign, kind) -> None:
    by_evolver, _ = campaign
    status, reasons = CHEATS[kind]
    records = by_evolver[f"isolation_cheats:{kind}"]
    assert len(records) == RUNS
    for record in records:
        assert record.isolated
        assert record.status == status, (record.status, record.failure)
        if reasons:
            assert record.failure in reasons
        else:  # the budget spent to the evaluation, no more, counted by the harness
            assert record.evaluations == BUDGET and record.generations == BUDGET // BATCH


def test_sizes_are_those_of_the_stored_network(campaign) -> None:
    by_evolver, _ = campaign
    for record in by_evolver["isolation_cheats:SizeLiar"]:
        network = Network.from_dict(record.best_network)
        assert (record.hidden_nodes, record.connections) == (1, 5)
        assert (record.hidden_nodes, record.connections) == (
            sum(n.kind == "hidden" for n in network.nodes),
            sum(c.enabled for c in network.connections),
        )


def test_the_honest_records_are_those_of_a_campaign_without_cheats(campaign, honest) -> None:
    by_evolver, _ = campaign
    mixed = [comparable(r) for spec in HONEST for r in by_evolver[spec.name]]
    order = lambda doc: (doc["evolver"], doc["run_index"])  # noqa: E731
    assert sorted(mixed, key=order) == sorted(honest, key=order)


def test_no_process_a_cheat_started_is_left(campaign) -> None:
    _, pids = campaign
    started = [int(line) for line in pids.read_text().split()]
    assert len(started) == 3 * RUNS
    deadline = time.monotonic() + 5.0
    while any(alive(p) for p in started) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert [p for p in started if alive(p)] == []
    assert [p for p in descendants(os.getpid()) if _state(p) != "Z"] == []


def test_the_time_limit_held_against_a_forged_status(campaign) -> None:
    by_evolver, _ = campaign
    for record in by_evolver["isolation_cheats:StatusIdler"]:
        assert record.timing["wall"] < TIME_LIMIT + 5  # its ask() would sleep 25 s


@pytest.mark.parametrize("kind", ["TaskPatcher", "RecordForger"])
def test_in_the_workers_own_process_the_cheats_fool_the_harness(tmp_path, kind) -> None:
    """The same cheats, not isolated (``--in-process``, in a process of their own since
    they patch the classes of the process they run in): the attacks are real."""
    store = tmp_path / "inside.db"
    env = {**os.environ, "PYTHONPATH": str(HERE)}
    out = subprocess.run(
        [str(NEUROYARD), "run", "--in-process", "--evolver", f"isolation_cheats:{kind}",
         "--runs", "1", "--budget", str(BUDGET), "--seed", "5", "--store", str(store), "--quiet"],
        capture_output=True, text=True, env=env, timeout=300,
    )  # fmt: skip
    assert out.returncode == 0, out.stderr
    (record,) = ResultStore(store, write=False).records()
    assert not record.isolated
    if kind == "TaskPatcher":  # stored as solved by a network without a hidden node
        assert record.status == "solved" and record.hidden_nodes == 0
    else:  # evaluated past its budget: the forged count let the run go on
        assert record.generations * BATCH > record.evaluations == BUDGET


def test_an_evolvers_prints_never_reach_neuroyards_output(tmp_path) -> None:
    env = {**os.environ, "PYTHONPATH": str(HERE)}
    out = subprocess.run(
        [str(NEUROYARD), "run", "--evolver", "isolation_cheats:Printer", "--runs", "1",
         "--budget", "20", "--store", str(tmp_path / "p.db")],
        capture_output=True, text=True, env=env, timeout=300,
    )  # fmt: skip
    assert out.returncode == 0, out.stderr
    assert "a line the evolver printed" not in out.stdout
    assert "a line the evolver printed" in out.stderr


def test_a_run_past_its_wall_clock_limit_fails_even_while_it_is_evaluated(tmp_path) -> None:
    # maze episodes of 2,000 networks a generation: the time goes to evaluation, not to
    # evolver calls, which the time limit alone would not bound
    evolver = EvolverSpec("rwg", {"batch_size": 2000})
    slow = CampaignPlan([evolver], [TaskChoice("maze-hard-v3")], 1, 1, 10_000_000)
    limits = Limits(time_limit=TIME_LIMIT, run_limit=1.0)
    start = time.monotonic()
    with ResultStore(tmp_path / "slow.db") as store:
        execute(slow, store, Supervisor(1, limits), progress=False)
        (record,) = store.records(with_log=False)
    assert time.monotonic() - start < 10
    assert record.status == "failed" and record.isolated
    assert record.failure.startswith("the run ran past its wall-clock limit of 1 s ("), record

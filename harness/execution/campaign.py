"""A campaign: evolvers x tasks x run indices, executed run by run into a results store.

Runs whose key is already in the store are skipped, so an interrupted campaign resumes
where it stopped. A run's key is computed from resolved values (the effective budget and
every task setting, defaults merged), so asking for a default explicitly changes nothing.
Runs execute on an executor (:mod:`.executors`: supervised worker processes, or this
process for debugging); either way only this coordinator process writes to the store,
one transaction per finished run, and re-verifies every solved claim before it stores it
(:mod:`.verification`: one evaluation and one success test per solved run, here; a claim
that does not hold fails the run). Several coordinators may run the same campaign on one
store at once: they claim runs before starting them and so split the work. A batch job
may run only a share of the plan (:mod:`~neuroyard.records.shares`) into a store
of its own; ``neuroyard merge`` combines the shares' stores afterwards.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import signal
import sqlite3
import threading
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path
from typing import Any, NamedTuple

from tqdm import tqdm

from neuroyard.core import interrupts
from neuroyard.core.errors import StoreError
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution import crashlog, kernels
from neuroyard.execution.executors import Executor, make_executor
from neuroyard.execution.resolution import resolve
from neuroyard.execution.verification import verified
from neuroyard.records.runs import RunRecord, RunSpec
from neuroyard.records.shares import WHOLE, Share
from neuroyard.records.store import ResultStore, owner_id
from neuroyard.tasks import Task, TaskSpec, make
from neuroyard.tasks.registry import remember

WAIT_FOR_OTHERS = 1.0  # s between looks at runs that other coordinators are running


@dataclass(frozen=True)
class TaskChoice:
    """A task id with the settings given for it (defaults for settings not given)."""

    id: str
    settings: dict[str, Any] = field(default_factory=dict)

    def resolve(self, budget: int | None) -> ResolvedTask:
        """The choice in resolved values: builds the task once, which checks the settings
        (a bad one is a :class:`~neuroyard.core.errors.TaskError`); ``budget`` None is the
        task's default budget."""
        built = make(self.id, **self.settings)
        spec = remember(built.spec)
        return ResolvedTask(
            self.id,
            dict(spec.settings),
            spec,
            budget if budget is not None else spec.default_budget,
            built,
        )


@dataclass(frozen=True)
class ResolvedTask:
    """A task choice in resolved values: every setting (defaults merged, checked), the
    task's spec under them, the effective budget (evaluations per run) and the task as it
    was built to resolve them (at task seed 0; the coordinator loads its kernels)."""

    id: str
    settings: dict[str, Any]
    spec: TaskSpec
    budget: int
    built: Task = field(compare=False, repr=False)


def plan_run(
    evolver: EvolverSpec,
    task: str,
    run_index: int,
    campaign_seed: int,
    budget: int | None = None,
    settings: Mapping[str, Any] | None = None,
) -> RunSpec:
    """The spec of one run with resolved values (see :class:`RunSpec`): ``budget`` None is
    the task's default, ``settings`` are merged with the task's defaults."""
    resolved = TaskChoice(task, dict(settings or {})).resolve(budget)
    return RunSpec(evolver, task, run_index, campaign_seed, resolved.budget, resolved.settings)


@dataclass(frozen=True)
class CampaignPlan:
    """What to run: every evolver on every task, ``runs`` times, from one campaign ``seed``;
    ``budget`` None: each task's default budget.

    Each choice is resolved once per plan (:attr:`tasks_resolved`: each task built once;
    each evolver's effective configuration computed once by its spec, in a child process
    for an evolver from outside neuroyard's package: :mod:`.resolution`), and everything
    else reads those: :meth:`describe`, :attr:`plan_hash`, :meth:`expand`."""

    evolvers: Sequence[EvolverSpec]
    tasks: Sequence[TaskChoice]
    runs: int
    seed: int
    budget: int | None = None

    @cached_property
    def tasks_resolved(self) -> tuple[ResolvedTask, ...]:
        """Every task choice in resolved values, in the plan's order."""
        return tuple(task.resolve(self.budget) for task in self.tasks)

    @cached_property
    def evolvers_resolved(self) -> Sequence[EvolverSpec]:
        """The evolvers, each with its effective configuration and hash computed (not
        built; see :meth:`check`)."""
        resolve(self.evolvers, build=False)
        return self.evolvers

    def check(self) -> None:
        """Fail before any run on a bad choice: build every evolver once (a bad option is
        an :class:`~neuroyard.core.errors.EvolverError`; an evolver from outside
        neuroyard's package is built in a child process) and resolve every task."""
        resolve(self.evolvers, build=True)
        self.tasks_resolved  # noqa: B018 - resolving checks the settings

    def expand(self) -> list[RunSpec]:
        """Every run, with resolved budget and settings (so its key is the same however
        the values were asked for)."""
        return [
            RunSpec(evolver, task.id, index, self.seed, task.budget, task.settings)
            for evolver in self.evolvers_resolved
            for task in self.tasks_resolved
            for index in range(self.runs)
        ]

    def describe(self) -> dict[str, Any]:
        """The plan in resolved values: effective evolver configurations, every task
        setting and each task's effective budget."""
        return {
            "evolvers": [
                {"name": e.name, "config": e.effective_config} for e in self.evolvers_resolved
            ],
            "tasks": [
                {"id": t.id, "settings": t.settings, "budget": t.budget}
                for t in self.tasks_resolved
            ],
            "runs": self.runs,
            "seed": self.seed,
        }

    @cached_property
    def plan_hash(self) -> str:
        text = json.dumps(self.describe(), sort_keys=True, default=str)
        return hashlib.sha256(text.encode()).hexdigest()[:16]


class CampaignResult(NamedTuple):
    """What :func:`execute` did: runs finished and stored by this process, runs already in
    the store when it started, and the runs it could not finish because of a fault of the
    harness itself (not stored: they run again when the campaign resumes), with the crash
    log holding their tracebacks."""

    done: int
    skipped: int
    internal_errors: int = 0
    crash_log: Path | None = None


def execute(
    plan: CampaignPlan,
    store: ResultStore,
    executor: Executor | None = None,
    progress: bool = True,
    on_record: Callable[[RunRecord], None] | None = None,
    share: Share = WHOLE,
    notice: Callable[[str], None] | None = None,
) -> CampaignResult:
    """Run every run of ``plan`` (of its ``share`` only, when given) not yet in ``store``
    (see module docstring); the store records the whole plan and the share.

    Before the first run, this process loads the kernels of the tasks left to run
    (:func:`.kernels.prepare`); ``notice`` is called with one line when they must be
    compiled first.

    Runs execute on ``executor`` (:mod:`.executors`; default one supervised worker
    process), which this function closes when it returns. Each pending run is claimed in the
    store before it starts, so other coordinators on the same store take other runs; when
    only runs claimed elsewhere are left, this process waits for them (or for their claims
    to expire and takes them over). A Ctrl-C (KeyboardInterrupt) ends the workers, keeps
    every finished run, releases this process's claims and is raised again."""
    campaign_id = store.campaign(plan.seed, plan.describe(), plan.plan_hash, share)
    by_key = {spec.key: spec for spec in share.select(plan.expand())}
    finished = store.finished_keys()
    remaining = [key for key in by_key if key not in finished]
    skipped = len(by_key) - len(remaining)
    done = errors = 0
    crash_log: Path | None = None
    owner = owner_id()
    executor = executor if executor is not None else make_executor("pool")
    running: set[str] = set()
    interrupted = False
    bar = tqdm(total=len(remaining), unit="run", delay=3.0, disable=not progress or not remaining)

    def hand_out() -> None:
        """Claim pending runs up to the executor's free capacity and submit them."""
        claimed = store.claim(
            [k for k in remaining if k not in running], owner, executor.capacity - len(running)
        )
        for key in claimed:
            executor.submit(by_key[key])
            running.add(key)

    try:
        with store.keep_alive(owner), interrupts.deferred() as pressed:
            # deferred too: a Ctrl-C while the kernels load (the cluster's garbage-collector
            # hooks run meanwhile) is acted on at the loop's first turn
            kernels.prepare(_tasks_left(plan, [by_key[key] for key in remaining]), notice)
            while remaining or running:
                if pressed.is_set():
                    pressed.clear()  # handled here, from now on
                    raise KeyboardInterrupt
                hand_out()
                if not running:  # what is left is claimed by others: wait for them
                    finished = store.finished_keys()
                    remaining = [k for k in remaining if k not in finished]
                    if remaining:
                        elsewhere = store.claimed_elsewhere(remaining, owner)
                        bar.set_postfix_str(f"{elsewhere} running in another process")
                        time.sleep(WAIT_FOR_OTHERS)
                    continue
                over = executor.collect(timeout=1.0)
                for item in over:
                    running.discard(item.spec.key)
                    remaining.remove(item.spec.key)
                if over:  # the workers take their next runs while this process verifies
                    hand_out()
                for item in over:
                    key = item.spec.key
                    if item.record is None:
                        errors += 1
                        log = crashlog.write(item.error or "", f"run {key}")
                        crash_log = crash_log or log
                        store.release(owner, [key])
                        continue
                    record = verified(item.record, key)  # a solved claim, checked here
                    if store.save(key, campaign_id, record):
                        done += 1
                    bar.update(1)
                    if on_record is not None:
                        on_record(record)
    except KeyboardInterrupt:
        interrupted = True
        raise
    finally:
        _shut_down(executor, store, owner, bar, interrupted)
    return CampaignResult(done, skipped, errors, crash_log)


def _tasks_left(plan: CampaignPlan, specs: Sequence[RunSpec]) -> list[Task]:
    """The plan's tasks (as built when it was resolved) that ``specs`` still run."""
    left = {
        (spec.task, json.dumps(spec.task_settings, sort_keys=True, default=str)) for spec in specs
    }
    return [
        task.built
        for task in plan.tasks_resolved
        if (task.id, json.dumps(task.settings, sort_keys=True, default=str)) in left
    ]


def _shut_down(executor: Any, store: ResultStore, owner: str, bar: tqdm, interrupted: bool) -> None:
    """End the workers, release this process's claims, close the progress bar; after a
    Ctrl-C, with further Ctrl-Cs ignored until done (so a second one prints no traceback)."""
    ignore = interrupted and threading.current_thread() is threading.main_thread()
    previous = signal.signal(signal.SIGINT, signal.SIG_IGN) if ignore else None
    try:
        executor.close()
        with contextlib.suppress(StoreError, sqlite3.Error):
            store.release(owner)
        bar.close()
    finally:
        if ignore:
            signal.signal(signal.SIGINT, previous)

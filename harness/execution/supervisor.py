"""Executing runs: supervised worker processes, or in this process for debugging.

:class:`Supervisor` keeps up to ``workers`` long-lived worker processes (:mod:`.worker`),
gives each one run at a time and watches them. It ends a worker whose evolver call runs
past the time limit, notices a worker that exits or is killed, and turns either into a
failed record of that run whose reason names the call and the generation ("ask() ran past
30 s in generation 12", "evolver process exited with status 1 during ask() in generation
3"); the worker is replaced and every other run goes on. A worker that dies outside any
evolver call (in the harness's own code, so not provably the evolver's doing) has its run
started again from its spec in a new worker, once; the record of a run that succeeds the
second time is the same as an undisturbed one. Workers are forked from the coordinator
where the platform allows it (Linux: a worker starts in milliseconds with everything already
imported; the coordinator's other threads hold no lock a worker needs) and spawned
elsewhere, always with Ctrl-C ignored: the coordinator alone handles it and ends the workers.

:class:`InProcess` runs each run in this process, with no limits: for debugging with a
debugger or profiler (a hanging evolver hangs the campaign there).

Both offer the same small interface: ``capacity``, ``submit(spec)``,
``collect(timeout) -> list[Finished]`` and ``close()``.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import signal
import sys
import threading
import time
import traceback
from dataclasses import dataclass
from multiprocessing.connection import wait
from typing import Any

from neuroyard.core.child_process import exit_words
from neuroyard.core.defaults import (
    DEFAULT_MEMORY_LIMIT_MB,
    DEFAULT_RUN_LIMIT,
    DEFAULT_TIME_LIMIT,
    MAX_BATCH,
)
from neuroyard.execution import worker
from neuroyard.execution.contract import call_label
from neuroyard.execution.descendants import end_descendants
from neuroyard.execution.runner import new_record, run_one
from neuroyard.records.runs import FAILED, RunRecord, RunSpec

POLL = 0.2  # s between checks of the running calls' time (ours)
GRACE = 5.0  # s past the time limit before the supervisor ends a worker itself (ours)
START_METHOD = "fork" if sys.platform.startswith("linux") else "spawn"


@dataclass(frozen=True)
class Limits:
    """Bounds of a supervised run. ``time_limit``: seconds one evolver call (building it,
    ``start``, ``settings``, ``ask``, ``tell``, ``stats``, ``stop``) may take, None for no
    bound; ``memory_limit_mb``: megabytes a run may add to its worker process's address
    space and to the evolver's process, None for no bound; ``max_batch``: networks one
    ``ask()`` may return; ``run_limit``: seconds of wall time a whole run may take,
    evaluation included, None for no bound."""

    time_limit: float | None = DEFAULT_TIME_LIMIT
    memory_limit_mb: int | None = DEFAULT_MEMORY_LIMIT_MB
    max_batch: int = MAX_BATCH
    run_limit: float | None = DEFAULT_RUN_LIMIT


@dataclass(frozen=True)
class Finished:
    """A run that is over: its record, or (``record`` None) the traceback of a fault of the
    harness itself, which is not stored (the run is tried again when the campaign resumes)."""

    spec: RunSpec
    record: RunRecord | None
    error: str | None = None


def failed_record(spec: RunSpec, reason: str, status: Any, started: float) -> RunRecord:
    """The record of a run whose worker was ended or died: what the shared status says of
    its progress (generations, evaluations), and the reason; no log survives."""
    record = new_record(spec)
    record.status = FAILED
    record.failure = reason
    record.isolated = True  # a supervised run's evolver runs in a process of its own
    record.generations = int(status[worker.GENERATIONS])
    record.evaluations = int(status[worker.EVALUATIONS])
    wall = time.monotonic() - started
    record.timing = {"wall": wall, "evolver": 0.0, "kernel_load": 0.0, "harness": wall}
    return record


class _Worker:
    """One worker process, its pipe and shared status, and the run it has (if any)."""

    def __init__(self, context: Any, limits: Limits) -> None:
        self.status = context.RawArray("d", worker.STATUS_FIELDS)
        self.conn, child = context.Pipe()
        self.process = context.Process(
            target=worker.main,
            args=(
                child,
                self.status,
                limits.max_batch,
                limits.memory_limit_mb,
                limits.time_limit,
            ),
            daemon=True,
        )
        # A Ctrl-C while the process starts must not reach it: it inherits SIG_IGN.
        main_thread = threading.current_thread() is threading.main_thread()
        previous = signal.signal(signal.SIGINT, signal.SIG_IGN) if main_thread else None
        try:
            self.process.start()
        finally:
            if main_thread:
                signal.signal(signal.SIGINT, previous)
        child.close()
        self.spec: RunSpec | None = None
        self.started = 0.0
        self.attempts = 0

    def give(self, spec: RunSpec, attempts: int = 1) -> None:
        worker.clear(self.status)
        self.spec, self.started, self.attempts = spec, time.monotonic(), attempts
        self.conn.send(spec)

    def kill(self) -> None:
        """End every process below the worker (however it detached: the worker is their
        subreaper), then the worker and its process group."""
        end_descendants(self.process.pid)
        for target in (lambda: os.killpg(self.process.pid, signal.SIGKILL), self.process.kill):
            with contextlib.suppress(ProcessLookupError, PermissionError, OSError):
                target()
        self.process.join(timeout=5)
        self.conn.close()

    def call(self) -> tuple[str, int | None, float]:
        """(evolver call in progress or "", its generation, seconds it has run)."""
        started = self.status[worker.STARTED]
        code = int(self.status[worker.CALL])
        generation = worker.generation_of(self.status)
        if code == 0 or started != self.status[worker.STARTED]:
            return "", None, 0.0  # no call, or one that just changed: look again next time
        return worker.CALLS[code], generation, time.monotonic() - started


class Supervisor:
    """Runs on up to ``workers`` supervised worker processes (see module docstring).
    ``start_method``: how worker processes start (:mod:`multiprocessing`'s ``fork``,
    ``spawn`` or ``forkserver``); default ``fork`` on Linux, ``spawn`` elsewhere."""

    def __init__(
        self, workers: int, limits: Limits | None = None, start_method: str = START_METHOD
    ) -> None:
        self.capacity = workers
        self.limits = limits or Limits()
        self.context = multiprocessing.get_context(start_method)
        self.workers: list[_Worker] = []

    def submit(self, spec: RunSpec, attempts: int = 1) -> None:
        idle = [w for w in self.workers if w.spec is None and w.process.is_alive()]
        if idle:
            chosen = idle[0]
        else:
            if sum(1 for w in self.workers if w.spec is not None) >= self.capacity:
                raise RuntimeError("Supervisor.submit: every worker is busy")
            # forget the idle workers that are gone; a dead one with a run is handled in
            # collect(), which fails or restarts that run
            self.workers = [w for w in self.workers if w.spec is not None or w.process.is_alive()]
            chosen = _Worker(self.context, self.limits)
            self.workers.append(chosen)
        chosen.give(spec, attempts)

    def collect(self, timeout: float) -> list[Finished]:
        """Wait up to ``timeout`` s for runs to end; return those that did (maybe none)."""
        deadline = time.monotonic() + timeout
        while True:
            busy = [w for w in self.workers if w.spec is not None]
            if not busy:
                return []
            ready = wait([w.conn for w in busy], min(POLL, max(0.0, deadline - time.monotonic())))
            finished = [f for w in busy if (f := self._check(w, w.conn in ready)) is not None]
            if finished or time.monotonic() >= deadline:
                return finished

    def _check(self, w: _Worker, readable: bool) -> Finished | None:
        spec = w.spec
        assert spec is not None
        if readable:
            try:
                kind, payload = w.conn.recv()
            except (EOFError, OSError):
                return self._died(w)
            w.spec = None
            if kind == "record":
                return Finished(spec, payload)
            return Finished(spec, None, payload)
        if not w.process.is_alive():
            return self._died(w)
        call, generation, seconds = w.call()
        limit = self.limits.time_limit
        # the worker ends a late evolver reply itself; this catches a worker that does not
        if call and limit is not None and seconds > limit + GRACE:
            w.kill()
            w.spec = None
            reason = f"{call_label(call, generation)} ran past {limit:g} s (the time limit)"
            return Finished(spec, failed_record(spec, reason, w.status, w.started))
        run_limit = self.limits.run_limit
        if run_limit is not None and time.monotonic() - w.started > run_limit:
            w.kill()
            w.spec = None
            where = worker.generation_of(w.status, harness=True)
            place = "before the first generation" if where is None else f"in generation {where}"
            reason = f"the run ran past its wall-clock limit of {run_limit:g} s ({place})"
            return Finished(spec, failed_record(spec, reason, w.status, w.started))
        return None

    def _died(self, w: _Worker) -> Finished | None:
        """A worker exited or was killed during a run: fail the run, or start it again once
        when the worker died outside any evolver call."""
        spec = w.spec
        assert spec is not None
        w.process.join(timeout=5)
        code = int(w.status[worker.CALL])
        how = exit_words(w.process.exitcode)
        w.kill()
        w.spec = None
        if code:
            call = call_label(worker.CALLS[code], worker.generation_of(w.status))
            reason = f"evolver process {how} during {call}"
            return Finished(spec, failed_record(spec, reason, w.status, w.started))
        if w.attempts < 2:
            self.submit(spec, attempts=w.attempts + 1)
            return None
        where = worker.generation_of(w.status, harness=True)
        place = "before the first generation" if where is None else f"in generation {where}"
        reason = f"worker process {how} outside any evolver call {place}, twice"
        return Finished(spec, failed_record(spec, reason, w.status, w.started))

    def close(self) -> None:
        """End every worker: idle ones are asked to stop, busy ones are killed."""
        for w in self.workers:
            if w.spec is None and w.process.is_alive():
                with contextlib.suppress(OSError):
                    w.conn.send(None)
        for w in self.workers:
            if w.spec is None:
                w.process.join(timeout=2)
            w.kill()
        self.workers = []


class InProcess:
    """Runs each run in this process, one at a time, with no time or memory limit."""

    capacity = 1

    def __init__(self, limits: Limits | None = None) -> None:
        self.limits = limits or Limits()
        self.queue: list[RunSpec] = []

    def submit(self, spec: RunSpec) -> None:
        self.queue.append(spec)

    def collect(self, timeout: float) -> list[Finished]:
        if not self.queue:
            return []
        spec = self.queue.pop(0)
        try:
            return [Finished(spec, run_one(spec, max_batch=self.limits.max_batch))]
        except Exception:
            return [Finished(spec, None, traceback.format_exc())]

    def close(self) -> None:
        self.queue.clear()

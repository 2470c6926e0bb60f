"""A worker process: runs one run at a time for the supervisor, until told to stop.

The worker is long-lived: numba kernels are loaded once per worker and task, then reused
by every later run it is given. A Python evolver runs in a process of its own, forked for
each run (:mod:`.isolation`): the worker evaluates and counts, and bounds each evolver
reply by the time limit itself. It tells the supervisor, through a small block of shared
memory that only the worker can write (the evolver's process unmaps it), which evolver
call it is in and since when (:class:`SharedWatch`), so the supervisor can end a worker
whose call runs past the limit all the same. It ignores Ctrl-C (the coordinator ends it),
runs in its own process group, is the subreaper of every process a run starts, and ends
them all when the run ends (:mod:`.descendants`); it exits when the coordinator is gone.

Messages on the pipe: the supervisor sends a :class:`~.runner.RunSpec` (or None: stop);
the worker answers ``("record", RunRecord)`` or ``("error", traceback text)`` for a fault
of the harness itself.
"""

from __future__ import annotations

import os
import resource
import signal
import threading
import time
import traceback
from multiprocessing.connection import Connection
from typing import Any

from neuroyard.core.evolver_registry import available
from neuroyard.execution.descendants import address_space, become_subreaper, end_descendants
from neuroyard.execution.runner import run_one

# Evolver calls a worker reports, by code (0: none, the harness's own code or idle).
CALLS = (
    "",
    "building the evolver",
    "start()",
    "settings()",
    "ask()",
    "tell()",
    "stats()",
    "stop()",
)
CODE = {name: code for code, name in enumerate(CALLS)}
# Layout of the shared status block (doubles): the evolver call in progress (its code,
# 0 for none), its generation (-1: before the first), when it started (time.monotonic(),
# one clock for every process of the machine), the generation of the last call that ended
# (where the harness is between calls), and the run's generations and evaluations so far.
CALL, GENERATION, STARTED, LAST_GENERATION, GENERATIONS, EVALUATIONS = range(6)
STATUS_FIELDS = 6


def clear(status: Any) -> None:
    """Reset the status block for a new run."""
    status[:] = [0.0, -1.0, 0.0, -1.0, 0.0, 0.0]


def generation_of(status: Any, harness: bool = False) -> int | None:
    """The generation of the call in progress (or, with ``harness``, of the last call that
    ended); None before the first generation."""
    value = int(status[LAST_GENERATION if harness else GENERATION])
    return None if value < 0 else value


class SharedWatch:
    """The runner's :class:`~.runner.Watch`, written to the shared status block."""

    def __init__(self, status: Any) -> None:
        self.status = status

    def enter(self, call: str, generation: int | None) -> None:
        self.status[STARTED] = time.monotonic()
        self.status[GENERATION] = -1.0 if generation is None else float(generation)
        self.status[CALL] = float(CODE[call])  # written last: the call is on from here

    def leave(self) -> None:
        self.status[LAST_GENERATION] = self.status[GENERATION]
        self.status[CALL] = 0.0

    def progress(self, generations: int, evaluations: int) -> None:
        self.status[GENERATIONS] = float(generations)
        self.status[EVALUATIONS] = float(evaluations)


def _exit_with_parent(parent: int) -> None:
    """End this process soon after ``parent`` (the process that started it) is gone
    (never returns)."""
    while os.getppid() == parent:
        time.sleep(1.0)
    os._exit(0)


def _limit_memory(megabytes: int | None) -> None:
    """Let the coming run grow this process by at most ``megabytes`` (None: no limit);
    an allocation past it fails with MemoryError inside the run."""
    _, hard = resource.getrlimit(resource.RLIMIT_AS)
    if megabytes is None:
        resource.setrlimit(resource.RLIMIT_AS, (hard, hard))
        return
    soft = address_space() + megabytes * 1024 * 1024
    if hard != resource.RLIM_INFINITY:
        soft = min(soft, hard)
    resource.setrlimit(resource.RLIMIT_AS, (soft, hard))


def main(
    conn: Connection,
    status: Any,
    max_batch: int,
    memory_limit_mb: int | None,
    time_limit: float | None,
) -> None:
    """The worker's loop (the target of its process); see the module docstring."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    os.setpgrp()
    become_subreaper()
    available()  # read the installed evolvers once, here: every run's process inherits it
    # the process that started this one: the coordinator, or a forkserver of it
    parent = os.getppid()
    threading.Thread(target=_exit_with_parent, args=(parent,), daemon=True).start()
    watch = SharedWatch(status)
    while True:
        try:
            spec = conn.recv()
        except (EOFError, OSError):
            return
        if spec is None:
            return
        try:
            _limit_memory(memory_limit_mb)
            record = run_one(spec, watch, max_batch, memory_limit_mb, time_limit, isolate=True)
            reply = ("record", record)
        except BaseException:  # a fault of the harness: the coordinator logs it
            reply = ("error", traceback.format_exc())
        finally:
            _limit_memory(None)
            end_descendants()  # whatever the run started, however it detached
        conn.send(reply)

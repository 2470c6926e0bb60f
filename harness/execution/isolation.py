"""A Python evolver in a process of its own: the worker's side.

:class:`IsolatedEvolver` offers the evolver contract to the runner and runs the evolver in
a process forked for the run (:mod:`.evolver_host`), so evolver code never shares a process
with the task, the evaluation, the counting or the run's record. What crosses back is
data that the worker checks before using it: a batch as flat arrays
(:meth:`~neuroyard.core.flat.FlatBatch.from_bytes`: structure checked here, the network
format's rules by the compiler), settings and statistics as JSON checked again by the
rules of :mod:`.contract`. The worker times every reply by its own clock: a reply that
does not come within the time limit ends the evolver's process, whatever that process
does meanwhile.

Ending (:meth:`IsolatedEvolver.end`, at the end of every run): the process group of the
evolver's process (its session) is killed and the process reaped; what it started and
detached from its session is ended by the worker's reaping of its descendants
(:mod:`.descendants`).
"""

from __future__ import annotations

import contextlib
import os
import signal
import time
from multiprocessing import Pipe
from typing import Any

from neuroyard.core import jsonsafe
from neuroyard.core.child_process import exit_words
from neuroyard.core.evolver import Evaluation, Outcome, Problem
from neuroyard.core.evolver_registry import EvolverSpec, preload_own
from neuroyard.core.flat import FlatBatch
from neuroyard.execution import evolver_host
from neuroyard.execution.contract import checked_settings, checked_stats

MAX_REPLY_BYTES = 512 * 2**20  # largest reply read from an evolver's process (ours)


class IsolatedFault(Exception):
    """The evolver's process failed a call: how, in words completed by the call's label."""

    def __init__(self, kind: str, detail: str = "") -> None:
        super().__init__(kind, detail)
        self.kind, self.detail = kind, detail

    def reason(self, label: str, memory_note: str) -> str:
        """The failed run's reason for the call ``label`` (``ask() in generation 3``)."""
        if self.kind == "raised":
            return f"{label} raised {self.detail}"
        if self.kind == "memory":
            return f"{label} ran out of memory{memory_note}"
        if self.kind == "contract":
            return self.detail
        if self.kind == "timeout":
            return f"{label} ran past {self.detail} s (the time limit)"
        if self.kind == "died":
            return f"evolver process {self.detail} during {label}"
        return f"{label}: the evolver process sent {self.detail}"  # garbled


class IsolatedEvolver:
    """The evolver of ``spec`` in a process forked for this run, built there at once.

    ``time_limit``: seconds each reply may take (None: no limit); ``memory_limit_mb``:
    megabytes the evolver's process may grow by (None: no limit); ``max_batch``: the most
    networks a batch may hold. ``optional``: the
    optional methods of the contract (``settings``, ``stats``, ``stop``) the evolver has.
    Raises :class:`IsolatedFault` when the build fails."""

    def __init__(
        self,
        spec: EvolverSpec,
        time_limit: float | None,
        memory_limit_mb: int | None,
        max_batch: int,
    ) -> None:
        self.time_limit = time_limit
        preload_own(spec)
        mine, theirs = Pipe()
        worker = os.getpid()
        self.pid = os.fork()
        if self.pid == 0:  # the evolver's process
            mine.close()
            evolver_host.serve(theirs, spec, memory_limit_mb, worker)  # never returns
        theirs.close()
        self.conn = mine
        self.status: int | None = None
        self.max_batch = max_batch
        self.generation = -1
        self.stats_due = self.batch_due = False
        try:
            self.optional = set(self._reply(expect=list))
        except BaseException:
            self.end()
            raise

    def start(self, problem: Problem, seed: int, max_batch: int) -> None:
        self._call(("start", problem, seed, max_batch))

    def settings(self) -> dict[str, Any]:
        return checked_settings(self._call(("settings",), expect=dict))

    def ask_flat(self, generation: int) -> FlatBatch:
        """The batch of ``generation`` as flat arrays, checked in structure; sent unasked
        after the last ``tell`` when the run went on (:mod:`.evolver_host`)."""
        if not self.batch_due:
            self._send(("ask", generation))
        self.batch_due = False
        data = self._receive()
        if data[:1] != b"B":
            self._refused(data)
        try:
            return FlatBatch.from_bytes(data[1:], self.max_batch)
        except ValueError as exc:
            raise IsolatedFault("garbled", f"a broken batch ({exc})") from None

    def tell(self, evaluations: tuple[Evaluation, ...], generation: int, more: bool) -> None:
        """Tell the results of ``generation``; with ``more`` the run goes on, and the
        evolver's process asks the next batch at once."""
        self.generation = generation
        # plain lists: pickling the Evaluation objects themselves costs about 1 ms a batch
        fitness = [e.fitness for e in evaluations]
        behaviours = [e.behaviour for e in evaluations]
        self._send(("tell", fitness, behaviours, generation, more))
        self.stats_due = "stats" in self.optional
        self.batch_due = more
        self._reply()

    def stats(self) -> dict[str, float]:
        """The statistics the evolver's process sent after the last ``tell``."""
        self.stats_due = False
        return checked_stats(self._reply(expect=dict), self.generation)

    def stop(self, outcome: Outcome) -> None:
        self._call(("stop", outcome))

    def end(self) -> None:
        """Kill the evolver's process group and reap the process (once)."""
        if self.status is None:
            with contextlib.suppress(ProcessLookupError, PermissionError):
                os.killpg(self.pid, signal.SIGKILL)
            with contextlib.suppress(ProcessLookupError):
                os.kill(self.pid, signal.SIGKILL)
            self._reap(block=True)
        self.conn.close()

    # --- one exchange ----------------------------------------------------------------

    def _call(self, request: tuple, expect: type | None = None) -> Any:
        self._send(request)
        return self._reply(expect)

    def _send(self, request: tuple) -> None:
        try:
            self.conn.send(request)
        except (BrokenPipeError, ConnectionError, OSError):
            self._died()

    def _reply(self, expect: type | None = None) -> Any:
        """The JSON value of an ``O`` reply (of type ``expect``, None: null)."""
        data = self._receive()
        if data[:1] != b"O":
            self._refused(data)
        try:
            value = jsonsafe.loads(data[1:])
        except ValueError as exc:
            raise IsolatedFault("garbled", f"a reply that is not JSON ({exc})") from None
        if (expect is None and value is not None) or (
            expect is not None and not isinstance(value, expect)
        ):
            raise IsolatedFault("garbled", f"an unexpected reply {data[:80]!r}")
        return value

    def _receive(self) -> bytes:
        """The next reply, within the time limit by this process's clock."""
        if not self.conn.poll(self.time_limit):
            self.end()
            raise IsolatedFault("timeout", f"{self.time_limit:g}")
        try:
            return self.conn.recv_bytes(MAX_REPLY_BYTES)
        except (EOFError, ConnectionError):
            self._died()
        except OSError as exc:  # longer than MAX_REPLY_BYTES
            self.end()
            raise IsolatedFault("garbled", f"a reply too long ({exc})") from None

    def _refused(self, data: bytes) -> None:
        """Raise the failure an ``F``, ``R`` or ``M`` reply reports."""
        tag, body = data[:1], data[1:]
        if tag == b"M":
            raise IsolatedFault("memory")
        try:
            value = jsonsafe.loads(body) if tag in (b"F", b"R") else None
        except ValueError:
            value = None
        if tag == b"F" and isinstance(value, str):
            raise IsolatedFault("contract", value)
        if tag == b"R" and isinstance(value, list) and len(value) == 2:
            raise IsolatedFault("raised", f"{value[0]}: {value[1]}")
        raise IsolatedFault("garbled", f"an unexpected reply {data[:80]!r}")

    def _died(self) -> None:
        """The evolver's process closed its end: raise how it ended."""
        self._reap(block=True, timeout=5.0)
        raise IsolatedFault("died", exit_words(self.status))

    def _reap(self, block: bool, timeout: float = 0.0) -> None:
        """Collect the process's exit status when it has ended (waiting up to ``timeout``
        seconds, then killing it)."""
        deadline = time.monotonic() + timeout
        while self.status is None:
            try:
                pid, raw = os.waitpid(self.pid, os.WNOHANG)
            except ChildProcessError:  # reaped elsewhere: its status is lost
                self.status = -signal.SIGKILL
                return
            if pid:
                self.status = os.waitstatus_to_exitcode(raw)
                return
            if not block:
                return
            if time.monotonic() >= deadline:
                with contextlib.suppress(ProcessLookupError):
                    os.killpg(self.pid, signal.SIGKILL)
                deadline = float("inf")
            time.sleep(0.005)

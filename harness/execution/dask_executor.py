"""Runs on a Dask cluster (dask.distributed): one Dask task per run.

:class:`DaskExecutor` submits each run to a ``distributed.Client`` (an existing scheduler's
address, or a :class:`distributed.LocalCluster` on this machine bound to loopback) and
collects what comes back; only the coordinator writes the store. On the Dask worker, the
run executes under a :class:`~.supervisor.Supervisor` of its own (:func:`supervised_run`),
so the time and memory limits and every fault rule of the pool hold there too: a
misbehaving evolver fails its own run and the Dask worker lives on. As in the pool, the
supervised worker process is forked where the platform allows it (Linux): the Dask worker's
other threads (its event loop, its task threads) hold no lock the forked process needs,
which runs neuroyard's own code only (CPython renews the import lock after a fork). A
forkserver would import everything a second time, about a second per Dask worker.

A Dask worker that is lost mid-run (killed, its machine gone) has its run started again on
another worker by the Dask scheduler; a run depends only on its spec, so the record equals
an undisturbed one. A run that loses its worker more often than the scheduler allows
(``distributed.scheduler.allowed-failures``) comes back as a fault of the harness: not
stored, run again when the campaign resumes.

The supervised run starts processes of its own, which Python forbids in a daemonic
process: Dask workers must run with ``distributed.worker.daemon`` off (the Dask setting;
``DASK_DISTRIBUTED__WORKER__DAEMON=False`` in their environment). :func:`local_cluster`
sets it for the workers it starts, and forks them from this process where the platform
allows it, so that they start with neuroyard already imported.
"""

from __future__ import annotations

import contextlib
import logging
import multiprocessing
import os
import signal
import threading
import traceback
from typing import Any

import dask
import distributed

from neuroyard.core import interrupts
from neuroyard.core.errors import NeuroyardError
from neuroyard.execution.descendants import end_descendants
from neuroyard.execution.supervisor import START_METHOD, Finished, Limits, Supervisor
from neuroyard.records.runs import RunSpec

CONNECT_TIMEOUT = 10.0  # s to reach a scheduler before giving up (ours)
# Dask settings for the workers local_cluster starts: not daemonic (see the module
# docstring), and forked from this process where the platform allows it, as the pool's are.
LOCAL_WORKERS = {
    "distributed.worker.daemon": False,
    "distributed.worker.multiprocessing-method": START_METHOD,
}

# Runs handed to the cluster per worker thread: one running, one waiting, so a worker that
# ends a run starts the next at once instead of waiting for the coordinator (ours).
QUEUED_PER_THREAD = 2

_local = threading.local()  # one supervisor per Dask worker thread


NOT_DAEMON_HINT = (
    "start the workers with distributed.worker.daemon off "
    "(DASK_DISTRIBUTED__WORKER__DAEMON=False in their environment)"
)


def _daemonic() -> bool:
    return multiprocessing.current_process().daemon


def supervised_run(spec: RunSpec, limits: Limits) -> Finished:
    """Run ``spec`` under this thread's supervisor (one worker process, reused by later runs
    with the same limits, so kernels load once) and return what came of it; the function a
    Dask task calls."""
    if _daemonic():
        raise NeuroyardError(
            f"this Dask worker is a daemonic process and cannot supervise a run: {NOT_DAEMON_HINT}"
        )
    supervisor = getattr(_local, "supervisor", None)
    if supervisor is None or supervisor.limits != limits:
        if supervisor is not None:
            supervisor.close()
        supervisor = _local.supervisor = Supervisor(1, limits)
    supervisor.submit(spec)
    while True:
        for finished in supervisor.collect(timeout=1.0):
            return finished


def local_cluster(workers: int) -> distributed.LocalCluster:
    """A cluster of ``workers`` Dask worker processes on this machine, one thread each,
    listening on loopback only. Sets :data:`LOCAL_WORKERS` in this process's Dask
    configuration for good: a nanny reads it again whenever it restarts a lost worker."""
    dask.config.set(LOCAL_WORKERS)
    return distributed.LocalCluster(
        n_workers=workers,
        threads_per_worker=1,
        processes=True,
        silence_logs=logging.CRITICAL,  # a closing cluster's warnings are not the user's news
        host="127.0.0.1",
        dashboard_address="127.0.0.1:0",  # its HTTP server too (bokeh absent: no dashboard)
    )


def connect(address: str) -> distributed.Client:
    """A client of the Dask scheduler at ``address`` (``tcp://HOST:PORT``); a
    :class:`NeuroyardError` naming the address when it cannot be reached."""
    try:
        return distributed.Client(address, timeout=CONNECT_TIMEOUT)
    except (OSError, TimeoutError, ValueError) as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise NeuroyardError(f"cannot reach the Dask scheduler at {address!r}: {reason}") from None


class DaskExecutor:
    """The executor interface (:mod:`.executors`) over a Dask client.

    ``capacity`` is :data:`QUEUED_PER_THREAD` runs for each of the cluster's worker threads
    at the time it is read (for at least one thread, so a cluster that is still starting its
    workers queues runs for it). ``cluster``:
    a cluster this executor started and closes with itself (None for an existing
    scheduler's, which is left running)."""

    def __init__(
        self,
        client: distributed.Client,
        limits: Limits | None = None,
        cluster: distributed.LocalCluster | None = None,
    ) -> None:
        self.client = client
        self.limits = limits or Limits()
        self.cluster = cluster
        self.futures: dict[distributed.Future, RunSpec] = {}

    @property
    def capacity(self) -> int:
        return QUEUED_PER_THREAD * max(1, sum(self.client.nthreads().values()))

    def submit(self, spec: RunSpec) -> None:
        future = self.client.submit(
            supervised_run, spec, self.limits, key=f"run-{spec.key}", pure=False
        )
        self.futures[future] = spec

    def collect(self, timeout: float) -> list[Finished]:
        """Wait up to ``timeout`` s for runs to end; return those that did (maybe none)."""
        if not self.futures:
            return []
        try:
            done, _ = distributed.wait(
                list(self.futures), timeout=timeout, return_when="FIRST_COMPLETED"
            )
        except TimeoutError:
            return []
        return [self._finished(future) for future in done]

    def _finished(self, future: distributed.Future) -> Finished:
        spec = self.futures.pop(future)
        try:
            result: Any = future.result()
        except Exception as exc:  # the task failed on the cluster: a fault of the harness
            text = "".join(traceback.format_exception(exc))
            return Finished(spec, None, f"Dask task {future.key} failed:\n{text}")
        finally:
            future.release()
        return result

    def close(self) -> None:
        """Cancel the runs still out, close the client and any cluster started here: its
        worker processes and everything below them are killed first, so that closing
        does not wait for runs to notice (a Dask nanny gives a busy worker 4 s)."""
        if self.futures:
            self.client.cancel(list(self.futures))
            self.futures.clear()
        self.client.close()
        if self.cluster is not None:
            for nanny in list(self.cluster.workers.values()):
                pid = getattr(nanny, "pid", None)
                if pid:
                    end_descendants(pid)
                    with contextlib.suppress(ProcessLookupError, PermissionError):
                        os.kill(pid, signal.SIGKILL)
            self.cluster.close()


def dask_executor(workers: int, limits: Limits, scheduler: str | None = None) -> DaskExecutor:
    """A :class:`DaskExecutor` on the scheduler at ``scheduler`` (whose workers must not be
    daemonic: a :class:`NeuroyardError` naming the first that is), or (None) on a new
    :func:`local_cluster` of ``workers`` workers."""
    if scheduler is not None:
        client = connect(scheduler)
        daemonic = sorted(address for address, is_so in client.run(_daemonic).items() if is_so)
        if daemonic:
            client.close()
            raise NeuroyardError(
                f"the Dask worker at {daemonic[0]} is a daemonic process and cannot "
                f"supervise runs: {NOT_DAEMON_HINT}"
            )
        return DaskExecutor(client, limits)
    # a Ctrl-C halfway through the start would leave worker processes that nothing ends
    # (the interpreter then waits for them at exit): it is acted on once the cluster is up
    with interrupts.deferred() as pressed:
        cluster = local_cluster(workers)
        executor = DaskExecutor(distributed.Client(cluster), limits, cluster)
    if pressed.is_set():
        pressed.clear()  # handled here
        executor.close()
        raise KeyboardInterrupt
    return executor

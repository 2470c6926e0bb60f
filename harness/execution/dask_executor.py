"""Runs on a Dask cluster (dask.distributed): one Dask task per run.

:class:`DaskExecutor` submits each run to a ``distributed.Client`` (an existing scheduler's
address, or a :class:`distributed.LocalCluster` on this machine bound to loopback) and
collects what comes back; only the coordinator writes the store. On the Dask worker, the
run executes under a :class:`~.supervisor.Supervisor` of its own (:func:`supervised_run`),
so the time and memory limits and every fault rule of the pool hold there too: a
misbehaving evolver fails its own run and the Dask worker lives on. Its worker processes
start from a forkserver, since forking a Dask worker's threads is unsafe.

A Dask worker that is lost mid-run (killed, its machine gone) has its run started again on
another worker by the Dask scheduler; a run depends only on its spec, so the record equals
an undisturbed one. A run that loses its worker more often than the scheduler allows
(``distributed.scheduler.allowed-failures``) comes back as a fault of the harness: not
stored, run again when the campaign resumes.

The supervised run starts processes of its own, which Python forbids in a daemonic
process: Dask workers must run with ``distributed.worker.daemon`` off (the Dask setting;
``DASK_DISTRIBUTED__WORKER__DAEMON=False`` in their environment). :func:`local_cluster`
sets it for the workers it starts.
"""

from __future__ import annotations

import multiprocessing
import threading
import traceback
from typing import Any

import dask
import distributed

from neuroyard.harness.core.errors import NeuroyardError
from neuroyard.harness.execution.supervisor import Finished, Limits, Supervisor
from neuroyard.harness.records.runs import RunSpec

CONNECT_TIMEOUT = 10.0  # s to reach a scheduler before giving up (ours)
# imported once by the forkserver, so that each supervised worker starts ready
PRELOAD = ["neuroyard.harness.execution.worker", "neuroyard.tasks", "neuroyard.reference"]
NOT_DAEMON = {"distributed.worker.daemon": False}

_local = threading.local()  # one supervisor per Dask worker thread


def supervised_run(spec: RunSpec, limits: Limits) -> Finished:
    """Run ``spec`` under this thread's supervisor (one worker process, reused by later runs
    with the same limits) and return what came of it; the function a Dask task calls."""
    if multiprocessing.current_process().daemon:
        raise NeuroyardError(
            "this Dask worker is a daemonic process and cannot supervise a run: start the "
            "workers with distributed.worker.daemon off (DASK_DISTRIBUTED__WORKER__DAEMON=False)"
        )
    supervisor = getattr(_local, "supervisor", None)
    if supervisor is None or supervisor.limits != limits:
        if supervisor is not None:
            supervisor.close()
        context = multiprocessing.get_context("forkserver")
        context.set_forkserver_preload(PRELOAD)
        supervisor = _local.supervisor = Supervisor(1, limits, start_method="forkserver")
    supervisor.submit(spec)
    while True:
        for finished in supervisor.collect(timeout=1.0):
            return finished


def local_cluster(workers: int) -> distributed.LocalCluster:
    """A cluster of ``workers`` Dask worker processes on this machine, one thread each,
    listening on loopback only. Turns ``distributed.worker.daemon`` off
    in this process for good: a nanny reads it again whenever it restarts a lost worker."""
    dask.config.set(NOT_DAEMON)
    return distributed.LocalCluster(
        n_workers=workers,
        threads_per_worker=1,
        processes=True,
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

    ``capacity`` is the cluster's number of worker threads at the time it is read (at
    least 1, so a cluster that is still starting its workers queues one run). ``cluster``:
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
        return max(1, sum(self.client.nthreads().values()))

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
        """Cancel the runs still out, close the client and any cluster started here."""
        if self.futures:
            self.client.cancel(list(self.futures))
            self.futures.clear()
        self.client.close()
        if self.cluster is not None:
            self.cluster.close()


def dask_executor(workers: int, limits: Limits, scheduler: str | None = None) -> DaskExecutor:
    """A :class:`DaskExecutor` on the scheduler at ``scheduler``, or (None) on a new
    :func:`local_cluster` of ``workers`` workers."""
    if scheduler is not None:
        return DaskExecutor(connect(scheduler), limits)
    cluster = local_cluster(workers)
    return DaskExecutor(distributed.Client(cluster), limits, cluster)

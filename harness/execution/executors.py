"""The executor seam: what runs a campaign's runs, found by name.

A campaign (:func:`~.campaign.execute`) hands runs to an executor and collects them; it
never knows where they run. An executor has room for ``capacity`` runs at once (read each
time the campaign hands out runs, so a cluster may grow), takes a
:class:`~neuroyard.records.runs.RunSpec` with ``submit``, gives back the runs that
are over with ``collect`` (waiting at most ``timeout`` seconds for one) as
:class:`~.supervisor.Finished` items, and ends everything it started with ``close``.
An executor never writes the store: the campaign's coordinator does.

Built in: ``pool`` (supervised worker processes on this machine, :class:`~.supervisor.
Supervisor`) and ``in-process`` (this process, one run at a time, for debugging). Others
are found by name in the entry-point group ``neuroyard.executors`` and loaded on first use:
neuroyard registers ``dask`` there (:mod:`.dask_executor`). A factory is called as
``factory(workers, limits, **options)``.
"""

from __future__ import annotations

from collections.abc import Callable
from importlib.metadata import entry_points
from typing import Any, Protocol

from neuroyard.core.errors import NeuroyardError
from neuroyard.execution.supervisor import Finished, InProcess, Limits, Supervisor
from neuroyard.records.runs import RunSpec

ENTRY_POINT_GROUP = "neuroyard.executors"


class Executor(Protocol):
    @property
    def capacity(self) -> int: ...

    def submit(self, spec: RunSpec) -> None: ...

    def collect(self, timeout: float) -> list[Finished]: ...

    def close(self) -> None: ...


ExecutorFactory = Callable[..., Executor]

BUILT_IN: dict[str, ExecutorFactory] = {
    "pool": lambda workers, limits: Supervisor(workers, limits),
    "in-process": lambda workers, limits: InProcess(limits),
}


def executor_names() -> list[str]:
    """Every executor name: the built-in ones, then those of the entry-point group."""
    found = sorted(ep.name for ep in entry_points(group=ENTRY_POINT_GROUP))
    return [*BUILT_IN, *(name for name in found if name not in BUILT_IN)]


def make_executor(
    name: str, workers: int = 1, limits: Limits | None = None, **options: Any
) -> Executor:
    """The executor registered as ``name`` with ``workers`` parallel runs under ``limits``
    and the executor's own ``options`` (the ``dask`` executor's ``scheduler``)."""
    factory = BUILT_IN.get(name)
    if factory is None:
        found = [ep for ep in entry_points(group=ENTRY_POINT_GROUP) if ep.name == name]
        if not found:
            known = ", ".join(executor_names())
            raise NeuroyardError(f"unknown executor {name!r} (known: {known})")
        factory = found[0].load()
    return factory(workers, limits or Limits(), **options)

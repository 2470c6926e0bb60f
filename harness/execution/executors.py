"""The executor seam: what runs a campaign's runs, found by name.

A campaign (:func:`~.campaign.execute`) hands runs to an executor and collects them; it
never knows where they run. An executor has room for ``capacity`` runs at once, takes a
:class:`~neuroyard.harness.records.runs.RunSpec` with ``submit``, gives back the runs that
are over with ``collect`` (waiting at most ``timeout`` seconds for one) as
:class:`~.supervisor.Finished` items, and ends everything it started with ``close``.
An executor never writes the store: the campaign's coordinator does.

Built in: ``pool`` (supervised worker processes on this machine, :class:`~.supervisor.
Supervisor`) and ``in-process`` (this process, one run at a time, for debugging). A
distributed executor is one more class with the same four members and one more entry here.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Protocol

from neuroyard.harness.core.errors import NeuroyardError
from neuroyard.harness.execution.supervisor import Finished, InProcess, Limits, Supervisor
from neuroyard.harness.records.runs import RunSpec


class Executor(Protocol):
    capacity: int

    def submit(self, spec: RunSpec) -> None: ...

    def collect(self, timeout: float) -> list[Finished]: ...

    def close(self) -> None: ...


# name -> factory(workers, limits)
EXECUTORS: dict[str, Callable[[int, Limits], Executor]] = {
    "pool": Supervisor,
    "in-process": lambda workers, limits: InProcess(limits),
}


def make_executor(name: str, workers: int = 1, limits: Limits | None = None) -> Executor:
    """The executor registered as ``name`` with ``workers`` parallel runs under ``limits``."""
    try:
        factory = EXECUTORS[name]
    except KeyError:
        known = ", ".join(EXECUTORS)
        raise NeuroyardError(f"unknown executor {name!r} (known: {known})") from None
    return factory(workers, limits or Limits())

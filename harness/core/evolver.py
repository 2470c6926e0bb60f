"""The evolver contract (ask/tell) and how evolvers are found.

An evolver is any object with these methods::

    start(problem: Problem, seed: int) -> None     # once, before anything else
    ask() -> Sequence[Network]                      # one batch = one generation
    tell(evaluations: Sequence[Evaluation]) -> None # results for the last batch, same order
    stats() -> Mapping[str, float]                  # optional: evolver-side figures,
                                                    #   read after each tell()
    settings() -> Mapping[str, Any]                 # optional: effective configuration,
                                                    #   defaults included (JSON values)
    stop(outcome: Outcome) -> None                  # optional: once, when the run ends

The order of calls in a run: ``start``, ``settings``, then per generation ``ask``, (the
harness evaluates and success-tests), ``tell``, ``stats``; finally ``stop``. ``tell``
receives the results of every evaluated batch, the last one included: also the batch whose
network solved the task, and a batch cut by the budget, whose ``tell`` gets the results of
its evaluated prefix only (the first ``budget - evaluations so far`` networks, in order).
``stop`` is called once whether the run solved, spent its budget or failed (not when the
evolver's process died or was ended). A batch may hold at most :data:`MAX_BATCH` networks
unless the campaign allows more.

The harness evaluates every network it is given and counts the evaluations itself; the
evolver sees only the results. How evolvers are found and built:
:mod:`.evolver_registry`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Protocol, runtime_checkable

from neuroyard.core.network import Network

MAX_BATCH = 10_000  # networks per ask() unless a campaign allows more (a guard rail, ours)


@dataclass(frozen=True)
class Problem:
    """What an evolver is told about the task at ``start``.

    ``inputs``/``outputs``: counts of input and output nodes a network must have (a bias
    node is optional and not counted). ``budget``: evaluations the harness will make at
    most. ``max_fitness``: the best possible fitness, or None if unbounded above;
    ``min_fitness``: the worst (every fitness the evolver is told is finite and within them).
    ``behaviour_size``: length of the behaviour descriptor given with each evaluation, or
    None when the task defines none. ``needs_memory``: True when observations hide part of
    the state, so a recurrent network is needed.
    """

    task: str
    inputs: int
    outputs: int
    budget: int
    max_fitness: float | None = None
    min_fitness: float = 0.0
    behaviour_size: int | None = None
    needs_memory: bool = False
    settings: Mapping[str, Any] = field(default_factory=dict)


@dataclass(frozen=True, slots=True)
class Evaluation:
    """The result of one evaluation: fitness (higher is better) and optional behaviour."""

    fitness: float
    behaviour: tuple[float, ...] | None = None


@dataclass(frozen=True)
class Outcome:
    """How a run ended, given to the evolver's optional ``stop(outcome)``.

    ``status``: ``"solved"``, ``"unsolved"`` (the budget is spent) or ``"failed"``;
    ``generations`` and ``evaluations`` made; ``failure``: the reason of a failed run."""

    status: str
    generations: int
    evaluations: int
    failure: str | None = None


@runtime_checkable
class Evolver(Protocol):
    def start(self, problem: Problem, seed: int) -> None: ...

    def ask(self) -> Sequence[Network]: ...

    def tell(self, evaluations: Sequence[Evaluation]) -> None: ...

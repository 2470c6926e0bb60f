"""The task contract.

A task has a versioned id (``name-vN``: any change to dynamics, scaling or criteria bumps
N), settings with defaults (every run records the settings it used), and a spec record.
The harness calls:

* ``evaluate(net) -> Evaluation``: the fitness of one compiled network; one call is one
  counted evaluation.
* ``success_test(net, evaluation) -> SuccessCheck``: the task's success criterion on one
  network of a generation (the fittest one not tested before in the run); its cost
  (episodes run) is counted apart from evaluations. It must be deterministic: the harness
  never tests an identical network twice in a run.

Any randomness of the task itself comes from the ``seed`` it is built with; the harness
derives that seed from (task, run index), so every evolver meets the same task instances.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, ClassVar

from neuroyard.harness.core.batch import CompiledBatch
from neuroyard.harness.core.compiled import CompiledNetwork
from neuroyard.harness.core.errors import TaskError
from neuroyard.harness.core.evolver import Evaluation, Problem
from neuroyard.harness.core.network import Network
from neuroyard.harness.core.options import matches_default


@dataclass(frozen=True)
class TaskSpec:
    """What a task is: interface, fitness, success criterion, default budget, sources.

    Fitness bounds: every evaluation's fitness lies in ``[min_fitness, max_fitness]``
    (``max_fitness`` None: no upper bound, but always finite). A task may return a
    non-finite fitness only to say that the network's output was non-finite; the harness
    then records ``min_fitness``, the task's worst, and counts the evaluation in the
    generation log. A finite fitness outside the bounds is a fault of the task.

    For evolver authors: ``observations`` names the inputs in input-node order with their
    meaning and scaling, ``actions`` the outputs in output-node order with how each is
    turned into an action, ``output_rule`` how an output outside its meaningful range (or
    non-finite) is treated.
    """

    id: str
    inputs: int
    outputs: int
    fitness: str
    success: str
    default_budget: int
    sources: tuple[str, ...]
    max_fitness: float | None = None
    min_fitness: float = 0.0
    behaviour_size: int | None = None
    needs_memory: bool = False
    settings: Mapping[str, Any] = field(default_factory=dict)
    observations: tuple[str, ...] = ()
    actions: tuple[str, ...] = ()
    output_rule: str = ""


@dataclass(frozen=True)
class SuccessCheck:
    """Outcome of a success test: solved?, episodes it ran, and task-specific details."""

    solved: bool
    evaluations: int
    details: Mapping[str, Any] = field(default_factory=dict)


class Task(ABC):
    """Base class. Subclasses set ``id`` and ``defaults`` and implement the abstract methods."""

    id: ClassVar[str]
    defaults: ClassVar[Mapping[str, Any]] = {}

    def __init__(self, seed: int = 0, **settings: Any) -> None:
        unknown = sorted(set(settings) - set(self.defaults))
        if unknown:
            known = ", ".join(sorted(self.defaults)) or "none"
            raise TaskError(f"task {self.id}: unknown setting {unknown[0]!r} (known: {known})")
        merged = dict(self.defaults)
        for key, value in settings.items():
            merged[key] = _coerce(self.id, key, self.defaults[key], value)
        self.seed = seed
        self.settings: dict[str, Any] = merged
        self.check_settings()

    def check_settings(self) -> None:  # noqa: B027 - optional hook
        """Raise :class:`TaskError` naming the setting when a value is out of range."""

    @property
    @abstractmethod
    def spec(self) -> TaskSpec: ...

    @abstractmethod
    def evaluate(self, net: CompiledNetwork) -> Evaluation: ...

    @abstractmethod
    def success_test(self, net: CompiledNetwork, evaluation: Evaluation) -> SuccessCheck: ...

    def evaluate_batch(self, batch: CompiledBatch) -> list[Evaluation]:
        """Evaluate every network of a batch, in order; each is one counted evaluation.

        Override with a kernel that loops over :func:`~neuroyard.harness.batch.member`
        when one evaluation is so cheap that a Python call per network would dominate."""
        return [self.evaluate(batch.network(i)) for i in range(batch.size)]

    def replay(self, network: Network, steps: int, out: Path) -> str:
        """Optional: run ``network`` for at most ``steps`` steps, draw what it did into the
        image file ``out`` and return a one-line summary (``neuroyard replay``). Tasks
        without a picture of an episode raise :class:`TaskError`."""
        raise TaskError(f"task {self.id} has no replay")

    def problem(self, budget: int) -> Problem:
        """The :class:`Problem` an evolver is started with."""
        spec = self.spec
        return Problem(
            task=spec.id,
            inputs=spec.inputs,
            outputs=spec.outputs,
            budget=budget,
            max_fitness=spec.max_fitness,
            min_fitness=spec.min_fitness,
            behaviour_size=spec.behaviour_size,
            needs_memory=spec.needs_memory,
            settings=dict(self.settings),
        )


def _coerce(task_id: str, key: str, default: Any, value: Any) -> Any:
    """Check a setting against the type of its default (ints are accepted for floats)."""
    if not matches_default(default, value):
        raise TaskError(
            f"task {task_id}: setting {key!r} must be {type(default).__name__}, got {value!r}"
        )
    return float(value) if isinstance(default, float) else value

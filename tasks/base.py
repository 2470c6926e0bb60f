"""The task contract.

A task has a versioned id (``name-vN``: any change to dynamics, scaling or criteria bumps
N), settings declared as :class:`~neuroyard.core.options.Option` (default, range,
unit, source; every run records all of them), and a spec record.
The harness calls:

* ``evaluate(net) -> Evaluation``: the fitness of one compiled network; one call is one
  counted evaluation.
* ``success_test(net, evaluation) -> SuccessCheck``: the task's success criterion on one
  network of a generation (the fittest one not tested before in the run); its cost
  (episodes run) is counted apart from evaluations. It must be deterministic: the harness
  never tests an identical network twice in a run.

Any randomness of the task itself comes from the ``seed`` it is built with (positional, so
that a task may have a setting called ``seed``, such as the maze a generated task draws); the harness
derives that seed from (task, run index), so every evolver meets the same task instances.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, BinaryIO, ClassVar

from neuroyard.core.batch import CompiledBatch, compile_batch
from neuroyard.core.compiled import CompiledNetwork
from neuroyard.core.errors import TaskError
from neuroyard.core.evolver import Evaluation, Problem
from neuroyard.core.network import Network, fully_connected
from neuroyard.core.options import Option, OptionTable


@dataclass(frozen=True)
class Metric:
    """An extra figure a task's success test yields (beside solved or not): its ``name``,
    which is also its key in :attr:`SuccessCheck.details`, what it measures, its ``unit``
    and whether a ``higher`` or ``lower`` value is better. Summaries and reports show the
    mean over solved runs of every metric a task declares, with no harness change."""

    name: str
    description: str
    unit: str = ""
    better: str = "higher"

    def __post_init__(self) -> None:
        if self.better not in ("higher", "lower"):
            raise ValueError(f"metric {self.name}: better must be 'higher' or 'lower'")


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
    non-finite) is treated. ``metrics``: the extra figures the success test reports
    (:class:`Metric`). ``facts``: figures that describe this task instance under its
    settings (a maze's deception score), by name; every run record keeps them
    (``RunRecord.task_facts``) so that outcomes can be set against them.
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
    metrics: tuple[Metric, ...] = ()
    facts: Mapping[str, float] = field(default_factory=dict)


@dataclass(frozen=True)
class SuccessCheck:
    """Outcome of a success test: solved?, episodes it ran, and task-specific details."""

    solved: bool
    evaluations: int
    details: Mapping[str, Any] = field(default_factory=dict)


class Task(ABC):
    """Base class. Subclasses set ``id`` and ``options`` and implement the abstract methods."""

    id: ClassVar[str]
    options: ClassVar[tuple[Option, ...]] = ()
    needs: ClassVar[tuple[str, ...]] = ()  # settings with no default that must be given

    def __init__(self, seed: int = 0, /, **settings: Any) -> None:
        self.seed = seed
        self.settings: dict[str, Any] = self.option_table().resolve(settings)
        self.check_settings()

    @classmethod
    def option_table(cls) -> OptionTable:
        """The task's settings as an option table (errors are :class:`TaskError`)."""
        return OptionTable(f"task {cls.id}", cls.options, noun="setting", error=TaskError)

    def check_settings(self) -> None:  # noqa: B027 - optional hook
        """Raise :class:`TaskError` naming the settings when values that are each within
        their range do not fit together (ranges of single settings are in ``options``)."""

    @property
    @abstractmethod
    def spec(self) -> TaskSpec: ...

    @abstractmethod
    def evaluate(self, net: CompiledNetwork) -> Evaluation: ...

    @abstractmethod
    def success_test(self, net: CompiledNetwork, evaluation: Evaluation) -> SuccessCheck: ...

    def evaluate_batch(self, batch: CompiledBatch) -> list[Evaluation]:
        """Evaluate every network of a batch, in order; each is one counted evaluation.

        Override with a kernel that loops over :func:`~neuroyard.batch.member`
        when one evaluation is so cheap that a Python call per network would dominate."""
        return [self.evaluate(batch.network(i)) for i in range(batch.size)]

    def warm_up(self) -> None:
        """Load (or compile) the task's numba kernels: the harness calls this on a run's
        task before the run starts, at most once per process and task setting. The default
        compiles, evaluates and success-tests one minimal network, which leaves a task
        without state as it was; a task whose evaluations change its state (an episode
        counter, a random generator) must override it so that the run still starts from
        the state it was built with."""
        spec = self.spec
        network = fully_connected(spec.inputs, spec.outputs)
        batch = compile_batch([network], spec.inputs, spec.outputs, "warm-up network".format)
        (result,) = self.evaluate_batch(batch)
        self.success_test(batch.network(0), result)

    def replay(self, network: Network, steps: int, out: Path) -> str:
        """Optional: run ``network`` for at most ``steps`` steps, draw what it did into the
        image file ``out`` and return a one-line summary (``neuroyard replay``). Tasks
        without a picture of an episode raise :class:`TaskError`."""
        raise TaskError(f"task {self.id} has no replay")

    def draw_run(
        self,
        network: Network | None,
        behaviours: Sequence[Sequence[float]],
        out: str | Path | BinaryIO,
        label: str = "",
        steps: int | None = None,
    ) -> str:
        """Optional: draw one run into the PNG file ``out`` (a path or a binary file) and
        return a one-line summary of what was drawn (without the file's name).
        ``network``: the run's best network (None: the run has none); ``behaviours``: the
        behaviour descriptors of the run's evaluations in evaluation order (the sample a
        run record keeps); ``label``: a line naming the run (evolver, run, outcome);
        ``steps``: the most steps of the network's episode to draw (None: all of them).
        ``neuroyard replay --store`` and the HTML report use it where the task's class
        implements it (:meth:`draws_runs`); the others raise :class:`TaskError`."""
        raise TaskError(f"task {self.id} has no picture of a run")

    @classmethod
    def draws_runs(cls) -> bool:
        """Whether the task's class implements :meth:`draw_run`."""
        return cls.draw_run is not Task.draw_run

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

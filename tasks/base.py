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
    """An extra figure a task's success test yields, beside solved or not.

    A task lists its metrics in :attr:`TaskSpec.metrics` and puts each value in
    :attr:`SuccessCheck.details` under the metric's name. Summaries and reports show the
    mean over solved runs of every metric a task declares, with no harness change.

    Args:
        name: the metric's name, also its key in :attr:`SuccessCheck.details`.
        description: what it measures, in a phrase.
        unit: the unit of its value (``"steps"``, ``"%"``); empty for plain numbers.
        better: ``"higher"`` or ``"lower"``: which way a value is better.

    Raises:
        ValueError: ``better`` is neither ``"higher"`` nor ``"lower"``.

    Example:
        >>> from neuroyard import Metric
        >>> gap = Metric("gap", "distance from the end point to the goal", better="lower")
        >>> gap.unit, gap.better
        ('', 'lower')
        >>> Metric("steps", "steps to the goal", better="less")
        Traceback (most recent call last):
        ...
        ValueError: metric steps: better must be 'higher' or 'lower'
    """

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

    Args:
        id: the task's versioned id, ``name-vN``.
        inputs: the number of input nodes a network must have (one per observation value).
        outputs: the number of output nodes a network must have (one per action value).
        fitness: how the fitness of one evaluation is computed, in words (or a formula).
        success: the success criterion, in words.
        default_budget: the evaluations a run may make when the campaign names no budget.
        sources: the publications the task follows, each with its section (cited through
            ``reference/SOURCES.md``), or why there is none.
        max_fitness: the best possible fitness, or None when there is no upper bound.
        min_fitness: the worst possible fitness (recorded for a non-finite one).
        behaviour_size: the length of each evaluation's behaviour descriptor
            (``Evaluation.behaviour``), or None when the task gives none.
        needs_memory: True when the observations hide part of the state, so that a
            network needs recurrent connections to solve the task.
        settings: the task's settings, every one with its value, defaults included.
        observations: for evolver authors: each input, in input-node order, with its
            meaning and scaling.
        actions: each output, in output-node order, and how it becomes an action.
        output_rule: how an output outside its meaningful range, or not finite, is treated.
        metrics: the extra figures the success test reports (:class:`Metric`).
        facts: figures that describe this task instance under its settings (a maze's
            deception score), by name; every run record keeps them
            (``RunRecord.task_facts``) so that outcomes can be set against them.

    Example:
        >>> from neuroyard import TaskSpec
        >>> spec = TaskSpec(
        ...     id="majority-v1", inputs=3, outputs=1,
        ...     fitness="patterns answered correctly (0 to 8)",
        ...     success="all 8 patterns answered correctly",
        ...     default_budget=10_000, sources=("ours",), max_fitness=8.0,
        ... )
        >>> spec.min_fitness, spec.needs_memory, spec.metrics
        (0.0, False, ())
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
    """The outcome of a task's success test on one network.

    Args:
        solved: whether the network meets the task's success criterion.
        evaluations: the episodes the test ran (counted apart from the run's evaluations).
        details: task-specific figures of the test, by name (a generalization score); the
            value of each :class:`Metric` of the task is here under the metric's name.

    Example:
        >>> from neuroyard import SuccessCheck
        >>> check = SuccessCheck(solved=True, evaluations=626, details={"generalization": 212})
        >>> check.solved, check.details["generalization"]
        (True, 212)
    """

    solved: bool
    evaluations: int
    details: Mapping[str, Any] = field(default_factory=dict)


class Task(ABC):
    """A benchmark task: the base class every task subclasses.

    A subclass sets ``id`` (``name-vN``) and ``options`` (its settings, a tuple of
    :class:`~neuroyard.core.options.Option`; ``needs``: the settings without a default that
    must be given) and implements :attr:`spec`, :meth:`evaluate` and :meth:`success_test`.
    Tasks are built by id with :func:`neuroyard.tasks.make`, which calls the class with the
    task seed and the settings. One :meth:`evaluate` call is one counted evaluation; a
    success test's episodes are counted apart. Any randomness of the task comes from
    ``seed``, so the same seed and settings give the same task.

    Args:
        seed: the task seed, positional only (so that a task may have a setting called
            ``seed``); the harness derives it from the campaign seed, the task and the run
            index, so every evolver meets the same task instance in run i.
        **settings: the task's settings by name; the rest take their defaults. Every
            setting is then in ``self.settings``.

    Raises:
        TaskError: a setting is unknown, of the wrong type, out of its range, or does not
            fit with the others (:meth:`check_settings`); the message names it.

    Example:
        >>> from neuroyard import make_task
        >>> from neuroyard.core.batch import compile_network
        >>> from neuroyard.core.network import fully_connected
        >>> task = make_task("xor-v2")  # task seed 0, every setting at its default
        >>> task.settings
        {'recurrent_steps': 5}
        >>> task.spec.inputs, task.spec.outputs, task.spec.max_fitness
        (2, 1, 16.0)
        >>> weights = [1, 1, -0.5, 1, 1, -1.5, 1, -1, -0.5]  # hidden OR, AND; out OR and not AND
        >>> net = compile_network(fully_connected(2, 1, weights, activation="step", hidden=2))
        >>> result = task.evaluate(net)
        >>> result.fitness
        16.0
        >>> task.success_test(net, result)
        SuccessCheck(solved=True, evaluations=1, details={})
    """

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
    def spec(self) -> TaskSpec:
        """What the task is under its settings (:class:`TaskSpec`)."""

    @abstractmethod
    def evaluate(self, net: CompiledNetwork) -> Evaluation:
        """Evaluate one network: one counted evaluation.

        Args:
            net: the network, checked and compiled for the task's inputs and outputs.

        Returns:
            Its fitness (within ``[spec.min_fitness, spec.max_fitness]``, or NaN only when
            the network's output was not finite) and its behaviour descriptor (of
            ``spec.behaviour_size`` numbers, or None).
        """

    @abstractmethod
    def success_test(self, net: CompiledNetwork, evaluation: Evaluation) -> SuccessCheck:
        """Apply the task's success criterion to one network; deterministic (the harness
        never tests an identical network twice in a run).

        Args:
            net: the network, as given to :meth:`evaluate`.
            evaluation: the result :meth:`evaluate` gave for it.

        Returns:
            Whether it is solved, the episodes the test ran and the test's details.
        """

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

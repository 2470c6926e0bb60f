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
evolver's process died or was ended). A batch may hold at most 10,000 networks
(:data:`~neuroyard.core.defaults.MAX_BATCH`) unless the campaign allows more.

The harness evaluates every network it is given and counts the evaluations itself; the
evolver sees only the results. An evolver is built by calling its class with its options as
keyword arguments, and nothing else (:class:`Evolver` shows a complete one). How evolvers
are found and built: :mod:`.evolver_registry`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Protocol, runtime_checkable

from neuroyard.core.network import Network


@dataclass(frozen=True)
class Problem:
    """What an evolver is told about the task, once, at ``start(problem, seed)``.

    The evolver never sees the task itself: it proposes networks and is told their fitness.
    Every fitness it is told is finite and within ``[min_fitness, max_fitness]`` (a
    non-finite fitness of the task is replaced by ``min_fitness`` before ``tell``).

    Args:
        task: the task's id (``"xor-v2"``), for the evolver's information.
        inputs: the number of input nodes every network must have (a bias node is
            optional and not counted).
        outputs: the number of output nodes every network must have.
        budget: the most evaluations the harness will make in the run (one evaluation per
            network asked for; success tests are not counted).
        max_fitness: the best possible fitness, or None when the fitness has no upper bound
            (it is finite all the same).
        min_fitness: the worst possible fitness.
        behaviour_size: the length of the behaviour descriptor of each
            :class:`Evaluation` (``Evaluation.behaviour``), or None when the task gives none.
        needs_memory: True when the observations hide part of the task's state, so that a
            network needs recurrent connections (``mode="recurrent"``) to solve it.
        settings: the task's settings, every one with its value, defaults included.

    Example:
        >>> from neuroyard import Problem
        >>> problem = Problem("xor-v2", inputs=2, outputs=1, budget=1000, max_fitness=16.0)
        >>> problem.inputs, problem.outputs, problem.min_fitness, problem.needs_memory
        (2, 1, 0.0, False)
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
    """The result of evaluating one network on the task: one counted evaluation.

    A task returns one per network; the evolver's ``tell`` receives them in the order of
    the networks its ``ask`` returned.

    Args:
        fitness: the network's fitness, higher is better; as told to an evolver it is finite
            and within the task's ``[min_fitness, max_fitness]`` (:class:`Problem`). A task
            may return NaN only when the network's output was not finite (the harness then
            tells the evolver ``min_fitness``).
        behaviour: the behaviour descriptor of the evaluation (where the robot ended, say),
            ``behaviour_size`` numbers, or None when the task defines none.

    Example:
        >>> from neuroyard import Evaluation
        >>> Evaluation(12.5)
        Evaluation(fitness=12.5, behaviour=None)
        >>> Evaluation(0.3, behaviour=(41.0, 17.5)).behaviour
        (41.0, 17.5)
    """

    fitness: float
    behaviour: tuple[float, ...] | None = None


@dataclass(frozen=True)
class Outcome:
    """How a run ended: given once to the evolver's optional ``stop(outcome)``.

    Args:
        status: ``"solved"`` (a network passed the task's success test), ``"unsolved"``
            (the budget is spent) or ``"failed"`` (the run broke; see ``failure``).
        generations: the number of batches evaluated (``ask`` calls whose networks the
            harness evaluated).
        evaluations: the number of evaluations made, at most the budget.
        failure: the one-line reason of a failed run; None otherwise.

    Example:
        >>> from neuroyard import Outcome
        >>> outcome = Outcome("solved", generations=31, evaluations=4650)
        >>> outcome.status, outcome.failure
        ('solved', None)
    """

    status: str
    generations: int
    evaluations: int
    failure: str | None = None


@runtime_checkable
class Evolver(Protocol):
    """What an evolver is: an object the harness asks for networks and tells their fitness.

    Any class with ``start``, ``ask`` and ``tell`` is an evolver; it need not inherit from
    this Protocol, and ``isinstance(obj, Evolver)`` checks that the three methods are there.
    Optional methods, used when present: ``stats() -> Mapping[str, float]`` (figures of
    the evolver's own, numbers only, read after every ``tell`` and logged per generation),
    ``settings() -> Mapping[str, Any]`` (the effective configuration, defaults included,
    as JSON values; recorded with the run) and ``stop(outcome: Outcome) -> None``.

    Construction: the harness builds an evolver by calling its class (or any factory) with
    the evolver's options as keyword arguments and nothing else: ``Climber(step=0.5)``.
    Declare the options as a class attribute ``options = OptionTable("evolver NAME",
    [Option(...), ...])`` (:mod:`neuroyard.core.options`) and resolve them in ``__init__``
    with ``self.values = self.options.resolve(given)``: that checks names, types and ranges
    (a :class:`~neuroyard.core.errors.SettingError` names the option, the value and what is
    allowed) and gives every option with its value, which ``settings()`` should return.

    Order of calls in a run: the constructor; ``start(problem, seed)`` once; ``settings()``;
    then per generation ``ask()``, (the harness checks, evaluates and success-tests the
    batch), ``tell(evaluations)``, ``stats()``; finally ``stop(outcome)`` once, whether the
    run solved the task, spent its budget or failed (not when the evolver's process died or
    was ended). The run ends after the ``tell`` of the batch in which a network passed the
    success test, or of the batch that spent the budget.

    What ``tell`` receives: one :class:`Evaluation` per evaluated network of the last batch,
    in the batch's order, for every batch, the solving one and the last one included. The
    harness never evaluates past the budget: when a batch is larger than what is left,
    only its first ``budget - evaluations so far`` networks are evaluated, and ``tell``
    receives that many. Every fitness is finite and within the problem's bounds.

    The rules: take every random number from ``numpy.random.default_rng(seed)`` made in
    ``start`` (the same seed must give the same run); ``ask`` returns between 1 and 10,000
    :class:`~neuroyard.core.network.Network` objects (more only when the campaign allows
    it), each with ``problem.inputs`` input and ``problem.outputs`` output
    nodes; a network that breaks a rule of the format fails the run.

    Args:
        *args: none: ``Evolver`` describes a class and is never built itself (calling it
            raises ``TypeError``); the harness passes an evolver's constructor no
            positional arguments.
        **kwargs: stand for the options of an evolver's constructor, which takes them as
            keyword arguments only: exactly the options the user gave (``--param
            KEY=VALUE`` or a ``--config`` file on the command line, the configuration of a
            campaign's evolver), so the constructor must refuse an unknown name or a bad
            value with a ``ValueError`` (a ``SettingError`` is one) naming the option.

    Returns:
        Nothing itself. An evolver's ``ask`` returns a sequence of networks, ``stats`` a
        mapping of names to numbers and ``settings`` a mapping of names to JSON values;
        ``start``, ``tell`` and ``stop`` return None.

    Example:
        A complete evolver: Gaussian steps around the best weights found so far, on
        networks without hidden nodes (every input and a bias node feed every output),
        with a step size that shrinks every generation.

        >>> import numpy as np
        >>> from neuroyard import Connection, Evaluation, Evolver, Network, Node, Outcome
        >>> from neuroyard import Option, OptionTable, Problem
        >>> class ShrinkingStep:
        ...     options = OptionTable("evolver shrinking-step", [
        ...         Option("batch", 10, "networks per generation", source="ours", low=1),
        ...         Option("step", 1.0, "first step size (standard deviation)", source="ours",
        ...                above=0.0),
        ...         Option("shrink", 0.9, "step size factor per generation", source="ours",
        ...                above=0.0, high=1.0),
        ...     ])
        ...     def __init__(self, **given):  # the options, as keyword arguments only
        ...         self.values = self.options.resolve(given)  # SettingError names a bad one
        ...     def start(self, problem, seed):
        ...         self.rng = np.random.default_rng(seed)
        ...         ins, bias = list(range(problem.inputs)), problem.inputs  # ids
        ...         outs = [bias + 1 + k for k in range(problem.outputs)]
        ...         self.nodes = (*[Node(i, "input") for i in ins], Node(bias, "bias"),
        ...                       *[Node(o, "output", "tanh") for o in outs])
        ...         self.links = [(s, t) for t in outs for s in [*ins, bias]]
        ...         self.centre = np.zeros(len(self.links))
        ...         self.best, self.step = -np.inf, self.values["step"]
        ...     def settings(self):
        ...         return dict(self.values)
        ...     def network(self, weights):
        ...         links = zip(self.links, weights.tolist(), strict=True)
        ...         return Network(self.nodes, tuple(Connection(s, t, w) for (s, t), w in links))
        ...     def ask(self):
        ...         shape = (self.values["batch"], len(self.links))
        ...         self.rows = self.centre + self.rng.normal(0.0, self.step, shape)
        ...         return [self.network(row) for row in self.rows]
        ...     def tell(self, evaluations):  # the batch's order; the budget may cut it
        ...         fitness = [e.fitness for e in evaluations]
        ...         k = int(np.argmax(fitness))
        ...         if fitness[k] >= self.best:
        ...             self.centre, self.best = self.rows[k], fitness[k]
        ...         self.step *= self.values["shrink"]
        ...     def stats(self):
        ...         return {"best": float(self.best), "step": self.step}
        ...     def stop(self, outcome):
        ...         self.outcome = outcome

        The harness's part, played by hand (made-up fitness values stand in for the
        task's):

        >>> evolver = ShrinkingStep(batch=4)
        >>> isinstance(evolver, Evolver)
        True
        >>> evolver.start(Problem("xor-v2", inputs=2, outputs=1, budget=6), seed=1)
        >>> evolver.settings()
        {'batch': 4, 'step': 1.0, 'shrink': 0.9}
        >>> networks = evolver.ask()  # generation 0
        >>> len(networks), networks[0].n_inputs, networks[0].n_outputs
        (4, 2, 1)
        >>> evolver.tell((Evaluation(3.0), Evaluation(9.0), Evaluation(4.0), Evaluation(1.0)))
        >>> evolver.stats()
        {'best': 9.0, 'step': 0.9}
        >>> networks = evolver.ask()  # generation 1: the budget leaves room for 2 of them
        >>> evolver.tell((Evaluation(12.0), Evaluation(2.0)))
        >>> evolver.stats()["best"]
        12.0
        >>> evolver.stop(Outcome("unsolved", generations=2, evaluations=6))
        >>> ShrinkingStep(batch=0)
        Traceback (most recent call last):
        ...
        neuroyard.core.errors.SettingError: evolver shrinking-step: option 'batch' must be >= 1, got 0
    """

    def start(self, problem: Problem, seed: int) -> None:
        """Begin a run.

        Args:
            problem: the task's interface and the run's budget.
            seed: a non-negative integer below 2**63 that the harness derives from the
                campaign seed, the evolver's name, the task and the run index; every random
                number of the run comes from ``numpy.random.default_rng(seed)``.
        """

    def ask(self) -> Sequence[Network]:
        """Propose the next batch (one generation).

        Returns:
            1 to 10,000 networks (unless the campaign allows more), each with
            ``problem.inputs`` input nodes and ``problem.outputs`` output nodes.
        """

    def tell(self, evaluations: Sequence[Evaluation]) -> None:
        """Take the results of the last batch.

        Args:
            evaluations: one per evaluated network of the batch, in its order: all of them,
                or the first ``budget - evaluations so far`` when the budget cut the batch.
        """

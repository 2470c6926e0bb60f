"""The records of the harness: what identifies a run (:class:`RunSpec`), what a run
produced (:class:`RunRecord`) and one generation of its log (:class:`GenerationLog`).

Statistics, the store and reports read these; none of them needs the runner.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping
from dataclasses import asdict, dataclass, field
from typing import Any

from neuroyard.core import jsonsafe
from neuroyard.core.evolver_registry import EvolverSpec

SOLVED, UNSOLVED, FAILED = "solved", "unsolved", "failed"
BEHAVIOUR_SAMPLE = 500  # most behaviour descriptors a run record keeps
BEHAVIOUR_DECIMALS = 3  # decimals a kept descriptor is rounded to (a picture, not identity)
# Fields of a record that depend on the machine and the moment, not on the run: seconds
# (``timing``), the host name and the versions of Python, the libraries and the checkout
# (``versions``, :mod:`neuroyard.records.provenance`).
MACHINE_FIELDS = frozenset({"timing", "host", "versions"})


def run_key(
    evolver: str,
    config_hash: str,
    task: str,
    task_settings: Mapping[str, Any],
    campaign_seed: int,
    run_index: int,
    budget: int,
) -> str:
    """Identity of a run in the results store, from resolved values only: the evolver's
    effective configuration (by its hash), every task setting (defaults merged) and the
    effective budget. So the same run asked for with or without a value equal to its
    default has one key."""
    ident = {
        "evolver": evolver,
        "config": config_hash,
        "task": task,
        "settings": dict(sorted(task_settings.items())),
        "seed": campaign_seed,
        "run": run_index,
        "budget": budget,
    }
    return hashlib.sha256(json.dumps(ident, sort_keys=True).encode()).hexdigest()[:24]


@dataclass(frozen=True)
class RunSpec:
    """Everything that identifies a run; the same spec always gives the same result.

    Holds resolved values: ``budget`` is the effective budget (the task's default when none
    was asked for) and ``task_settings`` every setting of the task, defaults merged
    (:func:`neuroyard.execution.campaign.plan_run` resolves them)."""

    evolver: EvolverSpec
    task: str
    run_index: int
    campaign_seed: int
    budget: int
    task_settings: Mapping[str, Any]

    @property
    def key(self) -> str:
        """Identity in the results store: a finished run with this key is not run again."""
        return run_key(
            self.evolver.name,
            self.evolver.config_hash,
            self.task,
            self.task_settings,
            self.campaign_seed,
            self.run_index,
            self.budget,
        )


def record_key(record: RunRecord) -> str:
    """The key of the run a stored record belongs to (its recorded values are resolved)."""
    return run_key(
        record.evolver,
        record.config_hash,
        record.task,
        record.task_settings,
        record.campaign_seed,
        record.run_index,
        record.budget,
    )


def content_digest(record: RunRecord) -> str:
    """A hash of everything the run itself determines: the whole record, generation log
    included, but its :data:`MACHINE_FIELDS`. Two records of one run key with different
    digests disagree about the run."""
    doc = {k: v for k, v in record.to_dict().items() if k not in MACHINE_FIELDS}
    return hashlib.sha256(jsonsafe.dumps(doc, sort_keys=True).encode()).hexdigest()


@dataclass
class GenerationLog:
    """One generation: fitness of its best and mean candidate, evaluations so far, best size.

    ``stats`` are the evolver's own figures (its ``stats()``, read after ``tell()`` of this
    generation, so a row is one generation's picture); ``non_finite_fitness`` counts the
    evaluations whose fitness was not finite and was recorded as the task's worst (they
    count in the mean as that worst value); ``champion_test`` holds the
    generation's success test: ``rank``, the tested network's place in the generation's
    fitness order (0 = the fittest; see the module docstring), and the task's details (for
    the pole tasks the steps it balanced and, when it reached the horizon, its
    generalization score); empty when no network was tested. So a run that never solved
    shows how close its champions came.

    Args:
        generation: the generation's number (0-based).
        evaluations: evaluations so far in the run, this generation's included.
        best_fitness: the fitness of the generation's fittest network.
        mean_fitness: the mean fitness of its networks.
        best_hidden: hidden nodes of the fittest network.
        best_connections: enabled connections of the fittest network.
        stats: the evolver's own figures after this generation's ``tell()``.
        champion_test: the success test of this generation (empty: no test).
        non_finite_fitness: evaluations whose fitness was not finite.

    Example:
        >>> import neuroyard
        >>> row = neuroyard.GenerationLog(0, 150, 3.2, 2.1, 0, 3, {"species": 4.0})
        >>> row.stats["species"], row.champion_test
        (4.0, {})
    """

    generation: int
    evaluations: int
    best_fitness: float
    mean_fitness: float
    best_hidden: int
    best_connections: int
    stats: dict[str, float] = field(default_factory=dict)
    champion_test: dict[str, Any] = field(default_factory=dict)
    non_finite_fitness: int = 0


@dataclass
class RunRecord:
    """The outcome of a run. ``evaluations`` excludes success tests (``success_evaluations``).

    ``best_network`` is the network that passed the success test, or the fittest one
    evaluated when the run did not solve; ``hidden_nodes``/``connections`` are its size,
    ``success_details`` the details of its success test (with its ``rank``).
    ``evolver_settings`` is the evolver's effective configuration (defaults included) when
    it offers ``settings()``. ``timing`` holds wall, evolver and harness seconds.
    ``task_facts``: the figures that describe the task instance the run met
    (:attr:`~neuroyard.tasks.base.TaskSpec.facts`, such as a maze's deception score).
    ``isolated``: whether the evolver ran in a process of its own (see Args).
    ``behaviours``: for a task with behaviour descriptors, a sample of the descriptors of
    the run's evaluations in evaluation order, evenly thinned to at most
    :data:`BEHAVIOUR_SAMPLE` points (:class:`BehaviourSample`); empty otherwise.

    Args:
        evolver: the evolver's name (entry point, ``module:attr`` or ``process:COMMAND``).
        config: the options given (``--config``, ``--param``, ``params=``).
        config_hash: 12 hex digits identifying the effective configuration.
        task: the task id.
        task_settings: every task setting, defaults included.
        run_index: the run's index in its campaign (0-based).
        campaign_seed: the campaign's seed.
        seed: the evolver's seed, derived from the campaign seed, evolver, task and run.
        task_seed: the task's seed, derived from the campaign seed, task and run.
        budget: evaluations the run could spend.
        status: ``solved``, ``unsolved`` (budget spent) or ``failed``.
        failure: the reason of a failed run (None otherwise).
        generations: generations made.
        evaluations: evaluations made (success tests excluded).
        success_evaluations: episodes the success tests ran.
        best_fitness: the fitness of ``best_network``.
        best_network: the solution, or the fittest network evaluated (the network format
            as a dict: ``neuroyard.Network.from_dict``).
        hidden_nodes: hidden nodes of ``best_network``.
        connections: enabled connections of ``best_network``.
        success_details: the details of ``best_network``'s success test.
        evolver_settings: the evolver's ``settings()`` (effective configuration).
        log: the generation log (:class:`GenerationLog`; empty when read without it).
        timing: seconds: ``wall``, ``evolver``, ``harness``, ``kernel_load``, ``calibration``.
        versions: versions of Python, numpy, numba, neuroyard and the git commit.
        host: the machine's name.
        task_facts: figures of the task instance.
        behaviours: the sample of behaviour descriptors.
        isolated: whether the evolver ran in a process of its own, apart from the task,
            the evaluation and the counting (False: ``--in-process``, and every record
            written before neuroyard 0.2).

    Example:
        >>> import neuroyard
        >>> record = neuroyard.RunRecord("rwg", {}, "0123456789ab", "xor-v2", {}, 0, 1, 7, 9, 500)
        >>> record.status, record.solved, record.to_dict()["budget"]
        ('unsolved', False, 500)
    """

    evolver: str
    config: dict[str, Any]
    config_hash: str
    task: str
    task_settings: dict[str, Any]
    run_index: int
    campaign_seed: int
    seed: int
    task_seed: int
    budget: int
    status: str = UNSOLVED
    failure: str | None = None
    generations: int = 0
    evaluations: int = 0
    success_evaluations: int = 0
    best_fitness: float | None = None
    best_network: dict[str, Any] | None = None
    hidden_nodes: int | None = None
    connections: int | None = None
    success_details: dict[str, Any] = field(default_factory=dict)
    evolver_settings: dict[str, Any] = field(default_factory=dict)
    log: list[GenerationLog] = field(default_factory=list)
    timing: dict[str, float] = field(default_factory=dict)
    versions: dict[str, str | None] = field(default_factory=dict)
    host: str = ""
    task_facts: dict[str, float] = field(default_factory=dict)
    behaviours: list[list[float]] = field(default_factory=list)
    isolated: bool = False

    @property
    def solved(self) -> bool:
        return self.status == SOLVED

    def to_dict(self) -> dict[str, Any]:
        """All fields as JSON values, plus ``solved`` (derived from ``status``)."""
        return {**asdict(self), "solved": self.solved}

    @classmethod
    def from_dict(cls, doc: Mapping[str, Any]) -> RunRecord:
        data = dict(doc)
        data.pop("solved", None)
        data["log"] = [GenerationLog(**g) for g in data.get("log", [])]
        return cls(**data)


class BehaviourSample:
    """The behaviour descriptors of a run's evaluations, thinned evenly to at most ``cap``.

    It keeps the descriptor of every evaluation whose index (0-based, in evaluation order)
    is a multiple of a stride; the stride starts at 1 and doubles, dropping every other
    kept point, whenever more than ``cap`` points are kept. So the sample spreads over the
    whole run whatever its length. Values are rounded to :data:`BEHAVIOUR_DECIMALS`."""

    def __init__(self, cap: int = BEHAVIOUR_SAMPLE) -> None:
        self.cap = cap
        self.stride = 1
        self.seen = 0
        self.points: list[list[float]] = []

    def add(self, behaviour: tuple[float, ...] | None) -> None:
        """Count one evaluation and keep its descriptor when its index is on the stride."""
        if behaviour is not None and self.seen % self.stride == 0:
            self.points.append([round(float(v), BEHAVIOUR_DECIMALS) for v in behaviour])
            if len(self.points) > self.cap:
                self.points = self.points[::2]
                self.stride *= 2
        self.seen += 1

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
evolver sees only the results. An evolver is made by calling a *factory* (usually the
class) with its configuration as keyword arguments. Factories are found by name in the
entry-point group ``neuroyard.evolvers`` or by a ``module:attr`` path.
"""

from __future__ import annotations

import hashlib
import importlib
import json
import tomllib
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from importlib.metadata import entry_points
from pathlib import Path
from typing import Any, Protocol, runtime_checkable

from .errors import EvolverError
from .network import Network

ENTRY_POINT_GROUP = "neuroyard.evolvers"
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


EvolverFactory = Callable[..., Evolver]


@dataclass(frozen=True)
class EvolverSpec:
    """A named evolver and its configuration: everything needed to build it in any process.

    ``name`` is an entry-point name or a ``module:attr`` path; ``config`` is passed to the
    factory as keyword arguments. ``config_hash`` identifies the configuration in results.
    """

    name: str
    config: Mapping[str, Any] = field(default_factory=dict)

    @property
    def config_hash(self) -> str:
        text = json.dumps(self.config, sort_keys=True, default=str)
        return hashlib.sha256(text.encode()).hexdigest()[:12]

    def build(self) -> Evolver:
        """Instantiate the evolver; configuration errors become :class:`EvolverError`."""
        factory = load_factory(self.name)
        try:
            return factory(**dict(self.config))
        except (TypeError, ValueError) as exc:
            raise EvolverError(f"evolver {self.name!r}: bad configuration: {exc}") from None


def available() -> dict[str, str]:
    """Entry-point names in ``neuroyard.evolvers`` mapped to their ``module:attr`` targets."""
    return {ep.name: ep.value for ep in entry_points(group=ENTRY_POINT_GROUP)}


def load_factory(name: str) -> EvolverFactory:
    """Resolve an entry-point name or a ``module:attr`` path to an evolver factory."""
    target = available().get(name)
    if target is None and ":" not in name:
        known = ", ".join(sorted(available())) or "none installed"
        raise EvolverError(
            f"unknown evolver {name!r} (installed: {known}; or give a module:attr path)"
        )
    module_name, _, attr = (target or name).partition(":")
    try:
        obj: Any = importlib.import_module(module_name)
    except ImportError as exc:
        raise EvolverError(
            f"evolver {name!r}: cannot import module {module_name!r}: {exc}"
        ) from None
    for part in attr.split("."):
        if not hasattr(obj, part):
            raise EvolverError(
                f"evolver {name!r}: module {module_name!r} has no attribute {attr!r}"
            )
        obj = getattr(obj, part)
    if not callable(obj):
        raise EvolverError(f"evolver {name!r}: {attr!r} is not callable")
    return obj


def read_config(path: str | Path) -> dict[str, Any]:
    """Read an evolver configuration TOML file (a flat or nested table of settings)."""
    try:
        with open(path, "rb") as fh:
            return tomllib.load(fh)
    except OSError as exc:
        raise EvolverError(f"config file {path}: cannot read it ({exc.strerror})") from None
    except tomllib.TOMLDecodeError as exc:
        raise EvolverError(f"config file {path}: not valid TOML ({exc})") from None

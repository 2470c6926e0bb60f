"""Campaigns from Python: :func:`run` resolves what it is given into a
:class:`~neuroyard.execution.campaign.CampaignPlan`, runs it into a results store and
returns the campaign's runs as :class:`~.results.Results`. ``neuroyard run`` calls it.

**Evolvers given as classes.** An evolver may be a registered name, a ``module:attr``
path, ``process:COMMAND``, or the class (or any callable that makes an evolver) itself,
defined in the caller's script or notebook and neither installed nor registered. A class
is named ``module:qualname`` (``__main__:MyEvolver`` in a notebook or a script); a mapping
``{name: class}`` names it otherwise, for instance by the ``module:attr`` path under which
``neuroyard run --evolver`` will find it once it moves into a module, so that the stored
runs are the same runs (the name is part of every run's key and seeds). A name given that
way must not be an installed evolver's name nor start with ``process:``.

Workers receive such a class by value (pickled by cloudpickle, unpickled only in the
evolver's own process), so a class defined in a notebook cell or inside a function runs in
the workers whatever the start method (fork on Linux, spawn on macOS and Windows). A class
found in an importable module is pickled by reference, and the evolver's process imports
its module.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import Any

from neuroyard.core.defaults import (
    DEFAULT_EVOLVER,
    DEFAULT_MEMORY_LIMIT_MB,
    DEFAULT_PATH,
    DEFAULT_RUN_LIMIT,
    DEFAULT_RUNS,
    DEFAULT_SEED,
    DEFAULT_TIME_LIMIT,
    MAX_BATCH,
    MAX_MEMORY_LIMIT_MB,
    MAX_SEED,
    QUICK_SUITE,
)
from neuroyard.core.errors import EvolverError, SettingError
from neuroyard.core.evolver_registry import EvolverSpec, available, read_config
from neuroyard.core.options import distribute
from neuroyard.core.process_evolver import PREFIX as PROCESS_PREFIX
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.crashlog import InternalError
from neuroyard.execution.executors import Executor, make_executor
from neuroyard.execution.resolution import declared_options
from neuroyard.execution.supervisor import Limits
from neuroyard.records.shares import WHOLE, Share
from neuroyard.records.store import ResultStore
from neuroyard.tasks.registry import parse_task, task_class

from .results import Results

EvolverChoice = str | Callable[..., Any] | Mapping[str, Callable[..., Any]]
EvolverChoices = EvolverChoice | Sequence[EvolverChoice]


def run(
    evolvers: EvolverChoices = DEFAULT_EVOLVER,
    tasks: str | Sequence[str] = QUICK_SUITE,
    runs: int = DEFAULT_RUNS,
    seed: int = DEFAULT_SEED,
    *,
    store: str | Path = DEFAULT_PATH,
    budget: int | None = None,
    workers: int = 1,
    settings: Mapping[str, Any] | None = None,
    params: Mapping[str, Any] | None = None,
    config: str | Path | Mapping[str, Any] | None = None,
    executor: str = "pool",
    scheduler: str | None = None,
    time_limit: float | None = DEFAULT_TIME_LIMIT,
    memory_limit: int | None = DEFAULT_MEMORY_LIMIT_MB,
    max_batch: int = MAX_BATCH,
    run_limit: float | None = DEFAULT_RUN_LIMIT,
    share: str | Share = WHOLE,
    progress: bool = True,
) -> Results:
    """Run every evolver on every task ``runs`` times into a results store.

    Runs already in the store (same key: evolver and effective configuration, task and
    every setting, budget, campaign seed, run index) are not run again, so an interrupted
    campaign resumes. Everything is checked before the first run starts. The same campaign
    given to ``neuroyard run`` makes the same runs (same keys, seeds and records).

    Args:
        evolvers: one evolver or a list: a registered name (``neuroyard evolvers``), a
            ``module:attr`` path, ``process:COMMAND``, a class defined in your script or
            notebook, or a mapping ``{name: class}`` that names classes (see the module
            docstring).
        tasks: one task or a list: a task id (``neuroyard tasks``) or ``PREFIX:VALUE``
            (``maze:PATH``).
        runs: runs per evolver and task (at least 1).
        seed: the campaign seed, 0 to 2**63 - 1; every run's seeds derive from it.
        store: the results store file (created when missing).
        budget: evaluations per run; None: each task's default.
        workers: parallel worker processes (at least 1).
        settings: task settings, ``{"KEY": value}`` for every task that has KEY, or
            ``{"TASK:KEY": value}`` for one task.
        params: evolver options, ``{"KEY": value}`` for every evolver that has KEY, or
            ``{"EVOLVER:KEY": value}`` for one (EVOLVER as named in ``evolvers``).
        config: evolver options for every evolver: a mapping, or a TOML file's path;
            ``params`` override it.
        executor: ``pool`` (supervised worker processes), ``in-process`` (this process,
            one run at a time, no time or memory limit: for debugging), ``dask``, or an
            executor installed under the entry-point group ``neuroyard.executors``.
        scheduler: with ``executor="dask"``, the address of a running Dask scheduler
            (``tcp://HOST:PORT``); None starts a local cluster of ``workers`` processes.
        time_limit: most seconds one evolver call may take (None: no limit).
        memory_limit: most megabytes a run may add to its worker process, at most 2**30
            (None: no limit).
        max_batch: most networks one ``ask()`` may return.
        run_limit: most seconds of wall time one run may take, evaluation included (None:
            no limit).
        share: run only share ``K/N`` of the campaign (batch job K of N; see
            ``neuroyard merge``).
        progress: show a progress bar (after 3 s), and say on stderr, in one line, when
            the tasks' numba kernels must be compiled first (once per machine).

    Returns:
        The campaign's runs (of its share) as :class:`~.results.Results`, with ``done``
        (runs made now) and ``skipped`` (runs found in the store).

    Raises:
        EvolverError: an unknown evolver or a bad option.
        TaskError: an unknown task or a bad setting.
        SettingError: a bad value of another argument.
        StoreError: a store that cannot be opened or written, or holds a broken record.
        InternalError: runs stopped on a fault of neuroyard itself (named crash log).

    Example:
        An evolver of our own, defined right here: random weights on a network without
        hidden nodes, 20 networks a generation (it cannot solve XOR, which needs a hidden
        node, so each run spends its budget).

        >>> import tempfile, numpy as np, neuroyard
        >>> class Guess:
        ...     def start(self, problem, seed):
        ...         self.rng, self.problem = np.random.default_rng(seed), problem
        ...     def ask(self):
        ...         p = self.problem
        ...         nodes = [neuroyard.Node(i, "input") for i in range(p.inputs)]
        ...         nodes += [neuroyard.Node(p.inputs + k, "output", "sigmoid")
        ...                   for k in range(p.outputs)]
        ...         def guess():
        ...             links = [neuroyard.Connection(i, p.inputs + k, float(self.rng.normal()))
        ...                      for i in range(p.inputs) for k in range(p.outputs)]
        ...             return neuroyard.Network(tuple(nodes), tuple(links))
        ...         return [guess() for _ in range(20)]
        ...     def tell(self, evaluations):
        ...         pass
        >>> store = tempfile.mkdtemp() + "/demo.db"
        >>> results = neuroyard.run(Guess, "xor-v2", runs=2, budget=100, store=store,
        ...                         executor="in-process", progress=False)
        >>> results.done, [(r.status, r.evaluations) for r in results.records()]
        (2, [('unsolved', 100), ('unsolved', 100)])
    """
    _check_numbers(
        runs=runs,
        seed=seed,
        budget=budget,
        workers=workers,
        max_batch=max_batch,
        memory_limit=memory_limit,
    )
    if isinstance(share, str):
        try:
            share = Share.parse(share)
        except ValueError as exc:
            raise SettingError(f"run: share {share!r}: {exc}") from None
    limits = Limits(time_limit, memory_limit, max_batch, run_limit)
    plan = CampaignPlan(
        _evolver_specs(evolvers, params or {}, config),
        _task_choices(tasks, settings or {}),
        runs,
        seed,
        budget,
    )
    plan.check()
    made = _executor(executor, scheduler, workers, limits)  # before the store: a cluster
    try:  # that fails to start writes nothing
        opened = _checked_store(store)
    except BaseException:
        made.close()
        raise
    with opened as results_store:
        outcome = execute(
            plan,
            results_store,
            made,
            progress=progress,
            share=share,
            notice=_say if progress else None,
        )
    if outcome.internal_errors:
        raise InternalError(
            f"{outcome.internal_errors} run(s) stopped on an internal error and were not "
            "stored (they run again when the campaign resumes)",
            outcome.crash_log,
        )
    keys = [spec.key for spec in share.select(plan.expand())]
    return Results([store], keys, done=outcome.done, skipped=outcome.skipped)


def _say(line: str) -> None:
    """Write ``line`` to stderr, where the progress bar goes."""
    print(line, file=sys.stderr, flush=True)


def _checked_store(path: str | Path) -> ResultStore:
    """The store at ``path`` open for writing, once every run it holds has passed
    :meth:`~neuroyard.records.store.ResultStore.check_records`: a campaign never adds to a
    store whose records are broken (a :class:`StoreError` naming the run and the store)."""
    opened = ResultStore(path)
    try:
        opened.check_records()
    except BaseException:
        opened.close()
        raise
    return opened


def _check_numbers(**values: int | None) -> None:
    """Whole numbers of at least 1 (``seed``: 0) and at most 2**63 - 1
    (:data:`~neuroyard.core.defaults.MAX_SEED`; ``memory_limit``:
    :data:`~neuroyard.core.defaults.MAX_MEMORY_LIMIT_MB`); ``budget`` and ``memory_limit``
    may be None."""
    for name, value in values.items():
        if name in ("budget", "memory_limit") and value is None:
            continue
        lowest = 0 if name == "seed" else 1
        highest = MAX_MEMORY_LIMIT_MB if name == "memory_limit" else MAX_SEED
        if isinstance(value, bool) or not isinstance(value, int) or not lowest <= value <= highest:
            raise SettingError(
                f"run: {name} must be a whole number from {lowest} to {highest}, got {value!r}"
            )


def evolver_name(choice: Callable[..., Any]) -> str:
    """The name a class given as an evolver runs under: ``module:qualname``."""
    return f"{choice.__module__}:{choice.__qualname__}"


def _named(evolvers: EvolverChoices) -> list[tuple[str, Callable[..., Any] | None]]:
    """(name, factory or None: found by name) of every evolver given."""
    if isinstance(evolvers, str | Mapping) or callable(evolvers):
        items: Sequence[Any] = [evolvers]
    elif isinstance(evolvers, Sequence):
        items = evolvers
    else:
        items = [evolvers]  # refused below
    out: list[tuple[str, Callable[..., Any] | None]] = []
    for item in items:
        if isinstance(item, str):
            out.append((item, None))
        elif isinstance(item, Mapping):
            out += [_given_name(name, factory) for name, factory in item.items()]
        elif callable(item):
            out.append((evolver_name(item), item))
        else:
            raise EvolverError(
                "evolvers: expected a name, a class or a mapping of names to classes, "
                f"got {type(item).__name__}"
            )
    return out


def _given_name(name: Any, factory: Any) -> tuple[str, Callable[..., Any]]:
    """A ``{name: class}`` entry, checked (see the module docstring)."""
    if not isinstance(name, str) or not name or not callable(factory):
        raise EvolverError(
            f"evolvers: a mapping names evolver classes ({name!r}: {factory!r}); give a "
            "registered name or a module:attr path as a string instead"
        )
    if name in available() or name.startswith(PROCESS_PREFIX):
        raise EvolverError(
            f"evolvers: the name {name!r} is taken by an installed evolver or the process: "
            f"form; give {evolver_name(factory)} another name"
        )
    return name, factory


def _evolver_specs(
    evolvers: EvolverChoices,
    params: Mapping[str, Any],
    config: str | Path | Mapping[str, Any] | None,
) -> list[EvolverSpec]:
    named = _named(evolvers)
    if not named:
        raise EvolverError("evolvers: none given")
    names = [name for name, _ in named]
    doubles = sorted({n for n in names if names.count(n) > 1})
    if doubles:
        raise EvolverError(f"evolvers: {', '.join(doubles)} given twice")
    specs = [EvolverSpec(name, {}, factory) for name, factory in named]
    given = distribute(params.items(), declared_options(specs), "param")
    common = read_config(config) if isinstance(config, str | Path) else dict(config or {})
    return [EvolverSpec(s.name, {**common, **given[s.name]}, s.factory) for s in specs]


def _task_choices(tasks: str | Sequence[str], settings: Mapping[str, Any]) -> list[TaskChoice]:
    texts = [tasks] if isinstance(tasks, str) else list(tasks)
    if not texts or not all(isinstance(t, str) for t in texts):
        raise SettingError(f"run: tasks must be task ids, got {tasks!r}")
    given = {text: parse_task(text) for text in texts}  # id or FORM:VALUE
    tables = {text: task_class(task_id).option_table() for text, (task_id, _) in given.items()}
    chosen = distribute(settings.items(), tables, "setting")
    return [
        TaskChoice(task_id, {**form, **chosen[text]}) for text, (task_id, form) in given.items()
    ]


def _executor(name: str, scheduler: str | None, workers: int, limits: Limits) -> Executor:
    if scheduler is not None and name != "dask":
        raise SettingError(f"run: a scheduler address needs executor='dask', not {name!r}")
    options = {"scheduler": scheduler} if scheduler is not None else {}
    return make_executor(name, workers, limits, **options)

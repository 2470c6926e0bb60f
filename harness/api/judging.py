"""The judgements, for Python and for the command line: is B better than A
(:func:`compare`), what did these runs give (:func:`baseline`), what would a check run
(:func:`check_plan`), did anything regress since (:func:`check`), do a store's solved
claims hold (:func:`verify`). Each returns the data object the command line prints.
"""

from __future__ import annotations

import tempfile
from collections.abc import Sequence
from pathlib import Path

from neuroyard.core.defaults import DEFAULT_PATH
from neuroyard.core.errors import NeuroyardError
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.crashlog import InternalError
from neuroyard.execution.executors import make_executor
from neuroyard.execution.verification import VerifyResult, verify_runs
from neuroyard.records.runs import RunRecord, record_key
from neuroyard.records.store import ResultStore
from neuroyard.reports import gate
from neuroyard.reports.baseline import (
    Baseline,
    BaselineError,
    BaselineGroup,
    CheckResult,
    differences,
    fresh_runs,
)
from neuroyard.reports.compare import ALPHA, Comparison, select
from neuroyard.reports.compare import compare as compare_runs
from neuroyard.reports.gate import DEFAULT_THRESHOLDS, GroupRuns, RunFigures, Thresholds

from .results import Results
from .trust import PlannedEvolver, planned, refuse_untrusted

Side = str | Results | None


def compare(
    a: Side = None,
    b: Side = None,
    *,
    store: str | Path = DEFAULT_PATH,
    store_b: str | Path | None = None,
    alpha: float = ALPHA,
    with_logs: bool = False,
) -> Comparison:
    """Is B better than A? Two evolver configurations side by side, task by task, on the
    run seeds both have (:mod:`neuroyard.reports.compare`: Fisher's exact test of success,
    Mann-Whitney U of evaluations to solve, of connections and of every task metric, Holm's
    correction across all of them, a verdict in words for each row).

    Args:
        a: side A: ``"EVOLVER"`` or ``"EVOLVER@HASH"`` (the start of the configuration
            hash the report prints) in ``store``, a :class:`~.results.Results` holding one
            configuration, or None: the only configuration in ``store``.
        b: side B, the same way, read from ``store_b`` (default: ``store``).
        store: the store of side A (and of B).
        store_b: the store of side B.
        alpha: the significance level, strictly between 0 and 1.
        with_logs: read the runs' generation logs too (the HTML comparison plots them).

    Returns:
        A :class:`~neuroyard.reports.compare.Comparison` (``to_json()``, or render it
        with ``neuroyard.reports.renderers.render(result, "text", "comparison")``).

    Raises:
        NeuroyardError: sides that cannot be told apart, or a selector that matches no
            configuration or several.
        StoreError: a store that cannot be read.

    Example:
        >>> import neuroyard
        >>> result = neuroyard.compare("neat", "neat@1a2b3c",
        ...                            store="results/neuroyard.db")  # doctest: +SKIP
        >>> [row.verdict for task in result.tasks for row in task.rows]  # doctest: +SKIP
    """
    if not 0 < alpha < 1:
        raise NeuroyardError(f"compare: alpha must lie strictly between 0 and 1, got {alpha}")
    other = store if store_b is None else store_b
    if Path(other) == Path(store) and a is None and b is None:
        raise NeuroyardError("compare: name the sides a and b, or give store_b")
    a_label, a_runs = _side(a, Path(store), with_logs)
    b_label, b_runs = _side(b, Path(other), with_logs)
    if Path(other) != Path(store) and not isinstance(a, Results) and not isinstance(b, Results):
        a_label, b_label = f"{a_label} from {store}", f"{b_label} from {other}"
    return compare_runs(a_label, a_runs, b_label, b_runs, alpha=alpha)


def _side(side: Side, store: Path, with_logs: bool) -> tuple[str, list[RunRecord]]:
    """(label, runs) of one side of a comparison."""
    if isinstance(side, Results):
        return select(side.records(with_log=with_logs), None, repr(side))
    with ResultStore(store, write=False) as opened:
        records = list(opened.records(with_log=with_logs))
    return select(records, side, f"results store {store}")


def baseline(store: str | Path = DEFAULT_PATH, output: str | Path | None = None) -> Baseline:
    """What the runs of a store were and what they gave: the regression gate's baseline
    (:mod:`neuroyard.reports.baseline`), written to ``output`` when given.

    Args:
        store: the results store whose runs make the baseline.
        output: the baseline file to write (replaced whole), or None.

    Returns:
        The :class:`~neuroyard.reports.baseline.Baseline`.

    Raises:
        BaselineError: a store with no runs, or a file that cannot be written.
        StoreError: a store that cannot be read.

    Example:
        >>> import neuroyard
        >>> made = neuroyard.baseline("results/neuroyard.db", "baseline.json")  # doctest: +SKIP
        >>> len(made.groups), made.runs  # doctest: +SKIP
        (1, 10)
    """
    with ResultStore(store, write=False) as opened:
        records = list(opened.records(with_log=False))
    if not records:
        raise BaselineError(f"results store {store}: holds no runs to make a baseline of")
    made = Baseline.of(records)
    if output is not None:
        made.write(output)
    return made


def check(
    baseline: str | Path | Baseline,
    store: str | Path | None = None,
    workers: int = 1,
    alpha: float = gate.ALPHA,
    thresholds: Thresholds = DEFAULT_THRESHOLDS,
    progress: bool = True,
    trust_evolvers: bool = False,
) -> CheckResult:
    """Did anything regress? Make the baseline's runs again (same evolvers,
    configurations, tasks, settings, budgets, seeds and run indices) into a temporary store
    on ``workers`` supervised worker processes, or read them from ``store``, and compare
    them with the baseline group by group (:mod:`neuroyard.reports.gate`).

    A baseline file names the code that making its runs again runs (:func:`check_plan`
    says what): evolvers other than installed ones (``module:attr`` paths, which import a
    module and call it, and ``process:COMMAND``, which runs a command) are run only with
    ``trust_evolvers=True``; without it the check refuses before importing, building or
    starting anything. Reading the fresh runs from ``store`` runs no evolver.

    Args:
        baseline: the baseline file's path, or a :class:`~neuroyard.reports.baseline.
            Baseline`.
        store: read the fresh runs from this store instead of making them.
        workers: parallel worker processes for the runs made again.
        alpha: significance level after Holm's correction across every test.
        thresholds: the smallest changes that matter
            (:class:`~neuroyard.reports.gate.Thresholds`).
        progress: show a progress bar while re-running.
        trust_evolvers: run the evolvers the baseline names even when they are not
            installed ones (the caller has read the file and trusts it).

    Returns:
        The :class:`~neuroyard.reports.baseline.CheckResult`: ``regressions`` (one line
        each; empty when nothing regressed), ``findings`` and ``lines()``.

    Raises:
        BaselineError: a baseline file that cannot be read, or input that does not fit it;
            also (``UntrustedEvolverError``) a file that names evolvers other than
            installed ones, without ``trust_evolvers``.
        StoreError: a store that cannot be read.
        InternalError: a fault of neuroyard while re-running.

    Example:
        >>> import neuroyard
        >>> result = neuroyard.check("tests/baseline.json", workers=2)  # doctest: +SKIP
        >>> assert not result.regressions, result.regressions  # doctest: +SKIP
    """
    where, read = _read(baseline)
    groups = read.groups
    if store is None:
        if not trust_evolvers:
            refuse_untrusted(planned(read), where)
        fresh = _rerun(where, groups, workers, progress)
    else:
        with ResultStore(store, write=False) as opened:
            records = list(opened.records(with_log=False))
        fresh = fresh_runs(groups, records, Path(store), where)
    notes: list[str] = []
    compared = []
    for group, records in zip(groups, fresh, strict=True):
        notes += differences(group, records)
        compared.append(
            GroupRuns(
                group.label, group.budget, group.run_figures, [RunFigures.of(r) for r in records]
            )
        )
    return CheckResult(gate.compare(compared, alpha, thresholds), notes, len(groups), alpha)


def check_plan(
    baseline: str | Path | Baseline, trust_evolvers: bool = False
) -> tuple[PlannedEvolver, ...]:
    """What :func:`check` runs when it makes a baseline's runs again: each group's evolver
    (name and options as the file gives them) and the code its name runs. Loads, builds and
    runs nothing.

    Args:
        baseline: the baseline file's path, or a :class:`~neuroyard.reports.baseline.
            Baseline`.
        trust_evolvers: as in :func:`check`: without it, a file naming evolvers other than
            installed ones is refused here as :func:`check` would refuse it.

    Returns:
        One :class:`~neuroyard.api.trust.PlannedEvolver` per group (``evolver``,
        ``config``, ``origin``: ``installed``, ``module``, ``process`` or ``unknown``,
        ``needs_trust``, ``line()``).

    Raises:
        BaselineError: a baseline file that cannot be read; also
            (``UntrustedEvolverError``) one that names evolvers other than installed ones,
            without ``trust_evolvers``.

    Example:
        >>> import json, neuroyard
        >>> group = {"evolver": "process:sh -c 'touch pwned'", "config": {},
        ...          "config_hash": "0" * 12, "task": "xor-v2", "task_settings": {},
        ...          "budget": 100, "campaign_seed": 1, "runs": 1, "run_figures": [
        ...              {"run_index": 0, "status": "unsolved", "evaluations": 100,
        ...               "generations": 1, "hidden_nodes": 0, "connections": 3,
        ...               "relative_speed": None}]}
        >>> with open("b.json", "w") as f:
        ...     json.dump({"format": "neuroyard regression baseline", "format_version": 1,
        ...                "environment": {}, "groups": [group]}, f)
        >>> [p.origin for p in neuroyard.check_plan("b.json", trust_evolvers=True)]
        ['process']
        >>> neuroyard.check("b.json")
        Traceback (most recent call last):
        ...
        neuroyard.api.trust.UntrustedEvolverError: baseline b.json: groups.0 (...) would run "process:sh -c 'touch pwned'", which runs the command "sh -c 'touch pwned'"; nothing was run: ...
        >>> import os; os.path.exists("pwned")
        False
    """
    where, read = _read(baseline)
    evolvers = planned(read)
    if not trust_evolvers:
        refuse_untrusted(evolvers, where)
    return evolvers


def _read(baseline: str | Path | Baseline) -> tuple[str, Baseline]:
    """(how errors name it, the baseline) of a baseline file's path or a Baseline."""
    if isinstance(baseline, Baseline):
        return "given", baseline
    return str(baseline), Baseline.read(baseline)


def verify(store: str | Path = DEFAULT_PATH) -> VerifyResult:
    """Do a store's solved claims hold? Re-check every stored solved run as the
    coordinator checks a run before storing it (:mod:`neuroyard.execution.verification`):
    its best network, read by the harness's own path, passes the success test of its task
    rebuilt from the record's task id, task seed and settings, and has the size the record
    gives. For stores received from elsewhere; the store is opened read-only and no
    evolver code runs. It shows that each solution solves the task its record names, under
    the settings the record gives, not that those are the settings you meant (``neuroyard
    report`` lists them).

    Args:
        store: the results store to re-check.

    Returns:
        A :class:`~neuroyard.execution.verification.VerifyResult`: ``solved`` (runs
        re-checked), ``unverified`` (each run whose claim does not hold, or whose task
        cannot be built here, with its reason), ``holds`` and ``lines()``.

    Raises:
        StoreError: a store that cannot be read.

    Example:
        >>> import neuroyard
        >>> _ = neuroyard.run("hill-climber", "xor-v2", runs=2, seed=1, budget=5000,
        ...                   store="runs.db", executor="in-process", progress=False)
        >>> result = neuroyard.verify("runs.db")
        >>> result.holds, result.lines()[-1]
        (True, '... solved run(s) in runs.db hold on re-verification')
    """
    with ResultStore(store, write=False) as opened:
        return verify_runs(opened.stored_runs(with_log=False), str(store))


def group_plan(group: BaselineGroup) -> CampaignPlan:
    """The campaign that makes a baseline group's runs again (run indices 0 to the
    highest)."""
    return CampaignPlan(
        [EvolverSpec(group.evolver, group.config)],
        [TaskChoice(group.task, group.task_settings)],
        group.run_count,
        group.campaign_seed,
        group.budget,
    )


def _rerun(
    where: str, groups: Sequence[BaselineGroup], workers: int, progress: bool
) -> list[list[RunRecord]]:
    """Each group's runs made again into a temporary store, one campaign per group."""
    plans = []
    for k, group in enumerate(groups):  # every group checked before any run starts
        try:
            plan = group_plan(group)
            plan.check()
        except NeuroyardError as exc:
            raise BaselineError(f"baseline {where}: groups.{k} ({group.label}): {exc}") from None
        plans.append(plan)
    with (
        tempfile.TemporaryDirectory(prefix="neuroyard-check-") as folder,
        ResultStore(Path(folder) / "fresh.db") as fresh,
    ):
        for plan in plans:
            outcome = execute(plan, fresh, make_executor("pool", workers), progress=progress)
            if outcome.internal_errors:
                raise InternalError(
                    f"{outcome.internal_errors} run(s) of the check stopped on an internal error",
                    outcome.crash_log,
                )
        records = list(fresh.records(with_log=False))
    by_key = {record_key(r): r for r in records}
    return [[by_key[s.key] for s in plan.expand() if s.key in by_key] for plan in plans]

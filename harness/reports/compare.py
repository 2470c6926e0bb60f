"""Is B better than A? Two groups of runs side by side, per task, on the same run seeds.

A side is the runs of one evolver configuration (from one store or two). Per task (and task
settings) both sides have run, only the run seeds both have are used (the same campaign
seed and run index: every evolver met the same task instances there). For each task the
comparison tests (:mod:`.significance`):

* success rate: Fisher's exact test;
* evaluations to solve: Mann-Whitney U with A12, unsolved runs censored at the budget and
  ranked worst;
* connections of the solutions (network size): Mann-Whitney U with A12, solved runs only;
* every metric the task declares (e.g. generalization): Mann-Whitney U over solved runs.

All p-values of one comparison are adjusted together with Holm's correction. Each row gets
a verdict in words, and the runs per side a test would need to detect the observed effect
at 80% power. A12 is the chance that a run of A has the larger value (ties count half): for
a figure where lower is better, above 0.5 favours B.
"""

from __future__ import annotations

import json
from collections.abc import Iterable, Sequence
from dataclasses import asdict, dataclass, field
from typing import Any

from neuroyard.core.defaults import COMPARE_ALPHA, COMPARE_POWER
from neuroyard.core.errors import NeuroyardError
from neuroyard.core.numbers import number, value_text
from neuroyard.records.runs import RunRecord
from neuroyard.reports.labels import configuration_label, task_labels
from neuroyard.reports.significance import (
    TestResult,
    censored_evaluations,
    fisher_test,
    holm,
    mann_whitney,
    runs_needed_mann_whitney,
    runs_needed_proportions,
)
from neuroyard.reports.stats import quartiles
from neuroyard.tasks import declared_metrics

ALPHA = COMPARE_ALPHA
POWER = COMPARE_POWER


@dataclass(frozen=True)
class MetricRow:
    """One figure of one task, A against B, with its test and verdict."""

    task: str
    metric: str
    better: str  # "higher" or "lower"
    a: str  # the figure of A: "18/20 (90%)", or the median [interquartile range] "4,500 [3,000-6,150]"
    b: str
    result: TestResult
    p_holm: float | None
    runs_needed: int | None
    verdict: str


@dataclass(frozen=True)
class TaskComparison:
    """The rows of one task; ``label`` = the task as reports name it (:mod:`.labels`),
    ``runs`` = runs compared per side (the run seeds both share, or all runs when they
    share none), ``notes`` what else a reader must know (runs left out, independent
    samples, budgets)."""

    task: str
    label: str
    task_settings: dict[str, Any]
    runs: int
    rows: tuple[MetricRow, ...]
    notes: tuple[str, ...] = ()
    # the runs compared, for plots; not part of the JSON
    a_runs: tuple[RunRecord, ...] = field(default=(), repr=False)
    b_runs: tuple[RunRecord, ...] = field(default=(), repr=False)


@dataclass(frozen=True)
class Comparison:
    """A whole comparison (what :func:`neuroyard.compare` returns and ``neuroyard compare``
    prints): side labels, level, and per task its rows (:class:`TaskComparison`, each
    :class:`MetricRow` with its test, Holm-adjusted p-value and verdict).

    Args:
        a: side A's label (evolver, configuration hash, store).
        b: side B's label.
        alpha: the significance level after Holm's correction.
        tasks: per task (and settings) both sides ran, its rows.
        notes: what else a reader must know (tasks only one side ran).

    Example:
        >>> import neuroyard
        >>> empty = neuroyard.Comparison("neat [1a2b3c]", "neat [4d5e6f]", 0.05, ())
        >>> empty.to_json()["alpha"]
        0.05
    """

    a: str
    b: str
    alpha: float
    tasks: tuple[TaskComparison, ...]
    notes: tuple[str, ...] = field(default=())

    def to_json(self) -> dict[str, Any]:
        doc = asdict(self)
        for task in doc["tasks"]:
            del task["a_runs"], task["b_runs"]
            for row in task["rows"]:
                row["test"] = row.pop("result")
        return doc


@dataclass
class _Pending:
    """A row before Holm's correction is known."""

    task: str
    metric: str
    better: str
    a: str
    b: str
    result: TestResult
    needed: int | None
    describe: Any  # (p_holm) -> verdict


def compare(
    a_label: str,
    a_records: Iterable[RunRecord],
    b_label: str,
    b_records: Iterable[RunRecord],
    alpha: float = ALPHA,
) -> Comparison:
    """Compare the runs of side A with those of side B (see the module docstring)."""
    groups_a, groups_b = _by_task(a_records), _by_task(b_records)
    keys = sorted(set(groups_a) | set(groups_b))
    label = dict(zip(keys, task_labels([(t, json.loads(s)) for t, s in keys]), strict=True))
    notes = []
    for key in sorted(set(groups_a) ^ set(groups_b)):
        side = "A" if key in groups_a else "B"
        notes.append(
            f"{label[key]} ({_settings_text(key[1])}) has runs on side {side} only: left out"
        )
    pending = []
    for key in sorted(set(groups_a) & set(groups_b)):
        task, settings_text = key
        runs_a, runs_b, task_notes = _paired(groups_a[key], groups_b[key])
        rows = _task_rows(task, runs_a, runs_b) if runs_a else []
        pending.append((task, settings_text, runs_a, runs_b, task_notes, rows))
    flat = [row for *_, rows in pending for row in rows]
    adjusted = iter(holm([row.result.p_value for row in flat]))
    tasks = []
    for task, settings_text, runs_a, runs_b, task_notes, rows in pending:
        done = []
        for row in rows:
            p = next(adjusted)
            done.append(MetricRow(row.task, row.metric, row.better, row.a, row.b, row.result,
                                  p, row.needed, row.describe(p, alpha)))  # fmt: skip
        tasks.append(TaskComparison(task, label[task, settings_text], json.loads(settings_text),
                                    len(runs_a), tuple(done), tuple(task_notes), tuple(runs_a),
                                    tuple(runs_b)))  # fmt: skip
    return Comparison(a_label, b_label, alpha, tuple(tasks), tuple(notes))


def _by_task(records: Iterable[RunRecord]) -> dict[tuple[str, str], list[RunRecord]]:
    out: dict[tuple[str, str], list[RunRecord]] = {}
    for r in records:
        out.setdefault((r.task, json.dumps(r.task_settings, sort_keys=True)), []).append(r)
    return out


def _settings_text(settings_json: str) -> str:
    settings = json.loads(settings_json)
    return ", ".join(f"{k}={value_text(v)}" for k, v in sorted(settings.items())) or "no settings"


def _paired(
    a: Sequence[RunRecord], b: Sequence[RunRecord]
) -> tuple[list[RunRecord], list[RunRecord], list[str]]:
    """The runs of both sides on the run seeds both have, in the same order, and notes.
    Sides with no run seed in common (campaigns under different seeds) are compared as
    independent samples, all runs of each, and a note says so."""
    seeds_a = {(r.campaign_seed, r.run_index): r for r in a}
    seeds_b = {(r.campaign_seed, r.run_index): r for r in b}
    common = sorted(set(seeds_a) & set(seeds_b))
    notes = []
    if common:
        left_out = len(seeds_a) + len(seeds_b) - 2 * len(common)
        if left_out:
            notes.append(f"{left_out} runs without a counterpart on the other side left out")
        runs_a = [seeds_a[s] for s in common]
        runs_b = [seeds_b[s] for s in common]
    else:
        notes.append(
            "no run seed in common (other campaign seeds): all runs compared as "
            f"independent samples, {len(a)} and {len(b)}"
        )
        runs_a, runs_b = list(a), list(b)
    budgets = {r.budget for r in runs_a + runs_b}
    if len(budgets) > 1:
        notes.append(
            "budgets differ (" + ", ".join(f"{x:,}" for x in sorted(budgets)) + "): unsolved "
            "runs are censored at the largest"
        )
    return runs_a, runs_b, notes


def _task_rows(task: str, a: list[RunRecord], b: list[RunRecord]) -> list[_Pending]:
    budget = max(r.budget for r in a + b)
    rows = [_success_row(task, a, b), _evaluations_row(task, a, b, budget)]
    rows.append(
        _solved_figure_row(
            task,
            "connections of solutions",
            "lower",
            "has smaller solutions",
            a,
            b,
            lambda r: r.connections,
        )  # fmt: skip
    )
    for metric in declared_metrics(task, a[0].task_settings):
        rows.append(
            _solved_figure_row(
                task,
                metric.name,
                metric.better,
                f"has the {metric.better} {metric.name}",
                a,
                b,
                lambda r, m=metric.name: r.success_details.get(m),
            )  # fmt: skip
        )
    return rows


def _success_row(task: str, a: list[RunRecord], b: list[RunRecord]) -> _Pending:
    wins_a, wins_b = sum(r.solved for r in a), sum(r.solved for r in b)
    result = fisher_test(wins_a, len(a), wins_b, len(b))
    needed = runs_needed_proportions(wins_a / len(a), wins_b / len(b), power=POWER)

    def describe(p: float | None, alpha: float) -> str:
        if p is not None and p < alpha:
            who = "B" if wins_b > wins_a else "A"
            return f"{who} solves more often: p {_p(p)} after Holm"
        return _no_difference(result, len(a), len(b))

    return _Pending(task, "success rate", "higher", _rate(wins_a, len(a)),
                    _rate(wins_b, len(b)), result, needed, describe)  # fmt: skip


def _evaluations_row(task: str, a: list[RunRecord], b: list[RunRecord], budget: int) -> _Pending:
    values_a = censored_evaluations([r.evaluations for r in a], [r.solved for r in a], budget)
    values_b = censored_evaluations([r.evaluations for r in b], [r.solved for r in b], budget)
    result = mann_whitney(values_a, values_b)
    needed = _needed(result)

    def describe(p: float | None, alpha: float) -> str:
        if p is not None and p < alpha:
            who = "B" if result.effect > 0.5 else "A"
            return f"{who} solves with fewer evaluations: A12 = {result.effect:.2f}, p {_p(p)} after Holm"
        return _no_difference(result, len(a), len(b))

    return _Pending(task, "evaluations to solve", "lower", _median_text(a, lambda r: r.evaluations),
                    _median_text(b, lambda r: r.evaluations), result, needed, describe)  # fmt: skip


def _solved_figure_row(
    task: str,
    metric: str,
    better: str,
    phrase: str,
    a: list[RunRecord],
    b: list[RunRecord],
    value: Any,
) -> _Pending:
    """A figure of the solved runs (``value`` of a record), lower or ``better`` higher;
    ``phrase`` says what the better side does ("has smaller solutions")."""
    values_a = _numbers(a, value)
    values_b = _numbers(b, value)
    result = mann_whitney(values_a, values_b, "solved runs")
    needed = _needed(result)

    def describe(p: float | None, alpha: float) -> str:
        if p is not None and p < alpha:
            a_larger = result.effect > 0.5
            who = "A" if a_larger == (better == "higher") else "B"
            return f"{who} {phrase}: A12 = {result.effect:.2f}, p {_p(p)} after Holm"
        return _no_difference(result, len(values_a), len(values_b))

    return _Pending(task, metric, better, _median_text(a, value), _median_text(b, value),
                    result, needed, describe)  # fmt: skip


def _needed(result: TestResult) -> int | None:
    """Runs per side to detect the observed A12 at :data:`POWER` (None: no effect)."""
    if result.effect is None:
        return None
    return runs_needed_mann_whitney(result.effect, power=POWER)


def _numbers(records: list[RunRecord], value: Any) -> list[float]:
    out = []
    for r in records:
        v = value(r) if r.solved else None
        if isinstance(v, int | float) and not isinstance(v, bool):
            out.append(float(v))
    return out


def _no_difference(result: TestResult, n_a: int, n_b: int) -> str:
    if not result.ran:
        return f"not tested: {result.reason}"
    size = f"n = {n_a} each" if n_a == n_b else f"n = {n_a} and {n_b}"
    return f"no detectable difference ({size})"


def _rate(wins: int, runs: int) -> str:
    return f"{wins}/{runs} ({number(wins / runs, '.0%')})"


def _median_text(records: list[RunRecord], value: Any) -> str:
    numbers = _numbers(records, value)
    q = quartiles(numbers)
    if q is None:
        return "no solved run"
    return f"{_n(q[1])} [{_n(q[0])}-{_n(q[2])}]"


def _n(x: float) -> str:
    return number(x, ",.0f" if abs(x) >= 100 or x == int(x) else ",.2f")


def _p(p: float) -> str:
    """``= 0.003`` or ``< 0.001``, to follow a "p"."""
    return f"= {number(p, '.2g')}" if p >= 0.001 else "< 0.001"


def configurations(records: Iterable[RunRecord]) -> dict[str, list[RunRecord]]:
    """Records by configuration label, ``evolver [hash6]`` (the hash of the effective
    configuration, as reports print it: :func:`.labels.configuration_label`)."""
    out: dict[str, list[RunRecord]] = {}
    for r in records:
        out.setdefault(configuration_label(r.evolver, r.config_hash), []).append(r)
    return out


def select(
    records: Iterable[RunRecord], selector: str | None, where: str
) -> tuple[str, list[RunRecord]]:
    """The runs of one configuration: ``selector`` is ``EVOLVER`` or ``EVOLVER@HASH`` (a
    prefix of the configuration hash), or None when ``where`` holds one configuration only.
    A selector that matches none or several is a :class:`NeuroyardError` listing them."""
    found = configurations(records)
    known = ", ".join(found) or "none"
    if selector is None:
        if len(found) != 1:
            raise NeuroyardError(
                f"{where} holds {len(found)} configurations ({known}): choose one with --a/--b"
            )
        (label,) = found
        return label, found[label]
    name, _, prefix = selector.partition("@")
    matches = [
        label
        for label, group in found.items()
        if group[0].evolver == name and group[0].config_hash.startswith(prefix)
    ]
    if len(matches) != 1:
        what = "no configuration matches" if not matches else f"{len(matches)} configurations match"
        hint = "" if not matches else "; add @HASH to choose one"
        raise NeuroyardError(f"{where}: {what} {selector!r} (there: {known}){hint}")
    return matches[0], found[matches[0]]

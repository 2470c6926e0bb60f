"""Report rows: per evolver and task, the measured figures beside the published ones.

How rows are written (text, Markdown, JSON, ...) is the job of :mod:`.renderers`.

Rows group runs by evolver (name and configuration), task and task settings. Published
figures (from ``reference/``) are shown next to the measured value of the same metric,
with the ratio measured/published, the figure's source and provenance, and whether the
figure is comparable: measured under the same protocol settings (start angle, population
size, ...). Figures recalled from memory are marked as such and are information only.

Where the paper gives what a test needs, a comparable figure also gets a two-sided p-value
for "the measured and the published runs have the same mean (or success rate)": Welch's
t-test for a mean the paper reports with its standard deviation, run count and failures
(the mean is over solved runs on both sides), Fisher's exact test for failures and success
rates the paper reports with its run count. A small p says the difference is unlikely to be
chance; a large p says only that these runs cannot tell the two apart.
"""

from __future__ import annotations

import json
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import asdict, dataclass, field
from typing import Any

from neuroyard.records.runs import FAILED, RunRecord
from neuroyard.reference.published import figures_for
from neuroyard.reports.stats import (
    GroupSummary,
    fisher_p_value,
    summarize,
    welch_not_run,
    welch_p_value,
)
from neuroyard.tasks import Metric, declared_metrics

# Metrics that describe the experiment (sample size, population) rather than its outcome:
# shown side by side, never as a ratio.
_SAMPLE_METRICS = ("runs", "population")


@dataclass(frozen=True)
class Comparison:
    """One published value beside the measured value of the same metric."""

    method: str
    metric: str
    published: float
    measured: float | None
    ratio: float | None
    source: str
    provenance: str
    from_memory: bool
    comparable: bool
    mismatches: tuple[str, ...]
    p_value: float | None = None
    test: str = ""


@dataclass(frozen=True)
class ReportRow:
    evolver: str
    config_hash: str
    task: str
    task_settings: dict[str, Any]
    evolver_settings: dict[str, Any]
    summary: GroupSummary
    comparisons: tuple[Comparison, ...] = field(default=())
    # The options given for these runs (``--config`` / ``--param``); every other evolver
    # setting is the evolver's own default.
    evolver_config: dict[str, Any] = field(default_factory=dict)
    # (run index, generations, reason) of every failed run: one that broke, not one that
    # spent its budget unsolved.
    failures: tuple[tuple[int, int, str], ...] = ()
    # the task's declared metrics; their means are in ``summary.metrics``
    metrics: tuple[Metric, ...] = ()
    # the group's run records (with their generation logs when they were read with them),
    # for renderers that draw the runs; not part of ``to_json()``
    records: tuple[RunRecord, ...] = field(default=(), repr=False, compare=False)

    def to_json(self) -> dict[str, Any]:
        s = self.summary
        row: dict[str, Any] = {
            "evolver": self.evolver,
            "config_hash": self.config_hash,
            "task": self.task,
            "task_settings": self.task_settings,
            "evolver_settings": self.evolver_settings,
            "evolver_config": self.evolver_config,
        }
        row.update({k: v for k, v in s.figures().items() if k != "success_ci"})
        row["metrics"] = [{**asdict(m), "mean": s.metrics.get(m.name)} for m in self.metrics]
        row["success_ci_low"], row["success_ci_high"] = s.success_ci
        row["published"] = [asdict(c) for c in self.comparisons]
        row["failures"] = [
            {"run_index": i, "generations": g, "reason": reason} for i, g, reason in self.failures
        ]
        return row


def _measured(metric: str, s: GroupSummary, settings: dict[str, Any]) -> float | None:
    """The measured value of a published figure's ``metric``: a summary field, or
    ``mean_<name>`` of a metric the task declares."""
    if metric == "failures":
        return float(s.runs - s.solved)
    if metric == "population":
        value = settings.get("population_size")
        return float(value) if isinstance(value, int | float) else None
    task_metric = metric.removeprefix("mean_")
    value = s.metrics[task_metric] if task_metric in s.metrics else getattr(s, metric, None)
    return float(value) if isinstance(value, int | float) else None


def _test(metric: str, published: Mapping[str, float], s: GroupSummary) -> tuple[float | None, str]:
    """(p-value, test name) of measured against published for one metric; (None, "") when
    the paper does not give what the test needs."""
    runs = published.get("runs")
    if runs is None:
        return None, ""
    if metric in ("failures", "success_rate"):
        solved = runs - published["failures"] if metric == "failures" else published[metric] * runs
        return fisher_p_value(s.solved, s.runs, round(solved), int(runs)), "Fisher exact"
    sd_key = "sd_" + metric.removeprefix("mean_")
    if not metric.startswith("mean_") or sd_key not in published or "failures" not in published:
        return None, ""
    mean, sd = getattr(s, metric, None), getattr(s, sd_key, None)
    if mean is None:
        return None, ""
    solved_published = int(runs - published["failures"])
    # the means and their spreads are over solved runs, on both sides (no spread, None,
    # where fewer than 2 runs solved: the reason says so before the spread is looked at)
    reason = welch_not_run(sd or 0.0, s.solved, published[sd_key], solved_published, "solved runs")
    if reason:
        return None, reason
    p = welch_p_value(mean, sd, s.solved, published[metric], published[sd_key], solved_published)
    return p, "Welch t"


def _comparisons(records: Sequence[RunRecord], s: GroupSummary) -> tuple[Comparison, ...]:
    first = records[0]
    out = []
    for fig in figures_for(first.task):
        if fig.compare_with != first.evolver or fig.other_method(
            first.task_settings, first.evolver_settings or first.config
        ):
            continue
        mismatches = tuple(
            fig.mismatches(
                first.task_settings,
                first.evolver_settings or first.config,
                {"budget": first.budget},
            )
        )
        for metric, published in fig.values.items():
            measured = _measured(metric, s, first.evolver_settings)
            ratio = (
                measured / published
                if measured is not None and published and metric not in _SAMPLE_METRICS
                else None
            )
            p_value, test = _test(metric, fig.values, s) if not mismatches else (None, "")
            out.append(
                Comparison(
                    method=fig.method,
                    metric=metric,
                    published=published,
                    measured=measured,
                    ratio=ratio,
                    source=fig.source,
                    provenance=fig.provenance,
                    from_memory=fig.from_memory,
                    comparable=not mismatches,
                    mismatches=mismatches,
                    p_value=p_value,
                    test=test,
                )
            )
    return tuple(out)


def summary_of(records: Sequence[RunRecord]) -> GroupSummary:
    """The summary of one group of runs of one task, with the metrics the task declares."""
    first = records[0]
    metrics = declared_metrics(first.task, first.task_settings)
    return summarize(records, [m.name for m in metrics])


def build(records: Iterable[RunRecord]) -> list[ReportRow]:
    """Group records by evolver configuration, task, task settings and budget, and
    summarise each group (stable order: evolver, task)."""
    groups: dict[tuple[str, str, str, str, int], list[RunRecord]] = {}
    for r in records:
        key = (r.evolver, r.config_hash, r.task, json.dumps(r.task_settings, sort_keys=True),
               r.budget)  # fmt: skip
        groups.setdefault(key, []).append(r)
    rows = []
    for (evolver, config_hash, task, _, _), group in sorted(groups.items()):
        metrics = declared_metrics(task, group[0].task_settings)
        summary = summary_of(group)
        rows.append(
            ReportRow(
                evolver,
                config_hash,
                task,
                group[0].task_settings,
                group[0].evolver_settings or group[0].config,
                summary,
                _comparisons(group, summary),
                dict(group[0].config),
                tuple(
                    (r.run_index, r.generations, r.failure or "")
                    for r in group
                    if r.status == FAILED
                ),
                metrics,
                tuple(group),
            )
        )
    return rows


def export_record(record: RunRecord) -> dict[str, Any]:
    """A run record as one JSON object for export: every field, plus ``metrics``, the
    values of the task's declared metrics from the record's success test."""
    names = [m.name for m in declared_metrics(record.task, record.task_settings)]
    details = record.success_details
    return {**record.to_dict(), "metrics": {n: details[n] for n in names if n in details}}

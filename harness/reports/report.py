"""Reports: per evolver and task, the measured figures beside the published ones.

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
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import asdict, dataclass, field
from typing import Any

from tabulate import tabulate

from neuroyard.harness.core import jsonsafe
from neuroyard.harness.records.runs import FAILED, RunRecord
from neuroyard.harness.reports.stats import GroupSummary, fisher_p_value, summarize, welch_p_value
from neuroyard.reference.published import figures_for

FORMATS = ("text", "json", "markdown")
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
        row.update({k: v for k, v in asdict(s).items() if k != "success_ci"})
        row["success_ci_low"], row["success_ci_high"] = s.success_ci
        row["published"] = [asdict(c) for c in self.comparisons]
        row["failures"] = [
            {"run_index": i, "generations": g, "reason": reason} for i, g, reason in self.failures
        ]
        return row


def _measured(metric: str, s: GroupSummary, settings: dict[str, Any]) -> float | None:
    if metric == "failures":
        return float(s.runs - s.solved)
    if metric == "population":
        value = settings.get("population_size")
        return float(value) if isinstance(value, int | float) else None
    value = getattr(s, metric, None)
    return float(value) if value is not None else None


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
    if mean is None or sd is None:
        return None, ""
    solved_published = int(runs - published["failures"])
    p = welch_p_value(mean, sd, s.solved, published[metric], published[sd_key], solved_published)
    return p, "Welch t" if p is not None else ""


def _comparisons(records: Sequence[RunRecord], s: GroupSummary) -> tuple[Comparison, ...]:
    first = records[0]
    out = []
    for fig in figures_for(first.task):
        if fig.compare_with != first.evolver:
            continue
        mismatches = tuple(fig.mismatches(first.task_settings, first.evolver_settings))
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


def build(records: Iterable[RunRecord]) -> list[ReportRow]:
    """Group records and summarise each group (stable order: evolver, task)."""
    groups: dict[tuple[str, str, str, str], list[RunRecord]] = {}
    for r in records:
        key = (r.evolver, r.config_hash, r.task, json.dumps(r.task_settings, sort_keys=True))
        groups.setdefault(key, []).append(r)
    rows = []
    for (evolver, config_hash, task, _), group in sorted(groups.items()):
        summary = summarize(group)
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
            )
        )
    return rows


def _num(x: float | None, digits: int = 1) -> str:
    if x is None:
        return "-"
    if math.isinf(x):
        return "inf"
    return f"{x:,.{digits}f}" if digits else f"{x:,.0f}"


def _main_table(rows: Sequence[ReportRow], fmt: str) -> str:
    labels = {(r.evolver, r.config_hash) for r in rows}
    names = {r.evolver for r in rows}
    multi = len(labels) > len(names)  # same evolver under several configurations
    table = []
    for r in rows:
        s = r.summary
        name = f"{r.evolver} [{r.config_hash[:6]}]" if multi else r.evolver
        table.append(
            [
                name,
                r.task,
                s.runs,
                s.solved,
                s.failed,
                f"{s.success_rate:.0%} ({s.success_ci[0]:.0%}-{s.success_ci[1]:.0%})",
                _num(s.mean_evaluations, 0),
                _num(s.median_evaluations, 0),
                _num(s.ert, 0),
                _num(s.mean_generations),
                _num(s.mean_hidden_nodes, 2),
                _num(s.mean_connections, 2),
            ]
        )
    head = [
        "evolver",
        "task",
        "runs",
        "solved",
        "failed",
        "success (95% CI)",
        "mean evals",
        "median evals",
        "ERT",
        "mean gens",
        "hidden",
        "connections",
    ]
    return tabulate(table, head, tablefmt="github" if fmt == "markdown" else "simple")


def _published_table(rows: Sequence[ReportRow], fmt: str) -> str:
    table = []
    for r in rows:
        for c in r.comparisons:
            table.append(
                [
                    r.evolver,
                    r.task,
                    c.method,
                    c.metric,
                    _num(c.measured, 2),
                    _num(c.published, 2),
                    _num(c.ratio, 2) if c.comparable else "-",
                    f"{c.p_value:.2g} ({c.test})" if c.p_value is not None else "-",
                    c.provenance + (" (from memory)" if c.from_memory else ""),
                    "yes" if c.comparable else "no: " + "; ".join(c.mismatches),
                    c.source,
                ]
            )
    if not table:
        return ""
    head = [
        "evolver",
        "task",
        "method",
        "metric",
        "measured",
        "published",
        "ratio",
        "p (test)",
        "provenance",
        "comparable",
        "source",
    ]
    return tabulate(table, head, tablefmt="github" if fmt == "markdown" else "simple")


def _failures_table(rows: Sequence[ReportRow], fmt: str) -> str:
    table = [
        [r.evolver, r.task, index, generations, reason]
        for r in rows
        for index, generations, reason in r.failures
    ]
    if not table:
        return ""
    head = ["evolver", "task", "run", "generations", "reason"]
    return tabulate(table, head, tablefmt="github" if fmt == "markdown" else "simple")


def _settings_lines(rows: Sequence[ReportRow], fmt: str) -> list[str]:
    """Every distinct task and evolver setting the rows were measured under.

    Evolver options given for the runs are listed apart from the evolver's defaults, so a
    reader sees at once which settings were chosen away from them.
    """
    bullet = "- " if fmt == "markdown" else "  "
    seen: dict[str, str] = {}
    for r in rows:
        seen.setdefault(f"task {r.task}: {_joined(r.task_settings)}", "")
        given = {k: r.evolver_settings.get(k, v) for k, v in r.evolver_config.items()}
        defaults = {k: v for k, v in r.evolver_settings.items() if k not in given}
        parts = [f"set for these runs: {_joined(given)}"] if given else []
        if defaults:
            parts.append(f"the evolver's defaults: {_joined(defaults)}")
        elif not given:
            parts.append("the evolver's defaults (it reports no settings)")
        seen.setdefault(f"evolver {r.evolver} [{r.config_hash[:6]}]: {'; '.join(parts)}", "")
    return [bullet + line for line in seen]


def _joined(settings: Mapping[str, Any]) -> str:
    return ", ".join(f"{k}={_setting(v)}" for k, v in sorted(settings.items())) or "none"


def _setting(value: Any) -> str:
    return f"{value:.6g}" if isinstance(value, float) else str(value)


def render(rows: Sequence[ReportRow], fmt: str = "text") -> str:
    """The report as text (aligned tables), markdown (GitHub tables) or JSON (a list of rows)."""
    if fmt == "json":
        return jsonsafe.dumps([r.to_json() for r in rows], indent=2)
    if not rows:
        return "no runs in the store"
    parts = [_main_table(rows, fmt)]
    failures = _failures_table(rows, fmt)
    if failures:
        title = "Failed runs (the run broke; an unsolved run spent its budget and is not listed)"
        parts += ["", f"### {title}" if fmt == "markdown" else title, "", failures]
    published = _published_table(rows, fmt)
    if published:
        title = "Published figures beside measured values (ratio = measured / published)"
        parts += ["", f"### {title}" if fmt == "markdown" else title, "", published]
    title = "Settings the runs were measured under"
    parts += ["", f"### {title}" if fmt == "markdown" else title + ":", *_settings_lines(rows, fmt)]
    notes = (
        "Evaluations, generations and sizes are over solved runs; success rate and ERT count "
        "every run (ERT = all evaluations / solved runs). failed: runs that broke (the evolver "
        'raised, hung, died or broke the contract), listed with their reasons under "Failed '
        'runs" when there are any, counted as not solved; the other unsolved runs spent '
        "their budget. p: two-sided p-value that the "
        "measured and the published runs have the same mean (Welch's t-test) or the same "
        "success rate (Fisher's exact test), where the paper gives the run "
        "count and spread the test needs."
    )
    parts += ["", notes]
    return "\n".join(parts)

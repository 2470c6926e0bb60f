"""Report renderers, found by name in one registry.

A renderer turns report rows (:func:`.report.build`) into one document: a function
``(rows) -> str``. Built in: ``text`` (aligned tables), ``markdown`` (GitHub tables) and
``json`` (a list of rows, strict JSON). Register another with :func:`register_renderer`,
or from another package through the entry-point group ``neuroyard.renderers`` (the target
is the function); ``neuroyard report --format NAME`` then finds it.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from importlib.metadata import entry_points
from typing import Any

from tabulate import tabulate

from neuroyard.harness.core import jsonsafe
from neuroyard.harness.core.errors import NeuroyardError
from neuroyard.harness.reports.report import ReportRow

ENTRY_POINT_GROUP = "neuroyard.renderers"
Renderer = Callable[[Sequence[ReportRow]], str]
_RENDERERS: dict[str, Renderer] = {}


def register_renderer(name: str) -> Callable[[Renderer], Renderer]:
    """Decorator: make a renderer available under ``name``."""

    def add(fn: Renderer) -> Renderer:
        _RENDERERS[name] = fn
        return fn

    return add


def renderer_names() -> list[str]:
    """Names of every renderer, built in and installed."""
    for ep in entry_points(group=ENTRY_POINT_GROUP):
        if ep.name not in _RENDERERS:
            _RENDERERS[ep.name] = ep.load()
    return sorted(_RENDERERS)


def check_format(fmt: str) -> None:
    """A :class:`NeuroyardError` naming the known formats when ``fmt`` is none of them."""
    names = renderer_names()
    if fmt not in names:
        raise NeuroyardError(f"unknown report format {fmt!r} (known: {', '.join(names)})")


def render(rows: Sequence[ReportRow], fmt: str = "text") -> str:
    """The report in format ``fmt`` (a renderer name)."""
    check_format(fmt)
    return _RENDERERS[fmt](rows)


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
    return tabulate(table, head, tablefmt=_TABLE_FORMAT[fmt])


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
    return tabulate(table, head, tablefmt=_TABLE_FORMAT[fmt])


def _failures_table(rows: Sequence[ReportRow], fmt: str) -> str:
    table = [
        [r.evolver, r.task, index, generations, reason]
        for r in rows
        for index, generations, reason in r.failures
    ]
    if not table:
        return ""
    head = ["evolver", "task", "run", "generations", "reason"]
    return tabulate(table, head, tablefmt=_TABLE_FORMAT[fmt])


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


NOTES = (
    "Evaluations, generations and sizes are over solved runs; success rate and ERT count "
    "every run (ERT = all evaluations / solved runs). failed: runs that broke (the evolver "
    'raised, hung, died or broke the contract), listed with their reasons under "Failed '
    'runs" when there are any, counted as not solved; the other unsolved runs spent '
    "their budget. p: two-sided p-value that the "
    "measured and the published runs have the same mean (Welch's t-test) or the same "
    "success rate (Fisher's exact test), where the paper gives the run "
    "count and spread the test needs."
)


def _metrics_table(rows: Sequence[ReportRow], fmt: str) -> str:
    """The task-declared metrics of every row: mean over solved runs, unit, direction."""
    table = [
        [
            r.evolver,
            r.task,
            m.name,
            _num(r.summary.metrics.get(m.name), 1),
            m.unit,
            f"{m.better} is better",
            m.description,
        ]
        for r in rows
        for m in r.metrics
    ]
    if not table:
        return ""
    head = ["evolver", "task", "metric", "mean (solved runs)", "unit", "", "what it measures"]
    return tabulate(table, head, tablefmt=_TABLE_FORMAT[fmt])


_TABLE_FORMAT = {"text": "simple", "markdown": "github"}


def _document(rows: Sequence[ReportRow], fmt: str) -> str:
    """The text or Markdown report: tables, then settings and notes."""
    if not rows:
        return "no runs in the store"
    parts = [_main_table(rows, fmt)]
    sections = (
        ("Task metrics (means over solved runs)", _metrics_table(rows, fmt)),
        (
            "Failed runs (the run broke; an unsolved run spent its budget and is not listed)",
            _failures_table(rows, fmt),
        ),
        (
            "Published figures beside measured values (ratio = measured / published)",
            _published_table(rows, fmt),
        ),
    )
    for title, table in sections:
        if table:
            parts += ["", f"### {title}" if fmt == "markdown" else title, "", table]
    title = "Settings the runs were measured under"
    parts += ["", f"### {title}" if fmt == "markdown" else title + ":", *_settings_lines(rows, fmt)]
    parts += ["", NOTES]
    return "\n".join(parts)


@register_renderer("text")
def render_text(rows: Sequence[ReportRow]) -> str:
    return _document(rows, "text")


@register_renderer("markdown")
def render_markdown(rows: Sequence[ReportRow]) -> str:
    return _document(rows, "markdown")


@register_renderer("json")
def render_json(rows: Sequence[ReportRow]) -> str:
    return jsonsafe.dumps([r.to_json() for r in rows], indent=2)

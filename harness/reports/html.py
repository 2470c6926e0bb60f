"""The HTML report: one self-contained page (:func:`render_html`).

The page needs nothing but itself: no script, font or stylesheet from elsewhere, and every
plot (:mod:`.plots`) embedded as a ``data:`` URI of a PNG image. It shows the tables of
the text report (:func:`.document.document`), the plots of each task (for a task that
draws runs, the mazes, also the picture of one run: :mod:`.run_picture`), the settings
and the notes. The template (``templates/report.html.j2``) is rendered by jinja2 with
autoescaping, so every string from the runs (evolver names, task ids, settings, failure
reasons, sources) is shown as text, never read as markup; text cells and headings pass
through :func:`breakable`, which marks where a long name may break (``<wbr>``).
"""

from __future__ import annotations

import base64
from collections.abc import Sequence
from dataclasses import dataclass

from jinja2 import Environment, PackageLoader, StrictUndefined
from markupsafe import Markup, escape

from neuroyard.records.runs import RunRecord
from neuroyard.reports import plots
from neuroyard.reports.compare import Comparison
from neuroyard.reports.comparison_renderers import (
    NOTES,
    effect_text,
    p_text,
    runs_text,
    settings_text,
)
from neuroyard.reports.document import document, see_above
from neuroyard.reports.report import ReportRow
from neuroyard.reports.run_picture import run_picture
from neuroyard.reports.wrapping import pieces
from neuroyard.tasks import Metric, declared_metrics

_ENV = Environment(
    loader=PackageLoader("neuroyard.reports", "templates"),
    autoescape=True,
    undefined=StrictUndefined,
)


def breakable(text: object) -> Markup:
    """``text`` escaped, with ``<wbr>`` after each run of separators (:mod:`.wrapping`), so
    a browser breaks a long name (``plugins_for_tests:Constant``) there or at a space, never
    inside a word. The template's filter ``breakable``, for every cell and heading of
    text."""
    return Markup("<wbr>").join(escape(piece) for piece in pieces(str(text)))


_ENV.filters["breakable"] = breakable
_ENV.globals["see_above"] = see_above

ECDF_CAPTION = (
    "Fraction of all runs (failed and unsolved ones included) solved within each count of "
    "evaluations, log scale. A run that did not solve never takes its step, so each curve "
    "ends at the success rate."
)
FITNESS_CAPTION = (
    "Median over the runs of the best fitness found so far, against evaluations (log "
    "scale); the band spans the first to the third quartile. A run that ended keeps its "
    "last value. From the generation logs."
)
SIZES_CAPTION = "Hidden nodes and enabled connections of the solutions (solved runs only)."


@dataclass(frozen=True)
class Plot:
    """One embedded image: base64 PNG, alternative text and caption."""

    png: str
    alt: str
    caption: str


@dataclass(frozen=True)
class TaskPlots:
    """The plots of one task, under its label in the report's tables."""

    label: str
    images: tuple[Plot, ...]


def _plot(png: bytes | None, alt: str, caption: str) -> list[Plot]:
    return [] if png is None else [Plot(base64.b64encode(png).decode("ascii"), alt, caption)]


def task_plots(
    task: str, groups: dict[str, Sequence[RunRecord]], metrics: Sequence[Metric]
) -> TaskPlots:
    """Every plot of one task's runs, given as ``{series label: records}``."""
    images = [
        *_plot(
            plots.ecdf_png(groups, task), f"runs solved against evaluations, {task}", ECDF_CAPTION
        ),
        *_plot(
            plots.fitness_png(groups, task),
            f"best fitness against evaluations, {task}",
            FITNESS_CAPTION,
        ),
        *_plot(plots.sizes_png(groups, task), f"sizes of the solutions, {task}", SIZES_CAPTION),
    ]
    for m in metrics:
        caption = f"{m.name}: {m.description} (solved runs only)."
        images += _plot(
            plots.metric_png(groups, task, m), f"{m.name} of the solutions, {task}", caption
        )
    return TaskPlots(task, tuple(images))


def report_plots(
    task: str, groups: dict[str, Sequence[RunRecord]], metrics: Sequence[Metric]
) -> TaskPlots:
    """The plots of one task (:func:`task_plots`) and, where the task draws runs (the
    mazes), the picture of a representative run (:mod:`.run_picture`)."""
    page = task_plots(task, groups, metrics)
    picture = run_picture(groups)
    if picture is None:
        return page
    png, caption = picture
    alt = f"where the evaluations of a run ended and its best network's path, {task}"
    return TaskPlots(task, (*page.images, *_plot(png, alt, caption)))


def render_html(rows: Sequence[ReportRow]) -> str:
    """The HTML page of ``rows``; the plots of fitness against evaluations need the rows'
    records read with their generation logs."""
    doc = document(rows)
    by_task: dict[str, dict[str, Sequence[RunRecord]]] = {}
    metrics: dict[str, Sequence[Metric]] = {}
    for row, (evolver, task) in zip(rows, doc.labels, strict=True):
        by_task.setdefault(task, {})[evolver] = row.records
        metrics.setdefault(task, row.metrics)
    pages = [report_plots(task, groups, metrics[task]) for task, groups in by_task.items()]
    return _ENV.get_template("report.html.j2").render(doc=doc, plots=pages)


def render_comparison_html(comparison: Comparison) -> str:
    """The HTML page of a comparison: per task its table, verdicts and plots of both
    sides (the plots of fitness against evaluations need the runs' generation logs)."""
    sections = []
    for task in comparison.tasks:
        groups = {f"A: {comparison.a}": task.a_runs, f"B: {comparison.b}": task.b_runs}
        metrics = declared_metrics(task.task, task.task_settings)
        cells = [(effect_text(row), p_text(row.p_holm), runs_text(row)) for row in task.rows]
        sections.append(
            {
                "task": task,
                "settings": settings_text(task.task, task.task_settings),
                "rows": list(zip(task.rows, cells, strict=True)),
                "plots": task_plots(task.label, groups, metrics),
            }
        )
    page = _ENV.get_template("comparison.html.j2")
    return page.render(comparison=comparison, sections=sections, notes=NOTES)

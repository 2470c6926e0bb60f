"""Plots of run records, as PNG images (matplotlib's Agg canvas, loaded on first use).

Every plot shows the runs of one task, given as ``{label: records}`` (one series per
label, e.g. per evolver configuration), and returns PNG bytes at :data:`DPI`, or None
when the records hold nothing to draw. What is drawn:

* :func:`ecdf_png`: the runtime distribution, the fraction of all runs (failed and
  unsolved included) solved within each evaluation count, on a log axis; a run that did
  not solve never takes its step, so a curve ends at the success rate.
* :func:`fitness_png`: the median over runs of the best fitness found so far against
  evaluations, with the band between the first and third quartiles (from the generation
  logs; a run that ended keeps its last value).
* :func:`sizes_png`: the hidden nodes and enabled connections of the solutions.
* :func:`metric_png`: the values of one task-declared metric over the solved runs.

The numbers behind the first two are :func:`solved_fraction` and
:func:`best_fitness_quartiles`.

The legend of the first two stands below the axes, outside them, so it covers no curve
(:func:`ecdf_figure` and :func:`fitness_figure` give the figures themselves).
"""

from __future__ import annotations

import io
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from neuroyard.records.runs import RunRecord
from neuroyard.tasks import Metric

DPI = 100
WIDTH_INCHES = 6.4
Groups = Mapping[str, Sequence[RunRecord]]


def solved_fraction(records: Sequence[RunRecord]) -> tuple[np.ndarray, np.ndarray]:
    """(evaluations, fraction): the evaluations of each solved run in increasing order, and
    the fraction of all ``records`` solved within that many evaluations."""
    spent = np.sort(np.array([r.evaluations for r in records if r.solved], dtype=float))
    return spent, np.arange(1, spent.size + 1) / max(len(records), 1)


def best_fitness_quartiles(
    records: Sequence[RunRecord], grid: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(first quartile, median, third quartile) over the runs of the best fitness found
    within each evaluation count of ``grid``. A run counts from its first logged
    generation on and keeps its last value after its end; NaN where no run has a value."""
    values = np.full((len(records), grid.size), np.nan)
    for k, r in enumerate(records):
        if not r.log:
            continue
        spent = np.array([g.evaluations for g in r.log], dtype=float)
        best = np.maximum.accumulate([g.best_fitness for g in r.log])
        index = np.searchsorted(spent, grid, side="right") - 1
        values[k] = np.where(index >= 0, best[np.maximum(index, 0)], np.nan)
    counted = ~np.isnan(values).all(axis=0)
    quartiles = np.full((3, grid.size), np.nan)
    if counted.any():
        quartiles[:, counted] = np.nanpercentile(values[:, counted], [25, 50, 75], axis=0)
    return quartiles[0], quartiles[1], quartiles[2]


def _text(label: str) -> str:
    """A label as matplotlib text: a dollar sign would start mathematical text."""
    return label.replace("$", r"\$")


def _figure(rows: int = 1, cols: int = 1, height: float = 3.6) -> tuple[Any, Any]:
    """A new figure on matplotlib's Agg canvas and its axes (matplotlib is loaded here, on
    first use, so that commands that draw nothing never load it)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(WIDTH_INCHES, height), dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    return fig, fig.subplots(rows, cols, squeeze=False)


def _legend(fig: Any, ax: Any) -> None:
    """The legend of the series drawn on ``ax``, outside the axes below them (the
    constrained layout makes room for it), so it never covers a curve."""
    handles, labels = ax.get_legend_handles_labels()
    fig.legend(handles, labels, loc="outside lower center", fontsize="small", frameon=False)


def _series_height(series: int) -> float:
    """Height of a figure whose legend lists ``series`` lines below the axes."""
    return 3.2 + 0.2 * series


def _png(fig: Any) -> bytes:
    out = io.BytesIO()
    fig.savefig(out, format="png", dpi=DPI)
    return out.getvalue()


def ecdf_png(groups: Groups, task: str) -> bytes | None:
    """The runtime distribution of each group on ``task`` (see the module docstring)."""
    fig = ecdf_figure(groups, task)
    return None if fig is None else _png(fig)


def ecdf_figure(groups: Groups, task: str) -> Any:
    """The matplotlib figure of :func:`ecdf_png` (None when there is nothing to draw)."""
    spent = [r.evaluations for records in groups.values() for r in records if r.evaluations > 0]
    if not spent:
        return None
    first, last = min(spent), max(spent)
    fig, axes = _figure(height=_series_height(len(groups)))
    ax = axes[0][0]
    for label, records in groups.items():
        x, y = solved_fraction(records)
        solved = f"{x.size:,} of {len(records):,} solved"
        xs = np.concatenate([[first], x, [last]])
        ys = np.concatenate([[0.0], y, [y[-1] if y.size else 0.0]])
        ax.step(xs, ys, where="post", label=_text(f"{label} ({solved})"))
    ax.set_xscale("log")
    ax.set_ylim(0, 1.02)
    ax.set_xlabel("evaluations")
    ax.set_ylabel("fraction of runs solved")
    ax.set_title(_text(f"{task}: runs solved within an evaluation count"))
    ax.grid(True, which="both", alpha=0.3)
    _legend(fig, ax)
    return fig


def fitness_png(groups: Groups, task: str, points: int = 200) -> bytes | None:
    """Median and interquartile band of the best fitness so far against evaluations, per
    group on ``task``; None when no run has a generation log. ``points``: evaluation
    counts per curve (at most; evenly spaced on the log axis)."""
    fig = fitness_figure(groups, task, points)
    return None if fig is None else _png(fig)


def fitness_figure(groups: Groups, task: str, points: int = 200) -> Any:
    """The matplotlib figure of :func:`fitness_png` (None when there is nothing to draw)."""
    drawn = False
    fig, axes = _figure(height=_series_height(len(groups)))
    ax = axes[0][0]
    for label, records in groups.items():
        spent = [g.evaluations for r in records for g in r.log if g.evaluations > 0]
        if not spent:
            continue
        grid = np.unique(np.geomspace(min(spent), max(spent), points).round())
        low, median, high = best_fitness_quartiles(records, grid)
        (line,) = ax.plot(grid, median, label=_text(label))
        ax.fill_between(grid, low, high, color=line.get_color(), alpha=0.2, linewidth=0)
        drawn = True
    if not drawn:
        return None
    ax.set_xscale("log")
    ax.set_xlabel("evaluations")
    ax.set_ylabel("best fitness so far")
    ax.set_title(_text(f"{task}: median best fitness, quartile band"))
    ax.grid(True, which="both", alpha=0.3)
    _legend(fig, ax)
    return fig


def _boxes(ax: Any, data: Mapping[str, Sequence[float]], xlabel: str) -> None:
    ax.boxplot(
        list(data.values()),
        orientation="horizontal",
        tick_labels=[_text(label) for label in data],
    )
    ax.set_xlabel(_text(xlabel))
    ax.grid(True, axis="x", alpha=0.3)


def _height(groups: int) -> float:
    return 1.4 + 0.4 * groups


def sizes_png(groups: Groups, task: str) -> bytes | None:
    """Hidden nodes and enabled connections of the solutions of each group on ``task``;
    None when no run solved with a recorded size."""
    solutions = {
        label: [r for r in records if r.solved and r.hidden_nodes is not None]
        for label, records in groups.items()
    }
    solutions = {label: wins for label, wins in solutions.items() if wins}
    if not solutions:
        return None
    fig, axes = _figure(1, 2, _height(len(solutions)))
    hidden = {
        label: [float(r.hidden_nodes or 0) for r in wins] for label, wins in solutions.items()
    }
    links = {label: [float(r.connections or 0) for r in wins] for label, wins in solutions.items()}
    _boxes(axes[0][0], hidden, "hidden nodes")
    _boxes(axes[0][1], links, "enabled connections")
    axes[0][1].tick_params(labelleft=False)
    fig.suptitle(_text(f"{task}: size of the solutions"))
    return _png(fig)


def metric_png(groups: Groups, task: str, metric: Metric) -> bytes | None:
    """The values of ``metric`` over the solved runs of each group on ``task``; None when
    no solved run reports it."""
    data = {
        label: [
            float(r.success_details[metric.name])
            for r in records
            if r.solved and isinstance(r.success_details.get(metric.name), int | float)
        ]
        for label, records in groups.items()
    }
    data = {label: values for label, values in data.items() if values}
    if not data:
        return None
    fig, axes = _figure(height=_height(len(data)))
    unit = f" ({metric.unit})" if metric.unit else ""
    _boxes(axes[0][0], data, f"{metric.name}{unit}, {metric.better} is better")
    axes[0][0].set_title(_text(f"{task}: {metric.name} of the solutions"))
    return _png(fig)

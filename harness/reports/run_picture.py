"""The picture of one representative run of a task whose class draws runs
(:meth:`~neuroyard.tasks.base.Task.draw_run`: the mazes), for the HTML report.

The run shown (:func:`representative`) is the first solved run, in the order of the
report's table (its evolver rows, then run index), else the run with the highest best
fitness; only runs with a best network count. On a maze the fitness is the arena's
diagonal less the final distance to the goal, so that run's best network ended closest to
the goal. The task draws the picture, under the settings recorded with the run.
"""

from __future__ import annotations

import io
from collections.abc import Mapping, Sequence

from neuroyard.core.errors import TaskError
from neuroyard.core.network import from_dict
from neuroyard.records.runs import BEHAVIOUR_SAMPLE, RunRecord
from neuroyard.tasks import make
from neuroyard.tasks.registry import task_class

RULE = (
    "The run shown is the first solved run (in the table's order of evolvers, then by run "
    "index), else the run with the highest best fitness: on a maze, the one whose best "
    "network ended closest to the goal."
)


def representative(groups: Mapping[str, Sequence[RunRecord]]) -> tuple[str, RunRecord] | None:
    """(group label, record) of the run to show (see the module docstring); None when no
    run has a best network."""
    runs = [
        (label, r)
        for label, records in groups.items()
        for r in sorted(records, key=lambda r: r.run_index)
        if r.best_network
    ]
    for label, r in runs:
        if r.solved:
            return label, r
    if not runs:
        return None
    fitness = [r.best_fitness if r.best_fitness is not None else float("-inf") for _, r in runs]
    return runs[fitness.index(max(fitness))]  # the first of equals


def run_picture(groups: Mapping[str, Sequence[RunRecord]]) -> tuple[bytes, str] | None:
    """(PNG, caption) of the representative run of one task's ``groups``
    (``{series label: records}``); None when the task does not draw runs, is not
    installed, its recorded settings no longer fit it, or no run has a best network."""
    chosen = representative(groups)
    if chosen is None:
        return None
    label, record = chosen
    try:
        if not task_class(record.task).draws_runs():
            return None
        task = make(record.task, **record.task_settings)
    except TaskError:
        return None
    run = f"{label}, run {record.run_index} ({record.status})"
    out = io.BytesIO()
    summary = task.draw_run(from_dict(record.best_network), record.behaviours, out, run)
    caption = (
        f"{run}: {summary}. Dots: where the run's evaluations ended (at most "
        f"{BEHAVIOUR_SAMPLE} of them, evenly spread over the run), from early to late; "
        f"line: the episode of its best network. {RULE}"
    )
    return out.getvalue(), caption

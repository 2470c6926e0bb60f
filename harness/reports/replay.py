"""A stored run drawn again: its best network replayed on its task, under the settings
recorded with the run (``neuroyard replay --store``).

For a task that draws whole runs (:meth:`~neuroyard.tasks.base.Task.draw_run`, the mazes)
the picture also shows where the run's evaluations ended; any other task draws the best
network's episode (:meth:`~neuroyard.tasks.base.Task.replay`).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from neuroyard.core.errors import NeuroyardError
from neuroyard.core.network import from_dict
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore
from neuroyard.reports.compare import configurations, select
from neuroyard.reports.labels import task_labels
from neuroyard.tasks import make


def draw_stored_run(
    store_path: Path,
    task_id: str | None,
    form: dict[str, Any],
    run: int,
    steps: int,
    out: Path,
    evolver: str | None = None,
) -> str:
    """Draw run ``run`` of ``task_id`` (None: the store's one task, see
    :func:`record_from_store`; with the settings ``form`` gives, if any; of the
    configuration ``evolver`` names) into ``out``: the whole run (its final positions and
    best network) where the task draws runs (:meth:`~neuroyard.tasks.base.Task.draw_run`),
    else its best network's episode."""
    record = record_from_store(store_path, task_id, form, run, evolver)
    task = make(record.task, **record.task_settings)
    network = from_dict(record.best_network)
    if not task.draws_runs():
        return task.replay(network, steps, out)
    label = f"{record.evolver}, run {record.run_index} ({record.status})"
    return f"{out}: {task.draw_run(network, record.behaviours, out, label, steps)}"


def record_from_store(
    store_path: Path,
    task_id: str | None,
    form: dict[str, Any],
    run: int,
    evolver: str | None = None,
) -> RunRecord:
    """The record in a results store of run ``run`` on ``task_id`` with a best network whose
    task settings include ``form`` (``maze:PATH``: the file PATH), of the configuration
    ``evolver`` (``EVOLVER`` or ``EVOLVER@HASH``, as ``compare`` takes it).

    Without ``task_id`` the store must hold runs (with a best network) of one task under
    one set of settings, else a one-line error lists its tasks as reports name them
    (:mod:`.labels`). Without ``evolver`` the store must hold one configuration on the
    task, else a one-line error lists them."""
    with ResultStore(store_path, write=False) as store:
        records = [r for r in store.records(with_log=False) if r.best_network]
    if task_id is None:
        records = _the_one_task(store_path, records)
        task_id = records[0].task
    given = "".join(f" with {k} = {v}" for k, v in form.items())
    where = f"{store_path}, task {task_id}{given}"
    records = [
        r
        for r in records
        if r.task == task_id and all(r.task_settings.get(k) == v for k, v in form.items())
    ]
    if evolver is not None:
        records = select(records, evolver, where)[1]
    else:
        found = configurations(records)
        if len(found) > 1:
            raise NeuroyardError(
                f"{where}: runs of {len(found)} configurations ({', '.join(found)}): "
                "choose one with --evolver EVOLVER[@HASH]"
            )
    for record in records:
        if record.run_index == run:
            return record
    raise NeuroyardError(f"{store_path}: no run {run} of task {task_id}{given} with a best network")


def _the_one_task(store_path: Path, records: list[RunRecord]) -> list[RunRecord]:
    """``records`` when they are all of one task under one set of settings; else a
    :class:`NeuroyardError` naming the tasks to choose from with ``--task``."""
    if not records:
        raise NeuroyardError(f"{store_path}: no run with a best network to replay")
    keys = [(r.task, r.task_settings) for r in records]
    tasks = list(dict.fromkeys(task_labels(keys)))
    if len(tasks) > 1:
        raise NeuroyardError(
            f"{store_path} holds runs of {len(tasks)} tasks ({', '.join(tasks)}): "
            "choose one with --task TASK"
        )
    return records

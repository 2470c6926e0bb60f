"""``neuroyard replay``: run a stored or given network on its task and draw the episode.

The network is the best one of a run in a results store (replayed under the task settings
recorded with the run; where the store holds runs of several evolver configurations on the
task, ``--evolver EVOLVER[@HASH]`` says whose) or a network JSON file; the task draws the picture
(:meth:`~neuroyard.tasks.base.Task.replay`). For a stored run on a task that draws whole
runs (:meth:`~neuroyard.tasks.base.Task.draw_run`, the mazes) the picture also shows where
the run's evaluations ended.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from neuroyard.core.errors import NeuroyardError
from neuroyard.core.network import Network, from_dict, loads
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore
from neuroyard.reports.compare import configurations, select
from neuroyard.tasks import make
from neuroyard.tasks.registry import parse_task

DEFAULT_TASK = "pole2-markov-v1"


def add_parser(sub: Any, positive: Any) -> None:
    """Register the ``replay`` subcommand on the command line's subparsers."""
    p = sub.add_parser("replay", help="run a network on its task and draw the episode")
    source = p.add_mutually_exclusive_group(required=True)
    source.add_argument(
        "--store", type=Path, help="results store; replays the best network of --run"
    )
    source.add_argument("--network", type=Path, help="network JSON file")
    p.add_argument("--task", default=DEFAULT_TASK, help=f"task id (default {DEFAULT_TASK})")
    p.add_argument("--run", type=int, default=0, help="run index in the store (default 0)")
    p.add_argument(
        "--evolver",
        metavar="EVOLVER[@HASH]",
        help="whose run, where the store holds several evolver configurations on the task "
        "(HASH: the start of the configuration hash the report prints)",
    )
    p.add_argument(
        "--steps", type=positive, default=2000, help="most steps to replay (default 2000)"
    )
    p.add_argument("--out", type=Path, required=True, help="image file to write (PNG)")


def command(args: argparse.Namespace) -> None:
    """Replay and print the task's one-line summary."""
    task_id, form = parse_task(args.task)
    try:
        if args.store:
            summary = draw_stored_run(
                args.store, task_id, form, args.run, args.steps, args.out, args.evolver
            )
        else:
            task = make(task_id, **form)
            summary = task.replay(network_from_file(args.network), args.steps, args.out)
    except OSError as exc:
        raise NeuroyardError(f"image file {args.out}: cannot write it ({exc.strerror})") from None
    print(summary)


def draw_stored_run(
    store_path: Path,
    task_id: str,
    form: dict[str, Any],
    run: int,
    steps: int,
    out: Path,
    evolver: str | None = None,
) -> str:
    """Draw run ``run`` of ``task_id`` (with the settings ``form`` gives, if any; of the
    configuration ``evolver`` names, see :func:`record_from_store`) into ``out``: the whole
    run (its final positions and best network) where the task draws runs
    (:meth:`~neuroyard.tasks.base.Task.draw_run`), else its best network's episode."""
    record = record_from_store(store_path, task_id, form, run, evolver)
    task = make(task_id, **record.task_settings)
    network = from_dict(record.best_network)
    if not task.draws_runs():
        return task.replay(network, steps, out)
    label = f"{record.evolver}, run {record.run_index} ({record.status})"
    return f"{out}: {task.draw_run(network, record.behaviours, out, label, steps)}"


def network_from_file(path: Path) -> Network:
    """The network in the JSON file ``path``; a one-line error names the file."""
    try:
        text = path.read_text()
    except OSError as exc:
        raise NeuroyardError(f"network file {path}: cannot read it ({exc.strerror})") from None
    return loads(text, where=f"network file {path}")


def record_from_store(
    store_path: Path, task_id: str, form: dict[str, Any], run: int, evolver: str | None = None
) -> RunRecord:
    """The record in a results store of run ``run`` on ``task_id`` with a best network whose
    task settings include ``form`` (``maze:PATH``: the file PATH), of the configuration
    ``evolver`` (``EVOLVER`` or ``EVOLVER@HASH``, as ``compare`` takes it). Without
    ``evolver`` the store must hold one configuration on the task, else a one-line error
    lists them."""
    given = "".join(f" with {k} = {v}" for k, v in form.items())
    where = f"{store_path}, task {task_id}{given}"
    with ResultStore(store_path, write=False) as store:
        records = [
            r
            for r in store.records(with_log=False)
            if r.task == task_id
            and r.best_network
            and all(r.task_settings.get(k) == v for k, v in form.items())
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

"""``neuroyard replay``: run a stored or given network on its task and draw the episode.

The network is the best one of a run in a results store (replayed under the task settings
recorded with the run; where the store holds runs of several evolver configurations on the
task, ``--evolver EVOLVER[@HASH]`` says whose: :mod:`neuroyard.reports.replay`) or a
network JSON file; the task draws the picture.
"""

from __future__ import annotations

import argparse

from neuroyard.core.errors import NeuroyardError
from neuroyard.core.network import Network
from neuroyard.reports.replay import draw_stored_run
from neuroyard.tasks import make
from neuroyard.tasks.registry import parse_task


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
            summary = task.replay(Network.from_file(args.network), args.steps, args.out)
    except OSError as exc:
        raise NeuroyardError(f"image file {args.out}: cannot write it ({exc.strerror})") from None
    print(summary)

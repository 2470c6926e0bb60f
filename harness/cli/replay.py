"""``neuroyard replay``: run a stored or given network on its task and draw the episode.

The network is the best one of a run in a results store (replayed under the task settings
recorded with the run; without ``--task``, the store's one task, and a store of several
tasks is refused with a list of them; where the store holds runs of several evolver
configurations on the task, ``--evolver EVOLVER[@HASH]`` says whose:
:mod:`neuroyard.reports.replay`) or a network JSON file (on ``--task``, by default
:data:`~neuroyard.core.defaults.REPLAY_TASK`); the task draws the picture.
"""

from __future__ import annotations

import argparse

from neuroyard.core.defaults import REPLAY_TASK
from neuroyard.core.errors import NeuroyardError
from neuroyard.core.network import Network
from neuroyard.reports.replay import draw_stored_run
from neuroyard.tasks import make
from neuroyard.tasks.registry import parse_task


def command(args: argparse.Namespace) -> None:
    """Replay and print the task's one-line summary."""
    try:
        if args.store:
            task_id, form = parse_task(args.task) if args.task else (None, {})
            summary = draw_stored_run(
                args.store, task_id, form, args.run, args.steps, args.out, args.evolver
            )
        else:
            task_id, form = parse_task(args.task or REPLAY_TASK)
            task = make(task_id, **form)
            summary = task.replay(Network.from_file(args.network), args.steps, args.out)
    except OSError as exc:
        raise NeuroyardError(f"image file {args.out}: cannot write it ({exc.strerror})") from None
    print(summary)

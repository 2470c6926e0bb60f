"""Replay a network on a pole task and plot cart position and pole angles over time.

Command line (the network comes from a run in a results store, or from a JSON file)::

    python -m neuroyard.tasks.pole.demo --store results/pole/dpv.sqlite --run 0 \\
        --steps 2000 --out results/pole/dpv_replay.png
    python -m neuroyard.tasks.pole.demo --network net.json --task pole2-markov-v1 --out plot.png

A run from a store is replayed under the task settings recorded with it. Needs
matplotlib (the ``pole`` extra).
"""

from __future__ import annotations

import argparse
import json
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from neuroyard.harness.compiled import compile_network
from neuroyard.harness.errors import NeuroyardError, TaskError
from neuroyard.harness.network import Network, from_dict, validate
from neuroyard.harness.store import ResultStore

from ..registry import make
from .tasks import PoleBalancing


def trace(task: PoleBalancing, network: Network, steps: int) -> np.ndarray:
    """States from the standard start while ``network`` balances, at most ``steps`` steps.

    Row 0 is the start; row k the state after control step k (one row per balanced step).
    """
    validate(network, task.spec.inputs, task.spec.outputs)
    record = np.zeros((steps + 1, task.start.shape[0]), dtype=np.float64)
    balanced = task.run(compile_network(network), steps, record)
    return record[: balanced + 1]


def plot_trace(states: np.ndarray, step_seconds: float, path: str | Path, title: str) -> Path:
    """Write a PNG: cart position (m) and every pole angle (degrees) against time (s)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    n_poles = (states.shape[1] - 2) // 2
    time = np.arange(states.shape[0]) * step_seconds
    fig, axes = plt.subplots(1 + n_poles, 1, sharex=True, figsize=(8, 2.2 * (1 + n_poles)))
    axes[0].plot(time, states[:, 0])
    axes[0].set_ylabel("cart x (m)")
    axes[0].set_title(title)
    for i in range(n_poles):
        axes[1 + i].plot(time, np.degrees(states[:, 2 + 2 * i]))
        axes[1 + i].set_ylabel(f"pole {i + 1} angle (deg)")
    axes[-1].set_xlabel("time (s)")
    for ax in axes:
        ax.grid(True, alpha=0.3)
    fig.tight_layout()
    out = Path(path)
    fig.savefig(out, dpi=100)
    plt.close(fig)
    return out


def replay(
    network: Network, task_id: str, settings: Mapping[str, Any], steps: int, out: str | Path
) -> tuple[int, Path]:
    """Replay ``network`` on ``task_id`` under ``settings``; return (steps balanced, PNG path)."""
    task = make(task_id, **settings)
    if not isinstance(task, PoleBalancing):
        raise TaskError(f"task {task_id} is not a pole balancing task")
    states = trace(task, network, steps)
    step_seconds = task.settings["tau"] * task.settings["substeps"]
    balanced = states.shape[0] - 1
    title = f"{task_id}: {balanced} of {steps} steps balanced ({balanced * step_seconds:.1f} s)"
    return balanced, plot_trace(states, step_seconds, out, title)


def network_from_store(store_path: str | Path, task_id: str, run: int) -> tuple[Network, dict]:
    """Best network and task settings of run ``run`` on ``task_id`` in a results store."""
    with ResultStore(store_path, write=False) as store:
        for record in store.records(with_log=False):
            if record.task == task_id and record.run_index == run and record.best_network:
                return from_dict(record.best_network), dict(record.task_settings)
    raise NeuroyardError(f"{store_path}: no run {run} of task {task_id} with a best network")


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    source = parser.add_mutually_exclusive_group(required=True)
    source.add_argument("--store", help="results store; replays the best network of --run")
    source.add_argument("--network", help="network JSON file")
    parser.add_argument("--task", default="pole2-markov-v1", help="task id")
    parser.add_argument("--run", type=int, default=0, help="run index in the store")
    parser.add_argument("--steps", type=int, default=2000, help="control steps to replay")
    parser.add_argument("--out", required=True, help="PNG file to write")
    args = parser.parse_args(argv)
    try:
        if args.store:
            network, settings = network_from_store(args.store, args.task, args.run)
        else:
            network, settings = from_dict(json.loads(Path(args.network).read_text())), {}
        balanced, path = replay(network, args.task, settings, args.steps, args.out)
    except (NeuroyardError, OSError, json.JSONDecodeError) as exc:
        print(f"error: {exc}")
        return 2
    print(f"{path}: balanced {balanced} of {args.steps} steps")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

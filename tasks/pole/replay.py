"""Replay a network on a pole task and plot cart position and pole angles over time.

The command line reaches this through ``neuroyard replay`` (:meth:`PoleBalancing.replay`).
The plot uses matplotlib, a dependency of the package.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from neuroyard.core.batch import compile_network
from neuroyard.core.network import Network, validate


def trace(task: Any, network: Network, steps: int) -> np.ndarray:
    """States from the standard start while ``network`` balances, at most ``steps`` steps.

    Row 0 is the start; row k the state after control step k (one row per balanced step).
    """
    validate(network, task.spec.inputs, task.spec.outputs)
    record = np.zeros((steps + 1, task.start.shape[0]), dtype=np.float64)
    balanced = task.run(compile_network(network), steps, record)
    return record[: balanced + 1]


def plot_trace(states: np.ndarray, step_seconds: float, path: str | Path, title: str) -> Path:
    """Write a PNG: cart position (m) and every pole angle (degrees) against time (s)."""
    import matplotlib  # imported on use: it would add a second to every command's start-up

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


def replay(task: Any, network: Network, steps: int, out: str | Path) -> str:
    """Replay ``network`` on pole ``task`` for at most ``steps`` control steps, write the
    plot to ``out`` (PNG) and return a one-line summary."""
    states = trace(task, network, steps)
    step_seconds = task.settings["tau"] * task.settings["substeps"]
    balanced = states.shape[0] - 1
    title = f"{task.id}: {balanced} of {steps} steps balanced ({balanced * step_seconds:.1f} s)"
    path = plot_trace(states, step_seconds, out, title)
    return f"{path}: balanced {balanced} of {steps} steps"

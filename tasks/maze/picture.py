"""Pictures of a maze: its walls, start and goal, where a run's evaluations ended and the
path of one network, so that a trap (a crowd of final positions short of the goal) shows.

A :class:`Scene` holds what is drawn, in the maze's units of length; :func:`figure` draws
it with matplotlib's Agg canvas (loaded on first use), :func:`png` returns the PNG bytes
and :func:`write` writes them. The picture is :data:`WIDTH_INCHES` wide at :data:`DPI` (the
report's plots have the same width) and the same scene always gives the same bytes.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, BinaryIO

import numpy as np

from .deception import Deception
from .mazefile import Maze

DPI = 100
WIDTH_INCHES = 6.4
HEIGHT_INCHES = 6.4
ARROW_SHARE = 0.08  # length of the start's heading arrow, as a share of the shorter side
# PNG metadata that would change with the matplotlib version is left out
_METADATA = {"Software": None}


@dataclass(frozen=True)
class Scene:
    """What a maze picture shows. ``positions``: (k, 2) final positions of evaluated
    individuals in evaluation order (k may be 0), coloured from early to late;
    ``trajectory``: (m, 2) positions of one episode from the start, or None;
    ``goal_radius``: the radius of the circle around the goal (ending inside it solves);
    ``title``: the picture's title (lines separated by newlines); ``path_name``: what the
    trajectory is, in the legend."""

    maze: Maze
    goal_radius: float
    positions: np.ndarray
    trajectory: np.ndarray | None
    title: str
    path_name: str = "the best network's trajectory"


def title(task_id: str, deception: Deception, label: str = "") -> str:
    """The title of a picture of ``task_id``: its deception figures, then ``label``."""
    head = (
        f"{task_id}: deception {deception.deception:.3f}, trap share "
        f"{deception.trap_share:.2f}, detour {deception.detour:.2f}"
    )
    return f"{head}\n{label}" if label else head


def figure(scene: Scene) -> Any:
    """The matplotlib figure of ``scene`` (on an Agg canvas, not shown anywhere). Its
    artists carry gids: ``walls``, ``start``, ``heading``, ``goal``, ``goal-radius``,
    ``positions`` and ``trajectory``."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.collections import LineCollection
    from matplotlib.figure import Figure
    from matplotlib.patches import Circle

    maze = scene.maze
    fig = Figure(figsize=(WIDTH_INCHES, HEIGHT_INCHES), dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.subplots()
    walls = maze.walls.reshape(-1, 2, 2)
    ax.add_collection(LineCollection(walls, colors="black", linewidths=2.0, gid="walls",
                                     label="walls"))  # fmt: skip
    if len(scene.positions):
        order = np.linspace(0.0, 1.0, len(scene.positions))
        dots = ax.scatter(
            scene.positions[:, 0], scene.positions[:, 1], c=order, cmap="viridis", vmin=0.0,
            vmax=1.0, s=9, alpha=0.8, linewidths=0, gid="positions",
            label=f"final positions ({len(scene.positions):,} evaluations)",
        )  # fmt: skip
        bar = fig.colorbar(dots, ax=ax, shrink=0.6, ticks=[0.0, 1.0])
        bar.ax.set_yticklabels(["early", "late"])
        bar.set_label("when in the run")
    if scene.trajectory is not None:
        ax.plot(scene.trajectory[:, 0], scene.trajectory[:, 1], color="tab:red", linewidth=1.5,
                gid="trajectory", label=scene.path_name)  # fmt: skip
        ax.plot(*scene.trajectory[-1], "o", color="tab:red", markersize=5)
    x, y, heading = maze.start
    length = ARROW_SHARE * min(maze.width, maze.height)
    angle = math.radians(heading)
    ax.annotate("", xy=(x + length * math.cos(angle), y + length * math.sin(angle)), xytext=(x, y),
                arrowprops={"arrowstyle": "->", "color": "tab:green", "linewidth": 1.5},
                gid="heading")  # fmt: skip
    ax.plot(x, y, "s", color="tab:green", markersize=7, gid="start", label="start (arrow: heading)")
    ax.add_patch(Circle(maze.goal, scene.goal_radius, fill=False, edgecolor="tab:orange",
                        linewidth=1.5, gid="goal-radius"))  # fmt: skip
    ax.plot(*maze.goal, "*", color="tab:orange", markersize=11, gid="goal",
            label=f"goal (circle: within {scene.goal_radius:g} solves)")  # fmt: skip
    margin = 0.02 * max(maze.width, maze.height)
    ax.set_xlim(-margin, maze.width + margin)
    ax.set_ylim(-margin, maze.height + margin)
    ax.set_aspect("equal")
    ax.set_xlabel("x")
    ax.set_ylabel("y")
    ax.set_title(scene.title.replace("$", r"\$"), fontsize="medium")
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.1), ncol=2, fontsize="small",
              frameon=False)  # fmt: skip
    return fig


def png(scene: Scene) -> bytes:
    """The PNG image of ``scene``."""
    out = io.BytesIO()
    write(scene, out)
    return out.getvalue()


def write(scene: Scene, out: str | Path | BinaryIO) -> None:
    """Write the PNG image of ``scene`` to the file ``out`` (a path or a binary file)."""
    figure(scene).savefig(out, format="png", dpi=DPI, metadata=_METADATA)

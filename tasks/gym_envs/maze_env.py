"""The maze navigation tasks as Gymnasium environments (:class:`MazeEnv`).

One step is one time step of the harness's episode (:func:`~..maze.robot.run_episode`)
made by the same numba functions: :func:`~..maze.robot.sense` gives the observation,
:func:`~..maze.robot.move` turns and moves the robot.

* observation: the network's ten inputs (``TaskSpec.observations``): six rangefinders
  (0 .. 1) and four radar slices (0 or 1), float64, a Box [0, 1];
* action: the network's two outputs (turn, speed), a Box [0, 1] each (the task clips an
  output to [0, 1] and counts NaN as 0.5: ``TaskSpec.output_rule``);
* reward: the change of the fitness, the arena's diagonal minus the distance to the goal
  (:mod:`.base`): the first step's reward is the diagonal minus the distance after it,
  every later one the step's approach to the goal, so the return is the fitness of the
  position where the episode ends;
* terminated: never (the task has no failure; reaching the goal does not end an
  episode, the success test looks at the final position); truncated: after the maze's
  ``steps`` time steps;
* start: the maze's start pose, fixed;
* info: ``goal_distance``, ``fitness`` (of the episode so far) and ``pose`` (x, y,
  heading in radians counter-clockwise from +x).
"""

from __future__ import annotations

import math
from typing import Any, ClassVar

import gymnasium
import numpy as np

from ..maze.mazefile import load_maze
from ..maze.robot import N_INPUTS, RADIUS, move, sense
from ..maze.tasks import GOAL_RADIUS, MazeTask, ShippedMaze, shipped_maze
from . import frames
from .base import TaskEnv

LONGER_SIDE = 400  # pixels of the longer side of a frame
BORDER = 10  # pixels of free space round the arena


class MazeEnv(TaskEnv):
    """A maze task (:class:`~..maze.tasks.MazeTask`) one time step at a time."""

    family: ClassVar[type] = MazeTask
    metadata: ClassVar[dict[str, Any]] = {**TaskEnv.metadata, "render_fps": 40}  # ours

    def __init__(self, task_id: str, render_mode: str | None = None, **settings: Any) -> None:
        super().__init__(task_id, render_mode, **settings)
        self.pose = tuple(float(v) for v in self.task.start)
        self.path: list[tuple[float, float]] = []
        self.observation_space = gymnasium.spaces.Box(0.0, 1.0, shape=(N_INPUTS,), dtype=np.float64)
        self.action_space = gymnasium.spaces.Box(0.0, 1.0, shape=(2,), dtype=np.float64)

    @classmethod
    def reward_threshold(cls, task_class: type[MazeTask]) -> float | None:
        """The return at and above which the task counts as solved, for a maze shipped
        with neuroyard: the diagonal minus the goal radius (ending within it solves).
        None for a maze that the settings choose (a generated maze, a user's file)."""
        if not issubclass(task_class, ShippedMaze):
            return None
        maze = load_maze(shipped_maze(task_class.maze_file), clearance=RADIUS)
        return maze.diagonal - GOAL_RADIUS

    def _horizon(self) -> int:
        return int(self.task.maze.steps)

    def _start(self) -> None:
        self.pose = tuple(float(v) for v in self.task.start)
        self.path = [self.pose[:2]]

    def _advance(self, action: np.ndarray) -> bool:
        x, y, heading = self.pose
        self.pose = move(self.task.maze.walls, x, y, heading, action[0], action[1])
        self.path.append(self.pose[:2])
        return False

    def _observe(self) -> np.ndarray:
        inputs = np.empty(N_INPUTS, dtype=np.float64)
        sense(self.task.maze.walls, self.task.goal, *self.pose, inputs)
        return inputs

    def _fitness(self) -> float:
        return self.task.fitness_at(*self.pose[:2])

    def _info(self) -> dict[str, Any]:
        x, y, heading = self.pose
        return {
            "goal_distance": self.task.goal_distance(x, y),
            "fitness": self.fitness,
            "pose": (x, y, heading),
        }

    def _frame(self) -> np.ndarray:
        """The walls, the goal with its radius, the path so far and the robot."""
        maze = self.task.maze
        scale = (LONGER_SIDE - 2 * BORDER) / max(maze.width, maze.height)
        height = round(maze.height * scale) + 2 * BORDER
        width = round(maze.width * scale) + 2 * BORDER

        def pixel(x: float, y: float) -> tuple[float, float]:  # y points up in the maze
            return BORDER + x * scale, height - BORDER - y * scale

        frame = frames.blank(height, width)
        frames.disc(frame, pixel(*self.task.goal), GOAL_RADIUS * scale, frames.ORANGE)
        for x0, y0, x1, y1 in maze.walls:
            frames.segment(frame, pixel(x0, y0), pixel(x1, y1), 2.0, frames.BLACK)
        for point in self.path:
            frames.disc(frame, pixel(*point), 1.0, frames.GREY)
        x, y, heading = self.pose
        frames.disc(frame, pixel(x, y), RADIUS * scale, frames.BLUE)
        ahead = (x + RADIUS * math.cos(heading), y + RADIUS * math.sin(heading))
        frames.segment(frame, pixel(x, y), pixel(*ahead), 2.0, frames.RED)
        return frame

"""The maze navigation tasks: a robot must reach a goal in a maze within a fixed time.

| id              | maze file            | what it is                                            |
|-----------------|----------------------|-------------------------------------------------------|
| maze-open-v1    | mazes/open.toml      | an arena without inner walls (sanity)                 |
| maze-medium-v1  | mazes/medium.toml    | two staggered walls: an S-shaped route                |
| maze-hard-v1    | mazes/hard.toml      | the straight route to the goal ends at a long wall    |

The mazes are ours (the published maps exist only as figures); the robot and the protocol
follow (reference/SOURCES.md: lehman2011; maze robot; maze protocol). Fitness =
``diagonal - d`` with d the robot's final distance to the goal and ``diagonal`` the arena's
diagonal (the publication's constant b_f has no stated value; ours), so fitness lies in
[0, diagonal]. Solved: the robot ends within ``GOAL_RADIUS`` units of the goal. The
behaviour descriptor of an evaluation is the final position (x, y).
"""

from __future__ import annotations

import math
from importlib.resources import files
from pathlib import Path
from typing import ClassVar

import numpy as np

from neuroyard.harness.core.batch import CompiledBatch
from neuroyard.harness.core.compiled import CompiledNetwork
from neuroyard.harness.core.evolver import Evaluation

from ..base import Metric, SuccessCheck, Task, TaskSpec
from ..registry import register
from .mazefile import Maze, load_maze
from .robot import MAX_SPEED, MAX_TURN, N_INPUTS, RADIUS, RANGE, run_batch, run_episode

LEHMAN_2011 = (
    "Lehman, J. & Stanley, K. O. (2011). Abandoning objectives: evolution through the "
    "search for novelty alone. Evolutionary Computation 19(2):189-223, sec. 5-6 "
    "(reference/SOURCES.md: lehman2011; maze robot; maze protocol)"
)
GOAL_RADIUS = 5.0  # lehman2011, sec. 6: solved within 5 units of the goal (VERIFIED)
FINAL_DISTANCE = Metric(
    "final_distance",
    "distance from the robot's final position to the goal",
    unit="units of length",
    better="lower",
)


def shipped_maze(name: str) -> Path:
    """Path of a maze file shipped with neuroyard (``tasks/maze/mazes/NAME.toml``)."""
    return Path(str(files("neuroyard.tasks.maze") / "mazes" / f"{name}.toml"))


class MazeTask(Task):
    """Navigation in one maze file; subclasses name the file."""

    maze_file: ClassVar[str]
    description: ClassVar[str]

    def __init__(self, seed: int = 0, **settings) -> None:
        super().__init__(seed, **settings)
        self.maze: Maze = load_maze(shipped_maze(self.maze_file), clearance=RADIUS)
        x, y, heading = self.maze.start
        self.start = np.array([x, y, math.radians(heading)], dtype=np.float64)
        self.goal = np.array(self.maze.goal, dtype=np.float64)

    def _evaluation(self, x: float, y: float) -> Evaluation:
        distance = math.hypot(x - self.goal[0], y - self.goal[1])
        fitness = max(0.0, self.maze.diagonal - distance)
        return Evaluation(fitness, behaviour=(x, y))

    def trajectory(self, net: CompiledNetwork) -> np.ndarray:
        """Positions (steps + 1, 2) of one episode: the start, then after each step."""
        record = np.zeros((self.maze.steps + 1, 2), dtype=np.float64)
        run_episode(net, self.maze.walls, self.start, self.goal, self.maze.steps, record)
        return record

    def evaluate(self, net: CompiledNetwork) -> Evaluation:
        no_record = np.empty((0, 2), dtype=np.float64)
        x, y = run_episode(net, self.maze.walls, self.start, self.goal, self.maze.steps, no_record)
        return self._evaluation(x, y)

    def evaluate_batch(self, batch: CompiledBatch) -> list[Evaluation]:
        final = run_batch(batch, self.maze.walls, self.start, self.goal, self.maze.steps)
        return [self._evaluation(x, y) for x, y in final.tolist()]

    def success_test(self, net: CompiledNetwork, evaluation: Evaluation) -> SuccessCheck:
        x, y = self.evaluate(net).behaviour
        distance = math.hypot(x - self.goal[0], y - self.goal[1])
        return SuccessCheck(
            solved=distance <= GOAL_RADIUS, evaluations=1, details={"final_distance": distance}
        )

    @property
    def spec(self) -> TaskSpec:
        maze = self.maze
        ranges = (
            f"rangefinder at {angle} degrees from the heading ({side}): distance to the nearest "
            f"wall along the ray / {RANGE:g} (0 .. 1; 1 = no wall within {RANGE:g} units)"
            for angle, side in (
                (-90, "right"), (-45, "front right"), (0, "ahead"),
                (45, "front left"), (90, "left"), (180, "behind"),
            )
        )  # fmt: skip
        radar = (
            f"radar slice {name}: 1 when the goal's direction lies within 45 degrees of "
            f"{where}, else 0 (exactly one slice reads 1; a direction on a border belongs "
            "to the slice counter-clockwise of it)"
            for name, where in (
                ("front", "the heading"), ("right", "heading - 90"),
                ("back", "heading + 180"), ("left", "heading + 90"),
            )
        )  # fmt: skip
        return TaskSpec(
            id=self.id,
            inputs=N_INPUTS,
            outputs=2,
            fitness=f"{maze.diagonal:g} (the arena's diagonal) - distance to the goal after "
            f"{maze.steps} steps (400 steps: from memory), at least 0",
            success=f"the robot ends within {GOAL_RADIUS:g} units of the goal "
            "(reference/SOURCES.md: lehman2011; maze protocol)",
            default_budget=250_000,
            sources=(
                LEHMAN_2011,
                "the published robot's bias input is the network's bias node here",
                f"{self.description} (maze of ours, {self.maze_file}.toml)",
            ),
            max_fitness=maze.diagonal,
            min_fitness=0.0,
            behaviour_size=2,
            settings=dict(self.settings),
            observations=(*ranges, *radar),
            actions=(
                f"turn: (clip(out, 0, 1) - 0.5) * 2 * {math.degrees(MAX_TURN):g} degrees per "
                "step, above 0.5 to the left (counter-clockwise)",
                f"speed: (clip(out, 0, 1) - 0.5) * 2 * {MAX_SPEED:g} units per step along the "
                "new heading, below 0.5 backwards; a move that would bring the robot "
                f"(radius {RADIUS:g}) closer than its radius to a wall is not made",
            ),
            output_rule="each output is clipped to [0, 1] (so +-inf saturate); a NaN output "
            "counts as 0.5 (no turn, no move), so every network gets a finite fitness",
            metrics=(FINAL_DISTANCE,),
        )


@register
class OpenMaze(MazeTask):
    id = "maze-open-v1"
    maze_file = "open"
    description = "an open arena without inner walls, a sanity check"


@register
class MediumMaze(MazeTask):
    id = "maze-medium-v1"
    maze_file = "medium"
    description = "two staggered walls make an S-shaped route to the goal"


@register
class HardMaze(MazeTask):
    id = "maze-hard-v1"
    maze_file = "hard"
    description = (
        "deceptive: the straight route to the goal ends at a long wall; the way round "
        "leads away from the goal until its last stretch"
    )

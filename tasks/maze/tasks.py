"""The maze navigation tasks: a robot must reach a goal in a maze within a fixed time.

| id              | maze file            | what it is                                            |
|-----------------|----------------------|-------------------------------------------------------|
| maze-open-v1    | mazes/open.toml      | an arena without inner walls (sanity)                 |
| maze-medium-v1  | mazes/medium.toml    | two staggered walls: an S-shaped route                |
| maze-hard-v3    | mazes/hard.toml      | the straight route ends in a closed pocket            |
| maze-file-v1    | setting ``file``     | a maze file of the user's (``--task maze:PATH``)      |
| maze-gen-v3     | generated            | a maze from ``size``, ``seed`` and ``deception``      |

The mazes are ours (the published maps exist only as figures); the robot and the protocol
follow (reference/SOURCES.md: lehman2011; maze robot; maze protocol). Fitness =
``diagonal - d`` with d the robot's final distance to the goal and ``diagonal`` the arena's
diagonal (the publication's constant b_f has no stated value; ours), so fitness lies in
[0, diagonal]. Solved: the robot ends within ``GOAL_RADIUS`` units of the goal. The
behaviour descriptor of an evaluation is the final position (x, y). Every maze task's spec
carries the maze's deception figures (:mod:`.deception`) as facts, kept in every run record;
they are measured once and then read from a memo on disk (:mod:`.memo`).
:meth:`MazeTask.replay` and :meth:`MazeTask.draw_run` draw the maze with a network's path
and a run's final positions (:mod:`.picture`).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import replace
from importlib.resources import files
from pathlib import Path
from typing import BinaryIO, ClassVar

import numpy as np

from neuroyard.core.batch import CompiledBatch, compile_network
from neuroyard.core.compiled import CompiledNetwork
from neuroyard.core.errors import TaskError
from neuroyard.core.evolver import Evaluation
from neuroyard.core.network import Network
from neuroyard.core.options import Option

from ..base import Metric, SuccessCheck, Task, TaskSpec
from ..registry import register, register_form, retire
from . import memo, picture
from .deception import Deception
from .generate import CANDIDATES, generated_maze
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
    """Navigation in one maze; subclasses say where the maze comes from (:meth:`load`)."""

    description: ClassVar[str]

    def __init__(self, seed: int = 0, /, **settings) -> None:
        super().__init__(seed, **settings)
        self.maze, self.deception = self.load()
        x, y, heading = self.maze.start
        self.start = np.array([x, y, math.radians(heading)], dtype=np.float64)
        self.goal = np.array(self.maze.goal, dtype=np.float64)

    def load(self) -> tuple[Maze, Deception]:
        """The task's maze (validated) and its deception figures."""
        raise NotImplementedError

    @property
    def origin(self) -> str:
        """Where the maze comes from, in words (for the spec's sources)."""
        raise NotImplementedError

    def goal_distance(self, x: float, y: float) -> float:
        """Straight-line distance from (x, y) to the goal, in units of length."""
        return math.hypot(x - self.goal[0], y - self.goal[1])

    def fitness_at(self, x: float, y: float) -> float:
        """The fitness of an episode that ends at (x, y): the arena's diagonal minus the
        distance to the goal, at least 0."""
        return max(0.0, self.maze.diagonal - self.goal_distance(x, y))

    def _evaluation(self, x: float, y: float) -> Evaluation:
        return Evaluation(self.fitness_at(x, y), behaviour=(x, y))

    def trajectory(self, net: CompiledNetwork) -> np.ndarray:
        """Positions (steps + 1, 2) of one episode: the start, then after each step."""
        record = np.zeros((self.maze.steps + 1, 2), dtype=np.float64)
        run_episode(net, self.maze.walls, self.start, self.goal, self.maze.steps, record)
        return record

    def scene(
        self,
        network: Network | None,
        positions: Sequence[Sequence[float]],
        label: str = "",
        steps: int | None = None,
    ) -> picture.Scene:
        """What a picture of this maze shows: the final ``positions`` (x, y) in evaluation
        order, and the first ``steps`` steps (None: all) of ``network``'s episode
        (:meth:`trajectory`) when a network is given; ``label`` ends the title."""
        trajectory = None
        if network is not None:
            shown = self.maze.steps if steps is None else min(steps, self.maze.steps)
            net = compile_network(network, N_INPUTS, 2)
            trajectory = self.trajectory(net)[: shown + 1]
        points = np.array(positions, dtype=np.float64).reshape(-1, 2)
        title = picture.title(self.id, self.deception, label)
        return picture.Scene(self.maze, GOAL_RADIUS, points, trajectory, title)

    def _ending(self, trajectory: np.ndarray) -> str:
        distance = self.goal_distance(*trajectory[-1])
        steps = len(trajectory) - 1
        return f"ends {distance:.1f} units from the goal after {steps} of {self.maze.steps} steps"

    def replay(self, network: Network, steps: int, out: Path) -> str:
        """Draw the maze and ``network``'s path over at most ``steps`` steps into ``out``."""
        scene = self.scene(network, (), steps=steps)
        summary = f"the network {self._ending(scene.trajectory)}"
        title = picture.title(self.id, self.deception, summary)
        picture.write(replace(scene, title=title, path_name="the network's trajectory"), out)
        return f"{out}: {summary}"

    def draw_run(
        self,
        network: Network | None,
        behaviours: Sequence[Sequence[float]],
        out: str | Path | BinaryIO,
        label: str = "",
        steps: int | None = None,
    ) -> str:
        """Draw the maze, the run's final positions (``behaviours``: (x, y) in evaluation
        order) and its best network's path into ``out``."""
        scene = self.scene(network, behaviours, label, steps)
        picture.write(scene, out)
        drawn = f"{len(scene.positions):,} final positions of evaluations"
        if scene.trajectory is None:
            return f"{drawn}; no best network"
        return f"{drawn}; the best network {self._ending(scene.trajectory)}"

    def evaluate(self, net: CompiledNetwork) -> Evaluation:
        no_record = np.empty((0, 2), dtype=np.float64)
        x, y = run_episode(net, self.maze.walls, self.start, self.goal, self.maze.steps, no_record)
        return self._evaluation(x, y)

    def evaluate_batch(self, batch: CompiledBatch) -> list[Evaluation]:
        final = run_batch(batch, self.maze.walls, self.start, self.goal, self.maze.steps)
        return [self._evaluation(x, y) for x, y in final.tolist()]

    def success_test(self, net: CompiledNetwork, evaluation: Evaluation) -> SuccessCheck:
        distance = self.goal_distance(*self.evaluate(net).behaviour)
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
                f"{self.description} ({self.origin})",
                "facts: the maze's deception figures (ours; neuroyard.tasks.maze.deception "
                "says how they are measured)",
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
            facts=self.deception.facts(),
        )


def _measured(maze: Maze) -> tuple[Maze, Deception]:
    return maze, memo.measured(maze, RADIUS, GOAL_RADIUS)


class ShippedMaze(MazeTask):
    """A maze file shipped with neuroyard; subclasses name it."""

    maze_file: ClassVar[str]

    def load(self) -> tuple[Maze, Deception]:
        return _measured(load_maze(shipped_maze(self.maze_file), clearance=RADIUS))

    @property
    def origin(self) -> str:
        return f"maze of ours, {self.maze_file}.toml"


@register
class OpenMaze(ShippedMaze):
    id = "maze-open-v1"
    maze_file = "open"
    description = "an open arena without inner walls, a sanity check"


@register
class MediumMaze(ShippedMaze):
    id = "maze-medium-v1"
    maze_file = "medium"
    description = "two staggered walls make an S-shaped route to the goal"


@register
class HardMaze(ShippedMaze):
    id = "maze-hard-v3"
    maze_file = "hard"
    description = (
        "deceptive: the straight route to the goal ends under a long wall in the start's "
        "pocket, 18 units from the goal through the wall; the way round leaves the pocket "
        "at its bottom and runs round a ring of corridors, past a dead-end room, away from "
        "the goal until its last stretch"
    )


retire(
    "maze-hard-v1",
    HardMaze.id,
    "version 1 was not deceptive enough: its pocket opened at the top, and objective NEAT "
    "solved 8 of the 8 study runs it made (results/maze/README.md); version 3 closes the "
    "pocket at the top and puts the goal right over it",
)
retire(
    "maze-hard-v2",
    HardMaze.id,
    "version 2 was not deceptive enough: objective NEAT solved 18 of its 20 study runs, "
    "escaping by one steady loop through the open room (results/maze/README.md); version 3 "
    "puts the goal 18 units from the trap and the way round in a ring of corridors",
)


@register
class MazeFile(MazeTask):
    """A maze file of the user's: ``--task maze:PATH`` is this task with ``file = PATH``.

    The run's identity covers the file's content: resolving the settings fills ``sha256`` in
    with the file's hash, and a task built with a ``sha256`` (a stored run, a resumed
    campaign) refuses a file whose content no longer has it (``Option.digest_of``)."""

    id = "maze-file-v1"
    description = "a maze of the user's"
    needs = ("file",)
    options = (
        Option("file", None, "path of the maze file (neuroyard.tasks.maze.mazefile has "
               "the format)", kind=str, source="ours"),
        Option("sha256", None, "SHA-256 of the file's content, filled in when the task "
               "is built; a file with other content is refused", kind=str, source="ours",
               digest_of="file"),
    )  # fmt: skip

    def check_settings(self) -> None:
        path = self.settings["file"]
        if path is None:
            raise TaskError(f"task {self.id}: the setting 'file' is required (--task maze:PATH)")

    def load(self) -> tuple[Maze, Deception]:
        path = self.settings["file"]
        return _measured(load_maze(path, RADIUS))

    @property
    def origin(self) -> str:
        return f"maze file {self.settings['file']}"


register_form("maze", MazeFile.id, "file")


@register
class GeneratedMaze(MazeTask):
    """A generated maze (:mod:`.generate`): a pocket under a long wall in an arena ``size``
    units wide; ``seed`` draws the candidates; ``deception`` asks for a deception score."""

    id = "maze-gen-v3"
    description = "a generated maze"
    options = (
        Option("size", 200.0, "side of the square arena; every wall, the start and the "
               "goal scale with it, the robot and its 400 steps do not", unit="units of length",
               low=160.0, high=300.0, source="ours"),
        Option("seed", 0, "seed of the maze's candidates (not the run's seed)", low=0,
               source="ours"),
        Option("deception", 0.15, f"deception score asked for: of {CANDIDATES} candidates, "
               "from a wall over the start to a deep pocket, the maze is the one whose score "
               "lies nearest", low=0.0, high=1.0, source="ours"),
    )  # fmt: skip

    def load(self) -> tuple[Maze, Deception]:
        s = self.settings
        return generated_maze(s["size"], s["seed"], s["deception"], RADIUS, GOAL_RADIUS)

    @property
    def origin(self) -> str:
        s = self.settings
        return f"size {s['size']:g}, seed {s['seed']}, deception asked {s['deception']}"


retire(
    "maze-gen-v1",
    GeneratedMaze.id,
    "version 1 (walls across the arena, each with a gap) did not make objective NEAT's "
    "success follow its deception score (results/maze/README.md); version 3 puts the start "
    "in a pocket whose depth the deception score sets",
)
retire(
    "maze-gen-v2",
    GeneratedMaze.id,
    "version 2 (nested square pockets with 30-unit mouths) did not make objective NEAT's "
    "success follow its deception score significantly (results/maze/README.md); version 3 "
    "puts the start in a pocket whose depth the deception score sets",
)

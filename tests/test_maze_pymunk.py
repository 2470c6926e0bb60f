"""The maze robot's geometry against pymunk (an independent 2-D physics library).

pymunk's segment queries (the first shape hit along a segment) are the reference for the
rangefinders, and its point queries (shapes within a distance of a point) the reference
for the collision rule: a move is not made when the robot's disc would come closer than
its radius to a wall (tasks/maze/robot.py). The pymunk side is the one of the speed
benchmark (tests/bench/maze_pymunk_robot.py). Mazes: every shipped one and generated ones
of each size.
"""

from __future__ import annotations

import math

import numpy as np
import pymunk
import pytest
from maze_pymunk_robot import radar, rangefinders, wall_space

from neuroyard import tasks
from neuroyard.core.batch import compile_network
from neuroyard.core.network import Connection, Network, Node
from neuroyard.tasks.maze import load_maze, sense, shipped_maze
from neuroyard.tasks.maze.robot import MAX_SPEED, RADIUS, RANGE, blocked

POSES = 300
GENERATED = {
    f"gen size {size:g}": {"size": size, "seed": 4, "deception": 1.0} for size in (160.0, 300.0)
}
MAZES = ["open", "medium", "hard", *GENERATED]


def maze_named(name: str):
    """A shipped maze, or a generated one (the most deceptive the seed gives)."""
    if name in GENERATED:
        return tasks.make("maze-gen-v3", **GENERATED[name]).maze
    return load_maze(shipped_maze(name), RADIUS)


def random_poses(maze, rng: np.random.Generator, n: int) -> np.ndarray:
    """n poses (x, y, heading in rad) uniform over the arena, inside its sides."""
    x = rng.uniform(0.5, maze.width - 0.5, n)
    y = rng.uniform(0.5, maze.height - 0.5, n)
    return np.column_stack([x, y, rng.uniform(-math.pi, math.pi, n)])


@pytest.mark.parametrize("name", MAZES)
def test_rangefinders_equal_pymunk_segment_queries(name):
    maze = maze_named(name)
    space = wall_space(maze.walls)
    goal = np.array(maze.goal)
    readings = np.zeros(10)
    rng = np.random.default_rng(17)
    for x, y, heading in random_poses(maze, rng, POSES).tolist():
        sense(maze.walls, goal, x, y, heading, readings)
        expected = rangefinders(space, x, y, heading)
        np.testing.assert_allclose(
            readings[:6] * RANGE, np.array(expected) * RANGE, rtol=0, atol=1e-9
        )
        assert readings[6:].tolist() == radar(maze.goal, x, y, heading)


@pytest.mark.parametrize("name", MAZES)
def test_collision_rule_agrees_with_pymunk_point_queries(name):
    maze = maze_named(name)
    space = wall_space(maze.walls)
    rng = np.random.default_rng(18)
    outcomes = []
    for x, y, _ in random_poses(maze, rng, POSES).tolist():
        near = space.point_query((x, y), RADIUS, pymunk.ShapeFilter())
        assert blocked(maze.walls, x, y) == bool(near), (x, y)
        outcomes.append(bool(near))
    assert any(outcomes) and not all(outcomes)  # both outcomes were tried


def random_network(rng: np.random.Generator) -> Network:
    """Ten inputs, two sigmoid outputs, every input linked to both with a random weight."""
    nodes = [Node(k, "input") for k in range(10)]
    nodes += [Node(10 + j, "output", "neat_sigmoid", float(rng.normal())) for j in range(2)]
    links = [Connection(i, 10 + j, float(rng.normal(0, 3))) for i in range(10) for j in range(2)]
    return Network(tuple(nodes), tuple(links), "feedforward")


@pytest.mark.parametrize("task_id", ["maze-medium-v1", "maze-hard-v3", "maze-gen-v3"])
def test_episodes_never_enter_a_wall_by_pymunk(task_id):
    """Every position of an episode keeps the robot's disc clear of every wall (pymunk
    point queries), and a step either moves at most the top speed or stays put."""
    task = tasks.make(task_id)
    space = wall_space(task.maze.walls)
    rng = np.random.default_rng(19)
    stays = 0
    for _ in range(8):
        path = task.trajectory(compile_network(random_network(rng), 10, 2))
        for x, y in path.tolist():
            assert not space.point_query((x, y), RADIUS, pymunk.ShapeFilter())
        moved = np.hypot(*np.diff(path, axis=0).T)
        assert (moved <= MAX_SPEED + 1e-12).all()
        stays += int((moved == 0).sum())
    # a sigmoid output of exactly 0.5 (speed 0) does not occur with these random weights,
    # so a step without movement is a refused move: the rule was exercised
    assert stays > 0

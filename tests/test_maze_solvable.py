"""The shipped and generated mazes are solvable by the robot's disc; the hard one deceives.

Reference: a grid path search independent of the task's kernels. Free space is computed
with numpy (every grid point at least the robot's radius from every wall, by the
point-to-segment distance) and its connected parts by scipy.ndimage.label (4-connected,
1 unit apart); the goal must lie in the part of the start. Deception is checked on the
same grid by a greedy descent of the straight-line distance to the goal.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import ndimage

from neuroyard.tasks.maze import load_maze, shipped_maze
from neuroyard.tasks.maze.generate import CANDIDATES, candidate, usable
from neuroyard.tasks.maze.robot import RADIUS


def free_grid(maze) -> np.ndarray:
    """Boolean grid (x, y) at unit spacing: True where the disc fits."""
    xs, ys = np.meshgrid(
        np.arange(0.0, maze.width + 1.0), np.arange(0.0, maze.height + 1.0), indexing="ij"
    )
    nearest = np.full(xs.shape, np.inf)
    for x1, y1, x2, y2 in maze.walls.tolist():
        ex, ey = x2 - x1, y2 - y1
        t = np.clip(((xs - x1) * ex + (ys - y1) * ey) / (ex * ex + ey * ey), 0.0, 1.0)
        nearest = np.minimum(nearest, np.hypot(xs - (x1 + t * ex), ys - (y1 + t * ey)))
    return nearest >= RADIUS


def greedy_descent(free: np.ndarray, start: tuple[int, int], goal: tuple[int, int]):
    """Walk from ``start`` through free cells, each move to the 8-neighbour nearest the
    goal in a straight line, until no neighbour is nearer; return the last cell."""
    here = start
    while True:
        steps = [
            (here[0] + dx, here[1] + dy)
            for dx in (-1, 0, 1)
            for dy in (-1, 0, 1)
            if 0 <= here[0] + dx < free.shape[0] and 0 <= here[1] + dy < free.shape[1]
        ]
        best = min((c for c in steps if free[c]), key=lambda c: math.dist(c, goal))
        if math.dist(best, goal) >= math.dist(here, goal):
            return here
        here = best


def assert_reachable(maze) -> None:
    free = free_grid(maze)
    parts, _ = ndimage.label(free)
    start = (round(maze.start[0]), round(maze.start[1]))
    goal = (round(maze.goal[0]), round(maze.goal[1]))
    assert free[start] and free[goal]
    assert parts[start] == parts[goal] != 0


@pytest.mark.parametrize("name", ["open", "medium", "hard"])
def test_goal_is_reachable_from_the_start(name):
    assert_reachable(load_maze(shipped_maze(name), RADIUS))


@pytest.mark.parametrize("size", [160.0, 200.0, 300.0])
def test_every_generated_candidate_is_solvable(size):
    """Every candidate maze-gen-v3 may give (seeds 0-2), and most candidates are usable."""
    for seed in range(3):
        kept = [
            m for m in (candidate(size, seed, k) for k in range(CANDIDATES)) if usable(m, RADIUS)
        ]
        assert len(kept) >= CANDIDATES // 2
        for maze in kept:
            assert_reachable(maze)


@pytest.mark.parametrize(("name", "trapped"), [("open", False), ("hard", True)])
def test_straight_line_descent_reaches_the_goal_only_without_a_trap(name, trapped):
    """Ours: in the open arena heading straight for the goal reaches it; in the hard maze
    it ends in a dead end, the trap under the long wall, 18 units from the goal."""
    maze = load_maze(shipped_maze(name), RADIUS)
    start = (round(maze.start[0]), round(maze.start[1]))
    goal = (round(maze.goal[0]), round(maze.goal[1]))
    end = greedy_descent(free_grid(maze), start, goal)
    if trapped:
        assert math.dist(end, goal) >= 17.0
    else:
        assert end == goal

"""The deception figures of a maze (tasks/maze/deception.py) against independent methods.

References: a hand calculation on a one-wall maze (plane geometry), the octile bound of an
8-connected grid path (a straight line on it is at most 1 / cos(22.5 deg) = 1.0824 times
longer), and a pass-height search by flooding with scipy.ndimage.label instead of the
module's minimax Dijkstra.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import ndimage

from neuroyard.tasks.maze import deception as dm
from neuroyard.tasks.maze import load_maze, parse_maze, shipped_maze
from neuroyard.tasks.maze.generate import CANDIDATES, candidate, generated_maze, usable
from neuroyard.tasks.maze.robot import RADIUS
from neuroyard.tasks.maze.tasks import GOAL_RADIUS

ONE_WALL = """
steps = 400
[bounds]
width = 200.0
height = 200.0
[start]
x = 30.0
y = 40.0
heading = 90.0
[goal]
x = 30.0
y = 160.0
[[walls]]
from = [0.0, 100.0]
to = [150.0, 100.0]
"""


def test_open_arena_has_no_deception_and_a_straight_route():
    figures = dm.measure(load_maze(shipped_maze("open"), RADIUS), RADIUS, GOAL_RADIUS)
    assert figures.solvable
    assert figures.deception == figures.trap_share == figures.start_trap == 0.0
    assert 1.0 <= figures.detour <= 1.0 / math.cos(math.radians(22.5))  # octile bound


def test_one_wall_trap_depth_by_hand():
    """Hand calculation: heading straight for the goal the robot stops under the wall, its
    centre at y = 100 - 8, 68 from the goal. To get past the wall its centre must cross
    y = 100 at x >= 150 + 8 (closer to the wall's end it would touch it); the nearest such
    point to the goal is (158, 100), sqrt(128^2 + 60^2) = 141.4 from it. Depth at the start:
    (141.4 - 68) / diagonal 282.8 = 0.2595, within the grid's resolution."""
    maze = parse_maze(ONE_WALL, "one wall", RADIUS)
    figures = dm.measure(maze, RADIUS, GOAL_RADIUS)
    expected = (math.hypot(128.0, 60.0) - 68.0) / math.hypot(200.0, 200.0)
    assert figures.start_trap == pytest.approx(expected, abs=2 * dm.CELL / 282.8)
    assert 0.3 < figures.trap_share < 0.7  # below the wall: trapped; above it: not


def test_free_cells_match_the_point_to_segment_distance_in_numpy():
    maze = load_maze(shipped_maze("hard"), RADIUS)
    free = dm.free_cells(maze, RADIUS)
    xs = (np.arange(free.shape[0]) + 0.5) * dm.CELL
    ys = (np.arange(free.shape[1]) + 0.5) * dm.CELL
    gx, gy = np.meshgrid(xs, ys, indexing="ij")
    nearest = np.full(gx.shape, np.inf)
    for x1, y1, x2, y2 in maze.walls.tolist():
        ex, ey = x2 - x1, y2 - y1
        t = np.clip(((gx - x1) * ex + (gy - y1) * ey) / (ex * ex + ey * ey), 0.0, 1.0)
        nearest = np.minimum(nearest, np.hypot(gx - (x1 + t * ex), gy - (y1 + t * ey)))
    assert np.array_equal(free, nearest >= RADIUS)


@pytest.mark.parametrize("name", ["medium", "hard"])
def test_pass_heights_equal_a_flooding_search(name):
    """The pass height of a cell is the lowest level L at which it is joined to the goal in
    {free cells at distance <= L} (8-connected components by scipy.ndimage.label); a free
    cell never joined to it (inside a closed block of walls) has none (inf)."""
    maze = load_maze(shipped_maze(name), RADIUS)
    free = dm.free_cells(maze, RADIUS)
    dist = dm._goal_distance(free.shape, maze.goal)
    goal = dm._cell(free, *maze.goal)
    heights = dm._pass_heights(free, dist, goal).reshape(free.shape)
    levels = np.unique(dist[free])
    rng = np.random.default_rng(0)
    cells = np.argwhere(free)[rng.choice(int(free.sum()), 12, replace=False)]
    gi, gj = divmod(goal, free.shape[1])
    for i, j in cells:
        lo, hi = 0, len(levels) - 1  # the lowest level joining (i, j) to the goal
        while lo < hi:
            mid = (lo + hi) // 2
            parts, _ = ndimage.label(free & (dist <= levels[mid]), structure=np.ones((3, 3)))
            joined = parts[i, j] != 0 and parts[i, j] == parts[gi, gj]
            lo, hi = (lo, mid) if joined else (mid + 1, hi)
        parts, _ = ndimage.label(free & (dist <= levels[lo]), structure=np.ones((3, 3)))
        if parts[i, j] == parts[gi, gj]:
            assert heights[i, j] == levels[lo]
        else:
            assert heights[i, j] == np.inf


def test_shipped_mazes_rank_by_deception():
    """Ours: open < medium < hard, as they were designed."""
    scores = [
        dm.measure(load_maze(shipped_maze(n), RADIUS), RADIUS, GOAL_RADIUS).deception
        for n in ("open", "medium", "hard")
    ]
    assert scores == sorted(scores) and scores[0] < scores[1] < scores[2]


def test_the_knob_picks_the_candidate_nearest_the_score_asked():
    kept = [m for m in (candidate(200.0, 5, k) for k in range(CANDIDATES)) if usable(m, RADIUS)]
    scores = [dm.measure(m, RADIUS, GOAL_RADIUS).deception for m in kept]
    for asked in (0.0, 0.04, 1.0):
        _, figures = generated_maze(200.0, 5, asked, RADIUS, GOAL_RADIUS)
        assert abs(figures.deception - asked) == min(abs(s - asked) for s in scores)
    assert generated_maze(200.0, 5, 0.0, RADIUS, GOAL_RADIUS)[1].deception == min(scores)
    assert generated_maze(200.0, 5, 1.0, RADIUS, GOAL_RADIUS)[1].deception == max(scores)


@pytest.mark.parametrize("size", [160.0, 200.0, 300.0])
def test_a_deeper_pocket_scores_higher(size):
    """Ours, the family's design: candidate k + 1 has a longer wall and a deeper pocket than
    candidate k, so its score is higher, and the range runs from a wall over the start to
    the depth of our hard maze (its score 0.26)."""
    for seed in range(3):
        scores = [
            dm.measure(candidate(size, seed, k), RADIUS, GOAL_RADIUS).deception
            for k in range(CANDIDATES)
        ]
        assert all(b > a for a, b in zip(scores, scores[1:], strict=False)), scores
        assert scores[0] < 0.06 and scores[-1] > 0.24


def test_the_deepest_candidate_traps_a_robot_that_heads_for_the_goal():
    """Ours: at the largest depth the straight line from the start ends under the long wall,
    and the way round first leads further from the goal (a start trap)."""
    figures = dm.measure(candidate(200.0, 0, CANDIDATES - 1), RADIUS, GOAL_RADIUS)
    assert figures.start_trap > 0.3 and figures.detour > 3.0


def test_a_generated_maze_is_the_same_from_the_same_settings():
    a, b = candidate(200.0, 7, 4), candidate(200.0, 7, 4)
    assert np.array_equal(a.walls, b.walls) and a.start == b.start and a.goal == b.goal
    assert not np.array_equal(candidate(200.0, 8, 4).walls, a.walls)

"""Mazes generated from a seed, with a knob for their deception (``maze-gen-v2``).

A generated maze is a 200 x 200 arena (the size of our shipped mazes) in which the robot
starts in the middle of ``size`` nested square pockets, facing the goal, which lies
outside them all. Each pocket is closed but for a mouth ``MOUTH`` units wide. From the seed
come ``CANDIDATES`` candidate mazes, each with its own start, goal and inner pocket size
(drawn uniformly); candidate k turns the mouths away from the goal by k / (CANDIDATES - 1)
of a half turn, to alternate sides from one pocket to the next: candidate 0's mouths face
the goal (a robot that heads for the goal drives straight out), the last candidate's face
away from it (a robot that heads for the goal is trapped against the pocket's far wall,
and the way out leads away from the goal first, as in our hard maze). A candidate whose
start or goal lies within the robot's radius of a wall, or whose goal cannot be reached
(the grid path search of :mod:`.deception`), is dropped. The maze given is the candidate
whose deception score lies nearest the ``deception`` asked for (the first of equals), so
the knob asks for a score, and the score the maze has is what a run records. All of it is
ours.

Version 1 of the family (walls across the arena with one gap each) is retired: objective
NEAT's success on it did not follow its deception score (results/maze/README.md).
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from .deception import Deception, measure
from .mazefile import Maze, arena_sides, wall_within

ARENA = 200.0  # units of length, the side of the square arena (as our shipped mazes)
CANDIDATES = 24
MOUTH = 30.0  # units of length, the width of a pocket's mouth (the robot's diameter is 16)
INNER = (20.0, 26.0)  # range of the inner pocket's half-width
SPACING = 24.0  # how much wider each pocket is than the one inside it, per side
MARGIN = 20.0  # least room between the outer pocket and the arena's sides
STEPS = 400  # from memory (reference/SOURCES.md: lehman2011; maze protocol)


def _pocket(cx: float, cy: float, half: float, angle: float) -> list[tuple[float, ...]]:
    """The walls of a square pocket centred at (cx, cy), ``half`` its half-width, with a
    mouth in the side that the direction ``angle`` (rad) leaves it through, centred where
    that ray meets the side (moved along it so that the mouth lies within the side)."""
    dx, dy = math.cos(angle), math.sin(angle)
    vertical = abs(dx) >= abs(dy)  # the ray leaves through the left or the right side
    sign = math.copysign(1.0, dx if vertical else dy)
    along = (dy if vertical else dx) * half / max(abs(dx), abs(dy))  # along the side
    t = min(half - MOUTH / 2, max(-half + MOUTH / 2, along))
    left, right, bottom, top = cx - half, cx + half, cy - half, cy + half
    sides = {
        (True, -1.0): (left, bottom, left, top),
        (True, 1.0): (right, bottom, right, top),
        (False, -1.0): (left, bottom, right, bottom),
        (False, 1.0): (left, top, right, top),
    }
    walls = [wall for key, wall in sides.items() if key != (vertical, sign)]
    x1, y1, x2, y2 = sides[(vertical, sign)]
    if vertical:
        walls += [(x1, y1, x1, cy + t - MOUTH / 2), (x1, cy + t + MOUTH / 2, x1, y2)]
    else:
        walls += [(x1, y1, cx + t - MOUTH / 2, y1), (cx + t + MOUTH / 2, y1, x2, y1)]
    return [w for w in walls if (w[0], w[1]) != (w[2], w[3])]  # a mouth in a corner


def candidate(size: int, seed: int, k: int) -> Maze:
    """Candidate ``k`` of the mazes of ``size`` pockets and ``seed`` (see the module doc)."""
    rng = np.random.default_rng([seed, size, k])
    inner = rng.uniform(*INNER)
    outer = inner + (size - 1) * SPACING
    cx, cy = rng.uniform(MARGIN + outer, ARENA - MARGIN - outer, 2)
    while True:  # the goal: anywhere clear of the outer pocket (at least a quarter of the
        # arena is, for the sizes the task allows)
        gx, gy = rng.uniform(MARGIN / 2 + 4.0, ARENA - MARGIN / 2 - 4.0, 2)
        if max(abs(gx - cx), abs(gy - cy)) > outer + MARGIN / 2 + 4.0:
            break
    towards = math.atan2(gy - cy, gx - cx)
    turn = math.pi * k / (CANDIDATES - 1)
    walls = []
    for n in range(size):
        side = 1.0 if n % 2 == 0 else -1.0  # mouths on alternate sides of the goal's line
        walls += _pocket(cx, cy, inner + n * SPACING, towards + side * turn)
    return Maze(
        name=f"maze-gen-v2 size={size} seed={seed} (candidate {k})",
        width=ARENA,
        height=ARENA,
        walls=np.array(walls + arena_sides(ARENA, ARENA), dtype=np.float64),
        start=(float(cx), float(cy), math.degrees(towards)),
        goal=(float(gx), float(gy)),
        steps=STEPS,
    )


def usable(maze: Maze, radius: float) -> bool:
    """True when the start and the goal lie at least ``radius`` from every wall (the rule
    of the maze file format)."""
    return all(
        wall_within(maze.walls, x, y, radius) is None for x, y in (maze.start[:2], maze.goal)
    )


@lru_cache(maxsize=64)
def generated_maze(
    size: int, seed: int, deception: float, radius: float, goal_radius: float
) -> tuple[Maze, Deception]:
    """The maze of ``size`` and ``seed`` whose deception score lies nearest ``deception``,
    with its figures, for a robot of ``radius`` that must end within ``goal_radius``."""
    best: tuple[float, int, Maze, Deception] | None = None
    for k in range(CANDIDATES):
        maze = candidate(size, seed, k)
        if not usable(maze, radius):
            continue
        figures = measure(maze, radius, goal_radius)
        if not figures.solvable:
            continue
        gap = abs(figures.deception - deception)
        if best is None or gap < best[0]:
            best = (gap, k, maze, figures)
    if best is None:
        raise AssertionError(f"maze-gen-v2 size={size} seed={seed}: no candidate is usable")
    return best[2], best[3]

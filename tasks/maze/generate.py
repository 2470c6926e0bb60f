"""Mazes generated from a seed, with a knob for their deception (``maze-gen-v1``).

A generated maze is a 200 x 200 arena (the size of our shipped mazes) cut by ``size``
walls across it, evenly spaced from bottom to top, each with one gap ``GAP`` units wide
(the robot's diameter is 16). The robot starts in the bottom band facing up (+y); the goal
lies in the top band, so the route climbs through every gap. From the seed come
``CANDIDATES`` candidate mazes, each with its own start, goal and gap positions drawn
uniformly (the gaps' ends at least ``GAP`` / 2 from the sides), and a lip: a wall
hanging down from the edge of each gap on the side the robot comes from (the start's side
for the first wall, the last gap's for the next), candidate k's lips k / (``CANDIDATES`` - 1)
of ``LIP`` x the band's height long, and never so long that less than ``GAP`` / 2 is
left below them. A candidate whose start or goal lies within the
robot's radius of a wall is dropped (the rule of the maze file format). A gap straight on the line
from start to goal costs nothing; a gap at the far end of its wall, behind a long lip,
makes a deep dead end for a robot that heads for the goal. Every candidate is solvable by construction and checked by
the grid path search of :mod:`.deception`. The maze given is the candidate whose
deception score lies nearest the ``deception`` asked for (the first of equals), so the
knob asks for a score, and the score the maze has is what a run records. All of it is ours.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from .deception import Deception, measure
from .mazefile import Maze, arena_sides, segment_distance

ARENA = 200.0  # units of length, the side of the square arena (as our shipped mazes)
CANDIDATES = 24
GAP = 40.0  # units of length, the width of each gap (ours)
LIP = 0.6  # the longest lip, as a share of the height of a band (ours)
STEPS = 400  # from memory (reference/SOURCES.md: lehman2011; maze protocol)


def candidate(size: int, seed: int, k: int) -> Maze:
    """Candidate ``k`` of the mazes of ``size`` walls and ``seed`` (see the module doc)."""
    rng = np.random.default_rng([seed, size, k])
    band = ARENA / (size + 1)
    margin = GAP  # a gap's centre lies at least GAP from a side: its ends GAP / 2
    gaps = rng.uniform(margin, ARENA - margin, size)
    start_x, goal_x = rng.uniform(margin, ARENA - margin, 2)
    # a lip leaves at least GAP / 2 below it, so the robot (diameter 16) can pass under it
    lip = min(LIP * band, band - GAP / 2) * k / (CANDIDATES - 1)
    walls = []
    came_from = start_x  # where the robot arrives at a wall from: the start, the last gap
    for n, centre in enumerate(gaps):
        y = (n + 1) * band
        walls.append((0.0, y, centre - GAP / 2, y))
        walls.append((centre + GAP / 2, y, ARENA, y))
        if lip > 0.0:  # the lip hangs from the gap's edge on the side the robot comes from
            edge = centre - GAP / 2 if came_from < centre else centre + GAP / 2
            walls.append((edge, y, edge, y - lip))
        came_from = centre
    return Maze(
        name=f"maze-gen-v1 size={size} seed={seed} (candidate {k})",
        width=ARENA,
        height=ARENA,
        walls=np.array(walls + arena_sides(ARENA, ARENA), dtype=np.float64),
        start=(float(start_x), band / 2, 90.0),
        goal=(float(goal_x), ARENA - band / 2),
        steps=STEPS,
    )


def usable(maze: Maze, radius: float) -> bool:
    """True when the start and the goal lie at least ``radius`` from every wall (the rule
    of the maze file format); a lip can come too close to the start."""
    points = (maze.start[:2], maze.goal)
    return all(segment_distance(x, y, wall) >= radius for x, y in points for wall in maze.walls)


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
            raise AssertionError(f"{maze.name} is not solvable: a bug of the generator")
        gap = abs(figures.deception - deception)
        if best is None or gap < best[0]:
            best = (gap, k, maze, figures)
    assert best is not None
    return best[2], best[3]

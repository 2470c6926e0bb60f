"""How deceptive a maze is, measured on a grid of the places the robot's centre can reach.

The free space is a grid of square cells ``CELL`` units wide over the arena; a cell is free
when its centre lies at least the robot's radius from every wall (where the robot's centre
can be). Cells are linked to their 8 neighbours; only the free cells reachable from the
start's cell count. The figures (all ours) measure the deception of a fitness that rewards
ending closer to the goal as the crow flies (reference/SOURCES.md: lehman2011; deception):

* **greedy descent**: from a cell, move to the neighbour closest to the goal while that is
  closer than the cell itself. The descent is *trapped* when it stops more than
  ``goal_radius`` from the goal, at a dead end of the objective.
* **trap depth** of a cell: 0 when its descent reaches the goal; else how much further from
  the goal than the dead end the robot must go on the best way out: ``pass - d(end)``,
  with ``pass`` the least, over all routes from the dead end to the goal, of the largest
  straight-line distance to the goal along the route (the height of the lowest pass out of
  the trap), as a fraction of the arena's diagonal.
* ``deception`` (the score): the mean trap depth over the reachable free cells, in
  [0, 1). 0: getting closer never misleads; the deeper and wider the traps, the higher.
* ``trap_share``: the share of the reachable free cells whose descent is trapped.
* ``start_trap``: the trap depth of the start's cell.
* ``detour``: the shortest route from the start to the goal through free cells (steps of
  1 and sqrt 2 cells) over the straight-line distance (>= 1).

A maze is solvable when the goal's cell is reachable from the start's cell.
"""

from __future__ import annotations

import heapq
import math
from dataclasses import dataclass

import numba
import numpy as np

from .mazefile import Maze
from .robot import wall_distance

CELL = 2.0  # units of length per grid cell (ours: a tenth of the robot's diameter and less)
_STEPS = ((1, 0), (-1, 0), (0, 1), (0, -1), (1, 1), (1, -1), (-1, 1), (-1, -1))


@dataclass(frozen=True)
class Deception:
    """The figures of one maze (see the module docstring); ``detour`` is inf and the depths
    are meaningless when the maze is not ``solvable``; ``free_cells``: the number of free
    cells reachable from the start."""

    deception: float
    trap_share: float
    start_trap: float
    detour: float
    solvable: bool
    free_cells: int

    def facts(self) -> dict[str, float]:
        """The figures a run record keeps (:attr:`TaskSpec.facts`)."""
        return {
            "deception": self.deception,
            "trap_share": self.trap_share,
            "start_trap": self.start_trap,
            "detour": self.detour,
        }


@numba.njit(cache=True)
def _free_grid(walls: np.ndarray, nx: int, ny: int, cell: float, radius: float) -> np.ndarray:
    free = np.zeros((nx, ny), dtype=np.bool_)
    for i in range(nx):
        for j in range(ny):
            free[i, j] = wall_distance(walls, (i + 0.5) * cell, (j + 0.5) * cell) >= radius
    return free


def free_cells(maze: Maze, radius: float) -> np.ndarray:
    """Boolean grid (nx, ny): cell (i, j) with centre ((i + 0.5) CELL, (j + 0.5) CELL) is
    free when that centre lies at least ``radius`` from every wall."""
    nx, ny = int(maze.width // CELL), int(maze.height // CELL)
    return _free_grid(maze.walls, nx, ny, CELL, radius)


def _cell(free: np.ndarray, x: float, y: float) -> int:
    """Flat index of the free cell whose centre is nearest to (x, y)."""
    i, j = np.nonzero(free)
    k = int(np.argmin((i + 0.5 - x / CELL) ** 2 + (j + 0.5 - y / CELL) ** 2))
    return int(i[k] * free.shape[1] + j[k])


def _links(free: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Every link between 8-neighbouring free cells: flat indices and length (in cells)."""
    nx, ny = free.shape
    index = np.arange(nx * ny).reshape(nx, ny)
    sources, targets, lengths = [], [], []
    for di, dj in _STEPS:
        i0, i1 = max(0, -di), nx - max(0, di)  # cells (i, j) whose neighbour (i+di, j+dj)
        j0, j1 = max(0, -dj), ny - max(0, dj)  # lies inside the grid
        both = free[i0:i1, j0:j1] & free[i0 + di : i1 + di, j0 + dj : j1 + dj]
        src = index[i0:i1, j0:j1][both]
        sources.append(src)
        targets.append(src + di * ny + dj)
        lengths.append(np.full(src.shape, math.hypot(di, dj)))
    return np.concatenate(sources), np.concatenate(targets), np.concatenate(lengths)


def _goal_distance(shape: tuple[int, int], goal: tuple[float, float]) -> np.ndarray:
    """Straight-line distance from every cell's centre to ``goal`` (nx, ny)."""
    ci = (np.arange(shape[0]) + 0.5) * CELL
    cj = (np.arange(shape[1]) + 0.5) * CELL
    return np.hypot(ci[:, None] - goal[0], cj[None, :] - goal[1])


def _descent_ends(free: np.ndarray, dist: np.ndarray) -> np.ndarray:
    """For every cell (flat), the cell where greedy descent of ``dist`` stops (a cell that
    is not free maps to itself)."""
    nx, ny = free.shape
    best = np.where(free, dist, np.inf)
    index = np.arange(nx * ny).reshape(nx, ny)
    nxt = index.copy()
    padded = np.pad(best, 1, constant_values=np.inf)
    current = best.copy()
    for di, dj in _STEPS:
        neighbour = padded[1 + di : 1 + di + nx, 1 + dj : 1 + dj + ny]
        better = free & (neighbour < current)
        current = np.where(better, neighbour, current)
        nxt = np.where(better, index + di * ny + dj, nxt)
    flat = nxt.ravel()
    while True:  # pointer jumping: every cell to the end of its descent
        jumped = flat[flat]
        if np.array_equal(jumped, flat):
            return flat
        flat = jumped


@numba.njit(cache=True)
def _pass_heights(free: np.ndarray, dist: np.ndarray, goal: int) -> np.ndarray:
    """For every cell (flat), the least over routes through free cells to the goal's cell of
    the largest ``dist`` along the route (inf where no route): a minimax Dijkstra."""
    nx, ny = free.shape
    height = np.full(nx * ny, np.inf)
    height[goal] = dist.ravel()[goal]
    heap = [(height[goal], goal)]
    done = np.zeros(nx * ny, dtype=np.bool_)
    while heap:
        h, cell = heapq.heappop(heap)
        if done[cell]:
            continue
        done[cell] = True
        i, j = cell // ny, cell % ny
        for di in range(-1, 2):
            for dj in range(-1, 2):
                a, b = i + di, j + dj
                if (di == 0 and dj == 0) or a < 0 or b < 0 or a >= nx or b >= ny:
                    continue
                if not free[a, b]:
                    continue
                other = a * ny + b
                candidate = max(h, dist[a, b])
                if candidate < height[other]:
                    height[other] = candidate
                    heapq.heappush(heap, (candidate, other))
    return height


def measure(maze: Maze, radius: float, goal_radius: float) -> Deception:
    """The deception figures of ``maze`` for a robot of ``radius`` that must end within
    ``goal_radius`` of the goal (see the module docstring)."""
    # scipy loads here, on the first measurement: importing the tasks stays light (a task's
    # figures usually come from the memo, .memo)
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import dijkstra

    free = free_cells(maze, radius)
    n = free.size
    start = _cell(free, maze.start[0], maze.start[1])
    goal = _cell(free, *maze.goal)
    sources, targets, lengths = _links(free)
    graph = coo_matrix((lengths, (sources, targets)), shape=(n, n)).tocsr()
    from_start = dijkstra(graph, indices=start)
    reachable = np.isfinite(from_start)
    dist = _goal_distance(free.shape, maze.goal)
    ends = _descent_ends(free, dist)
    flat = dist.ravel()
    trapped = reachable & (flat[ends] > goal_radius)
    heights = _pass_heights(free, dist, goal)
    depth = np.where(trapped, heights[ends] - flat[ends], 0.0) / maze.diagonal
    straight = math.hypot(maze.goal[0] - maze.start[0], maze.goal[1] - maze.start[1])
    solvable = bool(reachable[goal])
    detour = from_start[goal] * CELL / straight if solvable and straight > 0 else math.inf
    count = int(reachable.sum())
    return Deception(
        deception=float(depth[reachable].sum() / count),
        trap_share=float(trapped.sum() / count),
        start_trap=float(depth[start]),
        detour=max(1.0, float(detour)),
        solvable=solvable,
        free_cells=count,
    )

"""The maze robot and its episode: sensors, moves, collisions and network in one numba call.

The robot (reference/SOURCES.md: lehman2011; maze robot) is a disc of radius ``RADIUS``
at (x, y) with a heading (radians, counter-clockwise from +x; y points up). Each time step:

1. Sensors, in input order: six rangefinders at ``RANGEFINDER_ANGLES`` from the heading,
   each the distance from the centre to the nearest wall along its ray divided by
   ``RANGE`` (0 .. 1; 1 when no wall lies within ``RANGE``); then four radar slices, each
   90 degrees wide, centred ahead, to the right, behind and to the left: the slice holding
   the goal's direction reads 1, the others 0 (a direction on a border belongs to the
   slice counter-clockwise of it).
2. The network steps once. Each output is clipped to [0, 1]; a NaN output counts as 0.5.
   Output 1 turns the robot by ``(o1 - 0.5) * 2 * MAX_TURN`` radians (above 0.5: to the
   left); output 2 sets the speed ``(o2 - 0.5) * 2 * MAX_SPEED`` along the new heading
   (below 0.5: backwards).
3. The move is made unless the disc at the new position would come closer than
   ``RADIUS`` to a wall; then the robot stays where it is (its turn is kept). Since
   ``MAX_SPEED < RADIUS``, a move that would cross a wall always ends that close to it.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from neuroyard.core.batch import CompiledBatch, member
from neuroyard.core.compiled import CompiledNetwork, new_state, reset, step

# Directions of the rangefinders relative to the heading, recalled (MEMORY-medium)
# (reference/SOURCES.md: lehman2011; maze robot).
RANGEFINDER_ANGLES = np.radians(np.array([-90.0, -45.0, 0.0, 45.0, 90.0, 180.0]))
RADAR_SLICES = 4  # front, right, back, left (lehman2011; maze robot: order MEMORY-medium)
N_INPUTS = RANGEFINDER_ANGLES.shape[0] + RADAR_SLICES
# Ours (the publication gives no robot size, range or speed): units of length per step.
RADIUS = 8.0
RANGE = 100.0
MAX_SPEED = 3.0
MAX_TURN = math.radians(10.0)  # ours: radians per step


@numba.njit(cache=True)
def ray_length(walls: np.ndarray, x: float, y: float, angle: float, limit: float) -> float:
    """Distance from (x, y) along direction ``angle`` (rad) to the nearest wall of
    ``walls`` (n, 4), or ``limit`` when none lies closer."""
    dx, dy = math.cos(angle), math.sin(angle)
    best = limit
    for k in range(walls.shape[0]):
        ax, ay = walls[k, 0], walls[k, 1]
        ex, ey = walls[k, 2] - ax, walls[k, 3] - ay
        denom = dx * ey - dy * ex
        if denom == 0.0:
            continue  # parallel to the wall
        wx, wy = ax - x, ay - y
        t = (wx * ey - wy * ex) / denom
        u = (wx * dy - wy * dx) / denom
        if 0.0 <= t < best and 0.0 <= u <= 1.0:
            best = t
    return best


@numba.njit(cache=True)
def wall_distance(walls: np.ndarray, x: float, y: float) -> float:
    """Distance from (x, y) to the nearest wall of ``walls`` (n, 4)."""
    best = math.inf
    for k in range(walls.shape[0]):
        ax, ay = walls[k, 0], walls[k, 1]
        ex, ey = walls[k, 2] - ax, walls[k, 3] - ay
        t = ((x - ax) * ex + (y - ay) * ey) / (ex * ex + ey * ey)
        t = min(1.0, max(0.0, t))
        d = math.hypot(x - (ax + t * ex), y - (ay + t * ey))
        best = min(best, d)
    return best


@numba.njit(cache=True)
def blocked(walls: np.ndarray, x: float, y: float) -> bool:
    """True when the robot's disc centred at (x, y) would come closer than RADIUS to a wall."""
    return wall_distance(walls, x, y) < RADIUS


@numba.njit(cache=True)
def sense(
    walls: np.ndarray, goal: np.ndarray, x: float, y: float, heading: float, out: np.ndarray
) -> None:
    """Write the robot's N_INPUTS sensor readings at pose (x, y, heading) into ``out``."""
    n_range = RANGEFINDER_ANGLES.shape[0]
    for j in range(n_range):
        out[j] = ray_length(walls, x, y, heading + RANGEFINDER_ANGLES[j], RANGE) / RANGE
    bearing = math.atan2(goal[1] - y, goal[0] - x) - heading
    # 0 ahead, counter-clockwise positive; shift by 45 degrees so each slice starts at a
    # multiple of 90 degrees; ccw counts slices counter-clockwise: 0 front, 1 left, 2 back
    turn = (bearing + math.pi / 4.0) % (2.0 * math.pi)
    ccw = int(turn // (math.pi / 2.0)) % RADAR_SLICES
    for j in range(RADAR_SLICES):
        out[n_range + j] = 0.0
    # input order is front, right, back, left
    out[n_range + (RADAR_SLICES - ccw) % RADAR_SLICES] = 1.0


@numba.njit(cache=True)
def _unit(o: float) -> float:
    """An output clipped to [0, 1]; NaN counts as 0.5 (no turn, no move)."""
    if o != o:
        return 0.5
    return min(1.0, max(0.0, o))


@numba.njit(inline="always", cache=True)
def move(
    walls: np.ndarray, x: float, y: float, heading: float, turn: float, speed: float
) -> tuple[float, float, float]:
    """The robot's pose (x, y, heading in [0, 2 pi)) after one step from (x, y, heading)
    with the network's outputs ``turn`` and ``speed`` (each clipped to [0, 1], NaN as 0.5):
    turn first, then the move along the new heading unless it is blocked (step 3 above)."""
    heading += (_unit(turn) - 0.5) * 2.0 * MAX_TURN
    heading %= 2.0 * math.pi
    distance = (_unit(speed) - 0.5) * 2.0 * MAX_SPEED
    nx, ny = x + distance * math.cos(heading), y + distance * math.sin(heading)
    if blocked(walls, nx, ny):
        return x, y, heading
    return nx, ny, heading


@numba.njit(cache=True)
def run_episode(
    net: CompiledNetwork,
    walls: np.ndarray,
    start: np.ndarray,
    goal: np.ndarray,
    steps: int,
    record: np.ndarray,
) -> tuple[float, float]:
    """Run one episode of ``steps`` time steps from ``start`` = (x, y, heading in rad) and
    return the final (x, y). When ``record`` has rows, row 0 gets the start position and
    row k the position after step k (pass a (0, 2) array to skip)."""
    values, scratch = new_state(net)
    reset(net, values)
    inputs = np.zeros(N_INPUTS, dtype=np.float64)
    outputs = np.zeros(net.out_idx.shape[0], dtype=np.float64)
    x, y, heading = start[0], start[1], start[2]
    keep = record.shape[0]
    if keep > 0:
        record[0, 0], record[0, 1] = x, y
    for k in range(steps):
        sense(walls, goal, x, y, heading, inputs)
        step(net, values, scratch, inputs, outputs)
        x, y, heading = move(walls, x, y, heading, outputs[0], outputs[1])
        if k + 1 < keep:
            record[k + 1, 0], record[k + 1, 1] = x, y
    return x, y


@numba.njit(cache=True)
def run_batch(
    batch: CompiledBatch, walls: np.ndarray, start: np.ndarray, goal: np.ndarray, steps: int
) -> np.ndarray:
    """Final (x, y) of one episode of every network of a batch, as an array (size, 2)."""
    final = np.empty((batch.size, 2), dtype=np.float64)
    no_record = np.empty((0, 2), dtype=np.float64)
    for i in range(batch.size):
        final[i, 0], final[i, 1] = run_episode(
            member(batch, i), walls, start, goal, steps, no_record
        )
    return final

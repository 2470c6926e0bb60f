"""The maze robot stepped in plain Python, with pymunk doing its geometry (the slow side of
the maze speed benchmark, tests/bench/test_bench_maze.py).

Same robot and rules as tasks/maze/robot.py (its module docstring is the contract), written
separately: the walls are static pymunk segments of radius 0; each rangefinder is a pymunk
segment query (``segment_query_first``) from the robot's centre out to ``RANGE``; a move
is refused when a pymunk point query finds a wall within ``RADIUS`` of the new position.
Radar, turn and speed are plain ``math``. The network is the harness's compiled network,
stepped by :func:`~neuroyard.core.compiled.step` called from Python once per time
step, so both sides compute the same network and the comparison times the robot loop:
sensing, moving, collisions.
"""

from __future__ import annotations

import math

import numpy as np
import pymunk

from neuroyard.core.compiled import CompiledNetwork, new_state, reset, step
from neuroyard.tasks.maze.robot import MAX_SPEED, MAX_TURN, RADIUS, RANGE, RANGEFINDER_ANGLES

ANY_SHAPE = pymunk.ShapeFilter()
QUARTER = math.pi / 2.0


def wall_space(walls: np.ndarray) -> pymunk.Space:
    """A pymunk space holding every wall of ``walls`` (n, 4: x1, y1, x2, y2) as a static
    segment of radius 0."""
    space = pymunk.Space()
    for x1, y1, x2, y2 in walls.tolist():
        space.add(pymunk.Segment(space.static_body, (x1, y1), (x2, y2), 0.0))
    return space


def rangefinders(space: pymunk.Space, x: float, y: float, heading: float) -> list[float]:
    """The six rangefinder readings (distance to the first wall along each ray / RANGE,
    1.0 when none lies within RANGE), by pymunk segment queries."""
    readings = []
    for offset in RANGEFINDER_ANGLES.tolist():
        angle = heading + offset
        end = (x + RANGE * math.cos(angle), y + RANGE * math.sin(angle))
        hit = space.segment_query_first((x, y), end, 0.0, ANY_SHAPE)
        readings.append(1.0 if hit is None else hit.alpha)  # alpha: fraction of the ray
    return readings


def radar(goal: tuple[float, float], x: float, y: float, heading: float) -> list[float]:
    """The four radar slices (front, right, back, left): 1.0 for the one holding the goal's
    direction, whose bearing is within 45 degrees of the slice's centre."""
    bearing = (math.atan2(goal[1] - y, goal[0] - x) - heading + math.pi / 4.0) % (2.0 * math.pi)
    lit = ("front", "left", "back", "right")[int(bearing // QUARTER) % 4]  # counter-clockwise
    return [float(side == lit) for side in ("front", "right", "back", "left")]


def unit(output: float) -> float:
    """A network output clipped to [0, 1]; NaN counts as 0.5."""
    return 0.5 if math.isnan(output) else min(1.0, max(0.0, output))


def episode(
    net: CompiledNetwork,
    space: pymunk.Space,
    start: tuple[float, float, float],
    goal: tuple[float, float],
    steps: int,
) -> tuple[float, float]:
    """Final (x, y) after ``steps`` time steps from ``start`` = (x, y, heading in rad)."""
    values, scratch = new_state(net)
    reset(net, values)
    inputs = np.zeros(len(RANGEFINDER_ANGLES) + 4)
    outputs = np.zeros(2)
    x, y, heading = start
    for _ in range(steps):
        inputs[:] = rangefinders(space, x, y, heading) + radar(goal, x, y, heading)
        step(net, values, scratch, inputs, outputs)
        turn_out, speed_out = (unit(o) for o in outputs.tolist())
        heading = (heading + (turn_out - 0.5) * 2.0 * MAX_TURN) % (2.0 * math.pi)
        speed = (speed_out - 0.5) * 2.0 * MAX_SPEED
        nx, ny = x + speed * math.cos(heading), y + speed * math.sin(heading)
        if not space.point_query((nx, ny), RADIUS, ANY_SHAPE):
            x, y = nx, ny
    return x, y

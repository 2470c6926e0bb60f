"""The maze file format of neuroyard (TOML) and its validation.

A maze file holds, in units of length (the robot's speed and size are in the same units)::

    steps = 400                         # time steps of one episode, an integer >= 1
    [bounds]                            # the arena: 0 <= x <= width, 0 <= y <= height
    width = 200.0
    height = 200.0
    [start]                             # the robot's centre and heading at the start
    x = 30.0
    y = 30.0
    heading = 90.0                      # degrees, counter-clockwise from +x
    [goal]
    x = 170.0
    y = 170.0
    [[walls]]                           # any number of wall segments, each from -> to
    from = [0.0, 70.0]
    to = [150.0, 70.0]

The four sides of the arena are walls too (added on load). Numbers are TOML integers or
floats (not booleans), finite; every key above is required (``walls`` may be empty) and no
other key is allowed. Rules checked on load: width and height above 0 and at most
:data:`MAX_SIDE`; ``steps`` at most :data:`MAX_STEPS`; the heading within
-:data:`MAX_HEADING`..:data:`MAX_HEADING` degrees; at most :data:`MAX_WALLS` walls, each
of nonzero length with both ends inside the bounds; the start and the goal inside the
bounds and at least ``clearance`` (the robot's radius) from every wall and side. So every
coordinate lies within 0..:data:`MAX_SIDE`, and an episode and the deception figures
(a grid of the arena, :mod:`.deception`) take bounded time and memory. The file is read
as :mod:`neuroyard.core.inputfile` reads every input file (UTF-8, at most 64 MiB). A
broken file raises :class:`TaskError` with one line naming the file, the entry and the
rule.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass
from typing import Any

import numpy as np

from neuroyard.core.errors import TaskError
from neuroyard.core.inputfile import parse_toml, read_text

KEYS = {"steps", "bounds", "start", "goal", "walls"}
# Upper limits of a maze file (ours). MAX_SIDE: five times the shipped mazes' 200 units;
# the deception grid of such an arena (250,000 cells) is measured in about a second.
# MAX_STEPS: 25 times the protocol's 400 (lehman2011; maze protocol), room to cross the
# largest arena several times at the robot's top speed of 3 units a step. MAX_WALLS: the
# shipped mazes have under 20; every step tests every wall.
MAX_SIDE = 1000.0
MAX_STEPS = 10_000
MAX_WALLS = 1_000
MAX_HEADING = 360.0  # degrees either way
TABLES = {"bounds": ("width", "height"), "start": ("x", "y", "heading"), "goal": ("x", "y")}


@dataclass(frozen=True)
class Maze:
    """A loaded maze. ``walls``: float64 array (n, 4) of segments (x1, y1, x2, y2), the
    file's walls followed by the four sides of the arena; ``start``: (x, y, heading in
    degrees); ``goal``: (x, y); ``width`` and ``height`` in units of length."""

    name: str
    width: float
    height: float
    walls: np.ndarray
    start: tuple[float, float, float]
    goal: tuple[float, float]
    steps: int

    @property
    def diagonal(self) -> float:
        """Length of the arena's diagonal: no two points of the arena lie further apart."""
        return math.hypot(self.width, self.height)


def arena_sides(width: float, height: float) -> list[tuple[float, float, float, float]]:
    """The four sides of a ``width`` x ``height`` arena as wall segments."""
    return [
        (0.0, 0.0, width, 0.0),
        (width, 0.0, width, height),
        (width, height, 0.0, height),
        (0.0, height, 0.0, 0.0),
    ]


def segment_distance(px: float, py: float, wall: np.ndarray) -> float:
    """Euclidean distance from point (px, py) to the segment ``wall`` = (x1, y1, x2, y2)."""
    x1, y1, x2, y2 = (float(v) for v in wall)
    ex, ey = x2 - x1, y2 - y1
    t = ((px - x1) * ex + (py - y1) * ey) / (ex * ex + ey * ey)
    t = min(1.0, max(0.0, t))
    return math.hypot(px - (x1 + t * ex), py - (y1 + t * ey))


def wall_within(walls: np.ndarray, x: float, y: float, clearance: float) -> int | None:
    """Index of the first wall of ``walls`` (n, 4) closer than ``clearance`` to (x, y), or
    None: the rule a maze's start and goal must keep."""
    for k, wall in enumerate(walls):
        if segment_distance(x, y, wall) < clearance:
            return k
    return None


class _Reader:
    """Reads one file's entries; every error names the file and the entry."""

    def __init__(self, where: str) -> None:
        self.where = where

    def fail(self, entry: str, rule: str) -> TaskError:
        return TaskError(f"maze file {self.where}: entry '{entry}': {rule}")

    def number(self, value: Any, entry: str) -> float:
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.fail(entry, f"must be a number, not {type(value).__name__}")
        if not math.isfinite(value):
            raise self.fail(entry, f"must be finite, not {value}")
        return float(value)

    def table(self, data: dict[str, Any], name: str) -> dict[str, float]:
        if name not in data:
            raise self.fail(name, "missing")
        section = data[name]
        if not isinstance(section, dict):
            raise self.fail(name, f"must be a table, not {type(section).__name__}")
        keys = TABLES[name]
        for key in section:
            if key not in keys:
                raise self.fail(f"{name}.{key}", f"unknown key (allowed: {', '.join(keys)})")
        for key in keys:
            if key not in section:
                raise self.fail(f"{name}.{key}", "missing")
        return {key: self.number(section[key], f"{name}.{key}") for key in keys}

    def point(self, value: Any, entry: str) -> tuple[float, float]:
        if not isinstance(value, list) or len(value) != 2:
            raise self.fail(entry, "must be a list of two numbers [x, y]")
        return self.number(value[0], entry), self.number(value[1], entry)


def parse_maze(text: str, where: str, clearance: float) -> Maze:
    """Parse and validate maze file text (``where`` names it in errors); see module doc."""
    read = _Reader(where)
    data = parse_toml(text, f"maze file {where}", TaskError)
    for key in data:
        if key not in KEYS:
            raise read.fail(key, f"unknown key (allowed: {', '.join(sorted(KEYS))})")
    if "steps" not in data:
        raise read.fail("steps", "missing")
    steps = data["steps"]
    if isinstance(steps, bool) or not isinstance(steps, int) or not 1 <= steps <= MAX_STEPS:
        raise read.fail("steps", f"must be an integer >= 1 and <= {MAX_STEPS:,}, not {steps!r}")
    bounds = read.table(data, "bounds")
    width, height = bounds["width"], bounds["height"]
    for key in ("width", "height"):
        if not 0 < bounds[key] <= MAX_SIDE:
            raise read.fail(
                f"bounds.{key}", f"must be above 0 and at most {MAX_SIDE:,g}, not {bounds[key]}"
            )
    start = read.table(data, "start")
    if not -MAX_HEADING <= start["heading"] <= MAX_HEADING:
        raise read.fail(
            "start.heading",
            f"must lie within -{MAX_HEADING:g}..{MAX_HEADING:g} degrees, not {start['heading']}",
        )
    goal = read.table(data, "goal")
    if "walls" not in data:
        raise read.fail("walls", "missing (write walls = [] for none)")
    if not isinstance(data["walls"], list):
        raise read.fail("walls", "must be an array of tables")
    if len(data["walls"]) > MAX_WALLS:
        raise read.fail("walls", f"{len(data['walls']):,} walls, more than {MAX_WALLS:,}")
    segments = []
    for k, wall in enumerate(data["walls"]):
        entry = f"walls[{k}]"
        if not isinstance(wall, dict) or set(wall) != {"from", "to"}:
            raise read.fail(entry, "must be a table with exactly the keys 'from' and 'to'")
        a = read.point(wall["from"], f"{entry}.from")
        b = read.point(wall["to"], f"{entry}.to")
        if a == b:
            raise read.fail(entry, "has zero length")
        for end, (x, y) in (("from", a), ("to", b)):
            if not (0.0 <= x <= width and 0.0 <= y <= height):
                raise read.fail(f"{entry}.{end}", f"({x}, {y}) lies outside the bounds")
        segments.append((*a, *b))
    walls = np.array(segments + arena_sides(width, height), dtype=np.float64).reshape(-1, 4)
    for name, place in (("start", start), ("goal", goal)):
        x, y = place["x"], place["y"]
        if not (0.0 <= x <= width and 0.0 <= y <= height):
            raise read.fail(name, f"({x}, {y}) lies outside the bounds")
        k = wall_within(walls, x, y, clearance)
        if k is not None:
            what = f"walls[{k}]" if k < len(segments) else "a side of the arena"
            raise read.fail(
                name, f"({x}, {y}) lies within {clearance:g} (the robot's radius) of {what}"
            )
    return Maze(
        name=where,
        width=width,
        height=height,
        walls=walls,
        start=(start["x"], start["y"], start["heading"]),
        goal=(goal["x"], goal["y"]),
        steps=steps,
    )


def load_maze(path: str | os.PathLike[str], clearance: float) -> Maze:
    """Load and validate the maze file at ``path`` (see :func:`parse_maze`); errors name
    the file as given."""
    where = os.fspath(path)
    return parse_maze(read_text(path, f"maze file {where}", TaskError), where, clearance)

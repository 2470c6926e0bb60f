"""Maze files: each rule of the format (tasks/maze/mazefile.py) is enforced with one line
naming the file, the entry and the rule; the shipped mazes load."""

from __future__ import annotations

import math

import pytest

from neuroyard.core.errors import TaskError
from neuroyard.tasks.maze import load_maze, parse_maze, shipped_maze
from neuroyard.tasks.maze.robot import RADIUS

GOOD = """
steps = 400
[bounds]
width = 200.0
height = 100.0
[start]
x = 20.0
y = 20.0
heading = 0
[goal]
x = 180.0
y = 80.0
[[walls]]
from = [100.0, 0.0]
to = [100.0, 60.0]
"""


def test_a_valid_file_loads_with_its_sides_added():
    maze = parse_maze(GOOD, "good.toml", RADIUS)
    assert maze.steps == 400 and maze.start == (20.0, 20.0, 0.0) and maze.goal == (180.0, 80.0)
    assert maze.walls.shape == (5, 4)  # one wall and the four sides
    assert maze.diagonal == pytest.approx(math.hypot(200, 100))


@pytest.mark.parametrize("name", ["open", "medium", "hard"])
def test_shipped_mazes_load(name):
    assert load_maze(shipped_maze(name), RADIUS).steps == 400


BROKEN = [
    ("missing key", GOOD.replace("steps = 400\n", ""), "'steps': missing"),
    ("missing table key", GOOD.replace("y = 80.0\n", ""), "'goal.y': missing"),
    ("unknown key", "colour = 1\n" + GOOD, "'colour': unknown key"),
    ("wall key", GOOD + "width = 1\n", "'walls[0]': must be a table with exactly"),
    ("wrong type", GOOD.replace("width = 200.0", 'width = "wide"'), "must be a number, not str"),
    ("boolean", GOOD.replace("heading = 0", "heading = true"), "must be a number, not bool"),
    ("not finite", GOOD.replace("x = 180.0", "x = nan"), "'goal.x': must be finite"),
    ("infinite", GOOD.replace("height = 100.0", "height = inf"), "must be finite, not inf"),
    ("steps", GOOD.replace("steps = 400", "steps = 0"), "'steps': must be an integer >= 1"),
    ("bounds", GOOD.replace("width = 200.0", "width = -1.0"), "must be above 0"),
    ("zero length", GOOD.replace("to = [100.0, 60.0]", "to = [100.0, 0.0]"), "zero length"),
    ("wall outside", GOOD.replace("to = [100.0, 60.0]", "to = [100.0, 160.0]"), "outside"),
    ("bad point", GOOD.replace("to = [100.0, 60.0]", "to = [100.0]"), "two numbers"),
    ("start outside", GOOD.replace("x = 20.0", "x = 220.0"), "'start': (220.0, 20.0) lies out"),
    ("start in wall", GOOD.replace("x = 20.0", "x = 95.0"), "within 8 (the robot's radius) of "
     "walls[0]"),
    ("goal at a side", GOOD.replace("y = 80.0", "y = 97.0"), "'goal': (180.0, 97.0) lies within"),
    ("no walls", GOOD.split("[[walls]]")[0], "'walls': missing"),
    ("not toml", "steps = = 4", "not valid TOML"),
]  # fmt: skip


@pytest.mark.parametrize(("rule", "text", "message"), BROKEN, ids=[b[0] for b in BROKEN])
def test_each_broken_rule_is_one_line_naming_file_and_entry(rule, text, message):
    with pytest.raises(TaskError) as caught:
        parse_maze(text, "mine.toml", RADIUS)
    line = str(caught.value)
    assert line.startswith("maze file mine.toml: ") and "\n" not in line
    assert message in line


def test_an_unreadable_file_is_named(tmp_path):
    missing = tmp_path / "none.toml"
    with pytest.raises(TaskError, match="none.toml: cannot read it"):
        load_maze(missing, RADIUS)

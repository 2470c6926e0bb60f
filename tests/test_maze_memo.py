"""The memo of maze figures on disk (tasks/maze/memo.py) and the light import of the tasks.

The reference of every figure check is a fresh measurement: ``deception.measure`` of the
maze, and for ``maze-gen-v3`` the candidate that ``generate.nearest_candidate`` picks by
measuring all of them. A figure read from the memo must equal it bit for bit (compared as
``float.hex``); a memo that is corrupt, cannot be written or was written by other code must
give the fresh figures. The import checks look at ``sys.modules`` of a fresh interpreter,
and at numba's own record of what it compiled or loaded (``Dispatcher.signatures``).
"""

from __future__ import annotations

import dataclasses
import json
import os
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import pytest

from neuroyard import tasks
from neuroyard.core import jsonsafe
from neuroyard.tasks.maze import generate, load_maze, memo, parse_maze, shipped_maze
from neuroyard.tasks.maze.deception import Deception, measure
from neuroyard.tasks.maze.generate import candidate, generated_maze, nearest_candidate
from neuroyard.tasks.maze.mazefile import Maze
from neuroyard.tasks.maze.robot import RADIUS
from neuroyard.tasks.maze.tasks import GOAL_RADIUS

SHIPPED = ("open", "medium", "hard")
# (size, seed, deception asked) of maze-gen-v3: the default, the ends of both ranges
GENERATED = ((200.0, 0, 0.15), (250.0, 7, 0.4), (160.0, 11, 0.0), (300.0, 2, 1.0))
CUT_IN_TWO = """
steps = 400
[bounds]
width = 200.0
height = 200.0
[start]
x = 30.0
y = 30.0
heading = 90.0
[goal]
x = 170.0
y = 170.0
[[walls]]
from = [100.0, 0.0]
to = [100.0, 200.0]
"""


def _bits(figures: Deception) -> tuple:
    """The figures with every float as its exact bits."""
    return tuple(v.hex() if type(v) is float else v for v in dataclasses.astuple(figures))


def _shipped(name: str) -> Maze:
    return load_maze(shipped_maze(name), RADIUS)


def _fresh(maze: Maze) -> Deception:
    return measure(maze, RADIUS, GOAL_RADIUS)


def _fresh_generated(size: float, seed: int, asked: float) -> tuple[Maze, Deception]:
    maze = candidate(size, seed, nearest_candidate(size, seed, asked, RADIUS, GOAL_RADIUS))
    return maze, _fresh(maze)


def _same_maze(a: Maze, b: Maze) -> bool:
    return (a.name, a.start, a.goal, a.width, a.height, a.steps) == (
        b.name, b.start, b.goal, b.width, b.height, b.steps
    ) and np.array_equal(a.walls, b.walls)  # fmt: skip


@pytest.fixture
def cache(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Iterator[Path]:
    """A memo folder of the test's own (not yet made); maze-gen-v3 forgets what this
    process chose before, so that it asks the memo."""
    folder = tmp_path / "cache"
    monkeypatch.setenv("NEUROYARD_CACHE_DIR", str(folder))
    generated_maze.cache_clear()
    yield folder
    generated_maze.cache_clear()


def _refuse_measuring(monkeypatch: pytest.MonkeyPatch) -> None:
    """From now on a figure can only come from the memo: measuring fails the test."""

    def refuse(*args: object) -> Deception:
        raise AssertionError("measured instead of read from the memo")

    monkeypatch.setattr(memo, "measure", refuse)
    monkeypatch.setattr(generate, "measure", refuse)
    generated_maze.cache_clear()


def _entries(folder: Path) -> dict:
    return jsonsafe.loads((folder / memo.FILE_NAME).read_bytes())


# --- read back: the fresh figures, bit for bit --------------------------------------------


@pytest.mark.parametrize("name", SHIPPED)
def test_a_shipped_maze_reads_back_its_fresh_figures(cache, monkeypatch, name):
    fresh = _fresh(_shipped(name))
    assert _bits(memo.measured(_shipped(name), RADIUS, GOAL_RADIUS)) == _bits(fresh)
    assert len(_entries(cache)) == 1
    _refuse_measuring(monkeypatch)
    assert _bits(memo.measured(_shipped(name), RADIUS, GOAL_RADIUS)) == _bits(fresh)


def test_an_unsolvable_maze_reads_back_its_infinite_detour(cache, monkeypatch):
    maze = parse_maze(CUT_IN_TWO, "cut in two", RADIUS)
    fresh = _fresh(maze)
    assert not fresh.solvable and fresh.detour == float("inf")
    memo.measured(maze, RADIUS, GOAL_RADIUS)
    json.loads((cache / memo.FILE_NAME).read_text(), parse_constant=pytest.fail)  # strict JSON
    _refuse_measuring(monkeypatch)
    assert _bits(memo.measured(maze, RADIUS, GOAL_RADIUS)) == _bits(fresh)


@pytest.mark.parametrize(("size", "seed", "asked"), GENERATED)
def test_a_generated_maze_reads_back_its_fresh_choice_and_figures(
    cache, monkeypatch, size, seed, asked
):
    fresh_maze, fresh = _fresh_generated(size, seed, asked)
    maze, figures = generated_maze(size, seed, asked, RADIUS, GOAL_RADIUS)
    assert _same_maze(maze, fresh_maze) and _bits(figures) == _bits(fresh)
    assert len(_entries(cache)) == 2  # the choice and the chosen maze's figures
    _refuse_measuring(monkeypatch)
    maze, figures = generated_maze(size, seed, asked, RADIUS, GOAL_RADIUS)
    assert _same_maze(maze, fresh_maze) and _bits(figures) == _bits(fresh)


def test_task_specs_are_the_same_from_the_memo(cache, monkeypatch):
    ids = [f"maze-{name}" for name in ("open-v1", "medium-v1", "hard-v3", "gen-v3")]
    measured = [tasks.make(task_id).spec for task_id in ids]
    _refuse_measuring(monkeypatch)
    assert [tasks.make(task_id).spec for task_id in ids] == measured


# --- a memo that cannot be used gives the fresh figures ----------------------------------


@pytest.mark.parametrize(
    "content",
    [b"", b"{not json", b"[1, 2]", b"\xff\xfe\x00", b'{"a": {"non_finite_numbers": {"x": []}}}'],
)
def test_a_corrupt_memo_file_gives_the_fresh_figures_and_is_rewritten(cache, content):
    cache.mkdir()
    (cache / memo.FILE_NAME).write_bytes(content)
    maze = _shipped("hard")
    assert _bits(memo.measured(maze, RADIUS, GOAL_RADIUS)) == _bits(_fresh(maze))
    assert len(_entries(cache)) == 1


FIGURES_OF_THE_WRONG_FORM = [
    None,
    0.15,
    [0.15],
    "0.15",
    {"deception": "0.15"},
    {"deception": 0.15, "trap_share": 0.5, "start_trap": 0.2, "detour": 2.0, "solvable": 1,
     "free_cells": 100},  # an int where a bool belongs
    {"deception": 0.15, "trap_share": 0.5, "start_trap": 0.2, "detour": 2.0, "solvable": True,
     "free_cells": 100.0},  # a float where an int belongs
    {"deception": 0.15, "trap_share": 0.5, "start_trap": 0.2, "detour": 2.0, "solvable": True,
     "free_cells": 100, "more": 1},
]  # fmt: skip


@pytest.mark.parametrize("entry", FIGURES_OF_THE_WRONG_FORM)
def test_figures_of_the_wrong_form_are_measured_again(cache, entry):
    maze = _shipped("medium")
    memo.measured(maze, RADIUS, GOAL_RADIUS)
    spoilt = {key: entry for key in _entries(cache)}
    (cache / memo.FILE_NAME).write_text(jsonsafe.dumps(spoilt))
    assert _bits(memo.measured(maze, RADIUS, GOAL_RADIUS)) == _bits(_fresh(maze))


@pytest.mark.parametrize("choice", [None, -1, generate.CANDIDATES, True, 3.0, "3", [3]])
def test_a_choice_of_the_wrong_form_is_made_again(cache, choice):
    size, seed, asked = GENERATED[1]
    generated_maze(size, seed, asked, RADIUS, GOAL_RADIUS)
    spoilt = {
        key: choice if type(value) is int else value for key, value in _entries(cache).items()
    }
    (cache / memo.FILE_NAME).write_text(jsonsafe.dumps(spoilt))
    generated_maze.cache_clear()
    fresh_maze, fresh = _fresh_generated(size, seed, asked)
    maze, figures = generated_maze(size, seed, asked, RADIUS, GOAL_RADIUS)
    assert _same_maze(maze, fresh_maze) and _bits(figures) == _bits(fresh)


def test_an_unwritable_cache_folder_gives_the_fresh_figures(tmp_path, monkeypatch):
    (tmp_path / "a file").write_text("")
    monkeypatch.setenv("NEUROYARD_CACHE_DIR", str(tmp_path / "a file" / "cache"))
    generated_maze.cache_clear()
    maze = _shipped("hard")
    assert _bits(memo.measured(maze, RADIUS, GOAL_RADIUS)) == _bits(_fresh(maze))
    size, seed, asked = GENERATED[0]
    fresh_maze, fresh = _fresh_generated(size, seed, asked)
    maze, figures = generated_maze(size, seed, asked, RADIUS, GOAL_RADIUS)
    assert _same_maze(maze, fresh_maze) and _bits(figures) == _bits(fresh)
    generated_maze.cache_clear()


def test_a_memo_file_that_cannot_be_replaced_leaves_no_temporary_file(cache):
    (cache / memo.FILE_NAME).mkdir(parents=True)  # a folder where the file belongs
    maze = _shipped("open")
    assert _bits(memo.measured(maze, RADIUS, GOAL_RADIUS)) == _bits(_fresh(maze))
    assert [p.name for p in cache.iterdir()] == [memo.FILE_NAME]


def _other_code(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, module: str) -> None:
    """Make the memo see the source of ``module`` (of the maze family) changed by one
    comment line, as another version of the code would be."""
    changed = tmp_path / "other" / f"{module}.py"
    changed.parent.mkdir(exist_ok=True)
    changed.write_bytes((memo.HERE / f"{module}.py").read_bytes() + b"# changed\n")
    sources = tuple(changed if p.name == changed.name else p for p in memo.SOURCES)
    assert sources != memo.SOURCES
    monkeypatch.setattr(memo, "SOURCES", sources)


def test_figures_written_by_other_code_are_not_read(cache, tmp_path):
    maze = _shipped("hard")
    fresh = _fresh(maze)
    wrong = dataclasses.replace(fresh, deception=fresh.deception / 2)
    with pytest.MonkeyPatch.context() as other:
        _other_code(tmp_path, other, "deception")
        other.setattr(memo, "measure", lambda *args: wrong)
        assert memo.measured(maze, RADIUS, GOAL_RADIUS) == wrong
    assert len(_entries(cache)) == 1  # the other code's entry is there ...
    assert _bits(memo.measured(maze, RADIUS, GOAL_RADIUS)) == _bits(fresh)  # ... and unread
    assert len(_entries(cache)) == 2


def test_a_choice_written_by_other_code_is_not_read(cache, tmp_path):
    size, seed, asked = GENERATED[0]
    fresh_maze, fresh = _fresh_generated(size, seed, asked)
    k = nearest_candidate(size, seed, asked, RADIUS, GOAL_RADIUS)
    with pytest.MonkeyPatch.context() as other:
        _other_code(tmp_path, other, "generate")
        other.setattr(generate, "nearest_candidate", lambda *args: (k + 1) % generate.CANDIDATES)
        assert not _same_maze(generated_maze(size, seed, asked, RADIUS, GOAL_RADIUS)[0], fresh_maze)
    generated_maze.cache_clear()
    maze, figures = generated_maze(size, seed, asked, RADIUS, GOAL_RADIUS)
    assert _same_maze(maze, fresh_maze) and _bits(figures) == _bits(fresh)


def test_the_oldest_entries_are_dropped_first(cache, monkeypatch):
    monkeypatch.setattr(memo, "MAX_ENTRIES", 2)
    for k in range(3):
        memo.keep("test", [k], k)
    assert sorted(_entries(cache).values()) == [1, 2]
    assert memo.recall("test", [0]) is None and memo.recall("test", [2]) == 2


# --- where the memo lives ----------------------------------------------------------------


def test_the_cache_folder_setting_is_honoured(cache):
    memo.measured(_shipped("open"), RADIUS, GOAL_RADIUS)
    assert memo.cache_folder() == cache
    assert (cache / memo.FILE_NAME).is_file()


def test_the_cache_folder_falls_back_to_xdg_then_home(tmp_path, monkeypatch):
    monkeypatch.setenv("NEUROYARD_CACHE_DIR", "")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert memo.cache_folder() == tmp_path / "xdg" / "neuroyard"
    monkeypatch.delenv("XDG_CACHE_HOME")
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    assert memo.cache_folder() == tmp_path / "home" / ".cache" / "neuroyard"


# --- fresh interpreters: what importing and listing the tasks load -----------------------


def _python(code: str, cache: Path) -> list[str]:
    env = {**os.environ, "NEUROYARD_CACHE_DIR": str(cache)}
    out = subprocess.run(
        [sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True
    )
    return json.loads(out.stdout)


HEAVY = ("gymnasium", "scipy", "matplotlib")
IMPORT_CHECK = f"""
import json, sys
import numba  # numba itself imports scipy's top-level package
before = set(sys.modules)
import neuroyard.tasks
loaded = sorted(m for m in set(sys.modules) - before if m.split(".")[0] in {HEAVY!r})
neuroyard.tasks.make("gym-env-v1", env="CartPole-v1")  # the control: building one loads it
print(json.dumps([loaded, "gymnasium" in sys.modules]))
"""


def test_importing_the_tasks_loads_no_gymnasium_scipy_or_matplotlib(cache):
    loaded, gymnasium_after_building = _python(IMPORT_CHECK, cache)
    assert loaded == []
    assert gymnasium_after_building


DISPATCH_CHECK = """
import json, sys
from numba.core.dispatcher import Dispatcher
import neuroyard.tasks
neuroyard.tasks.specs()
print(json.dumps(sorted(
    f"{name}.{attribute}"
    for name, module in list(sys.modules.items()) if name.startswith("neuroyard")
    for attribute, value in vars(module).items()
    if isinstance(value, Dispatcher) and value.signatures
)))
"""


def test_listing_the_tasks_with_a_warm_memo_runs_no_numba_function(cache):
    cold = _python(DISPATCH_CHECK, cache)  # the control: measuring dispatches the kernels
    assert "neuroyard.tasks.maze.deception._free_grid" in cold
    assert _python(DISPATCH_CHECK, cache) == []

"""A memo on disk of measured maze figures, so that a process that builds a maze task (a
listing of the tasks) reads the figures instead of measuring them (measuring is what loads
numba's compiler and scipy: most of a second).

Contract:

* What is kept: the :class:`~.deception.Deception` figures of a maze for a robot radius and
  a goal radius (:func:`measured`), and any other value a module of the maze family keeps
  with :func:`keep` (``maze-gen-v3``'s choice of candidate, :mod:`.generate`). Each is a
  deterministic function of its inputs and of the code that computes it.
* Key of an entry: the SHA-256 of its kind, its inputs (for a maze: walls, start, goal,
  width, height and steps; not its name) and the code digest: the SHA-256 of the source
  bytes of :data:`SOURCES` and of the versions of Python, numpy, numba and scipy (whose
  arithmetic and random streams the figures rest on). Any change to one of them makes
  every entry written before unreachable.
* Where: the JSON file :data:`FILE_NAME` in :func:`cache_folder`. It holds at most
  :data:`MAX_ENTRIES` entries; the oldest are dropped first.
* Reading: a missing, unreadable or corrupt file, and an entry of the wrong form, read as
  absent: the caller computes the value.
* Writing: a new file beside the old one, then ``os.replace``, so a reader never sees half a
  file; two processes writing at once may lose one's entry (it is computed again later).
  A failure to write is ignored: the memo is only an optimisation, never an error.
* Values read back are bit for bit the values written: JSON keeps a Python float's shortest
  repr, which reads back as the same float, and the non-finite ``detour`` of an unsolvable
  maze goes through :mod:`neuroyard.core.jsonsafe`.
"""

from __future__ import annotations

import hashlib
import json
import os
import sys
import tempfile
from collections.abc import Sequence
from dataclasses import asdict, fields
from functools import lru_cache
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path
from typing import Any

import numba
import numpy as np

from neuroyard.core import jsonsafe

from .deception import Deception, measure
from .mazefile import Maze

FILE_NAME = "maze-figures.json"
MAX_ENTRIES = 512  # ours: some 130 KB of JSON, read in a few milliseconds
FIGURES = "deception figures"
HERE = Path(__file__).parent
# the modules whose code computes the kept values (this one: how they are written and read)
SOURCES = tuple(
    HERE / f"{name}.py" for name in ("deception", "generate", "robot", "mazefile", "memo")
)
_TYPES = {"float": float, "bool": bool, "int": int}
_FIGURE_TYPES = {f.name: _TYPES.get(f.type) for f in fields(Deception)}  # f.type: its name


def cache_folder() -> Path:
    """The folder of the memo: ``$NEUROYARD_CACHE_DIR`` when set, else
    ``$XDG_CACHE_HOME/neuroyard``, else ``~/.cache/neuroyard`` (``RuntimeError`` when
    there is no home folder either)."""
    if os.environ.get("NEUROYARD_CACHE_DIR"):
        return Path(os.environ["NEUROYARD_CACHE_DIR"])
    xdg = os.environ.get("XDG_CACHE_HOME")
    return (Path(xdg) if xdg else Path.home() / ".cache") / "neuroyard"


def _memo_file() -> Path | None:
    """The memo's file, or None when there is no cache folder."""
    try:
        return cache_folder() / FILE_NAME
    except RuntimeError:
        return None


@lru_cache(maxsize=4)
def _digest_of(sources: tuple[Path, ...]) -> str | None:
    """The code digest of ``sources`` (module docstring); None when one cannot be read."""
    digest = hashlib.sha256()
    try:
        scipy_version = version("scipy")
    except PackageNotFoundError:
        scipy_version = "none"
    for name in (sys.version, np.__version__, numba.__version__, scipy_version):
        digest.update(name.encode() + b"\0")
    try:
        for path in sources:
            digest.update(path.read_bytes() + b"\0")
    except OSError:
        return None
    return digest.hexdigest()


def _key(kind: str, inputs: Sequence[Any]) -> str | None:
    """The key of an entry (module docstring); None when the code digest is unknown."""
    code = _digest_of(SOURCES)
    if code is None:
        return None
    text = json.dumps([code, kind, list(inputs)], allow_nan=False, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()


def _entries(path: Path) -> dict[str, Any]:
    """The entries of the memo file at ``path``; none when it is missing or corrupt."""
    try:
        found = jsonsafe.loads(path.read_bytes())
    except (OSError, ValueError, TypeError, RecursionError):  # TypeError: a malformed note
        return {}
    return found if isinstance(found, dict) else {}


def recall(kind: str, inputs: Sequence[Any]) -> Any:
    """The value kept for ``kind`` and ``inputs`` (JSON numbers, strings and lists of them),
    or None."""
    key, path = _key(kind, inputs), _memo_file()
    return None if key is None or path is None else _entries(path).get(key)


def keep(kind: str, inputs: Sequence[Any], value: Any) -> None:
    """Keep ``value`` (anything :mod:`~neuroyard.core.jsonsafe` writes) for ``kind`` and
    ``inputs``, if the memo can be written."""
    key, path = _key(kind, inputs), _memo_file()
    if key is None or path is None:
        return
    entries = _entries(path)
    entries.pop(key, None)  # re-kept: now the newest
    entries[key] = value
    newest = dict(list(entries.items())[-MAX_ENTRIES:])
    temporary = None
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        with tempfile.NamedTemporaryFile(
            "w", encoding="utf-8", dir=path.parent, prefix=f".{FILE_NAME}.", delete=False
        ) as out:
            temporary = Path(out.name)
            out.write(jsonsafe.dumps(newest))
        os.replace(temporary, path)
    except OSError:
        if temporary is not None:
            temporary.unlink(missing_ok=True)


def _maze_inputs(maze: Maze, radius: float, goal_radius: float) -> list[Any]:
    """What a maze's figures depend on, as JSON values (a float64 exactly as a float)."""
    return [
        maze.walls.tolist(),
        [float(v) for v in maze.start],
        [float(v) for v in maze.goal],
        float(maze.width),
        float(maze.height),
        int(maze.steps),
        float(radius),
        float(goal_radius),
    ]


def _figures(entry: Any) -> Deception | None:
    """The figures an entry holds, or None when it is not of their form."""
    if not isinstance(entry, dict) or set(entry) != set(_FIGURE_TYPES):
        return None
    if any(type(entry[name]) is not kind for name, kind in _FIGURE_TYPES.items()):
        return None
    return Deception(**entry)


def measured(maze: Maze, radius: float, goal_radius: float) -> Deception:
    """:func:`~.deception.measure` of ``maze`` for ``radius`` and ``goal_radius``: from the
    memo when it holds them, else measured now and kept."""
    inputs = _maze_inputs(maze, radius, goal_radius)
    figures = _figures(recall(FIGURES, inputs))
    if figures is None:
        figures = measure(maze, radius, goal_radius)
        keep(FIGURES, inputs, asdict(figures))
    return figures

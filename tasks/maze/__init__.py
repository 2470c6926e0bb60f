"""Maze navigation (Lehman & Stanley 2011 robot, mazes of ours).

Importing this package registers ``maze-open-v1``, ``maze-medium-v1`` and ``maze-hard-v3``.
"""

from .mazefile import Maze, load_maze, parse_maze
from .robot import run_episode, sense
from .tasks import HardMaze, MazeTask, MediumMaze, OpenMaze, shipped_maze

__all__ = [
    "HardMaze",
    "Maze",
    "MazeTask",
    "MediumMaze",
    "OpenMaze",
    "load_maze",
    "parse_maze",
    "run_episode",
    "sense",
    "shipped_maze",
]

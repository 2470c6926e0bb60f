"""The suite keeps the user's cache folder untouched: building a maze task writes the memo of
maze figures (neuroyard.tasks.maze.memo) into ``$NEUROYARD_CACHE_DIR``, here a temporary
folder of the session (set before collection, so that subprocesses inherit it).

Tests that run a program from outside Python (chromium, node, cc) are marked
``needs_tool``; :mod:`external_tools` skips them where the program is missing."""

import os
import shutil
import tempfile

import pytest

pytest_plugins = ["external_tools"]


def pytest_configure(config: pytest.Config) -> None:
    os.environ["NEUROYARD_CACHE_DIR"] = tempfile.mkdtemp(prefix="neuroyard-test-cache-")


def pytest_unconfigure(config: pytest.Config) -> None:
    shutil.rmtree(os.environ.pop("NEUROYARD_CACHE_DIR"), ignore_errors=True)

"""The layering of the house: the import-linter contract in pyproject.toml holds, and it
catches an upward import (checked on a scratch copy of the packages); no import cycles.

Outside reference: import-linter and grimp (the general-purpose architecture linter and
its import graph), run on the project's sources in the layout a regular install has
(:mod:`lint_layers`)."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

from lint_layers import installed_layout, lint

CYCLES = """
import json, grimp
graph = grimp.build_graph("neuroyard")
cycles = []
for module in sorted(graph.modules):
    for imported in graph.find_modules_directly_imported_by(module):
        if graph.chain_exists(imported, module):
            cycles.append(" -> ".join((module, *graph.find_shortest_chain(imported, module))))
print(json.dumps(cycles))
"""


def test_the_layer_contract_holds(tmp_path: Path) -> None:
    result = lint(installed_layout(tmp_path))
    assert result.returncode == 0, result.stdout + result.stderr
    assert "1 kept, 0 broken" in result.stdout


def test_an_upward_import_breaks_the_contract(tmp_path: Path) -> None:
    source = installed_layout(tmp_path)
    base = source / "neuroyard" / "tasks" / "base.py"
    base.write_text(base.read_text() + "\nfrom neuroyard.records import store  # upward\n")
    result = lint(source)
    assert result.returncode == 1, result.stdout + result.stderr
    assert "neuroyard.tasks is not allowed to import neuroyard.records" in result.stdout
    assert "neuroyard.tasks.base -> neuroyard.records.store" in result.stdout


def test_no_import_cycles(tmp_path: Path) -> None:
    source = installed_layout(tmp_path)
    env = {**os.environ, "PYTHONPATH": str(source)}
    found = subprocess.run(
        [sys.executable, "-c", CYCLES], env=env, cwd=source, capture_output=True, text=True
    )
    assert found.returncode == 0, found.stderr
    assert json.loads(found.stdout) == []

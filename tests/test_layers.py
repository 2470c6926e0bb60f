"""The layering of the house: the import-linter contract in pyproject.toml holds, and it
catches an upward import (checked on a scratch copy of the packages); no import cycles.

Outside reference: import-linter and grimp (the general-purpose architecture linter and
its import graph), run on the project's sources."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tomllib
from pathlib import Path

import grimp

ROOT = Path(__file__).resolve().parents[1]
PACKAGES = ("harness", "tasks", "reference")
LINT = Path(sys.executable).with_name("lint-imports")


def _lint(cwd: Path, pythonpath: Path | None = None) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    if pythonpath is not None:
        env["PYTHONPATH"] = str(pythonpath)
    return subprocess.run(
        [str(LINT), "--no-cache"], cwd=cwd, env=env, capture_output=True, text=True, timeout=300
    )


def test_the_layer_contract_holds() -> None:
    result = _lint(ROOT)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "1 kept, 0 broken" in result.stdout


def test_an_upward_import_breaks_the_contract(tmp_path) -> None:
    scratch = tmp_path / "src" / "neuroyard"  # the installed layout: neuroyard.<folder>
    for package in PACKAGES:
        shutil.copytree(
            ROOT / package, scratch / package, ignore=shutil.ignore_patterns("__pycache__")
        )
    base = scratch / "tasks" / "base.py"
    base.write_text(base.read_text() + "\nfrom neuroyard.harness.records import store  # upward\n")
    table = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["importlinter"]
    (tmp_path / ".importlinter").write_text(_ini(table))
    result = _lint(tmp_path, pythonpath=tmp_path / "src")
    assert result.returncode == 1, result.stdout + result.stderr
    assert "neuroyard.tasks is not allowed to import neuroyard.harness.records" in result.stdout
    assert "neuroyard.tasks.base -> neuroyard.harness.records.store" in result.stdout


def _ini(table: dict) -> str:
    """The pyproject table as import-linter's INI form (the scratch tree has no pyproject)."""
    lines = ["[importlinter]", "root_packages =", *(f"    {p}" for p in table["root_packages"])]
    for contract in table["contracts"]:
        lines += [
            f"[importlinter:contract:{contract['id']}]",
            f"name = {contract['name']}",
            f"type = {contract['type']}",
            "layers =",
        ]
        lines += [f"    {layer}" for layer in contract["layers"]]
    return "\n".join(lines) + "\n"


def test_no_import_cycles() -> None:
    graph = grimp.build_graph("neuroyard.harness", "neuroyard.tasks", "neuroyard.reference")
    cycles = []
    for module in sorted(graph.modules):
        for imported in graph.find_modules_directly_imported_by(module):
            if graph.chain_exists(imported, module):
                chain = graph.find_shortest_chain(imported, module)
                cycles.append(" -> ".join((module, *chain)))
    assert cycles == []

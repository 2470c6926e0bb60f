"""Check the layer contract of pyproject.toml with import-linter, on the installed layout.

The package ``neuroyard`` is the folder ``harness/``, with ``neuroyard.tasks`` in ``tasks/``
and ``neuroyard.reference`` in ``reference/``. An editable install maps the three folders
onto one package, but import-linter (grimp) finds a package's modules by walking the folder
of its top-level package, so it would see ``harness/`` alone. This script copies the three
folders into the layout a regular install has (``neuroyard/``, ``neuroyard/tasks/``,
``neuroyard/reference/``) in a temporary folder and runs ``lint-imports`` there.

Run: ``python tests/lint_layers.py`` (exit status and output are import-linter's). CI runs
it (``.ci/run``); ``tests/test_layers.py`` uses the same layout.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
LINT = Path(sys.executable).with_name("lint-imports")
# repository folder -> place in the installed package
FOLDERS = {"harness": ".", "tasks": "tasks", "reference": "reference"}


def installed_layout(dest: Path, root: Path = ROOT) -> Path:
    """Copy the sources under ``root`` into ``dest/neuroyard`` as a regular install lays them
    out (Python files only); returns ``dest``, the folder to put on PYTHONPATH."""
    package = dest / "neuroyard"
    for folder, place in FOLDERS.items():
        shutil.copytree(
            root / folder,
            package / place,
            ignore=shutil.ignore_patterns("__pycache__", "*.nb[ic]", "*.toml", "*.png"),
            dirs_exist_ok=True,
        )
    return dest


def lint(source: Path, config: Path = ROOT / "pyproject.toml") -> subprocess.CompletedProcess:
    """``lint-imports`` with ``config``'s contract (copied beside the installed layout at
    ``source``, where import-linter looks for it) over that layout."""
    shutil.copyfile(config, source / "pyproject.toml")
    env = {**os.environ, "PYTHONPATH": str(source)}
    return subprocess.run(
        [str(LINT), "--no-cache"],
        cwd=source,
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
    )


def main() -> int:
    with tempfile.TemporaryDirectory(prefix="neuroyard-layers-") as folder:
        result = lint(installed_layout(Path(folder)))
    sys.stdout.write(result.stdout)
    sys.stderr.write(result.stderr)
    return result.returncode


if __name__ == "__main__":
    sys.exit(main())

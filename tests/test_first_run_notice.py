"""A first campaign on a machine says, in one line on stderr, that it compiles numba's
kernels once, before it does; later campaigns load them and say nothing (issue 34: "before
loading kernels the CLI says so on stderr, one line, with what is happening and that it
happens once per machine"). The machine's cold cache is a fresh ``NUMBA_CACHE_DIR``.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from neuroyard.execution.kernels import COMPILING

NEUROYARD = str(Path(sys.executable).with_name("neuroyard"))
LINE = COMPILING.format(tasks="xor-v2")


def _run(tmp_path: Path, cache: Path, store: str) -> subprocess.CompletedProcess:
    return subprocess.run(
        [NEUROYARD, "run", "--evolver", "rwg", "--task", "xor-v2", "--runs", "1",
         "--budget", "200", "--store", str(tmp_path / store)],
        env={**os.environ, "NUMBA_CACHE_DIR": str(cache)}, cwd=tmp_path,
        capture_output=True, text=True, check=True,
    )  # fmt: skip


def test_a_cold_cache_is_announced_once_before_compiling_and_a_warm_one_not(tmp_path):
    cache = tmp_path / "numba-cache"
    cold = _run(tmp_path, cache, "a.db")
    lines = cold.stderr.splitlines()
    assert lines.count(LINE) == 1, cold.stderr
    assert lines[0] == LINE  # before anything else the campaign says
    assert "once" in LINE and "cache" in LINE
    assert LINE not in cold.stdout
    warm = _run(tmp_path, cache, "b.db")
    assert LINE not in warm.stderr, warm.stderr

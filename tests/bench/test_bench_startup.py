"""How fast the command line starts (issue 32 acceptance). Run with:

    pytest -m bench --benchmark-enable tests/bench/test_bench_startup.py \
        --benchmark-json=results/benchmarks/startup_speed.json

Each command runs as a fresh process, ``ROUNDS`` times, the commands taking turns round by
round, side by side with the interpreter's own start (``python -c pass``) in the same run;
the figures are medians of the wall time of the whole process. One round before the timed
ones warms the caches (numba's kernels, the maze figures memo) and is not counted.
Targets (issue 32): ``neuroyard --help`` at most 0.3 s above the interpreter's start;
``neuroyard tasks`` (which builds every task at its defaults) at most 1.0 s in all, with
warm caches.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

import pytest

pytestmark = pytest.mark.bench

ROUNDS = 15
NEUROYARD = str(Path(sys.executable).with_name("neuroyard"))
COMMANDS = {
    "python -c pass": [sys.executable, "-c", "pass"],
    "python -c 'import neuroyard'": [sys.executable, "-c", "import neuroyard"],
    "neuroyard --help": [NEUROYARD, "--help"],
    "neuroyard evolvers": [NEUROYARD, "evolvers"],
    "neuroyard tasks": [NEUROYARD, "tasks"],
}
HELP_ABOVE_PYTHON = 0.3  # s (issue 32)
TASKS_TOTAL = 1.0  # s (issue 32)


def _seconds(argv: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run(argv, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - start


def test_bench_the_command_line_starts_at_once(benchmark) -> None:
    for argv in COMMANDS.values():  # warm-up round, not counted
        _seconds(argv)
    times: dict[str, list[float]] = {name: [] for name in COMMANDS}
    for _ in range(ROUNDS):
        for name, argv in COMMANDS.items():
            times[name].append(_seconds(argv))
    median = {name: statistics.median(values) for name, values in times.items()}
    if not benchmark.disabled:  # the help alone, for pytest-benchmark's table
        benchmark.pedantic(_seconds, args=(COMMANDS["neuroyard --help"],), rounds=5)
    benchmark.extra_info.update(
        {
            "rounds": ROUNDS,
            "median_s": median,
            "min_s": {name: min(v) for name, v in times.items()},
            "max_s": {name: max(v) for name, v in times.items()},
            "help_above_python_s": median["neuroyard --help"] - median["python -c pass"],
            "targets_s": {"help_above_python": HELP_ABOVE_PYTHON, "tasks_total": TASKS_TOTAL},
        }
    )
    for name, value in median.items():
        print(f"{name:32} median {value:.3f} s")
    assert median["neuroyard --help"] - median["python -c pass"] <= HELP_ABOVE_PYTHON
    assert median["neuroyard tasks"] <= TASKS_TOTAL

"""Measure the kernel speed workloads and write ``results/benchmarks/kernel_speed.json``.

    python tests/bench/kernel_speed.py

For each workload of :mod:`kernel_workloads` (the same ones the pytest benchmark runs):
median wall time and median CPU time of this process, for the numba kernels and for the
plain-Python reference, timed in interleaved rounds, and their ratios. Then the time a second process with a warm numba
cache takes from start to its first evaluation. Prints a table; the JSON file keeps the
medians, the raw warm-start samples, the targets and the machine they were measured on.
"""

from __future__ import annotations

import json
import statistics
import time
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import kernel_workloads as workloads
from tabulate import tabulate

WARM_START_REPEATS = 5
OUTPUT = Path(__file__).resolve().parents[2] / "results" / "benchmarks" / "kernel_speed.json"


def measure(work: workloads.Workload) -> dict[str, Any]:
    """Medians of both forms of one workload, in seconds, and the speed ratios."""
    work.check()
    row: dict[str, Any] = {
        "description": work.description,
        "kernel_repeats": work.kernel_repeats,
        "reference_repeats": work.reference_repeats,
    }
    for clock, timer in (("wall", time.perf_counter), ("cpu", time.process_time)):
        result = workloads.compare(work, timer)
        row[f"kernel_{clock}_median_s"] = result.kernel_s
        row[f"reference_{clock}_median_s"] = result.reference_s
        row[f"ratio_{clock}"] = result.ratio
    row["ratio_target"] = work.ratio_target
    if work.ratio_target is not None:
        row["target_met"] = row["ratio_wall"] >= work.ratio_target
    return row


def main() -> None:
    results: dict[str, Any] = {
        "measured_at": datetime.now(UTC).isoformat(timespec="seconds"),
        "machine": workloads.machine_info(),
        "workloads": {name: measure(build()) for name, build in workloads.WORKLOADS.items()},
    }
    samples = workloads.warm_start(WARM_START_REPEATS)
    median = statistics.median(x.wall_s for x in samples)
    results["warm_start"] = {
        "description": "wall seconds from spawning a second python process to its first "
        "XOR evaluation done, numba cache warmed by an earlier process; cpu: CPU seconds "
        "that process used until then",
        "wall_samples_s": [x.wall_s for x in samples],
        "cpu_samples_s": [x.cpu_s for x in samples],
        "median_s": median,
        "cpu_median_s": statistics.median(x.cpu_s for x in samples),
        "target_s": workloads.WARM_START_TARGET_S,
        "target_met": median < workloads.WARM_START_TARGET_S,
    }
    results["machine"]["load_average_1min_after"] = workloads.machine_info()["load_average_1min"]
    OUTPUT.write_text(json.dumps(results, indent=2) + "\n")

    table = [
        [
            name,
            f"{row['kernel_wall_median_s'] * 1e3:.2f}",
            f"{row['reference_wall_median_s'] * 1e3:.1f}",
            f"{row['ratio_wall']:.1f}x",
            f"{row['ratio_cpu']:.1f}x",
            "" if row["ratio_target"] is None else f">= {row['ratio_target']:g}x",
        ]
        for name, row in results["workloads"].items()
    ]
    headers = ["workload", "kernel ms", "plain Python ms", "ratio", "ratio (CPU time)", "target"]
    print(tabulate(table, headers=headers))
    print(
        f"\nsecond process, start to first evaluation (warm cache): median {median:.3f} s "
        f"(target < {workloads.WARM_START_TARGET_S:g} s), "
        f"CPU time {results['warm_start']['cpu_median_s']:.3f} s"
    )
    print(f"written to {OUTPUT}")


if __name__ == "__main__":
    main()

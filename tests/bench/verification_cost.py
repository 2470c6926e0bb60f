"""What the coordinator's re-verification of solved claims costs: NEAT campaigns with and
without it, in turns, in one process.

Run with:

    .venv/bin/python tests/bench/verification_cost.py [--pairs N] [--workers W]
        [TASK=RUNS ...]

(defaults: 3 pairs, 2 workers, ``xor-v2=20``). A standalone script, not a pytest test.

What is measured: the wall seconds of each campaign (reference NEAT, campaign seed 1, the
pool executor, a fresh store each time), the side without re-verification being the same
campaign whose coordinator stores what the workers send unchecked
(:func:`neuroyard.execution.campaign.execute` with ``verified`` replaced by the identity);
and, on the side with it, the seconds spent inside
:func:`neuroyard.execution.verification.verified` per task: its sum, and the first
(which loads the task's kernels in this process) and the median of the others. The sides
alternate (with, without; then without, with; ...). The time inside ``verified`` is the
steady figure; campaign wall times move with whatever else the machine is doing.
"""

from __future__ import annotations

import argparse
import statistics
import tempfile
import time
from pathlib import Path

from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution import campaign
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.executors import make_executor
from neuroyard.execution.verification import verified
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pairs", type=int, default=3)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("tasks", nargs="*", default=["xor-v2=20"], metavar="TASK=RUNS")
    args = parser.parse_args()
    plans = []
    for text in args.tasks:
        task, _, runs = text.partition("=")
        plans.append(CampaignPlan([EvolverSpec("neat", {})], [TaskChoice(task)], int(runs), 1))
    spent: list[tuple[str, float]] = []

    def timed(record: RunRecord, key: str) -> RunRecord:
        start = time.perf_counter()
        out = verified(record, key)
        spent.append((record.task, time.perf_counter() - start))
        return out

    walls: dict[str, list[float]] = {"with": [], "without": []}
    for k in range(args.pairs):
        for side in ("with", "without") if k % 2 == 0 else ("without", "with"):
            campaign.verified = timed if side == "with" else (lambda record, key: record)
            spent.clear()
            with tempfile.TemporaryDirectory() as folder, ResultStore(Path(folder) / "s.db") as s:
                start = time.perf_counter()
                for plan in plans:
                    execute(plan, s, make_executor("pool", args.workers), progress=False)
                walls[side].append(time.perf_counter() - start)
            line = f"pair {k} {side}: {walls[side][-1]:.2f} s"
            by_task: dict[str, list[float]] = {}
            for task, seconds in spent:
                by_task.setdefault(task, []).append(seconds)
            for task, times in by_task.items():
                rest = statistics.median(times[1:]) * 1000 if len(times) > 1 else float("nan")
                line += (
                    f"; {task}: {len(times)} solved, {sum(times):.3f} s in verified(), "
                    f"first {times[0] * 1000:.1f} ms, median of the others {rest:.2f} ms"
                )
            print(line, flush=True)
    campaign.verified = verified
    for side, times in walls.items():
        print(f"{side}: median {statistics.median(times):.2f} s of {[round(t, 2) for t in times]}")
    ratios = [a / b for a, b in zip(walls["with"], walls["without"], strict=True)]
    print(f"pair ratios with/without: {[round(r, 3) for r in ratios]}")


if __name__ == "__main__":
    main()

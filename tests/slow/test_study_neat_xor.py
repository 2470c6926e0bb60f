"""Study: reproduce the NEAT XOR figures (Stanley & Miikkulainen 2002, sec. 4.2).

Run it (about 2-5 minutes on 2 cores) with::

    python -m pytest -m slow tests/slow/test_study_neat_xor.py

It runs 100 XOR runs of the reference NEAT at population 150 on 2 worker processes into a
fresh store ``results/neat_xor/xor.db`` (the same as ``neuroyard run --evolver neat --task
xor-v2 --runs 100 --seed 1 --workers 2 --param population_size=150 --store
results/neat_xor/xor.db``), writes ``results/neat_xor/summary.json`` and
``results/neat_xor/README.md`` from the measured records, and then checks the acceptance
bands of issue 3. The bands are centred on the published figure read from
``reference/figures/logic.toml``; the tolerances are the project's (issue 3):
- every run solves, as in the paper (runs - failures of the figure);
- mean evaluations within +-25% of the published mean;
- mean hidden nodes within the published mean +-1 node, and mean enabled connections
  within the published mean +-2.5 connections, bounds rounded to the nearest half.
"""

from __future__ import annotations

import json
import math
import os
import time
from pathlib import Path

import pytest

from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.supervisor import Supervisor
from neuroyard.records.store import ResultStore
from neuroyard.reference.published import figures_for
from neuroyard.reports import renderers, report

OUT = Path(__file__).resolve().parents[2] / "results" / "neat_xor"
RUNS, SEED, WORKERS, POPULATION = 100, 1, 2, 150
EVALUATION_TOLERANCE = 0.25  # relative, issue 3
HIDDEN_TOLERANCE = 1.0  # nodes, issue 3
CONNECTION_TOLERANCE = 2.5  # enabled connections, issue 3


def _half(x: float) -> float:
    return math.floor(x * 2 + 0.5) / 2


def acceptance_bands() -> dict[str, tuple[float, float]]:
    """(low, high) per metric, from the published NEAT XOR figure (paper sec. 4.2)."""
    (fig,) = [f for f in figures_for("xor-v2", "NEAT") if "mean_evaluations" in f.values]
    assert fig.may_gate and fig.protocol == {"evolver.population_size": POPULATION}
    v = fig.values
    solved = v["runs"] - v["failures"]
    return {
        "solved": (solved, v["runs"]),
        "mean_evaluations": (
            v["mean_evaluations"] * (1 - EVALUATION_TOLERANCE),
            v["mean_evaluations"] * (1 + EVALUATION_TOLERANCE),
        ),
        "mean_hidden_nodes": (
            _half(v["mean_hidden_nodes"] - HIDDEN_TOLERANCE),
            _half(v["mean_hidden_nodes"] + HIDDEN_TOLERANCE),
        ),
        "mean_connections": (
            _half(v["mean_connections"] - CONNECTION_TOLERANCE),
            _half(v["mean_connections"] + CONNECTION_TOLERANCE),
        ),
    }


def run_study() -> dict:
    """Run the campaign into a fresh store and write summary.json and README.md."""
    OUT.mkdir(parents=True, exist_ok=True)
    store_path = OUT / "xor.db"
    store_path.unlink(missing_ok=True)  # a fresh store, so the wall time covers all runs
    plan = CampaignPlan(
        [EvolverSpec("neat", {"population_size": POPULATION})],
        [TaskChoice("xor-v2")],
        runs=RUNS,
        seed=SEED,
    )
    load_before = os.getloadavg()[0]
    start = time.perf_counter()
    with ResultStore(store_path) as store:
        execute(plan, store, Supervisor(WORKERS), progress=False)
        wall = time.perf_counter() - start
        records = list(store.records(with_log=False))
    (row,) = report.build(records)
    s = row.summary
    evolver_s = math.fsum(r.timing["evolver"] for r in records)
    harness_s = math.fsum(r.timing["harness"] for r in records)
    kernel_load_s = math.fsum(r.timing.get("kernel_load", 0.0) for r in records)
    measured = {
        "solved": s.solved,
        "mean_evaluations": s.mean_evaluations,
        "mean_hidden_nodes": s.mean_hidden_nodes,
        "mean_connections": s.mean_connections,
    }
    bands = acceptance_bands()
    summary = {
        "study": "NEAT on xor-v2, 100 runs at population 150 (paper sec. 4.2)",
        "command": "pytest -m slow tests/slow/test_study_neat_xor.py",
        "runs": s.runs,
        "seed": SEED,
        "workers": WORKERS,
        "measured": {
            "solved": s.solved,
            "mean_evaluations": s.mean_evaluations,
            "sd_evaluations": s.sd_evaluations,
            "median_evaluations": s.median_evaluations,
            "worst_evaluations": s.worst_evaluations,
            "mean_generations": s.mean_generations,
            "mean_hidden_nodes": s.mean_hidden_nodes,
            "sd_hidden_nodes": s.sd_hidden_nodes,
            "mean_connections": s.mean_connections,
            "sd_connections": s.sd_connections,
        },
        "acceptance": {
            k: {"low": lo, "high": hi, "measured": measured[k], "pass": lo <= measured[k] <= hi}
            for k, (lo, hi) in bands.items()
        },
        "timing": {
            "study_wall_seconds": wall,
            "run_seconds_total": math.fsum(r.timing["wall"] for r in records),
            "evolver_seconds_total": evolver_s,
            "harness_seconds_total": harness_s,
            "kernel_load_seconds_total": kernel_load_s,
            "harness_share": harness_s / (harness_s + evolver_s),
            "harness_share_with_kernel_load": (harness_s + kernel_load_s)
            / (harness_s + kernel_load_s + evolver_s),
            # other processes on the machine inflate both shares alike; record how busy it was
            "load_average_1min_before": load_before,
            "load_average_1min_after": os.getloadavg()[0],
        },
        "evolver_settings": row.evolver_settings,
        "report": row.to_json(),
    }
    (OUT / "summary.json").write_text(json.dumps(summary, indent=2, default=str) + "\n")
    (OUT / "README.md").write_text(_markdown(summary, renderers.render([row], "markdown")))
    return summary


def _markdown(summary: dict, table: str) -> str:
    t = summary["timing"]
    lines = [
        "# NEAT on XOR: reproduction of Stanley & Miikkulainen (2002), sec. 4.2",
        "",
        f"Written by `{summary['command']}` (seed {summary['seed']}, "
        f"{summary['workers']} worker processes). Do not edit by hand.",
        "",
        table,
        "",
        "### Acceptance bands (issue 3; centred on the published figure)",
        "",
        "| metric | low | high | measured | pass |",
        "|---|---|---|---|---|",
    ]
    for k, a in summary["acceptance"].items():
        lines.append(f"| {k} | {a['low']:g} | {a['high']:g} | {a['measured']:.4g} | {a['pass']} |")
    lines += [
        "",
        "### Time",
        "",
        f"- study wall time on {summary['workers']} workers: {t['study_wall_seconds']:.1f} s",
        f"- sum of run wall times: {t['run_seconds_total']:.1f} s, of which evolver "
        f"{t['evolver_seconds_total']:.1f} s and harness (validate, compile, evaluate, "
        f"bookkeeping) {t['harness_seconds_total']:.1f} s: harness share "
        f"{t['harness_share']:.1%}",
        f"- loading the numba kernels, once per worker process before its first run: "
        f"{t['kernel_load_seconds_total']:.1f} s in all; counted as harness time the share "
        f"would be {t['harness_share_with_kernel_load']:.1%}",
        f"- machine load (1-minute average) before / after: "
        f"{t['load_average_1min_before']:.1f} / {t['load_average_1min_after']:.1f} "
        f"(on {os.cpu_count()} cores; other work on the machine slows both parts)",
        "",
    ]
    return "\n".join(lines)


@pytest.mark.slow
def test_neat_reproduces_published_xor_figures():
    summary = run_study()
    failed = {k: a for k, a in summary["acceptance"].items() if not a["pass"]}
    assert not failed, f"outside the acceptance bands: {failed}"

"""The example evolvers in other languages beside the Python ones, on XOR (issue 18):

    pytest -m slow tests/slow/test_study_other_languages.py -s

``es-node`` (JavaScript, reference/other_languages/es.js) and the C one (es.c, compiled
into ``build/es`` by the command of reference/README.md and run as ``process:build/es`` from the
repository's root, so the evolver's name in the store holds no machine's path), both a
(1 + lambda) strategy with lambda 10 and 3 hidden nodes, beside the Python
``hill-climber`` with the same settings and the reference NEAT: 20 runs each on xor-v2,
budget 10,000 evaluations, campaign seed 1, in one store. Writes
``results/other_languages/xor.sqlite`` and the report ``xor.md`` and ``xor.html``.
"""

from __future__ import annotations

import subprocess
from pathlib import Path

import pytest

from neuroyard.cli.main import main
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.supervisor import Supervisor
from neuroyard.records.store import ResultStore
from neuroyard.reports import report
from neuroyard.reports.renderers import render

pytestmark = pytest.mark.slow

ROOT = Path(__file__).resolve().parents[2]
OUT = ROOT / "results" / "other_languages"
RUNS, BUDGET, WORKERS = 20, 10_000, 2
EVOLVERS = [
    EvolverSpec("es-node", {}),
    EvolverSpec("process:build/es", {}),
    EvolverSpec("hill-climber", {"offspring": 10, "hidden": 3}),
    EvolverSpec("neat", {}),
]


@pytest.mark.needs_tool("node", "cc")
def test_other_languages_beside_python_on_xor(monkeypatch) -> None:
    monkeypatch.chdir(ROOT)
    (ROOT / "build").mkdir(exist_ok=True)
    subprocess.run(
        ["cc", "-O2", "-std=c99", "-o", "build/es", "reference/other_languages/es.c", "-lm"],
        check=True,
    )
    OUT.mkdir(parents=True, exist_ok=True)
    store_path = OUT / "xor.sqlite"
    store_path.unlink(missing_ok=True)
    plan = CampaignPlan(EVOLVERS, [TaskChoice("xor-v2")], RUNS, 1, BUDGET)
    with ResultStore(store_path) as store:
        outcome = execute(plan, store, Supervisor(WORKERS), progress=False)
        records = list(store.records(with_log=True))
    assert outcome.done == len(EVOLVERS) * RUNS and outcome.internal_errors == 0
    for fmt, name in (("markdown", "xor.md"), ("html", "xor.html")):
        assert (
            main(["report", "--store", str(store_path), "--format", fmt, "-o", str(OUT / name)])
            == 0
        )
    print(render(report.build(records), "text"))
    solved = {e.name: sum(r.solved for r in records if r.evolver == e.name) for e in EVOLVERS}
    print(solved)
    assert all(r.status != "failed" for r in records)
    assert solved["es-node"] > 0 and solved["process:build/es"] > 0

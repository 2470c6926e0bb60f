"""The library's front door, used as a researcher uses it: tests/notebook/campaign.py,
written like a notebook, defines an evolver class inline (neither installed nor
registered), runs a two-task campaign with ``neuroyard.run`` on two forked workers, reads
the runs and generations tables (pandas) and compares with ``neuroyard.compare``. The
same campaign through the command line must give the same records, apart from timing and
host.

Outside reference: the runs themselves are checked by the harness's own tests; here the
reference is the other interface (CLI against API) and pandas reading the tables."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import neuroyard

HERE = Path(__file__).resolve().parent
NOTEBOOK = HERE / "notebook" / "campaign.py"
NEUROYARD = Path(sys.executable).with_name("neuroyard")
CLI_CAMPAIGN = [
    "run", "--evolver", "rwg", "--evolver", "campaign:InlineEvolver",
    "--task", "xor-v2", "--task", "parity-v2", "--runs", "3", "--seed", "5",
    "--budget", "600", "--workers", "2", "--quiet",
    "--param", "campaign:InlineEvolver:batch=12", "--param", "rwg:batch_size=30",
]  # fmt: skip


def _comparable(record: neuroyard.RunRecord) -> dict:
    doc = record.to_dict()
    del doc["timing"], doc["host"]
    return doc


def test_a_notebook_campaign_matches_the_same_campaign_on_the_command_line(tmp_path) -> None:
    api_store, cli_store = tmp_path / "notebook.db", tmp_path / "cli.db"
    ran = subprocess.run(
        [sys.executable, str(NOTEBOOK), str(api_store)],
        cwd=tmp_path, capture_output=True, text=True, timeout=600,
    )  # fmt: skip
    assert ran.returncode == 0, ran.stderr
    found = json.loads(ran.stdout)
    assert found["done"] == found["runs"] == 2 * 2 * 3
    assert found["evolvers"] == ["campaign:InlineEvolver", "rwg"]
    assert found["tasks"] == ["parity-v2", "xor-v2"]
    assert found["generations"] == found["logged_generations"] > 0
    assert found["stat_is_best_so_far"]  # the evolver's stats() reached its own column
    assert {"config.batch", "setting.bits", "run_key", "evaluations"} <= set(found["run_columns"])
    assert found["compared_tasks"] == ["parity-v2", "xor-v2"] and found["verdicts"]

    env = {**os.environ, "PYTHONPATH": str(NOTEBOOK.parent)}
    cli = subprocess.run(
        [str(NEUROYARD), *CLI_CAMPAIGN, "--store", str(cli_store)],
        cwd=tmp_path, env=env, capture_output=True, text=True, timeout=600,
    )  # fmt: skip
    assert cli.returncode == 0, cli.stderr

    api_records = neuroyard.open_store(api_store).records(with_log=True)
    cli_records = neuroyard.open_store(cli_store).records(with_log=True)
    assert len(api_records) == len(cli_records) == 12
    assert [_comparable(r) for r in api_records] == [_comparable(r) for r in cli_records]

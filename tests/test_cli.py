"""The command line: the acceptance campaign, report keys, export, one-line errors."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from neuroyard.cli.main import main
from neuroyard.core.network import Connection, Network, Node, dumps

REPORT_KEYS = {
    "evolver",
    "task",
    "runs",
    "solved",
    "success_rate",
    "mean_evaluations",
    "median_evaluations",
    "mean_generations",
    "mean_hidden_nodes",
    "mean_connections",
}


def run_cli(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_two_stores_same_campaign_identical_exports(tmp_path, capsys):
    # issue 2 acceptance: same campaign into a.db and b.db, identical records but wall time and host
    exports = []
    for name in ("a.db", "b.db"):
        store = str(tmp_path / name)
        code, _, err = run_cli(
            capsys,
            "run",
            "--evolver",
            "rwg",
            "--task",
            "xor-v2",
            "--runs",
            "20",
            "--seed",
            "1",
            "--store",
            store,
            "--quiet",
        )
        assert code == 0, err
        code, out, _ = run_cli(capsys, "export", "--store", store, "--format", "jsonl")
        assert code == 0
        lines = [json.loads(line) for line in out.splitlines()]
        assert len(lines) == 20
        for line in lines:
            assert {"seed", "solved", "evaluations", "generations", "best_network", "log"} <= set(
                line
            )
            assert line["solved"] == (line["status"] == "solved")
            line.pop("timing"), line.pop("host")
        exports.append(lines)
    assert exports[0] == exports[1]


def test_report_json_keys_and_text(tmp_path, capsys):
    store = str(tmp_path / "r.db")
    assert (
        run_cli(
            capsys,
            "run",
            "--evolver",
            "rwg",
            "--task",
            "xor-v2",
            "--task",
            "parity-v2",
            "--runs",
            "3",
            "--budget",
            "2000",
            "--store",
            store,
        )[0]
        == 0
    )
    code, out, _ = run_cli(capsys, "report", "--store", store, "--format", "json")
    rows = json.loads(out)
    assert code == 0 and len(rows) == 2
    for row in rows:
        assert set(row) >= REPORT_KEYS
        assert row["runs"] == 3 and 0 <= row["success_rate"] <= 1
    code, out, _ = run_cli(capsys, "report", "--store", store, "--format", "markdown")
    assert code == 0 and "| rwg" in out


def test_tasks_listing(capsys):
    code, out, _ = run_cli(capsys, "tasks", "--format", "json")
    tasks = {t["id"]: t for t in json.loads(out)}
    assert code == 0
    assert tasks["xor-v2"]["inputs"] == 2 and tasks["xor-v2"]["outputs"] == 1
    assert any("Stanley" in s for s in tasks["xor-v2"]["sources"])
    code, out, _ = run_cli(capsys, "tasks")
    assert "parity-v2" in out and "solved:" in out


def test_evaluate_a_network_file(tmp_path, capsys):
    nodes = (
        Node(0, "input"),
        Node(1, "input"),
        Node(2, "bias"),
        Node(3, "hidden", "neat_sigmoid"),
        Node(4, "output", "neat_sigmoid"),
    )
    conns = (
        Connection(0, 3, 2.0),
        Connection(1, 3, 2.0),
        Connection(2, 3, -3.0),
        Connection(0, 4, 2.0),
        Connection(1, 4, 2.0),
        Connection(2, 4, -1.0),
        Connection(3, 4, -4.0),
    )
    path = tmp_path / "xor.json"
    path.write_text(dumps(Network(nodes, conns)))
    code, out, _ = run_cli(capsys, "evaluate", str(path), "--task", "xor-v2")
    result = json.loads(out)
    assert code == 0 and result["solved"] is True and result["hidden_nodes"] == 1


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["run", "--task", "nope-v1", "--runs", "1"], "unknown task 'nope-v1'"),
        (["run", "--evolver", "nope", "--runs", "1"], "unknown evolver 'nope'"),
        (["run", "--runs", "zero"], "argument --runs: expected a whole number, got 'zero'"),
        (["run", "--runs", "0"], "argument --runs: must be at least 1"),
        (
            ["run", "--setting", "bits=x", "--task", "parity-v2"],
            "task parity-v2: setting 'bits' must be a whole number, got 'x'",
        ),
        (
            ["run", "--param", "batch_size=0", "--evolver", "rwg"],
            "evolver rwg: option 'batch_size' must be >= 1, got 0",
        ),
        (
            ["run", "--param", "hidden=abc", "--evolver", "rwg"],
            "evolver rwg: option 'hidden' must be a whole number, got 'abc'",
        ),
        (
            ["run", "--param", "sigma=-1", "--evolver", "hill-climber"],
            "evolver hill-climber: option 'sigma' must be > 0, got -1.0",
        ),
        (
            ["run", "--param", "offspring=2.5", "--evolver", "hill-climber"],
            "evolver hill-climber: option 'offspring' must be a whole number, got 2.5",
        ),
        (
            ["run", "--param", "population_size=x", "--evolver", "neat"],
            "evolver neat: option 'population_size' must be a whole number, got 'x'",
        ),
        (["run", "--task", "xor-v1"], "task 'xor-v1' is retired, use 'xor-v2'"),
        (
            ["run", "--time-limit", "-1"],
            "argument --time-limit: must be at least 0 (no limit), got -1",
        ),
        (
            ["run", "--memory-limit", "lots"],
            "argument --memory-limit: expected a whole number, got 'lots'",
        ),
        (["run", "--max-batch", "0"], "argument --max-batch: must be at least 1"),
        (
            ["report", "--store", "/nonexistent/x.db"],
            "results store /nonexistent/x.db: no such file",
        ),
        (
            ["report", "--format", "pdf"],
            "unknown report format 'pdf' (known: html, json, markdown, text)",
        ),
        (
            ["evaluate", "missing.json", "--task", "xor-v2"],
            "network file missing.json: cannot read it",
        ),
        (["frobnicate"], "invalid choice: 'frobnicate'"),
    ],
)
def test_errors_are_one_line_without_traceback(tmp_path, monkeypatch, capsys, argv, message):
    monkeypatch.chdir(tmp_path)
    code, out, err = run_cli(capsys, *argv)
    assert code == 2
    assert err.count("\n") == 1 and err.startswith("neuroyard: error: ")
    assert message in err


def test_invalid_network_file_error_names_the_offender(tmp_path, capsys):
    path = tmp_path / "bad.json"
    doc = {
        "mode": "feedforward",
        "nodes": [
            {"id": 0, "kind": "input"},
            {"id": 1, "kind": "input"},
            {"id": 2, "kind": "output", "activation": "sigmoid"},
        ],
        "connections": [{"source": 0, "target": 7, "weight": 1.0}],
    }
    path.write_text(json.dumps(doc))
    code, _, err = run_cli(capsys, "evaluate", str(path), "--task", "xor-v2")
    assert code == 2 and "connection 0 (0 -> 7): target node 7 does not exist" in err
    path.write_text("{not json")
    code, _, err = run_cli(capsys, "evaluate", str(path), "--task", "xor-v2")
    assert code == 2 and "not valid JSON" in err and err.count("\n") == 1


def test_console_script_entry_point_runs(tmp_path):
    out = subprocess.run(
        [sys.executable, "-m", "neuroyard.cli.main", "tasks"],
        capture_output=True,
        text=True,
        check=True,
        cwd=tmp_path,
    )
    assert "xor-v2" in out.stdout

"""The pole replay: trace of a known controller, PNG written, ``neuroyard replay``."""

from __future__ import annotations

import json

import numpy as np

from neuroyard.cli.main import main
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.core.network import dumps, fully_connected
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.records.store import ResultStore
from neuroyard.tasks.pole.controllers import lqr_gains, state_feedback_network
from neuroyard.tasks.pole.replay import trace
from neuroyard.tasks.registry import make


def test_trace_and_plot_of_a_balancing_controller(tmp_path) -> None:
    task = make("pole2-markov-v1")
    network = state_feedback_network(task, lqr_gains(task, [1, 1, 100, 1, 100, 1]))
    states = trace(task, network, 500)
    assert states.shape == (501, 6)
    assert states[0, 2] == task.settings["start_angle"]
    assert np.abs(states[-1, 2]) < np.abs(states[0, 2])  # the controller rights the pole
    path = tmp_path / "net.json"
    path.write_text(dumps(network))
    out = tmp_path / "replay.png"
    assert main(["replay", "--network", str(path), "--steps", "500", "--out", str(out)]) == 0
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_command_line_reports_a_missing_file(tmp_path, capsys) -> None:
    missing = tmp_path / "none.json"
    assert main(["replay", "--network", str(missing), "--out", str(tmp_path / "x.png")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "none.json" in err
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({"nodes": "x"}))
    assert main(["replay", "--network", str(bad), "--out", str(tmp_path / "x.png")]) == 2
    assert "bad.json" in capsys.readouterr().err
    nowhere = tmp_path / "no-such-folder" / "x.png"
    good = tmp_path / "good.json"
    task = make("pole2-markov-v1")
    good.write_text(dumps(state_feedback_network(task, lqr_gains(task, [1, 1, 100, 1, 100, 1]))))
    assert main(["replay", "--network", str(good), "--steps", "10", "--out", str(nowhere)]) == 2
    assert "no-such-folder" in capsys.readouterr().err


def test_a_task_without_a_picture_says_so(tmp_path, capsys) -> None:
    path = tmp_path / "net.json"
    path.write_text(dumps(fully_connected(2, 1)))
    args = ["replay", "--network", str(path), "--task", "xor-v2", "--out", str(tmp_path / "x.png")]
    assert main(args) == 2
    assert "task xor-v2 has no replay" in capsys.readouterr().err


def test_replay_of_a_stored_run(tmp_path) -> None:
    store = tmp_path / "runs.db"
    plan = CampaignPlan([EvolverSpec("hill-climber", {})], [TaskChoice("pole2-markov-v1")], 1, 1,
                        200)  # fmt: skip
    with ResultStore(store) as results:
        execute(plan, results, progress=False)
    store.chmod(0o444)  # the replay only reads the store
    out = tmp_path / "replay.png"
    assert (
        main(["replay", "--store", str(store), "--run", "0", "--steps", "200", "--out", str(out)])
        == 0
    )
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

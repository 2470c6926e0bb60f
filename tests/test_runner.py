"""Runner: harness-owned counting, the exact budget, seeds, broken evolvers."""

from __future__ import annotations

from pathlib import Path

import pytest

from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution import seeds
from neuroyard.execution.campaign import plan_run
from neuroyard.execution.kernels import load_kernels
from neuroyard.execution.runner import run_one
from neuroyard.tasks import make
from neuroyard.tasks.base import SuccessCheck
from neuroyard.tasks.logic import Xor

HERE = Path(__file__).parent


@pytest.fixture(autouse=True)
def _plugins_importable(monkeypatch):
    monkeypatch.syspath_prepend(str(HERE))


@pytest.fixture
def counted_xor(monkeypatch):
    """Count every fitness evaluation the XOR task makes, independently of the runner.

    The runner's once-per-process kernel warm-up (before the run, not part of it) is done
    before counting starts."""
    load_kernels(make("xor-v2"))
    calls = {"evaluate": 0, "success": 0}
    evaluate, success = Xor.evaluate_batch, Xor.success_test

    def counting_evaluate(self, batch):
        results = evaluate(self, batch)
        calls["evaluate"] += len(results)
        return results

    def counting_success(self, net, evaluation):
        calls["success"] += 1
        return success(self, net, evaluation)

    monkeypatch.setattr(Xor, "evaluate_batch", counting_evaluate)
    monkeypatch.setattr(Xor, "success_test", counting_success)
    return calls


def spec(name, budget=None, run_index=0, seed=1, **config):
    return plan_run(EvolverSpec(name, config), "xor-v2", run_index, seed, budget)


def test_budget_is_exact_and_every_evaluation_counted(counted_xor):
    # batches of 7 against a budget of 20: 7 + 7 + 6, never an evaluation past the budget
    record = run_one(spec("plugins_for_tests:Constant", budget=20, batch=7))
    assert record.status == "unsolved"
    assert record.evaluations == 20 == counted_xor["evaluate"]
    assert record.generations == 3
    assert [g.evaluations for g in record.log] == [7, 14, 20]
    # one success test per generation, counted apart; the 7 networks tie on fitness and come
    # back unchanged, so each generation tests the next one not tested yet
    assert record.success_evaluations == 3 == counted_xor["success"]
    assert [g.champion_test["rank"] for g in record.log] == [0, 1, 2]


def test_tell_gets_every_batch_and_stats_are_read_after_it():
    # budget 20 in batches of 7: the last batch is cut to 6, and tell() gets those 6
    from plugins_for_tests import Constant

    Constant.outcomes.clear()
    record = run_one(spec("plugins_for_tests:Constant", budget=20, batch=7))
    assert [g.stats for g in record.log] == [
        {"asked": 7.0, "told": 7.0, "tells": 1.0},
        {"asked": 14.0, "told": 14.0, "tells": 2.0},
        {"asked": 21.0, "told": 20.0, "tells": 3.0},
    ]
    (outcome,) = Constant.outcomes
    assert (outcome.status, outcome.generations, outcome.evaluations) == ("unsolved", 3, 20)
    assert outcome.failure is None


def test_the_solving_batch_is_told_and_stop_gets_the_outcome(monkeypatch):
    from plugins_for_tests import Constant

    load_kernels(make("xor-v2"))
    monkeypatch.setattr(Xor, "success_test", lambda self, net, ev: SuccessCheck(True, 1))
    Constant.outcomes.clear()
    record = run_one(spec("plugins_for_tests:Constant", budget=100, batch=3))
    assert record.status == "solved" and record.generations == 1
    assert record.log[0].stats == {"asked": 3.0, "told": 3.0, "tells": 1.0}
    assert [o.status for o in Constant.outcomes] == ["solved"]


def test_a_network_is_success_tested_at_most_once_per_run(counted_xor):
    # two networks asked again and again: generations 0 and 1 test them, generation 2 none
    record = run_one(spec("plugins_for_tests:Constant", budget=6, batch=2))
    assert record.generations == 3
    assert record.success_evaluations == 2 == counted_xor["success"]
    assert record.log[2].champion_test == {}


def test_the_solution_is_the_network_that_passed_even_below_the_fittest(monkeypatch):
    # two networks asked again and again; the test fails the first network tested and
    # passes any other. Generation 0 tests the fittest, generation 1 the other one, which
    # passes: it is the recorded solution, with its rank
    load_kernels(make("xor-v2"))
    tested: list[float] = []

    def success(self, net, evaluation):
        tested.append(float(net.in_w[0]))
        return SuccessCheck(tested[-1] != tested[0], 1, {"weight": tested[-1]})

    monkeypatch.setattr(Xor, "success_test", success)
    record = run_one(spec("plugins_for_tests:Constant", budget=100, batch=2))
    assert record.status == "solved" and record.generations == 2
    assert len(tested) == 2 and tested[0] != tested[1]
    assert [g.champion_test for g in record.log] == [
        {"rank": 0, "weight": tested[0]},
        {"rank": 1, "weight": tested[1]},
    ]
    assert record.best_network["connections"][0]["weight"] == tested[1]
    assert record.success_details == {"rank": 1, "weight": tested[1]}


def test_solved_run_stops_at_the_solving_generation(counted_xor):
    record = run_one(spec("rwg", budget=100_000, batch_size=50))
    assert record.status == "solved"
    assert record.evaluations == 50 * record.generations == counted_xor["evaluate"]
    assert record.log[-1].evaluations == record.evaluations
    assert record.best_network is not None
    assert record.hidden_nodes == 2 and record.connections == 9


def test_log_and_versions_are_recorded():
    record = run_one(spec("hill-climber", budget=200))
    assert len(record.log) == record.generations
    assert all(g.mean_fitness <= g.best_fitness for g in record.log)
    assert "parent_fitness" in record.log[-1].stats
    assert {"python", "numpy", "numba", "neuroyard", "git_commit"} <= set(record.versions)
    assert record.evolver_settings["offspring"] == 20
    assert record.timing["wall"] >= record.timing["evolver"] >= 0


def test_kernel_loading_is_timed_apart_once_per_process_and_leaves_results_unchanged():
    # a task setting no other test uses, so this process has not warmed this task up yet
    run = plan_run(EvolverSpec("rwg", {}), "xor-v2", 2, 1, 500, {"recurrent_steps": 7})
    first, again = run_one(run), run_one(run)
    assert first.timing["kernel_load"] > 0.0 and again.timing["kernel_load"] == 0.0
    for record in (first, again):
        t = record.timing
        assert t["wall"] == pytest.approx(t["evolver"] + t["harness"] + t["kernel_load"])
    strip = lambda r: {k: v for k, v in r.to_dict().items() if k not in ("timing", "host")}  # noqa: E731
    assert strip(first) == strip(again)


def test_same_spec_same_result_different_index_different_seed():
    a = run_one(spec("rwg", budget=3000, run_index=4))
    b = run_one(spec("rwg", budget=3000, run_index=4))
    c = run_one(spec("rwg", budget=3000, run_index=5))
    assert a.seed == b.seed != c.seed
    assert (a.evaluations, a.best_network, a.log) == (b.evaluations, b.best_network, b.log)


def test_seeds_depend_only_on_the_run_key():
    s = seeds.evolver_seed(1, "rwg", "xor-v2", 3)
    assert s == seeds.evolver_seed(1, "rwg", "xor-v2", 3)
    assert s != seeds.evolver_seed(2, "rwg", "xor-v2", 3)
    assert s != seeds.evolver_seed(1, "neat", "xor-v2", 3)
    assert s != seeds.evolver_seed(1, "rwg", "parity-v2", 3)
    # the task instance is shared by all evolvers in run i (paired comparisons)
    assert seeds.task_seed(1, "xor-v2", 3) == seeds.task_seed(1, "xor-v2", 3)
    assert seeds.task_seed(1, "xor-v2", 3) != seeds.task_seed(1, "xor-v2", 4)
    assert 0 <= s < 2**63


@pytest.mark.parametrize(
    ("config", "reason"),
    [
        ({"method": "start"}, "start() raised RuntimeError: boom in start"),
        ({"method": "ask", "when": 2}, "ask() in generation 2 raised RuntimeError: boom in ask"),
        (
            {"method": "tell", "when": 1},
            "tell() in generation 1 raised RuntimeError: boom in tell",
        ),
        (
            {"method": "stats", "when": 1},
            "stats() in generation 0 raised RuntimeError: boom in stats",
        ),
    ],
)
def test_an_evolver_that_raises_fails_its_run(config, reason):
    record = run_one(spec("plugins_for_tests:RaisesIn", budget=100, **config))
    assert record.status == "failed"
    assert record.failure == reason
    assert record.evaluations == record.generations  # batches of one, counted up to the fault


@pytest.mark.parametrize(
    ("what", "reason"),
    [
        ("empty", "ask() returned an empty batch in generation 0"),
        ("none", "ask() in generation 0 returned NoneType, expected a list of Network"),
        ("dict", "candidate 0 of generation 0 is a dict, not a Network"),
        ("invalid", "invalid network: candidate 0 of generation 0: node 3: unknown activation"),
        (
            "wrong_inputs",
            "invalid network: candidate 0 of generation 0: has 1 input nodes, the task needs 2",
        ),
    ],
)
def test_an_evolver_that_returns_garbage_fails_its_run(what, reason):
    record = run_one(spec("plugins_for_tests:Returns", budget=100, what=what))
    assert record.status == "failed"
    assert record.failure.startswith(reason)
    assert record.evaluations == 0


def test_an_evolver_that_calls_exit_fails_its_run_only():
    record = run_one(spec("plugins_for_tests:ExitsInAsk", budget=100))
    assert record.status == "failed"
    assert record.failure == "ask() in generation 0 raised SystemExit: 3"

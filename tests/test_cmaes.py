"""The CMA-ES reference evolver (reference/cmaes.py) and its fixed topologies
(reference/weight_template.py).

Outside references: the ``cma`` library itself (its default population size, its
iteration count, its step size and covariance), numpy (a forward pass of the layered
networks written with matrices, the condition number of the covariance), CMA-ES
converging on a convex quadratic (reference/SOURCES.md: hansen2001), XOR needing a hidden
node (reference/SOURCES.md: minsky1969), and the tasks' own success tests, which carry
the published criteria.
"""

from __future__ import annotations

import hashlib
import json
import math

import numpy as np
import pytest

from neuroyard.cli.main import main
from neuroyard.core.batch import compile_network
from neuroyard.core.compiled import run_sequence
from neuroyard.core.errors import EvolverError, NetworkError, SettingError
from neuroyard.core.evolver import Evaluation
from neuroyard.core.evolver_registry import EvolverSpec, load_factory
from neuroyard.core.network import from_dict, to_dict
from neuroyard.execution.campaign import plan_run
from neuroyard.execution.runner import run_one
from neuroyard.records.store import ResultStore
from neuroyard.reference.cmaes import CmaEs
from neuroyard.reference.weight_template import from_network, layered
from neuroyard.tasks import make


def started(task: str = "xor-v2", seed: int = 1, budget: int = 1000, **options) -> CmaEs:
    evolver = CmaEs(**options)
    evolver.start(make(task).problem(budget), seed)
    return evolver


def weights(network) -> list[float]:
    return [c.weight for c in network.connections if c.enabled]


def run(task: str, run_index: int = 0, budget: int | None = None, **config):
    return run_one(plan_run(EvolverSpec("cmaes", config), task, run_index, 1, budget))


def test_registered_under_its_name():
    assert load_factory("cmaes") is CmaEs


def test_every_option_says_where_its_default_comes_from():
    # the terms of reference/SOURCES.md (provenance tags): a default is ours, common
    # practice, tuned, or from memory of a publication (then cited by key)
    terms = ("ours", "common practice", "tuned", "from memory")
    for option in CmaEs.options:
        assert option.source.startswith(terms), option.name
        if option.source.startswith("from memory"):
            assert "reference/SOURCES.md: " in option.source, option.name


# -- topologies --------------------------------------------------------------------------


def test_layered_connection_counts():
    # hand count: 4 inputs + bias -> 3 -> 2 -> 1: (4+1)*3 + (3+1)*2 + (2+1)*1 = 26;
    # recurrent adds each hidden layer onto itself: 3*3 + 2*2 = 13; no bias: 4*3 + 3*2 + 2*1
    assert layered(4, 1, [3, 2]).n_weights == 26
    assert layered(4, 1, [3, 2], recurrent=True).n_weights == 26 + 13
    assert layered(4, 1, [3, 2], bias=False).n_weights == 20
    # no hidden layer: inputs and bias straight to the outputs; recurrent: outputs onto
    # themselves (2 outputs: 4 more links)
    assert layered(2, 2, []).n_weights == 6
    assert layered(2, 2, [], recurrent=True).n_weights == 10


def test_layered_network_computes_the_matrix_forward_pass():
    # numpy's matrices as the independent calculation: y = tanh(W2 [tanh(W1 [x; 1]); 1])
    rng = np.random.default_rng(0)
    template = layered(3, 2, [4], activation="tanh")
    w = rng.normal(size=template.n_weights)
    w1 = w[:16].reshape(4, 4)  # hidden node t's links from inputs 0..2 and the bias
    w2 = w[16:].reshape(2, 5)  # output node t's links from hidden nodes 0..3 and the bias
    x = rng.uniform(-1, 1, (5, 3))
    hidden = np.tanh(np.hstack([x, np.ones((5, 1))]) @ w1.T)
    expected = np.tanh(np.hstack([hidden, np.ones((5, 1))]) @ w2.T)
    got = run_sequence(compile_network(template.network(w), 3, 2), x, True)
    np.testing.assert_allclose(got, expected, rtol=1e-12, atol=1e-12)


def test_recurrent_layered_network_remembers_through_its_output():
    # no hidden layer, recurrent: y_t = tanh(w . [x_t; 1] + v y_(t-1)), y_0 = 0
    template = layered(2, 1, [], recurrent=True, activation="tanh")
    w = np.array([0.7, -0.4, 0.2, 0.9])  # x0, x1, bias, then the output's self-loop
    x = np.random.default_rng(1).uniform(-1, 1, (6, 2))
    y, expected = 0.0, []
    for row in x:
        y = math.tanh(0.7 * row[0] - 0.4 * row[1] + 0.2 + 0.9 * y)
        expected.append([y])
    got = run_sequence(compile_network(template.network(w), 2, 1), x, False)
    np.testing.assert_allclose(got, expected, rtol=1e-12, atol=1e-12)


# -- ask and tell ------------------------------------------------------------------------


def test_default_population_is_cmas():
    # cma's documented default of option popsize, 4 + floor(3 ln n) (Hansen & Ostermeier
    # 2001's setting), for n = 3 weights (xor without hidden layer) and n = 9 ([2])
    for hidden, n in (([], 3), ([2], 9)):
        evolver = started(hidden_layers=hidden)
        assert evolver.template.n_weights == n
        assert len(evolver.ask()) == 4 + math.floor(3 * math.log(n))
        assert evolver.settings()["population_size"] == 4 + math.floor(3 * math.log(n))
    assert len(started(population_size=13).ask()) == 13


def test_ask_gives_cmas_population_as_networks_of_one_structure():
    evolver = started(hidden_layers=[2], population_size=12)
    batch = evolver.ask()
    assert len(batch) == 12
    for net, sample in zip(batch, evolver.batch, strict=True):
        assert net.n_inputs == 2 and net.n_outputs == 1
        np.testing.assert_array_equal(weights(net), sample)  # one to one, in cma's order
        assert net.nodes == batch[0].nodes
        assert [(c.source, c.target) for c in net.connections] == [
            (c.source, c.target) for c in batch[0].connections
        ]
    assert len({tuple(weights(net)) for net in batch}) == 12


def test_tell_negates_fitness_so_cma_climbs():
    # maximise -|w - target|^2: CMA-ES converges on a convex quadratic (Hansen & Ostermeier
    # 2001); were the fitness passed on without negation, the mean would run away from it
    target = np.linspace(-1.0, 1.0, 9)
    evolver = started(hidden_layers=[2], initial_step_size=0.5)
    for _ in range(150):
        batch = evolver.ask()
        evolver.tell([Evaluation(-float(np.sum((weights(n) - target) ** 2))) for n in batch])
    np.testing.assert_allclose(evolver.es.mean, target, atol=1e-4)
    assert evolver.stats()["sigma"] < 1e-3


def test_truncated_batch_is_not_passed_to_cma():
    evolver = started(hidden_layers=[2])
    batch = evolver.ask()
    evolver.tell([Evaluation(float(k)) for k in range(len(batch))])
    iterations, mean = evolver.es.countiter, evolver.es.mean.copy()
    batch = evolver.ask()
    evolver.tell([Evaluation(3.0), Evaluation(5.0), Evaluation(4.0)])  # the budget's cut
    assert evolver.es.countiter == iterations  # cma's own count of updates
    np.testing.assert_array_equal(evolver.es.mean, mean)
    assert evolver.stats()["generation_best"] == 5.0
    assert len(evolver.ask()) == len(batch)  # the strategy goes on unharmed
    with pytest.raises(ValueError, match="results for"):
        evolver.tell([Evaluation(0.0)] * (len(batch) + 1))


def test_run_with_a_cut_last_batch():
    # population 7 (3 weights) against a budget of 50: 7 batches of 7, then one of 1;
    # without a hidden node XOR cannot be solved (Minsky & Papert 1969), so the budget ends it
    record = run("xor-v2", budget=50)
    assert (record.status, record.failure) == ("unsolved", None)
    assert record.evaluations == 50
    assert [g.evaluations for g in record.log][-2:] == [49, 50]


# -- statistics, settings, seeds ---------------------------------------------------------


def test_stats_are_cmas_figures():
    evolver = started(hidden_layers=[2], population_size=10)
    rng = np.random.default_rng(5)
    scale = rng.uniform(0.1, 10.0, 9)
    for _ in range(30):
        batch = evolver.ask()
        evolver.tell([Evaluation(-float(np.sum((scale * weights(n)) ** 2))) for n in batch])
    stats = evolver.stats()
    assert set(stats) == {
        "sigma", "condition_number", "generation_best", "population_size", "restarts"
    }  # fmt: skip
    assert stats["sigma"] == evolver.es.sigma > 0
    # numpy's condition number of cma's covariance matrix, as an independent figure
    evolver.es.sm.update_now(-1)  # bring cma's lazily updated eigensystem up to date
    assert stats["condition_number"] >= 1.0
    assert evolver.stats()["condition_number"] == pytest.approx(
        np.linalg.cond(evolver.es.sm.C), rel=1e-6
    )
    assert stats["population_size"] == 10 and stats["restarts"] == 0


def test_restart_when_cma_stops_with_a_larger_population():
    # a flat fitness meets cma's termination criteria (tolfun, tolflatfitness), so the next
    # ask starts a new strategy with twice the population (restart_population_factor 2)
    evolver = started(hidden_layers=[2])
    first = len(evolver.ask())
    for _ in range(30):
        evolver.tell([Evaluation(1.0)] * len(evolver.batch))
        stopped = bool(evolver.es.stop())
        batch = evolver.ask()
        if stopped:
            break
    assert stopped and evolver.stats()["restarts"] == 1
    assert evolver.es.countiter == 0  # a new strategy
    assert len(batch) == 2 * first == evolver.stats()["population_size"]
    same = started(hidden_layers=[2], restart=False)
    for _ in range(30):
        same.ask()
        same.tell([Evaluation(1.0)] * len(same.batch))
    assert same.es.stop() and same.stats()["restarts"] == 0  # keeps its stopped strategy


def test_settings_are_the_effective_configuration():
    markov = started("pole1-markov-v1")
    assert markov.settings() == {
        **CmaEs.options.defaults(),
        "population_size": markov.es.popsize,
        "recurrent": False,
    }
    # the task without velocities needs memory (Problem.needs_memory): recurrent networks
    memory = started("pole1-nonmarkov-v1")
    assert make("pole1-nonmarkov-v1").problem(10).needs_memory
    assert memory.settings()["recurrent"] is True
    assert {n.mode for n in memory.ask()} == {"recurrent"}
    assert started("pole1-nonmarkov-v1", recurrent=False).settings()["recurrent"] is False


def test_same_seed_same_run_whatever_numpys_global_state():
    np.random.seed(0)
    a = run("xor-v2", run_index=3, budget=800, hidden_layers=[2])
    np.random.seed(12345)  # cma's own seed option would use this generator; ours does not
    b = run("xor-v2", run_index=3, budget=800, hidden_layers=[2])
    c = run("xor-v2", run_index=4, budget=800, hidden_layers=[2])
    assert [(g.best_fitness, g.stats) for g in a.log] == [(g.best_fitness, g.stats) for g in b.log]
    assert a.best_network == b.best_network and a.evaluations == b.evaluations
    assert a.best_network != c.best_network


# -- solving -----------------------------------------------------------------------------


def test_solves_xor_with_one_hidden_layer():
    # the task's success test (every output on the correct side of 0.5); measured: 20 of 20
    # runs solve within 5,000 evaluations with [3], 304 on average (reference/README.md, CMA-ES)
    records = [run("xor-v2", i, budget=5000, hidden_layers=[3]) for i in range(5)]
    assert [r.status for r in records] == ["solved"] * 5
    assert all(r.hidden_nodes == 3 for r in records)


def test_balances_the_single_pole():
    # pole1-markov-v1's success test: 100,000 steps from the standard start
    records = [run("pole1-markov-v1", i, budget=2000) for i in range(5)]
    assert [r.status for r in records] == ["solved"] * 5
    assert all(r.success_details["balanced_steps"] == 100_000 for r in records)


# -- bad options and network files -------------------------------------------------------


@pytest.mark.parametrize(
    ("options", "named"),
    [
        ({"population_size": 1}, "'population_size'"),
        ({"initial_step_size": 0.0}, "'initial_step_size'"),
        ({"initial_spread": -1.0}, "'initial_spread'"),
        ({"hidden_layers": [0]}, "'hidden_layers'"),
        ({"hidden_layers": [2.5]}, "'hidden_layers'"),
        ({"hidden_layers": 3}, "'hidden_layers'"),
        ({"activation": "softmax"}, "'activation'"),
        ({"restart_population_factor": 0.5}, "'restart_population_factor'"),
        ({"sigma0": 1.0}, "'sigma0'"),
        ({"network": "no-such-file.json"}, "'network'"),
    ],
)
def test_bad_option_names_itself(options, named):
    with pytest.raises(SettingError, match=named):
        CmaEs(**options)
    # as the command line builds it: one line that names the option
    with pytest.raises(EvolverError, match=named):
        EvolverSpec("cmaes", options).build()


def test_network_file_and_layer_options_exclude_each_other(tmp_path):
    path = tmp_path / "net.json"
    path.write_text(json.dumps(to_dict(layered(2, 1, [2]).base)))
    with pytest.raises(SettingError, match="'hidden_layers' cannot be given with 'network'"):
        CmaEs(network=str(path), hidden_layers=[2])
    path.write_text('{"nodes": []')
    with pytest.raises(SettingError, match="option 'network'.*not valid JSON"):
        CmaEs(network=str(path))


def test_network_file_round_trips(tmp_path):
    solution = run("xor-v2", budget=5000, hidden_layers=[3])
    assert solution.status == "solved"
    doc = dict(solution.best_network)
    # a disabled connection is kept as it is and not searched
    disabled = {"source": 0, "target": 6, "weight": 5.0, "enabled": False}
    doc["connections"] = [*doc["connections"], disabled]
    path = tmp_path / "xor.json"
    path.write_bytes(json.dumps(doc).encode())
    file_network = from_dict(doc)

    evolver = CmaEs(network=str(path), initial_step_size=1e-6)
    evolver.start(make("xor-v2").problem(1000), 7)
    assert evolver.template.network(evolver.template.start) == file_network
    assert evolver.template.n_weights == len(doc["connections"]) - 1
    settings = evolver.settings()
    assert settings["network_sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert settings["recurrent"] is False
    for net in evolver.ask():
        assert net.nodes == file_network.nodes and net.mode == file_network.mode
        assert [(c.source, c.target, c.enabled) for c in net.connections] == [
            (c.source, c.target, c.enabled) for c in file_network.connections
        ]
        assert net.connections[-1].weight == 5.0
        np.testing.assert_allclose(weights(net), weights(file_network), atol=1e-4)
    # samples this close to a solution are solutions: solved in the first generation
    record = run("xor-v2", budget=1000, network=str(path), initial_step_size=1e-6)
    assert (record.status, record.generations) == ("solved", 1)
    assert from_network(file_network).n_weights == evolver.template.n_weights


def test_the_run_key_covers_the_network_files_content(tmp_path, capsys):
    # the digest is hashlib's SHA-256 of the file's bytes; a changed file is another
    # configuration, so its runs are made anew and the old ones are kept
    path = tmp_path / "xor.json"
    path.write_text(json.dumps(to_dict(layered(2, 1, [2]).base)))
    first = EvolverSpec("cmaes", {"network": str(path)})
    digest = hashlib.sha256(path.read_bytes()).hexdigest()
    assert first.effective_config["network_sha256"] == digest
    # a configuration without a file keeps the hash it had before the digest was declared
    plain = EvolverSpec("cmaes").effective_config
    assert plain.pop("network_sha256") is None
    before = hashlib.sha256(json.dumps(plain, sort_keys=True, default=str).encode())
    assert EvolverSpec("cmaes").config_hash == before.hexdigest()[:12]

    store = str(tmp_path / "s.db")
    argv = ["run", "--evolver", "cmaes", "--param", f"network={path}", "--task", "xor-v2",
            "--runs", "2", "--budget", "60", "--store", store, "--quiet"]  # fmt: skip
    assert main(argv) == 0
    assert main(argv) == 0  # the same file: nothing runs again
    with ResultStore(store, write=False) as s:
        records = list(s.records(with_log=False))
    assert len(records) == 2 and {r.config_hash for r in records} == {first.config_hash}
    assert all(r.evolver_settings["network_sha256"] == digest for r in records)

    path.write_text(json.dumps(to_dict(layered(2, 1, [3]).base)))
    with pytest.raises(EvolverError, match="its content changed since the runs were planned"):
        EvolverSpec("cmaes", records[0].evolver_settings).build()
    assert EvolverSpec("cmaes", {"network": str(path)}).config_hash != first.config_hash
    assert main(argv) == 0
    with ResultStore(store, write=False) as s:
        assert len(list(s.records(with_log=False))) == 4
    capsys.readouterr()


def test_network_file_of_another_task_fails_its_run(tmp_path):
    path = tmp_path / "xor.json"
    path.write_text(json.dumps(to_dict(layered(2, 1, [2]).base)))
    with pytest.raises(NetworkError, match="has 2 input nodes, the task needs 4"):
        started("pole1-markov-v1", network=str(path))
    record = run("pole1-markov-v1", budget=100, network=str(path))
    assert record.status == "failed" and str(path) in record.failure

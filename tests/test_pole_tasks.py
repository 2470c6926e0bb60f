"""Pole tasks: kernels against the plain-Python implementation, settings, fitness, success."""

from __future__ import annotations

import itertools
import math
import tomllib
from importlib import resources

import numpy as np
import pytest

from neuroyard.core.batch import compile_network
from neuroyard.core.errors import TaskError
from neuroyard.core.evolver import Evaluation
from neuroyard.core.network import Connection, Network, Node, fully_connected, validate
from neuroyard.core.reference_activation import ReferenceNet
from neuroyard.reference.published import figures_for
from neuroyard.tasks.pole import balance, count_balanced, generalization_starts, simulate
from neuroyard.tasks.pole.controllers import difference_network, lqr_gains, state_feedback_network
from neuroyard.tasks.pole.plain import plain_balance, plain_simulate
from neuroyard.tasks.registry import make

POLE_TASKS = ("pole1-markov-v1", "pole1-nonmarkov-v1", "pole2-markov-v1", "pole2-nonmarkov-v1")


def random_recurrent(n_inputs: int, hidden: int, rng: np.random.Generator) -> Network:
    nodes = [Node(i, "input") for i in range(n_inputs)] + [Node(n_inputs, "bias")]
    computed = list(range(n_inputs + 1, n_inputs + 2 + hidden))
    nodes += [Node(i, "hidden", "tanh") for i in computed[:-1]]
    nodes.append(Node(computed[-1], "output", "neat_sigmoid"))
    conns = [
        Connection(s, t, float(rng.normal()))
        for s in range(n_inputs + 2 + hidden)
        for t in computed
        if rng.random() < 0.6
    ]
    return Network(tuple(nodes), tuple(conns), "recurrent")


@pytest.mark.parametrize("task_id", ["pole1-markov-v1", "pole2-markov-v1"])
@pytest.mark.parametrize("integrator", ["rk4", "euler"])
def test_kernel_dynamics_equal_plain_python(task_id: str, integrator: str) -> None:
    task = make(task_id, integrator=integrator)
    rng = np.random.default_rng(3)
    start = rng.normal(scale=0.1, size=task.start.shape[0])
    forces = rng.uniform(-10.0, 10.0, 200)
    ours = simulate(task.physics, start, forces, 2)
    plain = np.array(plain_simulate(task.physics, start, forces, 2))
    assert np.allclose(ours, plain, rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("task_id", POLE_TASKS)
def test_episode_kernel_equals_plain_python(task_id: str) -> None:
    task = make(task_id, episode_steps=300)
    rng = np.random.default_rng(8)
    n_in = task.spec.inputs
    for trial in range(15):
        network = random_recurrent(n_in, 3, rng)
        validate(network, n_in, 1)
        start = task.start + rng.normal(scale=0.02, size=task.start.shape[0])
        no_record = np.empty((0, start.shape[0]))
        ours = balance(compile_network(network), task.physics, task.rules, start, 300, no_record)
        plain = plain_balance(ReferenceNet(network), task.physics, task.rules, start, 300)
        assert ours[0] == plain[0], trial
        assert ours[1] == pytest.approx(plain[1], rel=1e-9), trial


def test_lqr_controller_balances_and_kernel_agrees_with_plain_python() -> None:
    task = make("pole2-markov-v1")
    network = state_feedback_network(task, lqr_gains(task, [1, 1, 100, 1, 100, 1]))
    net = compile_network(network)
    starts = generalization_starts()[::31]
    n_plain = sum(
        plain_balance(ReferenceNet(network), task.physics, task.rules, s, 1000)[0] == 1000
        for s in starts
    )
    assert count_balanced(net, task.physics, task.rules, starts, 1000) == n_plain
    assert n_plain >= len(starts) // 2  # a real controller: many starts balanced


def test_settings_are_validated_with_clear_errors() -> None:
    with pytest.raises(TaskError, match="integrator"):
        make("pole2-markov-v1", integrator="leapfrog")
    with pytest.raises(TaskError, match="substeps"):
        make("pole2-markov-v1", substeps=0)
    with pytest.raises(TaskError, match="start_angle"):
        make("pole1-markov-v1", start_angle=0.5)
    with pytest.raises(TaskError, match="force_mapping"):
        make("pole1-markov-v1", force_mapping="cubic")
    with pytest.raises(TaskError, match="must be a number"):
        make("pole1-markov-v1", tau="fast")
    with pytest.raises(TaskError, match="damped fitness needs a nonzero"):
        make("pole2-nonmarkov-v1", start_angle=0.0)
    with pytest.raises(TaskError, match="cart_friction"):
        make("pole2-markov-v1", cart_friction=-1.0)


def test_specs_interface_and_recorded_settings() -> None:
    # inputs, needs memory (reference/SOURCES.md: gomez1999, barto1983; inputs; single pole)
    expected = {
        "pole1-markov-v1": (4, False),
        "pole1-nonmarkov-v1": (2, True),
        "pole2-markov-v1": (6, False),
        "pole2-nonmarkov-v1": (3, True),
    }
    for task_id, (inputs, memory) in expected.items():
        task = make(task_id)
        spec = task.spec
        assert (spec.inputs, spec.outputs, spec.needs_memory) == (inputs, 1, memory)
        for key in ("substeps", "start_angle", "failure_angle", "force_mapping", "scale_x"):
            assert key in spec.settings and key in task.problem(1000).settings
    assert make("pole2-nonmarkov-v1").spec.max_fitness is None
    assert make("pole2-markov-v1").spec.max_fitness == 100_000


def test_figure_protocols_name_real_settings() -> None:
    """Every task.<setting> protocol key of the pole figures is a setting of its task."""
    for task_id in POLE_TASKS:
        settings = make(task_id).settings
        for figure in figures_for(task_id):
            for key in figure.protocol:
                scope, _, name = key.partition(".")
                assert scope in ("task", "evolver"), key
                if scope == "task":
                    assert name in settings, (task_id, figure.method, key)
    # the gated NEAT figures are comparable with runs at default settings
    neat = figures_for("pole2-markov-v1", "NEAT")[0]
    assert neat.may_gate
    assert neat.mismatches(make("pole2-markov-v1").settings, {"population_size": 150}) == []


def test_generalization_starts_are_the_published_grid() -> None:
    """Gruau, Whitley & Pyeatt 1996 / Stanley & Miikkulainen 2002
    (reference/SOURCES.md: gruau1996, stanley2002; generalization test):
    each of x, x_dot, theta_1, theta_dot_1 at fractions 0.05, 0.25, 0.5, 0.75, 0.95 of
    its range, all 5^4 combinations, short pole upright at rest."""
    path = resources.files("neuroyard.reference") / "figures" / "pole.toml"
    table = tomllib.loads(path.read_text())["generalization"]
    assert table["fractions"] == [0.05, 0.25, 0.5, 0.75, 0.95]
    half = [
        table["x_range_m"],
        table["x_dot_range_m_per_s"],
        table["theta_1_range_degrees"] * math.pi / 180.0,
        table["theta_dot_1_range_degrees_per_s"] * math.pi / 180.0,
    ]
    # the radian ranges given beside the degrees in
    # (reference/SOURCES.md: gruau1996; generalization test)
    assert half[2] == pytest.approx(0.0628, abs=5e-5)
    assert half[3] == pytest.approx(0.15, abs=5e-4)
    axis_values = [[r * (2.0 * f - 1.0) for f in table["fractions"]] for r in half]
    expected = {tuple(row) for row in itertools.product(*axis_values)}
    starts = generalization_starts()
    assert starts.shape == (625, 6)
    assert np.all(starts[:, 4:] == 0.0)
    # every start is a grid point, each once (rounded: -r + 2fr and r(2f - 1) differ by 1 ulp)
    got = {tuple(round(v, 13) for v in row) for row in starts[:, :4]}
    assert got == {tuple(round(v, 13) for v in row) for row in expected}
    for column, values in zip(starts[:, :4].T, axis_values, strict=True):
        assert np.allclose(np.unique(column), sorted(values), rtol=0, atol=1e-15)


def test_markov_success_reuses_the_evaluation_episode() -> None:
    task = make("pole2-markov-v1")
    net = compile_network(state_feedback_network(task, lqr_gains(task, [1, 1, 100, 1, 100, 1])))
    evaluation = task.evaluate(net)
    assert evaluation.fitness == 100_000
    check = task.success_test(net, evaluation)
    assert check.solved and check.evaluations == 0
    short = make("pole2-markov-v1", episode_steps=1_000)
    assert short.evaluate(net).fitness == 1_000
    check = short.success_test(net, short.evaluate(net))
    assert check.solved and check.evaluations == 1
    assert check.details["balanced_steps"] == 100_000


def test_dpnv_success_needs_generalization_and_counts_its_episodes() -> None:
    task = make("pole2-nonmarkov-v1")
    gains = lqr_gains(make("pole2-markov-v1"), [1, 1, 100, 1, 100, 1])
    net = compile_network(difference_network(task, gains))
    evaluation = task.evaluate(net)
    check = task.success_test(net, evaluation)
    assert check.solved, check
    assert check.evaluations == 1 + 625
    assert check.details["generalization"] >= 200
    assert check.details["generalization"] == task.generalization_score(net)
    # a network that drops the poles: no generalization test is run
    still = compile_network(fully_connected(3, 1))
    check = task.success_test(still, task.evaluate(still))
    assert not check.solved and check.evaluations == 1 and "generalization" not in check.details
    assert check.details["balanced_steps"] < 100


def test_damped_fitness_follows_gruau_et_al() -> None:
    """F = 0.1 t/1000 + 0.9 * 0.75 / sum over the last 100 steps of |x|+|x_dot|+|th1|+|th1_dot|
    (Gruau, Whitley & Pyeatt 1996, from memory; reference/SOURCES.md: gruau1996; damped fitness)."""
    task = make("pole2-nonmarkov-v1")
    gains = lqr_gains(make("pole2-markov-v1"), [1, 1, 100, 1, 100, 1])
    network = difference_network(task, gains)
    record = np.zeros((1001, 6))
    steps, _ = balance(compile_network(network), task.physics, task.rules, task.start, 1000, record)
    assert steps == 1000
    jiggle = np.abs(record[901:1001, :4]).sum()
    expected = 0.1 * 1000 / 1000 + 0.9 * 0.75 / jiggle
    assert task.evaluate(compile_network(network)).fitness == pytest.approx(expected, rel=1e-12)
    # fewer than 100 steps balanced: only the step term counts
    falling = compile_network(fully_connected(3, 1))
    t = task.run(falling, 1000)
    assert 0 < t < 100
    assert task.evaluate(falling).fitness == pytest.approx(0.1 * t / 1000)


def test_single_pole_nonmarkov_solved_by_difference_network() -> None:
    task = make("pole1-nonmarkov-v1")
    gains = lqr_gains(make("pole1-markov-v1"), [1, 1, 100, 1])
    net = compile_network(difference_network(task, gains))
    evaluation = task.evaluate(net)
    assert evaluation == Evaluation(100_000.0)
    assert task.success_test(net, evaluation).solved

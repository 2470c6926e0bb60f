"""The logic tasks xor-v2 and parity-v2: truth tables, fitness, success test, settings.

XOR fitness and success rule: Stanley & Miikkulainen 2002, sec. 4.2 (fitness
(4 - sum |output - target|)^2 over the 4 patterns; success = every output on the correct
side of 0.5, marked as from memory in reference/SOURCES.md: stanley2002; XOR).
"""

from __future__ import annotations

import functools
import itertools
import operator

import numpy as np
import pytest
import scipy.special

from neuroyard import tasks
from neuroyard.core.batch import compile_network
from neuroyard.core.errors import TaskError
from neuroyard.core.network import Connection, Network, Node, fully_connected, validate
from neuroyard.core.reference_activation import ReferenceNet

XOR_TABLE = {(0, 0): 0, (0, 1): 1, (1, 0): 1, (1, 1): 0}  # exclusive or


def threshold_network(bits: int, mode: str = "feedforward") -> Network:
    """Parity of ``bits`` inputs from threshold units (bits = 2 is XOR with two hidden nodes).

    Hidden node k (k = 1..bits) is on when at least k inputs are on:
    neat_sigmoid(10 * (sum x - k + 0.5)). The output adds the hidden nodes with alternating
    signs (1 for odd counts, 0 for even) and is on above 0.5. Every unit's net input is at
    least 5 away from 0, so with slope 4.9 every output is within 1e-10 of its target.
    """
    inputs = list(range(bits))
    bias = bits
    hidden = list(range(bits + 1, 2 * bits + 1))
    out = 2 * bits + 1
    nodes = [Node(i, "input") for i in inputs] + [Node(bias, "bias")]
    nodes += [Node(h, "hidden", "neat_sigmoid") for h in hidden]
    nodes.append(Node(out, "output", "neat_sigmoid"))
    conns = []
    for k, h in enumerate(hidden, start=1):
        conns += [Connection(i, h, 10.0) for i in inputs]
        conns.append(Connection(bias, h, -10.0 * (k - 0.5)))
        conns.append(Connection(h, out, 10.0 if k % 2 else -10.0))
    conns.append(Connection(bias, out, -5.0))
    return Network(tuple(nodes), tuple(conns), mode)


def reference_output(network: Network, pattern) -> float:
    """Output of a freshly reset network after one step, by the plain-Python reference."""
    return ReferenceNet(network).step([float(v) for v in pattern])[0]


def score(task_id: str, network: Network, **settings) -> tuple[float, bool]:
    task = tasks.make(task_id, **settings)
    validate(network, task.spec.inputs, task.spec.outputs)
    compiled = compile_network(network)
    evaluation = task.evaluate(compiled)
    check = task.success_test(compiled, evaluation)
    assert check.evaluations == 1
    return evaluation.fitness, check.solved


# --- XOR ---------------------------------------------------------------------------------


def test_xor_truth_table() -> None:
    task = tasks.make("xor-v2")
    rows = {
        tuple(int(v) for v in p): int(t) for p, t in zip(task.patterns, task.targets, strict=True)
    }
    assert rows == XOR_TABLE
    assert (task.spec.inputs, task.spec.outputs) == (2, 1)
    assert task.spec.max_fitness == 16.0  # 4 patterns, (4 - 0)^2


def test_hand_built_xor_network_is_solved_with_fitness_near_16() -> None:
    net = threshold_network(2)
    assert net.hidden_nodes == 2
    fitness, solved = score("xor-v2", net)
    assert solved
    assert fitness == pytest.approx(16.0, abs=1e-8)


@pytest.mark.parametrize(
    ("weights", "wrong_patterns", "expected_fitness"),
    [
        pytest.param([10.0, 10.0, -5.0], 1, 9.0, id="OR"),  # wrong on (1, 1)
        pytest.param([10.0, 10.0, -15.0], 3, 1.0, id="AND"),  # wrong on all but (0, 0)
        pytest.param([0.0, 0.0, 0.0], 4, 4.0, id="constant-0.5"),  # 0.5 is never correct
    ],
)
def test_wrong_networks_are_not_solved(
    weights: list[float], wrong_patterns: int, expected_fitness: float
) -> None:
    # No hidden nodes: out = neat_sigmoid(w1 x1 + w2 x2 + w_bias).
    net = fully_connected(2, 1, weights)
    fitness, solved = score("xor-v2", net)
    assert not solved
    task = tasks.make("xor-v2")
    outputs = [reference_output(net, p) for p in task.patterns]
    wrong = sum(
        (o > 0.5) != (t > 0.5) or o == 0.5 for o, t in zip(outputs, task.targets, strict=True)
    )
    assert wrong == wrong_patterns
    # Saturated outputs err by ~1 where wrong, ~0 elsewhere (0.5 on every pattern for the
    # constant net): fitness (4 - error)^2, Stanley & Miikkulainen 2002, sec. 4.2
    assert fitness == pytest.approx(expected_fitness, abs=1e-8)


def test_xor_fitness_formula_on_hand_computed_outputs() -> None:
    # Output = identity(0.25 + 0.5 x1 + 0.25 x2): outputs are exact binary fractions.
    nodes = (Node(0, "input"), Node(1, "input"), Node(2, "bias"), Node(3, "output"))
    conns = (Connection(0, 3, 0.5), Connection(1, 3, 0.25), Connection(2, 3, 0.25))
    outputs = {(0, 0): 0.25, (0, 1): 0.5, (1, 0): 0.75, (1, 1): 1.0}
    error = sum(abs(outputs[p] - t) for p, t in XOR_TABLE.items())  # 0.25+0.5+0.25+1 = 2
    fitness, solved = score("xor-v2", Network(nodes, conns))
    # (4 - sum |error|)^2: Stanley & Miikkulainen 2002, sec. 4.2
    assert fitness == (4.0 - error) ** 2 == 4.0
    assert not solved  # 0.5 for (0, 1) is not on the correct side of 0.5


def test_xor_fitness_formula_on_sigmoid_outputs() -> None:
    # Output = sigmoid(x1 - x2 + 0.5), computed here with scipy.special.expit.
    nodes = (Node(0, "input"), Node(1, "input"), Node(2, "bias"), Node(3, "output", "sigmoid"))
    conns = (Connection(0, 3, 1.0), Connection(1, 3, -1.0), Connection(2, 3, 0.5))
    error = sum(abs(scipy.special.expit(a - b + 0.5) - t) for (a, b), t in XOR_TABLE.items())
    fitness, solved = score("xor-v2", Network(nodes, conns))
    # (4 - sum |error|)^2: Stanley & Miikkulainen 2002, sec. 4.2
    assert fitness == pytest.approx((4.0 - error) ** 2, rel=1e-14)
    assert not solved


def test_outputs_outside_0_1_are_clipped_before_the_error_is_taken() -> None:
    # Output = identity(2 x1 - 3 x2 + 0.5): 0.5, -2.5, 2.5, -0.5, clipped to 0.5, 0, 1, 0.
    # Unclipped, the published formula would give (4 - (0.5 + 3.5 + 1.5 + 0.5))^2 = 4 from
    # a negative base; clipped: (4 - (0.5 + 1 + 0 + 0))^2 = 6.25.
    nodes = (Node(0, "input"), Node(1, "input"), Node(2, "bias"), Node(3, "output"))
    conns = (Connection(0, 3, 2.0), Connection(1, 3, -3.0), Connection(2, 3, 0.5))
    fitness, solved = score("xor-v2", Network(nodes, conns))
    assert fitness == 6.25 and not solved


def test_a_non_finite_output_gives_nan_and_is_never_solved() -> None:
    # bias 1e308 into an identity output doubled by a second bias link: +inf on every pattern
    nodes = (Node(0, "input"), Node(1, "input"), Node(2, "bias"), Node(3, "output"))
    conns = (Connection(2, 3, 1e308), Connection(2, 3, 1e308))
    fitness, solved = score("xor-v2", Network(nodes, conns))
    assert np.isnan(fitness) and not solved


def test_sigmoid_outputs_score_as_the_published_unclipped_formula() -> None:
    # Outputs in (0, 1): clipping changes nothing, so xor-v2 scores what the paper's formula
    # (Stanley & Miikkulainen 2002, sec. 4.2) gives on the plain-Python reference outputs.
    rng = np.random.default_rng(5)
    for _ in range(50):
        net = fully_connected(2, 1, rng.normal(0, 3, 9), "neat_sigmoid", hidden=2)
        outputs = [reference_output(net, p) for p in XOR_TABLE]
        published = 4 - sum(abs(o - t) for o, t in zip(outputs, XOR_TABLE.values(), strict=True))
        fitness, _ = score("xor-v2", net)
        assert fitness == pytest.approx(published**2, rel=1e-12)


def test_version_1_is_retired_with_the_reason() -> None:
    with pytest.raises(TaskError, match=r"task 'xor-v1' is retired, use 'xor-v2': version 1"):
        tasks.make("xor-v1")
    assert tasks.retired()["parity-v1"][0] == "parity-v2"


def test_recurrent_xor_needs_enough_steps() -> None:
    # In recurrent mode the output sees the inputs two steps after they are set
    # (input -> hidden -> output), so one step per pattern cannot solve XOR.
    net = threshold_network(2, mode="recurrent")
    fitness, solved = score("xor-v2", net, recurrent_steps=1)
    assert not solved
    # every output is neat_sigmoid(-5) ~ 0: errors ~ 0, 1, 1, 0
    assert fitness == pytest.approx(4.0, abs=1e-8)
    for steps in (2, 5):
        fitness, solved = score("xor-v2", net, recurrent_steps=steps)
        assert solved and fitness == pytest.approx(16.0, abs=1e-8)


# --- parity -----------------------------------------------------------------------------


def test_parity_3_truth_table() -> None:
    task = tasks.make("parity-v2", bits=3)
    assert task.patterns.shape == (8, 3)
    rows = {
        tuple(int(v) for v in p): int(t) for p, t in zip(task.patterns, task.targets, strict=True)
    }
    expected = {  # N-bit parity: the XOR of all N bits, by definition
        bits: functools.reduce(operator.xor, bits) for bits in itertools.product((0, 1), repeat=3)
    }
    assert rows == expected
    assert task.spec.max_fitness == 64.0
    assert tasks.make("parity-v2").settings["bits"] == 3  # the default


@pytest.mark.parametrize("bits", [2, 3, 4, 5])
def test_hand_built_parity_network_is_solved(bits: int) -> None:
    fitness, solved = score("parity-v2", threshold_network(bits), bits=bits)
    assert solved
    assert fitness == pytest.approx(float(4**bits), abs=1e-6)


def test_parity_2_scores_like_xor() -> None:
    net = fully_connected(2, 1, np.linspace(-1.0, 1.0, 9), hidden=2)
    assert score("parity-v2", net, bits=2) == score("xor-v2", net)


def test_parity_3_ignoring_one_input_is_not_solved() -> None:
    net = threshold_network(2)
    # the XOR of the first two bits, with a third input left unconnected
    nodes = (Node(100, "input"),) + net.nodes
    fitness, solved = score("parity-v2", Network(nodes, net.connections), bits=3)
    assert not solved
    assert fitness == pytest.approx(16.0, abs=1e-6)  # right on 4 of 8 patterns: (8 - 4)^2


# --- settings -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("task_id", "settings", "message"),
    [
        ("xor-v2", {"bits": 3}, "unknown setting 'bits'"),
        ("parity-v2", {"bitz": 3}, "unknown setting 'bitz'"),
        ("parity-v2", {"bits": "three"}, "setting 'bits' must be a whole number, got 'three'"),
        ("parity-v2", {"bits": 3.0}, "setting 'bits' must be a whole number, got 3.0"),
        ("parity-v2", {"bits": True}, "setting 'bits' must be a whole number, got True"),
        ("parity-v2", {"bits": 1}, "setting 'bits' must be within 2..12"),
        ("parity-v2", {"bits": 13}, "setting 'bits' must be within 2..12"),
        ("xor-v2", {"recurrent_steps": 0}, "'recurrent_steps' must be within 1..1000, got 0"),
        ("xor-v2", {"recurrent_steps": 2.5}, "setting 'recurrent_steps' must be a whole number"),
    ],
)
def test_bad_settings_name_the_key(task_id: str, settings: dict, message: str) -> None:
    with pytest.raises(TaskError) as info:
        tasks.make(task_id, **settings)
    assert message in str(info.value)
    assert task_id in str(info.value)

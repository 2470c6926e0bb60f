"""Compiled numba kernels against the plain-Python reference activation.

The reference (:class:`ReferenceNet`) is written from the node formula and mode rules in
the docstring of :mod:`neuroyard.core.network`; the kernels must agree with it to 1e-12
on random valid networks, and both must show the documented step timing.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from neuroyard.core.activations import NAMES
from neuroyard.core.batch import compile_network
from neuroyard.core.compiled import run_sequence
from neuroyard.core.network import Connection, Network, Node, validate
from neuroyard.core.reference_activation import ReferenceNet

TOLERANCE = 1e-12  # absolute and relative; issue 2 item 3
SETTINGS = settings(
    max_examples=200, deadline=None, database=None, suppress_health_check=[HealthCheck.too_slow]
)

numbers = st.floats(-3.0, 3.0, allow_nan=False, allow_infinity=False)


@st.composite
def networks(draw: st.DrawFn, mode: str) -> Network:
    """A random valid network: 1-4 inputs, 0-2 bias nodes, 0-5 hidden, 1-3 outputs.

    Ids are random distinct integers and the node list is shuffled, so list order, id and
    kind are unrelated. Connections (duplicates allowed) join any node to any hidden or
    output node; one in five is disabled. In feedforward mode a random rank orders the
    computed nodes and a connection that does not go up in rank is either reversed or
    disabled, so disabled back edges and self-loops occur but the enabled graph is acyclic.
    In recurrent mode anything goes, self-loops included.
    """
    counts = {
        "input": draw(st.integers(1, 4)),
        "bias": draw(st.integers(0, 2)),
        "hidden": draw(st.integers(0, 5)),
        "output": draw(st.integers(1, 3)),
    }
    kinds = [kind for kind, n in counts.items() for _ in range(n)]
    size = len(kinds)
    ids = draw(st.lists(st.integers(-50, 1000), min_size=size, max_size=size, unique=True))
    nodes = []
    for nid, kind in zip(ids, kinds, strict=True):
        if kind in ("input", "bias"):
            nodes.append(Node(nid, kind))
        else:
            act = draw(st.sampled_from(NAMES))
            nodes.append(Node(nid, kind, act, draw(numbers), draw(numbers)))
    nodes = draw(st.permutations(nodes))
    computed = [n.id for n in nodes if n.kind in ("hidden", "output")]
    rank = dict(zip(draw(st.permutations(computed)), range(len(computed)), strict=True))
    edges = st.tuples(
        st.sampled_from([n.id for n in nodes]),
        st.sampled_from(computed),
        numbers,
        st.integers(0, 4).map(bool),  # enabled 4 times in 5
        st.booleans(),
    )
    connections = []
    for source, target, weight, enabled, flip in draw(
        st.lists(edges, min_size=len(computed), max_size=30)
    ):
        if mode == "feedforward" and source in rank and rank[source] >= rank[target]:
            if flip and source != target:
                source, target = target, source
            else:
                enabled = False
        connections.append(Connection(source, target, weight, enabled))
    network = Network(tuple(nodes), tuple(connections), mode)
    validate(network)
    return network


@st.composite
def episodes(draw: st.DrawFn, mode: str) -> tuple[Network, np.ndarray]:
    network = draw(networks(mode))
    steps = draw(st.integers(1, 12))
    rows = st.lists(
        st.floats(-2.0, 2.0, allow_nan=False), min_size=network.n_inputs, max_size=network.n_inputs
    )
    inputs = np.array(draw(st.lists(rows, min_size=steps, max_size=steps)), dtype=np.float64)
    return network, inputs.reshape(steps, network.n_inputs)


def reference_outputs(network: Network, inputs: np.ndarray, reset_each: bool) -> np.ndarray:
    ref = ReferenceNet(network)
    out = []
    for row in inputs.tolist():
        if reset_each:
            ref.reset()
        out.append(ref.step(row))
    return np.array(out, dtype=np.float64).reshape(len(inputs), network.n_outputs)


def assert_agree(network: Network, inputs: np.ndarray, reset_each: bool) -> None:
    kernel = run_sequence(compile_network(network), inputs, reset_each)
    wanted = reference_outputs(network, inputs, reset_each)
    assert np.all(np.isfinite(wanted))
    np.testing.assert_allclose(kernel, wanted, rtol=TOLERANCE, atol=TOLERANCE)


@SETTINGS
@given(episodes("feedforward"), st.booleans())
def test_feedforward_kernel_agrees_with_reference(
    episode: tuple[Network, np.ndarray], reset_each: bool
) -> None:
    assert_agree(*episode, reset_each)


@SETTINGS
@given(episodes("recurrent"))
def test_recurrent_episode_agrees_with_reference(episode: tuple[Network, np.ndarray]) -> None:
    assert_agree(*episode, reset_each=False)


@SETTINGS
@given(episodes("recurrent"))
def test_recurrent_reset_each_step_agrees_with_reference(
    episode: tuple[Network, np.ndarray],
) -> None:
    assert_agree(*episode, reset_each=True)


# --- step timing, hand-computed from the network.py docstring ---------------------------


def chain(mode: str, self_loop: float | None = None) -> Network:
    """input 0 -> hidden 1 (weight 2) -> output 2 (weight 3), identity everywhere."""
    conns = [Connection(0, 1, 2.0), Connection(1, 2, 3.0)]
    if self_loop is not None:
        conns.append(Connection(1, 1, self_loop))
    nodes = (Node(0, "input"), Node(1, "hidden"), Node(2, "output"))
    return Network(nodes, tuple(conns), mode)


def both_outputs(network: Network, rows: list[list[float]], reset_each: bool = False):
    inputs = np.array(rows, dtype=np.float64)
    kernel = run_sequence(compile_network(network), inputs, reset_each)
    return kernel, reference_outputs(network, inputs, reset_each)


def test_feedforward_output_responds_to_this_steps_input() -> None:
    for outputs in both_outputs(chain("feedforward"), [[1.0], [-2.0], [0.5]]):
        np.testing.assert_array_equal(outputs[:, 0], [6.0, -12.0, 3.0])


def test_recurrent_chain_needs_two_steps_to_reach_the_output() -> None:
    # Step t: hidden reads the input of step t, the output reads hidden from step t-1 (0 at t=1).
    for outputs in both_outputs(chain("recurrent"), [[1.0], [-2.0], [0.5]]):
        np.testing.assert_array_equal(outputs[:, 0], [0.0, 6.0, -12.0])


def test_recurrent_self_loop_integrates_the_input() -> None:
    # hidden_t = hidden_{t-1} + 2 x_t; output_t = 3 hidden_{t-1}
    for outputs in both_outputs(chain("recurrent", self_loop=1.0), [[1.0]] * 4):
        np.testing.assert_array_equal(outputs[:, 0], [0.0, 6.0, 12.0, 18.0])


def test_recurrent_reset_each_row_forgets_the_state() -> None:
    for outputs in both_outputs(chain("recurrent"), [[1.0], [-2.0]], reset_each=True):
        np.testing.assert_array_equal(outputs[:, 0], [0.0, 0.0])


def test_recurrent_reads_input_and_bias_at_this_steps_value() -> None:
    nodes = (Node(0, "input"), Node(1, "bias"), Node(2, "output"))
    conns = (Connection(0, 2, 2.0), Connection(1, 2, 0.5))
    net = Network(nodes, conns, "recurrent")
    for outputs in both_outputs(net, [[1.0], [3.0]]):
        np.testing.assert_array_equal(outputs[:, 0], [2.5, 6.5])


def test_node_formula() -> None:
    # y = f(gain * (bias + sum w * x)), network.py docstring
    nodes = (Node(0, "input"), Node(1, "input"), Node(2, "output", "tanh", 0.25, 1.5))
    conns = (Connection(0, 2, 0.5), Connection(1, 2, -2.0), Connection(1, 2, 7.0, False))
    wanted = math.tanh(1.5 * (0.25 + 0.5 * 0.8 - 2.0 * 0.3))
    for mode in ("feedforward", "recurrent"):
        for outputs in both_outputs(Network(nodes, conns, mode), [[0.8, 0.3]]):
            assert outputs[0, 0] == pytest.approx(wanted, rel=1e-15)


def test_outputs_follow_node_list_order() -> None:
    # Output ids and list order disagree; outputs must come in list order.
    nodes = (Node(5, "output"), Node(0, "input"), Node(1, "output"))
    conns = (Connection(0, 5, 2.0), Connection(0, 1, -1.0))
    for outputs in both_outputs(Network(nodes, conns), [[1.5]]):
        np.testing.assert_array_equal(outputs[0], [3.0, -1.5])


# --- compiled layout -------------------------------------------------------------------


def test_index_arrays_are_unsigned() -> None:
    net = chain("recurrent", self_loop=0.5)
    compiled = compile_network(net)
    for name in ("in_ptr", "in_src", "out_idx"):
        assert getattr(compiled, name).dtype == np.uint32, name
    assert compiled.act.dtype == np.uint8
    for name in ("bias", "gain", "in_w"):
        assert getattr(compiled, name).dtype == np.float64, name
    empty = compile_network(Network((Node(0, "input"), Node(1, "output")), ()))
    assert empty.in_src.dtype == np.uint32 and empty.in_src.shape == (0,)


def test_disabled_connections_are_not_compiled() -> None:
    nodes = (Node(0, "input"), Node(1, "output"))
    conns = (Connection(0, 1, 1.0), Connection(0, 1, 5.0, enabled=False))
    compiled = compile_network(Network(nodes, conns))
    assert compiled.in_w.tolist() == [1.0]
    assert compiled.in_ptr.tolist() == [0, 1]

"""Every task's fitness is finite and within the bounds its spec states, for any valid network.

The bounds are the tasks' own statements: (P - sum |clip(o, 0, 1) - t|)^2 lies in [0, P^2]
for the logic tasks (Stanley & Miikkulainen 2002, sec. 4.2, assume outputs in [0, 1]);
steps balanced lie in [0, episode_steps]; the damped fitness of Gruau, Whitley & Pyeatt
1996 is at least 0; a Gymnasium environment's mean return lies in [min_return,
max_return] (CartPole-v1: +1 a step for at most 500 steps). A non-finite output may make a
task's raw fitness NaN; the harness then records the task's worst fitness
(``bound_fitness``), as ``neuroyard evaluate`` shows.
"""

from __future__ import annotations

import json
import math

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from neuroyard import tasks
from neuroyard.cli.main import main
from neuroyard.core.activations import NAMES
from neuroyard.core.batch import compile_network
from neuroyard.core.network import Connection, Network, Node, dumps
from neuroyard.execution.contract import RunFault
from neuroyard.execution.runner import bound_fitness
from neuroyard.tasks.maze import shipped_maze

HUGE = 1e300
values = st.one_of(
    st.floats(-HUGE, HUGE, allow_nan=False, allow_infinity=False),
    st.sampled_from([HUGE, -HUGE, 1e308, -1e308, 0.0, 1.0, -1.0]),
)


@st.composite
def networks(draw, inputs: int, outputs: int) -> Network:
    """A valid network: the task's inputs and outputs, maybe a bias node, 0-4 hidden nodes,
    any activations, weights, biases and gains up to +-1e300 (and 1e308), either mode."""
    mode = draw(st.sampled_from(["feedforward", "recurrent"]))
    hidden = draw(st.integers(0, 4))
    bias = draw(st.booleans())
    nodes = [Node(k, "input") for k in range(inputs)]
    if bias:
        nodes.append(Node(inputs, "bias"))
    first = len(nodes)
    computed = [("hidden", first + k) for k in range(hidden)]
    computed += [("output", first + hidden + k) for k in range(outputs)]
    for kind, node_id in computed:
        act = draw(st.sampled_from(NAMES))
        nodes.append(Node(node_id, kind, act, draw(values), draw(values)))
    conns = []
    for _ in range(draw(st.integers(0, 12))):
        target = draw(st.sampled_from([n for _, n in computed]))
        # feedforward: links only from a lower id, so the network has no cycle
        sources = [n.id for n in nodes if mode == "recurrent" or n.id < target]
        conns.append(
            Connection(draw(st.sampled_from(sources)), target, draw(values), draw(st.booleans()))
        )
    return Network(tuple(nodes), tuple(conns), mode)


# the settings a task that needs settings is tested with (a shipped maze as a user's file,
# gymnasium's CartPole as the Gymnasium environment)
NEEDED = {
    "maze-file-v1": {"file": str(shipped_maze("medium"))},
    "gym-env-v1": {"env": "CartPole-v1"},
}


@pytest.mark.parametrize("task_id", tasks.task_ids())
def test_fitness_is_finite_and_within_the_stated_bounds(task_id):
    task = tasks.make(task_id, **NEEDED.get(task_id, {}))
    spec = task.spec
    high = math.inf if spec.max_fitness is None else spec.max_fitness

    @settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
    @given(networks(spec.inputs, spec.outputs))
    def check(network):
        raw = task.evaluate(compile_network(network, spec.inputs, spec.outputs))
        # a finite raw fitness is within the bounds; a non-finite one only signals a
        # non-finite output, which the harness turns into the worst fitness
        if math.isfinite(raw.fitness):
            assert spec.min_fitness <= raw.fitness <= high
        (bounded,), replaced = bound_fitness([raw], task_id, spec.min_fitness, spec.max_fitness, 0)
        assert math.isfinite(bounded.fitness)
        assert spec.min_fitness <= bounded.fitness <= high
        assert replaced == (0 if math.isfinite(raw.fitness) else 1)

    check()


def test_a_fitness_outside_the_bounds_is_a_fault_of_the_task():
    from neuroyard.core.evolver import Evaluation

    with pytest.raises(RunFault, match=r"candidate 1 of generation 4 the fitness 17.0, outside"):
        bound_fitness([Evaluation(3.0), Evaluation(17.0)], "xor-v2", 0.0, 16.0, 4)


def identity_output(inputs: int, outputs: int) -> Network:
    """Every input feeds each identity output with bias 100 (version 1 of XOR scored
    155,236)."""
    nodes = [Node(k, "input") for k in range(inputs)]
    nodes += [Node(inputs + j, "output", "identity", 100.0) for j in range(outputs)]
    conns = [Connection(k, inputs + j, 1.0) for k in range(inputs) for j in range(outputs)]
    return Network(tuple(nodes), tuple(conns))


def overflowing(inputs: int, outputs: int) -> Network:
    """Valid weights near 1e308 whose sums overflow: every output is NaN on every step."""
    nodes = [Node(k, "input") for k in range(inputs)]
    b, h = inputs, inputs + 1
    nodes += [Node(b, "bias"), Node(h, "hidden")]
    nodes += [Node(h + 1 + j, "output") for j in range(outputs)]
    conns = [Connection(b, h, 1e308)]
    for j in range(outputs):
        conns += [Connection(h, h + 1 + j, 1e308), Connection(h, h + 1 + j, -1e308)]
    return Network(tuple(nodes), tuple(conns))


@pytest.mark.parametrize("task_id", tasks.task_ids())
@pytest.mark.parametrize("build", [identity_output, overflowing], ids=["identity", "overflow"])
def test_evaluate_gives_finite_fitness_within_bounds(task_id, build, tmp_path, capsys):
    spec = tasks.make(task_id, **NEEDED.get(task_id, {})).spec
    path = tmp_path / "net.json"
    path.write_text(dumps(build(spec.inputs, spec.outputs)))
    given = [f"--setting={k}={v}" for k, v in NEEDED.get(task_id, {}).items()]
    assert main(["evaluate", str(path), "--task", task_id, *given]) == 0
    out = capsys.readouterr().out

    def refuse(token):
        raise ValueError(token)

    result = json.loads(out, parse_constant=refuse)  # strict JSON
    low, high = result["fitness_bounds"]
    assert math.isfinite(result["fitness"]) and low <= result["fitness"]
    assert high is None or result["fitness"] <= high
    if spec.id.startswith(("xor", "parity")):
        # the logic tasks: a NaN output is the worst fitness, an unbounded one is clipped
        expected_nan = build is overflowing
        assert result["non_finite_output"] is expected_nan
        assert result["solved"] is False

"""Batch compilation: the numba gate agrees with check(), and batches evaluate like singles."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from neuroyard.core.batch import compile_batch
from neuroyard.core.compiled import fingerprint, run_sequence
from neuroyard.core.errors import NetworkError
from neuroyard.core.network import Connection, Network, Node, check
from neuroyard.core.reference_activation import ReferenceNet
from neuroyard.tasks import make
from neuroyard.tasks.logic import Xor

ACTS = ("sigmoid", "neat_sigmoid", "tanh", "relu", "identity", "gauss", "sin", "abs", "step")


def random_network(rng: np.random.Generator, recurrent: bool) -> Network:
    """A random valid network: 2 inputs, a bias, 0-5 hidden, 1-2 outputs, shuffled ids."""
    n_hidden, n_out = int(rng.integers(0, 6)), int(rng.integers(1, 3))
    ids = [int(x) for x in rng.permutation(1000)[: 3 + n_hidden + n_out]]
    kinds = ["input", "input", "bias"] + ["hidden"] * n_hidden + ["output"] * n_out
    nodes = [
        Node(i, k) if k in ("input", "bias") else
        Node(i, k, str(rng.choice(ACTS)), float(rng.normal()), float(rng.uniform(0.5, 2)))
        for i, k in zip(ids, kinds, strict=True)
    ]  # fmt: skip
    conns = []
    for _ in range(int(rng.integers(0, 15))):
        a, b = (int(x) for x in rng.integers(0, len(ids), 2))
        if kinds[b] in ("input", "bias") or (not recurrent and a >= b):
            continue  # feedforward: only forward in list order, so no cycle
        conns.append(Connection(ids[a], ids[b], float(rng.normal(0, 2)), bool(rng.random() < 0.85)))
    return Network(tuple(nodes), tuple(conns), "recurrent" if recurrent else "feedforward")


def corruptions(net: Network) -> list[Network]:
    """Invalid variants of a valid network, one broken rule each."""
    nodes, conns = list(net.nodes), list(net.connections)
    hidden = next(n for n in nodes if n.kind in ("hidden", "output"))
    out = [
        dataclasses.replace(net, nodes=(*nodes, nodes[-1])),  # duplicate id
        dataclasses.replace(net, connections=(*conns, Connection(nodes[0].id, 99_999, 1.0))),
        dataclasses.replace(net, connections=(*conns, Connection(hidden.id, nodes[0].id, 1.0))),
        dataclasses.replace(
            net, connections=(*conns, Connection(nodes[0].id, hidden.id, float("nan")))
        ),
        dataclasses.replace(net, connections=(*conns, Connection(nodes[0].id, hidden.id, "0.5"))),
        dataclasses.replace(net, connections=(*conns, Connection(nodes[0].id, hidden.id, True))),
        dataclasses.replace(net, connections=(*conns, Connection(nodes[0].id, hidden.id, 1.0, 1))),
        dataclasses.replace(
            net, nodes=(*nodes[:-1], dataclasses.replace(nodes[-1], activation="nope"))
        ),
        dataclasses.replace(
            net, nodes=(*nodes[:-1], dataclasses.replace(nodes[-1], gain=float("inf")))
        ),
        dataclasses.replace(
            net, nodes=(*nodes[:-1], dataclasses.replace(nodes[-1], kind="middle"))
        ),
        dataclasses.replace(net, nodes=(dataclasses.replace(nodes[0], bias=0.5), *nodes[1:])),
        dataclasses.replace(net, nodes=(dataclasses.replace(nodes[0], id=True), *nodes[1:])),
        dataclasses.replace(
            net,
            nodes=nodes[1:],
            connections=tuple(c for c in conns if nodes[0].id not in (c.source, c.target)),
        ),  # one input too few
        dataclasses.replace(net, mode="sideways"),
    ]
    if net.mode == "feedforward":
        out.append(
            dataclasses.replace(net, connections=(*conns, Connection(hidden.id, hidden.id, 1.0)))
        )
    return out


@pytest.mark.parametrize("seed", range(20))
def test_compiler_rejects_exactly_what_check_rejects_with_its_message(seed):
    rng = np.random.default_rng(seed)
    good = [random_network(rng, recurrent=bool(seed % 2)) for _ in range(6)]
    compile_batch(good, 2)  # a valid batch compiles
    for bad in corruptions(good[3]):
        batch = good[:3] + [bad] + good[4:]
        with pytest.raises(NetworkError) as from_check:
            check(bad, 2, None, "candidate 3")
        with pytest.raises(NetworkError) as from_batch:
            compile_batch(batch, 2)
        assert str(from_batch.value) == str(from_check.value)


@pytest.mark.parametrize("recurrent", [False, True])
def test_batch_members_step_like_the_plain_python_reference(recurrent):
    rng = np.random.default_rng(7)
    nets = [random_network(rng, recurrent) for _ in range(40)]
    batch = compile_batch(nets, 2)
    inputs = rng.uniform(-1, 1, (12, 2))
    for i, net in enumerate(nets):
        ref = ReferenceNet(net)
        expected = np.array([ref.step(row) for row in inputs])
        np.testing.assert_allclose(
            run_sequence(batch.network(i), inputs, False), expected, rtol=1e-12, atol=1e-12
        )


def test_xor_batch_kernel_equals_one_network_at_a_time():
    rng = np.random.default_rng(3)
    nets = [random_network(rng, bool(k % 2)) for k in range(60)]
    nets = [n for n in nets if n.n_outputs == 1]
    task: Xor = make("xor-v2")
    batch = compile_batch(nets, 2, 1)
    together = [e.fitness for e in task.evaluate_batch(batch)]
    alone = [task.evaluate(batch.network(i)).fitness for i in range(batch.size)]
    assert together == alone


def test_integer_types_and_id_range_agree_between_check_and_compiler():
    base = random_network(np.random.default_rng(1), recurrent=False)
    first = base.nodes[0]
    numpy_id = dataclasses.replace(
        base,
        nodes=(dataclasses.replace(first, id=np.int64(first.id)), *base.nodes[1:]),
    )
    check(numpy_id)  # numpy integers are integers
    compile_batch([numpy_id])
    huge = dataclasses.replace(base, nodes=(dataclasses.replace(first, id=2**70), *base.nodes[1:]))
    with pytest.raises(NetworkError, match=r"id must be an integer in \[-2\*\*63, 2\*\*63\)"):
        compile_batch([huge])


def test_fingerprint_tells_networks_apart_and_recognises_copies():
    rng = np.random.default_rng(5)
    nets = [random_network(rng, recurrent=bool(k % 2)) for k in range(20)]
    batch = compile_batch(nets + nets)  # every network twice, as an unchanged elite
    prints = [fingerprint(batch.network(i)) for i in range(batch.size)]
    assert prints[:20] == prints[20:]
    assert len(set(prints[:20])) == len(set(nets))
    # a change of one enabled weight or of the mode is a different network; a change of a
    # disabled weight is not (it computes the same)
    first = nets[0]
    links = list(first.connections)
    on = next(k for k, c in enumerate(links) if c.enabled)
    off = next(k for k, c in enumerate(links) if not c.enabled)
    inert = links.copy()
    inert[off] = dataclasses.replace(links[off], weight=links[off].weight + 1.0)
    same = dataclasses.replace(first, connections=tuple(inert))
    assert fingerprint(compile_batch([same]).network(0)) == prints[0]
    moved = links.copy()
    moved[on] = dataclasses.replace(links[on], weight=links[on].weight + 1e-9)
    variants = [
        dataclasses.replace(first, connections=tuple(moved)),
        dataclasses.replace(
            first, mode="recurrent" if first.mode == "feedforward" else "feedforward"
        ),
    ]
    for variant in variants:
        assert fingerprint(compile_batch([variant]).network(0)) != prints[0]

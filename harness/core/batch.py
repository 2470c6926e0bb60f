"""Checking and compiling a whole batch of networks at once.

An evolver's generation is checked and flattened in one numba call: Python only reads
the attributes of the nodes and connections into flat lists (one pass per batch), and the
kernel applies every rule of the format, orders feedforward networks topologically and
builds the compiled arrays of all networks, concatenated. This keeps the harness's cost
per network small next to the evolver's (issue: harness share of a NEAT run).

The kernel only says *which* network broke a rule; :func:`~.network.check` then explains
it in words, so every message comes from one place. Tests hold the two to agreement.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from typing import NamedTuple

import numba
import numpy as np

from neuroyard.core.activations import CODES
from neuroyard.core.compiled import CompiledNetwork
from neuroyard.core.errors import NetworkError
from neuroyard.core.flat import FlatBatch
from neuroyard.core.network import Connection, Network, Node, check

_IDENTITY = CODES["identity"]


class CompiledBatch(NamedTuple):
    """Compiled networks concatenated field by field (same layout as :class:`CompiledNetwork`).

    Network i owns ``act/bias/gain[node_ptr[i]:node_ptr[i+1]]``, ``in_ptr[ptr_ptr[i]:
    ptr_ptr[i+1]]`` (offsets relative to its own edges), ``in_src/in_w[edge_ptr[i]:
    edge_ptr[i+1]]`` and ``out_idx[out_ptr[i]:out_ptr[i+1]]``. In numba use :func:`member`;
    in Python :meth:`network`.
    """

    size: int
    recurrent: np.ndarray  # bool[size]
    n_inputs: np.ndarray  # int64[size]
    n_bias: np.ndarray  # int64[size]
    n_nodes: np.ndarray  # int64[size]
    node_ptr: np.ndarray  # int64[size + 1]
    ptr_ptr: np.ndarray  # int64[size + 1]
    edge_ptr: np.ndarray  # int64[size + 1]
    out_ptr: np.ndarray  # int64[size + 1]
    act: np.ndarray
    bias: np.ndarray
    gain: np.ndarray
    in_ptr: np.ndarray
    in_src: np.ndarray
    in_w: np.ndarray
    out_idx: np.ndarray

    def network(self, i: int) -> CompiledNetwork:
        """Network ``i`` as a :class:`CompiledNetwork` of views (no copy)."""
        a, b = self.node_ptr[i], self.node_ptr[i + 1]
        e, f = self.edge_ptr[i], self.edge_ptr[i + 1]
        return CompiledNetwork(
            bool(self.recurrent[i]),
            int(self.n_inputs[i]),
            int(self.n_bias[i]),
            int(self.n_nodes[i]),
            self.act[a:b],
            self.bias[a:b],
            self.gain[a:b],
            self.in_ptr[self.ptr_ptr[i] : self.ptr_ptr[i + 1]],
            self.in_src[e:f],
            self.in_w[e:f],
            self.out_idx[self.out_ptr[i] : self.out_ptr[i + 1]],
        )


@numba.njit(cache=True, inline="always")
def member(batch: CompiledBatch, i: int) -> CompiledNetwork:
    """Network ``i`` of a batch inside numba, as views (no copy)."""
    a, b = batch.node_ptr[i], batch.node_ptr[i + 1]
    e, f = batch.edge_ptr[i], batch.edge_ptr[i + 1]
    return CompiledNetwork(
        batch.recurrent[i],
        batch.n_inputs[i],
        batch.n_bias[i],
        batch.n_nodes[i],
        batch.act[a:b],
        batch.bias[a:b],
        batch.gain[a:b],
        batch.in_ptr[batch.ptr_ptr[i] : batch.ptr_ptr[i + 1]],
        batch.in_src[e:f],
        batch.in_w[e:f],
        batch.out_idx[batch.out_ptr[i] : batch.out_ptr[i + 1]],
    )


@numba.njit(cache=True, _nrt=False)
def _compile_all(
    node_ptr, conn_ptr, modes, kinds, acts, enabled, ids, by_id, biases, gains, src, dst,
    weight, want_inputs, want_outputs, out,
):  # fmt: skip
    """Check every network and fill the concatenated arrays ``out`` (allocated by
    :func:`compile_flat`); see :class:`CompiledBatch`. ``by_id``: the positions of each
    network's nodes in the order of their ids (within the network's segment).

    Returns the index of the first bad network, or -1. ``want_*`` < 0: any count.

    Arrays are made outside and searched by hand: numba compiles each array constructor
    and library sort of a kernel anew on a machine whose cache is cold (seconds each).
    """
    (recurrent, n_inputs, n_bias, n_nodes, node_out, ptr_out, edge_out, outs_out, act, bias,
     gain, in_ptr, in_src, in_w, out_idx, work) = out  # fmt: skip
    size = modes.shape[0]
    for i in range(size):
        a, b = node_ptr[i], node_ptr[i + 1]
        c, d = conn_ptr[i], conn_ptr[i + 1]
        n = b - a
        if modes[i] < 0:
            return i
        # scratch, cut from one work array that every network reuses: positions by id,
        # slots, evaluation order, in-degrees, the stack of Kahn's algorithm, the
        # connections' endpoints, and the connections grouped by target and by source
        order = work[0:n]
        slot = work[n : 2 * n]
        comp = work[2 * n : 3 * n]
        indegree = work[3 * n : 4 * n]
        stack = work[4 * n : 5 * n]
        links = d - c
        src_pos = work[5 * n : 5 * n + links]
        dst_pos = work[5 * n + links : 5 * n + 2 * links]
        target_ptr = work[5 * n + 2 * links : 6 * n + 2 * links + 1]
        target_order = work[6 * n + 2 * links + 1 : 6 * n + 3 * links + 1]
        source_ptr = work[6 * n + 3 * links + 1 : 7 * n + 3 * links + 2]
        source_order = work[7 * n + 3 * links + 2 : 7 * n + 4 * links + 2]
        fill = work[7 * n + 4 * links + 2 : 8 * n + 4 * links + 2]
        bad = False
        for k in range(n):
            order[k] = by_id[a + k] - a
            if k > 0 and ids[a + order[k]] == ids[a + order[k - 1]]:
                bad = True
        # slots: inputs, biases (list order), then computed nodes
        n_in = 0
        n_b = 0
        n_out = 0
        for k in range(n):
            kind = kinds[a + k]
            if kind == 0:
                n_in += 1
            elif kind == 1:
                n_b += 1
            elif kind == 3:
                n_out += 1
            if kind < 0:
                bad = True
            elif kind <= 1:
                if acts[a + k] != _IDENTITY or biases[a + k] != 0.0 or gains[a + k] != 1.0:
                    bad = True
            elif (
                acts[a + k] < 0
                or not math.isfinite(biases[a + k])
                or not math.isfinite(gains[a + k])
            ):
                bad = True
        if (want_inputs >= 0 and n_in != want_inputs) or (
            want_outputs >= 0 and n_out != want_outputs
        ):
            bad = True
        # connections: endpoints exist, targets computed, finite weights
        for e in range(c, d):
            ps = _position(ids, order, a, src[e])
            pt = _position(ids, order, a, dst[e])
            if ps < 0 or pt < 0:
                bad = True
                break
            src_pos[e - c] = ps
            dst_pos[e - c] = pt
            if kinds[a + pt] <= 1 or not math.isfinite(weight[e]):
                bad = True
                break
        if bad:
            return i
        # enabled connections grouped by target and by source, each in connection order
        _group(dst_pos, enabled[c:d], n, target_ptr, fill, target_order)
        _group(src_pos, enabled[c:d], n, source_ptr, fill, source_order)
        # evaluation order of computed nodes
        n_comp = n - n_in - n_b
        m = 0
        if modes[i] == 1:  # recurrent: list order
            for k in range(n):
                if kinds[a + k] >= 2:
                    comp[m] = k
                    m += 1
        else:  # feedforward: Kahn's algorithm over enabled connections
            for k in range(n):
                indegree[k] = 0
            for e in range(d - c):
                if enabled[c + e] and kinds[a + src_pos[e]] >= 2:
                    indegree[dst_pos[e]] += 1
            top = 0
            for k in range(n - 1, -1, -1):
                if kinds[a + k] >= 2 and indegree[k] == 0:
                    stack[top] = k
                    top += 1
            while top > 0:
                top -= 1
                k = stack[top]
                comp[m] = k
                m += 1
                for x in range(source_ptr[k], source_ptr[k + 1]):
                    t = dst_pos[source_order[x]]
                    indegree[t] -= 1
                    if indegree[t] == 0:
                        stack[top] = t
                        top += 1
            if m < n_comp:  # a cycle
                return i
        s_in = 0
        s_b = n_in
        for k in range(n):
            if kinds[a + k] == 0:
                slot[k] = s_in
                s_in += 1
            elif kinds[a + k] == 1:
                slot[k] = s_b
                s_b += 1
        first = n_in + n_b
        for j in range(n_comp):
            slot[comp[j]] = first + j
        # fill this network's part of the concatenated arrays
        na, pa, ea, oa = node_out[i], ptr_out[i], edge_out[i], outs_out[i]
        edges = 0
        for j in range(n_comp):
            k = comp[j]
            act[na + j] = acts[a + k]
            bias[na + j] = biases[a + k]
            gain[na + j] = gains[a + k]
            in_ptr[pa + j] = edges
            for x in range(target_ptr[k], target_ptr[k + 1]):
                e = target_order[x]
                in_src[ea + edges] = slot[src_pos[e]]
                in_w[ea + edges] = weight[c + e]
                edges += 1
        in_ptr[pa + n_comp] = edges
        outs = 0
        for k in range(n):
            if kinds[a + k] == 3:
                out_idx[oa + outs] = slot[k]
                outs += 1
        recurrent[i] = modes[i] == 1
        n_inputs[i] = n_in
        n_bias[i] = n_b
        n_nodes[i] = n
        node_out[i + 1] = na + n_comp
        ptr_out[i + 1] = pa + n_comp + 1
        edge_out[i + 1] = ea + edges
        outs_out[i + 1] = oa + outs
    return -1


@numba.njit(cache=True, inline="always")
def _position(ids, order, a, value):  # fmt: skip
    """The position of the node with id ``value`` in the network whose nodes start at
    ``a`` (``order``: its positions sorted by id), or -1; a binary search."""
    low, high = 0, order.shape[0]
    while low < high:
        middle = (low + high) // 2
        if ids[a + order[middle]] < value:
            low = middle + 1
        else:
            high = middle
    if low < order.shape[0] and ids[a + order[low]] == value:
        return order[low]
    return -1


@numba.njit(cache=True, _nrt=False)
def _group(key, enabled, n, ptr, fill, order):  # fmt: skip
    """Stable counting sort of the enabled edges by ``key`` (a node position 0..n-1), into
    the buffers ``ptr`` (n + 1), ``fill`` (n) and ``order`` (the edges): edges with key k
    are ``order[ptr[k]:ptr[k+1]]``, in their original order."""
    for k in range(n + 1):
        ptr[k] = 0
    for e in range(key.shape[0]):
        if enabled[e]:
            ptr[key[e] + 1] += 1
    for k in range(n):
        ptr[k + 1] += ptr[k]
        fill[k] = ptr[k]
    for e in range(key.shape[0]):
        if enabled[e]:
            order[fill[key[e]]] = e
            fill[key[e]] += 1


def compile_batch(
    networks: Sequence[Network],
    inputs: int | None = None,
    outputs: int | None = None,
    label: Callable[[int], str] = "candidate {}".format,
) -> CompiledBatch:
    """Check every network of the batch and compile them all into one :class:`CompiledBatch`.

    Raises :class:`NetworkError` for the first network that breaks a rule, with the
    message of :func:`~.network.check`, prefixed by ``label(k)`` for network k.
    """
    flat = FlatBatch.of_networks(networks)
    if flat is None or flat.has_unknown_names:
        first_bad(networks, inputs, outputs, label)  # raises for the first bad network
    assert flat is not None
    return compile_flat(flat, inputs, outputs, label, networks)


def compile_flat(
    flat: FlatBatch,
    inputs: int | None = None,
    outputs: int | None = None,
    label: Callable[[int], str] = "candidate {}".format,
    networks: Sequence[Network] | None = None,
) -> CompiledBatch:
    """Check every network of a flat batch and compile them all, as :func:`compile_batch`
    does; ``networks``, when the batch was read from them, explain a broken rule (else
    the broken network is rebuilt from the arrays, :meth:`FlatBatch.network`)."""
    want_in = -1 if inputs is None else inputs
    want_out = -1 if outputs is None else outputs
    size, nodes, conns = flat.size, flat.ids.shape[0], flat.src.shape[0]
    owner = np.repeat(np.arange(size), np.diff(flat.node_ptr))
    by_id = np.lexsort((flat.ids, owner))  # each network's nodes by id, network by network
    out = (
        np.zeros(size, np.bool_), *(np.zeros(size, np.int64) for _ in range(3)),
        *(np.zeros(size + 1, np.int64) for _ in range(4)),
        np.zeros(nodes, np.uint8), np.zeros(nodes), np.zeros(nodes),
        np.zeros(nodes + size, np.uint32), np.zeros(conns, np.uint32), np.zeros(conns),
        np.zeros(nodes, np.uint32), np.zeros(8 * nodes + 4 * conns + 2, np.int64),
    )  # fmt: skip
    kernel = _compile_all.py_func if _AS_PYTHON else _compile_all
    bad = kernel(
        flat.node_ptr, flat.conn_ptr, flat.modes, flat.kinds, flat.acts, flat.enabled,
        flat.ids, by_id, flat.biases, flat.gains, flat.src, flat.dst, flat.weight, want_in,
        want_out, out,
    )  # fmt: skip
    if bad < 0:
        rec, n_in, n_b, n_n, node_ptr, ptr_ptr, edge_ptr, out_ptr, *data = out
        act, bias, gain, in_ptr, in_src, in_w, out_idx, _ = data
        return CompiledBatch(
            flat.size, rec, n_in, n_b, n_n, node_ptr, ptr_ptr, edge_ptr, out_ptr,
            act[: node_ptr[-1]], bias[: node_ptr[-1]], gain[: node_ptr[-1]],
            in_ptr[: ptr_ptr[-1]], in_src[: edge_ptr[-1]], in_w[: edge_ptr[-1]],
            out_idx[: out_ptr[-1]],
        )  # fmt: skip
    suspect = networks[bad] if networks is not None else flat.network(bad)
    check(suspect, inputs, outputs, label(bad))  # explains the broken rule in words
    raise NetworkError(f"{label(bad)}: rejected by the compiler but not by check()")


def load_compiler() -> None:
    """Load the batch compiler's kernel in this process (compiling it when numba's cache
    does not hold it): its types do not depend on the networks, so one small batch does."""
    nodes = (Node(0, "input"), Node(1, "output", "sigmoid"))
    compile_batch([Network(nodes, (Connection(0, 1, 1.0),))])


_AS_PYTHON = False  # compile_flat runs its kernel as plain Python (see compiler_as_python)
_HELPERS = ("_group", "_position")  # the kernels it calls


@contextmanager
def compiler_as_python() -> Iterator[None]:
    """While the block runs, :func:`compile_flat` runs the batch compiler as plain Python,
    fast enough for the few networks of a warm-up, so that this process can compile the
    tasks' kernels while another compiles the compiler (:func:`load_compiler`;
    :mod:`neuroyard.execution.kernels`). Not thread-safe: for one thread's warm-up."""
    global _AS_PYTHON
    kernels = {name: globals()[name] for name in _HELPERS}
    globals().update({name: kernel.py_func for name, kernel in kernels.items()})
    _AS_PYTHON = True
    try:
        yield
    finally:
        _AS_PYTHON = False
        globals().update(kernels)


def first_bad(
    networks: Sequence[Network],
    inputs: int | None,
    outputs: int | None,
    label: Callable[[int], str],
) -> None:
    """Raise the :class:`NetworkError` of the first network of ``networks`` that breaks a
    rule (:func:`~.network.check`); return when none does."""
    for k, network in enumerate(networks):
        check(network, inputs, outputs, label(k))


def compile_network(
    network: Network, inputs: int | None = None, outputs: int | None = None, where: str = "network"
) -> CompiledNetwork:
    """Check ``network`` against every rule of the format (a :class:`NetworkError` names the
    offender, prefixed by ``where``) and flatten it; a batch of one, see :func:`compile_batch`."""
    return compile_batch([network], inputs, outputs, lambda _: where).network(0)

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

from collections.abc import Callable, Sequence
from typing import NamedTuple

import numba
import numpy as np

from neuroyard.core.activations import CODES
from neuroyard.core.compiled import CompiledNetwork
from neuroyard.core.errors import NetworkError
from neuroyard.core.flat import FlatBatch
from neuroyard.core.network import Network, check

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


@numba.njit(cache=True)
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


@numba.njit(cache=True)
def _compile_all(
    node_ptr, conn_ptr, modes, kinds, acts, enabled, ids, biases, gains, src, dst, weight,
    want_inputs, want_outputs,
):  # fmt: skip
    """Check every network and build the concatenated arrays; see :class:`CompiledBatch`.

    Returns (index of the first bad network or -1, arrays...). ``want_*`` < 0: any count.
    """
    size = modes.shape[0]
    n_nodes_total = ids.shape[0]
    n_conn_total = src.shape[0]
    recurrent = np.zeros(size, np.bool_)
    n_inputs = np.zeros(size, np.int64)
    n_bias = np.zeros(size, np.int64)
    n_nodes = np.zeros(size, np.int64)
    node_out = np.zeros(size + 1, np.int64)
    ptr_out = np.zeros(size + 1, np.int64)
    edge_out = np.zeros(size + 1, np.int64)
    outs_out = np.zeros(size + 1, np.int64)
    act = np.zeros(n_nodes_total, np.uint8)
    bias = np.zeros(n_nodes_total)
    gain = np.zeros(n_nodes_total)
    in_ptr = np.zeros(n_nodes_total + size, np.uint32)
    in_src = np.zeros(n_conn_total, np.uint32)
    in_w = np.zeros(n_conn_total)
    out_idx = np.zeros(n_nodes_total, np.uint32)
    failed = -1
    for i in range(size):
        a, b = node_ptr[i], node_ptr[i + 1]
        c, d = conn_ptr[i], conn_ptr[i + 1]
        n = b - a
        if modes[i] < 0:
            failed = i
            break
        # node ids: sorted copy for duplicate detection and lookups
        order = np.argsort(ids[a:b], kind="mergesort")
        sorted_ids = ids[a:b][order]
        bad = False
        for k in range(1, n):
            if sorted_ids[k] == sorted_ids[k - 1]:
                bad = True
        # slots: inputs, biases (list order), then computed nodes
        slot = np.full(n, -1, np.int64)
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
            elif acts[a + k] < 0 or not np.isfinite(biases[a + k]) or not np.isfinite(gains[a + k]):
                bad = True
        if (want_inputs >= 0 and n_in != want_inputs) or (
            want_outputs >= 0 and n_out != want_outputs
        ):
            bad = True
        # connections: endpoints exist, targets computed, finite weights
        src_pos = np.zeros(d - c, np.int64)
        dst_pos = np.zeros(d - c, np.int64)
        for e in range(c, d):
            ps = np.searchsorted(sorted_ids, src[e])
            pt = np.searchsorted(sorted_ids, dst[e])
            if ps >= n or sorted_ids[ps] != src[e] or pt >= n or sorted_ids[pt] != dst[e]:
                bad = True
                break
            src_pos[e - c] = order[ps]
            dst_pos[e - c] = order[pt]
            if kinds[a + dst_pos[e - c]] <= 1 or not np.isfinite(weight[e]):
                bad = True
                break
        if bad:
            failed = i
            break
        # enabled connections grouped by target and by source, each in connection order
        by_target = _group(dst_pos, enabled[c:d], n)
        by_source = _group(src_pos, enabled[c:d], n)
        # evaluation order of computed nodes
        n_comp = n - n_in - n_b
        comp = np.zeros(n_comp, np.int64)  # node positions in evaluation order
        m = 0
        if modes[i] == 1:  # recurrent: list order
            for k in range(n):
                if kinds[a + k] >= 2:
                    comp[m] = k
                    m += 1
        else:  # feedforward: Kahn's algorithm over enabled connections
            indegree = np.zeros(n, np.int64)
            for e in range(d - c):
                if enabled[c + e] and kinds[a + src_pos[e]] >= 2:
                    indegree[dst_pos[e]] += 1
            stack = np.zeros(n, np.int64)
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
                for x in range(by_source[0][k], by_source[0][k + 1]):
                    t = dst_pos[by_source[1][x]]
                    indegree[t] -= 1
                    if indegree[t] == 0:
                        stack[top] = t
                        top += 1
            if m < n_comp:  # a cycle
                failed = i
                break
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
            for x in range(by_target[0][k], by_target[0][k + 1]):
                e = by_target[1][x]
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
    return (
        failed,
        recurrent,
        n_inputs,
        n_bias,
        n_nodes,
        node_out,
        ptr_out,
        edge_out,
        outs_out,
        act,
        bias,
        gain,
        in_ptr,
        in_src,
        in_w,
        out_idx,
    )


@numba.njit(cache=True)
def _group(key: np.ndarray, enabled: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Stable counting sort of the enabled edges by ``key`` (a node position 0..n-1):
    edges with key k are ``order[ptr[k]:ptr[k+1]]``, in their original order."""
    ptr = np.zeros(n + 1, np.int64)
    for e in range(key.shape[0]):
        if enabled[e]:
            ptr[key[e] + 1] += 1
    for k in range(n):
        ptr[k + 1] += ptr[k]
    fill = ptr[:-1].copy()
    order = np.zeros(ptr[n], np.int64)
    for e in range(key.shape[0]):
        if enabled[e]:
            order[fill[key[e]]] = e
            fill[key[e]] += 1
    return ptr, order


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
    bad, *arrays = _compile_all(
        flat.node_ptr, flat.conn_ptr, flat.modes, flat.kinds, flat.acts, flat.enabled,
        flat.ids, flat.biases, flat.gains, flat.src, flat.dst, flat.weight, want_in, want_out,
    )  # fmt: skip
    if bad < 0:
        rec, n_in, n_b, n_n, node_ptr, ptr_ptr, edge_ptr, out_ptr, *data = arrays
        act, bias, gain, in_ptr, in_src, in_w, out_idx = data
        return CompiledBatch(
            flat.size, rec, n_in, n_b, n_n, node_ptr, ptr_ptr, edge_ptr, out_ptr,
            act[: node_ptr[-1]], bias[: node_ptr[-1]], gain[: node_ptr[-1]],
            in_ptr[: ptr_ptr[-1]], in_src[: edge_ptr[-1]], in_w[: edge_ptr[-1]],
            out_idx[: out_ptr[-1]],
        )  # fmt: skip
    suspect = networks[bad] if networks is not None else flat.network(bad)
    check(suspect, inputs, outputs, label(bad))  # explains the broken rule in words
    raise NetworkError(f"{label(bad)}: rejected by the compiler but not by check()")


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

"""The flat-array form of a network and the numba kernels that run it.

Networks are flattened by :mod:`.batch` (the compiler); this module knows nothing of the
network format.

Layout of a compiled network with n nodes: slots ``0 .. n_inputs-1`` hold the input
nodes in list order, the next ``n_bias`` slots hold bias nodes (value 1.0), the remaining
slots hold hidden and output nodes in evaluation order (topological for feedforward,
node-list order for recurrent). Incoming enabled connections of computed node k (k counted
from the first computed slot) are ``in_src[in_ptr[k]:in_ptr[k+1]]`` with weights ``in_w``.
Index arrays are unsigned (uint32): numba then skips negative-index wraparound checks.

A task's episode loop calls :func:`reset` once and :func:`step` once per control step,
all inside one ``@njit`` function, so an episode is one call from Python.
"""

from __future__ import annotations

import hashlib
from typing import NamedTuple

import numba
import numpy as np

from neuroyard.core.activations import apply


class CompiledNetwork(NamedTuple):
    """Flat-array form of a network (see module docstring). Pass it whole to kernels."""

    recurrent: bool
    n_inputs: int
    n_bias: int
    n_nodes: int
    act: np.ndarray  # uint8[n_computed], activation codes
    bias: np.ndarray  # float64[n_computed]
    gain: np.ndarray  # float64[n_computed]
    in_ptr: np.ndarray  # uint32[n_computed + 1]
    in_src: np.ndarray  # uint32[n_edges], slot of each source
    in_w: np.ndarray  # float64[n_edges]
    out_idx: np.ndarray  # uint32[n_outputs], slots of the output nodes in list order


def fingerprint(net: CompiledNetwork) -> bytes:
    """A 16-byte digest of everything that determines what ``net`` computes.

    Two compilations of the same network give the same digest; networks with different
    weights, activations or wiring give different ones (up to hash collisions)."""
    digest = hashlib.blake2b(digest_size=16)
    digest.update(repr((net.recurrent, net.n_inputs, net.n_bias, net.n_nodes)).encode())
    for array in (net.act, net.bias, net.gain, net.in_ptr, net.in_src, net.in_w, net.out_idx):
        digest.update(array.tobytes())  # C-order bytes, views included
    return digest.digest()


@numba.njit(cache=True, inline="always")
def new_state(net: CompiledNetwork) -> tuple[np.ndarray, np.ndarray]:
    """Allocate (values, scratch) buffers for ``net``; call :func:`reset` before use."""
    values = np.zeros(net.n_nodes, dtype=np.float64)
    scratch = np.zeros(net.n_nodes, dtype=np.float64)
    reset(net, values)
    return values, scratch


@numba.njit(cache=True, inline="always")
def reset(net: CompiledNetwork, values: np.ndarray) -> None:
    """Start of an episode: every node 0, bias nodes 1."""
    values[:] = 0.0
    for k in range(net.n_inputs, net.n_inputs + net.n_bias):
        values[k] = 1.0


# _nrt=False: step allocates nothing, and without the runtime's reference counting on the
# arrays it touches it runs about 2x faster per call inside episode loops (measured in
# tests/bench/kernel_speed.py). It is why the state copy below is a plain loop.
@numba.njit(cache=True, _nrt=False)
def step(
    net: CompiledNetwork,
    values: np.ndarray,
    scratch: np.ndarray,
    inputs: np.ndarray,
    outputs: np.ndarray,
) -> None:
    """One network step: read ``inputs``, update nodes by the mode's rule, write ``outputs``."""
    n_in = net.n_inputs
    for i in range(n_in):
        values[i] = inputs[i]
    first = n_in + net.n_bias
    src_vals = values
    if net.recurrent:
        for i in range(values.shape[0]):
            scratch[i] = values[i]
        src_vals = scratch
    in_ptr = net.in_ptr
    in_src = net.in_src
    in_w = net.in_w
    for k in range(net.n_nodes - first):
        total = 0.0
        for e in range(in_ptr[k], in_ptr[k + 1]):
            total += in_w[e] * src_vals[in_src[e]]
        values[first + k] = apply(net.act[k], net.gain[k] * (net.bias[k] + total))
    for j in range(net.out_idx.shape[0]):
        outputs[j] = values[net.out_idx[j]]


@numba.njit(cache=True)
def run_sequence(net: CompiledNetwork, inputs: np.ndarray, reset_each: bool) -> np.ndarray:
    """Step ``net`` over the rows of ``inputs`` (T x n_inputs); return outputs (T x n_outputs).

    With ``reset_each`` the state is reset before every row (independent patterns, as in
    the logic tasks); otherwise the rows form one episode.
    """
    values, scratch = new_state(net)
    n_out = net.out_idx.shape[0]
    out = np.zeros((inputs.shape[0], n_out), dtype=np.float64)
    row_in = np.zeros(inputs.shape[1], dtype=np.float64)  # plain buffers: no view per step
    row_out = np.zeros(n_out, dtype=np.float64)
    for t in range(inputs.shape[0]):
        if reset_each:
            reset(net, values)
        for i in range(row_in.shape[0]):
            row_in[i] = inputs[t, i]
        step(net, values, scratch, row_in, row_out)
        for j in range(n_out):
            out[t, j] = row_out[j]
    return out

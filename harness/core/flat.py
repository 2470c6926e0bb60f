"""A batch of networks as flat arrays: what the compiler checks, and what crosses between
processes.

:class:`FlatBatch` holds every node's and connection's attributes of a whole batch in
flat numpy arrays (network i owns nodes ``node_ptr[i]:node_ptr[i+1]`` and connections
``conn_ptr[i]:conn_ptr[i+1]``, in their list order), with kinds, activations and modes as
small integer codes (-1: a name the format does not know). It is the form
:func:`~.batch.compile_flat` checks and compiles in one numba call, and the form in which
an evolver running in a process of its own hands its batch to the harness
(:meth:`to_bytes`, :meth:`from_bytes`): numbers only, read with :func:`numpy.frombuffer`,
never unpickled. :meth:`from_bytes` checks the structure (array lengths, pointers, code
ranges) so that the compiler may index the arrays safely whatever the bytes were; the rules
of the format are the compiler's to check, and :meth:`network` rebuilds any member as a
:class:`~.network.Network` (to store it, or for :func:`~.network.check` to explain a
broken rule in words).
"""

from __future__ import annotations

import struct
from collections.abc import Sequence
from dataclasses import dataclass
from itertools import accumulate, repeat

import numpy as np

from neuroyard.core.activations import CODES, NAMES
from neuroyard.core.network import MODES, NODE_KINDS, Connection, Network, Node

KIND_CODE = {name: code for code, name in enumerate(NODE_KINDS)}  # input 0 ... output 3
MODE_CODE = {name: code for code, name in enumerate(MODES)}  # feedforward 0, recurrent 1
HIDDEN = KIND_CODE["hidden"]
_HEADER = struct.Struct("<4sqqq")  # magic, networks, nodes, connections
_MAGIC = b"NYF1"
# the arrays in wire order: name, dtype, length from (networks, nodes, connections)
_FIELDS: tuple[tuple[str, str, int], ...] = (
    ("node_ptr", "<i8", 0),
    ("conn_ptr", "<i8", 1),
    ("modes", "<i8", 2),
    ("kinds", "<i8", 3),
    ("acts", "<i8", 3),
    ("ids", "<i8", 3),
    ("biases", "<f8", 3),
    ("gains", "<f8", 3),
    ("enabled", "|b1", 4),
    ("src", "<i8", 4),
    ("dst", "<i8", 4),
    ("weight", "<f8", 4),
)


@dataclass(frozen=True)
class FlatBatch:
    """A batch of networks as flat arrays (see the module docstring)."""

    node_ptr: np.ndarray  # int64[size + 1]
    conn_ptr: np.ndarray  # int64[size + 1]
    modes: np.ndarray  # int64[size]
    kinds: np.ndarray  # int64[nodes]
    acts: np.ndarray  # int64[nodes]
    ids: np.ndarray  # int64[nodes]
    biases: np.ndarray  # float64[nodes]
    gains: np.ndarray  # float64[nodes]
    enabled: np.ndarray  # bool[connections]
    src: np.ndarray  # int64[connections]
    dst: np.ndarray  # int64[connections]
    weight: np.ndarray  # float64[connections]

    @property
    def size(self) -> int:
        """Networks in the batch."""
        return len(self.modes)

    @property
    def has_unknown_names(self) -> bool:
        """Whether a kind, an activation or a mode has a name the format does not know."""
        return bool((self.kinds < 0).any() or (self.acts < 0).any() or (self.modes < 0).any())

    @classmethod
    def of_networks(cls, networks: Sequence[Network]) -> FlatBatch | None:
        """The batch's attributes read into flat arrays in one pass, or None when a value
        has a type the arrays cannot take (not a Node or Connection, an id that is not an
        integer or does not fit in 64 bits, a weight that is not a number, ...): the slow
        path of :func:`~.network.check` then names it."""
        nodes: list[Node] = []
        conns: list[Connection] = []
        try:
            for net in networks:
                nodes += net.nodes
                conns += net.connections
            # one comprehension per field over the whole batch; names go through
            # map(dict.get), about 3x faster than calling get in a comprehension (measured
            # on a NEAT batch); unknown names become -1, which the compiler rejects
            kinds = list(map(KIND_CODE.get, [n.kind for n in nodes], repeat(-1)))
            acts = list(map(CODES.get, [n.activation for n in nodes], repeat(-1)))
            modes = list(map(MODE_CODE.get, [x.mode for x in networks], repeat(-1)))
            ids = _ints([n.id for n in nodes])
            biases = _floats([n.bias for n in nodes])
            gains = _floats([n.gain for n in nodes])
            src = _ints([c.source for c in conns])
            dst = _ints([c.target for c in conns])
            weight = _floats([c.weight for c in conns])
            enabled = [c.enabled for c in conns]
        except (AttributeError, TypeError):  # not a Node/Connection, unhashable name
            return None
        arrays = (ids, biases, gains, src, dst, weight)
        if any(a is None for a in arrays) or set(map(type, enabled)) - {bool}:
            return None
        n = len(networks)
        return cls(
            np.fromiter(
                accumulate(map(len, (x.nodes for x in networks)), initial=0), np.int64, n + 1
            ),
            np.fromiter(
                accumulate(map(len, (x.connections for x in networks)), initial=0), np.int64, n + 1
            ),
            np.array(modes, dtype=np.int64),
            np.array(kinds, dtype=np.int64),
            np.array(acts, dtype=np.int64),
            ids,
            biases,
            gains,
            np.array(enabled, dtype=np.bool_),
            src,
            dst,
            weight,
        )  # type: ignore[arg-type]

    def head(self, k: int) -> FlatBatch:
        """The first ``k`` networks (views, no copy)."""
        if k >= self.size:
            return self
        a, c = int(self.node_ptr[k]), int(self.conn_ptr[k])
        return FlatBatch(
            self.node_ptr[: k + 1], self.conn_ptr[: k + 1], self.modes[:k],
            self.kinds[:a], self.acts[:a], self.ids[:a], self.biases[:a], self.gains[:a],
            self.enabled[:c], self.src[:c], self.dst[:c], self.weight[:c],
        )  # fmt: skip

    def hidden_nodes(self, i: int) -> int:
        """Hidden nodes of network ``i`` (one of the two size measures)."""
        return int((self.kinds[self.node_ptr[i] : self.node_ptr[i + 1]] == HIDDEN).sum())

    def enabled_connections(self, i: int) -> int:
        """Enabled connections of network ``i`` (the other size measure)."""
        return int(self.enabled[self.conn_ptr[i] : self.conn_ptr[i + 1]].sum())

    def network(self, i: int) -> Network:
        """Network ``i`` rebuilt as a :class:`~.network.Network` (a code the format does not
        know becomes the name ``"unknown"``, which :func:`~.network.check` refuses)."""
        a, b = int(self.node_ptr[i]), int(self.node_ptr[i + 1])
        c, d = int(self.conn_ptr[i]), int(self.conn_ptr[i + 1])
        nodes = tuple(
            Node(int(nid), _name(NODE_KINDS, kind), _name(NAMES, act), float(bias), float(gain))
            for nid, kind, act, bias, gain in zip(
                self.ids[a:b].tolist(), self.kinds[a:b].tolist(), self.acts[a:b].tolist(),
                self.biases[a:b].tolist(), self.gains[a:b].tolist(), strict=True,
            )
        )  # type: ignore[arg-type]  # fmt: skip
        links = tuple(
            Connection(int(s), int(t), float(w), bool(on))
            for s, t, w, on in zip(
                self.src[c:d].tolist(), self.dst[c:d].tolist(), self.weight[c:d].tolist(),
                self.enabled[c:d].tolist(), strict=True,
            )
        )  # fmt: skip
        return Network(nodes, links, _name(MODES, int(self.modes[i])))  # type: ignore[arg-type]

    def to_bytes(self) -> bytes:
        """The batch as bytes (:data:`_HEADER`, then each array little-endian in the order of
        :data:`_FIELDS`)."""
        header = _HEADER.pack(_MAGIC, self.size, len(self.ids), len(self.src))
        return header + b"".join(
            np.ascontiguousarray(getattr(self, name), dtype=dtype).tobytes()
            for name, dtype, _ in _FIELDS
        )

    @classmethod
    def from_bytes(cls, data: bytes, max_networks: int) -> FlatBatch:
        """The batch in ``data`` (as :meth:`to_bytes` writes it), checked so that the
        compiler may index it safely: lengths, pointers from 0 to the totals and never
        decreasing, codes within their ranges (an unknown code becomes -1, which the
        compiler refuses), at most ``max_networks`` networks. A ``ValueError`` says what is
        wrong."""
        if len(data) < _HEADER.size:
            raise ValueError(f"a batch of {len(data)} bytes is shorter than its header")
        magic, size, nodes, conns = _HEADER.unpack_from(data)
        if magic != _MAGIC or min(size, nodes, conns) < 0:
            raise ValueError("not a batch of networks")
        if size > max_networks:
            raise ValueError(f"{size:,} networks, more than the batch limit of {max_networks:,}")
        lengths = (size + 1, size + 1, size, nodes, conns)
        expected = _HEADER.size + sum(
            lengths[which] * np.dtype(dtype).itemsize for _, dtype, which in _FIELDS
        )
        if len(data) != expected:
            raise ValueError(f"a batch of {len(data):,} bytes, its header says {expected:,}")
        arrays = {}
        offset = _HEADER.size
        for name, dtype, which in _FIELDS:
            count = lengths[which]
            # a copy: writable and in native order, as the compiler's kernel takes them
            found = np.frombuffer(data, dtype=dtype, count=count, offset=offset)
            arrays[name] = found.astype(found.dtype.newbyteorder("="), copy=True)
            offset += count * np.dtype(dtype).itemsize
        for ptr, total in (("node_ptr", nodes), ("conn_ptr", conns)):
            p = arrays[ptr]
            if p[0] != 0 or p[-1] != total or (np.diff(p) < 0).any():
                raise ValueError(f"{ptr} does not run from 0 to {total:,} in order")
        for name, count in (
            ("kinds", len(NODE_KINDS)),
            ("acts", len(NAMES)),
            ("modes", len(MODES)),
        ):
            codes = arrays[name]
            arrays[name] = np.where((codes >= 0) & (codes < count), codes, -1)
        arrays["enabled"] = arrays["enabled"].view(np.uint8) != 0  # any nonzero byte: True
        return cls(**arrays)


def _name(names: Sequence[str], code: int) -> str:
    return names[code] if 0 <= code < len(names) else "unknown"


def _ints(values: Sequence) -> np.ndarray | None:
    """int64 array of integers of any integral type but bool, or None."""
    types = set(map(type, values))
    try:
        if types <= {int}:  # the common case, converted without type inference
            return np.array(values, dtype=np.int64)
        arr = np.array(values)
    except OverflowError:
        return None
    if arr.dtype.kind not in "iu" or bool in types:
        return None
    return arr.astype(np.int64, copy=False)


def _floats(values: Sequence) -> np.ndarray | None:
    """float64 array of real numbers (no bools, no strings), or None."""
    types = set(map(type, values))
    if types <= {float, int}:
        return np.array(values, dtype=np.float64)
    arr = np.array(values)
    if arr.dtype.kind not in "fiu" or bool in types:
        return None
    return arr.astype(np.float64, copy=False)

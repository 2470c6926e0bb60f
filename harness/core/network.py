"""The network interchange format: what an evolver hands the harness.

A network is a list of nodes and a list of connections, plus an evaluation mode.

Nodes have a ``kind``: ``input`` (takes the task's observation), ``bias`` (constant 1.0),
``hidden`` or ``output``. The k-th input node in the node list receives the k-th
observation value; the k-th output node in the list gives the k-th action value. Input
and bias nodes carry no computation (their activation is ``identity``, bias 0, gain 1).

**Node formula** (the one definition used everywhere): every hidden and output node i computes

    y_i = f_i( gain_i * ( bias_i + sum over enabled connections j->i of weight_ji * y_j ) )

where f_i is the node's activation (see :mod:`neuroyard.core.activations`).

**Modes.** ``feedforward``: the enabled connections form no cycle; each step the inputs are
set and every node is computed once in topological order, so outputs respond to this
step's inputs. ``recurrent``: any topology, self-loops included; each step the inputs are
set, then every hidden and output node updates once, simultaneously, reading input and bias
nodes at this step's value and every other node at its value from the previous step (all
start at 0). Disabled connections are ignored by both modes.

**Size** of a network = number of hidden nodes and number of enabled connections.
"""

from __future__ import annotations

import json
import math
import numbers
import os
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from importlib import resources
from typing import Any, Literal, NoReturn

from neuroyard.core import jsonsafe
from neuroyard.core.activations import CODES
from neuroyard.core.errors import NetworkError
from neuroyard.core.inputfile import read_text

NodeKind = Literal["input", "bias", "hidden", "output"]
Mode = Literal["feedforward", "recurrent"]
NODE_KINDS: tuple[str, ...] = ("input", "bias", "hidden", "output")
MODES: tuple[str, ...] = ("feedforward", "recurrent")
FORMAT_NAME = "neuroyard-network"
FORMAT_VERSION = 1


@dataclass(frozen=True, slots=True)
class Node:
    """One node of a :class:`Network`.

    Input and bias nodes carry no computation: their activation stays ``identity``, their
    bias 0.0 and their gain 1.0 (anything else is a format error). Hidden and output nodes
    compute ``activation(gain * (bias + weighted sum of their enabled inputs))`` (the node
    formula in :class:`Network`). The constructor checks nothing; :func:`validate` does.

    Args:
        id: the node's id, an integer in [-2**63, 2**63), unique in its network; any
            numbering will do (ids need not be consecutive or ordered).
        kind: ``"input"`` (receives one observation value), ``"bias"`` (holds the
            constant 1.0), ``"hidden"`` or ``"output"`` (gives one action value).
        activation: the name of the node's activation function, one of
            :data:`~neuroyard.core.activations.NAMES` (formulas in :class:`Network`).
        bias: added to the weighted sum before the gain; a finite number.
        gain: multiplies the biased sum before the activation; a finite number.

    Example:
        >>> from neuroyard import Node
        >>> Node(0, "input")
        Node(id=0, kind='input', activation='identity', bias=0.0, gain=1.0)
        >>> Node(7, "hidden", "tanh", bias=-0.5, gain=2.0).activation
        'tanh'
    """

    id: int
    kind: NodeKind
    activation: str = "identity"
    bias: float = 0.0
    gain: float = 1.0


@dataclass(frozen=True, slots=True)
class Connection:
    """A weighted link from one node to another.

    A connection whose ``enabled`` is False is kept in the network (an evolver may switch
    it on again later) but ignored when the network runs and when its size is counted.
    Nothing may connect into an input or bias node; in feedforward mode the enabled
    connections must form no cycle. The constructor checks nothing; :func:`validate` does.

    Args:
        source: the id of the node the signal comes from (any kind).
        target: the id of the node it goes to (a hidden or output node).
        weight: multiplies the source's value; a finite number.
        enabled: whether the connection takes part (True) or is ignored (False).

    Example:
        >>> from neuroyard import Connection
        >>> Connection(0, 3, -1.5)
        Connection(source=0, target=3, weight=-1.5, enabled=True)
        >>> Connection(3, 3, 0.9, enabled=False).enabled  # a disabled self-loop
        False
    """

    source: int
    target: int
    weight: float
    enabled: bool = True


@dataclass(frozen=True, slots=True)
class Network:
    """A neural network in the interchange format: nodes, connections and evaluation mode.

    It is what an evolver's ``ask()`` returns and what the harness compiles and runs. The
    constructor checks nothing, so that an evolver can build networks quickly; the rules of
    the format are checked by :func:`validate`, by :meth:`from_dict`, :meth:`from_json` and
    :meth:`from_file`, and by the harness on every network it is given. Networks are
    immutable and compare equal when their nodes, connections and mode are equal, in order
    (``meta`` is not compared).

    Inputs and outputs: the k-th input node in ``nodes`` receives the k-th observation value
    and the k-th output node gives the k-th action value; bias nodes hold 1.0.

    Node formula (the one definition used everywhere): every hidden and output node i
    computes, once per network step,

        y_i = f_i( gain_i * ( bias_i + sum over enabled connections j->i of weight_ji * y_j ) )

    where f_i is the node's activation, one of (x is the argument above):

        sigmoid       f(x) = 1 / (1 + e^(-x))
        neat_sigmoid  f(x) = 1 / (1 + e^(-4.9 x))
        tanh          f(x) = tanh(x)
        relu          f(x) = max(0, x)
        identity      f(x) = x
        gauss         f(x) = e^(-x^2)
        sin           f(x) = sin(x)
        abs           f(x) = abs(x)
        step          f(x) = 1 if x > 0 else 0

    Modes: ``"feedforward"``: the enabled connections form no cycle; each step the inputs
    are set and every node is computed once, in topological order, so the outputs answer
    this step's inputs. ``"recurrent"``: any topology, self-loops included; each step the
    inputs are set, then every hidden and output node updates once, all at the same time,
    reading input and bias nodes at this step's value and every other node at its value of
    the previous step (every node starts at 0). Disabled connections are ignored in both.

    Size: :attr:`hidden_nodes` (hidden nodes) and :attr:`enabled_connections` (enabled
    connections); input, bias and output nodes and disabled connections are not counted.

    Args:
        nodes: the nodes (:class:`Node`), in the order that assigns observation values to
            input nodes and action values to output nodes.
        connections: the connections (:class:`Connection`), in any order.
        mode: ``"feedforward"`` or ``"recurrent"`` (see Modes above).
        meta: free information for the evolver's own use (a genome id, say); not part of
            the JSON form, not compared, not read by the harness.

    Example:
        XOR from threshold units: hidden node 3 is OR, hidden node 4 is AND, the output is
        OR and not AND.

        >>> from neuroyard import Connection, Network, Node
        >>> xor = Network(
        ...     nodes=(
        ...         Node(0, "input"), Node(1, "input"),
        ...         Node(3, "hidden", "step", bias=-0.5), Node(4, "hidden", "step", bias=-1.5),
        ...         Node(5, "output", "step", bias=-0.5),
        ...     ),
        ...     connections=(
        ...         Connection(0, 3, 1.0), Connection(1, 3, 1.0),
        ...         Connection(0, 4, 1.0), Connection(1, 4, 1.0),
        ...         Connection(3, 5, 1.0), Connection(4, 5, -1.0),
        ...     ),
        ... )
        >>> xor.n_inputs, xor.n_outputs, xor.hidden_nodes, xor.enabled_connections
        (2, 1, 2, 6)
        >>> Network.from_json(xor.to_json()) == xor  # reading checks every rule
        True
    """

    nodes: tuple[Node, ...]
    connections: tuple[Connection, ...]
    mode: Mode = "feedforward"
    meta: Mapping[str, Any] = field(default_factory=dict, compare=False)

    @property
    def n_inputs(self) -> int:
        """Number of input nodes (the observation values the network takes)."""
        return sum(1 for n in self.nodes if n.kind == "input")

    @property
    def n_outputs(self) -> int:
        """Number of output nodes (the action values the network gives)."""
        return sum(1 for n in self.nodes if n.kind == "output")

    @property
    def hidden_nodes(self) -> int:
        """Number of hidden nodes (one of the two size measures)."""
        return sum(1 for n in self.nodes if n.kind == "hidden")

    @property
    def enabled_connections(self) -> int:
        """Number of enabled connections (the other size measure)."""
        return sum(1 for c in self.connections if c.enabled)

    # The methods below are the module functions of the same names (to_dict, from_dict,
    # dumps, loads) as methods; the module functions hold the logic.

    def to_dict(self) -> dict[str, Any]:
        """The network's JSON form as a dict of plain values (see :func:`to_dict`).

        The form follows the JSON Schema of :func:`schema`; ``meta`` is left out. Nothing
        is checked: an invalid network gives its (invalid) form.

        Returns:
            A dict with the keys ``format``, ``version``, ``mode``, ``nodes`` and
            ``connections``; input and bias nodes are written with their id and kind only.

        Example:
            >>> from neuroyard import Connection, Network, Node
            >>> net = Network((Node(0, "input"), Node(1, "output", "tanh")), (Connection(0, 1, 2.0),))
            >>> doc = net.to_dict()
            >>> doc["format"], doc["version"], doc["mode"]
            ('neuroyard-network', 1, 'feedforward')
            >>> doc["nodes"]
            [{'id': 0, 'kind': 'input'}, {'id': 1, 'kind': 'output', 'activation': 'tanh', 'bias': 0.0, 'gain': 1.0}]
            >>> doc["connections"]
            [{'source': 0, 'target': 1, 'weight': 2.0, 'enabled': True}]
        """
        return to_dict(self)

    @classmethod
    def from_dict(cls, doc: Mapping[str, Any], where: str = "network") -> Network:
        """Read and check a network's JSON form (see :func:`from_dict`).

        ``format``, ``version``, ``mode``, a node's ``activation``, ``bias`` and ``gain`` and
        a connection's ``enabled`` may be left out: they take their defaults
        (``neuroyard-network``, 1, ``feedforward``, ``identity``, 0.0, 1.0, true).

        Args:
            doc: the JSON form, as parsed from JSON (a mapping of plain values).
            where: what the document is, put at the start of every error message (a file
                name, ``"candidate 3 of generation 12"``).

        Returns:
            The network, checked against every rule of the format.

        Raises:
            NetworkError: the document is not the JSON form (an unknown key, a missing
                entry, another format or version) or the network breaks a rule of the
                format; the one-line message starts with ``where`` and names the offending
                node or connection.

        Example:
            >>> from neuroyard import Network
            >>> doc = {
            ...     "nodes": [{"id": 0, "kind": "input"}, {"id": 1, "kind": "output"}],
            ...     "connections": [{"source": 0, "target": 1, "weight": 0.5}],
            ... }
            >>> Network.from_dict(doc).connections
            (Connection(source=0, target=1, weight=0.5, enabled=True),)
            >>> doc["connections"].append({"source": 0, "target": 9, "weight": 1.0})
            >>> Network.from_dict(doc, where="my.json")
            Traceback (most recent call last):
            ...
            neuroyard.core.errors.NetworkError: my.json: connection 1 (0 -> 9): target node 9 does not exist
        """
        return from_dict(doc, where)

    def to_json(self) -> str:
        """The network's JSON form as compact text (see :func:`dumps`).

        Returns:
            The JSON text of :meth:`to_dict` on one line, without spaces.

        Example:
            >>> from neuroyard import Network, Node
            >>> Network((Node(0, "input"), Node(1, "output")), ()).to_json()[:60]
            '{"format":"neuroyard-network","version":1,"mode":"feedforwar'
        """
        return dumps(self)

    @classmethod
    def from_json(cls, text: str, where: str = "network") -> Network:
        """Parse and check a network's JSON text (see :func:`loads`).

        Args:
            text: the JSON form as text (:meth:`to_json` writes it).
            where: what the text is, put at the start of every error message.

        Returns:
            The network, checked against every rule of the format.

        Raises:
            NetworkError: the text is not valid JSON (the message gives the line), nests
                more than 100 levels (:data:`~neuroyard.core.jsonsafe.MAX_DEPTH`), or the
                document is not a valid network (as in :meth:`from_dict`).

        Example:
            >>> from neuroyard import Connection, Network, Node
            >>> net = Network((Node(0, "input"), Node(1, "output")), (Connection(0, 1, 0.5),))
            >>> Network.from_json(net.to_json()) == net
            True
            >>> Network.from_json('{"nodes": [', where="pasted text")
            Traceback (most recent call last):
            ...
            neuroyard.core.errors.NetworkError: pasted text: not valid JSON (Expecting value at line 1)
        """
        return loads(text, where)

    @classmethod
    def from_file(cls, path: str | os.PathLike[str]) -> Network:
        """Read and check the network in a JSON file (UTF-8 text, as :meth:`to_json` writes,
        of at most 64 MiB: :data:`~neuroyard.core.inputfile.MAX_INPUT_BYTES`).

        Args:
            path: the file's path.

        Returns:
            The network, checked against every rule of the format.

        Raises:
            NetworkError: the file cannot be read, is larger than 64 MiB or is not UTF-8
                text, or its content is not a valid network (as in :meth:`from_json`); the
                one-line message starts with ``network file PATH:``.

        Example:
            >>> import pathlib, tempfile
            >>> from neuroyard import Connection, Network, NetworkError, Node
            >>> net = Network((Node(0, "input"), Node(1, "output")), (Connection(0, 1, 0.5),))
            >>> with tempfile.TemporaryDirectory() as folder:
            ...     path = pathlib.Path(folder, "net.json")
            ...     _ = path.write_text(net.to_json(), encoding="utf-8")
            ...     print(Network.from_file(path) == net)
            ...     try:
            ...         Network.from_file(pathlib.Path(folder, "missing.json"))
            ...     except NetworkError as error:
            ...         print(str(error).replace(folder, "FOLDER"))
            True
            network file FOLDER/missing.json: cannot read it (No such file or directory)
        """
        where = f"network file {os.fspath(path)}"
        return loads(read_text(path, where, NetworkError), where)


def with_weights(template: Network, rows: Iterable[Sequence[float]]) -> list[Network]:
    """One network per row of ``rows``: ``template`` with its connections' weights, enabled
    or not and in the template's order, replaced by the row's (one weight per connection).
    Unchecked, as the classes' constructors leave them; made in about half of their time
    (the slots are set directly, past the frozen classes' ``__setattr__``), since a whole
    generation of one topology is made at a time."""
    new, conn_type, net_type = object.__new__, Connection, Network
    set_source, set_target, set_weight, set_enabled = (
        getattr(Connection, name).__set__ for name in Connection.__slots__
    )
    set_nodes, set_connections, set_mode, set_meta = (
        getattr(Network, name).__set__ for name in Network.__slots__
    )
    ends = [(c.source, c.target, c.enabled) for c in template.connections]
    made = []
    for row in rows:
        links = []
        for (source, target, on), weight in zip(ends, row, strict=True):
            conn = new(conn_type)
            set_source(conn, source)
            set_target(conn, target)
            set_weight(conn, weight)
            set_enabled(conn, on)
            links.append(conn)
        net = new(net_type)
        set_nodes(net, template.nodes)
        set_connections(net, tuple(links))
        set_mode(net, template.mode)
        set_meta(net, {})
        made.append(net)
    return made


@dataclass(frozen=True, slots=True)
class Layout:
    """What checking a network finds, in the form compilation needs.

    ``computed``: hidden and output node ids in evaluation order (topological for
    feedforward, node-list order for recurrent). ``incoming[k]``: (source id, weight) of the
    enabled connections into ``computed[k]``, in connection-list order.
    """

    inputs: list[int]
    biases: list[int]
    outputs: list[int]
    computed: list[int]
    incoming: list[list[tuple[int, float]]]


_COMPUTED = ("hidden", "output")


def _number(value: Any) -> bool:
    """True for a finite real number (bool is not a number here)."""
    try:
        return math.isfinite(value) and not isinstance(value, bool)
    except TypeError:
        return False


def _node_id(value: Any) -> bool:
    """True for an integer (any integral type but bool) that fits in 64 bits."""
    return (
        isinstance(value, numbers.Integral)
        and not isinstance(value, bool)
        and -(2**63) <= value < 2**63
    )


def _number_problem(value: Any, what: str) -> str:
    """The message for a value that failed :func:`_number`."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        return f"{what} must be a number, got {value!r}"
    return f"{what} is {value}, must be finite"


def check(
    network: Network, inputs: int | None = None, outputs: int | None = None, where: str = "network"
) -> Layout:
    """Check every rule of the format in one pass and return the :class:`Layout`.

    ``inputs``/``outputs``, when given, are the counts the task needs. ``where`` prefixes
    the error message (a file name, "candidate 12 of generation 3"). Raises
    :class:`NetworkError` naming the offending node or connection.
    """
    if not isinstance(network, Network):
        raise NetworkError(f"{where}: expected a Network, got {type(network).__name__}")
    if network.mode not in MODES:
        raise NetworkError(f"{where}: unknown mode {network.mode!r} (known: {', '.join(MODES)})")
    kinds: dict[int, str] = {}
    ins: list[int] = []
    biases: list[int] = []
    outs: list[int] = []
    computed: list[int] = []
    for node in network.nodes:
        if type(node) is not Node:
            raise NetworkError(f"{where}: node list holds {type(node).__name__}, not a Node")
        nid, kind = node.id, node.kind
        if not _node_id(nid):
            raise NetworkError(f"{where}: node {nid!r}: id must be an integer in [-2**63, 2**63)")
        if nid in kinds:
            raise NetworkError(f"{where}: node {nid}: duplicate node id")
        if kind in _COMPUTED:
            if not isinstance(node.activation, str) or node.activation not in CODES:
                raise NetworkError(
                    f"{where}: node {nid}: unknown activation {node.activation!r} "
                    f"(known: {', '.join(CODES)})"
                )
            for what in ("bias", "gain"):
                if not _number(getattr(node, what)):
                    problem = _number_problem(getattr(node, what), what)
                    raise NetworkError(f"{where}: node {nid}: {problem}")
            computed.append(nid)
            if kind == "output":
                outs.append(nid)
        elif kind == "input" or kind == "bias":
            if node.activation != "identity" or node.bias != 0.0 or node.gain != 1.0:
                raise NetworkError(
                    f"{where}: node {nid}: {kind} nodes carry no computation "
                    "(activation must be identity, bias 0, gain 1)"
                )
            (ins if kind == "input" else biases).append(nid)
        else:
            raise NetworkError(
                f"{where}: node {nid}: unknown kind {kind!r} (known: {', '.join(NODE_KINDS)})"
            )
        kinds[nid] = kind
    slot = {nid: k for k, nid in enumerate(computed)}
    incoming: list[list[tuple[int, float]]] = [[] for _ in computed]
    for k, conn in enumerate(network.connections):
        if type(conn) is not Connection:
            raise NetworkError(f"{where}: connection list holds {type(conn).__name__}")
        src, dst, w = conn.source, conn.target, conn.weight
        target = slot.get(dst) if _node_id(dst) else None
        if (
            target is None
            or not _node_id(src)
            or src not in kinds
            or not _number(w)
            or type(conn.enabled) is not bool
        ):
            _connection_error(conn, k, kinds, where)
        if conn.enabled:
            incoming[target].append((src, w))
    if inputs is not None and len(ins) != inputs:
        raise NetworkError(f"{where}: has {len(ins)} input nodes, the task needs {inputs}")
    if outputs is not None and len(outs) != outputs:
        raise NetworkError(f"{where}: has {len(outs)} output nodes, the task needs {outputs}")
    if network.mode == "feedforward":
        order = _topological(computed, incoming, slot, where)
        incoming = [incoming[slot[nid]] for nid in order]
        computed = order
    return Layout(ins, biases, outs, computed, incoming)


def _connection_error(conn: Connection, k: int, kinds: dict[int, str], where: str) -> NoReturn:
    label = f"{where}: connection {k} ({conn.source} -> {conn.target})"
    for end in ("source", "target"):
        value = getattr(conn, end)
        if not _node_id(value):
            raise NetworkError(f"{label}: {end} must be an integer node id, got {value!r}")
        if value not in kinds:
            raise NetworkError(f"{label}: {end} node {value!r} does not exist")
    if kinds[conn.target] in ("input", "bias"):
        raise NetworkError(
            f"{label}: target is {kinds[conn.target]} node {conn.target}; "
            "nothing may connect into input or bias nodes"
        )
    if not _number(conn.weight):
        raise NetworkError(f"{label}: {_number_problem(conn.weight, 'weight')}")
    raise NetworkError(f"{label}: enabled must be true or false, got {conn.enabled!r}")


def _topological(
    computed: list[int], incoming: list[list[tuple[int, float]]], slot: dict[int, int], where: str
) -> list[int]:
    """Kahn's algorithm over computed nodes (deterministic order). Names a cycle if any."""
    n = len(computed)
    indegree = [0] * n
    dependants: list[list[int]] = [[] for _ in range(n)]
    for k in range(n):
        for src, _ in incoming[k]:
            j = slot.get(src)
            if j is not None:
                indegree[k] += 1
                dependants[j].append(k)
    ready = [k for k in range(n) if indegree[k] == 0]
    order: list[int] = []
    while ready:
        k = ready.pop()
        order.append(k)
        for d in dependants[k]:
            indegree[d] -= 1
            if indegree[d] == 0:
                ready.append(d)
    if len(order) < n:
        raise NetworkError(
            f"{where}: feedforward network has a cycle through nodes "
            + " -> ".join(str(computed[k]) for k in _find_cycle(indegree, incoming, slot))
        )
    return [computed[k] for k in order]


def _find_cycle(
    indegree: list[int], incoming: list[list[tuple[int, float]]], slot: dict[int, int]
) -> list[int]:
    """A cycle among the nodes Kahn's algorithm could not order (each has an unordered source)."""
    k = next(i for i, d in enumerate(indegree) if d > 0)
    seen: dict[int, int] = {}
    path: list[int] = []
    while k not in seen:
        seen[k] = len(path)
        path.append(k)
        k = next(slot[s] for s, _ in incoming[k] if s in slot and indegree[slot[s]] > 0)
    cycle = path[seen[k] :] + [k]
    return cycle[::-1]  # walked from targets to sources; report in signal direction


def validate(
    network: Network, inputs: int | None = None, outputs: int | None = None, where: str = "network"
) -> None:
    """Check every rule of the format; raise :class:`NetworkError` naming the offender."""
    check(network, inputs, outputs, where)


def topological_order(network: Network, where: str = "network") -> list[int]:
    """Ids of hidden and output nodes in an order where every source comes first."""
    return (
        check(network, where=where).computed
        if network.mode == "feedforward"
        else [n.id for n in network.nodes if n.kind in _COMPUTED]
    )


def to_dict(network: Network) -> dict[str, Any]:
    """The JSON form (see ``network.schema.json``)."""
    nodes = []
    for n in network.nodes:
        item: dict[str, Any] = {"id": n.id, "kind": n.kind}
        if n.kind in ("hidden", "output"):
            item.update(activation=n.activation, bias=n.bias, gain=n.gain)
        nodes.append(item)
    return {
        "format": FORMAT_NAME,
        "version": FORMAT_VERSION,
        "mode": network.mode,
        "nodes": nodes,
        "connections": [
            {"source": c.source, "target": c.target, "weight": c.weight, "enabled": c.enabled}
            for c in network.connections
        ],
    }


_DOC_KEYS = frozenset({"format", "version", "mode", "nodes", "connections"})
_NODE_KEYS = frozenset({"id", "kind", "activation", "bias", "gain"})
_CONNECTION_KEYS = frozenset({"source", "target", "weight", "enabled"})


def from_dict(doc: Mapping[str, Any], where: str = "network") -> Network:
    """Parse and validate the JSON form; errors name the offending entry."""
    network = parse(doc, where)
    validate(network, where=where)
    return network


def parse(
    doc: Mapping[str, Any], where: str = "network", shared: dict[tuple, Node] | None = None
) -> Network:
    """The JSON form read into a :class:`Network`, checking its structure only (keys, the
    format name and version); the rules of the format are left to :func:`validate` or to a
    whole batch's check (:func:`~.batch.compile_batch`). Errors name the offending entry.

    ``shared``: a dict, kept by the caller across the networks of a batch, in which nodes
    with the same fields (values and types) are made once and shared (nodes are immutable;
    a generation of one topology repeats its nodes in every network)."""
    if not isinstance(doc, Mapping):
        raise NetworkError(f"{where}: expected a JSON object, got {type(doc).__name__}")
    if not doc.keys() <= _DOC_KEYS:
        raise NetworkError(f"{where}: unknown keys {sorted(set(doc) - _DOC_KEYS)}")
    if doc.get("format", FORMAT_NAME) != FORMAT_NAME:
        raise NetworkError(f"{where}: format is {doc.get('format')!r}, expected {FORMAT_NAME!r}")
    version = doc.get("version", FORMAT_VERSION)
    if type(version) is not int or version != FORMAT_VERSION:
        raise NetworkError(f"{where}: format version {doc.get('version')!r} is not supported")
    items = _list(doc, "nodes", where)
    links = _list(doc, "connections", where)
    # one pass in comprehensions (a generation of networks is read at a time); an item
    # that does not fit is found and explained after it
    made = {} if shared is None else shared
    try:
        nodes = tuple(_nodes(items, made))
        connections = tuple(
            [
                Connection(c["source"], c["target"], c["weight"], c.get("enabled", True))
                for c in links
                if c.keys() <= _CONNECTION_KEYS
            ]
        )
    except (AttributeError, KeyError, TypeError):
        nodes = connections = ()
    if len(nodes) != len(items) or len(connections) != len(links):
        _explain_item(items, links, where)
    return Network(nodes, connections, doc.get("mode", "feedforward"))


def _nodes(items: list[Any], made: dict[tuple, Node]) -> list[Node]:
    """The nodes of the entries ``items`` up to the first that is not an object with known
    keys only; a node with the same fields as one in ``made``, of the same types (``1`` is
    not ``1.0`` nor ``True``), is taken from there (one loop, no call per node: a generation
    of networks is read at a time)."""
    nodes = []
    for item in items:
        if not item.keys() <= _NODE_KEYS:
            break
        nid, bias, gain = item["id"], item.get("bias", 0.0), item.get("gain", 1.0)
        kind, activation = item["kind"], item.get("activation", "identity")
        key = (nid, kind, activation, bias, gain, type(nid), type(bias), type(gain))
        try:
            node = made.get(key)
        except TypeError:  # a value that cannot be a key (a list): the checks name it
            node = Node(nid, kind, activation, bias, gain)
        if node is None:
            node = made[key] = Node(nid, kind, activation, bias, gain)
        nodes.append(node)
    return nodes


def _explain_item(items: list[Any], links: list[Any], where: str) -> NoReturn:
    """Raise the error of the first node or connection entry that :func:`parse` could not
    read: not an object, a required key missing, or an unknown key."""
    for k, item in enumerate(items):
        if not isinstance(item, Mapping) or "id" not in item or "kind" not in item:
            raise NetworkError(f"{where}: nodes[{k}] needs at least 'id' and 'kind'")
        if not item.keys() <= _NODE_KEYS:
            unknown = sorted(set(item) - _NODE_KEYS)
            raise NetworkError(f"{where}: nodes[{k}] has unknown keys {unknown}")
    for k, item in enumerate(links):
        if not isinstance(item, Mapping) or not {"source", "target", "weight"} <= item.keys():
            raise NetworkError(f"{where}: connections[{k}] needs 'source', 'target' and 'weight'")
        if not item.keys() <= _CONNECTION_KEYS:
            unknown = sorted(set(item) - _CONNECTION_KEYS)
            raise NetworkError(f"{where}: connections[{k}] has unknown keys {unknown}")
    raise NetworkError(f"{where}: an entry of 'nodes' or 'connections' cannot be read")


def _list(doc: Mapping[str, Any], key: str, where: str) -> list[Any]:
    value = doc.get(key)
    if not isinstance(value, list):
        raise NetworkError(f"{where}: '{key}' must be a list")
    return value


def schema() -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) of the JSON form, as shipped in ``network.schema.json``."""
    text = resources.files(__package__).joinpath("network.schema.json").read_text("utf-8")
    return json.loads(text)


def dumps(network: Network) -> str:
    """The JSON form of :func:`to_dict` as compact JSON text (one line, no spaces)."""
    return json.dumps(to_dict(network), separators=(",", ":"))


def loads(text: str, where: str = "network") -> Network:
    """Parse JSON text and read it as :func:`from_dict` does; text that is not JSON is a
    :class:`NetworkError` naming the line, prefixed by ``where``, and so is JSON nested more
    than :data:`~neuroyard.core.jsonsafe.MAX_DEPTH` levels."""
    try:
        doc = jsonsafe.parse(text)
    except json.JSONDecodeError as exc:
        raise NetworkError(f"{where}: not valid JSON ({exc.msg} at line {exc.lineno})") from None
    except jsonsafe.TooDeep as exc:
        raise NetworkError(f"{where}: not valid JSON ({exc})") from None
    return from_dict(doc, where)


def layered_links(
    inputs: int, outputs: int, hidden: int = 0, recurrent: bool = False
) -> list[tuple[int, int]]:
    """The (source, target) links of :func:`fully_connected`, in its connection order.

    Ids: inputs 0..inputs-1, the bias node, the hidden nodes, the outputs. Without hidden
    nodes every input and the bias feed every output; with hidden nodes, inputs and bias
    feed every hidden node (and, when ``recurrent``, every hidden node feeds every hidden
    node, self-loops included), and hidden nodes and bias feed every output.
    """
    ins = list(range(inputs))
    bias = inputs
    hid = list(range(bias + 1, bias + 1 + hidden))
    outs = list(range(bias + 1 + hidden, bias + 1 + hidden + outputs))
    if not hid:
        return [(s, t) for t in outs for s in [*ins, bias]]
    pairs = [(s, t) for t in hid for s in [*ins, bias]]
    if recurrent:
        pairs += [(s, t) for t in hid for s in hid]
    return pairs + [(s, t) for t in outs for s in [*hid, bias]]


def fully_connected(
    inputs: int,
    outputs: int,
    weights: Iterable[float] | None = None,
    activation: str = "neat_sigmoid",
    hidden: int = 0,
    mode: Mode = "feedforward",
    links: list[tuple[int, int]] | None = None,
) -> Network:
    """A layered network (see :func:`layered_links`; recurrent mode adds the hidden-to-hidden
    links). ``weights`` follow the connection order and default to 0; ``links`` may pass
    the precomputed :func:`layered_links` of the same shape."""
    if links is None:
        links = layered_links(inputs, outputs, hidden, mode == "recurrent")
    bias = inputs
    nodes = [Node(i, "input") for i in range(inputs)] + [Node(bias, "bias")]
    nodes += [Node(bias + 1 + k, "hidden", activation) for k in range(hidden)]
    nodes += [Node(bias + 1 + hidden + k, "output", activation) for k in range(outputs)]
    w = list(weights) if weights is not None else [0.0] * len(links)
    if len(w) != len(links):
        raise NetworkError(f"fully_connected: {len(links)} connections need {len(links)} weights")
    conns = tuple(Connection(s, t, float(x)) for (s, t), x in zip(links, w, strict=True))
    return Network(tuple(nodes), conns, mode)

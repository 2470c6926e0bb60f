"""The network interchange format: validation messages, JSON form, JSON Schema, activations."""

from __future__ import annotations

import copy
import json
import math
import re
from pathlib import Path

import jsonschema
import numpy as np
import pytest
import scipy.special

from neuroyard.core import activations
from neuroyard.core import network as network_module
from neuroyard.core.activations import CODES, NAMES, apply, reference
from neuroyard.core.errors import NetworkError
from neuroyard.core.network import (
    MODES,
    NODE_KINDS,
    Connection,
    Network,
    Node,
    dumps,
    from_dict,
    fully_connected,
    loads,
    schema,
    to_dict,
    validate,
)


def xor_shape(mode: str = "feedforward") -> Network:
    """2 inputs (ids 0, 1), bias 2, hidden 3 and 4, output 5; a disabled direct link."""
    nodes = (
        Node(0, "input"),
        Node(1, "input"),
        Node(2, "bias"),
        Node(3, "hidden", "neat_sigmoid", 0.5, 2.0),
        Node(4, "hidden", "tanh", -0.25),
        Node(5, "output", "sigmoid", 0.0, 1.5),
    )
    conns = (
        Connection(0, 3, 1.0),
        Connection(1, 3, -1.0),
        Connection(0, 4, 0.5),
        Connection(1, 4, 0.75),
        Connection(2, 3, 0.1),
        Connection(3, 5, 2.0),
        Connection(4, 5, -2.0),
        Connection(0, 5, 3.0, enabled=False),
    )
    return Network(nodes, conns, mode)


def recurrent_shape() -> Network:
    """Two bias nodes, a self-loop, a two-node loop and two outputs."""
    nodes = (
        Node(10, "hidden", "relu", 0.1),
        Node(7, "input"),
        Node(3, "bias"),
        Node(4, "bias"),
        Node(11, "output", "gauss", gain=0.5),
        Node(12, "output", "step"),
    )
    conns = (
        Connection(7, 10, 1.0),
        Connection(10, 10, 0.9),
        Connection(10, 11, -1.0),
        Connection(11, 10, 0.3),
        Connection(3, 12, 1.0, enabled=False),
        Connection(4, 12, -0.5),
    )
    return Network(nodes, conns, "recurrent")


NETWORKS = {
    "fully_connected": fully_connected(2, 1, [0.5, -0.5, 0.25]),
    "one_hidden_layer": fully_connected(3, 2, range(14), activation="tanh", hidden=2),
    "xor_shape": xor_shape(),
    "xor_shape_recurrent": xor_shape("recurrent"),
    "recurrent": recurrent_shape(),
    "no_connections": Network((Node(0, "input"), Node(1, "output")), ()),
}


def replace_node(network: Network, index: int, node: Node) -> Network:
    nodes = list(network.nodes)
    nodes[index] = node
    return Network(tuple(nodes), network.connections, network.mode)


def with_connections(network: Network, *extra: Connection) -> Network:
    return Network(network.nodes, network.connections + extra, network.mode)


def error_of(network: Network, **kwargs) -> str:
    with pytest.raises(NetworkError) as info:
        validate(network, **kwargs)
    return str(info.value)


# --- validation ------------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(NETWORKS))
def test_valid_networks_pass(name: str) -> None:
    validate(NETWORKS[name])


def test_unknown_target_node_is_named() -> None:
    message = error_of(with_connections(xor_shape(), Connection(3, 99, 1.0)))
    assert "connection 8 (3 -> 99)" in message
    assert "target node 99 does not exist" in message


def test_unknown_source_node_is_named() -> None:
    message = error_of(with_connections(xor_shape(), Connection(42, 5, 1.0)))
    assert "source node 42 does not exist" in message


def test_non_integer_connection_end_is_named() -> None:
    message = error_of(with_connections(xor_shape(), Connection([1], 5, 1.0)))  # type: ignore[arg-type]
    assert "source must be an integer node id" in message


def test_duplicate_id_is_named() -> None:
    message = error_of(replace_node(xor_shape(), 4, Node(3, "hidden")))
    assert "node 3: duplicate node id" in message


def test_non_integer_node_id_is_named() -> None:
    message = error_of(replace_node(xor_shape(), 4, Node("h", "hidden")))  # type: ignore[arg-type]
    assert "node 'h': id must be an integer" in message


@pytest.mark.parametrize(("source", "target", "kind"), [(3, 0, "input"), (5, 2, "bias")])
def test_connection_into_input_or_bias_is_named(source: int, target: int, kind: str) -> None:
    net = with_connections(xor_shape("recurrent"), Connection(source, target, 1.0))
    message = error_of(net)
    assert f"({source} -> {target})" in message
    assert f"target is {kind} node {target}" in message


def cycle_in(message: str) -> list[int]:
    match = re.search(r"cycle through nodes ([\d >-]+)", message)
    assert match, message
    return [int(x) for x in match.group(1).split(" -> ")]


def test_feedforward_cycle_lists_the_cycle() -> None:
    net = with_connections(xor_shape(), Connection(5, 4, 1.0), Connection(4, 3, 1.0))
    cycle = cycle_in(error_of(net))
    # The listed path must be a closed walk along enabled connections of the network.
    assert cycle[0] == cycle[-1] and len(cycle) >= 3
    edges = {(c.source, c.target) for c in net.connections if c.enabled}
    assert all(pair in edges for pair in zip(cycle, cycle[1:], strict=False))
    assert set(cycle) == {3, 4, 5}


def test_feedforward_self_loop_is_a_cycle() -> None:
    cycle = cycle_in(error_of(with_connections(xor_shape(), Connection(4, 4, 0.5))))
    assert cycle == [4, 4]


def test_disabled_connections_do_not_make_a_cycle() -> None:
    validate(with_connections(xor_shape(), Connection(5, 3, 1.0, enabled=False)))


def test_recurrent_mode_allows_cycles() -> None:
    validate(with_connections(xor_shape("recurrent"), Connection(5, 3, 1.0), Connection(4, 4, 1)))


def test_unknown_activation_is_named() -> None:
    message = error_of(replace_node(xor_shape(), 3, Node(3, "hidden", "softsign")))
    assert "node 3: unknown activation 'softsign'" in message


def test_unhashable_activation_is_named() -> None:
    message = error_of(replace_node(xor_shape(), 3, Node(3, "hidden", ["tanh"])))  # type: ignore[arg-type]
    assert "node 3: unknown activation ['tanh']" in message


@pytest.mark.parametrize("value", [math.nan, math.inf, -math.inf])
@pytest.mark.parametrize("field", ["bias", "gain"])
def test_non_finite_node_number_is_named(field: str, value: float) -> None:
    node = Node(4, "hidden", "tanh", **{field: value})
    message = error_of(replace_node(xor_shape(), 4, node))
    assert f"node 4: {field} is {value}, must be finite" in message


@pytest.mark.parametrize("value", [math.nan, math.inf, -math.inf])
def test_non_finite_weight_is_named(value: float) -> None:
    message = error_of(with_connections(xor_shape(), Connection(1, 5, value)))
    assert f"connection 8 (1 -> 5): weight is {value}, must be finite" in message


def test_non_number_weight_is_named() -> None:
    message = error_of(with_connections(xor_shape(), Connection(1, 5, "0.5")))  # type: ignore[arg-type]
    assert "connection 8 (1 -> 5): weight must be a number" in message


def test_task_counts_are_checked() -> None:
    net = xor_shape()
    validate(net, inputs=2, outputs=1)
    assert "has 2 input nodes, the task needs 3" in error_of(net, inputs=3)
    assert "has 1 output nodes, the task needs 2" in error_of(net, outputs=2)


def test_where_prefixes_the_message() -> None:
    net = with_connections(xor_shape(), Connection(3, 99, 1.0))
    assert error_of(net, where="candidate 4 of generation 2").startswith(
        "candidate 4 of generation 2: connection 8"
    )


@pytest.mark.parametrize(
    "node", [Node(0, "input", "tanh"), Node(0, "input", bias=1.0), Node(0, "input", gain=2.0)]
)
def test_input_nodes_carry_no_computation(node: Node) -> None:
    assert "node 0: input nodes carry no computation" in error_of(
        replace_node(xor_shape(), 0, node)
    )


def test_unknown_kind_and_mode_are_named() -> None:
    message = error_of(replace_node(xor_shape(), 3, Node(3, "memory")))  # type: ignore[arg-type]
    assert "node 3: unknown kind 'memory'" in message
    bad_mode = Network(xor_shape().nodes, xor_shape().connections, "sometimes")  # type: ignore[arg-type]
    assert "unknown mode 'sometimes'" in error_of(bad_mode)


# --- size measures ---------------------------------------------------------------------


def test_size_measures() -> None:
    assert (xor_shape().hidden_nodes, xor_shape().enabled_connections) == (2, 7)
    assert (recurrent_shape().hidden_nodes, recurrent_shape().enabled_connections) == (1, 5)
    net = NETWORKS["one_hidden_layer"]
    # 3 inputs + bias to 2 hidden, 2 hidden + bias to 2 outputs
    assert (net.hidden_nodes, net.enabled_connections) == (2, 4 * 2 + 3 * 2)
    assert (net.n_inputs, net.n_outputs) == (3, 2)


# --- JSON form -------------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(NETWORKS))
def test_json_round_trip(name: str) -> None:
    net = NETWORKS[name]
    assert loads(dumps(net)) == net
    assert from_dict(to_dict(net)) == net


def test_omitted_optional_fields_take_their_defaults() -> None:
    doc = {
        "nodes": [{"id": 0, "kind": "input"}, {"id": 1, "kind": "output"}],
        "connections": [{"source": 0, "target": 1, "weight": 2}],
    }
    net = from_dict(doc)
    assert net.mode == "feedforward"
    assert net.nodes[1] == Node(1, "output", "identity", 0.0, 1.0)
    assert net.connections[0].enabled is True


def test_loads_rejects_bad_json_with_line() -> None:
    with pytest.raises(NetworkError, match=r"^net.json: not valid JSON \(.* at line 2\)"):
        loads('{"nodes": [],\n "connections": [,]}', where="net.json")


def test_loads_rejects_nan_weight() -> None:
    # Python's json module reads the non-standard literal NaN; validation must catch it.
    text = dumps(xor_shape()).replace('"weight":2.0', '"weight":NaN', 1)
    with pytest.raises(NetworkError, match=r"connection 5 \(3 -> 5\): weight is nan"):
        loads(text)


def test_loads_reports_non_object() -> None:
    with pytest.raises(NetworkError, match="expected a JSON object, got list"):
        loads("[]")


# Malformed documents: each must fail both the JSON Schema and the Python loader, and the
# loader's message must contain the given text.
def malformed(base: dict, path: tuple, value, message: str, delete: bool = False):
    doc = copy.deepcopy(base)
    parent = doc
    for key in path[:-1]:
        parent = parent[key]
    if delete:
        del parent[path[-1]]
    else:
        parent[path[-1]] = value
    return pytest.param(doc, message, id=f"{'/'.join(map(str, path))}={value!r}")


BASE = to_dict(xor_shape())
MALFORMED = [
    malformed(BASE, ("mdoe",), "recurrent", "unknown keys ['mdoe']"),
    malformed(BASE, ("nodes", 3, "activaton"), "tanh", "nodes[3] has unknown keys ['activaton']"),
    malformed(BASE, ("connections", 0, "w"), 1.0, "connections[0] has unknown keys ['w']"),
    malformed(BASE, ("nodes",), None, "'nodes' must be a list", delete=True),
    malformed(BASE, ("connections",), {}, "'connections' must be a list"),
    malformed(BASE, ("format",), "other-network", "format is 'other-network'"),
    malformed(BASE, ("version",), 2, "format version 2 is not supported"),
    malformed(BASE, ("mode",), "sometimes", "unknown mode 'sometimes'"),
    malformed(BASE, ("nodes", 3, "kind"), "memory", "node 3: unknown kind 'memory'"),
    malformed(BASE, ("nodes", 3, "activation"), "softsign", "unknown activation 'softsign'"),
    malformed(BASE, ("nodes", 3, "id"), "3", "node '3': id must be an integer"),
    malformed(BASE, ("nodes", 3, "bias"), "0.5", "node 3: bias must be a number"),
    malformed(BASE, ("nodes", 3, "gain"), math.inf, "node 3: gain is inf"),
    malformed(BASE, ("nodes", 0, "activation"), "tanh", "node 0: input nodes carry no"),
    malformed(BASE, ("nodes", 2, "bias"), 1.0, "node 2: bias nodes carry no"),
    malformed(BASE, ("nodes", 3, "kind"), None, "nodes[3] needs at least", delete=True),
    malformed(BASE, ("connections", 0, "weight"), None, "needs 'source'", delete=True),
    malformed(BASE, ("connections", 0, "weight"), -math.inf, "weight is -inf"),
    malformed(BASE, ("connections", 0, "enabled"), "yes", "enabled must be true or false"),
    malformed(BASE, ("connections", 0, "source"), [0], "source must be an integer node id"),
]


@pytest.mark.parametrize(("doc", "message"), MALFORMED)
def test_malformed_documents_fail_schema_and_loader(doc: dict, message: str) -> None:
    assert not jsonschema.Draft202012Validator(schema()).is_valid(doc)
    with pytest.raises(NetworkError) as info:
        from_dict(doc)
    assert message in str(info.value)


# --- the JSON form as methods of Network ----------------------------------------------


@pytest.mark.parametrize("name", sorted(NETWORKS))
def test_methods_round_trip_and_match_the_module_functions(name: str) -> None:
    net = NETWORKS[name]
    assert net.to_dict() == to_dict(net)
    assert net.to_json() == dumps(net)
    assert Network.from_dict(net.to_dict()) == net
    assert Network.from_json(net.to_json()) == net
    validator = jsonschema.Draft202012Validator(schema())
    validator.validate(net.to_dict())
    validator.validate(json.loads(net.to_json()))


@pytest.mark.parametrize("name", sorted(NETWORKS))
def test_from_file_round_trip(name: str, tmp_path: Path) -> None:
    net = NETWORKS[name]
    path = tmp_path / "net.json"
    path.write_text(net.to_json(), encoding="utf-8")
    assert Network.from_file(path) == net
    assert Network.from_file(str(path)) == net


@pytest.mark.parametrize(("doc", "message"), MALFORMED)
def test_methods_refuse_what_the_module_functions_refuse(doc: dict, message: str) -> None:
    with pytest.raises(NetworkError) as module_error:
        from_dict(doc, where="doc.json")
    with pytest.raises(NetworkError) as method_error:
        Network.from_dict(doc, where="doc.json")
    assert str(method_error.value) == str(module_error.value)
    assert str(method_error.value).startswith("doc.json: ") and message in str(method_error.value)
    with pytest.raises(NetworkError) as json_error:
        Network.from_json(json.dumps(doc), where="doc.json")
    assert str(json_error.value) == str(module_error.value)


def file_error(path: Path | str) -> str:
    """The message of the NetworkError that reading ``path`` gives; checks it is one line."""
    with pytest.raises(NetworkError) as info:
        Network.from_file(path)
    message = str(info.value)
    assert "\n" not in message
    return message


def test_from_file_names_a_missing_file(tmp_path: Path) -> None:
    path = tmp_path / "missing.json"
    assert file_error(path) == f"network file {path}: cannot read it (No such file or directory)"


def test_from_file_names_a_folder(tmp_path: Path) -> None:
    assert file_error(tmp_path) == f"network file {tmp_path}: cannot read it (Is a directory)"


def test_from_file_names_a_file_that_is_not_utf8(tmp_path: Path) -> None:
    path = tmp_path / "latin1.json"
    path.write_bytes(b'{"nodes": [], "connections": [], "mode": "r\xe9current"}')
    offset = path.read_bytes().index(b"\xe9")
    assert file_error(path).startswith(f"network file {path}: not UTF-8 text (byte {offset}: ")


def test_from_file_names_the_file_and_line_of_bad_json(tmp_path: Path) -> None:
    path = tmp_path / "broken.json"
    path.write_text('{"nodes": [],\n "connections": [,]}', encoding="utf-8")
    assert re.fullmatch(
        rf"network file {re.escape(str(path))}: not valid JSON \(.* at line 2\)", file_error(path)
    )


@pytest.mark.parametrize(("doc", "message"), MALFORMED)
def test_from_file_names_the_file_of_an_invalid_network(
    doc: dict, message: str, tmp_path: Path
) -> None:
    assert not jsonschema.Draft202012Validator(schema()).is_valid(doc)
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    error = file_error(path)
    assert error.startswith(f"network file {path}: ") and message in error


# --- the activation table in Network's docstring ----------------------------------------


def doc_rows(text: str, row: str) -> dict[str, str]:
    """Activation name -> formula, from the lines of ``text`` matching ``row``."""
    return {m["name"]: m["formula"] for m in re.finditer(row, text, re.MULTILINE)}


def test_network_docstring_lists_every_activation_with_its_formula() -> None:
    # the module's table is the specification ("| name | formula  (source) |", under a
    # header row); Network's docstring repeats it as "name  f(x) = formula"
    table = doc_rows(activations.__doc__, r"^\| (?P<name>\w+) +\| (?P<formula>.+?)(  .*)? *\|$")
    table.pop("name")  # the header row
    listed = doc_rows(Network.__doc__, r"^ +(?P<name>\w+) +f\(x\) = (?P<formula>.+?) *$")
    assert set(table) == set(NAMES)
    for name in NAMES:
        assert name in listed, f"activation {name} is missing from Network.__doc__"
        assert listed[name] == table[name], name
    assert set(listed) == set(NAMES)


def test_network_docstring_states_the_node_formula() -> None:
    formula = (
        "y_i = f_i( gain_i * ( bias_i + sum over enabled connections j->i of weight_ji * y_j ) )"
    )
    assert formula in network_module.__doc__
    assert formula in Network.__doc__


# --- JSON Schema -----------------------------------------------------------------------


def test_schema_is_a_valid_draft_2020_12_schema() -> None:
    doc = schema()
    assert doc["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    jsonschema.Draft202012Validator.check_schema(doc)


def test_schema_lists_match_the_code() -> None:
    doc = schema()
    assert tuple(doc["$defs"]["node"]["properties"]["activation"]["enum"]) == NAMES
    assert tuple(doc["$defs"]["node"]["properties"]["kind"]["enum"]) == NODE_KINDS
    assert tuple(doc["properties"]["mode"]["enum"]) == MODES


@pytest.mark.parametrize("name", sorted(NETWORKS))
def test_to_dict_output_validates_against_schema(name: str) -> None:
    jsonschema.Draft202012Validator(schema()).validate(to_dict(NETWORKS[name]))


def test_minimal_document_validates_against_schema_and_loads() -> None:
    doc = {"nodes": [{"id": 0, "kind": "input"}, {"id": 1, "kind": "output"}], "connections": []}
    jsonschema.Draft202012Validator(schema()).validate(doc)
    assert from_dict(doc).n_outputs == 1


def test_graph_rules_beyond_the_schema_are_caught_by_the_loader() -> None:
    # Unique ids, existing connection ends and acyclicity cannot be written in JSON Schema;
    # the schema says so in its description and the loader checks them.
    doc = to_dict(xor_shape())
    doc["connections"].append({"source": 5, "target": 3, "weight": 1.0})
    jsonschema.Draft202012Validator(schema()).validate(doc)
    with pytest.raises(NetworkError, match="cycle through nodes"):
        from_dict(doc)
    assert "cycle" in schema()["description"]


# --- activation definitions against outside math ---------------------------------------

GRID = np.concatenate([np.linspace(-6.0, 6.0, 241), [-800.0, -40.0, -1e-9, 0.0, 1e-9, 40.0, 800.0]])


def both(name: str, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Plain-Python and compiled activation values on ``x``."""
    code = CODES[name]
    return (
        np.array([reference(code, float(v)) for v in x]),
        np.array([apply(code, float(v)) for v in x]),
    )


def expected_values(name: str, x: np.ndarray) -> np.ndarray:
    with np.errstate(over="ignore"):
        if name == "sigmoid":
            return scipy.special.expit(x)  # scipy.special.expit: the logistic 1/(1+e^-x)
        if name == "neat_sigmoid":
            # Steepened sigmoid 1/(1+e^(-4.9x)): Stanley & Miikkulainen 2002, sec. 4.1
            return 1.0 / (1.0 + np.exp(-4.9 * x))
        if name == "tanh":
            return np.tanh(x)  # numpy.tanh
        if name == "relu":
            return np.maximum(x, 0.0)  # rectifier max(0, x), numpy.maximum
        if name == "identity":
            return x
        if name == "gauss":
            return np.exp(-(x**2))  # Gaussian e^(-x^2), numpy.exp
        if name == "sin":
            return np.sin(x)  # numpy.sin
        if name == "abs":
            return np.abs(x)  # numpy.abs
        if name == "step":
            return np.heaviside(x, 0.0)  # numpy.heaviside with value 0 at x = 0
    raise AssertionError(f"no outside definition for {name}")


@pytest.mark.parametrize("name", NAMES)
def test_activation_matches_outside_definition(name: str) -> None:
    plain, compiled = both(name, GRID)
    wanted = expected_values(name, GRID)
    np.testing.assert_allclose(plain, wanted, rtol=1e-14, atol=1e-300)
    np.testing.assert_allclose(compiled, wanted, rtol=1e-14, atol=1e-300)


def test_issue_activation_list_is_present() -> None:
    # The activations issue 2 asks for at least.
    required = {"sigmoid", "neat_sigmoid", "tanh", "relu", "identity", "gauss", "sin", "abs"}
    assert required <= set(NAMES) and "step" in NAMES

"""The JSON-lines protocol between the harness and an evolver running as its own process.

One JSON object per line, UTF-8, ended by a line feed: the harness writes requests to the
evolver's stdin, the evolver answers each (but ``stop``) with one reply on its stdout and
writes nothing else there (its stderr is free for diagnostics). A run, by example (``>``
harness to evolver, ``<`` the replies; networks shortened)::

    > {"type":"start","version":1,"seed":77,"problem":{"task":"xor-v2","inputs":2,
       "outputs":1,"budget":5000,"min_fitness":0.0,"max_fitness":16.0,
       "behaviour_size":null,"needs_memory":false,"settings":{"recurrent_steps":5}},
       "options":{"sigma":0.5}}
    < {"type":"ready","version":1,"settings":{"lambda":10,"sigma":0.5}}
    > {"type":"ask","generation":0}
    < {"type":"batch","networks":[{"nodes":[...],"connections":[...]}, ...]}
    > {"type":"tell","generation":0,"evaluations":[{"fitness":9.2}, ...]}
    < {"type":"noted"}
    > {"type":"stats","generation":0}
    < {"type":"figures","values":{"parent_fitness":9.2}}
      ... ask, tell, stats for every generation ...
    > {"type":"stop","outcome":{"status":"solved","generations":14,"evaluations":140,
       "failure":null}}
      (the evolver exits with status 0)

In place of any reply an evolver may send ``{"type":"error","reason":"..."}`` (a bad
option, a task it cannot handle): its run fails with the reason. Every message is
described by the JSON Schema ``protocol.schema.json`` shipped beside this module
(:func:`schema`, :func:`message_validator`); the networks are the harness's network JSON
(:mod:`.network`).

A batch comes in one of two forms. ``networks`` holds every network whole. ``template``
and ``weights`` suit a generation of one topology (an evolution strategy on fixed
weights): network K is the template with its connections' weights, enabled or not and in
the template's order, replaced by ``weights[K]``; the same generation in about a quarter
of the bytes, read in about a third of the time.

This module writes the requests and reads the replies. A reply is checked in this order,
and the first check it fails is a :class:`~.errors.ProcessEvolverError` that quotes the
offending text (at most :data:`QUOTE_LIMIT` characters) and names the field: strict JSON
(no NaN or Infinity), an object with a known ``type``, the reply the request asks for, the
schema of that reply, and for a batch every network (or the template and every row of
weights) against the format's rules with the task's input and output counts. A batch's
own fields are checked by hand, and its networks by the format's own loader and batch
check (the same rules and more, and far faster than a schema validator on a generation of
networks); :func:`message_validator` checks them against the schemas too.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from functools import cache
from importlib import resources
from itertools import chain
from typing import Any

import jsonschema
import numpy as np
import orjson
import referencing

from neuroyard.core import jsonsafe
from neuroyard.core import network as network_format
from neuroyard.core.batch import compile_batch
from neuroyard.core.errors import NetworkError, ProcessEvolverError
from neuroyard.core.evolver import Evaluation, Outcome, Problem

VERSION = 1
SCHEMA_FILE = "protocol.schema.json"
QUOTE_LIMIT = 200  # characters of an offending message quoted in a failure reason (ours)
# the reply each request asks for (stop has none)
REPLY_TO = {"start": "ready", "ask": "batch", "tell": "noted", "stats": "figures"}
ERROR = "error"
REPLIES = (*REPLY_TO.values(), ERROR)


def quote(text: str | bytes) -> str:
    """``text`` quoted for a failure reason: its first :data:`QUOTE_LIMIT` characters as a
    Python literal (one line), with its length when it is longer."""
    if isinstance(text, bytes):
        text = text.decode("utf-8", "replace")
    if len(text) <= QUOTE_LIMIT:
        return repr(text)
    return f"{text[:QUOTE_LIMIT]!r} (first {QUOTE_LIMIT} of {len(text):,} characters)"


@cache
def schema() -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) of every message, as shipped in ``protocol.schema.json``."""
    text = resources.files(__package__).joinpath(SCHEMA_FILE).read_text("utf-8")
    return json.loads(text)


def message_validator() -> jsonschema.Draft202012Validator:
    """A validator of any message of the protocol, networks checked against the network
    schema (``network.schema.json``)."""
    network_schema = network_format.schema()
    registry = referencing.Registry().with_resource(
        network_schema["$id"], referencing.Resource.from_contents(network_schema)
    )
    return jsonschema.Draft202012Validator(schema(), registry=registry)


@cache
def _reply_validator(kind: str) -> jsonschema.Draft202012Validator:
    """A validator of one kind of reply other than ``batch`` (see :func:`_check_batch`)."""
    root = schema()
    doc = {key: value for key, value in root.items() if key != "oneOf"}
    return jsonschema.Draft202012Validator({**doc, "$ref": f"#/$defs/{kind}"})


# --- requests (harness -> evolver) ------------------------------------------------------


def _line(message: Mapping[str, Any]) -> str:
    """One compact line of strict JSON (non-finite numbers by the rule of :mod:`.jsonsafe`)."""
    try:
        return json.dumps(message, allow_nan=False, separators=(",", ":"))
    except ValueError:
        return jsonsafe.dumps(message, separators=(",", ":"))


def start_message(problem: Problem, seed: int, options: Mapping[str, Any]) -> str:
    return _line(
        {
            "type": "start",
            "version": VERSION,
            "seed": seed,
            "problem": {
                "task": problem.task,
                "inputs": problem.inputs,
                "outputs": problem.outputs,
                "budget": problem.budget,
                "min_fitness": problem.min_fitness,
                "max_fitness": problem.max_fitness,
                "behaviour_size": problem.behaviour_size,
                "needs_memory": problem.needs_memory,
                "settings": dict(problem.settings),
            },
            "options": dict(options),
        }
    )


def ask_message(generation: int) -> str:
    return _line({"type": "ask", "generation": generation})


def tell_message(generation: int, evaluations: Sequence[Evaluation]) -> str:
    items = [
        {"fitness": e.fitness}
        if e.behaviour is None
        else {"fitness": e.fitness, "behaviour": list(e.behaviour)}
        for e in evaluations
    ]
    return _line({"type": "tell", "generation": generation, "evaluations": items})


def stats_message(generation: int) -> str:
    return _line({"type": "stats", "generation": generation})


def stop_message(outcome: Outcome) -> str:
    return _line(
        {
            "type": "stop",
            "outcome": {
                "status": outcome.status,
                "generations": outcome.generations,
                "evaluations": outcome.evaluations,
                "failure": outcome.failure,
            },
        }
    )


# --- replies (evolver -> harness) -------------------------------------------------------


def _refuse(token: str) -> Any:
    raise ValueError(f"{token} is not JSON")


_STRICT = json.JSONDecoder(parse_constant=_refuse)


def _decode(line: bytes) -> Any:
    """``line`` decoded by orjson, or when orjson refuses it by the json module, whose
    verdict and words stand (orjson refuses what it does not hold exactly too, a lone
    surrogate escape). Both refuse NaN and Infinity; orjson reads an integer past 64 bits
    as the nearest double."""
    try:
        return orjson.loads(line)
    except orjson.JSONDecodeError:
        return _STRICT.decode(line.decode("utf-8"))


def read_reply(line: bytes, request: str) -> dict[str, Any]:
    """The evolver's reply ``line`` (without its line end) to ``request`` (``start``,
    ``ask``, ``tell`` or ``stats``), checked (see the module docstring); ``settings`` of a
    ``ready`` and ``values`` of ``figures`` with their non-finite numbers restored."""
    try:
        message = _decode(line)
    except UnicodeDecodeError as exc:
        raise ProcessEvolverError(
            f"the evolver process replied to {request} with a line that is not UTF-8 "
            f"(byte {exc.start}): {quote(line)}"
        ) from None
    except json.JSONDecodeError as exc:
        raise ProcessEvolverError(
            f"the evolver process replied to {request} with a line that is not JSON "
            f"({exc.msg} at column {exc.colno}): {quote(line)}"
        ) from None
    except (ValueError, RecursionError) as exc:
        raise ProcessEvolverError(
            f"the evolver process replied to {request} with a line that is not strict JSON "
            f"({exc or 'nested too deep'}): {quote(line)}"
        ) from None
    if not isinstance(message, dict):
        raise ProcessEvolverError(
            f"the evolver process replied to {request} with a JSON {type(message).__name__}, "
            f"not an object: {quote(line)}"
        )
    kind = message.get("type")
    if kind not in REPLIES:
        raise ProcessEvolverError(
            f"the evolver process replied to {request} with a message of unknown type "
            f"{kind!r} (field 'type'; a reply is one of {', '.join(REPLIES)}): {quote(line)}"
        )
    expected = REPLY_TO[request]
    if kind not in (expected, ERROR):
        raise ProcessEvolverError(
            f"the evolver process replied {kind!r} to {request}, expected {expected!r} "
            f"(field 'type'): {quote(line)}"
        )
    if kind == "ready" and message.get("version") != VERSION:
        raise ProcessEvolverError(
            f"the evolver process speaks protocol version {message.get('version')!r}, the "
            f"harness speaks {VERSION} (field 'version'): {quote(line)}"
        )
    if kind == "batch":
        _check_batch(message, line)  # in place of the schema: see _check_batch
        return message
    error = jsonschema.exceptions.best_match(_reply_validator(kind).iter_errors(message))
    if error is not None:
        field = ".".join(str(part) for part in error.absolute_path)
        where = f"at field {field!r}" if field else "at its top level"
        raise ProcessEvolverError(
            f"the evolver process's {kind!r} reply to {request} fails the protocol schema "
            f"{where}: {error.message}: {quote(line)}"
        )
    if kind == ERROR:
        raise ProcessEvolverError(
            f"the evolver process reported an error in reply to {request}: "
            f"{quote(message['reason'])}"
        )
    for key in ("settings", "values"):
        if key in message:
            message[key] = jsonsafe.decode(message[key])
    return message


_BATCH_KEYS = ("type", "networks", "template", "weights")


def _check_batch(batch: Mapping[str, Any], line: bytes) -> None:
    """The schema's rules for a ``batch`` reply's own fields, checked by hand (a validator
    walking a generation every time costs more than the rest of the reading; a test holds
    the two to agreement): no other field, ``networks`` or else both ``template`` and
    ``weights``, and ``networks`` and ``weights`` non-empty lists. The networks and the
    rows of weights are read by :func:`read_networks`, which checks every one."""
    unknown = sorted(set(batch) - set(_BATCH_KEYS))
    whole = "networks" in batch
    parts = [key for key in _BATCH_KEYS[2:] if key in batch]
    problem = None
    if unknown:
        problem = f"has unknown fields {unknown} (a batch has {', '.join(_BATCH_KEYS)})"
    elif whole and parts:
        problem = f"holds 'networks' and {' and '.join(map(repr, parts))} (one form or the other)"
    elif len(parts) == 1:
        problem = f"holds {parts[0]!r} without {({'template', 'weights'} - set(parts)).pop()!r}"
    elif not whole and not parts:
        problem = "holds neither 'networks' nor 'template' and 'weights'"
    else:
        for key in ("networks", "weights"):
            value = batch.get(key, [None])
            if not isinstance(value, list) or not value:
                problem = f"field {key!r} must be a non-empty list, got {quote(json.dumps(value))}"
    if problem is not None:
        raise ProcessEvolverError(
            f"the evolver process's 'batch' reply to ask {problem}: {quote(line)}"
        )


def read_networks(
    reply: Mapping[str, Any], inputs: int, outputs: int
) -> list[network_format.Network]:
    """The networks of a checked ``batch`` reply, each checked against every rule of the
    format with the task's ``inputs`` and ``outputs`` counts; the first that breaks one is
    a :class:`~.errors.ProcessEvolverError` naming its field (``networks.K``, or for the
    template form ``template`` or ``weights.K``) and the rule, and quoting the entry."""
    if "template" in reply:
        return _template_networks(reply["template"], reply["weights"], inputs, outputs)
    docs = reply["networks"]
    where = "'networks.{}'".format
    networks = []
    shared: dict[tuple, network_format.Node] = {}
    for k, doc in enumerate(docs):
        try:
            networks.append(network_format.parse(doc, where(k), shared))
        except NetworkError as exc:
            raise _invalid_network(exc, doc) from None
    try:
        compile_batch(networks, inputs, outputs, where)
    except NetworkError as exc:  # the first network that check() refuses is the one
        k = next(i for i, net in enumerate(networks) if not _valid(net, inputs, outputs))
        raise _invalid_network(exc, docs[k]) from None
    return networks


def _template_networks(
    doc: Any, rows: list[Any], inputs: int, outputs: int
) -> list[network_format.Network]:
    """The networks of a batch in the template form: network K is the ``template`` with
    its connections' weights (enabled or not, in the template's order) replaced by
    ``weights[K]``. The template is checked once against every rule of the format; each
    row must be a list of one finite real number per connection of the template."""
    try:
        template = network_format.parse(doc, "'template'")
        network_format.check(template, inputs, outputs, "'template'")
    except NetworkError as exc:
        raise _invalid_network(exc, doc) from None
    links = template.connections
    for k, row in enumerate(rows):
        if type(row) is not list or len(row) != len(links):
            raise _invalid_weights(
                k,
                row,
                f"must be a list of {len(links)} numbers, one per connection of the template",
            )
    # one type test over the whole batch (a generation is read at a time); strict JSON
    # holds no NaN, but a literal too large for a double reads as infinity
    matrix = _doubles(list(chain.from_iterable(rows)))
    if matrix is None:
        k = next(k for k, row in enumerate(rows) if not all(map(_finite, row)))
        j = next(j for j, value in enumerate(rows[k]) if not _finite(value))
        raise _invalid_weights(k, rows[k], f"entry {j} is {rows[k][j]!r}, not a finite number")
    return network_format.with_weights(template, matrix.reshape(len(rows), len(links)).tolist())


def _doubles(values: list[Any]) -> np.ndarray | None:
    """``values`` as float64 when every one is a real number (not bool) finite as a
    double, else None."""
    if not set(map(type, values)) <= {float, int}:
        return None
    try:
        matrix = np.array(values, dtype=np.float64)
    except OverflowError:  # an integer past 64 bits
        return None
    return matrix if np.isfinite(matrix).all() else None


def _finite(value: Any) -> bool:
    """True for a real number (not bool) that is finite as a double."""
    try:
        return type(value) in (float, int) and math.isfinite(value)
    except OverflowError:
        return False


def _invalid_weights(k: int, row: Any, problem: str) -> ProcessEvolverError:
    text = json.dumps(row, separators=(",", ":"))
    return ProcessEvolverError(
        f"the evolver process's batch holds invalid weights at field 'weights.{k}': "
        f"{problem}; the entry: {quote(text)}"
    )


def _invalid_network(error: NetworkError, doc: Any) -> ProcessEvolverError:
    text = json.dumps(doc, separators=(",", ":"))
    return ProcessEvolverError(
        f"the evolver process's batch holds an invalid network at field {error}; "
        f"the network: {quote(text)}"
    )


def _valid(net: network_format.Network, inputs: int, outputs: int) -> bool:
    try:
        network_format.check(net, inputs, outputs)
    except NetworkError:
        return False
    return True

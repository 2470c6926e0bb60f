"""Evolvers in any language through the JSON-lines protocol (issue 18, items 3 and 4).

A misbehaving evolver process is a small Python script written to tmp_path and run with
this interpreter: it behaves like a protocol evolver for two generations and then breaks
the protocol in its own way (one kind per test). Each kind must fail its own run with the
reason the harness documents (harness/core/process_evolver.py), quoting the offending
message and naming the field, and leave no process behind. The two example evolvers,
JavaScript (Node.js) and C (compiled here with cc), must solve XOR through the protocol,
and every message of their traffic must pass the protocol's JSON Schema.
"""

from __future__ import annotations

import json
import math
import os
import shlex
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

import jsonschema
import numpy as np
import pytest

from neuroyard.cli.main import main
from neuroyard.core import protocol
from neuroyard.core.errors import EvolverError, ProcessEvolverError
from neuroyard.core.evolver import Evaluation, Outcome, Problem
from neuroyard.core.evolver_registry import EvolverSpec, load_factory
from neuroyard.core.process_evolver import ProcessEvolver
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute, plan_run
from neuroyard.execution.runner import run_one
from neuroyard.execution.supervisor import Supervisor
from neuroyard.records.runs import run_key
from neuroyard.records.store import ResultStore
from neuroyard.reference.other_languages import ES_C, ES_JS

HERE = Path(__file__).parent
BUDGET = 200
TIMEOUT = 1.0  # reply_timeout of the misbehaving evolvers, s

NET = {
    "nodes": [
        {"id": 0, "kind": "input"},
        {"id": 1, "kind": "input"},
        {"id": 2, "kind": "bias"},
        {"id": 3, "kind": "output", "activation": "neat_sigmoid"},
    ],
    "connections": [
        {"source": 0, "target": 3, "weight": 0.5},
        {"source": 1, "target": 3, "weight": -0.5},
        {"source": 2, "target": 3, "weight": 0.1},
    ],
}
BROKEN_LINK = {"source": 0, "target": 99, "weight": 1.0}
# A protocol evolver in plain Python (no neuroyard): five fixed XOR networks a generation;
# from generation 2 on it misbehaves as its first argument says.
CHILD = textwrap.dedent(
    """
    import json, sys, time

    KIND = sys.argv[1]
    NET = __NET__
    ROW = [c["weight"] for c in NET["connections"]]
    BROKEN = {"nodes": NET["nodes"],
              "connections": NET["connections"] + [{"source": 0, "target": 99, "weight": 1.0}]}

    def say(message):
        raw(json.dumps(message))

    def raw(text):
        sys.stdout.write(text + "\\n")
        sys.stdout.flush()

    for line in sys.stdin:
        message = json.loads(line)
        kind = message["type"]
        faulty = message.get("generation", -1) >= 2
        if kind == "start":
            say({"type": "ready", "version": 2 if KIND == "version" else 1,
                 "settings": {"kind": KIND}})
        elif kind == "ask" and faulty and KIND == "not_json":
            raw("garbage " * 50)
        elif kind == "ask" and faulty and KIND == "unknown_type":
            say({"type": "hello", "networks": [NET]})
        elif kind == "ask" and faulty and KIND == "wrong_reply":
            say({"type": "noted"})
        elif kind == "ask" and faulty and KIND == "batch_not_list":
            say({"type": "batch", "networks": {"first": NET}})
        elif kind == "ask" and faulty and KIND == "invalid_network":
            say({"type": "batch", "networks": [NET, BROKEN]})
        elif kind == "ask" and faulty and KIND == "both_forms":
            say({"type": "batch", "networks": [NET], "template": NET, "weights": [ROW]})
        elif kind == "ask" and faulty and KIND == "template_alone":
            say({"type": "batch", "template": NET})
        elif kind == "ask" and faulty and KIND == "invalid_template":
            say({"type": "batch", "template": BROKEN, "weights": [ROW + [1.0]]})
        elif kind == "ask" and faulty and KIND == "short_row":
            say({"type": "batch", "template": NET, "weights": [ROW, ROW[:2]]})
        elif kind == "ask" and faulty and KIND == "bool_weight":
            say({"type": "batch", "template": NET, "weights": [ROW, ROW, [0.5, True, 0.1]]})
        elif kind == "ask" and faulty and KIND == "huge_weight":
            raw('{"type": "batch", "template": %s, "weights": [[1e400, 0, 0]]}' % json.dumps(NET))
        elif kind == "ask" and KIND == "template":
            say({"type": "batch", "template": NET, "weights": [ROW] * 5})
        elif kind == "ask" and faulty and KIND == "error":
            say({"type": "error", "reason": "cannot go on"})
        elif kind == "ask" and faulty and KIND == "exits":
            sys.stderr.write("warming up\\nout of ideas\\n")
            sys.stderr.flush()
            sys.exit(3)
        elif kind == "ask" and faulty and KIND == "stalls":
            time.sleep(60)
        elif kind == "ask":
            say({"type": "batch", "networks": [NET] * 5})
        elif kind == "tell":
            say({"type": "noted"})
            if faulty and KIND == "out_of_turn":
                say({"type": "noted"})
        elif kind == "stats":
            if faulty and KIND == "nan":
                raw('{"type": "figures", "values": {"mood": NaN}}')
            elif faulty and KIND == "schema":
                say({"type": "figures", "values": ["high"]})
            else:
                say({"type": "figures", "values": {"generation": message["generation"]}})
        elif kind == "stop":
            if KIND == "lingers":
                time.sleep(60)
            if KIND == "chatty_stop":
                say({"type": "bye"})
            sys.exit(5 if KIND == "stop_status" else 0)
    """
).replace("__NET__", repr(NET))
BROKEN = {"nodes": NET["nodes"], "connections": [*NET["connections"], BROKEN_LINK]}
ROW = [c["weight"] for c in NET["connections"]]
GARBAGE = "garbage " * 50
# kind -> the failure reason of its run (the harness's wording, harness/core/process_evolver.py)
FAULTS = {
    "not_json": "ask() in generation 2: the evolver process replied to ask with a line that is "
    "not JSON (Expecting value at column 1): "
    + repr(GARBAGE[:200])
    + f" (first 200 of {len(GARBAGE)} characters)",
    "nan": "stats() in generation 2: the evolver process replied to stats with a line that is "
    "not strict JSON (NaN is not JSON): " + repr('{"type": "figures", "values": {"mood": NaN}}'),
    "unknown_type": "ask() in generation 2: the evolver process replied to ask with a message of "
    "unknown type 'hello' (field 'type'; a reply is one of ready, batch, noted, figures, error): "
    + protocol.quote(json.dumps({"type": "hello", "networks": [NET]})),
    "wrong_reply": "ask() in generation 2: the evolver process replied 'noted' to ask, expected "
    "'batch' (field 'type'): " + repr('{"type": "noted"}'),
    "batch_not_list": "ask() in generation 2: the evolver process's 'batch' reply to ask field "
    "'networks' must be a non-empty list, got "
    + protocol.quote(json.dumps({"first": NET}))
    + ": "
    + protocol.quote(json.dumps({"type": "batch", "networks": {"first": NET}})),
    "both_forms": "ask() in generation 2: the evolver process's 'batch' reply to ask holds "
    "'networks' and 'template' and 'weights' (one form or the other): "
    + protocol.quote(
        json.dumps({"type": "batch", "networks": [NET], "template": NET, "weights": [ROW]})
    ),  # fmt: skip
    "template_alone": "ask() in generation 2: the evolver process's 'batch' reply to ask holds "
    "'template' without 'weights': "
    + protocol.quote(json.dumps({"type": "batch", "template": NET})),
    "invalid_template": "ask() in generation 2: the evolver process's batch holds an invalid "
    "network at field 'template': connection 3 (0 -> 99): target node 99 does not exist; "
    "the network: " + protocol.quote(json.dumps(BROKEN, separators=(",", ":"))),
    "short_row": "ask() in generation 2: the evolver process's batch holds invalid weights at "
    "field 'weights.1': must be a list of 3 numbers, one per connection of the template; the "
    "entry: '[0.5,-0.5]'",
    "bool_weight": "ask() in generation 2: the evolver process's batch holds invalid weights at "
    "field 'weights.2': entry 1 is True, not a finite number; the entry: '[0.5,true,0.1]'",
    "huge_weight": "ask() in generation 2: the evolver process's batch holds invalid weights at "
    "field 'weights.0': entry 0 is inf, not a finite number; the entry: '[Infinity,0,0]'",
    "invalid_network": "ask() in generation 2: the evolver process's batch holds an invalid "
    "network at field 'networks.1': connection 3 (0 -> 99): target node 99 does not exist; "
    "the network: " + protocol.quote(json.dumps(BROKEN, separators=(",", ":"))),
    "error": "ask() in generation 2: the evolver process reported an error in reply to ask: "
    "'cannot go on'",
    "exits": "ask() in generation 2: the evolver process exited with status 3 before replying "
    "to ask; its stderr ended with: 'warming up' | 'out of ideas'",
    "stalls": "ask() in generation 2: the evolver process sent no reply to ask within 1 s "
    "(reply_timeout)",
    "out_of_turn": "stats() in generation 2: the evolver process wrote to stdout out of turn (no "
    "reply was due) before stats: " + repr('{"type": "noted"}\n'),
    "version": "start(): the evolver process speaks protocol version 2, the harness speaks 1 "
    "(field 'version'): "
    + repr('{"type": "ready", "version": 2, "settings": {"kind": "version"}}'),
    "lingers": "stop(): the evolver process did not exit within 1 s (reply_timeout) after stop",
    "stop_status": "stop(): the evolver process exited with status 5 after stop",
    "chatty_stop": "stop(): the evolver process wrote to stdout after stop (no reply was due): "
    + repr('{"type": "bye"}\n'),
}
# evaluations made before the fault: two generations of five networks, the third one's
# too for a fault after its tell, none before the first ask, all at stop
EVALUATIONS = {"version": 0, "nan": 15, "out_of_turn": 15, "schema": 15}
EVALUATIONS.update(dict.fromkeys(("lingers", "stop_status", "chatty_stop"), BUDGET))


@pytest.fixture(scope="module")
def child(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("children") / "misbehaving_evolver.py"
    path.write_text(CHILD)
    return path


def command(script: Path, kind: str) -> str:
    return f"process:{shlex.quote(sys.executable)} {shlex.quote(str(script))} {kind}"


def running(script: Path) -> list[int]:
    """Ids of live processes whose command line names ``script`` (ours: tmp_path is unique)."""
    found = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                cmdline = (entry / "cmdline").read_bytes()
                state = (entry / "stat").read_text().rsplit(")", 1)[1].split()[0]
            except OSError:
                continue
            if str(script).encode() in cmdline and state != "Z":
                found.append(int(entry.name))
    return found


def run(name: str, config: dict | None = None, budget: int = BUDGET):
    spec = plan_run(EvolverSpec(name, config or {}), "xor-v2", 0, 1, budget)
    return run_one(spec)


# --- each kind of fault -------------------------------------------------------------------


def test_the_schema_example_of_a_reason_is_schema_wording(child) -> None:
    record = run(command(child, "schema"), {"reply_timeout": TIMEOUT})
    assert record.status == "failed"
    # jsonschema's own message for the wrong type, at the field that holds it
    assert record.failure == (
        "stats() in generation 2: the evolver process's 'figures' reply to stats fails the "
        "protocol schema at field 'values': ['high'] is not of type 'object': "
        + repr('{"type": "figures", "values": ["high"]}')
    )
    assert not running(child)


@pytest.mark.parametrize("kind", sorted(FAULTS))
def test_each_protocol_fault_fails_the_run_with_its_reason(child, kind) -> None:
    record = run(command(child, kind), {"reply_timeout": TIMEOUT})
    assert record.status == "failed"
    assert record.failure == FAULTS[kind]
    # what the run did before the fault is kept: two generations of five networks
    assert record.evaluations == EVALUATIONS.get(kind, 10)
    assert not running(child)  # the process was ended and reaped


def test_a_healthy_python_child_runs_to_its_budget(child) -> None:
    record = run(command(child, "healthy"), {"reply_timeout": TIMEOUT})
    assert (record.status, record.failure, record.evaluations) == ("unsolved", None, BUDGET)
    assert record.evolver_settings == {"kind": "healthy"}
    assert [row.stats for row in record.log[:2]] == [{"generation": 0.0}, {"generation": 1.0}]
    assert not running(child)


def test_a_batch_in_the_template_form_is_the_same_networks(child) -> None:
    """The Python child's five networks sent as a template and weight rows: the same
    networks, hence the same evaluations and log, as sent whole."""
    whole = run(command(child, "healthy"), {"reply_timeout": TIMEOUT})
    template = run(command(child, "template"), {"reply_timeout": TIMEOUT})
    assert (template.status, template.failure, template.evaluations) == ("unsolved", None, BUDGET)
    assert template.best_network == whole.best_network
    assert [row.best_fitness for row in template.log] == [row.best_fitness for row in whole.log]


# a batch's own fields, each checked by read_reply and read_networks by hand and by the
# protocol's schema: the two must agree (protocol.py, _check_batch)
ENVELOPES = [
    {"networks": [NET]},
    {"template": NET, "weights": [ROW, ROW]},
    {"networks": []},
    {"networks": NET},
    {"weights": [ROW]},
    {"template": NET},
    {},
    {"networks": [NET], "weights": [ROW]},
    {"networks": [NET], "template": NET, "weights": [ROW]},
    {"template": NET, "weights": []},
    {"template": NET, "weights": ROW},
    {"template": NET, "weights": [ROW, [0.1, "0.2", 0.3]]},
    {"template": NET, "weights": [[True, 0.1, 0.2]]},
    {"template": [NET], "weights": [ROW]},
    {"networks": [NET], "colour": "red"},
]


@pytest.mark.parametrize("fields", ENVELOPES, ids=lambda f: json.dumps(f)[:60])
def test_the_batch_check_agrees_with_the_schema(fields) -> None:
    message = {"type": "batch", **fields}
    line = json.dumps(message).encode()
    try:
        protocol.read_networks(protocol.read_reply(line, "ask"), 2, 1)
        accepted = True
    except ProcessEvolverError:
        accepted = False
    assert accepted == protocol.message_validator().is_valid(message)


def test_a_fault_ends_the_child_at_once(child) -> None:
    """Driven by hand: the stalled child is killed and reaped when the call fails."""
    evolver = ProcessEvolver([sys.executable, str(child), "stalls"], reply_timeout=0.5)
    evolver.start(Problem("xor-v2", 2, 1, 100, 16.0), seed=3)
    for _ in range(2):
        evolver.ask()
        evolver.tell([Evaluation(1.0)] * 5)
        evolver.stats()
    with pytest.raises(ProcessEvolverError, match="sent no reply to ask within 0.5 s"):
        evolver.ask()
    assert evolver.child is not None and evolver.child.process.returncode is not None
    evolver.stop(Outcome("failed", 2, 10, "x"))  # nothing left to stop: no second error


def test_a_command_that_is_not_found_is_one_line_exit_2(tmp_path, capsys) -> None:
    missing = tmp_path / "no-such-evolver"
    code = main(["run", "--evolver", f"process:{missing}", "--task", "xor-v2", "--runs", "1",
                 "--store", str(tmp_path / "s.db"), "--quiet"])  # fmt: skip
    assert code == 2
    err = capsys.readouterr().err.strip()
    assert err == (
        f"neuroyard: error: evolver 'process:{missing}': bad configuration: command: program "
        f"'{missing}' not found or not executable"
    )
    assert not (tmp_path / "s.db").exists() or _count(tmp_path / "s.db") == 0


def _count(path: Path) -> int:
    return sqlite3.connect(path).execute("SELECT count(*) FROM runs").fetchone()[0]


@pytest.mark.parametrize(
    ("name", "message"),
    [
        ("process:", "evolver 'process:' needs a command after the colon"),
        ("process:node 'es.js", "cannot split the command: No closing quotation"),
    ],
)
def test_a_bad_process_name_is_an_evolver_error(name, message) -> None:
    with pytest.raises(EvolverError, match=message):
        load_factory(name)


@pytest.mark.parametrize(
    ("config", "message"),
    [
        ({"reply_timeout": 0}, "reply_timeout must be a number of seconds > 0, got 0"),
        ({"reply_timeout": "soon"}, "reply_timeout must be a number of seconds > 0, got 'soon'"),
        ({"weights": {1, 2}}, "option 'weights': {1, 2} is not a JSON value"),
    ],
)
def test_a_bad_configuration_names_the_key(child, config, message) -> None:
    with pytest.raises(EvolverError, match=message):
        EvolverSpec(command(child, "healthy"), config).build()


def test_the_run_key_includes_the_command(child) -> None:
    keys = set()
    for kind in ("healthy", "stalls"):
        spec = plan_run(EvolverSpec(command(child, kind)), "xor-v2", 0, 1, BUDGET)
        keys.add(run_key(spec.evolver.name, spec.evolver.config_hash, spec.task,
                         spec.task_settings, spec.campaign_seed, spec.run_index, spec.budget))  # fmt: skip
    assert len(keys) == 2


def test_one_campaign_keeps_the_good_run_beside_the_faulty_one(child, tmp_path) -> None:
    faulty = EvolverSpec(command(child, "exits"), {"reply_timeout": TIMEOUT})
    good = EvolverSpec(command(child, "healthy"), {"reply_timeout": TIMEOUT})
    path = tmp_path / "campaign.db"
    with ResultStore(path) as store:
        plan = CampaignPlan([faulty, good], [TaskChoice("xor-v2")], 1, 1, BUDGET)
        result = execute(plan, store, Supervisor(2), progress=False)
        records = {r.evolver: r for r in store.records()}
    assert (result.done, result.internal_errors) == (2, 0)
    assert records[faulty.name].status == "failed"
    assert records[faulty.name].failure == FAULTS["exits"]
    assert (records[good.name].status, records[good.name].evaluations) == ("unsolved", BUDGET)
    assert sqlite3.connect(path).execute("PRAGMA integrity_check").fetchone() == ("ok",)
    assert not running(child)


# --- the example evolvers -----------------------------------------------------------------

needs_node = pytest.mark.needs_tool("node")  # external_tools: skipped where it is missing
needs_cc = pytest.mark.needs_tool("cc")


@pytest.fixture(scope="module")
def es_binary(tmp_path_factory) -> Path:
    """es.c built by the one-line command of reference/README.md (for tests marked ``needs_cc``)."""
    out = tmp_path_factory.mktemp("es_c") / "es"
    subprocess.run(
        ["cc", "-O2", "-std=c99", "-Wall", "-Wextra", "-Werror", "-o", str(out), str(ES_C), "-lm"],
        check=True,
    )
    return out


def xor_outputs(network: dict) -> list[float]:
    """The stored network's output on the four XOR patterns, computed here with numpy from
    the node formula of harness/core/network.py and NEAT's steepened sigmoid
    1 / (1 + exp(-4.9 x)) (Stanley & Miikkulainen 2002, sec. 4.2), not by the harness."""
    nodes = {n["id"]: n for n in network["nodes"]}
    inputs = [n["id"] for n in network["nodes"] if n["kind"] == "input"]
    outputs = []
    for pattern in ([0, 0], [0, 1], [1, 0], [1, 1]):
        value = {i: float(x) for i, x in zip(inputs, pattern, strict=True)}
        value.update({n: 1.0 for n, d in nodes.items() if d["kind"] == "bias"})
        for kind in ("hidden", "output"):  # the examples' layers, in order
            for n in (n for n, d in nodes.items() if d["kind"] == kind):
                total = nodes[n].get("bias", 0.0) + sum(
                    c["weight"] * value[c["source"]]
                    for c in network["connections"]
                    if c["target"] == n and c.get("enabled", True)
                )
                value[n] = 1.0 / (1.0 + np.exp(-4.9 * nodes[n].get("gain", 1.0) * total))
        outputs.append(value[next(n for n, d in nodes.items() if d["kind"] == "output")])
    return outputs


@needs_node
@needs_cc
def test_both_examples_solve_xor_beside_the_python_hill_climber(
    es_binary, tmp_path, monkeypatch, capsys
):
    monkeypatch.chdir(es_binary.parent)  # the C evolver by a relative path: a stable name
    store = tmp_path / "examples.db"
    evolvers = ["es-node", "process:./es", "hill-climber"]
    args = ["run", "--task", "xor-v2", "--runs", "3", "--seed", "1", "--budget", "5000",
            "--workers", "2", "--store", str(store)]  # fmt: skip
    for name in evolvers:
        args += ["--evolver", name]
    # the hill-climber with the examples' defaults is the same algorithm in Python
    args += ["--param", "hill-climber:offspring=10", "--param", "hill-climber:hidden=3"]
    assert main(args) == 0
    report = capsys.readouterr().out
    with ResultStore(store, write=False) as results:
        records = list(results.records())
    for name in evolvers:  # the report shows the three side by side
        assert any(line.startswith(f"{name} ") and "xor-v2" in line for line in report.splitlines())
    for name in evolvers[:2]:
        mine = [r for r in records if r.evolver == name]
        assert [r.status for r in mine] == ["solved"] * 3, [r.failure for r in mine]
        # the published XOR criterion: every output on the correct side of 0.5
        for r in mine:
            out = xor_outputs(r.best_network)
            assert out[0] < 0.5 and out[1] > 0.5 and out[2] > 0.5 and out[3] < 0.5
    es_node = next(r for r in records if r.evolver == "es-node")
    assert es_node.evolver_settings == {
        "lambda": 10, "sigma": 1.0, "hidden": 3, "init_range": 2.0, "batch_form": "template",
        "timing": False,
    }  # fmt: skip


@needs_node
def test_the_node_examples_two_batch_forms_give_the_same_run() -> None:
    """es.js sends the same networks as a template and weight rows (its default) or whole:
    the records agree in everything the run did."""
    template, whole = (
        run("es-node", {"batch_form": form}, budget=2000) for form in ("template", "networks")
    )
    assert template.failure is None and whole.failure is None
    assert template.evolver_settings["batch_form"] == "template"
    assert whole.evolver_settings["batch_form"] == "networks"
    for field in ("status", "evaluations", "generations", "best_fitness", "best_network"):
        assert getattr(template, field) == getattr(whole, field), field
    assert [row.best_fitness for row in template.log] == [row.best_fitness for row in whole.log]


def traffic(log: Path) -> list[tuple[str, dict]]:
    return [
        (e["from"], json.loads(e["line"])) for e in map(json.loads, log.read_text().splitlines())
    ]


def check_traffic(log: Path) -> None:
    """Every recorded message passes the protocol's schema, and each request that wants a
    reply has the one the protocol names."""
    validator = protocol.message_validator()
    messages = traffic(log)
    for _, message in messages:
        validator.validate(message)
    requests = [m["type"] for side, m in messages if side == "harness"]
    replies = [m["type"] for side, m in messages if side == "evolver"]
    assert requests[0] == "start" and requests[-1] == "stop"
    assert replies == [protocol.REPLY_TO[r] for r in requests[:-1]]
    assert requests[1:4] == ["ask", "tell", "stats"]


@needs_node
def test_the_node_examples_traffic_passes_the_schema(tmp_path) -> None:
    log = tmp_path / "node.jsonl"
    recorder = f"{sys.executable} {HERE / 'protocol_recorder.py'} {log}"
    record = run(f"process:{recorder} node {ES_JS}", budget=300)
    assert record.status in ("solved", "unsolved") and record.failure is None
    check_traffic(log)


@needs_cc
def test_the_c_examples_traffic_passes_the_schema(tmp_path, es_binary) -> None:
    log = tmp_path / "c.jsonl"
    recorder = f"{sys.executable} {HERE / 'protocol_recorder.py'} {log}"
    record = run(f"process:{recorder} {es_binary}", {"lambda": 20, "sigma": 0.5}, budget=300)
    assert record.status in ("solved", "unsolved") and record.failure is None
    assert record.evolver_settings == {"lambda": 20, "sigma": 0.5, "hidden": 3, "init_range": 2.0}
    check_traffic(log)


def test_the_python_childs_traffic_passes_the_schema(tmp_path, child) -> None:
    log = tmp_path / "python.jsonl"
    recorder = f"{sys.executable} {HERE / 'protocol_recorder.py'} {log}"
    record = run(f"process:{recorder} {sys.executable} {child} healthy", budget=50)
    assert record.status == "unsolved"
    check_traffic(log)


@needs_node
@needs_cc
@pytest.mark.parametrize("example", ["node", "c"])
def test_the_examples_refuse_an_unknown_option_with_an_error_reply(example, es_binary) -> None:
    name = f"process:node {ES_JS}" if example == "node" else f"process:{es_binary}"
    record = run(name, {"offspring": 5})
    assert record.status == "failed"
    assert record.failure.startswith(
        "start(): the evolver process reported an error in reply to start: "
    )
    assert "unknown option" in record.failure and "offspring" in record.failure


def test_the_schema_is_a_valid_draft_2020_12_schema_and_rejects_strangers() -> None:
    jsonschema.Draft202012Validator.check_schema(protocol.schema())
    validator = protocol.message_validator()
    assert not validator.is_valid({"type": "batch", "networks": [{"nodes": [], "connections": [],
                                                                  "colour": "red"}]})  # fmt: skip
    assert not validator.is_valid({"type": "greet"})
    assert not validator.is_valid({"type": "figures", "values": {"x": "high"}})
    assert validator.is_valid({"type": "figures", "values": {"x": None,
                                                             "non_finite_numbers": {"x": "nan"}}})  # fmt: skip


def test_non_finite_figures_follow_the_strict_json_rule() -> None:
    line = b'{"type":"figures","values":{"x":null,"y":2,"non_finite_numbers":{"x":"-inf"}}}'
    values = protocol.read_reply(line, "stats")["values"]
    assert values["y"] == 2 and values["x"] == -math.inf


def test_no_process_of_ours_is_left(child) -> None:
    assert not running(child)
    assert not any(str(ES_JS).encode() in _cmdline(p) for p in _pids())


def _pids() -> list[int]:
    return [
        int(e.name)
        for e in Path("/proc").iterdir()
        if e.name.isdigit() and e.name != str(os.getpid())
    ]


def _cmdline(pid: int) -> bytes:
    try:
        return Path(f"/proc/{pid}/cmdline").read_bytes()
    except OSError:
        return b""

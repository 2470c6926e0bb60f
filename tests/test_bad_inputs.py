"""Every bad input is one line and exit status 2, and never changes a store (issue 33).

Each case is an input an adversarial tester gave the command line that ended in "internal
error", exit 3 (or a hang, or a store appended to in silence): JSON nested 10^5 deep, text
that is not UTF-8, a device or a huge file as an input file, hand-corrupted store records,
whole numbers past 64 bits, a callable that is not an evolver, a maze file of absurd size,
a read-only output folder, and markup in report cells. Each test asserts exit status 2,
exactly one line on stderr naming the file, option or run and what is wrong, and that a
store involved is byte for byte as it was (SHA-256 before and after).

Outside references: Python's ``json`` and ``tomllib`` read nesting recursively and raise
``RecursionError`` on deep documents (checked below); Python's ``sqlite3`` decodes a TEXT
cell as UTF-8 and raises ``sqlite3.OperationalError`` on other bytes, which SQLite itself
stores as given; Linux ``unlink(2)`` on a read-only file system fails with EROFS even for a
missing file; CommonMark's backslash escapes (https://spec.commonmark.org, section 2.4).
"""

from __future__ import annotations

import dataclasses
import errno
import hashlib
import json
import os
import shutil
import sqlite3
import sys
import tomllib
from pathlib import Path

import pytest

import neuroyard
from neuroyard.cli.main import main
from neuroyard.core import jsonsafe
from neuroyard.core.errors import EvolverError, NetworkError, SettingError
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.core.inputfile import MAX_INPUT_BYTES
from neuroyard.core.network import Connection, Network, Node, to_dict
from neuroyard.core.options import Option, OptionTable
from neuroyard.records.runs import GenerationLog, RunRecord, record_key
from neuroyard.records.store import ResultStore
from neuroyard.reports import renderers, report
from neuroyard.tasks.maze import shipped_maze

DEEP = 100_000  # levels of nesting the tester used
DEEP_JSON = "[" * DEEP + "]" * DEEP
NOT_UTF8 = b'{"nodes": "\xff\xfe"}'  # 0xff never occurs in UTF-8
TOO_DEEP = "nested more than 100 levels deep"
NETWORK = Network(
    (Node(0, "input"), Node(1, "input"), Node(2, "output")),
    (Connection(0, 2, 0.5), Connection(1, 2, -0.5)),
)


@pytest.fixture(autouse=True)
def crash_logs(tmp_path, monkeypatch):
    """Crash logs of the cases that still fail go to the test's folder, not the user's."""
    monkeypatch.setenv("NEUROYARD_CRASH_DIR", str(tmp_path / "crashes"))


def cli(capsys, *argv: str) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def assert_one_line(code: int, err: str, *needles: str) -> None:
    """Exit status 2 and exactly one line on stderr, ``neuroyard: error: ...``, holding
    every needle."""
    assert code == 2, err
    assert err.startswith("neuroyard: error: ") and err.count("\n") == 1, err
    for needle in needles:
        assert needle in err, (needle, err)


def digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _record(evolver: str, index: int, **changes) -> RunRecord:
    log = [
        GenerationLog(g, 20 * (g + 1), 1.0 + g, 0.5, 0, 2, {"species": 1.0}, {"rank": 0})
        for g in range(3)
    ]
    record = RunRecord(
        evolver, {}, "0123456789ab", "xor-v2", {"recurrent_steps": 5}, index, 1, 7 + index,
        9 + index, 60, generations=3, evaluations=60, success_evaluations=3, best_fitness=3.0,
        best_network=to_dict(NETWORK), hidden_nodes=0, connections=2, log=log,
        timing={"wall": 0.1}, host="test",
    )  # fmt: skip
    return dataclasses.replace(record, **changes)


def make_store(path: Path, records: list[RunRecord]) -> Path:
    """A store holding ``records``, written without running anything."""
    with ResultStore(path) as store:
        campaign = store.campaign(1, {"runs": len(records)}, "f" * 16)
        for record in records:
            assert store.save(record_key(record), campaign, record)
    return path


@pytest.fixture(scope="module")
def good_store(tmp_path_factory) -> Path:
    records = [_record(name, k) for name in ("rwg", "hill-climber") for k in range(2)]
    return make_store(tmp_path_factory.mktemp("stores") / "good.db", records)


@pytest.fixture
def store(good_store, tmp_path) -> Path:
    """A copy of the good store, to break or to leave alone."""
    return Path(shutil.copyfile(good_store, tmp_path / "store.db"))


# -- outside references: what Python's own readers do with deep nesting -------------------


def test_pythons_json_and_tomllib_fail_on_deep_nesting_with_recursion_error():
    # the behaviour the limit guards against (Python 3.11 json and tomllib)
    with pytest.raises(RecursionError):
        json.loads(DEEP_JSON)
    with pytest.raises(RecursionError):
        tomllib.loads("a = " + DEEP_JSON)


def test_jsonsafe_limits_nesting_both_ways_and_keeps_what_it_writes_readable():
    limit = jsonsafe.MAX_DEPTH
    assert jsonsafe.parse("[" * limit + "]" * limit) is not None  # the limit itself is fine
    for text in ("[" * (limit + 1) + "]" * (limit + 1), DEEP_JSON):
        with pytest.raises(jsonsafe.TooDeep, match=TOO_DEEP):
            jsonsafe.loads(text)
    nested: list = []
    for _ in range(limit):
        nested = [nested]
    with pytest.raises(ValueError, match=TOO_DEEP):  # never written, so never unreadable
        jsonsafe.dumps(nested)
    assert jsonsafe.loads(jsonsafe.dumps({"a": float("nan")}))["a"] != 0.0  # NaN kept


# -- input files: network, baseline, config, maze ------------------------------------------


def _bad_file(tmp_path: Path, kind: str, fmt: str) -> Path:
    """An input file of each bad kind: nested too deeply (JSON, or TOML for a TOML
    reader), not UTF-8, larger than the cap (a sparse file), or /dev/zero."""
    if kind == "zero":
        return Path("/dev/zero")
    path = tmp_path / f"bad-{kind}.{fmt}"
    if kind == "deep":
        path.write_text(DEEP_JSON if fmt == "json" else "steps = " + DEEP_JSON)
    elif kind == "utf8":
        path.write_bytes(NOT_UTF8 if fmt == "json" else b'steps = "\xff"\n')
    else:  # huge: one byte past the cap, without writing it (st_size says so)
        with open(path, "wb") as file:
            file.truncate(MAX_INPUT_BYTES + 1)
    return path


PROBLEM = {
    "deep": TOO_DEEP,
    "utf8": "not UTF-8 text (byte",
    "huge": "larger than 64 MiB",
    "zero": "larger than 64 MiB",
}
READERS = {
    # reader: (file format, command line with FILE, words that name the file)
    "evaluate network": ("json", ["evaluate", "FILE", "--task", "xor-v2"], "network file FILE"),
    "replay network": (
        "json",
        ["replay", "--network", "FILE", "--task", "xor-v2", "--out", "OUT/x.png"],
        "network file FILE",
    ),
    "baseline": ("json", ["check", "--baseline", "FILE", "--store", "STORE"], "baseline FILE"),
    "config": (
        "toml",
        [
            "run",
            "--config",
            "FILE",
            "--evolver",
            "rwg",
            "--task",
            "xor-v2",
            "--runs",
            "1",
            "--store",
            "STORE",
            "--in-process",
            "--quiet",
        ],
        "config file FILE",
    ),  # fmt: skip
    "maze, listed": ("toml", ["tasks", "maze:FILE"], "FILE"),
    "maze, run": (
        "toml",
        [
            "run",
            "--task",
            "maze:FILE",
            "--evolver",
            "rwg",
            "--runs",
            "1",
            "--store",
            "STORE",
            "--in-process",
            "--quiet",
        ],
        "FILE",
    ),  # fmt: skip
    "maze, replayed": (
        "toml",
        ["replay", "--network", "NET", "--task", "maze:FILE", "--out", "OUT/x.png"],
        "FILE",
    ),
}


@pytest.mark.parametrize("kind", list(PROBLEM))
@pytest.mark.parametrize("reader", list(READERS))
def test_a_bad_input_file_is_one_line_naming_it(reader, kind, tmp_path, store, capsys):
    fmt, argv, names = READERS[reader]
    bad = _bad_file(tmp_path, kind, fmt)
    net = tmp_path / "net.json"
    net.write_text(NETWORK.to_json())
    places = {"FILE": str(bad), "STORE": str(store), "OUT": str(tmp_path), "NET": str(net)}
    before = digest(store)
    code, _, err = cli(capsys, *[_fill(a, places) for a in argv])
    assert_one_line(code, err, _fill(names, places), PROBLEM[kind])
    assert digest(store) == before
    assert not (tmp_path / "x.png").exists()


def _fill(text: str, places: dict[str, str]) -> str:
    for name, value in places.items():
        text = text.replace(name, value)
    return text


def test_the_library_raises_the_same_errors(tmp_path):
    path = _bad_file(tmp_path, "deep", "json")
    with pytest.raises(NetworkError, match=f"network file {path}: not valid JSON .*{TOO_DEEP}"):
        Network.from_file(path)
    with pytest.raises(NetworkError, match="network file /dev/zero: larger than 64 MiB"):
        Network.from_file("/dev/zero")
    with pytest.raises(NetworkError, match="pasted: not valid JSON"):
        Network.from_json(DEEP_JSON, where="pasted")


# -- maze files: upper limits --------------------------------------------------------------

OPEN = shipped_maze("open").read_text()
MAZES = [
    ("bounds 1e300", OPEN.replace("width = 200.0", "width = 1e300").replace(
        "height = 200.0", "height = 1e300"), "'bounds.width': must be above 0 and at most 1,000"),
    ("steps 2**63 - 1", OPEN.replace("steps = 400", "steps = 9223372036854775807"),
     "'steps': must be an integer >= 1 and <= 10,000"),
    ("heading 1e300", OPEN.replace("heading = 0.0", "heading = 1e300"),
     "'start.heading': must lie within -360..360 degrees"),
    ("too many walls", OPEN.replace("walls = []", "walls = [" + ", ".join(
        ["{from = [10.0, 10.0], to = [20.0, 20.0]}"] * 1001) + "]"),
     "'walls': 1,001 walls, more than 1,000"),
]  # fmt: skip


@pytest.mark.parametrize(("text", "message"), [m[1:] for m in MAZES], ids=[m[0] for m in MAZES])
def test_a_maze_file_past_its_limits_is_one_line(text, message, tmp_path, store, capsys):
    maze = tmp_path / "big.toml"
    maze.write_text(text)
    code, _, err = cli(capsys, "tasks", f"maze:{maze}")
    assert_one_line(code, err, f"maze file {maze}: entry {message}")
    before = digest(store)
    code, _, err = cli(
        capsys, "run", "--task", f"maze:{maze}", "--evolver", "rwg", "--runs", "1",
        "--store", store, "--in-process", "--quiet",
    )  # fmt: skip
    assert_one_line(code, err, message)
    assert digest(store) == before


# -- hand-corrupted store records ----------------------------------------------------------


def _edit_record(db: sqlite3.Connection, change) -> None:
    doc = json.loads(db.execute("SELECT record FROM runs WHERE id = 1").fetchone()[0])
    change(doc)
    db.execute("UPDATE runs SET record = ? WHERE id = 1", (json.dumps(doc),))


def _null_best_fitness(db: sqlite3.Connection) -> None:
    # the table made again without its NOT NULL constraints, as a hand edit may
    db.execute("CREATE TABLE loose AS SELECT * FROM generations")
    db.execute("DROP TABLE generations")
    db.execute("ALTER TABLE loose RENAME TO generations")
    db.execute("UPDATE generations SET best_fitness = NULL WHERE run_id = 1 AND generation = 0")


CORRUPTIONS = {
    # name: (the edit, what the line says, whether reading the records without logs meets it)
    "nested 10^5 deep": (
        lambda db: db.execute("UPDATE runs SET record = ? WHERE id = 1", (DEEP_JSON,)),
        f"its record: not valid JSON (arrays and objects {TOO_DEEP}",
        True,
    ),
    "not UTF-8": (
        lambda db: db.execute(
            "UPDATE runs SET record = CAST(? AS TEXT) WHERE id = 1", (b'{"a": "\xff"}',)
        ),
        "its record: not UTF-8 text (byte 7: invalid start byte)",
        True,
    ),
    "not an object": (
        lambda db: db.execute("UPDATE runs SET record = '[1, 2]' WHERE id = 1"),
        "its record: it is a list, not a JSON object",
        True,
    ),
    "a field missing": (
        lambda db: _edit_record(db, lambda doc: doc.pop("budget")),
        "its record: field 'budget' is missing",
        True,
    ),
    "a string for an int": (
        lambda db: _edit_record(db, lambda doc: doc.update(generations="fifteen")),
        "its record: field 'generations' must be a whole number, got 'fifteen'",
        True,
    ),
    "an unknown field": (
        lambda db: _edit_record(db, lambda doc: doc.update(colour="blue")),
        "its record: unknown field 'colour'",
        True,
    ),
    "a generation's NULL": (
        _null_best_fitness,
        "generation 0: field 'best_fitness' must be a number, got None",
        False,
    ),
    "a generation's wrong type": (
        lambda db: db.execute("UPDATE generations SET best_hidden = 'x' WHERE run_id = 1"),
        "generation 0: field 'best_hidden' must be a whole number, got 'x'",
        False,
    ),
    "a log's stats not JSON": (
        lambda db: db.execute("UPDATE generations SET stats = '{oops' WHERE run_id = 1"),
        "generation 0: stats: not valid JSON (Expecting property name",
        False,
    ),
}


def _break(store: Path, name: str) -> tuple[str, str]:
    """Apply corruption ``name`` to the first run of ``store``; its key and the words."""
    edit, words, _ = CORRUPTIONS[name]
    with sqlite3.connect(store) as db:
        (key,) = db.execute("SELECT run_key FROM runs WHERE id = 1").fetchone()
        edit(db)
    db.close()
    return key, words


@pytest.mark.parametrize("name", list(CORRUPTIONS))
def test_run_refuses_a_store_with_a_broken_record_before_any_run(name, store, capsys):
    key, words = _break(store, name)
    before = digest(store)
    code, _, err = cli(
        capsys, "run", "--evolver", "rwg", "--task", "xor-v2", "--runs", "3", "--budget",
        "100", "--store", store, "--in-process", "--quiet",
    )  # fmt: skip
    assert_one_line(code, err, f"results store {store}: run {key}: {words}")
    assert digest(store) == before  # nothing appended


READERS_OF_STORES = {
    # command: (the command line, whether it reads the generation logs)
    "report": (["report", "--store", "STORE"], False),
    "report --format html": (["report", "--store", "STORE", "--format", "html"], True),
    "export jsonl": (["export", "--store", "STORE", "--format", "jsonl"], True),
    "export csv": (["export", "--store", "STORE", "--format", "csv"], False),
    "export generations": (
        ["export", "--store", "STORE", "--format", "csv", "--table", "generations"],
        True,
    ),
    "compare": (["compare", "--store", "STORE", "--a", "rwg", "--b", "hill-climber"], False),
    "baseline": (["baseline", "--store", "STORE", "-o", "OUT/baseline.json"], False),
    "merge": (["merge", "OUT/merged.db", "STORE"], True),
}


@pytest.mark.parametrize("name", list(CORRUPTIONS))
@pytest.mark.parametrize("command", list(READERS_OF_STORES))
def test_readers_name_the_run_and_the_store(command, name, store, tmp_path, capsys):
    argv, with_logs = READERS_OF_STORES[command]
    _, _, without_logs = CORRUPTIONS[name]
    if not (with_logs or without_logs):
        pytest.skip("this command does not read the generation logs")
    key, words = _break(store, name)
    before = digest(store)
    places = {"STORE": str(store), "OUT": str(tmp_path)}
    code, out, err = cli(capsys, *[_fill(a, places) for a in argv])
    assert_one_line(code, err, f"results store {store}: run {key}: {words}")
    assert digest(store) == before
    assert not (tmp_path / "merged.db").exists() and not (tmp_path / "baseline.json").exists()


def test_the_committed_stores_pass_the_record_check():
    # every record and log row neuroyard ever committed fits the record classes
    stores = sorted(Path(__file__).parents[1].glob("results/**/*.sqlite"))
    stores += sorted(Path(__file__).parents[1].glob("results/**/*.db"))
    assert stores
    for path in stores:
        with ResultStore(path, write=False) as opened:
            opened.check_records()


# -- whole numbers past 64 bits -------------------------------------------------------------

TOO_BIG = [
    (["--seed", "100000000000000000000000000"],
     "argument --seed: must be at most 9223372036854775807, got 100000000000000000000000000"),
    (["--seed", str(2**63)], "argument --seed: must be at most 9223372036854775807"),
    (["--setting", "recurrent_steps=100000000000000000000000"],
     "task xor-v2: setting 'recurrent_steps' must be within 1..1000, got 1000000000"),
    (["--param", "hidden=100000000000000000000000"],
     "evolver rwg: option 'hidden' must fit in 64 bits (-2**63..2**63 - 1), got 1000"),
    (["--memory-limit", "100000000000000000000"],
     "argument --memory-limit: must be at most 1073741824"),
    (["--setting", "recurrent_steps=" + "[" * 50_000 + "]" * 50_000],
     f"argument --setting: recurrent_steps: arrays and objects {TOO_DEEP}"),
]  # fmt: skip


@pytest.mark.parametrize(("given", "message"), TOO_BIG, ids=[" ".join(g)[:40] for g, _ in TOO_BIG])
def test_a_number_past_its_bound_is_one_line(given, message, store, capsys):
    before = digest(store)
    code, _, err = cli(
        capsys, "run", "--evolver", "rwg", "--task", "xor-v2", "--runs", "1", "--budget", "100",
        "--store", store, "--in-process", "--quiet", *given,
    )  # fmt: skip
    assert_one_line(code, err, message)
    assert digest(store) == before


@pytest.mark.parametrize("seed", [10**26, 2**63, -1])
def test_the_api_bounds_the_seed_as_the_command_line_does(seed, tmp_path):
    with pytest.raises(
        SettingError, match=f"run: seed must be a whole number from 0 to {2**63 - 1}"
    ):
        neuroyard.run("rwg", "xor-v2", runs=1, seed=seed, store=tmp_path / "s.db")
    assert not (tmp_path / "s.db").exists()


def test_an_int_option_holds_64_bits_unless_its_range_says_less():
    table = OptionTable("evolver demo", [Option("n", 1), Option("k", 1, high=10)])
    assert table.resolve({"n": 2**63 - 1, "k": 10}) == {"n": 2**63 - 1, "k": 10}
    for value in (2**63, -(2**63) - 1, 10**5000):
        with pytest.raises(SettingError, match="option 'n' must fit in 64 bits"):
            table.resolve({"n": value})
    with pytest.raises(SettingError, match="option 'k' must be <= 10, got a whole number of"):
        table.resolve({"k": 10**5000})  # its own range says less, and says it
    with pytest.raises(SettingError, match="option 'f' must be finite"):
        OptionTable("evolver demo", [Option("f", 1.0)]).resolve({"f": 10**400})


# -- an evolver that is not one -------------------------------------------------------------


def test_a_callable_that_is_not_an_evolver_is_one_line_before_any_run(store, capsys):
    before = digest(store)
    code, _, err = cli(
        capsys, "run", "--evolver", "os:getcwd", "--task", "xor-v2", "--runs", "1",
        "--store", store, "--quiet",
    )  # fmt: skip
    assert_one_line(
        code,
        err,
        "evolver 'os:getcwd': building it gave an object of type str, not an evolver: it "
        "has no start(), ask(), tell()",
    )
    assert digest(store) == before
    with pytest.raises(EvolverError, match="'os:getpid': building it gave an object of type int"):
        EvolverSpec("os:getpid").build()


# -- merge into a read-only folder ----------------------------------------------------------


def test_merge_into_a_read_only_file_system_is_one_line(store, tmp_path, monkeypatch, capsys):
    # a read-only file system: access(2) says no write, and unlink(2) of a file that does not
    # exist fails with EROFS (Linux checks the mount for writing before it looks the name up)
    folder = tmp_path / "read-only"
    folder.mkdir()
    out = folder / "out.db"
    real_access, real_unlink = os.access, os.unlink

    def access(path, mode, *args, **kwargs):
        if Path(path) == folder and mode & os.W_OK:
            return False
        return real_access(path, mode, *args, **kwargs)

    def unlink(path, *args, **kwargs):
        if Path(path).parent == folder:
            raise OSError(errno.EROFS, os.strerror(errno.EROFS), str(path))
        return real_unlink(path, *args, **kwargs)

    monkeypatch.setattr(os, "access", access)
    monkeypatch.setattr(os, "unlink", unlink)
    before = digest(store)
    code, _, err = cli(capsys, "merge", out, store)
    assert_one_line(code, err, f"results store {out}: cannot create it: its folder", "read-only")
    assert digest(store) == before and not out.exists()


# -- markup in report cells -----------------------------------------------------------------

MARKUP = "<script>alert(1)</script>"


@pytest.fixture
def marked_up_rows():
    records = [
        _record(f"x:{MARKUP}", 0, config={"label": "*loud* [link](http://x)"}),
        _record(f"x:{MARKUP}", 1, status="failed", failure="<b>boom</b> | _x_ `code`"),
    ]
    return report.build(records)


def test_markdown_report_shows_names_reasons_and_settings_as_text(marked_up_rows):
    text = renderers.render(marked_up_rows, "markdown")
    for raw in ("<script>", "<b>", "*loud*", "[link](", "| _x_", "`code`"):
        assert raw not in text, raw
    for shown in (
        "\\<script\\>alert(1)\\</script\\>",
        "\\<b\\>boom\\</b\\> \\| \\_x\\_ \\`code\\`",
        "label = \\*loud\\* \\[link\\](http://x)",
    ):
        assert shown in text, shown


def test_html_report_escapes_the_same_text(marked_up_rows):
    page = renderers.render(marked_up_rows, "html")
    assert "<script" not in page and "<b>boom" not in page
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page and "&lt;b&gt;boom" in page


def test_an_internal_error_is_one_line_whatever_its_message(monkeypatch, capsys):
    # a library's exception may span lines (numba's typing errors: 17 of them)
    def broken(args):
        raise RuntimeError("first line\nsecond line\nthird line")

    monkeypatch.setattr("neuroyard.cli.listing.tasks_command", broken)
    code, _, err = cli(capsys, "tasks")
    assert code == 3 and err.count("\n") == 1
    assert err.startswith("neuroyard: internal error: RuntimeError: first line (traceback in")


@pytest.mark.skipif(sys.platform != "linux", reason="/dev/zero")
def test_dev_zero_is_refused_without_reading_it_all(tmp_path):
    # st_size of a device is 0: the reader stops one byte past the cap, in bounded memory
    assert os.stat("/dev/zero").st_size == 0
    with pytest.raises(NetworkError, match="larger than 64 MiB"):
        Network.from_file("/dev/zero")


# -- settings that size one evaluation ------------------------------------------------------

# The settings that set how long one evaluation runs or how large its world is: each has an
# upper limit (issue 33: "task settings that make one evaluation unbounded have documented
# upper limits"; the limits are ours).
SIZING = ("steps", "size", "side")


def test_every_setting_that_sizes_an_evaluation_has_an_upper_limit():
    from neuroyard.tasks.registry import task_class, task_ids

    unbounded = [
        f"{task_id}: {option.name}"
        for task_id in task_ids()
        for option in task_class(task_id).options
        if any(option.name.endswith(word) for word in SIZING)
        and isinstance(option.default, int | float)
        and option.high is None
    ]
    assert not unbounded, unbounded

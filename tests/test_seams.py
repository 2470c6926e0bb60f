"""Run identity from resolved values, settings per task and per evolver, the listings, and
the seams (executors, report renderers, task metrics, one task per run).

Outside references: the committed DPNV study store (its published-protocol runs and the
generalization score its README states, 275.6 over solved runs), and the evaluation
counts of the runner checked against an independent count of the task's calls.
"""

from __future__ import annotations

import hashlib
import json
import shutil
from pathlib import Path

import pytest

from neuroyard.cli.main import main
from neuroyard.core.errors import SettingError
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.core.options import Option, OptionTable, distribute
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute, plan_run
from neuroyard.execution.executors import make_executor
from neuroyard.execution.runner import run_one
from neuroyard.records.store import ResultStore
from neuroyard.reports import renderers, report
from neuroyard.tasks import base, make

RESULTS = Path(__file__).resolve().parents[1] / "results"


def cli(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_a_default_given_explicitly_is_the_same_run(tmp_path, capsys) -> None:
    store = str(tmp_path / "runs.db")
    common = ["run", "--evolver", "rwg", "--runs", "2", "--store", store, "--quiet"]
    assert cli(capsys, *common)[0] == 0
    default_budget = make("xor-v2").spec.default_budget
    for extra in (
        ["--budget", str(default_budget)],
        ["--setting", "recurrent_steps=5"],
        ["--setting", "xor-v2:recurrent_steps=5"],
        ["--param", "batch_size=100"],
        ["--param", "rwg:weight_range=10"],
    ):
        assert cli(capsys, *common, *extra)[0] == 0, extra
    with ResultStore(store, write=False) as results:
        records = list(results.records(with_log=False))
    assert len(records) == 2  # each run stored once
    # a value away from the default is another run
    assert cli(capsys, *common, "--setting", "recurrent_steps=6")[0] == 0
    with ResultStore(store, write=False) as results:
        assert len(list(results.records(with_log=False))) == 4


def test_settings_go_to_the_tasks_that_have_them(tmp_path, capsys) -> None:
    store = str(tmp_path / "runs.db")
    argv = ["run", "--evolver", "rwg", "--runs", "1", "--budget", "200", "--store", store]
    tasks = ["--task", "xor-v2", "--task", "parity-v2"]
    code, _, err = cli(capsys, *argv, *tasks, "--setting", "bits=4", "--quiet")
    assert code == 0, err  # bits: parity only; xor-v2 has no such setting and is not told
    code, _, err = cli(capsys, *argv, *tasks, "--setting", "parity-v2:recurrent_steps=3", "--quiet")
    assert code == 0, err
    with ResultStore(store, write=False) as results:
        settings = sorted(
            (r.task, json.dumps(r.task_settings, sort_keys=True)) for r in results.records()
        )
    assert settings == [
        ("parity-v2", '{"bits": 3, "recurrent_steps": 3}'),
        ("parity-v2", '{"bits": 4, "recurrent_steps": 5}'),
        ("xor-v2", '{"recurrent_steps": 5}'),  # the same xor run both times: stored once
    ]
    for setting, words in (
        ("start_angle=0.05", "setting start_angle=0.05: none of xor-v2, parity-v2 has"),
        ("pole2-markov-v1:start_angle=0.05", "'pole2-markov-v1' is not in this campaign"),
        ("parity-v2:bits=40", "task parity-v2: setting 'bits' must be within 2..12, got 40"),
    ):
        code, _, err = cli(capsys, *argv, *tasks, "--setting", setting)
        assert code == 2 and err.count("\n") == 1 and words in err, err


def test_distribute_shares_assignments_by_owner() -> None:
    table = OptionTable("evolver a", [Option("x", 1)])
    out = distribute([("x", 2), ("b:y", 3)], {"a": table, "b": None}, "--param")
    assert out == {"a": {"x": 2}, "b": {"x": 2, "y": 3}}  # b declares no table: told all
    with pytest.raises(SettingError, match="none of a has 'z'"):
        distribute([("z", 1)], {"a": table}, "--param")


def test_option_errors_name_the_option_value_and_range() -> None:
    table = OptionTable(
        "task t-v1", [Option("steps", 5, low=1, high=9), Option("gain", 1.0, above=0.0)]
    )
    assert table.resolve({"steps": "7", "gain": 2}) == {"steps": 7, "gain": 2.0}
    for given, words in (
        ({"steps": 10}, "task t-v1: option 'steps' must be within 1..9, got 10"),
        ({"gain": 0}, "option 'gain' must be > 0, got 0.0"),
        ({"gain": float("inf")}, "option 'gain' must be > 0, got inf"),
        ({"stepz": 1}, "unknown option 'stepz' (known: steps, gain)"),
    ):
        with pytest.raises(SettingError) as info:
            table.resolve(given)
        assert words in str(info.value)


def test_a_digest_option_holds_the_named_files_sha256(tmp_path) -> None:
    # the digest is checked against hashlib's SHA-256 of the file's bytes
    table = OptionTable(
        "evolver e",
        [Option("file", None, kind=str), Option("file_sha256", None, kind=str, digest_of="file")],
    )
    assert table.resolve({}) == {"file": None, "file_sha256": None}
    path = tmp_path / "f.bin"
    path.write_bytes(b"one")
    digest = hashlib.sha256(b"one").hexdigest()
    assert table.resolve({"file": str(path)})["file_sha256"] == digest
    assert table.resolve({"file": str(path), "file_sha256": digest})["file_sha256"] == digest
    path.write_bytes(b"two")
    with pytest.raises(SettingError, match=r"'file': .*f.bin: its content changed since the "
                       r"runs were planned \(sha256 [0-9a-f]{12}\.\.\., planned "
                       + digest[:12]):  # fmt: skip
        table.resolve({"file": str(path), "file_sha256": digest})
    with pytest.raises(SettingError, match=r"none.bin: cannot read it \(No such file"):
        table.resolve({"file": str(tmp_path / "none.bin")})
    with pytest.raises(SettingError, match="'file_sha256' is the digest of 'file' and cannot"):
        table.resolve({"file_sha256": digest})


def test_evolvers_are_listed_with_their_options_and_sources(capsys) -> None:
    code, out, _ = cli(capsys, "evolvers")
    assert code == 0
    for name in ("neat", "rwg", "hill-climber"):
        assert any(line.startswith(f"{name}: ") for line in out.splitlines()), name
    code, out, _ = cli(capsys, "evolvers", "neat")
    assert code == 0
    assert "population_size = 150 (whole number, within 2..1e+06)" in out
    assert "weight_perturb_half_width = 3.5" in out and "formerly weight_perturb_power" in out
    assert "source: paper sec. 4.1" in out
    code, out, _ = cli(capsys, "evolvers", "rwg", "--format", "json")
    (doc,) = json.loads(out)
    options = {o["name"]: o for o in doc["options"]}
    assert options["weight_range"]["default"] == 10.0
    assert options["weight_range"]["source"] == "common practice"
    code, _, err = cli(capsys, "evolvers", "nope")
    assert code == 2 and "unknown evolver 'nope'" in err


def test_a_task_is_listed_with_every_setting_and_its_source(capsys) -> None:
    code, out, _ = cli(capsys, "tasks", "pole2-markov-v1")
    assert code == 0
    assert "start_angle = 0.07 rad" in out and "tau = 0.01 s (number, > 0)" in out
    assert out.count("source: ") >= len(make("pole2-markov-v1").settings)
    code, out, _ = cli(capsys, "tasks", "pole2-nonmarkov-v1")
    assert "metric generalization (higher is better, starts of 625)" in out
    code, _, err = cli(capsys, "tasks", "xor-v1")
    assert code == 2 and "retired" in err


def test_task_metrics_reach_the_report_and_the_export(tmp_path, capsys) -> None:
    copy = tmp_path / "dpnv.db"
    shutil.copyfile(RESULTS / "pole" / "dpnv.sqlite", copy)
    code, out, _ = cli(capsys, "report", "--store", str(copy))
    assert code == 0 and "Task metrics" in out
    line = next(x for x in out.splitlines() if x.startswith("neat") and "generalization" in x)
    assert "275.6" in line and "starts of 625" in line  # as results/pole/README.md states
    code, out, _ = cli(capsys, "report", "--store", str(copy), "--format", "json")
    (row,) = json.loads(out)
    assert row["mean_generalization"] == pytest.approx(275.5625)
    assert row["metrics"][0]["name"] == "generalization"
    code, out, _ = cli(capsys, "export", "--store", str(copy), "--format", "jsonl")
    lines = [json.loads(x) for x in out.splitlines()]
    solved = [x for x in lines if x["solved"]]
    assert solved and all(x["metrics"]["generalization"] >= 200 for x in solved)


def test_a_renderer_is_found_by_name(monkeypatch) -> None:
    monkeypatch.setattr(renderers, "_RENDERERS", dict(renderers._RENDERERS))  # kept to itself

    @renderers.register_renderer("count-test")
    def count(rows) -> str:
        return f"{len(rows)} rows"

    plan = CampaignPlan([EvolverSpec("rwg", {})], [TaskChoice("xor-v2")], 1, 1, 100)
    record = run_one(plan.expand()[0])
    assert renderers.render(report.build([record]), "count-test") == "1 rows"
    assert "count-test" in renderers.renderer_names()


class _Recording:
    """An executor of our own: runs in this process and notes what it was given."""

    capacity = 2

    def __init__(self) -> None:
        self.given: list[str] = []
        self.queue: list = []
        self.closed = False

    def submit(self, spec) -> None:
        self.given.append(spec.key)
        self.queue.append(spec)

    def collect(self, timeout: float) -> list:
        from neuroyard.execution.supervisor import Finished

        done, self.queue = self.queue, []
        return [Finished(spec, run_one(spec)) for spec in done]

    def close(self) -> None:
        self.closed = True


def test_any_executor_with_the_four_members_runs_a_campaign(tmp_path) -> None:
    plan = CampaignPlan([EvolverSpec("rwg", {})], [TaskChoice("xor-v2")], 3, 1, 300)
    executor = _Recording()
    with ResultStore(tmp_path / "a.db") as store:
        result = execute(plan, store, executor, progress=False)
        mine = [r.to_dict() for r in store.records()]
    assert result.done == 3 and executor.closed
    assert sorted(executor.given) == sorted(s.key for s in plan.expand())
    with ResultStore(tmp_path / "b.db") as store:
        execute(plan, store, make_executor("in-process"), progress=False)
        theirs = [r.to_dict() for r in store.records()]
    volatile = ("timing", "host")
    assert [{k: v for k, v in r.items() if k not in volatile} for r in mine] == [
        {k: v for k, v in r.items() if k not in volatile} for r in theirs
    ]


def test_each_run_builds_its_task_once(monkeypatch) -> None:
    builds = []
    original = base.Task.__init__

    def counted(self, *args, **kwargs):
        builds.append(type(self).id)
        original(self, *args, **kwargs)

    specs = [plan_run(EvolverSpec("rwg", {}), "pole1-markov-v1", i, 1, 300) for i in range(3)]
    monkeypatch.setattr(base.Task, "__init__", counted)
    for spec in specs:
        run_one(spec)
    assert builds == ["pole1-markov-v1"] * 3


def test_several_stores_report_together_each_run_once(tmp_path, capsys) -> None:
    argv = ["run", "--evolver", "rwg", "--runs", "3", "--quiet"]
    for name in ("a.db", "b.db"):  # the same campaign twice: the same runs
        assert cli(capsys, *argv, "--store", str(tmp_path / name))[0] == 0
    assert cli(capsys, *argv, "--budget", "500", "--store", str(tmp_path / "b.db"))[0] == 0
    stores = ["--store", str(tmp_path / "a.db"), "--store", str(tmp_path / "b.db")]
    code, out, _ = cli(capsys, "report", *stores, "--format", "json")
    rows = json.loads(out)
    assert code == 0 and sorted(r["runs"] for r in rows) == [3, 3]  # not 6: counted once
    code, out, _ = cli(capsys, "report", *stores)
    # the same task under two budgets: the budget tells the groups apart
    assert "xor-v2 (budget 500)" in out and "xor-v2 (budget 100,000)" in out

"""A user's own maze file as a task (``--task maze:PATH``) and the generated family on the
command line: identity by content, one-line errors, facts in the records."""

from __future__ import annotations

import json

import pytest

from neuroyard.cli.main import main
from neuroyard.core.errors import TaskError
from neuroyard.records.store import ResultStore
from neuroyard.tasks import make
from neuroyard.tasks.maze import shipped_maze
from neuroyard.tasks.registry import parse_task


def cli(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def run_file_campaign(capsys, maze: str, store: str) -> int:
    code, _, err = cli(
        capsys, "run", "--task", f"maze:{maze}", "--evolver", "rwg", "--runs", "2",
        "--budget", "50", "--store", store, "--quiet",
    )  # fmt: skip
    assert code == 0, err
    return code


def test_maze_form_names_the_file_task():
    assert parse_task("maze:some/where.toml") == ("maze-file-v1", {"file": "some/where.toml"})
    assert parse_task("maze-hard-v3") == ("maze-hard-v3", {})
    with pytest.raises(TaskError, match="nothing after 'maze:'"):
        parse_task("maze:")


def test_a_user_maze_runs_and_its_runs_carry_the_content_hash(tmp_path, capsys):
    maze = tmp_path / "mine.toml"
    maze.write_text(shipped_maze("hard").read_text())
    store = str(tmp_path / "s.db")
    run_file_campaign(capsys, str(maze), store)
    with ResultStore(store, write=False) as s:
        records = list(s.records(with_log=False))
    assert len(records) == 2
    for r in records:
        assert r.task == "maze-file-v1"
        assert r.task_settings["file"] == str(maze) and len(r.task_settings["sha256"]) == 64
        # the same maze as the shipped hard one: the same deception figures
        assert r.task_facts == make("maze-hard-v3").spec.facts

    run_file_campaign(capsys, str(maze), store)  # unchanged file: nothing runs again
    with ResultStore(store, write=False) as s:
        assert len(list(s.records(with_log=False))) == 2

    maze.write_text(maze.read_text().replace("to = [160.0, 160.0]", "to = [150.0, 160.0]"))
    with pytest.raises(TaskError, match="content changed since the runs were planned"):
        make("maze-file-v1", **records[0].task_settings)
    run_file_campaign(capsys, str(maze), store)  # another maze: new runs, old ones kept
    with ResultStore(store, write=False) as s:
        assert len(list(s.records(with_log=False))) == 4


def test_a_broken_user_maze_is_one_line_and_exit_2(tmp_path, capsys):
    maze = tmp_path / "bad.toml"
    maze.write_text(shipped_maze("open").read_text().replace("width = 200.0", "width = -1.0"))
    store = tmp_path / "s.db"
    code, _, err = cli(capsys, "run", "--task", f"maze:{maze}", "--store", str(store))
    assert code == 2
    assert err.count("\n") == 1 and "entry 'bounds.width': must be above 0" in err
    assert not store.exists()  # nothing was written
    code, _, err = cli(capsys, "run", "--task", f"maze:{tmp_path / 'none.toml'}")
    assert code == 2 and "cannot read it" in err


def test_generated_maze_facts_in_the_listing_and_the_records(tmp_path, capsys):
    code, out, _ = cli(
        capsys, "tasks", "maze-gen-v3", "--setting", "seed=3", "--setting", "deception=0.08",
        "--format", "json",
    )  # fmt: skip
    assert code == 0
    (doc,) = json.loads(out)
    facts = doc["facts"]
    assert set(facts) == {"deception", "trap_share", "start_trap", "detour"}
    store = str(tmp_path / "g.db")
    code, _, err = cli(
        capsys, "run", "--task", "maze-gen-v3", "--setting", "seed=3", "--setting",
        "deception=0.08", "--evolver", "rwg", "--runs", "1", "--budget", "20", "--store",
        store, "--quiet",
    )  # fmt: skip
    assert code == 0, err
    with ResultStore(store, write=False) as s:
        (record,) = list(s.records(with_log=False))
    assert record.task_facts == facts


def test_the_listing_names_the_task_that_needs_a_file(capsys):
    code, out, _ = cli(capsys, "tasks")
    assert code == 0
    assert "maze-file-v1: needs file" in out and "--task maze:FILE" in out

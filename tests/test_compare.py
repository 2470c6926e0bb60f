"""``neuroyard compare``: it finds the differences that exist, pairs runs on their seeds,
picks the sides by name, and writes within 120 columns.

Outside references: XOR needs a hidden node (Minsky & Papert 1969, reference/SOURCES.md:
minsky1969), so NEAT that may not add nodes never solves it, while NEAT does; the tests
themselves are checked against worked examples in tests/test_significance.py.
"""

from __future__ import annotations

import dataclasses
import json

import pytest

from neuroyard.cli.main import main
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.supervisor import Supervisor
from neuroyard.records.store import ResultStore
from neuroyard.reports.compare import compare, configurations
from neuroyard.reports.comparison_renderers import comparison_text

RUNS, BUDGET = 12, 12_000


@pytest.fixture(scope="module")
def store(tmp_path_factory):
    """NEAT, NEAT without add-node and RWG on XOR, the same run seeds."""
    path = tmp_path_factory.mktemp("compare") / "runs.db"
    evolvers = [
        EvolverSpec("neat", {}),
        EvolverSpec("neat", {"add_node_prob": 0.0}),
        EvolverSpec("rwg", {}),
    ]
    plan = CampaignPlan(evolvers, [TaskChoice("xor-v2")], RUNS, 1, BUDGET)
    with ResultStore(path) as results:
        execute(plan, results, Supervisor(2), progress=False)
    return path


def cli(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def rows_of(capsys, store, a: str, b: str) -> dict[str, dict]:
    code, out, err = cli(capsys, "compare", "--store", str(store), "--a", a, "--b", b,
                         "--format", "json")  # fmt: skip
    assert code == 0, err
    (task,) = json.loads(out)["tasks"]
    return {row["metric"]: row for row in task["rows"]}


def _hash(store, name: str, given: dict) -> str:
    return EvolverSpec(name, given).config_hash[:6]


def test_neat_without_add_node_is_found_worse(store, capsys) -> None:
    weak = _hash(store, "neat", {"add_node_prob": 0.0})
    rows = rows_of(capsys, store, f"neat@{_hash(store, 'neat', {})}", f"neat@{weak}")
    success = rows["success rate"]
    assert success["b"].startswith("0/12") and success["a"].startswith("12/12")
    assert success["p_holm"] < 0.05 and success["verdict"].startswith("A solves more often")
    evaluations = rows["evaluations to solve"]
    assert evaluations["verdict"].startswith("A solves with fewer evaluations")
    assert rows["connections of solutions"]["verdict"].startswith("not tested: fewer than 2")


def test_neat_and_random_weight_guessing_differ(store, capsys) -> None:
    rows = rows_of(capsys, store, f"neat@{_hash(store, 'neat', {})}", "rwg")
    evaluations = rows["evaluations to solve"]
    # on XOR the fixed 2-hidden-node topology is guessed quickly: RWG needs fewer evaluations
    assert evaluations["p_holm"] < 0.05 and evaluations["verdict"].startswith("B solves with")
    assert evaluations["test"]["effect"] > 0.5 and evaluations["runs_needed"] >= 2


def test_the_same_runs_show_no_difference(store) -> None:
    with ResultStore(store, write=False) as results:
        groups = configurations(results.records(with_log=False))
    label = next(label for label in groups if label.startswith("rwg"))
    result = compare("A", groups[label], "B", groups[label])
    for row in result.tasks[0].rows:
        assert row.p_holm is None or row.p_holm > 0.05
        assert row.verdict.startswith(("no detectable difference", "not tested"))


def test_runs_are_paired_on_their_seeds(store) -> None:
    with ResultStore(store, write=False) as results:
        groups = configurations(results.records(with_log=False))
    rwg = next(g for label, g in groups.items() if label.startswith("rwg"))
    neat = next(g for label, g in groups.items() if label.startswith("neat"))
    result = compare("A", rwg[:8], "B", neat[4:])  # run indices 0-7 against 4-11
    (task,) = result.tasks
    assert task.runs == 4 and "8 runs without a counterpart" in task.notes[0]
    other_seed = [dataclasses.replace(r, campaign_seed=2) for r in neat]
    apart = compare("A", rwg, "B", other_seed).tasks[0]
    assert apart.runs == RUNS and "independent samples" in apart.notes[0]


def test_sides_are_chosen_by_name_with_clear_errors(store, capsys) -> None:
    code, _, err = cli(capsys, "compare", "--store", str(store), "--a", "neat", "--b", "rwg")
    assert code == 2 and "2 configurations match 'neat'" in err and "add @HASH" in err
    code, _, err = cli(capsys, "compare", "--store", str(store), "--a", "cmaes", "--b", "rwg")
    assert code == 2 and "no configuration matches 'cmaes'" in err
    code, _, err = cli(capsys, "compare", "--store", str(store))
    assert code == 2 and "--a and --b" in err
    code, _, err = cli(capsys, "compare", "--store", str(store), "--a", "rwg", "--b", "rwg",
                       "--alpha", "1.5")  # fmt: skip
    assert code == 2 and "--alpha" in err


def test_text_and_markdown_fit_120_columns(store, capsys) -> None:
    for fmt in ("text", "markdown"):
        code, out, _ = cli(capsys, "compare", "--store", str(store), "--a",
                           f"neat@{_hash(store, 'neat', {})}", "--b", "rwg", "--format", fmt)  # fmt: skip
        assert code == 0
        assert max(len(line) for line in out.splitlines()) <= 120
        assert "B solves with fewer evaluations" in out


def test_a_wide_table_and_a_long_heading_are_not_broken(store) -> None:
    # a maze file's settings (its path and SHA-256) make a long heading, and medians with
    # wide interquartile ranges a table wider than 120 columns: Markdown (the GitHub table
    # format) needs each row and each heading on one line
    with ResultStore(store, write=False) as results:
        groups = configurations(results.records(with_log=False))
    neat = groups[f"neat [{_hash(store, 'neat', {})}]"]
    task = compare("A", neat, "B", neat).tasks[0]
    wide = "151,250 [64,875-202,000] and then some more width"
    rows = tuple(dataclasses.replace(row, a=wide, b=wide) for row in task.rows)
    task = dataclasses.replace(
        task, rows=rows, task_settings={"file": "x" * 60, "sha256": "f" * 64}
    )
    comparison = dataclasses.replace(compare("A", neat, "B", neat), tasks=(task,))
    lines = comparison_text(comparison, "markdown").splitlines()
    table = [line for line in lines if line.startswith("|")]
    assert len(table) == 2 + len(rows) and all(line.endswith("|") for line in table)
    assert max(len(line) for line in table) > 120
    (heading,) = [line for line in lines if line.startswith("### ")]
    assert heading.endswith(f"): {task.runs} runs")
    prose = [line for line in lines if not line.startswith(("|", "### "))]
    assert max(len(line) for line in prose) <= 120

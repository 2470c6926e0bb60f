"""Report polish (issue 34): how reports, comparisons, checks, plots and exports name a
task; where long names break; footnotes printed once; what a test that was not run counts;
open intervals; no negative zero; the fitness plot's legend; replay of a store of several
tasks.

Outside references: the Gymnasium environment id as Gymnasium registers it
(``CartPole-v1``); Python's format mini-language, whose ``z`` option (PEP 682) defines a
negative zero, and whose default writes ``-0``; matplotlib's own renderer for the window
extents of the legend and the axes; Python's csv module for the export.
"""

from __future__ import annotations

import argparse
import csv
import dataclasses
import io
import json
import math
import re
import shutil
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from neuroyard.cli import replay as replay_command
from neuroyard.cli.main import main
from neuroyard.core.errors import NeuroyardError
from neuroyard.core.numbers import number, value_text
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore
from neuroyard.reports import plots, renderers, report, tables
from neuroyard.reports.baseline import Baseline
from neuroyard.reports.compare import compare
from neuroyard.reports.document import OPEN_ERT_INTERVAL, interval
from neuroyard.reports.gate import GroupRuns, RunFigures
from neuroyard.reports.gate import compare as gate_compare
from neuroyard.reports.labels import short_hash
from neuroyard.reports.significance import mann_whitney
from neuroyard.reports.wrapping import SEPARATORS, wrap

RESULTS = Path(__file__).resolve().parents[1] / "results"
CARTPOLE = "gym:CartPole-v1"  # the committed Gymnasium study: cmaes and neat on CartPole-v1
# an evolver name longer than any table cell may be (an entry-point style module:attr)
LONG = "plugins_for_tests.an_evolver_module_with_a_long_name:AnEvolverWhoseClassNameIsLong"


@pytest.fixture(scope="module")
def gym_records(tmp_path_factory) -> list[RunRecord]:
    """The committed CartPole study's runs with their logs (read from a copy)."""
    copy = tmp_path_factory.mktemp("gym") / "cartpole.sqlite"
    shutil.copyfile(RESULTS / "gym" / "cartpole.sqlite", copy)
    with ResultStore(copy, write=False) as store:
        return list(store.records(with_log=True))


def _flat(text: str) -> str:
    """Text as a reader sees it: HTML's <wbr> marks dropped, lines joined."""
    return " ".join(text.replace("<wbr>", "").split())


def xor_record(i: int, solved: bool, evaluations: int, **fields) -> RunRecord:
    """A synthetic run record on XOR for exercising the report (not a measurement)."""
    base = dict(
        evolver="neat",
        config={},
        config_hash="c0ffee000000",
        task="xor-v2",
        task_settings={"recurrent_steps": 5},
        run_index=i,
        campaign_seed=1,
        seed=i,
        task_seed=i,
        budget=10_000,
        status="solved" if solved else "unsolved",
        generations=max(evaluations // 150, 1),
        evaluations=evaluations,
        hidden_nodes=2 if solved else None,
        connections=7 if solved else None,
        evolver_settings={"population_size": 150},
    )
    return RunRecord(**{**base, **fields})


# 1. a Gymnasium task is named by its environment id


def test_a_gymnasium_task_is_named_by_its_environment_id_in_every_report_format(gym_records):
    rows = report.build(gym_records)
    assert {r.task for r in rows} == {"gym-env-v1"} and len(rows) == 2
    for fmt in ("text", "markdown", "html"):
        out = _flat(renderers.render(rows, fmt))
        assert "gym-env-v1" not in out, fmt
        assert CARTPOLE in out, fmt
        assert f"task {CARTPOLE}" in out, fmt  # the heading of its settings
        assert not re.search(rf"{CARTPOLE} \[", out), fmt  # one set of settings: no hash
    page = renderers.render(rows, "html")
    # each plot is drawn under the task's label (its alternative text names it as its title)
    alts = re.findall(r'alt="[^"]*, ([^",]+)"', page)
    assert alts and set(alts) == {CARTPOLE}
    assert f"Task {CARTPOLE}" in _flat(page)
    for row in json.loads(renderers.render(rows, "json")):
        assert row["task"] == "gym-env-v1" and row["task_label"] == CARTPOLE
        assert row["evolver_label"] == row["evolver"]


def test_the_csv_export_keeps_the_task_id_and_adds_the_label(gym_records, tmp_path):
    store = tmp_path / "cartpole.sqlite"
    shutil.copyfile(RESULTS / "gym" / "cartpole.sqlite", store)
    for table in tables.TABLES:
        out = tmp_path / f"{table}.csv"
        argv = ["export", "--store", str(store), "--format", "csv", "--table", table]
        assert main([*argv, "-o", str(out)]) == 0
        header = next(csv.reader(io.StringIO(out.read_text())))
        assert header[header.index("task") + 1] == "task_label"
        rows = list(csv.DictReader(io.StringIO(out.read_text())))
        assert rows and {(r["task"], r["task_label"]) for r in rows} == {("gym-env-v1", CARTPOLE)}


def test_a_comparison_and_a_check_name_the_environment(gym_records):
    cmaes = [r for r in gym_records if r.evolver == "cmaes"]
    neat = [r for r in gym_records if r.evolver == "neat"]
    result = compare("cmaes", cmaes, "neat", neat)
    (task,) = result.tasks
    assert (task.task, task.label) == ("gym-env-v1", CARTPOLE)
    assert result.to_json()["tasks"][0]["label"] == CARTPOLE
    for fmt in ("text", "markdown", "html"):
        out = _flat(renderers.render(result, fmt, "comparison"))
        assert f"{CARTPOLE} (" in out and "gym-env-v1" not in out, fmt
    labels = [g.label for g in Baseline.of(gym_records).groups]
    assert all(f" on {CARTPOLE} (budget " in label for label in labels), labels


def test_the_settings_hash_follows_the_environment_only_where_two_settings_meet(gym_records):
    fewer = {**gym_records[0].task_settings, "episodes": 3}
    mixed = [
        dataclasses.replace(r, task_settings=fewer) if r.evolver == "neat" else r
        for r in gym_records
    ]
    rows = report.build(mixed)
    expected = {f"{CARTPOLE} [{short_hash(r.task_settings)}]" for r in rows}
    assert len(expected) == 2
    text = _flat(renderers.render(rows, "text"))
    for label in expected:
        assert f"task {label}:" in text  # its settings, under the label the tables show
    csv_labels = {row["task_label"] for row in tables.runs_rows(mixed)}
    assert csv_labels == expected


# 2. long names break at separators, never inside a word


def test_wrap_breaks_at_spaces_then_after_separators():
    assert wrap("plugins_for_tests:Constant on xor-v2", 12) == [
        "plugins_for_",
        "tests:",
        "Constant on",
        "xor-v2",
    ]
    # a stretch without a separator longer than the line stays whole
    assert wrap("a AVeryLongClassName", 8) == ["a", "AVeryLongClassName"]
    assert wrap("", 10, indent="  ") == [""]


def _evolver_cells(text: str, name: str) -> list[list[str]]:
    """The lines of every first-column cell of the text tables that holds part of
    ``name``: a row starts on a line whose last column is filled (tabulate puts a wrapped
    cell's first line beside the row's single-line numbers)."""
    lines = text.splitlines()
    cells = []
    for k, rule in enumerate(lines):
        if not re.fullmatch(r"-+( {2}-+)*", rule):
            continue
        spans = [m.span() for m in re.finditer(r"-+", rule)]
        first, last = spans[0], spans[-1]
        j = k + 1
        while j < len(lines) and lines[j].strip():
            row = lines[j]
            part = row[first[0] : first[1]].strip()
            if row[last[0] :].strip():
                cells.append([part])
            elif part:
                cells[-1].append(part)
            j += 1
    return [c for c in cells if c[0] and name.startswith(c[0])]


def test_long_evolver_names_break_only_at_separators_in_the_text_report():
    records = [xor_record(i, True, 3000 + 150 * i, evolver=LONG) for i in range(3)]
    text = renderers.render(report.build(records), "text")
    assert max(len(line) for line in text.splitlines()) <= renderers.WIDTH
    cells = _evolver_cells(text, LONG)
    assert len(cells) >= 2 and any(len(c) > 1 for c in cells)  # it was wrapped
    for cell in cells:
        assert "".join(cell) == LONG
        assert all(line[-1] in SEPARATORS for line in cell[:-1]), cell


# 3. footnotes and notes once per report


def test_a_footnote_cited_by_several_tables_is_printed_once(gym_records):
    rows = report.build(gym_records)
    source = "registration of CartPole-v1 in gymnasium/envs/"  # (Markdown escapes the _)
    for fmt in ("text", "markdown", "html"):
        out = _flat(renderers.render(rows, fmt))
        assert out.count(source) == 1, fmt  # both evolvers' tables cite it
        marker = re.search(r"\[(\d+)\] gymnasium 1\.4\.0, " + re.escape(source), out)
        assert marker, fmt
        assert f"see above for [{marker.group(1)}]" in out, fmt
        assert out.count("Notes") == 1, fmt


# 4. what a test that was not run counts


def test_a_test_over_solved_runs_says_solved_runs_when_too_few():
    # A solved 1 of 3 runs, B all 3: sizes of solutions exist for 1 and 3 solved runs
    a = [xor_record(i, i == 0, 3000 if i == 0 else 10_000) for i in range(3)]
    b = [xor_record(i, True, 3000, evolver="rwg") for i in range(3)]
    rows = {row.metric: row for row in compare("A", a, "B", b).tasks[0].rows}
    verdict = rows["connections of solutions"].verdict
    assert verdict == "not tested: fewer than 2 solved runs in a group (n = 1 and 3)"
    # evaluations to solve count every run (unsolved ones censored): runs, not solved runs
    assert mann_whitney([1.0], [2.0, 3.0]).reason == "fewer than 2 runs in a group (n = 1 and 2)"
    # the gate's sizes are of solved runs too
    figures = [RunFigures.of(r) for r in a]
    solved = [RunFigures.of(r) for r in b]
    findings = gate_compare([GroupRuns("g", 10_000, figures, solved)])
    (connections,) = [f for f in findings if f.metric == "connections"]
    assert connections.test.reason == "fewer than 2 solved runs in a group (n = 1 and 3)"
    # Welch's test against a published mean is over solved runs on both sides
    (row,) = report.build(a)
    mean = next(c for c in row.comparisons if c.metric == "mean_evaluations")
    assert mean.p_value is None and mean.test == "not run: fewer than 2 solved runs (n = 1 and 100)"


# 5. an interval open above


def test_an_open_interval_is_printed_as_at_least_its_lower_end():
    assert interval((200.0, math.inf), "ert") == "≥ 200"
    assert interval((5074.0, 6066.0), "ert") == "5,074-6,066"
    assert interval((math.inf, math.inf), "ert") == "unbounded"
    # one of ten runs solved: most resamples of ten runs hold no solved run
    records = [xor_record(i, i == 0, 2000 if i == 0 else 10_000) for i in range(10)]
    rows = report.build(records)
    low, high = rows[0].summary.ert_ci
    assert math.isinf(high) and math.isfinite(low)
    for fmt in ("text", "markdown", "html"):
        out = _flat(renderers.render(rows, fmt))
        assert "-—" not in out and "- —" not in out, fmt
        cited = re.search(r"≥ [\d,]+ \[(\d+)\]", out)
        assert cited, fmt
        assert f"[{cited.group(1)}] {OPEN_ERT_INTERVAL}" in out, fmt


# 6. no negative zero


def test_no_number_is_printed_as_a_negative_zero():
    assert format(-0.0, ".6g") == "-0"  # Python's default: the problem
    assert number(-0.0, ".6g") == "0" and number(-0.004, ",.2f") == "0.00"
    assert number(-0.001, ".0%") == "0%" and number(-1.5, "+.1f") == "-1.5"
    assert value_text(np.float32(-0.0)) == "0" and value_text(-0.0) == "0"
    records = [xor_record(0, True, 3000, task_settings={"recurrent_steps": 5, "offset": -0.0})]
    text = renderers.render(report.build(records), "text")
    assert "offset = 0\n" in text and "offset = -0" not in text


def test_gymnasium_bounds_of_negative_zero_print_as_zero():
    from gymnasium import spaces

    from neuroyard.tasks.gym_task import interface

    observations = spaces.Box(np.float32([-0.0, -1.0]), np.float32([1.0, 1.0]))
    env = SimpleNamespace(observation_space=observations, action_space=spaces.Discrete(2))
    face = interface.interface("a-test-env", env)
    described = interface.describe_observations(face, observations)
    assert "scaled from [0, 1] onto [-1, 1]" in described[0]
    assert not any("-0," in text for text in described)


# 7. the fitness plot's legend stands outside the axes


@pytest.mark.parametrize("draw", [plots.fitness_figure, plots.ecdf_figure])
def test_the_legend_stands_outside_the_axes(gym_records, draw):
    groups = {label: [r for r in gym_records if r.evolver == label] for label in ("cmaes", "neat")}
    fig = draw(groups, CARTPOLE)
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    (legend,) = fig.legends
    assert [t.get_text().split()[0] for t in legend.get_texts()] == ["cmaes", "neat"]
    box = legend.get_window_extent(renderer)
    (ax,) = fig.axes
    data_area = ax.get_window_extent(renderer)  # the axes' patch: where curves are drawn
    assert not box.overlaps(data_area)
    page = fig.bbox
    assert page.x0 <= box.x0 and box.x1 <= page.x1 and page.y0 <= box.y0 and box.y1 <= page.y1


# 8. replay of a store of several tasks


def _replay_args(store: Path, out: Path, task: str | None) -> argparse.Namespace:
    """What the parser gives ``replay --store STORE --out OUT`` (``--task`` given or not)."""
    return argparse.Namespace(
        store=store, network=None, task=task, run=0, evolver=None, steps=50, out=out
    )


def test_replay_without_a_task_refuses_a_store_of_several_tasks(tmp_path, capsys):
    store = tmp_path / "two.db"
    argv = ["run", "--evolver", "rwg", "--task", "pole1-markov-v1", "--task", "xor-v2"]
    assert main([*argv, "--runs", "1", "--budget", "100", "--store", str(store), "--quiet"]) == 0
    out = tmp_path / "x.png"
    with pytest.raises(NeuroyardError) as refused:
        replay_command.command(_replay_args(store, out, None))
    message = str(refused.value)
    assert "\n" not in message and "2 tasks (pole1-markov-v1, xor-v2)" in message
    assert "--task" in message and not out.exists()
    # the command line as a user types it: the parser leaves --task unset, one line, exit 2
    capsys.readouterr()
    assert main(["replay", "--store", str(store), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "2 tasks (pole1-markov-v1, xor-v2)" in err
    assert not out.exists()
    # naming the task replays it
    replay_command.command(_replay_args(store, out, "pole1-markov-v1"))
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_replay_without_a_task_uses_the_one_task_of_the_store(tmp_path, capsys):
    store = tmp_path / "one.db"
    argv = ["run", "--evolver", "rwg", "--task", "pole1-markov-v1", "--runs", "1"]
    assert main([*argv, "--budget", "100", "--store", str(store), "--quiet"]) == 0
    out = tmp_path / "one.png"
    replay_command.command(_replay_args(store, out, None))
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert capsys.readouterr().out.strip()  # the task's one-line summary

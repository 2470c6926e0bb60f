"""Layout of the text and Markdown reports on realistic records: the committed study stores
(copied) together with a small campaign that has two configurations of one evolver, a
group that solved nothing and a group whose runs broke.

Checked: every line of the text report fits 120 columns; no ``inf`` anywhere; every
footnote a table cites is printed once, below the first table that cites it (a later one
says "see above"), and the notes explain the configuration hash
and what "failed" means; every figure is formatted the same way wherever it appears, with
thousands separators (Python's format mini-language, PEP 378, as the reference)."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

from neuroyard.cli.main import main
from neuroyard.records.store import ResultStore
from neuroyard.reference.published import figures_for
from neuroyard.reports import renderers, report
from neuroyard.reports.document import NO_SOLVED_ERT

HERE = Path(__file__).parent
RESULTS = HERE.parent / "results"
STUDIES = ("neat_xor/xor.db", "pole/dpv.sqlite", "pole/dpnv.sqlite")
NEVER_SOLVES = "plugins_for_tests:Constant"  # a constant network: never solves XOR
BREAKS = "plugins_for_tests:RaisesIn"  # raises in ask() of its first generation


@pytest.fixture(scope="module")
def rows(tmp_path_factory):
    """Report rows of the study stores and of a small campaign, run in this process."""
    folder = tmp_path_factory.mktemp("layout")
    records = []
    for study in STUDIES:
        copy = folder / Path(study).name
        shutil.copyfile(RESULTS / study, copy)
        with ResultStore(copy, write=False) as store:
            records += store.records(with_log=False)
    campaign = folder / "campaign.db"
    with pytest.MonkeyPatch.context() as mp:
        mp.syspath_prepend(str(HERE))
        common = ["--task", "xor-v2", "--runs", "3", "--in-process"]  # the default budget
        for argv in (
            ["--evolver", "hill-climber"],
            ["--evolver", "hill-climber", "--param", "sigma=0.5", "--param", "offspring=30"],
            ["--evolver", NEVER_SOLVES, "--evolver", BREAKS],
        ):
            code = main(["run", *argv, *common, "--store", str(campaign), "--quiet"])
            assert code == 0
    with ResultStore(campaign, write=False) as store:
        records += store.records(with_log=False)
    return report.build(records)


@pytest.fixture(scope="module")
def text(rows) -> str:
    return renderers.render(rows, "text")


def text_tables(text: str) -> list[tuple[str, list[str], list[list[str]], list[str]]]:
    """(caption, header, rows, footnote lines) of every table of a text report, cut at
    the columns that its rule of dashes marks (tabulate's "simple" format)."""
    lines = text.splitlines()
    tables = []
    for k, line in enumerate(lines):
        if not re.fullmatch(r"-+( {2}-+)*", line):
            continue
        spans = [m.span() for m in re.finditer(r"-+", line)]

        def cut(row: str, spans=spans) -> list[str]:
            return [
                row[a : (b if i < len(spans) - 1 else None)].strip()
                for i, (a, b) in enumerate(spans)
            ]

        body, j = [], k + 1
        while j < len(lines) and lines[j].strip():
            body.append(cut(lines[j]))
            j += 1
        notes = []
        j += 1
        while j < len(lines) and lines[j].startswith(("  [", "  see above for [")):
            notes.append(lines[j].strip())
            j += 1
        caption = lines[k - 3] if k >= 3 and not lines[k - 2].strip() else ""
        tables.append((caption, cut(lines[k - 1]), body, notes))
    return tables


def test_every_line_fits_120_columns(text):
    wide = [line for line in text.splitlines() if len(line) > 120]
    assert not wide, wide
    assert len(text_tables(text)) >= 6  # outcome, solved, metrics, failed and published


def test_no_infinite_number_is_printed(rows, text):
    (nothing,) = [r for r in rows if r.evolver == NEVER_SOLVES]
    assert nothing.summary.solved == 0 and nothing.summary.ert == float("inf")
    for fmt in ("text", "markdown"):
        out = renderers.render(rows, fmt)
        assert not re.search(r"(?<![A-Za-z])inf(?![A-Za-z])", out, re.IGNORECASE), fmt


def test_footnotes_are_printed_once_below_the_first_table_that_cites_them(rows, text):
    printed: set[str] = set()
    for caption, _, body, notes in text_tables(text):
        cited = {m for row in body for cell in row for m in re.findall(r"\[\d+\]", cell)}
        defined = {note.split()[0] for note in notes if not note.startswith("see above")}
        above = {
            m
            for note in notes
            if note.startswith("see above")
            for m in re.findall(r"\[\d+\]", note)
        }
        assert not defined & printed, caption  # each footnote's text once per report
        assert above <= printed, caption  # "see above" names footnotes printed above
        assert cited == defined | above, caption
        printed |= defined
    # the ERT of the group that solved nothing is a dash that cites why
    outcome = text_tables(text)[0]
    (line,) = [row for row in outcome[2] if row[0] == NEVER_SOLVES]
    marker = re.fullmatch(r"— (\[\d+\])", line[outcome[1].index("ERT")])
    assert marker
    (note,) = [n for n in outcome[3] if n.startswith(marker.group(1))]
    assert " ".join(note.split()[1:]) == NO_SOLVED_ERT
    # every source of a published figure shown is a footnote
    flat = " ".join(text.split())
    shown = [fig for r in rows for fig in figures_for(r.task) if fig.compare_with == r.evolver]
    assert len(shown) >= 5
    for fig in shown:
        assert fig.source in flat, fig.source
    # the notes say what the hash is and what failed means
    assert "hash of the evolver's effective configuration" in flat
    assert "failed means that the run broke" in flat and "It does not mean unsolved" in flat


def test_two_configurations_of_one_evolver_carry_their_hash(rows, text):
    climbers = [r for r in rows if r.evolver == "hill-climber"]
    assert len({r.config_hash for r in climbers}) == 2
    outcome = text_tables(text)[0]
    names = {row[0] for row in outcome[2]}
    assert {f"hill-climber [{r.config_hash[:6]}]" for r in climbers} <= names
    assert NEVER_SOLVES in names  # one configuration of that name: no hash


def test_failed_runs_are_listed_with_their_reasons(text):
    failed = next(t for t in text_tables(text) if t[0] == f"{BREAKS} on xor-v2")
    assert [row[0] for row in failed[2]] == ["0", "1", "2"]
    assert all(
        "ask() in generation 0 raised RuntimeError: boom in ask" in row[2] for row in failed[2]
    )


def _cells(text: str) -> dict[tuple[str, str], dict[str, str]]:
    """Every figure of every table by (evolver, task) and figure name, as printed."""
    figures: dict[tuple[str, str], dict[str, list[str]]] = {}
    columns = {
        "runs": "runs",
        "mean evals": "mean_evaluations",
        "median evals": "median_evaluations",
        "mean gens": "mean_generations",
        "hidden nodes": "mean_hidden_nodes",
        "connections": "mean_connections",
    }
    for caption, head, body, _ in text_tables(text):
        if head[:2] == ["evolver", "task"]:
            for row in body:
                key = (row[0], row[1])
                if "metric" in head:  # the task metrics table
                    name = "mean_" + row[2].split()[0]
                    figures.setdefault(key, {}).setdefault(name, []).append(row[3])
                for column, name in columns.items():
                    if column in head:
                        figures.setdefault(key, {}).setdefault(name, []).append(
                            row[head.index(column)]
                        )
        elif "published" in head:  # one group's published figures: "evolver on task"
            evolver, _, task = caption.rpartition(" on ")
            for row in body:
                if row[1]:  # not the continuation line of a wrapped method name
                    figures.setdefault((evolver, task), {}).setdefault(row[1], []).append(row[2])
    return figures


def test_the_same_figure_is_formatted_the_same_in_every_table(rows, text):
    figures = _cells(text)
    (xor_row,) = [r for r in rows if r.evolver == "neat" and r.task == "xor-v2"]
    (dpnv_row,) = [r for r in rows if r.evolver == "neat" and r.task == "pole2-nonmarkov-v1"]
    neat_xor = figures[(f"neat [{xor_row.config_hash[:6]}]", "xor-v2")]
    xor = xor_row.summary
    # PEP 378 (format(value, ",.Nf")) as the reference: whole evaluations with separators,
    # generations to one decimal, sizes to two
    assert neat_xor["mean_evaluations"] == [format(xor.mean_evaluations, ",.0f")] * 2
    assert neat_xor["mean_generations"] == [format(xor.mean_generations, ",.1f")] * 2
    assert neat_xor["mean_hidden_nodes"] == [format(xor.mean_hidden_nodes, ",.2f")] * 2
    dpnv = figures[(f"neat [{dpnv_row.config_hash[:6]}]", "pole2-nonmarkov-v1")]
    # the task metrics table and the published figures
    assert (
        dpnv["mean_generalization"]
        == [format(dpnv_row.summary.metrics["generalization"], ",.1f")] * 2
    )
    compared = 0
    for key, names in figures.items():
        for name, cells in names.items():
            assert len(set(cells)) == 1, (key, name, cells)
            compared += len(cells) > 1
    assert compared >= 8


def test_numbers_have_thousands_separators(text):
    for caption, head, body, _ in text_tables(text):
        for row in body:
            for column, cell in zip(head, row, strict=True):
                if column in ("evolver", "task", "reason", "metric", "method"):
                    continue  # names and words, not figures
                assert not re.search(r"(?<![\d.,])\d{4,}", cell), (caption, column, cell)
    # the committed studies' large figures come out with separators in every table
    assert "327,500" in text and "33,184" in text and "1,000" in text

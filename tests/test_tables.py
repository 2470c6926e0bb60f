"""Results as tables: ``neuroyard export --format csv`` (runs and generations) and the API's
``runs_table()`` / ``generations_table()`` have the documented columns, the same rows, and
load with Python's csv module and with pandas; without pandas the tables are lists of dicts.

Outside references: Python's ``csv`` module and ``pandas.read_csv`` read what we write;
the values are the stored records' (the store's own reading is tested elsewhere)."""

from __future__ import annotations

import csv
import io
import math
import subprocess
import sys
from pathlib import Path

import pandas
import pytest

import neuroyard
from neuroyard.cli.main import main
from neuroyard.reports import tables

NEUROYARD = Path(sys.executable).with_name("neuroyard")


@pytest.fixture(scope="module")
def store(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("tables") / "runs.db"
    code = main(
        ["run", "--evolver", "neat", "--evolver", "rwg", "--task", "xor-v2", "--task",
         "pole2-nonmarkov-v1", "--task", "maze-open-v1", "--runs", "2", "--budget", "600", "--store", str(path),
         "--quiet", "--param", "population_size=30"]
    )  # fmt: skip
    assert code == 0
    return path


def _export(store: Path, *args: str) -> str:
    out = subprocess.run(
        [str(NEUROYARD), "export", "--store", str(store), "--format", "csv", *args],
        capture_output=True, text=True, check=True,
    )  # fmt: skip
    return out.stdout


def test_the_runs_csv_has_the_documented_columns_and_the_records_values(store) -> None:
    text = _export(store)
    rows = list(csv.DictReader(io.StringIO(text)))
    records = neuroyard.open_store(store).records()
    assert len(rows) == len(records) == 12
    header = next(csv.reader(io.StringIO(text)))
    assert header[: len(tables.RUN_COLUMNS)] == list(tables.RUN_COLUMNS)
    extra = header[len(tables.RUN_COLUMNS) :]
    assert all(name.startswith(tables.RUN_PREFIXES) for name in extra)
    expected = {"setting.start_angle", "config.population_size", "metric.final_distance"}
    assert expected | {"fact.deception", "version.numba"} <= set(extra)
    for row, record in zip(rows, records, strict=True):
        assert row["evolver"] == record.evolver and row["task"] == record.task
        assert int(row["evaluations"]) == record.evaluations
        assert row["status"] == record.status
        assert row["solved"] == str(record.solved)
        assert float(row["best_fitness"]) == pytest.approx(record.best_fitness, rel=1e-15)


def test_pandas_reads_both_tables_with_the_apis_columns(store, tmp_path) -> None:
    results = neuroyard.open_store(store)
    for table, api in (
        ("runs", results.runs_table()),
        ("generations", results.generations_table()),
    ):
        out = tmp_path / f"{table}.csv"
        assert main(["export", "--store", str(store), "--format", "csv", "--table", table,
                     "-o", str(out)]) == 0  # fmt: skip
        read = pandas.read_csv(out)
        assert list(read.columns) == list(api.columns)
        assert len(read) == len(api)
        assert (read["evaluations"].to_numpy() == api["evaluations"].to_numpy()).all()
    generations = results.generations_table()
    assert len(generations) == sum(r.generations for r in results.records())
    neat = generations[generations["evolver"] == "neat"]
    assert "stat.species" in generations.columns and neat["stat.species"].notna().all()
    assert generations["test.rank"].min() == 0  # the fittest network is tested first


def test_without_pandas_the_tables_are_lists_of_dicts(store, monkeypatch) -> None:
    monkeypatch.setitem(sys.modules, "pandas", None)  # import pandas now fails
    rows = neuroyard.open_store(store).runs_table()
    assert isinstance(rows, list) and len(rows) == 12
    names = tables.columns(rows, "runs")
    assert all(list(row) == names for row in rows)
    missing = [r["fact.deception"] for r in rows if r["task"] != "maze-open-v1"]
    assert missing == [None] * 8


def test_a_cell_that_is_not_a_plain_value_is_json() -> None:
    assert tables._cell([1, 2]) == "[1, 2]" and tables._cell({"b": 1}) == '{"b": 1}'
    assert tables._cell(math.inf) == math.inf and tables._cell(None) is None


def test_export_refuses_a_table_with_json_lines_and_an_output_that_is_the_store(
    store, capsys
) -> None:
    code = main(["export", "--store", str(store), "--format", "jsonl", "--table", "generations"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "--table" in err
    before = store.read_bytes()
    code = main(["export", "--store", str(store), "--format", "csv", "-o", str(store)])
    assert code == 2 and store.read_bytes() == before

"""Run records as flat tables: one row per run, or one row per generation.

The same rows feed ``Results.runs_table()`` / ``generations_table()`` of the Python API
(pandas DataFrames when pandas is installed) and ``neuroyard export --format csv``. Every
value is a number, a bool, a string or None (empty in CSV); a value that is itself a list
or a table (a setting such as a list of numbers) is written as JSON text.

**Runs table** (:data:`RUN_COLUMNS`, then the columns of each kind of name, each kind
sorted by name):

==========================  ==============================================================
column                      meaning
==========================  ==============================================================
run_key                     the run's identity in the store (24 hex digits)
evolver, config_hash        the evolver's name and the hash of its effective configuration
task                        task id (the key the store keeps)
task_label                  the task as reports name it (``gym:CartPole-v1``; with a hash
                            of its settings where the table holds it under several:
                            :mod:`.labels`)
run_index                   run index within the campaign (0-based)
campaign_seed               the campaign's seed
seed, task_seed             the evolver's and the task's seeds, derived by the harness
budget                      evaluations the run could spend
status, solved              ``solved``, ``unsolved`` (budget spent) or ``failed``; True when
                            solved
failure                     the reason of a failed run (empty otherwise)
generations, evaluations    counted by the harness; success tests are not evaluations
success_evaluations         episodes the success tests ran
best_fitness                fitness of the run's best network (the solution when solved)
hidden_nodes, connections   size of that network (hidden nodes, enabled connections)
wall_s, evolver_s,          seconds: the run's wall time, inside the evolver's calls, the
harness_s, kernel_load_s    harness's own part, loading the task's kernels
relative_speed              evaluations per calibration unit (the regression gate's speed)
host                        the machine that made the run
version.NAME                versions of python, numpy, numba, neuroyard and the git commit
setting.NAME                every task setting (defaults included)
config.NAME                 every evolver option given (the rest are the evolver's defaults)
metric.NAME                 the task's declared metrics, from the run's success test
fact.NAME                   figures of the task instance (a maze's deception score)
==========================  ==============================================================

**Generations table** (:data:`GENERATION_COLUMNS`, then ``test.NAME`` and ``stat.NAME``):

==========================  ==============================================================
run_key, evolver,           the run the generation belongs to (as in the runs table)
config_hash, task,
task_label, run_index
generation                  0-based
evaluations                 evaluations so far in the run, this generation's included
best_fitness, mean_fitness  of this generation's networks
best_hidden,                size of this generation's fittest network
best_connections
non_finite_fitness          evaluations whose fitness was not finite (counted as the worst)
test.NAME                   this generation's success test: ``test.rank`` (0: the fittest
                            network was tested) and the task's details (empty: no test)
stat.NAME                   the evolver's own statistics after this generation's tell()
==========================  ==============================================================
"""

from __future__ import annotations

import csv
import json
from collections.abc import Iterable, Mapping, Sequence
from typing import IO, Any

from neuroyard.records.runs import SOLVED, RunRecord, record_key
from neuroyard.reports.gate import relative_speed
from neuroyard.reports.labels import task_labels
from neuroyard.tasks import declared_metrics

RUN_COLUMNS: tuple[str, ...] = (
    "run_key",
    "evolver",
    "config_hash",
    "task",
    "task_label",
    "run_index",
    "campaign_seed",
    "seed",
    "task_seed",
    "budget",
    "status",
    "solved",
    "failure",
    "generations",
    "evaluations",
    "success_evaluations",
    "best_fitness",
    "hidden_nodes",
    "connections",
    "wall_s",
    "evolver_s",
    "harness_s",
    "kernel_load_s",
    "relative_speed",
    "host",
)
RUN_PREFIXES: tuple[str, ...] = ("version.", "setting.", "config.", "metric.", "fact.")
GENERATION_COLUMNS: tuple[str, ...] = (
    "run_key",
    "evolver",
    "config_hash",
    "task",
    "task_label",
    "run_index",
    "generation",
    "evaluations",
    "best_fitness",
    "mean_fitness",
    "best_hidden",
    "best_connections",
    "non_finite_fitness",
)
GENERATION_PREFIXES: tuple[str, ...] = ("test.", "stat.")
TABLES = ("runs", "generations")


def _cell(value: Any) -> Any:
    """A table cell: a number, bool, string or None as it is, anything else as JSON."""
    if value is None or isinstance(value, bool | int | float | str):
        return value
    return json.dumps(value, sort_keys=True)


def _prefixed(prefix: str, values: Mapping[str, Any]) -> dict[str, Any]:
    return {prefix + str(k): _cell(v) for k, v in values.items()}


def _task_labels(records: Sequence[RunRecord]) -> list[str]:
    return task_labels([(r.task, r.task_settings) for r in records])


def run_row(record: RunRecord, task_label: str) -> dict[str, Any]:
    """One run as a row of the runs table (see the module docstring), its task labelled
    ``task_label``."""
    timing = record.timing
    metrics = declared_metrics(record.task, record.task_settings)
    details = record.success_details
    row = {
        "run_key": record_key(record),
        "evolver": record.evolver,
        "config_hash": record.config_hash,
        "task": record.task,
        "task_label": task_label,
        "run_index": record.run_index,
        "campaign_seed": record.campaign_seed,
        "seed": record.seed,
        "task_seed": record.task_seed,
        "budget": record.budget,
        "status": record.status,
        "solved": record.status == SOLVED,
        "failure": record.failure,
        "generations": record.generations,
        "evaluations": record.evaluations,
        "success_evaluations": record.success_evaluations,
        "best_fitness": record.best_fitness,
        "hidden_nodes": record.hidden_nodes,
        "connections": record.connections,
        "wall_s": timing.get("wall"),
        "evolver_s": timing.get("evolver"),
        "harness_s": timing.get("harness"),
        "kernel_load_s": timing.get("kernel_load"),
        "relative_speed": relative_speed(record),
        "host": record.host,
    }
    row.update(_prefixed("version.", record.versions))
    row.update(_prefixed("setting.", record.task_settings))
    row.update(_prefixed("config.", record.config))
    row.update(
        _prefixed("metric.", {m.name: details[m.name] for m in metrics if m.name in details})
    )
    row.update(_prefixed("fact.", record.task_facts))
    return row


def generation_rows(record: RunRecord, task_label: str) -> list[dict[str, Any]]:
    """The generations of one run (read with its log) as rows of the generations table,
    its task labelled ``task_label``."""
    run = {
        "run_key": record_key(record),
        "evolver": record.evolver,
        "config_hash": record.config_hash,
        "task": record.task,
        "task_label": task_label,
        "run_index": record.run_index,
    }
    rows = []
    for g in record.log:
        row = {
            **run,
            "generation": g.generation,
            "evaluations": g.evaluations,
            "best_fitness": g.best_fitness,
            "mean_fitness": g.mean_fitness,
            "best_hidden": g.best_hidden,
            "best_connections": g.best_connections,
            "non_finite_fitness": g.non_finite_fitness,
        }
        row.update(_prefixed("test.", g.champion_test))
        row.update(_prefixed("stat.", g.stats))
        rows.append(row)
    return rows


def runs_rows(records: Iterable[RunRecord]) -> list[dict[str, Any]]:
    """Every record as a row of the runs table (tasks labelled among all of them)."""
    records = list(records)
    return [run_row(r, label) for r, label in zip(records, _task_labels(records), strict=True)]


def generations_rows(records: Iterable[RunRecord]) -> list[dict[str, Any]]:
    """Every generation of every record (read with their logs) as rows (tasks labelled
    among all of them)."""
    records = list(records)
    labels = _task_labels(records)
    return [
        row for r, label in zip(records, labels, strict=True) for row in generation_rows(r, label)
    ]


def columns(rows: Sequence[Mapping[str, Any]], table: str) -> list[str]:
    """The columns of ``table`` (``runs`` or ``generations``) for ``rows``: the fixed ones,
    then those of each prefix that some row has, sorted by name within the prefix."""
    fixed, prefixes = (
        (RUN_COLUMNS, RUN_PREFIXES)
        if table == "runs"
        else (GENERATION_COLUMNS, GENERATION_PREFIXES)
    )
    found = {name for row in rows for name in row}
    extra = [sorted(n for n in found if n.startswith(prefix)) for prefix in prefixes]
    return [*fixed, *(name for group in extra for name in group)]


def write_csv(rows: Sequence[Mapping[str, Any]], table: str, out: IO[str]) -> None:
    """Write ``rows`` of ``table`` as CSV (a header line of :func:`columns`, then one line
    per row; a missing or None value is an empty field, a bool ``True``/``False``)."""
    writer = csv.DictWriter(out, fieldnames=columns(rows, table), lineterminator="\n")
    writer.writeheader()
    writer.writerows(rows)

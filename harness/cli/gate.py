"""``neuroyard baseline`` and ``neuroyard check``: a regression gate for CI.

``baseline --store PATH -o FILE`` writes what the store's runs were and what they gave:
per group (evolver and its configuration as given, with the hash of its effective
configuration, task and settings, budget, campaign seed, runs) the figures of each run,
and the environment they were written in. ``check --baseline FILE`` makes the same runs
again (same evolvers, configurations, tasks, settings, budget, seeds and run indices) into
a temporary store on the pool executor, or reads them from ``--store PATH``, and compares
them with the baseline (:mod:`neuroyard.reports.gate`: tests, thresholds and
verdicts). Exit status of ``check``: 0 nothing regressed, 1 a regression (one line each),
2 bad input (one line naming the file and what is wrong).

**Which fresh runs are a baseline group's.** When re-running, the runs of the group's own
plan. From a store: the runs of the same evolver name on the same task with the same
settings, budget and campaign seed; the configuration may differ (it is one of the things a
change may alter, as the code is), and when it does the check says so. Should the store
hold that group under several configurations, the one given as the baseline's is taken; if
none of them is, the store is ambiguous (exit 2).

**The baseline file** (format version 1, ours): strict JSON (:mod:`~neuroyard.core.
jsonsafe`) with sorted keys, indented by two spaces so that a change reads well in a diff::

    {"format": "neuroyard regression baseline", "format_version": 1,
     "environment": {"date", "host", "cpu", "python", "neuroyard", "git_commit",
                     "libraries": {"numpy", "numba", "scipy"},
                     "recorded_runs": [{"host", "versions"}, ...]},
     "groups": [{"evolver", "config", "config_hash", "task", "task_settings", "budget",
                 "campaign_seed", "runs",
                 "run_figures": [{"run_index", "status", "evaluations", "generations",
                                  "hidden_nodes", "connections", "relative_speed"}, ...]}]}

``environment`` describes the process that wrote the file (the date is UTC) and, under
``recorded_runs``, each distinct host and versions the runs themselves recorded.
``relative_speed`` is null for a run recorded without a calibration.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import tempfile
from collections.abc import Callable, Iterable, Sequence
from dataclasses import asdict, dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import scipy
from jsonschema import Draft202012Validator
from jsonschema.exceptions import best_match

from neuroyard.core import jsonsafe
from neuroyard.core.errors import NeuroyardError
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution import provenance
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.executors import make_executor
from neuroyard.records.runs import FAILED, SOLVED, UNSOLVED, RunRecord, record_key
from neuroyard.records.store import DEFAULT_PATH, ResultStore
from neuroyard.reports import gate
from neuroyard.reports.gate import (
    ALPHA,
    DEFAULT_THRESHOLDS,
    Finding,
    GroupRuns,
    RunFigures,
    Thresholds,
)

FORMAT = "neuroyard regression baseline"
FORMAT_VERSION = 1
CPU_INFO = Path("/proc/cpuinfo")  # Linux; elsewhere the CPU model is platform.processor()

_COUNT = {"type": "integer", "minimum": 0}
_SIZE = {"type": ["integer", "null"], "minimum": 0}
_RUN = {
    "type": "object",
    "additionalProperties": False,
    "required": [
        "run_index",
        "status",
        "evaluations",
        "generations",
        "hidden_nodes",
        "connections",
        "relative_speed",
    ],
    "properties": {
        "run_index": _COUNT,
        "status": {"enum": [SOLVED, UNSOLVED, FAILED]},
        "evaluations": _COUNT,
        "generations": _COUNT,
        "hidden_nodes": _SIZE,
        "connections": _SIZE,
        "relative_speed": {"type": ["number", "null"], "exclusiveMinimum": 0},
    },
}
_GROUP = {
    "type": "object",
    "additionalProperties": False,
    "required": [
        "evolver",
        "config",
        "config_hash",
        "task",
        "task_settings",
        "budget",
        "campaign_seed",
        "runs",
        "run_figures",
    ],
    "properties": {
        "evolver": {"type": "string", "minLength": 1},
        "config": {"type": "object"},
        "config_hash": {"type": "string"},
        "task": {"type": "string", "minLength": 1},
        "task_settings": {"type": "object"},
        "budget": {"type": "integer", "minimum": 1},
        "campaign_seed": _COUNT,
        "runs": {"type": "integer", "minimum": 1},
        "run_figures": {"type": "array", "minItems": 1, "items": _RUN},
    },
}
SCHEMA = {
    "type": "object",
    "required": ["format", "format_version", "environment", "groups"],
    "properties": {
        "environment": {"type": "object"},
        "groups": {"type": "array", "minItems": 1, "items": _GROUP},
    },
}


class BaselineError(NeuroyardError):
    """A baseline file that cannot be read, or input that does not fit the baseline."""


@dataclass(frozen=True)
class BaselineGroup:
    """One group of a baseline (see the module docstring for the fields)."""

    evolver: str
    config: dict[str, Any]
    config_hash: str
    task: str
    task_settings: dict[str, Any]
    budget: int
    campaign_seed: int
    runs: int
    run_figures: tuple[RunFigures, ...]

    @property
    def label(self) -> str:
        """How the check names the group: evolver [short hash] on task, budget, seed."""
        return (
            f"{self.evolver} [{self.config_hash[:6]}] on {self.task} "
            f"(budget {self.budget:,}, seed {self.campaign_seed})"
        )

    def plan(self) -> CampaignPlan:
        """The campaign that makes this group's runs again (run indices 0 to the highest)."""
        return CampaignPlan(
            [EvolverSpec(self.evolver, self.config)],
            [TaskChoice(self.task, self.task_settings)],
            max(r.run_index for r in self.run_figures) + 1,
            self.campaign_seed,
            self.budget,
        )

    def holds(self, record: RunRecord) -> bool:
        """Whether ``record`` has this group's evolver name, task, settings, budget and
        campaign seed (its configuration may differ, see the module docstring)."""
        return (
            record.evolver == self.evolver
            and record.task == self.task
            and record.task_settings == self.task_settings
            and record.budget == self.budget
            and record.campaign_seed == self.campaign_seed
        )


@dataclass(frozen=True)
class CheckResult:
    """What a check found: every finding (:class:`~neuroyard.reports.gate.Finding`)
    and notes on how the fresh runs differ from the baseline's beyond the figures."""

    findings: list[Finding]
    notes: list[str] = field(default_factory=list)
    groups: int = 0
    alpha: float = ALPHA

    @property
    def regressions(self) -> list[str]:
        """One line per regression (empty when nothing regressed)."""
        return [gate.line(f) for f in self.findings if f.verdict == gate.REGRESSION]

    def lines(self) -> list[str]:
        """Everything to print: regressions, improvements, small changes, no detectable
        change, tests not run, notes, and a summary line."""
        order = (gate.REGRESSION, gate.IMPROVEMENT, gate.SMALL, gate.NO_CHANGE, gate.NOT_TESTED)
        out = [gate.line(f) for verdict in order for f in self.findings if f.verdict == verdict]
        out += [f"note: {note}" for note in self.notes]
        count = {v: sum(f.verdict == v for f in self.findings) for v in order}
        out.append(
            f"{count[gate.REGRESSION]} regression(s), {count[gate.IMPROVEMENT]} improvement(s) "
            f"in {len(self.findings) - count[gate.NOT_TESTED]} tests of {self.groups} group(s), "
            f"{count[gate.NOT_TESTED]} not run; significant: p below {self.alpha:g} after "
            "Holm's correction across all of them"
        )
        return out


# --- the baseline file -----------------------------------------------------------------


def cpu_model() -> str:
    """The CPU's model name (Linux: from the kernel's cpuinfo file), or "unknown"."""
    try:
        for text in CPU_INFO.read_text().splitlines():
            key, _, value = text.partition(":")
            if key.strip() == "model name":
                return value.strip()
    except OSError:
        pass
    return platform.processor() or "unknown"


def environment(records: Iterable[RunRecord]) -> dict[str, Any]:
    """This process's environment, and each distinct (host, versions) of ``records``."""
    versions = provenance.versions()
    recorded = {
        json.dumps({"host": r.host, "versions": r.versions}, sort_keys=True) for r in records
    }
    return {
        "date": datetime.now(UTC).isoformat(timespec="seconds"),
        "host": provenance.host(),
        "cpu": cpu_model(),
        "python": versions["python"],
        "neuroyard": versions["neuroyard"],
        "git_commit": versions["git_commit"],
        "libraries": {
            "numpy": versions["numpy"],
            "numba": versions["numba"],
            "scipy": scipy.__version__,
        },
        "recorded_runs": [json.loads(text) for text in sorted(recorded)],
    }


def baseline_document(records: Sequence[RunRecord]) -> dict[str, Any]:
    """The baseline of ``records`` (every group of them) as a JSON document."""
    groups: dict[str, list[RunRecord]] = {}
    for r in records:
        key = json.dumps(
            [r.evolver, r.config_hash, r.task, r.task_settings, r.budget, r.campaign_seed],
            sort_keys=True,
        )
        groups.setdefault(key, []).append(r)
    docs = []
    for key in sorted(groups):
        runs = sorted(groups[key], key=lambda r: r.run_index)
        first = runs[0]
        docs.append(
            {
                "evolver": first.evolver,
                "config": first.config,
                "config_hash": first.config_hash,
                "task": first.task,
                "task_settings": first.task_settings,
                "budget": first.budget,
                "campaign_seed": first.campaign_seed,
                "runs": len(runs),
                "run_figures": [asdict(RunFigures.of(r)) for r in runs],
            }
        )
    return {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "environment": environment(records),
        "groups": docs,
    }


def write_baseline(store_path: Path, out: Path) -> dict[str, Any]:
    """Write the baseline of every run in the store at ``store_path`` to ``out`` (replaced
    whole, never left half-written) and return the document."""
    with ResultStore(store_path, write=False) as store:
        records = list(store.records(with_log=False))
    if not records:
        raise BaselineError(f"results store {store_path}: holds no runs to make a baseline of")
    doc = baseline_document(records)
    text = jsonsafe.dumps(doc, sort_keys=True, indent=2) + "\n"
    partial = out.with_name(f".{out.name}.{os.getpid()}.partial")
    try:
        partial.write_text(text)
        os.replace(partial, out)
    except OSError as exc:
        partial.unlink(missing_ok=True)
        raise BaselineError(f"baseline {out}: cannot write it ({exc.strerror})") from None
    return doc


def read_baseline(path: Path) -> list[BaselineGroup]:
    """The groups of the baseline file at ``path``; a :class:`BaselineError` naming the file
    and what is wrong when it is not a baseline of this format version."""
    try:
        raw = json.loads(path.read_bytes())
    except OSError as exc:
        raise BaselineError(f"baseline {path}: cannot read it ({exc.strerror})") from None
    except ValueError as exc:  # also a file that is not UTF-8
        raise BaselineError(f"baseline {path}: not a JSON file ({exc})") from None
    if not isinstance(raw, dict) or raw.get("format") != FORMAT:
        raise BaselineError(
            f'baseline {path}: not a neuroyard baseline (no "format": "{FORMAT}"; '
            "write one with neuroyard baseline)"
        )
    version = raw.get("format_version")
    if type(version) is not int or version != FORMAT_VERSION:
        raise BaselineError(
            f"baseline {path}: format version {version!r}, this neuroyard "
            f"reads version {FORMAT_VERSION}"
        )
    error = best_match(Draft202012Validator(SCHEMA).iter_errors(raw))
    if error is not None:
        where = ".".join(str(p) for p in error.absolute_path) or "the document"
        raise BaselineError(f"baseline {path}: {where}: {error.message}")
    groups = []
    for k, doc in enumerate(jsonsafe.decode(raw)["groups"]):
        figures = tuple(RunFigures(**run) for run in doc.pop("run_figures"))
        indices = [r.run_index for r in figures]
        if len(set(indices)) != len(indices):
            raise BaselineError(f"baseline {path}: groups.{k}: a run index appears twice")
        groups.append(BaselineGroup(**doc, run_figures=figures))
    return groups


# --- the check -------------------------------------------------------------------------


def check(
    baseline: Path,
    store: Path | None = None,
    workers: int = 1,
    alpha: float = ALPHA,
    thresholds: Thresholds = DEFAULT_THRESHOLDS,
    progress: bool = True,
) -> CheckResult:
    """Compare the fresh runs of the baseline's groups with it (see the module docstring):
    re-run them on ``workers`` worker processes, or read them from ``store``."""
    groups = read_baseline(baseline)
    if store is None:
        fresh = _rerun(baseline, groups, workers, progress)
    else:
        fresh = _from_store(baseline, groups, store)
    notes: list[str] = []
    compared = []
    for group, records in zip(groups, fresh, strict=True):
        notes += _differences(group, records)
        compared.append(
            GroupRuns(
                group.label, group.budget, group.run_figures, [RunFigures.of(r) for r in records]
            )
        )
    return CheckResult(gate.compare(compared, alpha, thresholds), notes, len(groups), alpha)


def _rerun(
    baseline: Path, groups: Sequence[BaselineGroup], workers: int, progress: bool
) -> list[list[RunRecord]]:
    """Each group's runs made again into a temporary store, one campaign per group."""
    plans = []
    for k, group in enumerate(groups):  # every group checked before any run starts
        try:
            plan = group.plan()
            plan.evolvers[0].build()
            plan.describe()
        except NeuroyardError as exc:
            raise BaselineError(f"baseline {baseline}: groups.{k} ({group.label}): {exc}") from None
        plans.append(plan)
    with (
        tempfile.TemporaryDirectory(prefix="neuroyard-check-") as folder,
        ResultStore(Path(folder) / "fresh.db") as fresh,
    ):
        for plan in plans:
            outcome = execute(plan, fresh, make_executor("pool", workers), progress=progress)
            if outcome.internal_errors:
                raise RuntimeError(
                    f"{outcome.internal_errors} run(s) of the check stopped on an internal "
                    f"error (traceback in {outcome.crash_log})"
                )
        records = list(fresh.records(with_log=False))
    by_key = {record_key(r): r for r in records}
    return [[by_key[s.key] for s in plan.expand() if s.key in by_key] for plan in plans]


def _from_store(
    baseline: Path, groups: Sequence[BaselineGroup], path: Path
) -> list[list[RunRecord]]:
    """Each group's runs from the store at ``path`` (see the module docstring)."""
    with ResultStore(path, write=False) as store:
        records = list(store.records(with_log=False))
    out = []
    for k, group in enumerate(groups):
        candidates = [r for r in records if group.holds(r)]
        hashes = {r.config_hash for r in candidates}
        if len(hashes) > 1:
            given = {r.config_hash for r in candidates if r.config == group.config}
            if len(given) != 1:
                raise BaselineError(
                    f"results store {path}: holds {len(hashes)} configurations of "
                    f"{group.label} (group {k} of baseline {baseline}) and none is the "
                    "baseline's; keep one per store"
                )
            candidates = [r for r in candidates if r.config_hash in given]
        shared = {r.run_index for r in candidates} & {r.run_index for r in group.run_figures}
        if not shared:
            raise BaselineError(
                f"results store {path}: no runs of {group.label} with the run indices of "
                f"group {k} of baseline {baseline}"
            )
        out.append(candidates)
    return out


def _differences(group: BaselineGroup, records: Sequence[RunRecord]) -> list[str]:
    """Notes on a group's fresh runs: another effective configuration, fewer runs."""
    notes = []
    hashes = sorted({r.config_hash for r in records})
    if hashes and hashes != [group.config_hash]:
        given = json.dumps(records[0].config, sort_keys=True)
        notes.append(
            f"{group.label}: the fresh runs' effective configuration differs from the "
            f"baseline's (hash {', '.join(h[:6] for h in hashes)} against "
            f"{group.config_hash[:6]}; options given: {given} against "
            f"{json.dumps(group.config, sort_keys=True)})"
        )
    missing = sorted({r.run_index for r in group.run_figures} - {r.run_index for r in records})
    if missing:
        notes.append(
            f"{group.label}: compared on {group.runs - len(missing)} of the baseline's "
            f"{group.runs} runs (the fresh runs lack run index {_ranges(missing)})"
        )
    return notes


def _ranges(indices: Sequence[int]) -> str:
    """``[0, 1, 2, 5]`` as ``0-2, 5``."""
    spans: list[list[int]] = []
    for i in indices:
        if spans and i == spans[-1][1] + 1:
            spans[-1][1] = i
        else:
            spans.append([i, i])
    return ", ".join(str(a) if a == b else f"{a}-{b}" for a, b in spans)


# --- the command line ------------------------------------------------------------------


def add_parsers(
    sub: Any,
    positive: Callable[[str], int],
    number: Callable[..., Any],
    level: Callable[[str], float],
) -> None:
    """Register ``baseline`` and ``check`` on the command line's subparsers; ``positive``
    parses a whole number of at least 1, ``number(float)`` a finite number of at least 0,
    ``level`` a significance level."""
    b = sub.add_parser("baseline", help="write a store's runs and figures as a baseline file")
    b.add_argument("--store", type=Path, default=DEFAULT_PATH, help="results store file")
    b.add_argument("-o", "--output", type=Path, required=True, help="baseline file to write")

    c = sub.add_parser(
        "check", help="compare a fresh campaign with a baseline; exit 1 on a regression"
    )
    c.add_argument("--baseline", type=Path, required=True, help="baseline file")
    c.add_argument(
        "--store", type=Path, help="read the fresh runs from this store instead of making them"
    )
    c.add_argument("--workers", type=positive, default=1, help="parallel worker processes")
    c.add_argument(
        "--alpha",
        type=level,
        default=ALPHA,
        help=f"significance level after Holm's correction (default {ALPHA:g})",
    )
    d = DEFAULT_THRESHOLDS
    percent = number(float)
    c.add_argument(
        "--success-drop",
        type=percent,
        default=100 * d.success_drop,
        metavar="POINTS",
        help="smallest drop of the success rate that matters, in percentage points (default %(default)g)",
    )
    c.add_argument(
        "--evaluations-rise",
        type=percent,
        default=100 * d.evaluations_rise,
        metavar="PERCENT",
        help="smallest rise of the median evaluations to solve that matters (default %(default)g%%)",
    )
    c.add_argument(
        "--connections-rise",
        type=percent,
        default=100 * d.connections_rise,
        metavar="PERCENT",
        help="smallest rise of the median connections of solutions that matters (default %(default)g%%)",
    )
    c.add_argument(
        "--speed-drop",
        type=percent,
        default=100 * d.speed_drop,
        metavar="PERCENT",
        help="smallest drop of the median relative speed that matters (default %(default)g%%)",
    )


def baseline_command(args: argparse.Namespace) -> None:
    doc = write_baseline(args.store, args.output)
    runs = sum(g["runs"] for g in doc["groups"])
    print(
        f"baseline of {len(doc['groups'])} group(s), {runs} runs, from {args.store} written to {args.output}"
    )


def check_command(args: argparse.Namespace) -> int:
    thresholds = Thresholds(
        args.success_drop / 100,
        args.evaluations_rise / 100,
        args.connections_rise / 100,
        args.speed_drop / 100,
    )
    result = check(args.baseline, args.store, args.workers, args.alpha, thresholds)
    print("\n".join(result.lines()))
    return 1 if result.regressions else 0


COMMANDS = {"baseline": baseline_command, "check": check_command}

"""The regression gate's baseline file: what a store's runs were and what they gave.

A baseline holds, per group (evolver and its configuration as given, with the hash of its
effective configuration, task and settings, budget, campaign seed, runs), the figures of
each run (:class:`~.gate.RunFigures`), and the environment they were written in. The check
(:func:`neuroyard.api.judging.check`) makes the same runs again, or reads them from a
store, and compares them with it (:mod:`.gate`).

**Which fresh runs are a baseline group's** (:func:`fresh_runs`). When re-running, the runs
of the group's own plan. From a store: the runs of the same evolver name on the same task
with the same settings, budget and campaign seed; the configuration may differ (it is one
of the things a change may alter, as the code is), and when it does the check says so
(:func:`differences`). Should the store hold that group under several configurations, the
one given as the baseline's is taken; if none of them is, the store is ambiguous.

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

import json
import os
import platform
from collections.abc import Iterable, Sequence
from dataclasses import asdict, dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import scipy
from jsonschema import Draft202012Validator
from jsonschema.exceptions import best_match

from neuroyard.core import jsonsafe
from neuroyard.core.errors import NeuroyardError
from neuroyard.core.inputfile import read_text
from neuroyard.records import provenance
from neuroyard.records.runs import FAILED, SOLVED, UNSOLVED, RunRecord
from neuroyard.reports import gate
from neuroyard.reports.gate import ALPHA, Finding, RunFigures
from neuroyard.reports.labels import configuration_label, task_name

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
        """How the check names the group: evolver [short hash] on task (as reports name
        them: :mod:`.labels`), budget, seed."""
        return (
            f"{configuration_label(self.evolver, self.config_hash)} on "
            f"{task_name(self.task, self.task_settings)} "
            f"(budget {self.budget:,}, seed {self.campaign_seed})"
        )

    @property
    def run_count(self) -> int:
        """Runs the group's campaign makes: run indices 0 to the highest recorded."""
        return max(r.run_index for r in self.run_figures) + 1

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

    def to_json(self) -> dict[str, Any]:
        """The group as it stands in the file."""
        return {**asdict(self), "run_figures": [asdict(r) for r in self.run_figures]}


@dataclass(frozen=True)
class Baseline:
    """A whole baseline (what :func:`neuroyard.baseline` returns and ``neuroyard baseline``
    writes): its groups and the environment it was written in (see the module docstring).

    Args:
        groups: one per evolver configuration, task, settings, budget and campaign seed,
            sorted, each with the figures of its runs (:class:`BaselineGroup`).
        environment: where and with what it was written (date, host, CPU, versions).

    Example:
        >>> import neuroyard
        >>> empty = neuroyard.Baseline(())
        >>> empty.runs, empty.to_json()["format_version"]
        (0, 1)
    """

    groups: tuple[BaselineGroup, ...]
    environment: dict[str, Any] = field(default_factory=dict)

    @property
    def runs(self) -> int:
        """Runs in all groups."""
        return sum(g.runs for g in self.groups)

    @classmethod
    def of(cls, records: Sequence[RunRecord]) -> Baseline:
        """The baseline of ``records`` (every group of them), written now."""
        grouped: dict[str, list[RunRecord]] = {}
        for r in records:
            key = json.dumps(
                [r.evolver, r.config_hash, r.task, r.task_settings, r.budget, r.campaign_seed],
                sort_keys=True,
            )
            grouped.setdefault(key, []).append(r)
        groups = []
        for key in sorted(grouped):
            runs = sorted(grouped[key], key=lambda r: r.run_index)
            first = runs[0]
            groups.append(
                BaselineGroup(
                    first.evolver,
                    first.config,
                    first.config_hash,
                    first.task,
                    first.task_settings,
                    first.budget,
                    first.campaign_seed,
                    len(runs),
                    tuple(RunFigures.of(r) for r in runs),
                )
            )
        return cls(tuple(groups), environment(records))

    def to_json(self) -> dict[str, Any]:
        """The file's document."""
        return {
            "format": FORMAT,
            "format_version": FORMAT_VERSION,
            "environment": self.environment,
            "groups": [g.to_json() for g in self.groups],
        }

    def write(self, path: str | Path) -> None:
        """Write the file at ``path``, replaced whole, never left half-written.

        Raises:
            BaselineError: the file cannot be written (the message names it)."""
        out = Path(path)
        text = jsonsafe.dumps(self.to_json(), sort_keys=True, indent=2) + "\n"
        partial = out.with_name(f".{out.name}.{os.getpid()}.partial")
        try:
            partial.write_text(text)
            os.replace(partial, out)
        except OSError as exc:
            partial.unlink(missing_ok=True)
            raise BaselineError(f"baseline {out}: cannot write it ({exc.strerror})") from None

    @classmethod
    def read(cls, path: str | Path) -> Baseline:
        """The baseline in the file at ``path``.

        Raises:
            BaselineError: naming the file and what is wrong when it cannot be read (or is
                larger than 64 MiB, or not UTF-8: :mod:`neuroyard.core.inputfile`), is not
                JSON (or nests more than 100 levels: :mod:`neuroyard.core.jsonsafe`) or is
                not a baseline of this format version."""
        path = Path(path)
        text = read_text(path, f"baseline {path}", BaselineError)
        try:
            raw = jsonsafe.parse(text)
        except ValueError as exc:
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
        decoded = jsonsafe.decode(raw)
        groups = []
        for k, doc in enumerate(decoded["groups"]):
            figures = tuple(RunFigures(**run) for run in doc.pop("run_figures"))
            indices = [r.run_index for r in figures]
            if len(set(indices)) != len(indices):
                raise BaselineError(f"baseline {path}: groups.{k}: a run index appears twice")
            groups.append(BaselineGroup(**doc, run_figures=figures))
        return cls(tuple(groups), decoded["environment"])


@dataclass(frozen=True)
class CheckResult:
    """What a check found (what :func:`neuroyard.check` returns and ``neuroyard check``
    prints).

    Args:
        findings: one per metric of every group (:class:`~neuroyard.reports.gate.Finding`),
            each with its verdict: ``regression``, ``improvement``, ``small change``, ``no
            detectable change`` or ``not tested``.
        notes: how the fresh runs differ from the baseline's beyond the figures.
        groups: the baseline's groups compared.
        alpha: the significance level after Holm's correction.

    Example:
        >>> import neuroyard
        >>> nothing = neuroyard.CheckResult([], groups=0)
        >>> nothing.regressions, nothing.lines()[-1].split(" in ")[0]
        ([], '0 regression(s), 0 improvement(s)')
    """

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


def fresh_runs(
    groups: Sequence[BaselineGroup], records: Sequence[RunRecord], store: Path, baseline: str
) -> list[list[RunRecord]]:
    """Each group's runs among ``records``, read from the store at ``store`` (see the module
    docstring); ``baseline`` names the baseline in errors.

    Raises:
        BaselineError: the records hold several configurations of a group and none is the
            baseline's, or no run of a group with its run indices."""
    out = []
    for k, group in enumerate(groups):
        candidates = [r for r in records if group.holds(r)]
        hashes = {r.config_hash for r in candidates}
        if len(hashes) > 1:
            given = {r.config_hash for r in candidates if r.config == group.config}
            if len(given) != 1:
                raise BaselineError(
                    f"results store {store}: holds {len(hashes)} configurations of "
                    f"{group.label} (group {k} of baseline {baseline}) and none is the "
                    "baseline's; keep one per store"
                )
            candidates = [r for r in candidates if r.config_hash in given]
        shared = {r.run_index for r in candidates} & {r.run_index for r in group.run_figures}
        if not shared:
            raise BaselineError(
                f"results store {store}: no runs of {group.label} with the run indices of "
                f"group {k} of baseline {baseline}"
            )
        out.append(candidates)
    return out


def differences(group: BaselineGroup, records: Sequence[RunRecord]) -> list[str]:
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

"""Published reference figures, read from the TOML files in ``reference/figures/``.

Every number that comes from a paper lives in those files, with its citation, the protocol
it was measured under and a provenance tag (reference/SOURCES.md: provenance tags).
Nothing else in neuroyard hard-codes a paper's number; the report and the reproduction
tests read them from here.

File layout (one file per task family)::

    [[figure]]
    task = "xor-v2"                    # neuroyard task id the figure belongs to
    method = "NEAT"                    # method as named in the paper
    compare_with = "neat"              # neuroyard evolver to put beside it ("" = none)
    source = "Stanley & Miikkulainen 2002, Evolutionary Computation 10(2), sec. 4.2"
    provenance = "VERIFIED-QUOTE"      # see PROVENANCE
    note = "..."                       # optional
    not_comparable = "..."             # optional: why no run of ours is comparable with it
    method_keys = ["evolver.selection"]  # optional: protocol keys naming the method (a run
                                       # differing on one is not shown beside the figure)
    protocol = { "evolver.population_size" = 150, "task.start_angle" = 0.0175 }
    values = { mean_evaluations = 4755, sd_evaluations = 2553 }

Besides figures (results), a file may hold named tables of published protocol constants
(equations' constants, start states, test grids) that task code reads with :func:`protocol`.

``protocol`` keys are ``task.<setting>``, ``evolver.<config key>`` or ``run.budget``; a
measured result is comparable with the figure only when every such key has the same value
in the run's effective settings. A ``population`` value also states the protocol setting
``evolver.population_size`` (:data:`IMPLIED_PROTOCOL`).
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cache
from importlib import resources
from typing import Any

from neuroyard.core.errors import NeuroyardError

# Provenance tags (reference/SOURCES.md: provenance tags); only the first group may gate
# a pass/fail check.
GATE_PROVENANCE = ("VERIFIED", "VERIFIED-QUOTE", "SECONDARY-ACADEMIC", "SECONDARY-NOTES")
INFO_PROVENANCE = ("MEMORY-high", "MEMORY-medium", "MEMORY-low")
PROVENANCE = GATE_PROVENANCE + INFO_PROVENANCE

# Metric names a figure may carry (the report knows how to put each beside a measurement).
METRICS = (
    "runs",
    "failures",
    "success_rate",
    "mean_evaluations",
    "sd_evaluations",
    "median_evaluations",
    "worst_evaluations",
    "mean_generations",
    "mean_hidden_nodes",
    "sd_hidden_nodes",
    "mean_connections",
    "sd_connections",
    "mean_generalization",
    "mean_validation_return",
    "population",
)


# A figure value that states a setting of the experiment: metric -> protocol key.
IMPLIED_PROTOCOL = {"population": "evolver.population_size"}
PROTOCOL_SCOPES = ("task", "evolver", "run")


@dataclass(frozen=True)
class ReferenceFigure:
    """A set of published values for one method on one task, under one protocol."""

    task: str
    method: str
    compare_with: str
    source: str
    provenance: str
    values: Mapping[str, float]
    protocol: Mapping[str, Any] = field(default_factory=dict)
    note: str = ""
    not_comparable: str = ""
    method_keys: tuple[str, ...] = ()

    def other_method(
        self, task_settings: Mapping[str, Any], evolver_config: Mapping[str, Any]
    ) -> bool:
        """True when a run differs from the figure on one of its ``method_keys``, the
        protocol keys that say which method it is of (``evolver.selection`` tells novelty
        search from objective NEAT): the run is of another method, and the figure is not
        shown beside it."""
        scopes = {"task": task_settings, "evolver": evolver_config}
        return any(
            not _same(_recorded(key, scopes), self.protocol[key]) for key in self.method_keys
        )

    @property
    def from_memory(self) -> bool:
        """True when the figure was recalled, not checked against a text: never a gate."""
        return self.provenance in INFO_PROVENANCE

    @property
    def may_gate(self) -> bool:
        """True when the figure may decide a pass/fail check: checked against a text and
        measured on the same task (not only a figure of the same phenomenon)."""
        return self.provenance in GATE_PROVENANCE and not self.not_comparable

    @property
    def full_protocol(self) -> dict[str, Any]:
        """Every setting the figure was measured under: its ``protocol``, plus the settings
        that a figure of the experiment's own size states as a value (a ``population``
        figure was measured at that ``evolver.population_size``)."""
        implied = {
            key: self.values[metric]
            for metric, key in IMPLIED_PROTOCOL.items()
            if metric in self.values
        }
        return {**implied, **self.protocol}

    def mismatches(
        self,
        task_settings: Mapping[str, Any],
        evolver_config: Mapping[str, Any],
        run_settings: Mapping[str, Any] | None = None,
    ) -> list[str]:
        """Protocol settings on which a run differs from the figure's (empty = comparable).

        Keys are ``task.<setting>`` (the run's effective task settings), ``evolver.<option>``
        (its effective evolver configuration) and ``run.<name>`` (``run_settings``: the
        effective ``budget``). A setting the run does not record counts as a mismatch:
        like must be compared with like. A figure that is ``not_comparable`` (measured on
        another instance of the task, such as a published maze map) always lists why first.
        """
        scopes = {"task": task_settings, "evolver": evolver_config, "run": run_settings or {}}
        out = [self.not_comparable] if self.not_comparable else []
        for key, expected in self.full_protocol.items():
            actual = _recorded(key, scopes)
            if actual is None:
                out.append(f"{key} not recorded (published: {expected!r})")
            elif not _same(actual, expected):
                out.append(f"{key}={actual!r} (published: {expected!r})")
        return out


def _recorded(key: str, scopes: Mapping[str, Mapping[str, Any]]) -> Any:
    """The run's value of protocol key ``scope.name`` (None when it records none)."""
    scope, _, name = key.partition(".")
    return scopes.get(scope, {}).get(name)


def _same(a: Any, b: Any) -> bool:
    if isinstance(a, int | float) and isinstance(b, int | float) and not isinstance(a, bool):
        return math.isclose(float(a), float(b), rel_tol=1e-9, abs_tol=1e-12)
    return a == b


def _parse(doc: Mapping[str, Any], where: str) -> list[ReferenceFigure]:
    out = []
    for k, item in enumerate(doc.get("figure", [])):
        label = f"{where}: figure {k + 1}"
        missing = {"task", "method", "source", "provenance", "values"} - set(item)
        if missing:
            raise NeuroyardError(f"{label}: missing keys {sorted(missing)}")
        if item["provenance"] not in PROVENANCE:
            raise NeuroyardError(f"{label}: unknown provenance {item['provenance']!r}")
        unknown = set(item["values"]) - set(METRICS)
        if unknown:
            raise NeuroyardError(f"{label}: unknown metrics {sorted(unknown)}")
        scopes = {key.partition(".")[0] for key in item.get("protocol", {})}
        if not scopes <= set(PROTOCOL_SCOPES):
            bad = sorted(scopes - set(PROTOCOL_SCOPES))
            raise NeuroyardError(
                f"{label}: protocol keys must start with {', '.join(PROTOCOL_SCOPES)}: {bad}"
            )
        loose = set(item.get("method_keys", ())) - set(item.get("protocol", {}))
        if loose:
            raise NeuroyardError(f"{label}: method_keys not in its protocol: {sorted(loose)}")
        out.append(
            ReferenceFigure(
                task=item["task"],
                method=item["method"],
                compare_with=item.get("compare_with", ""),
                source=item["source"],
                provenance=item["provenance"],
                values={key: float(v) for key, v in item["values"].items()},
                protocol=dict(item.get("protocol", {})),
                note=item.get("note", ""),
                not_comparable=item.get("not_comparable", ""),
                method_keys=tuple(item.get("method_keys", ())),
            )
        )
    return out


@cache
def _family(name: str) -> dict[str, Any]:
    """The parsed file ``reference/figures/<name>.toml``."""
    path = resources.files("neuroyard.reference") / "figures" / f"{name}.toml"
    return tomllib.loads(path.read_text())


def _families() -> list[str]:
    folder = resources.files("neuroyard.reference") / "figures"
    return sorted(p.name[:-5] for p in folder.iterdir() if p.name.endswith(".toml"))


@cache
def all_figures() -> tuple[ReferenceFigure, ...]:
    """Every figure of every file in ``reference/figures``."""
    figures: list[ReferenceFigure] = []
    for name in _families():
        figures += _parse(_family(name), f"reference/figures/{name}.toml")
    return tuple(figures)


def protocol(family: str, table: str) -> dict[str, Any]:
    """A table of published protocol constants (task definitions, not results), such as
    ``protocol("pole", "generalization")``; each table says its source and provenance."""
    try:
        return dict(_family(family)[table])
    except (FileNotFoundError, KeyError):
        raise NeuroyardError(f"reference/figures/{family}.toml has no table [{table}]") from None


def figures_for(task: str, method: str | None = None) -> list[ReferenceFigure]:
    """Figures for a task id, optionally only one method."""
    return [f for f in all_figures() if f.task == task and (method is None or f.method == method)]

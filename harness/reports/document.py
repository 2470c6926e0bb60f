"""What a report says, whatever its format: tables of formatted figures, numbered
footnotes, the settings and the notes (:func:`document`).

The text, Markdown and HTML renderers lay out the same :class:`Document`, so every format
shows the same figures formatted the same way. Numbers: thousands separators everywhere,
and the same digits for the same kind of figure (:func:`figure`): evaluations (and ERT)
whole, generations to one decimal, network sizes to two, counts whole, task metrics to
one, ratios to two, rates as whole percentages, never a negative zero
(:func:`neuroyard.core.numbers.number`). An interval is ``low-high``, ``≥ low`` when it has
no upper end (:func:`interval`). A value that does not exist is ``—``; where the reason is
not obvious (an ERT with no solved run, an open interval) a footnote says why. Tasks and
configurations are named by :mod:`.labels`. Nothing user supplied is marked up here: each
renderer escapes for its own format.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from neuroyard.core.numbers import number, value_text
from neuroyard.reports.labels import configuration_label, disambiguated, task_labels
from neuroyard.reports.report import Comparison, ReportRow

DASH = "—"  # a value that does not exist

# Digits after the decimal point of each kind of figure: the figure's name without its
# mean_/sd_/median_/worst_ prefix. Any other figure (a task's own metric) gets METRIC_DIGITS.
_DIGITS = {
    "evaluations": 0,
    "success_evaluations": 0,
    "ert": 0,
    "generations": 1,
    "hidden_nodes": 2,
    "connections": 2,
    "runs": 0,
    "solved": 0,
    "failed": 0,
    "failures": 0,
    "population": 0,
}
METRIC_DIGITS = 1
_PREFIX = re.compile(r"^(mean|sd|median|worst)_")


def figure(name: str, value: float | None) -> str:
    """``value`` formatted as a figure of kind ``name`` (``mean_evaluations``,
    ``success_rate``, ``generalization``, ...); :data:`DASH` for None."""
    if value is None:
        return DASH
    if name == "success_rate":
        return number(value, ".0%")
    digits = _DIGITS.get(_PREFIX.sub("", name), METRIC_DIGITS)
    return number(value, f",.{digits}f")


def count(value: int) -> str:
    """A count (runs, a run's index, generations done), with thousands separators."""
    return f"{value:,d}"


def ratio(value: float | None) -> str:
    """A ratio of two figures, two decimals; :data:`DASH` for None."""
    return DASH if value is None else number(value, ",.2f")


def p_value(value: float | None, test: str) -> str:
    """A p-value to two significant digits with the test's name; for a test not run, why
    (``test`` starts with "not run"), else :data:`DASH`."""
    if value is None:
        return test if test.startswith("not run") else DASH
    return f"{number(value, '.2g')} ({test})"


@dataclass(frozen=True)
class Table:
    """One table: header, rows of formatted cells, which columns hold numbers (aligned
    right), an optional caption (the group it shows), the footnotes its cells cite first in
    the document, as (number, text), and the numbers of those it cites that an earlier
    table printed (:func:`see_above` names them)."""

    head: tuple[str, ...]
    body: tuple[tuple[str, ...], ...]
    numeric: tuple[bool, ...]
    caption: str = ""
    notes: tuple[tuple[int, str], ...] = ()
    earlier: tuple[int, ...] = ()


@dataclass(frozen=True)
class Section:
    """A titled part of the report: one or more tables (one per group where a table for all
    groups would be too wide)."""

    title: str
    tables: tuple[Table, ...]


@dataclass(frozen=True)
class SettingsGroup:
    """The settings one task or evolver configuration was measured under: a heading and
    parts (a caption such as "set for these runs" and its (name, value) pairs)."""

    heading: str
    parts: tuple[tuple[str, tuple[tuple[str, str], ...]], ...]


@dataclass(frozen=True)
class Document:
    """The whole report. ``published``, ``metrics`` and ``failures`` are None when no row
    has any; ``labels`` names each row as the tables do (evolver, task)."""

    summary: Section
    metrics: Section | None
    failures: Section | None
    published: Section | None
    settings: tuple[SettingsGroup, ...]
    notes: tuple[str, ...]
    labels: tuple[tuple[str, str], ...] = ()


class Footnotes:
    """The numbered footnotes of one document: the same text keeps its number in every
    table that cites it and is printed once, under the first table that cites it (tables
    are laid out in the order they are made)."""

    def __init__(self) -> None:
        self._numbers: dict[str, int] = {}
        self._printed_by: dict[int, dict[int, str | None]] = {}  # the first citing table's

    def cite(self, text: str, used: dict[int, str | None]) -> str:
        """The marker (``[n]``) of ``text``; records the note in ``used`` (the table's): its
        text where this table is the first to cite it, else None (printed above)."""
        number = self._numbers.setdefault(text, len(self._numbers) + 1)
        first = self._printed_by.setdefault(number, used)
        used[number] = text if first is used else None
        return f"[{number}]"


def see_above(numbers: Sequence[int]) -> str:
    """The line under a table that cites footnotes an earlier table printed."""
    return f"see above for {', '.join(f'[{n}]' for n in numbers)}"


def row_labels(rows: Sequence[ReportRow]) -> list[tuple[str, str]]:
    """(evolver label, task label) of each row: the evolver with its configuration hash
    when several configurations of it are reported, the task as :func:`.labels.task_labels`
    names it (with a hash of its settings where it was run under several)."""
    evolvers = disambiguated(
        [(r.evolver, r.config_hash) for r in rows], {r.config_hash: r.config_hash[:6] for r in rows}
    )
    tasks = task_labels([(r.task, r.task_settings) for r in rows])
    # the same task and settings under several budgets: the budget joins the label
    settings = [json.dumps(r.task_settings, sort_keys=True, default=str) for r in rows]
    budgets: dict[tuple[str, str], set[int]] = {}
    for r, s in zip(rows, settings, strict=True):
        budgets.setdefault((r.task, s), set()).add(_budget(r))
    tasks = [
        f"{label} (budget {count(_budget(r))})" if len(budgets[r.task, s]) > 1 else label
        for label, r, s in zip(tasks, rows, settings, strict=True)
    ]
    return list(zip(evolvers, tasks, strict=True))


def _budget(row: ReportRow) -> int:
    return row.records[0].budget if row.records else 0


NO_SOLVED_ERT = (
    "no run solved, so there is no finite expected running time (ERT = all evaluations "
    "spent / solved runs)"
)
NO_SOLVED_FIGURES = "no run solved, so there are no figures over solved runs"


def _table(
    head: Sequence[str],
    body: Sequence[Sequence[str]],
    numeric: Sequence[bool],
    caption: str = "",
    notes: Mapping[int, str | None] | None = None,
) -> Table:
    cited = sorted((notes or {}).items())
    return Table(
        tuple(head),
        tuple(tuple(row) for row in body),
        tuple(numeric),
        caption,
        tuple((n, text) for n, text in cited if text is not None),
        tuple(n for n, text in cited if text is None),
    )


def _summary(rows: Sequence[ReportRow], names: Sequence[tuple[str, str]], fn: Footnotes) -> Section:
    """Three tables: what became of every run, the figures over the solved runs, and their
    medians and quartiles."""
    outcome_notes: dict[int, str | None] = {}
    outcomes = []
    for r, (evolver, task) in zip(rows, names, strict=True):
        s = r.summary
        ert = (
            figure("ert", s.ert) if s.solved else f"{DASH} {fn.cite(NO_SOLVED_ERT, outcome_notes)}"
        )
        outcomes.append(
            [
                evolver,
                task,
                count(s.runs),
                count(s.solved),
                count(s.failed),
                f"{figure('success_rate', s.success_rate)} "
                f"({interval(s.success_ci, 'success_rate')})",
                ert,
            ]
        )
    solved_notes: dict[int, str | None] = {}
    spread_notes: dict[int, str | None] = {}
    solved = []
    for r, (evolver, task) in zip(rows, names, strict=True):
        s = r.summary
        cells = [
            figure("mean_evaluations", s.mean_evaluations),
            figure("median_evaluations", s.median_evaluations),
            figure("mean_generations", s.mean_generations),
            figure("mean_hidden_nodes", s.mean_hidden_nodes),
            figure("mean_connections", s.mean_connections),
        ]
        if not s.solved:
            cells[0] = f"{DASH} {fn.cite(NO_SOLVED_FIGURES, solved_notes)}"
        solved.append([evolver, task, *cells])
    spread = [
        [
            evolver,
            task,
            _quartiles(r.summary.quartiles_evaluations, "median_evaluations"),
            _quartiles(r.summary.quartiles_generations, "mean_generations"),
            _ert_interval(r.summary.ert_ci, fn, spread_notes),
        ]
        for r, (evolver, task) in zip(rows, names, strict=True)
        if r.summary.solved
    ]
    return Section(
        "Runs: outcome of every run",
        (
            _table(
                ["evolver", "task", "runs", "solved", "failed", "success (95% CI)", "ERT"],
                outcomes,
                [False, False, True, True, True, True, True],
                notes=outcome_notes,
            ),
            _table(
                [
                    "evolver",
                    "task",
                    "mean evals",
                    "median evals",
                    "mean gens",
                    "hidden nodes",
                    "connections",
                ],
                solved,
                [False, False, True, True, True, True, True],
                caption="Solved runs: evaluations and generations to solve, size of the "
                "solution (means and medians over solved runs)",
                notes=solved_notes,
            ),
            _table(
                ["evolver", "task", "evaluations to solve", "generations to solve", "ERT 95% CI"],
                spread,
                [False, False, True, True, True],
                caption="Spread: first quartile, median and third quartile over the solved runs; "
                "95% bootstrap interval of the ERT, resampling whole runs",
                notes=spread_notes,
            ),
        ),
    )


OPEN_ABOVE = "≥"  # an interval with no upper end: "≥ 200"
UNBOUNDED = "unbounded"  # an interval with no end at all
OPEN_ERT_INTERVAL = (
    f"{OPEN_ABOVE} x: the interval has no upper end, only the lower end x: so many of the "
    "resamples held no solved run (whose ERT is infinite) that its upper end is infinite"
)


def interval(bounds: tuple[float, float] | None, kind: str) -> str:
    """A confidence interval, each end formatted as a figure of ``kind``: ``low-high``;
    one open above (an infinite upper end) is ``≥ low``, one open at both ends
    ``unbounded``; :data:`DASH` for None."""
    if bounds is None:
        return DASH
    low, high = bounds
    if math.isinf(low):
        return UNBOUNDED
    if math.isinf(high):
        return f"{OPEN_ABOVE} {figure(kind, low)}"
    return f"{figure(kind, low)}-{figure(kind, high)}"


def _ert_interval(
    bounds: tuple[float, float] | None, fn: Footnotes, notes: dict[int, str | None]
) -> str:
    """The ERT's bootstrap interval; an open one cites :data:`OPEN_ERT_INTERVAL`."""
    text = interval(bounds, "ert")
    if bounds is not None and math.isinf(bounds[1]):
        text += f" {fn.cite(OPEN_ERT_INTERVAL, notes)}"
    return text


def _quartiles(q: tuple[float, float, float] | None, kind: str) -> str:
    """``first quartile / median / third quartile``, each in the format of ``kind``."""
    return DASH if q is None else " / ".join(figure(kind, x) for x in q)


def _metrics(
    rows: Sequence[ReportRow], names: Sequence[tuple[str, str]], fn: Footnotes
) -> Section | None:
    """The task-declared metrics: mean over solved runs, unit, direction; the meaning of
    each metric in a footnote."""
    notes: dict[int, str | None] = {}
    body = [
        [
            evolver,
            task,
            f"{m.name} {fn.cite(f'{m.name}: {m.description}', notes)}",
            figure(m.name, r.summary.metrics.get(m.name)),
            m.unit,
            f"{m.better} is better",
        ]
        for r, (evolver, task) in zip(rows, names, strict=True)
        for m in r.metrics
    ]
    if not body:
        return None
    head = ["evolver", "task", "metric", "mean (solved runs)", "unit", "direction"]
    table = _table(head, body, [False, False, False, True, False, False], notes=notes)
    return Section("Task metrics (means over solved runs)", (table,))


def _failures(rows: Sequence[ReportRow], names: Sequence[tuple[str, str]]) -> Section | None:
    """One table per group with failed runs: run index, generations (gens), reason."""
    tables = tuple(
        _table(
            ["run", "gens", "reason"],
            [[count(i), count(g), reason] for i, g, reason in r.failures],
            [True, True, False],
            caption=f"{evolver} on {task}",
        )
        for r, (evolver, task) in zip(rows, names, strict=True)
        if r.failures
    )
    if not tables:
        return None
    return Section(
        "Failed runs (the run broke; an unsolved run spent its budget and is not listed)", tables
    )


FROM_MEMORY = "recalled from memory: information only, never a pass/fail check"


def _published_row(c: Comparison, fn: Footnotes, notes: dict[int, str | None]) -> list[str]:
    provenance = c.provenance + (f" {fn.cite(FROM_MEMORY, notes)}" if c.from_memory else "")
    if c.comparable:
        verdict = "yes"
    else:
        why = "not comparable: measured under " + "; ".join(c.mismatches)
        verdict = f"no {fn.cite(why, notes)}"
    return [
        f"{c.method} {fn.cite(c.source, notes)}",
        c.metric,
        figure(c.metric, c.measured),
        figure(c.metric, c.published),
        ratio(c.ratio) if c.comparable else DASH,
        p_value(c.p_value, c.test),
        provenance,
        verdict,
    ]


def _published(
    rows: Sequence[ReportRow], names: Sequence[tuple[str, str]], fn: Footnotes
) -> Section | None:
    """One table per group with published figures; the source (cited after the method),
    protocol differences and figures from memory as footnotes."""
    tables = []
    for r, (evolver, task) in zip(rows, names, strict=True):
        if not r.comparisons:
            continue
        notes: dict[int, str | None] = {}
        body = [_published_row(c, fn, notes) for c in r.comparisons]
        head = ["method", "metric", "measured", "published", "ratio", "p (test)", "provenance"]
        tables.append(
            _table(
                [*head, "comparable"],
                body,
                [False, False, True, True, True, True, False, False],
                caption=f"{evolver} on {task}",
                notes=notes,
            )
        )
    if not tables:
        return None
    title = "Published figures beside measured values (ratio = measured / published)"
    return Section(title, tuple(tables))


def _pairs(settings: Mapping[str, Any]) -> tuple[tuple[str, str], ...]:
    return tuple((k, value_text(v)) for k, v in sorted(settings.items()))


def _settings(
    rows: Sequence[ReportRow], names: Sequence[tuple[str, str]]
) -> tuple[SettingsGroup, ...]:
    """Every distinct task and evolver setting the rows were measured under.

    Evolver options given for the runs are listed apart from the evolver's defaults, so a
    reader sees at once which settings were chosen away from them."""
    seen: dict[str, SettingsGroup] = {}
    for r, (_, task) in zip(rows, names, strict=True):
        heading = f"task {task}"
        seen.setdefault(heading, SettingsGroup(heading, (("", _pairs(r.task_settings)),)))
    # an evolver may resolve settings per task (CMA-ES's population size): one group per
    # configuration, or one per distinct set of its settings, naming the tasks of each
    by_configuration: dict[str, dict[tuple, list[str]]] = {}
    for r, (_, task) in zip(rows, names, strict=True):
        heading = f"evolver {configuration_label(r.evolver, r.config_hash)}"
        given = {k: r.evolver_settings.get(k, v) for k, v in r.evolver_config.items()}
        defaults = {k: v for k, v in r.evolver_settings.items() if k not in given}
        parts = [("set for these runs", _pairs(given))] if given else []
        if defaults:
            parts.append(("the evolver's defaults", _pairs(defaults)))
        elif not given:
            parts.append(("the evolver's defaults (it reports no settings)", ()))
        tasks = by_configuration.setdefault(heading, {}).setdefault(tuple(parts), [])
        if task not in tasks:
            tasks.append(task)
    for heading, variants in by_configuration.items():
        for parts, tasks in variants.items():
            named = heading if len(variants) == 1 else f"{heading} on {', '.join(tasks)}"
            seen[named] = SettingsGroup(named, parts)
    return tuple(seen.values())


NOTES = (
    "Success rate and ERT count every run (ERT = all evaluations spent, solved or not, / "
    "solved runs); evaluations, generations and sizes are over solved runs. Evaluations "
    "do not include the episodes of success tests.",
    "failed means that the run broke: the evolver raised an error, hung past the time limit, "
    "died, or broke the evolver contract. It does not mean unsolved: an unsolved run kept "
    "to the rules and spent its evaluation budget without solving. Failed runs count as "
    'not solved and are listed with their reasons under "Failed runs".',
    "The six characters in brackets after an evolver's name (as in name [1a2b3c]) begin "
    "the hash of the evolver's effective configuration: every option with its value, "
    "defaults included. The same name and hash is the same configuration; the settings "
    "list each one. A task is named as it is given on the command line: gym:ENV_ID for a "
    "Gymnasium environment, maze:PATH for a maze file, else its id. The same brackets "
    "after a task's name identify its settings, where it was run under more than one.",
    "p: two-sided p-value that the measured and the published runs have the same mean "
    "(Welch's t-test) or the same success rate (Fisher's exact test), where the paper "
    "gives the run count and spread the test needs. A comparable figure was measured under "
    "the same protocol settings as the runs; the ratio of any other is not shown.",
)


def document(rows: Sequence[ReportRow]) -> Document:
    """The report of ``rows`` (see the module docstring)."""
    names = row_labels(rows)
    fn = Footnotes()
    return Document(
        summary=_summary(rows, names, fn),
        metrics=_metrics(rows, names, fn),
        failures=_failures(rows, names),
        published=_published(rows, names, fn),
        settings=_settings(rows, names),
        notes=NOTES,
        labels=tuple(names),
    )

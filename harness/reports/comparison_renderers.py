"""How a :class:`~.compare.Comparison` is written: text, Markdown and JSON.

Prose stays within 120 columns: each task has a table of figures and tests, and its
verdicts below it, one per line. Tables and Markdown headings are never broken.
"""

from __future__ import annotations

from tabulate import tabulate

from neuroyard.core import jsonsafe
from neuroyard.core.errors import TaskError
from neuroyard.core.numbers import number, value_text
from neuroyard.reports.compare import Comparison, MetricRow
from neuroyard.reports.markdown import escape
from neuroyard.reports.wrapping import wrap
from neuroyard.tasks.registry import task_class

NOTES = (
    "Figures: success rate over all runs (a run that broke counts as not solved); the others "
    "are the median [interquartile range] over solved runs. Evaluations to solve are tested "
    "with every unsolved run ranked worst (censored at the budget). A12: the chance that a "
    "run of A has the larger value, ties counted half (0.5: no effect; for evaluations and "
    "size, above 0.5 favours B). p: two-sided, adjusted with Holm's correction over every "
    "test of this comparison. Runs needed: runs per side for a test at the same level to "
    "find the observed effect with 80% power (Noether's formula; Cohen's h for success "
    "rates)."
)


def comparison_text(comparison: Comparison, fmt: str = "text") -> str:
    """The comparison as aligned text tables (``fmt`` "text") or GitHub Markdown. Prose is
    broken at 120 columns; a table row or a Markdown heading never is, since a break would
    break the table or the heading."""
    markdown = fmt == "markdown"
    table_format = "github" if markdown else "simple"
    bullet = "- " if markdown else "  "
    shown = escape if markdown else str  # user text (names, settings, reasons) as text
    lines = [f"A: {comparison.a}", f"B: {comparison.b}", f"level: {comparison.alpha:g}"]
    lines = _wrapped([bullet + shown(line) for line in lines] if markdown else lines)
    for task in comparison.tasks:
        settings = settings_text(task.task, task.task_settings)
        title = f"{task.label} ({settings}): {task.runs} runs"
        lines += ["", f"### {shown(title)}"] if markdown else ["", *_wrapped([title])]
        lines += _wrapped([f"{bullet}{shown(f'note: {note}')}" for note in task.notes])
        if not task.rows:
            continue
        table = [
            [row.metric, row.a, row.b, effect_text(row), p_text(row.p_holm), runs_text(row)]
            for row in task.rows
        ]
        head = ["figure", "A", "B", "A12 / diff", "p (Holm)", "runs needed"]
        cells = [[shown(cell) for cell in row] for row in table]
        text = tabulate(cells, head, tablefmt=table_format, disable_numparse=True)
        lines += ["", *text.splitlines(), ""]
        lines += _wrapped([f"{bullet}{shown(f'{row.metric}: {row.verdict}')}" for row in task.rows])
    if comparison.notes:
        lines.append("")
        lines += _wrapped([f"{bullet}{shown(f'note: {note}')}" for note in comparison.notes])
    lines += ["", *_wrapped([NOTES])]
    return "\n".join(lines)


def settings_text(task_id: str, settings: dict) -> str:
    """The settings that differ from the task's defaults, or "default settings"."""
    try:
        defaults = task_class(task_id).option_table().defaults()
    except TaskError:  # a task not installed here: every setting
        defaults = {}
    changed = {k: v for k, v in sorted(settings.items()) if k not in defaults or defaults[k] != v}
    return ", ".join(f"{k}={value_text(v)}" for k, v in changed.items()) or "default settings"


def comparison_markdown(comparison: Comparison) -> str:
    return comparison_text(comparison, "markdown")


def comparison_json(comparison: Comparison) -> str:
    return jsonsafe.dumps(comparison.to_json(), indent=2)


def effect_text(row: MetricRow) -> str:
    effect = row.result.effect
    if effect is None:
        return "-"
    return number(effect, "+.2f" if row.result.test == "Fisher exact" else ".2f")


def runs_text(row: MetricRow) -> str:
    """The runs per side a test would need, with thousands separators ("-": no effect)."""
    return "-" if row.runs_needed is None else f"{row.runs_needed:,}"


def p_text(p: float | None) -> str:
    if p is None:
        return "not run"
    return number(p, ".2g") if p >= 0.001 else "< 0.001"


def _wrapped(lines: list[str], width: int = 120) -> list[str]:
    """Prose lines longer than ``width`` broken at spaces (a word longer than a line after
    its separators: :func:`.wrapping.wrap`)."""
    out = []
    for line in lines:
        if len(line) <= width:
            out.append(line)
            continue
        indent = line[: len(line) - len(line.lstrip())]
        out += wrap(line, width, indent, indent + "  ")
    return out

"""Report renderers, found by name in one registry.

A renderer turns one kind of document into text: a function ``(document) -> str``. Two
kinds: ``report`` (report rows, :func:`.report.build`) and ``comparison`` (a
:class:`.compare.Comparison`). For reports, Built in: ``text`` (tables that fit 120 columns) and ``markdown``
(GitHub tables), both laid out from :func:`.document.document`; ``json`` (a list of rows,
strict JSON); ``html`` (a self-contained page with plots, :mod:`.html`). Register another
with :func:`register_renderer`, or from another package through the entry-point group
``neuroyard.renderers`` (the target is the function); ``neuroyard report --format NAME``
then finds it. Comparisons have ``text``, ``markdown``, ``json`` and ``html``
(:mod:`.comparison_renderers`, :mod:`.html`) and the group ``neuroyard.comparison_renderers``
(``neuroyard compare --format NAME``).
"""

from __future__ import annotations

import textwrap
from collections.abc import Callable, Sequence
from importlib.metadata import entry_points
from typing import Any

from tabulate import MIN_PADDING, tabulate

from neuroyard.core import jsonsafe
from neuroyard.core.errors import NeuroyardError
from neuroyard.reports import comparison_renderers, html
from neuroyard.reports.document import SettingsGroup, Table, document
from neuroyard.reports.markdown import escape
from neuroyard.reports.report import ReportRow

ENTRY_POINT_GROUPS = {
    "report": "neuroyard.renderers",
    "comparison": "neuroyard.comparison_renderers",
}
Renderer = Callable[[Any], str]
_RENDERERS: dict[tuple[str, str], Renderer] = {}
_WITH_LOG: set[tuple[str, str]] = set()


def register_renderer(
    name: str, with_log: bool = False, kind: str = "report"
) -> Callable[[Renderer], Renderer]:
    """Decorator: make a renderer of documents of ``kind`` available under ``name``.
    ``with_log``: the renderer reads the generation logs of the runs (the rows' or the
    comparison's records), so the records must be read from the store with them."""
    if kind not in ENTRY_POINT_GROUPS:
        raise ValueError(f"renderer kind must be one of {', '.join(ENTRY_POINT_GROUPS)}")

    def add(fn: Renderer) -> Renderer:
        _RENDERERS[kind, name] = fn
        if with_log:
            _WITH_LOG.add((kind, name))
        return fn

    return add


def needs_logs(fmt: str, kind: str = "report") -> bool:
    """Whether renderer ``fmt`` reads the generation logs of the runs."""
    return (kind, fmt) in _WITH_LOG


def renderer_names(kind: str = "report") -> list[str]:
    """Names of every renderer of ``kind``, built in and installed."""
    for ep in entry_points(group=ENTRY_POINT_GROUPS[kind]):
        if (kind, ep.name) not in _RENDERERS:
            _RENDERERS[kind, ep.name] = ep.load()
    return sorted(name for k, name in _RENDERERS if k == kind)


def check_format(fmt: str, kind: str = "report") -> None:
    """A :class:`NeuroyardError` naming the known formats when ``fmt`` is none of them."""
    names = renderer_names(kind)
    if fmt not in names:
        raise NeuroyardError(f"unknown {kind} format {fmt!r} (known: {', '.join(names)})")


def render(document: Any, fmt: str = "text", kind: str = "report") -> str:
    """``document`` (report rows, or a comparison) in format ``fmt`` (a renderer name)."""
    check_format(fmt, kind)
    return _RENDERERS[kind, fmt](document)


WIDTH = 120  # columns of the text report
_MIN_WRAP = 8  # a text column is wrapped to no fewer columns than this
_GAP = 2  # spaces between the columns of a text table (tabulate's "simple" format)


def _width(text: str) -> int:
    return max((len(line) for line in text.splitlines()), default=0)


def _fit(table: Table) -> tuple[list[int | None], list[int | None]]:
    """(cell widths, header widths) at which to wrap each column so that the text table
    fits :data:`WIDTH` (None: as wide as it needs). The widest text column is narrowed
    first; numbers are never wrapped. A column is as wide as its widest cell and at least
    its header plus tabulate's padding of headers."""
    cells = [max((_width(row[i]) for row in table.body), default=0) for i in range(len(table.head))]
    heads = [_width(h) + MIN_PADDING for h in table.head]
    natural = [max(c, h) for c, h in zip(cells, heads, strict=True)]
    fitted = list(natural)
    text = [i for i, numeric in enumerate(table.numeric) if not numeric]
    while text and sum(fitted) + _GAP * (len(fitted) - 1) > WIDTH:
        widest = max(text, key=lambda i: fitted[i])
        if fitted[widest] <= _MIN_WRAP:
            break
        fitted[widest] -= 1
    return (
        [w if w < c else None for w, c in zip(fitted, cells, strict=True)],
        [w - MIN_PADDING if w < h else None for w, h in zip(fitted, heads, strict=True)],
    )


def _table(table: Table, fmt: str) -> list[str]:
    """The lines of one table: caption, table, its footnotes."""
    align = ["right" if numeric else "left" for numeric in table.numeric]
    if fmt == "markdown":
        head = [escape(h) for h in table.head]
        body = [[escape(c) for c in row] for row in table.body]
        out = [f"#### {escape(table.caption)}", ""] if table.caption else []
        out.append(tabulate(body, head, "github", disable_numparse=True, colalign=align))
        if table.notes:
            out += ["", *(f"- [{n}] {escape(text)}" for n, text in table.notes)]
        return out
    widths, head_widths = _fit(table)
    out = [*_wrap(table.caption), ""] if table.caption else []
    grid = tabulate(
        table.body,
        table.head,
        "simple",
        disable_numparse=True,
        colalign=align,
        maxcolwidths=widths,
        maxheadercolwidths=head_widths,
    )
    out += grid.splitlines()
    if table.notes:
        out.append("")
        for n, text in table.notes:
            out += _wrap(f"[{n}] {text}", indent="  ", hang="      ")
    return out


def _wrap(text: str, indent: str = "", hang: str | None = None) -> list[str]:
    """A line of prose wrapped to :data:`WIDTH` (continuation lines indented by ``hang``)."""
    return textwrap.wrap(
        text,
        WIDTH,
        initial_indent=indent,
        subsequent_indent=indent if hang is None else hang,
        break_on_hyphens=False,
    ) or [indent.rstrip()]


def _heading(title: str, fmt: str) -> list[str]:
    return ["", f"### {title}" if fmt == "markdown" else title, ""]


def _settings_lines(groups: Sequence[SettingsGroup], fmt: str) -> list[str]:
    """One line per setting, indented under its task or evolver (and its part)."""
    out: list[str] = []
    for group in groups:
        out += _item(group.heading + ":", 0, fmt)
        for caption, pairs in group.parts:
            level = 1
            if caption:
                out += _item(caption + (":" if pairs else ""), 1, fmt)
                level = 2
            for name, value in pairs:
                out += _item(f"{name} = {value}", level, fmt)
    return out


def _item(text: str, level: int, fmt: str) -> list[str]:
    if fmt == "markdown":
        return ["  " * level + "- " + escape(text)]
    indent = "  " * (level + 1)
    return _wrap(text, indent=indent, hang=indent + "    ")


def _document(rows: Sequence[ReportRow], fmt: str) -> str:
    """The text or Markdown report: tables, then settings and notes."""
    if not rows:
        return "no runs in the store"
    doc = document(rows)
    parts: list[str] = []
    for section in (doc.summary, doc.metrics, doc.failures, doc.published):
        if section is None:
            continue
        parts += _heading(section.title, fmt)
        for k, table in enumerate(section.tables):
            parts += ([""] if k else []) + _table(table, fmt)
    parts += _heading("Settings the runs were measured under", fmt)
    parts += _settings_lines(doc.settings, fmt)
    parts += _heading("Notes", fmt)
    for note in doc.notes:
        parts += [f"- {escape(note)}"] if fmt == "markdown" else _wrap(note, "- ", "  ")
    return "\n".join(parts[1:])  # no blank line before the first heading


@register_renderer("text")
def render_text(rows: Sequence[ReportRow]) -> str:
    return _document(rows, "text")


@register_renderer("markdown")
def render_markdown(rows: Sequence[ReportRow]) -> str:
    return _document(rows, "markdown")


@register_renderer("json")
def render_json(rows: Sequence[ReportRow]) -> str:
    return jsonsafe.dumps([r.to_json() for r in rows], indent=2)


render_html = register_renderer("html", with_log=True)(html.render_html)

register_renderer("text", kind="comparison")(comparison_renderers.comparison_text)
register_renderer("markdown", kind="comparison")(comparison_renderers.comparison_markdown)
register_renderer("json", kind="comparison")(comparison_renderers.comparison_json)
register_renderer("html", with_log=True, kind="comparison")(html.render_comparison_html)

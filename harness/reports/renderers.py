"""Report renderers, found by name in one registry.

A renderer turns one kind of document into text: a function ``(document) -> str``. Two
kinds: ``report`` (report rows, :func:`.report.build`) and ``comparison`` (a
:class:`.compare.Comparison`). For reports, built in: ``text`` (tables that fit 120
columns; cells break at spaces and separators, never inside a word: :mod:`.wrapping`) and
``markdown`` (GitHub tables), both laid out from :func:`.document.document`; ``json`` (a
list of rows, strict JSON, with the labels the tables show); ``html`` (a self-contained
page with plots, :mod:`.html`). Register another
with :func:`register_renderer`, or from another package through the entry-point group
``neuroyard.renderers`` (the target is the function); ``neuroyard report --format NAME``
then finds it. Comparisons have ``text``, ``markdown``, ``json`` and ``html``
(:mod:`.comparison_renderers`, :mod:`.html`) and the group ``neuroyard.comparison_renderers``
(``neuroyard compare --format NAME``).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from importlib.metadata import entry_points
from typing import Any

from tabulate import MIN_PADDING, tabulate

from neuroyard.core import jsonsafe
from neuroyard.core.errors import NeuroyardError
from neuroyard.reports import comparison_renderers, html
from neuroyard.reports.document import SettingsGroup, Table, document, row_labels, see_above
from neuroyard.reports.markdown import escape
from neuroyard.reports.report import ReportRow
from neuroyard.reports.wrapping import pieces, wrap

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


def _longest_piece(text: str) -> int:
    """The longest stretch of ``text`` that :func:`.wrapping.wrap` never breaks."""
    return max((len(p) for word in text.split() for p in pieces(word)), default=0)


def _fit(table: Table) -> tuple[list[int | None], list[int | None]]:
    """(cell widths, header widths) at which to wrap each column so that the text table
    fits :data:`WIDTH` (None: as wide as it needs). The widest text column that can still
    be narrowed is narrowed first, down to :data:`_MIN_WRAP` or its longest unbreakable
    piece (:mod:`.wrapping`: cells break at spaces and separators, never inside a word);
    numbers are never wrapped. A column is as wide as its widest cell and at least its
    header plus tabulate's padding of headers."""
    columns = range(len(table.head))
    cells = [max((_width(row[i]) for row in table.body), default=0) for i in columns]
    heads = [_width(h) + MIN_PADDING for h in table.head]
    natural = [max(c, h) for c, h in zip(cells, heads, strict=True)]
    floor = [
        max(
            _MIN_WRAP,
            _longest_piece(table.head[i]) + MIN_PADDING,
            *(_longest_piece(row[i]) for row in table.body),
        )
        for i in columns
    ]
    fitted = list(natural)
    text = [i for i, numeric in enumerate(table.numeric) if not numeric]
    while sum(fitted) + _GAP * (len(fitted) - 1) > WIDTH:
        narrower = [i for i in text if fitted[i] > floor[i]]
        if not narrower:
            break
        fitted[max(narrower, key=lambda i: fitted[i])] -= 1
    return (
        [w if w < c else None for w, c in zip(fitted, cells, strict=True)],
        [w - MIN_PADDING if w < h else None for w, h in zip(fitted, heads, strict=True)],
    )


def _wrapped(text: str, width: int | None) -> str:
    """A table cell broken into lines of at most ``width`` (None: as it is)."""
    return text if width is None else "\n".join(wrap(text, width))


def _table(table: Table, fmt: str) -> list[str]:
    """The lines of one table: caption, table, its footnotes."""
    align = ["right" if numeric else "left" for numeric in table.numeric]
    if fmt == "markdown":
        head = [escape(h) for h in table.head]
        body = [[escape(c) for c in row] for row in table.body]
        out = [f"#### {escape(table.caption)}", ""] if table.caption else []
        out.append(tabulate(body, head, "github", disable_numparse=True, colalign=align))
        if table.notes or table.earlier:
            out += ["", *(f"- [{n}] {escape(text)}" for n, text in table.notes)]
            out += [f"- {escape(see_above(table.earlier))}"] if table.earlier else []
        return out
    widths, head_widths = _fit(table)
    out = [*_wrap(table.caption), ""] if table.caption else []
    grid = tabulate(
        [[_wrapped(c, w) for c, w in zip(row, widths, strict=True)] for row in table.body],
        [_wrapped(h, w) for h, w in zip(table.head, head_widths, strict=True)],
        "simple",
        disable_numparse=True,
        colalign=align,
    )
    out += grid.splitlines()
    if table.notes or table.earlier:
        out.append("")
        for n, text in table.notes:
            out += _wrap(f"[{n}] {text}", indent="  ", hang="      ")
        if table.earlier:
            out += _wrap(see_above(table.earlier), indent="  ", hang="      ")
    return out


def _wrap(text: str, indent: str = "", hang: str | None = None) -> list[str]:
    """A line of prose wrapped to :data:`WIDTH` (continuation lines indented by ``hang``)."""
    return wrap(text, WIDTH, indent, hang)


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
    """The rows as a JSON list, each with the labels the other formats show it under
    (``evolver_label``, ``task_label``) beside its ids."""
    return jsonsafe.dumps(
        [
            {**r.to_json(), "evolver_label": evolver, "task_label": task}
            for r, (evolver, task) in zip(rows, row_labels(rows), strict=True)
        ],
        indent=2,
    )


render_html = register_renderer("html", with_log=True)(html.render_html)

register_renderer("text", kind="comparison")(comparison_renderers.comparison_text)
register_renderer("markdown", kind="comparison")(comparison_renderers.comparison_markdown)
register_renderer("json", kind="comparison")(comparison_renderers.comparison_json)
register_renderer("html", with_log=True, kind="comparison")(html.render_comparison_html)

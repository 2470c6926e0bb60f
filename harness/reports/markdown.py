"""Text in Markdown, shown as written: :func:`escape` for every table cell, heading and list
item of a Markdown report or comparison, whose text holds names, reasons and settings that
users choose (an evolver named ``<script>`` is shown as that text, not read as markup).

The rules are CommonMark's (https://spec.commonmark.org, "Backslash escapes": any ASCII
punctuation after a backslash is a literal character) and GitHub's table extension (a
``|`` ends a cell). A line break becomes a space (a cell or an item is one line). A
backslash goes before every character that can start markup in a line of text: ``\\``,
`````, ``*``, ``<`` and ``>`` (raw HTML and autolinks), ``&`` (entities), ``|``, ``~``
(strikethrough), ``#``, and a ``[`` or ``]`` (links and images). Left as they are, so that
the text reads as it does in the text report:

* ``_`` between two letters or digits (``mean_evaluations``): CommonMark never opens or
  closes emphasis there;
* a bracketed word of letters and digits (the report's footnote markers ``[1]``, the hashes
  ``[1a2b3c]``) that no ``(`` or ``[`` follows (no inline or full reference link) and, at
  the start of the text, no ``:`` (no link reference definition): a shortcut link needs a
  definition, and none can be made.
"""

from __future__ import annotations

import re

_BRACKETED = r"\[[^\W_]+\]"  # letters and digits in brackets
_KEPT = rf"(?<=.){_BRACKETED}(?![(\[])|{_BRACKETED}(?![(\[:])"
_INTRAWORD = r"(?<=[^\W_])_(?=[^\W_])"
_MARKUP = re.compile(rf"({_KEPT}|{_INTRAWORD})|[\\`*<>&|~#\[\]_]")


def escape(text: str) -> str:
    """``text`` as one line of Markdown that shows it literally (see the module docstring).

    Example:
        >>> print(escape("<script>*bold* [x](y) a_b _c_ NEAT [1] | z"))
        \\<script\\>\\*bold\\* \\[x\\](y) a_b \\_c\\_ NEAT [1] \\| z
    """
    flat = text.replace("\r\n", " ").replace("\r", " ").replace("\n", " ")
    return _MARKUP.sub(lambda m: m[0] if m[1] else "\\" + m[0], flat)

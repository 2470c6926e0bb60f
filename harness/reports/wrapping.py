"""Where text may break across lines: at spaces, and inside a word only after a run of
:data:`SEPARATORS` that stands between two letters, digits or underscores
(``neat:Novelty``, ``maze:mazes/hard.toml``, ``plugins_for_tests``, ``hill-climber``):
never between two letters or digits, never inside markup-like text such as ``</b>``.

:func:`wrap` breaks text for the text report (table cells, captions, notes); the HTML
report marks the same places with ``<wbr>`` (:func:`pieces`), so a browser breaks a long
name there and nowhere else.
"""

from __future__ import annotations

import itertools
import re

SEPARATORS = ":./_-"
# a run of separators between two word characters: a word may break after it
_BREAK = re.compile(rf"(?<=\w)[{re.escape(SEPARATORS)}]+(?=\w)")


def pieces(word: str) -> list[str]:
    """``word`` cut after each run of separators between word characters
    (``"plugins_for_tests:Constant"`` gives ``["plugins_", "for_", "tests:", "Constant"]``);
    joined, the pieces are ``word``."""
    cuts = [0, *(m.end() for m in _BREAK.finditer(word)), len(word)]
    return [word[a:b] for a, b in itertools.pairwise(cuts) if b > a]


def wrap(text: str, width: int, indent: str = "", hang: str | None = None) -> list[str]:
    """``text`` broken into lines of at most ``width`` characters, the first starting with
    ``indent``, the others with ``hang`` (default ``indent``). Lines break at spaces; a word
    longer than a line breaks after its separators; a piece with none that is still longer
    than a line stays whole, so that line is longer than ``width``. Returns at least one
    line (``indent`` alone, right-stripped, for empty text)."""
    hang = indent if hang is None else hang
    lines: list[str] = []
    line = indent
    fresh = True  # nothing but the line's indent yet
    for word in text.split():
        room = width - len(hang)
        parts = pieces(word) if len(word) > room else [word]
        for k, part in enumerate(parts):
            gap = " " if k == 0 and not fresh else ""
            if not fresh and len(line) + len(gap) + len(part) > width:
                lines.append(line)
                line, gap = hang, ""
            line += gap + part
            fresh = False
    lines.append(line if not fresh else indent.rstrip())
    return lines

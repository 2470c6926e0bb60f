"""Strict JSON for everything neuroyard writes, with one rule for non-finite numbers.

JSON has no NaN or infinity, and strict parsers reject the ``NaN``/``Infinity`` tokens that
Python's :mod:`json` writes by default. The rule: a non-finite number is written as
``null``, and the nearest enclosing JSON object gets a member ``"non_finite_numbers"`` (a
reserved key) that maps the number's path inside that object (keys and list positions
joined by ``.``) to ``"nan"``, ``"inf"`` or ``"-inf"``::

    {"fitness": NaN, "behaviour": [1.0, Infinity]}
    -> {"fitness": null, "behaviour": [1.0, null],
        "non_finite_numbers": {"fitness": "nan", "behaviour.1": "inf"}}

:func:`loads` reverses it, so a document written by :func:`dumps` reads back with the same
Python values. A non-finite number outside any object (a bare list of numbers) becomes
``null`` with no note.

**Nesting.** Arrays and objects may nest at most :data:`MAX_DEPTH` levels, in what is
read (:func:`parse`, :func:`loads`) and in what is written (:func:`dumps`), so that
anything neuroyard writes it reads back. Python's :mod:`json` parses and writes nesting
recursively and raises ``RecursionError`` somewhere near ``sys.getrecursionlimit()``
(1,000) levels, less the calls already on the stack; a deeper document is a
:class:`TooDeep` here instead, a ``ValueError`` with a one-line message. (orjson refuses
more than 1,024 levels with its ``JSONDecodeError``, "depth limit exceeded".)
"""

from __future__ import annotations

import json
import math
from typing import Any

NOTE = "non_finite_numbers"
# most levels of arrays and objects nested in one document (ours: neuroyard's own documents
# nest fewer than 10; far below the recursion limit that json and recursive readers reach)
MAX_DEPTH = 100
_CONTAINERS = (dict, list, tuple)
_NAMES = {"nan": math.nan, "inf": math.inf, "-inf": -math.inf}


def _name(x: float) -> str:
    return "nan" if math.isnan(x) else ("inf" if x > 0 else "-inf")


def encode(value: Any) -> Any:
    """``value`` with the rule applied: plain JSON values only, every number finite."""
    return _encode(value, None, "")


def _encode(value: Any, notes: dict[str, str] | None, path: str) -> Any:
    if isinstance(value, float) and not math.isfinite(value):
        if notes is not None:
            notes[path] = _name(value)
        return None
    if isinstance(value, dict):
        own: dict[str, str] = {}
        out = {str(k): _encode(v, own, str(k)) for k, v in value.items() if k != NOTE}
        if own:
            out[NOTE] = own
        return out
    if isinstance(value, list | tuple):
        prefix = path + "." if path else ""
        return [_encode(v, notes, f"{prefix}{k}") for k, v in enumerate(value)]
    return value


def decode(value: Any) -> Any:
    """Reverse :func:`encode`: put the noted non-finite numbers back, drop the notes."""
    if isinstance(value, list):
        return [decode(v) for v in value]
    if not isinstance(value, dict):
        return value
    notes = value.get(NOTE) if isinstance(value.get(NOTE), dict) else {}
    out = {k: decode(v) for k, v in value.items() if k != NOTE}
    for path, name in notes.items():
        _put(out, path, _NAMES.get(name, math.nan))
    return out


def _put(doc: dict[str, Any], path: str, x: float) -> None:
    """Set ``x`` at ``path``: a key of ``doc`` followed by list positions (``key.3.1``); a key
    may itself hold dots, so the longest key that matches is taken."""
    for key in sorted(doc, key=len, reverse=True):
        if path != key and not path.startswith(key + "."):
            continue
        positions = [int(p) for p in path[len(key) + 1 :].split(".") if p.isdigit()]
        if path != key and len(positions) != path[len(key) + 1 :].count(".") + 1:
            continue  # not a key followed by list positions
        if not positions:
            doc[key] = x
            return
        target = doc[key]
        for k in positions[:-1]:
            if not isinstance(target, list) or k >= len(target):
                return
            target = target[k]
        if isinstance(target, list) and positions[-1] < len(target):
            target[positions[-1]] = x
        return


class TooDeep(ValueError):
    """A document whose arrays and objects nest more than :data:`MAX_DEPTH` levels."""

    def __init__(self) -> None:
        super().__init__(
            f"arrays and objects nested more than {MAX_DEPTH} levels deep (the most "
            "neuroyard reads)"
        )


def check_depth(value: Any) -> None:
    """Raise :class:`TooDeep` when lists, tuples and dicts nest in ``value`` more than
    :data:`MAX_DEPTH` levels (a scalar is level 0, ``[1]`` level 1); a walk level by
    level, without recursion."""
    level = [value] if isinstance(value, _CONTAINERS) else []
    depth = 0
    while level:
        depth += 1
        if depth > MAX_DEPTH:
            raise TooDeep()
        level = [
            child
            for item in level
            for child in (item.values() if isinstance(item, dict) else item)
            if isinstance(child, _CONTAINERS)
        ]


def parse(text: str | bytes) -> Any:
    """``json.loads(text)`` (which reads ``NaN`` and ``Infinity`` tokens), with nesting
    limited to :data:`MAX_DEPTH` levels.

    Raises:
        json.JSONDecodeError: the text is not JSON.
        TooDeep: it nests too deeply (a ``ValueError`` too)."""
    try:
        value = json.loads(text)
    except RecursionError:
        raise TooDeep() from None
    opening = (b"[", b"{") if isinstance(text, bytes) else ("[", "{")
    if sum(text.count(c) for c in opening) > MAX_DEPTH:  # else it cannot nest deeper
        check_depth(value)
    return value


def dumps(value: Any, **kwargs: Any) -> str:
    """``json.dumps`` of ``encode(value)``, refusing anything a strict parser would, and a
    value nested more than :data:`MAX_DEPTH` levels (:class:`TooDeep`)."""
    check_depth(value)
    return json.dumps(encode(value), allow_nan=False, **kwargs)


def loads(text: str | bytes) -> Any:
    """Parse strict JSON written by :func:`dumps` and restore its non-finite numbers; a
    ``ValueError`` for text that is not JSON or nests too deeply (:func:`parse`)."""
    value = parse(text)
    note = NOTE.encode() if isinstance(text, bytes) else NOTE
    return decode(value) if note in text else value  # without a note, nothing to restore

"""Numbers as text, never as a negative zero: :func:`number`.

Python writes ``-0.0``, and a small negative number that rounds to zero, as ``-0``
(``-0.00``, ``-0%``); a reader then looks for a meaning in a sign that has none. Every
number neuroyard formats for a reader goes through :func:`number`, which adds the ``z``
option of Python's format mini-language (PEP 682: a negative zero becomes zero after
rounding to the format's precision).
"""

from __future__ import annotations

import re
from numbers import Integral, Real
from typing import Any

# [[fill]align][sign] of a format specification: the ``z`` option goes right after them
_HEAD = re.compile(r"^(?:.?[<>=^])?[-+ ]?", re.DOTALL)


def number(value: float, spec: str = "g") -> str:
    """``value`` formatted by ``spec`` (Python's format mini-language, as ``format`` takes
    it, without ``z``), with no negative zero. An integer has no negative zero and is
    formatted as it is.

    Example:
        >>> number(-0.0, ".6g"), number(-0.004, ",.2f"), number(-0.001, ".0%")
        ('0', '0.00', '0%')
        >>> number(-1.5, "+.1f"), number(1234, ",d")
        ('-1.5', '1,234')
    """
    if isinstance(value, Integral):
        return format(value, spec)
    cut = _HEAD.match(spec).end()  # every spec matches (all of the pattern is optional)
    return format(value, f"{spec[:cut]}z{spec[cut:]}")


def value_text(value: Any) -> str:
    """A value as text: a real number that is not an integer (a Python or numpy float) by
    :func:`number` to six significant digits, anything else as ``str`` gives it.

    Example:
        >>> value_text(-0.0), value_text(0.25), value_text(500.0), value_text("CartPole-v1")
        ('0', '0.25', '500', 'CartPole-v1')
    """
    if isinstance(value, Real) and not isinstance(value, Integral):
        return number(value, ".6g")
    return str(value)

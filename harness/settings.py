"""Type rule shared by every settings table (task settings, evolver configurations)."""

from __future__ import annotations

from typing import Any


def matches_default(default: Any, value: Any) -> bool:
    """True when ``value`` may replace ``default``: same type, except that an int may stand
    for a float; a bool is never a number."""
    if isinstance(default, bool):
        return isinstance(value, bool)
    if isinstance(default, int):
        return isinstance(value, int) and not isinstance(value, bool)
    if isinstance(default, float):
        return isinstance(value, int | float) and not isinstance(value, bool)
    return isinstance(value, type(default))

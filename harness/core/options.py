"""Type rule shared by every settings table (task settings, evolver configurations), and
the option tables of the small reference evolvers."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
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


@dataclass(frozen=True)
class Option:
    """One option of an evolver: its default (which gives its type: an int may stand for a
    float, a bool is never a number), whether None is allowed, and its range as a test with
    the words an error shows (``rule``, e.g. ``">= 1"``)."""

    default: Any
    rule: str = ""
    valid: Callable[[Any], bool] = field(default=lambda value: True, compare=False)
    kind: type | None = None  # the type when the default is None
    nullable: bool = False


def resolve_options(options: Mapping[str, Option], given: Mapping[str, Any]) -> dict[str, Any]:
    """Every option with its value: given or default. A ``ValueError`` names the option for
    an unknown key, a value of the wrong type, or one that breaks its rule."""
    unknown = sorted(set(given) - set(options))
    if unknown:
        known = ", ".join(sorted(options))
        raise ValueError(f"unknown option {unknown[0]!r} (known: {known})")
    values = {}
    for name, option in options.items():
        value = given.get(name, option.default)
        example = option.default if option.kind is None else option.kind()
        if value is None and option.nullable:
            values[name] = None
            continue
        if not matches_default(example, value):
            expected = type(example).__name__ + (" or none" if option.nullable else "")
            raise ValueError(f"option {name!r} must be {expected}, got {value!r}")
        value = float(value) if isinstance(example, float) else value
        if not option.valid(value):
            raise ValueError(f"option {name!r} must be {option.rule}, got {value!r}")
        values[name] = value
    return values

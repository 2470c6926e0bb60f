"""Checks of what a store holds against the record classes: a run record (the ``record``
JSON of a ``runs`` row) and a row of its generation log, before they become a
:class:`~.runs.RunRecord` and its :class:`~.runs.GenerationLog`.

The rules come from the classes' own fields and type hints, so a field added to a class is
checked with no change here: the document must be a JSON object; every field without a
default must be there; no name may be there that is not a field (the record's ``solved``,
derived from ``status``, is allowed); and every value must have the field's type. Types:
``int`` is a whole number (not a bool), ``float`` any number (an int too, not a bool),
``str`` text, ``bool`` true or false, ``X | None`` either, ``dict[str, X]`` an object whose
values are X, ``list[X]`` a list of X, ``Any`` anything. A broken document is a
:class:`RecordProblem` (a ``ValueError``) whose one-line message names the field (its path
inside the value, ``timing.wall``, ``behaviours.3.0``) and what is wrong; the store adds the
run and the store.
"""

from __future__ import annotations

import dataclasses
import reprlib
import types
import typing
from collections.abc import Callable, Mapping
from functools import cache
from typing import Any

from neuroyard.records.runs import GenerationLog, RunRecord

_SHOWN = reprlib.Repr()
_SHOWN.maxstring = _SHOWN.maxother = 40
_NOUNS = {
    int: "a whole number",
    float: "a number",
    str: "text",
    bool: "true or false",
    type(None): "null",
}
DERIVED = {"solved": bool}  # fields of a record's JSON form that its class derives


class RecordProblem(ValueError):
    """A stored document that does not fit its record class; the message says where."""


def check_record(doc: Any) -> None:
    """Check the JSON form of a run record as the store keeps it: every field of
    :class:`~.runs.RunRecord` but ``log``, which the store keeps in its own table.

    Raises:
        RecordProblem: the first thing wrong, in one line."""
    _check(doc, RunRecord, "it", skip=frozenset({"log"}))


def check_generation(row: Mapping[str, Any]) -> None:
    """Check one row of a generation log (the columns of the ``generations`` table by the
    names of :class:`~.runs.GenerationLog`, ``stats`` and ``champion_test`` parsed).

    Raises:
        RecordProblem: the first thing wrong, in one line."""
    _check(row, GenerationLog, "it")


def _check(doc: Any, cls: type, what: str, skip: frozenset[str] = frozenset()) -> None:
    if not isinstance(doc, dict):
        raise RecordProblem(f"{what} is {_noun_of(doc)}, not a JSON object")
    checkers, required = _fields(cls, skip)
    unknown = doc.keys() - checkers.keys()
    if unknown:
        raise RecordProblem(f"unknown field {_SHOWN.repr(min(unknown))}")
    missing = required - doc.keys()
    if missing:
        raise RecordProblem(f"field {min(missing)!r} is missing")
    for name, check in checkers.items():
        bad = check(doc[name]) if name in doc else None
        if bad is not None:
            path, expected, found = bad
            where = ".".join([name, *reversed(path)])
            raise RecordProblem(f"field {where!r} must be {expected}, got {_SHOWN.repr(found)}")


# A checker takes a value and gives None when it has the type, else (the path to the value
# that has not, innermost first; what was expected there; that value): no text is made for
# a value that fits, since a store is read by checking every value of every record.
Bad = tuple[list[str], str, Any]
Checker = Callable[[Any], Bad | None]


@cache
def _fields(cls: type, skip: frozenset[str]) -> tuple[dict[str, Checker], frozenset[str]]:
    """A checker for each field of ``cls`` but those of ``skip`` (and for the record's
    derived fields), and the names of those without a default."""
    hints = typing.get_type_hints(cls)
    fields = [f for f in dataclasses.fields(cls) if f.name not in skip]
    checkers = {f.name: _checker(hints[f.name]) for f in fields}
    if cls is RunRecord:
        checkers.update({name: _checker(kind) for name, kind in DERIVED.items()})
    required = frozenset(
        f.name
        for f in fields
        if f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING
    )
    return checkers, required


@cache
def _checker(hint: Any) -> Checker:
    """The checker of values of type ``hint`` (see the module docstring)."""
    origin, args = typing.get_origin(hint), typing.get_args(hint)
    if hint is Any:
        return lambda value: None
    if origin in (typing.Union, types.UnionType):
        return _either([_checker(arg) for arg in args], " or ".join(map(_noun, args)))
    if origin is dict:
        return _container(dict, _checker(args[1]), "an object")
    if origin is list:
        return _container(list, _checker(args[0]), "a list")
    fits = _SCALARS.get(hint, lambda value: isinstance(value, hint))
    noun = _noun(hint)
    return lambda value: None if fits(value) else ([], noun, value)


def _either(choices: list[Checker], noun: str) -> Checker:
    def check(value: Any) -> Bad | None:
        if any(choice(value) is None for choice in choices):
            return None
        return [], noun, value

    return check


def _container(kind: type, inner: Checker, noun: str) -> Checker:
    """A dict's values, or a list's items, each checked by ``inner``."""

    def check(value: Any) -> Bad | None:
        if not isinstance(value, kind):
            return [], noun, value
        items = value.items() if kind is dict else enumerate(value)
        for key, item in items:
            bad = inner(item)
            if bad is not None:
                bad[0].append(str(key))
                return bad
        return None

    return check


# whole numbers, numbers and true/false by exact type: a bool is not a number here
_SCALARS: dict[Any, Callable[[Any], bool]] = {
    int: lambda value: type(value) is int,
    float: lambda value: type(value) is float or type(value) is int,
    bool: lambda value: type(value) is bool,
    type(None): lambda value: value is None,
}


def _noun(hint: Any) -> str:
    origin = typing.get_origin(hint)
    if origin is dict:
        return "an object"
    if origin is list:
        return "a list"
    return _NOUNS.get(hint, getattr(hint, "__name__", str(hint)))


def _noun_of(value: Any) -> str:
    """What a JSON value is, in words (``a list``, ``text``)."""
    if isinstance(value, dict):
        return "an object"
    if isinstance(value, list):
        return "a list"
    return _NOUNS.get(type(value), type(value).__name__)

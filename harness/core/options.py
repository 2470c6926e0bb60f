"""One declarative settings mechanism for tasks and evolvers alike.

Each setting is declared once, as an :class:`Option`: its name, default, type (given by the
default, or ``kind`` when the default is None), allowed range or choices, unit, meaning and
the source of its default. An :class:`OptionTable` of them is used for everything else:

* validation (:meth:`OptionTable.resolve`): unknown names, wrong types and values outside
  the range are a :class:`~.errors.SettingError` that names the owner, the option, the value
  and what is allowed;
* the effective-settings record: ``resolve`` returns every option with its value, given or
  default, so a run records all of them;
* listing (:meth:`OptionTable.describe`): ``neuroyard tasks`` and ``neuroyard evolvers``;
* the identity of a file's content: an option with ``digest_of`` holds the SHA-256 of the
  file that another option names, filled in by ``resolve``, so a configuration hash or run
  key built from the resolved values changes when the file does, and a stored digest that
  no longer matches the file is refused.

Types: an int may stand for a float (and becomes a float); a bool is never a number; a whole
number must fit in 64 bits (within ``-2**63..2**63 - 1``, numpy's ``int64`` and SQLite's
``INTEGER``), whatever the option's own range. A value given as text for a non-text option
(``key=value`` on a command line or in a file) is read as a TOML value (``"3"`` -> 3,
``"true"`` -> True). An option renamed keeps its former names in ``aliases``, so stored
configurations that use them still resolve.
"""

from __future__ import annotations

import hashlib
import math
import sys
import tomllib
from collections.abc import Container, Iterable, Iterator, Mapping
from dataclasses import dataclass
from typing import Any

from neuroyard.core import jsonsafe
from neuroyard.core.errors import SettingError
from neuroyard.core.inputfile import read_bytes

# the whole numbers an int option may hold, whatever its own range: a signed 64-bit integer
# (numpy's int64, SQLite's INTEGER), which is where option values end up
WHOLE_MIN, WHOLE_MAX = -(2**63), 2**63 - 1
MAX_FLOAT = sys.float_info.max  # a larger int given for a float option has no float


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
    """One setting of a task or an evolver, declared once: what it is and what is allowed.

    The type of the value is the type of ``default`` (``kind`` when the default is None):
    an int may stand for a float (and becomes a float), a bool is never a number, a number
    must be finite, a whole number must fit in 64 bits (:data:`WHOLE_MIN` to
    :data:`WHOLE_MAX`) whatever range the option allows, and a value given as text for a
    non-text option is read as a TOML value (``"3"`` is 3, ``"true"`` is True). An
    :class:`OptionTable` of options validates, fills in defaults and lists them.

    Args:
        name: the option's name, as given (``population``, ``pole_length``).
        default: the value when none is given; its type is the option's type. None makes
            the option optional (then ``kind`` gives the type).
        help: what the option means, in a phrase (shown by ``neuroyard tasks`` and
            ``neuroyard evolvers``).
        unit: the unit of the value (``"s"``, ``"kg"``); empty for counts and plain
            numbers.
        source: where the default comes from: a paper and section, ``common practice``,
            ``from memory`` or ``ours``.
        low: the smallest allowed value (inclusive), or None.
        high: the largest allowed value (inclusive), or None.
        above: an exclusive lower bound (the value must be ``> above``), or None.
        choices: the allowed values of a text option; empty when any value of the type
            within the bounds is allowed.
        kind: the type when ``default`` is None (``str``, ``int``, ``float``, ``bool``).
        aliases: former names of the option, still read (stored configurations use them).
        digest_of: the name of a path option of the same table; this option then holds the
            SHA-256 (64 hex digits) of that file's bytes, filled in on resolving (None while
            the path is None), and a given digest the file no longer has is refused.

    Example:
        >>> from neuroyard import Option
        >>> length = Option("length", 0.5, "half the pole's length", unit="m",
        ...                 source="ours", above=0.0, high=10.0)
        >>> length.type_name, length.rule
        ('number', '> 0 and <= 10')
        >>> length.check(2, "task demo-v1", "setting")  # an int stands for a float
        2.0
        >>> length.check(-1.0, "task demo-v1", "setting")
        Traceback (most recent call last):
        ...
        neuroyard.core.errors.SettingError: task demo-v1: setting 'length' must be > 0 and <= 10, got -1.0
    """

    name: str
    default: Any
    help: str = ""
    unit: str = ""
    source: str = ""
    low: float | None = None
    high: float | None = None
    above: float | None = None
    choices: tuple[Any, ...] = ()
    kind: type | None = None
    aliases: tuple[str, ...] = ()
    digest_of: str = ""

    @property
    def type_name(self) -> str:
        kind = self.kind if self.default is None else type(self.default)
        name = "number" if kind is float else "whole number" if kind is int else kind.__name__
        return name + (" or none" if self.default is None else "")

    @property
    def rule(self) -> str:
        """The allowed values in words (empty: any value of the type)."""
        if self.choices:
            return "one of " + ", ".join(str(c) for c in self.choices)
        parts = []
        if self.above is not None:
            parts.append(f"> {self.above:g}")
        if self.low is not None and self.high is not None:
            parts.append(f"within {self.low:g}..{self.high:g}")
        elif self.low is not None:
            parts.append(f">= {self.low:g}")
        elif self.high is not None:
            parts.append(f"<= {self.high:g}")
        return " and ".join(parts)

    def check(
        self, value: Any, owner: str, noun: str, error: type[Exception] = SettingError
    ) -> Any:
        """``value`` validated and coerced (int -> float for a float option); ``error``
        names the owner, the option, the value and what is allowed."""
        if isinstance(value, str) and not isinstance(self.default, str) and self.kind is not str:
            value = _parse_text(value)
        if value is None and self.default is None:
            return None
        example = self.default if self.default is not None else self.kind()
        if not matches_default(example, value):
            raise error(f"{owner}: {noun} {self.name!r} must be a {self.type_name}, got {value!r}")
        if isinstance(example, float):
            if not isinstance(value, float) and abs(value) > MAX_FLOAT:  # no float holds it
                value = math.inf if value > 0 else -math.inf
            value = float(value)
        if not self._allowed(value):
            allowed = self.rule or "finite"
            raise error(f"{owner}: {noun} {self.name!r} must be {allowed}, got {_shown(value)}")
        if type(value) is int and not WHOLE_MIN <= value <= WHOLE_MAX:
            raise error(
                f"{owner}: {noun} {self.name!r} must fit in 64 bits (-2**63..2**63 - 1), "
                f"got {_shown(value)}"
            )
        return value

    def _allowed(self, value: Any) -> bool:
        if self.choices:
            return value in self.choices
        if isinstance(value, bool) or not isinstance(value, int | float):
            return True
        return (
            (isinstance(value, int) or math.isfinite(value))
            and (self.above is None or value > self.above)
            and (self.low is None or value >= self.low)
            and (self.high is None or value <= self.high)
        )

    def describe(self) -> dict[str, Any]:
        """The option as a listing row (JSON values)."""
        return {
            "name": self.name,
            "default": self.default,
            "type": self.type_name,
            "allowed": self.rule,
            "unit": self.unit,
            "help": self.help,
            "source": self.source,
            "aliases": list(self.aliases),
        }


class OptionTable:
    """The options of one owner (a task or an evolver), in declared order.

    It validates a given configuration and fills in the defaults (:meth:`resolve`), and
    lists the options (:meth:`describe`). An evolver declares its table as a class
    attribute, ``options = OptionTable("evolver NAME", [Option(...), ...])``, and resolves
    the keyword arguments of its constructor with ``self.options.resolve(given)``; a task
    declares a tuple of :class:`Option` and :class:`~neuroyard.tasks.base.Task` builds the
    table.

    Args:
        owner: who has the options, at the start of every error message
            (``"evolver neat"``, ``"task xor-v2"``).
        options: the options, each name once; the order is the order of listings.
        noun: the word for one option in error messages (``"option"`` for evolvers,
            ``"setting"`` for tasks).
        error: the exception class errors are raised as: :class:`SettingError` unless the
            owner's layer has its own (tasks raise :class:`~.errors.TaskError`).

    Example:
        >>> from neuroyard import Option, OptionTable
        >>> table = OptionTable("evolver demo", [
        ...     Option("population", 50, "networks per generation", source="ours", low=2),
        ...     Option("rate", 0.1, "chance that a weight mutates", source="ours",
        ...            low=0.0, high=1.0, aliases=("mutation_rate",)),
        ... ])
        >>> table.resolve({"population": 20})
        {'population': 20, 'rate': 0.1}
        >>> table.resolve({"mutation_rate": "0.5"})  # a former name, a value as text
        {'population': 50, 'rate': 0.5}
        >>> table.resolve({"size": 20})
        Traceback (most recent call last):
        ...
        neuroyard.core.errors.SettingError: evolver demo: unknown option 'size' (known: population, rate)
    """

    def __init__(
        self,
        owner: str,
        options: Iterable[Option],
        noun: str = "option",
        error: type[Exception] = SettingError,
    ) -> None:
        self.owner = owner
        self.noun = noun
        self.error = error
        self._options = {o.name: o for o in options}
        self._aliases = {alias: o.name for o in self._options.values() for alias in o.aliases}

    def __iter__(self) -> Iterator[Option]:
        return iter(self._options.values())

    def __contains__(self, name: object) -> bool:
        return name in self._options or name in self._aliases

    def __getitem__(self, name: str) -> Option:
        return self._options[self._aliases.get(name, name)]

    def __len__(self) -> int:
        return len(self._options)

    @property
    def names(self) -> list[str]:
        return list(self._options)

    def defaults(self) -> dict[str, Any]:
        return {name: option.default for name, option in self._options.items()}

    def canonical(self, name: str) -> str:
        """The current name of ``name`` (itself, or the option it is a former name of)."""
        return self._aliases.get(name, name)

    def resolve(self, given: Mapping[str, Any] | None = None) -> dict[str, Any]:
        """Validate a configuration and fill in the defaults (see the module docstring).

        Args:
            given: option names (current or former) mapped to values; None or empty gives
                the defaults.

        Returns:
            Every option of the table, in declared order, under its current name, with its
            value: the given one (checked and coerced) or the default; a ``digest_of``
            option holds the digest of its file.

        Raises:
            SettingError: (or the table's ``error`` class) an unknown name, an option given
                twice (under two names), a value of the wrong type or outside what is
                allowed, or a file whose digest cannot be taken or has changed; the message
                names the owner, the option, the value and what is allowed.

        Example:
            >>> from neuroyard import Option, OptionTable
            >>> table = OptionTable("evolver demo", [Option("sigma", 0.5, above=0.0, aliases=("step",))])
            >>> table.resolve()
            {'sigma': 0.5}
            >>> table.resolve({"step": 1})  # a former name; an int stands for a float
            {'sigma': 1.0}
            >>> table.resolve({"sigma": 1.0, "step": 2.0})
            Traceback (most recent call last):
            ...
            neuroyard.core.errors.SettingError: evolver demo: option 'sigma' is given twice (as 'sigma' and 'step')
        """
        values = self.defaults()
        seen: dict[str, str] = {}
        for key, raw in (given or {}).items():
            name = self.canonical(key)
            if name not in self._options:
                known = ", ".join(self._options) or "none"
                raise self.error(f"{self.owner}: unknown {self.noun} {key!r} (known: {known})")
            if name in seen:
                raise self.error(
                    f"{self.owner}: {self.noun} {name!r} is given twice (as {seen[name]!r} "
                    f"and {key!r})"
                )
            seen[name] = key
            values[name] = self._options[name].check(raw, self.owner, self.noun, self.error)
        for option in self._options.values():
            if option.digest_of:
                values[option.name] = self._digest(option, values)
        return values

    def _digest(self, option: Option, values: Mapping[str, Any]) -> str | None:
        """The SHA-256 of the file named by ``option.digest_of`` (None without a file); an
        error when the file cannot be read, when a digest was given (a stored run's) and the
        file's content no longer has it, or when a digest was given without a file."""
        path, given = values[option.digest_of], values[option.name]
        if path is None:
            if given is not None:
                raise self.error(
                    f"{self.owner}: {self.noun} {option.name!r} is the digest of "
                    f"{option.digest_of!r} and cannot be given without it"
                )
            return None
        where = f"{self.owner}: {self.noun} {option.digest_of!r}: {path}"
        found = hashlib.sha256(read_bytes(path, where, self.error)).hexdigest()
        if given not in (None, found):
            raise self.error(
                f"{where}: its content changed since the runs were planned "
                f"(sha256 {found[:12]}..., planned {given[:12]}...)"
            )
        return found

    def identity(self, values: Mapping[str, Any]) -> dict[str, Any]:
        """The resolved ``values`` that identify a configuration: all of them but a digest
        without a file (None), so declaring a digest leaves the identity of every
        configuration without a file as it was."""
        unset = {o.name for o in self._options.values() if o.digest_of and values[o.name] is None}
        return {k: v for k, v in values.items() if k not in unset}

    def describe(self) -> list[dict[str, Any]]:
        return [option.describe() for option in self._options.values()]


def _shown(value: Any) -> str:
    """A value as an error shows it: its ``repr``, or for a very long whole number its size
    (Python refuses to convert an int of more than 4,300 digits to text)."""
    if type(value) is int and value.bit_length() > 256:
        return f"a whole number of {value.bit_length():,} bits"
    return repr(value)


def _parse_text(text: str) -> Any:
    """A value given as text, read as a TOML value; the text itself when it is none (or
    nests more than :data:`~.jsonsafe.MAX_DEPTH` levels)."""
    try:
        value = tomllib.loads(f"v = {text}")["v"]
        jsonsafe.check_depth(value)
    except (tomllib.TOMLDecodeError, RecursionError, jsonsafe.TooDeep):
        return text
    return value


def distribute(
    assignments: Iterable[tuple[str, Any]],
    tables: Mapping[str, Container[str] | None],
    flag: str,
) -> dict[str, dict[str, Any]]:
    """Share ``KEY=VALUE`` assignments out among owners (the tasks or evolvers of a campaign,
    each with its option table or the names of its options, or None when it declares none).

    ``OWNER:KEY`` goes to that owner only (an owner not in ``tables`` is an error); a plain
    ``KEY`` goes to every owner that has the option (and to every owner without a table,
    which cannot tell), and is an error only when no owner takes it. Checking the values is
    left to each owner's table. ``flag`` names the command-line option in errors."""
    out: dict[str, dict[str, Any]] = {owner: {} for owner in tables}
    for key, value in assignments:
        owner, sep, name = key.rpartition(":")
        given = f"{flag} {key}={value}"
        if sep:
            if owner not in tables:
                known = ", ".join(tables)
                raise SettingError(f"{given}: {owner!r} is not in this campaign ({known})")
            out[owner][name] = value
            continue
        takers = [o for o, table in tables.items() if table is None or name in table]
        if not takers:
            known = ", ".join(tables)
            raise SettingError(f"{given}: none of {known} has {name!r}")
        for owner in takers:
            out[owner][name] = value
    return out

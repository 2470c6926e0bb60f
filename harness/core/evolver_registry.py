"""How evolvers are found and built: by entry-point name, ``module:attr`` path or command.

An evolver is made by calling a *factory* (usually the class) with its configuration as
keyword arguments. Factories are found by name in the entry-point group
``neuroyard.evolvers``, by a ``module:attr`` path, or as ``process:COMMAND``: an evolver
in any language, COMMAND run as a child process that speaks the JSON-lines protocol
(:mod:`.process_evolver`; the name, command included, is part of every run's key and
seed). ``process:`` is taken before a module of that name.
"""

from __future__ import annotations

import hashlib
import importlib
import json
import pickle
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from functools import cache, cached_property
from importlib.metadata import entry_points
from pathlib import Path
from typing import Any

from neuroyard.core.errors import EvolverError, SettingError
from neuroyard.core.evolver import Evolver
from neuroyard.core.inputfile import read_toml
from neuroyard.core.options import OptionTable
from neuroyard.core.process_evolver import PREFIX as PROCESS_PREFIX
from neuroyard.core.process_evolver import command_factory

ENTRY_POINT_GROUP = "neuroyard.evolvers"

EvolverFactory = Callable[..., Evolver]
REQUIRED = ("start", "ask", "tell")  # the methods every evolver has (.evolver.Evolver)


@dataclass(frozen=True)
class EvolverSpec:
    """A named evolver and its configuration: everything needed to build it in any process.

    ``name`` is an entry-point name, a ``module:attr`` path or ``process:COMMAND``, and
    identifies the evolver in run keys, seeds and results; ``config`` (the options given) is
    passed to the factory as keyword arguments. ``factory``, when given, is the evolver
    class (or callable) itself, for one that no name can find (a class defined in a script or
    a notebook): it is used instead of looking ``name`` up, and reaches worker processes by
    reference (pickled as ``module.qualname``; see :func:`neuroyard.api.campaigns.run`).
    ``effective_config`` is the configuration the evolver runs under and ``config_hash``
    identifies it in results; both are computed once per spec.
    """

    name: str
    config: Mapping[str, Any] = field(default_factory=dict)
    factory: EvolverFactory | bytes | None = field(default=None, compare=False, repr=False)

    def load(self) -> EvolverFactory:
        """The factory: ``factory`` when given (unpickled here when it arrived pickled),
        else the one ``name`` finds."""
        if isinstance(self.factory, bytes):
            return pickle.loads(self.factory)
        return self.factory if self.factory is not None else load_factory(self.name)

    def __getstate__(self) -> dict[str, Any]:
        """What pickling sends (to a worker): the fields and the values computed from them,
        with a factory given as a class pickled to bytes by cloudpickle, which carries a
        class defined in a notebook or inside a function by value; only :meth:`load`, in
        the evolver's own process, unpickles it, so a worker never imports evolver code."""
        state = dict(self.__dict__)
        if self.factory is not None and not isinstance(self.factory, bytes):
            import cloudpickle  # on use: only an evolver given as a class needs it

            state["factory"] = cloudpickle.dumps(self.factory)
        return state

    @cached_property
    def effective_config(self) -> dict[str, Any]:
        """Every declared option with its value, given or default, when the factory declares
        an option table (``options``); else the given configuration as it is. A bad option
        is an :class:`EvolverError` naming it."""
        table = option_table(self.load())
        if table is None:
            return dict(self.config)
        try:
            return table.resolve(self.config)
        except ValueError as exc:
            raise EvolverError(str(exc)) from None

    @cached_property
    def config_hash(self) -> str:
        """12 hex digits of the SHA-256 of the effective configuration. It covers the
        content of a file an option names when the option table holds its digest
        (``Option.digest_of``; :meth:`OptionTable.identity`)."""
        table = option_table(self.load())
        config = self.effective_config if table is None else table.identity(self.effective_config)
        text = json.dumps(config, sort_keys=True, default=str)
        return hashlib.sha256(text.encode()).hexdigest()[:12]

    def build(self) -> Evolver:
        """Instantiate the evolver; configuration errors become :class:`EvolverError`, and
        so does a factory that gives something without the methods of :data:`REQUIRED`
        (``os:getcwd`` gives a string)."""
        factory = self.load()
        try:
            evolver = factory(**dict(self.config))
        except SettingError as exc:
            raise EvolverError(str(exc)) from None
        except (TypeError, ValueError) as exc:
            raise EvolverError(f"evolver {self.name!r}: bad configuration: {exc}") from None
        missing = [name for name in REQUIRED if not callable(getattr(evolver, name, None))]
        if missing:
            raise EvolverError(
                f"evolver {self.name!r}: building it gave an object of type "
                f"{type(evolver).__name__}, not an evolver: it has no "
                f"{', '.join(f'{name}()' for name in missing)}"
            )
        return evolver


def option_table(factory: Any) -> OptionTable | None:
    """The factory's declared options (its ``options`` attribute), or None."""
    table = getattr(factory, "options", None)
    return table if isinstance(table, OptionTable) else None


def canonical_config(name: str, config: Mapping[str, Any]) -> dict[str, Any]:
    """``config`` with every former option name replaced by the current one (stored records
    written before a rename); unchanged when the evolver is not installed or declares no
    options."""
    table = _declared_options(name)
    if table is None:
        return dict(config)
    return {table.canonical(key): value for key, value in config.items()}


@cache
def _declared_options(name: str) -> OptionTable | None:
    """The option table of evolver ``name``, found once per process (reading a store
    renames the options of every record, and finding a factory scans the entry points)."""
    try:
        return option_table(load_factory(name))
    except EvolverError:
        return None


def available() -> dict[str, str]:
    """Entry-point names in ``neuroyard.evolvers`` mapped to their ``module:attr`` targets
    (read once per process: scanning the installed distributions takes a few hundred
    milliseconds, and every run looks its evolver up)."""
    return dict(_entry_points())


@cache
def _entry_points() -> dict[str, str]:
    return {ep.name: ep.value for ep in entry_points(group=ENTRY_POINT_GROUP)}


@cache
def _own_entry_points() -> dict[str, str]:
    return {
        ep.name: ep.value
        for ep in entry_points(group=ENTRY_POINT_GROUP)
        if ep.dist is not None and ep.dist.name == "neuroyard"
    }


def preload_own(spec: EvolverSpec) -> None:
    """Import the module of ``spec``'s evolver in this process when it is one of
    neuroyard's own (an entry point of the neuroyard distribution, given by name): our own
    code, which a worker may hold, so that the process forked for each run starts with it
    loaded (importing the reference NEAT takes about 70 ms per run otherwise). Any other
    evolver's code is left to the run's own process."""
    target = _own_entry_points().get(spec.name)
    if target is not None and spec.factory is None:
        importlib.import_module(target.partition(":")[0])


INSTALLED, MODULE, PROCESS, UNKNOWN = "installed", "module", "process", "unknown"


def origin(name: str) -> str:
    """Where evolver ``name`` takes its code from, found as :func:`load_factory` finds it
    but without loading anything: ``process`` (``process:COMMAND``: the command is run),
    ``installed`` (an entry-point name in ``neuroyard.evolvers``: code installed in this
    environment), ``module`` (a ``module:attr`` path: the module is imported and the
    attribute called) or ``unknown`` (no such name: loading it is an error)."""
    if name.startswith(PROCESS_PREFIX):
        return PROCESS
    if name in available():
        return INSTALLED
    return MODULE if ":" in name else UNKNOWN


def load_factory(name: str) -> EvolverFactory:
    """Resolve an entry-point name, a ``module:attr`` path or ``process:COMMAND`` to an
    evolver factory."""
    if name.startswith(PROCESS_PREFIX):
        return command_factory(name.removeprefix(PROCESS_PREFIX))
    target = available().get(name)
    if target is None and ":" not in name:
        known = ", ".join(sorted(available())) or "none installed"
        raise EvolverError(
            f"unknown evolver {name!r} (installed: {known}; or give a module:attr path or "
            "process:COMMAND)"
        )
    module_name, _, attr = (target or name).partition(":")
    try:
        obj: Any = importlib.import_module(module_name)
    except ImportError as exc:
        raise EvolverError(
            f"evolver {name!r}: cannot import module {module_name!r}: {exc}"
        ) from None
    for part in attr.split("."):
        if not hasattr(obj, part):
            raise EvolverError(
                f"evolver {name!r}: module {module_name!r} has no attribute {attr!r}"
            )
        obj = getattr(obj, part)
    if not callable(obj):
        raise EvolverError(f"evolver {name!r}: {attr!r} is not callable")
    return obj


def read_config(path: str | Path) -> dict[str, Any]:
    """Read an evolver configuration TOML file (a flat or nested table of settings; UTF-8,
    at most 64 MiB: :mod:`.inputfile`); an :class:`EvolverError` naming the file."""
    return read_toml(path, f"config file {path}", EvolverError)

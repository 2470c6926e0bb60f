"""The task registry: versioned ids to task classes.

Built-in tasks register themselves on import of :mod:`neuroyard.tasks`; third-party
packages add tasks through the entry-point group ``neuroyard.tasks`` (the target is a
:class:`~neuroyard.tasks.base.Task` subclass).
"""

from __future__ import annotations

import json
import re
from collections.abc import Mapping
from importlib.metadata import entry_points
from typing import Any

from neuroyard.core.errors import TaskError

from .base import Metric, Task, TaskSpec

ENTRY_POINT_GROUP = "neuroyard.tasks"
_ID = re.compile(r"^[a-z0-9][a-z0-9-]*-v\d+$")
_REGISTRY: dict[str, type[Task]] = {}
_RETIRED: dict[str, tuple[str, str]] = {}  # old id -> (successor, why it was retired)
_FORMS: dict[str, tuple[str, str]] = {}  # prefix -> (task id, setting the rest goes to)
_SPECS: dict[str, TaskSpec] = {}  # by task id and every setting (resolved): see spec_of
_plugins_loaded = False


def register(cls: type[Task]) -> type[Task]:
    """Class decorator: add a task class under its ``id``, so that campaigns, reports and
    ``neuroyard tasks`` find it by name. Worker processes forked afterwards know it too (a
    task registered in a notebook reaches forked workers; under the ``spawn`` start method,
    register it in a module the workers import).

    Args:
        cls: a :class:`~neuroyard.tasks.base.Task` subclass; its ``id`` must look like
            ``name-vN``.

    Returns:
        ``cls``, unchanged.

    Raises:
        TaskError: an id of another form, or one registered for another class.

    Example:
        >>> import neuroyard
        >>> class Echo(neuroyard.Task):
        ...     id = "bad id"
        >>> neuroyard.register(Echo)
        Traceback (most recent call last):
        ...
        neuroyard.core.errors.TaskError: task id 'bad id' must look like 'name-v1'
    """
    if not _ID.match(cls.id):
        raise TaskError(f"task id {cls.id!r} must look like 'name-v1'")
    if cls.id in _REGISTRY and _REGISTRY[cls.id] is not cls:
        raise TaskError(f"task id {cls.id!r} is registered twice")
    _REGISTRY[cls.id] = cls
    return cls


def register_form(prefix: str, task_id: str, setting: str) -> None:
    """Let ``PREFIX:VALUE`` name task ``task_id`` with ``setting = VALUE`` (so
    ``maze:PATH`` is ``maze-file-v1`` with ``file = PATH``)."""
    _FORMS[prefix] = (task_id, setting)


def parse_task(text: str) -> tuple[str, dict[str, Any]]:
    """A task as given on the command line: a task id, or ``PREFIX:VALUE`` of a registered
    form; returns the task id and the settings the form gives."""
    prefix, sep, value = text.partition(":")
    if sep and prefix in _FORMS:
        task_id, setting = _FORMS[prefix]
        if not value:
            raise TaskError(f"task {text!r}: nothing after '{prefix}:'")
        return task_id, {setting: value}
    return text, {}


def retire(old_id: str, successor: str, reason: str) -> None:
    """Mark ``old_id`` as retired: building it names ``successor`` and says why. Stored
    results under the old id stay readable; only new runs need the successor."""
    _RETIRED[old_id] = (successor, reason)


def retired() -> dict[str, tuple[str, str]]:
    """Retired ids mapped to (successor id, reason)."""
    return dict(_RETIRED)


def _load_plugins() -> None:
    global _plugins_loaded
    if _plugins_loaded:
        return
    _plugins_loaded = True
    for ep in entry_points(group=ENTRY_POINT_GROUP):
        register(ep.load())


def task_ids() -> list[str]:
    _load_plugins()
    return sorted(_REGISTRY)


def task_class(task_id: str) -> type[Task]:
    _load_plugins()
    if task_id in _RETIRED and task_id not in _REGISTRY:
        successor, reason = _RETIRED[task_id]
        raise TaskError(f"task {task_id!r} is retired, use {successor!r}: {reason}")
    try:
        return _REGISTRY[task_id]
    except KeyError:
        raise TaskError(f"unknown task {task_id!r} (known: {', '.join(task_ids())})") from None


def make(task_id: str, seed: int = 0, /, **settings: Any) -> Task:
    """Build task ``task_id`` with its task seed and settings (defaults for the rest).

    Args:
        task_id: a registered task id (``neuroyard tasks``).
        seed: the task's own seed (positional, so a task may have a setting called
            ``seed``); a campaign derives it from the task and the run index.
        **settings: the task's settings by name; every other setting takes its default.

    Returns:
        The :class:`~neuroyard.tasks.base.Task`.

    Raises:
        TaskError: an unknown or retired id, or a bad setting (named with what is allowed).

    Example:
        >>> import neuroyard
        >>> task = neuroyard.make_task("parity-v2", bits=4)
        >>> task.spec.inputs, task.settings["bits"]
        (4, 4)
    """
    return task_class(task_id)(seed, **settings)


def _spec_key(task_id: str, settings: Mapping[str, Any]) -> str:
    return json.dumps([task_id, dict(settings)], sort_keys=True, default=str)


def remember(spec: TaskSpec) -> TaskSpec:
    """Keep ``spec`` (of a task just built) for :func:`spec_of` under its task id and its
    settings, every one resolved; returns it."""
    _SPECS[_spec_key(spec.id, spec.settings)] = spec
    return spec


def spec_of(task_id: str, settings: Mapping[str, Any]) -> TaskSpec:
    """The spec of ``task_id`` under ``settings``, every setting given (as a run records
    them): built once per process and settings, so reading the metrics of many stored runs
    builds each task once. Raises :class:`TaskError` as :func:`make` does."""
    found = _SPECS.get(_spec_key(task_id, settings))
    return found if found is not None else remember(make(task_id, **settings).spec)


def declared_metrics(task_id: str, settings: Mapping[str, Any]) -> tuple[Metric, ...]:
    """The metrics task ``task_id`` declares under ``settings`` (recorded runs: their
    settings); none when the task is not installed, retired, or the settings no longer
    fit it, so old stores still report their standard figures."""
    try:
        return spec_of(task_id, settings).metrics
    except TaskError:
        return ()


def specs() -> list[TaskSpec]:
    """The spec of every registered task at its default settings, by id.

    A task that ``needs`` a setting given has no spec at its defaults and is left out
    (:func:`needing` lists those: ``gym-env-v1`` needs ``env``, ``maze-file-v1`` a file).

    Returns:
        A list of :class:`~neuroyard.tasks.base.TaskSpec`, sorted by task id.

    Raises:
        TaskError: a registered task that cannot be built at its defaults (a fault of that
            task's package).

    Example:
        >>> import neuroyard
        >>> xor = {spec.id: spec for spec in neuroyard.list_tasks()}["xor-v2"]
        >>> xor.inputs, xor.outputs, xor.default_budget
        (2, 1, 100000)
    """
    return [make(task_id).spec for task_id in task_ids() if not task_class(task_id).needs]


def needing() -> dict[str, tuple[str, ...]]:
    """The registered tasks that need settings given, with the settings they need."""
    return {t: task_class(t).needs for t in task_ids() if task_class(t).needs}


def forms() -> dict[str, tuple[str, str]]:
    """The registered ``PREFIX:VALUE`` forms: prefix -> (task id, setting)."""
    return dict(_FORMS)

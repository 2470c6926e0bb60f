"""The task registry: versioned ids to task classes.

Built-in tasks register themselves on import of :mod:`neuroyard.tasks`; third-party
packages add tasks through the entry-point group ``neuroyard.tasks`` (the target is a
:class:`~neuroyard.tasks.base.Task` subclass).
"""

from __future__ import annotations

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
_plugins_loaded = False


def register(cls: type[Task]) -> type[Task]:
    """Class decorator: add a task class under its ``id`` (must look like ``name-vN``)."""
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
    """Build task ``task_id`` with its task seed and settings (defaults for the rest). The
    task seed is positional, so a task may have a setting called ``seed``."""
    return task_class(task_id)(seed, **settings)


def declared_metrics(task_id: str, settings: Mapping[str, Any]) -> tuple[Metric, ...]:
    """The metrics task ``task_id`` declares under ``settings`` (recorded runs: their
    settings); none when the task is not installed, retired, or the settings no longer
    fit it, so old stores still report their standard figures."""
    try:
        return make(task_id, **settings).spec.metrics
    except TaskError:
        return ()


def specs() -> list[TaskSpec]:
    """Spec records of all registered tasks at their default settings (a task that
    ``needs`` a setting has none at its defaults and is left out: see :func:`needing`)."""
    return [make(task_id).spec for task_id in task_ids() if not task_class(task_id).needs]


def needing() -> dict[str, tuple[str, ...]]:
    """The registered tasks that need settings given, with the settings they need."""
    return {t: task_class(t).needs for t in task_ids() if task_class(t).needs}


def forms() -> dict[str, tuple[str, str]]:
    """The registered ``PREFIX:VALUE`` forms: prefix -> (task id, setting)."""
    return dict(_FORMS)

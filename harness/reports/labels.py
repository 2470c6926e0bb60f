"""How every report, comparison, plot, check and export names a task or an evolver
configuration: :func:`task_labels` and :func:`configuration_label` own the labels.

A task is named as a user names it on the command line: a task given by a registered form
(``gym:CartPole-v1``, ``maze:PATH``) by that form, any other by its id (``xor-v2``). Where
the same name comes with more than one set of settings among the tasks labelled together,
six hex digits of a hash of the settings follow it in brackets (``parity-v2 [1a2b3c]``),
the same six that the report's settings list shows under that label. A configuration is
its evolver's name and the first six hex digits of the hash of its effective configuration
(``neat [1a2b3c]``).
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Hashable, Mapping, Sequence
from typing import Any

from neuroyard.tasks.registry import forms


def short_hash(value: Any) -> str:
    """Six hex digits identifying a JSON-able value (a task's settings)."""
    text = json.dumps(value, sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:6]


def configuration_label(evolver: str, config_hash: str) -> str:
    """An evolver configuration as reports print it: ``name [hash6]``."""
    return f"{evolver} [{config_hash[:6]}]"


def task_name(task: str, settings: Mapping[str, Any]) -> str:
    """A task as a user names it: ``PREFIX:VALUE`` where a registered form gives its id
    and the setting it sets (``gym:CartPole-v1`` for ``gym-env-v1`` with env CartPole-v1),
    else the task id."""
    for prefix, (task_id, setting) in sorted(forms().items()):
        if task_id == task and setting in settings:
            return f"{prefix}:{settings[setting]}"
    return task


def disambiguated(
    keys: Sequence[tuple[str, Hashable]], hashes: Mapping[Hashable, str]
) -> list[str]:
    """A label per (name, identity) key: the name, followed by ``[hash]`` (from ``hashes``)
    only when the same name comes with more than one identity among ``keys``."""
    identities: dict[str, set[Hashable]] = {}
    for name, identity in keys:
        identities.setdefault(name, set()).add(identity)
    return [
        f"{name} [{hashes[identity]}]" if len(identities[name]) > 1 else name
        for name, identity in keys
    ]


def task_labels(tasks: Sequence[tuple[str, Mapping[str, Any]]]) -> list[str]:
    """The label of each (task id, settings) among ``tasks`` labelled together (see the
    module docstring): its :func:`task_name`, with a hash of its settings where that name
    comes with other settings too."""
    settings = [json.dumps(s, sort_keys=True, default=str) for _, s in tasks]
    return disambiguated(
        [(task_name(t, s), key) for (t, s), key in zip(tasks, settings, strict=True)],
        {key: short_hash(s) for (_, s), key in zip(tasks, settings, strict=True)},
    )

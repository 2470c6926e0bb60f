"""``neuroyard tasks`` and ``neuroyard evolvers``: what is installed, and each one's options.

Both list from the one declaration of each option (:mod:`neuroyard.core.options`):
name, default, type and allowed values, unit, meaning and the source of the default.
"""

from __future__ import annotations

import argparse
import inspect
from dataclasses import asdict
from typing import Any

from neuroyard.core import jsonsafe
from neuroyard.core.errors import SettingError
from neuroyard.core.evolver_registry import available, load_factory, option_table
from neuroyard.core.numbers import number, value_text
from neuroyard.core.options import OptionTable
from neuroyard.tasks import TaskSpec, retired, specs
from neuroyard.tasks.registry import forms, make, needing, parse_task, task_class

NETWORK_CONVENTIONS = (
    "networks: the k-th input node gets the k-th input, the k-th output node gives the k-th "
    "output; a bias node (value 1.0) is optional, and every hidden and output node also has "
    "its own bias term (harness/core/network.py)"
)


def tasks_command(args: argparse.Namespace) -> None:
    """Print the tasks (all, or ``args.task`` with its settings table)."""
    if args.task is None:
        if args.setting:
            raise SettingError("tasks --setting: name the one task the setting is for")
        rows = specs()
    else:  # an unknown or retired id, or a setting it has not, is a one-line error
        task_id, form = parse_task(args.task)
        rows = [make(task_id, **form, **dict(args.setting)).spec]
    if args.format == "json":
        docs = [{**_spec_json(s), "options": _options(s.id).describe()} for s in rows]
        print(jsonsafe.dumps(docs, indent=2))
        return
    print(NETWORK_CONVENTIONS)
    for s in rows:
        print()
        _print_spec(s)
        if args.task is not None:
            _print_options(_options(s.id))
        else:
            print(f"  settings: {_joined(s.settings)} (neuroyard tasks {s.id}: their sources)")
    if args.task is None:
        shorthand = {task_id: prefix for prefix, (task_id, _) in forms().items()}
        for task_id, settings in needing().items():
            form = (
                f", or --task {shorthand[task_id]}:{settings[0].upper()}"
                if task_id in shorthand
                else ""
            )
            print(f"\n{task_id}: needs {', '.join(settings)} (neuroyard tasks {task_id} "
                  f"--setting {settings[0]}=...{form})")  # fmt: skip
        for old, (successor, reason) in sorted(retired().items()):
            print(f"\n{old}: retired, use {successor} ({reason})")


def evolvers_command(args: argparse.Namespace) -> None:
    """Print the installed evolvers (all, or ``args.evolver`` with its options table)."""
    names = [args.evolver] if args.evolver is not None else sorted(available())
    docs = []
    for name in names:
        factory = load_factory(name)
        table = option_table(factory)
        docs.append(
            {
                "name": name,
                "target": available().get(name, name),
                "summary": _first_line(factory),
                "options": table.describe() if table is not None else None,
            }
        )
    if args.format == "json":
        print(jsonsafe.dumps(docs, indent=2))
        return
    for doc in docs:
        options = doc["options"]
        count = "declares no options" if options is None else f"{len(options)} options"
        print(f"{doc['name']}: {doc['summary']} ({doc['target']}; {count})")
        if args.evolver is not None:
            if options is None:
                print("  it declares no option table; its own documentation lists its options")
            else:
                _print_options(option_table(load_factory(doc["name"])))
    if args.evolver is None:
        print("\nneuroyard evolvers NAME: every option of one evolver with its default and source")


def _options(task_id: str) -> OptionTable:
    return task_class(task_id).option_table()


def _print_spec(s: TaskSpec) -> None:
    top = "no upper bound" if s.max_fitness is None else value_text(s.max_fitness)
    print(
        f"{s.id}: {s.inputs} inputs, {s.outputs} outputs, default budget "
        f"{s.default_budget:,} evaluations"
    )
    print(f"  fitness: {s.fitness} (bounds {value_text(s.min_fitness)} to {top})")
    print(f"  solved:  {s.success}")
    for k, text in enumerate(s.observations):
        print(f"  input {k}: {text}")
    for k, text in enumerate(s.actions):
        print(f"  output {k}: {text}")
    print(f"  outputs out of range: {s.output_rule}")
    for m in s.metrics:
        unit = f", {m.unit}" if m.unit else ""
        print(f"  metric {m.name} ({m.better} is better{unit}): {m.description}")
    if s.facts:
        print("  facts:   " + ", ".join(f"{k} {number(v, '.4g')}" for k, v in s.facts.items()))
    for src in s.sources:
        print(f"  source:  {src}")


def _print_options(table: OptionTable) -> None:
    """One block per option: name = default [unit], type and allowed values, meaning, source."""
    print(f"  {table.noun}s:")
    for o in table:
        unit = f" {o.unit}" if o.unit else ""
        allowed = f", {o.rule}" if o.rule else ""
        former = f"; formerly {', '.join(o.aliases)}" if o.aliases else ""
        print(f"    {o.name} = {value_text(o.default)}{unit} ({o.type_name}{allowed}{former})")
        if o.help:
            print(f"        {o.help}")
        if o.source:
            print(f"        source: {o.source}")


def _spec_json(spec: TaskSpec) -> dict[str, Any]:
    doc = asdict(spec)
    doc["settings"] = dict(spec.settings)
    return doc


def _first_line(obj: Any) -> str:
    doc = inspect.getdoc(obj) or ""
    return doc.split("\n\n")[0].replace("\n", " ") or "(no description)"


def _joined(settings: Any) -> str:
    return ", ".join(f"{k}={value_text(v)}" for k, v in settings.items()) or "none"

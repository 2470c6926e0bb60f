"""Resolving evolvers without running their code in the coordinator.

Planning a campaign needs each evolver's declared options (to share ``--param`` out), its
effective configuration and hash (every run's key) and a check that it can be built (fail
before any run). All of that loads the evolver's module and calls its code. The coordinator
checks every solved claim and writes the store, so evolver code must not run there: an
evolver module found by name outside neuroyard's own package (a ``module:attr`` path, or an
entry point of another distribution) is resolved in a fresh child process instead
(``python -m neuroyard.execution.resolution``), whose answer is data: JSON the coordinator
checks. neuroyard's own evolvers, ``process:`` commands (a command is not loaded, only
run, by the worker) and a class given as an object (it lives in the caller's process
already) are resolved in this process.

The child reads ``{"evolvers": [{"name", "config"}], "build": bool, "path": [...]}`` (its
``sys.path``: this process's) on standard input and
writes, on the descriptor that was its standard output (its evolvers' prints go to
standard error), one entry per evolver: ``{"options": [names] | null, "effective_config":
{...}, "config_hash": "..."}`` or ``{"error": "one line"}``.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from collections.abc import Sequence
from typing import Any

from neuroyard.core.errors import EvolverError, NeuroyardError
from neuroyard.core.evolver_registry import EvolverSpec, available, load_factory, option_table
from neuroyard.core.process_evolver import PREFIX as PROCESS_PREFIX

TIMEOUT = 120.0  # s for the child to load, resolve and build every evolver (ours)


def foreign(spec: EvolverSpec) -> bool:
    """Whether resolving ``spec`` would load code from outside neuroyard's own package."""
    if spec.factory is not None or spec.name.startswith(PROCESS_PREFIX):
        return False
    module = (available().get(spec.name) or spec.name).partition(":")[0]
    return not (module == "neuroyard" or module.startswith("neuroyard."))


def declared_options(specs: Sequence[EvolverSpec]) -> dict[str, set[str] | None]:
    """Each evolver's declared option names (None: it declares no table), by name."""
    answers = _answers([s for s in specs if foreign(s)], build=False)
    out: dict[str, set[str] | None] = {}
    for spec in specs:
        if foreign(spec):
            names = answers[spec.name].get("options")
            out[spec.name] = None if names is None else set(names)
        else:
            table = option_table(spec.load())
            out[spec.name] = None if table is None else {o.name for o in table}
    return out


def resolve(specs: Sequence[EvolverSpec], build: bool = True) -> None:
    """Compute each spec's effective configuration and hash (kept on the spec), building
    each once to check its configuration when ``build``; foreign ones in a child process.

    Raises:
        EvolverError: an evolver that cannot be found, loaded, configured or built (the
            child's one line, naming it)."""
    outside = [s for s in specs if foreign(s) and (build or "config_hash" not in s.__dict__)]
    answers = _answers(outside, build)
    for spec in outside:
        answer = answers[spec.name]
        # cached_property values, set as their first access would (the spec is frozen)
        spec.__dict__["effective_config"] = answer["effective_config"]
        spec.__dict__["config_hash"] = answer["config_hash"]
    for spec in specs:
        if not foreign(spec) and build:
            spec.build()


def _answers(specs: Sequence[EvolverSpec], build: bool) -> dict[str, dict[str, Any]]:
    """The child's answer for each of ``specs`` (none: no child started)."""
    if not specs:
        return {}
    request = {
        "evolvers": [{"name": s.name, "config": dict(s.config)} for s in specs],
        "build": build,
        "path": sys.path,  # where this process finds modules (a test's plugins included)
    }
    names = ", ".join(s.name for s in specs)
    try:
        done = subprocess.run(
            [sys.executable, "-m", "neuroyard.execution.resolution"],
            input=json.dumps(request, default=str),
            capture_output=True,
            text=True,
            timeout=TIMEOUT,
        )
    except subprocess.TimeoutExpired:
        raise EvolverError(
            f"evolver {names}: loading and checking it took longer than {TIMEOUT:g} s"
        ) from None
    try:
        found = json.loads(done.stdout)
        assert isinstance(found, list) and len(found) == len(specs)
        assert all(isinstance(a, dict) for a in found)
    except (ValueError, AssertionError):
        tail = done.stderr.strip().splitlines()[-1:] or ["no output"]
        raise EvolverError(
            f"evolver {names}: it could not be loaded to check it ({tail[0][:200]})"
        ) from None
    out = {}
    for spec, answer in zip(specs, found, strict=True):
        if "error" in answer:
            raise EvolverError(str(answer["error"]))
        if not _well_formed(answer):
            raise EvolverError(f"evolver {spec.name!r}: its check gave an answer of the wrong form")
        out[spec.name] = answer
    return out


def _well_formed(answer: dict[str, Any]) -> bool:
    options = answer.get("options")
    return (
        (
            options is None
            or (isinstance(options, list) and all(isinstance(o, str) for o in options))
        )
        and isinstance(answer.get("effective_config", {}), dict)
        and isinstance(answer.get("config_hash", ""), str)
    )


def _child() -> None:
    """The child process: answer the request on standard input (module docstring)."""
    out = os.dup(1)
    os.dup2(2, 1)  # the evolvers' prints go to standard error
    request = json.loads(sys.stdin.read())
    sys.path[:] = request["path"]
    answers = []
    for item in request["evolvers"]:
        spec = EvolverSpec(item["name"], item["config"])
        try:
            table = option_table(load_factory(spec.name))
            answer: dict[str, Any] = {
                "options": None if table is None else [o.name for o in table],
                "effective_config": spec.effective_config,
                "config_hash": spec.config_hash,
            }
            if request["build"]:
                spec.build()
        except NeuroyardError as exc:
            answer = {"error": str(exc)}
        except Exception as exc:  # the evolver's own code failed while being built
            answer = {"error": f"evolver {spec.name!r}: {type(exc).__name__}: {exc}"}
        answers.append(answer)
    os.write(out, json.dumps(answers, default=str).encode())


if __name__ == "__main__":
    _child()

"""The docstrings of the contract names: Google-style sections, every parameter described,
and examples that run.

For each name: a docstring with an ``Example`` whose doctest passes in an empty namespace
(examples import what they use); an ``Args:`` section with a line per parameter of the
signature (``*name``/``**name`` for the variadic ones); ``Returns:`` unless the return
annotation is None. Every docstring of the modules that hold them (methods included) is
run as a doctest too.
"""

from __future__ import annotations

import doctest
import importlib
import inspect
import re
from typing import Any

import pytest

import neuroyard

CONTRACT = {
    "neuroyard.core.network": [
        "Network",
        "Node",
        "Connection",
        "Network.to_dict",
        "Network.from_dict",
        "Network.to_json",
        "Network.from_json",
        "Network.from_file",
    ],
    "neuroyard.core.evolver": ["Problem", "Evaluation", "Outcome", "Evolver"],
    "neuroyard.core.options": ["Option", "OptionTable", "OptionTable.resolve"],
    "neuroyard.core.errors": [
        "NeuroyardError",
        "NetworkError",
        "EvolverError",
        "TaskError",
        "StoreError",
        "SettingError",
    ],
    "neuroyard.tasks.base": ["Task", "TaskSpec", "SuccessCheck", "Metric"],
}
NAMES = [f"{module}:{name}" for module, names in CONTRACT.items() for name in names]
MODULES = [*CONTRACT, "neuroyard.core.activations"]

SECTION = re.compile(r"^(?P<indent> *)(?P<title>[A-Z][A-Za-z ]*):\s*$")


def resolve(path: str) -> Any:
    module_name, _, name = path.partition(":")
    obj: Any = importlib.import_module(module_name)
    for part in name.split("."):
        obj = getattr(obj, part)
    return obj


def section(doc: str, title: str) -> list[str]:
    """The lines of the docstring's section ``title`` (Google style: the header line, then
    the lines indented deeper than it, blank lines included)."""
    lines = doc.splitlines()
    for k, line in enumerate(lines):
        match = SECTION.match(line)
        if match and match["title"] == title:
            indent = len(match["indent"])
            body = []
            for rest in lines[k + 1 :]:
                if rest.strip() and len(rest) - len(rest.lstrip()) <= indent:
                    break
                body.append(rest)
            return body
    return []


def signature(obj: Any) -> inspect.Signature | None:
    try:
        return inspect.signature(obj)
    except (TypeError, ValueError):  # exception classes have none
        return None


@pytest.mark.parametrize("path", NAMES)
def test_docstring_has_summary_and_example(path: str) -> None:
    doc = inspect.getdoc(resolve(path))
    assert doc, f"{path} has no docstring"
    assert doc.splitlines()[0].strip(), f"{path}: the first line is the summary"
    assert "Example" in doc, f"{path} has no example"


WITH_SIGNATURE = [path for path in NAMES if signature(resolve(path)) is not None]
RETURNING = [
    path
    for path in WITH_SIGNATURE
    if signature(resolve(path)).return_annotation not in (None, "None")
]


def test_the_exceptions_alone_have_no_signature() -> None:
    # the rules below cover every other name; a name that lost its signature would escape
    assert sorted(set(NAMES) - set(WITH_SIGNATURE)) == [
        f"neuroyard.core.errors:{name}" for name in sorted(CONTRACT["neuroyard.core.errors"])
    ]


@pytest.mark.parametrize("path", WITH_SIGNATURE)
def test_every_parameter_is_described(path: str) -> None:
    obj = resolve(path)
    args = "\n".join(section(inspect.getdoc(obj), "Args"))
    for param in signature(obj).parameters.values():
        if param.name in ("self", "cls"):
            continue
        stars = {param.VAR_POSITIONAL: r"\*", param.VAR_KEYWORD: r"\*\*"}.get(param.kind, "")
        line = re.compile(rf"^\s+{stars}{re.escape(param.name)}\b.*:", re.MULTILINE)
        assert line.search(args), f"{path}: Args has no line for {param.name}"


@pytest.mark.parametrize("path", RETURNING)
def test_returns_is_described(path: str) -> None:
    assert section(inspect.getdoc(resolve(path)), "Returns"), f"{path} has no Returns section"


@pytest.mark.parametrize("path", [path for path in NAMES if "." not in path.partition(":")[2]])
def test_the_documented_object_is_the_public_name(path: str) -> None:
    # the docstrings checked here are the ones ``import neuroyard`` users read
    assert getattr(neuroyard, path.partition(":")[2]) is resolve(path)


def run_doctests(tests: list[doctest.DocTest]) -> tuple[int, str]:
    """(examples run, the report of the failures) of ``tests``."""
    report: list[str] = []
    runner = doctest.DocTestRunner(verbose=False)
    for test in tests:
        runner.run(test, out=report.append)
    return runner.tries, "".join(report)


@pytest.mark.parametrize("path", NAMES)
def test_example_runs(path: str) -> None:
    # an empty namespace: an example imports what it uses
    tests = doctest.DocTestFinder(recurse=False).find(resolve(path), path, globs={})
    tries, failures = run_doctests(tests)
    assert tries > 0, f"{path}: the example has no >>> lines"
    assert not failures, failures


@pytest.mark.parametrize("module_name", MODULES)
def test_every_example_of_the_module_runs(module_name: str) -> None:
    tests = doctest.DocTestFinder().find(importlib.import_module(module_name))
    _, failures = run_doctests(tests)
    assert not failures, failures

"""The public API: ``import neuroyard`` gives every name of ``neuroyard.__all__``, each
documented with its arguments and a running example; ``help(neuroyard)`` shows them all;
bad input is a ``NeuroyardError`` subclass with one line, and never damages a store.

Outside references: Python's own ``inspect`` (signatures), ``doctest`` (the examples run)
and ``pydoc`` (what ``help()`` prints)."""

from __future__ import annotations

import doctest
import hashlib
import inspect
import re
import subprocess
import sys
from pathlib import Path

import pytest

import neuroyard
from neuroyard import (
    EvolverError,
    NeuroyardError,
    SettingError,
    StoreError,
    TaskError,
)

PUBLIC = sorted(neuroyard.__all__)


def _params(obj) -> list[str]:
    try:
        signature = inspect.signature(obj)
    except (TypeError, ValueError):  # a class whose constructor has no Python signature
        return []
    return [name for name in signature.parameters if name != "self"]


def _section(doc: str, title: str) -> str:
    """The lines of a docstring section (``Args:``) up to the next section title."""
    match = re.search(rf"^\s*{title}:\s*$(.*?)(?=^\s*[A-Z][a-z]+:\s*$|\Z)", doc, re.M | re.S)
    return match.group(1) if match else ""


def test_import_neuroyard_loads_nothing_heavy() -> None:
    code = (
        "import sys, neuroyard; print([m for m in ('numpy', 'numba', 'scipy') if m in sys.modules])"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


@pytest.mark.parametrize("name", PUBLIC)
def test_every_public_name_is_documented_with_its_arguments(name: str) -> None:
    obj = getattr(neuroyard, name)
    doc = inspect.getdoc(obj) or ""
    assert doc, f"{name} has no docstring"
    assert "Example" in doc, f"{name}: no example"
    args = _section(doc, "Args")
    for param in _params(obj):
        assert re.search(rf"^\s+\*{{0,2}}{param}\b.*:", args, re.M), f"{name}: {param} not in Args"
    if inspect.isfunction(obj) and inspect.signature(obj).return_annotation not in (
        None,
        "None",
        inspect.Signature.empty,
    ):
        assert "Returns:" in doc, f"{name}: no Returns"
    if inspect.isfunction(obj):
        assert "Raises:" in doc, f"{name}: no Raises"


@pytest.mark.parametrize("name", PUBLIC)
def test_every_public_example_runs(name: str, tmp_path, monkeypatch) -> None:
    monkeypatch.chdir(tmp_path)  # an example that writes a file writes it here
    obj = getattr(neuroyard, name)
    finder = doctest.DocTestFinder(recurse=False)
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    tests = finder.find(obj, name, globs={"neuroyard": neuroyard})
    assert any(t.examples for t in tests), f"{name}: no example to run"
    for test in tests:
        runner.run(test)
    assert runner.summarize(verbose=False).failed == 0


def test_help_shows_the_whole_public_api() -> None:
    code = "import neuroyard; help(neuroyard)"
    # not a terminal: pydoc prints without a pager
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    missing = [name for name in PUBLIC if not re.search(rf"\b{name}\b", out.stdout)]
    assert missing == []


def test_an_unknown_name_is_an_attribute_error() -> None:
    with pytest.raises(AttributeError, match="no attribute 'tasks_of'"):
        neuroyard.tasks_of  # noqa: B018


@pytest.fixture(scope="module")
def store(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("api") / "runs.db"
    neuroyard.run("rwg", "xor-v2", runs=2, budget=100, store=path, progress=False)
    return path


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.parametrize(
    ("call", "error", "words"),
    [
        (lambda s: neuroyard.run("rwg", runs=0, store=s), SettingError, "runs must be"),
        (lambda s: neuroyard.run("rwg", seed=-1, store=s), SettingError, "seed must be"),
        (lambda s: neuroyard.run("rwg", budget=2.5, store=s), SettingError, "budget must be"),
        (lambda s: neuroyard.run("no-such-evolver", store=s), EvolverError, "unknown evolver"),
        (lambda s: neuroyard.run(42, store=s), EvolverError, "expected a name, a class"),
        (lambda s: neuroyard.run({"neat": dict}, store=s), EvolverError, "is taken"),
        (lambda s: neuroyard.run(["rwg", "rwg"], store=s), EvolverError, "given twice"),
        (lambda s: neuroyard.run("rwg", "no-such-v1", store=s), TaskError, "unknown task"),
        (lambda s: neuroyard.run("rwg", params={"x": 1}, store=s), SettingError, "none of rwg"),
        (
            lambda s: neuroyard.run("rwg", settings={"bits": 40}, store=s),
            SettingError,
            "none of xor-v2 has 'bits'",
        ),
        (lambda s: neuroyard.run("rwg", share="3/2", store=s), SettingError, "share"),
        (lambda s: neuroyard.run("rwg", executor="nowhere", store=s), NeuroyardError, "executor"),
        (lambda s: neuroyard.open_store(s.with_name("none.db")), StoreError, "no such file"),
        (lambda s: neuroyard.compare("rwg", "rwg", store=s, alpha=2), NeuroyardError, "alpha"),
        (lambda s: neuroyard.compare(store=s), NeuroyardError, "name the sides"),
        (lambda s: neuroyard.check(s.with_name("none.json")), NeuroyardError, "cannot read it"),
        (lambda s: neuroyard.make_task("xor-v2", bits=3), TaskError, "bits"),
    ],
)
def test_bad_input_is_one_line_and_leaves_the_store_as_it_was(store, call, error, words) -> None:
    before = _digest(store)
    with pytest.raises(error) as caught:
        call(store)
    assert words in str(caught.value) and "\n" not in str(caught.value)
    assert _digest(store) == before


def test_a_class_defined_inside_a_function_runs_in_the_workers(tmp_path) -> None:
    def make_local():
        class Local(NotebookGuess):
            pass

        return Local

    results = neuroyard.run(
        make_local(), "xor-v2", runs=2, budget=30, store=tmp_path / "l.db", workers=2,
        progress=False,
    )  # fmt: skip
    assert [(r.status, r.evaluations, r.isolated) for r in results.records()] == [
        ("unsolved", 30, True)
    ] * 2


class NotebookGuess:
    """A class as a notebook cell defines it: in ``__main__``, which has no file."""

    def start(self, problem, seed):
        self.rng, self.problem = __import__("numpy").random.default_rng(seed), problem

    def ask(self):
        p = self.problem
        nodes = [neuroyard.Node(i, "input") for i in range(p.inputs)]
        nodes.append(neuroyard.Node(p.inputs, "output", "sigmoid"))
        links = [
            neuroyard.Connection(i, p.inputs, float(self.rng.normal())) for i in range(p.inputs)
        ]
        return [neuroyard.Network(tuple(nodes), tuple(links))]

    def tell(self, evaluations):
        pass


@pytest.fixture
def in_a_notebook(monkeypatch):
    """NotebookGuess placed in ``__main__`` as a notebook's class, ``__main__`` without a file."""
    main = sys.modules["__main__"]
    monkeypatch.setattr(NotebookGuess, "__module__", "__main__")
    monkeypatch.setattr(main, "NotebookGuess", NotebookGuess, raising=False)
    monkeypatch.delattr(main, "__file__", raising=False)
    return NotebookGuess


def test_a_notebook_class_reaches_forked_workers(tmp_path, in_a_notebook) -> None:
    results = neuroyard.run(
        in_a_notebook, "xor-v2", runs=2, budget=30, store=tmp_path / "n.db", workers=2,
        progress=False,
    )  # fmt: skip
    assert [(r.evolver, r.status, r.evaluations) for r in results.records()] == [
        ("__main__:NotebookGuess", "unsolved", 30)
    ] * 2


def test_under_spawn_a_notebook_class_reaches_the_workers_by_value(tmp_path, in_a_notebook) -> None:
    from neuroyard.core.evolver_registry import EvolverSpec
    from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
    from neuroyard.execution.supervisor import Supervisor
    from neuroyard.records.store import ResultStore

    spec = EvolverSpec("__main__:NotebookGuess", {}, in_a_notebook)
    plan = CampaignPlan([spec], [TaskChoice("xor-v2")], 1, 1, 30)
    with ResultStore(tmp_path / "spawn.db") as store:
        outcome = execute(plan, store, Supervisor(1, start_method="spawn"), progress=False)
        (record,) = store.records()
    assert outcome.done == 1 and outcome.internal_errors == 0
    assert (record.status, record.evaluations, record.isolated) == ("unsolved", 30, True)

"""What a baseline file can make ``neuroyard check`` run, and how check guards it.

A baseline file names its groups' evolvers, and a check that makes the runs again builds
and runs them. Without ``--trust-evolvers`` (``trust_evolvers=True``) a check runs
installed evolvers only: a file naming ``process:COMMAND`` or a ``module:attr`` path is
refused with one line, exit 2, before anything is imported, built or started. Each
refusal test plants a command or a module that would leave a file behind, and checks the
file is not there; with the option, the same harmless command runs.

Outside references: the shell's ``touch`` (POSIX) and Python's ``os.system``, which run a
command; Python's import system (``sys.modules``) for what was imported.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import pytest

import neuroyard
from neuroyard.api.trust import UntrustedEvolverError
from neuroyard.cli.main import main

pytest_plugins = ["pytester"]


def baseline_file(path: Path, evolver: str, config: dict | None = None) -> Path:
    """A baseline of one group of ``evolver`` on XOR (one unsolved run), written by hand."""
    group = {
        "evolver": evolver,
        "config": config or {},
        "config_hash": "0" * 12,
        "task": "xor-v2",
        "task_settings": {"recurrent_steps": 5},
        "budget": 20,
        "campaign_seed": 1,
        "runs": 1,
        "run_figures": [
            {
                "run_index": 0,
                "status": "unsolved",
                "evaluations": 20,
                "generations": 1,
                "hidden_nodes": 0,
                "connections": 3,
                "relative_speed": None,
            }
        ],
    }
    doc = {
        "format": "neuroyard regression baseline",
        "format_version": 1,
        "environment": {},
        "groups": [group],
    }
    path.write_text(json.dumps(doc))
    return path


def run_cli(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def shell(marker: Path) -> str:
    return f"process:sh -c 'touch {marker}'"


@pytest.fixture
def planted(tmp_path, monkeypatch) -> tuple[str, Path]:
    """A module on the path whose import leaves a file behind: (its name, the file)."""
    marker = tmp_path / "imported"
    (tmp_path / "planted_module.py").write_text(
        f"import pathlib\npathlib.Path({str(marker)!r}).touch()\nEvolver = object\n"
    )
    monkeypatch.syspath_prepend(str(tmp_path))
    monkeypatch.delitem(sys.modules, "planted_module", raising=False)
    return "planted_module", marker


def refusals(tmp_path, planted) -> dict[str, tuple[Path, Path]]:
    """Each kind of code a file can name: (the baseline, the file running it would leave)."""
    module, imported = planted
    ran = tmp_path / "ran"
    return {
        "process": (baseline_file(tmp_path / "process.json", shell(ran)), ran),
        "os:system": (
            baseline_file(tmp_path / "os.json", "os:system", {"command": f"touch {ran}"}),
            ran,
        ),
        "module:attr": (baseline_file(tmp_path / "module.json", f"{module}:Evolver"), imported),
    }


@pytest.mark.parametrize("kind", ["process", "os:system", "module:attr"])
def test_check_refuses_code_a_file_names_and_runs_nothing(kind, tmp_path, planted, capsys):
    path, left_behind = refusals(tmp_path, planted)[kind]
    code, out, err = run_cli(capsys, "check", "--baseline", str(path))
    assert (code, out) == (2, "")
    (line,) = err.splitlines()
    assert line.startswith(f"neuroyard: error: baseline {path}: groups.0 (")
    assert "nothing was run" in line and "--trust-evolvers" in line
    assert not left_behind.exists()
    assert "planted_module" not in sys.modules


@pytest.mark.parametrize("kind", ["process", "os:system", "module:attr"])
def test_the_library_refuses_the_same(kind, tmp_path, planted):
    path, left_behind = refusals(tmp_path, planted)[kind]
    with pytest.raises(UntrustedEvolverError, match="nothing was run") as caught:
        neuroyard.check(path, progress=False)
    assert isinstance(caught.value, neuroyard.NeuroyardError)
    with pytest.raises(UntrustedEvolverError):
        neuroyard.check_plan(path)
    assert not left_behind.exists()
    assert "planted_module" not in sys.modules


def test_check_plan_says_what_each_name_runs_and_loads_nothing(tmp_path, planted):
    found = {
        kind: neuroyard.check_plan(path, trust_evolvers=True)[0]
        for kind, (path, _) in refusals(tmp_path, planted).items()
    }
    assert {k: p.origin for k, p in found.items()} == {
        "process": "process",
        "os:system": "module",
        "module:attr": "module",
    }
    assert all(p.needs_trust for p in found.values())
    assert f"which runs the command 'sh -c 'touch {tmp_path / 'ran'}''" in found[
        "process"
    ].line().replace('"', "'")
    assert "'os:system', which imports module 'os' and calls 'system'" in found["os:system"].line()
    assert '"command": "touch ' in found["os:system"].line()
    assert "planted_module" not in sys.modules


@pytest.mark.parametrize("kind", ["process", "os:system"])
def test_with_the_option_the_file_s_harmless_command_runs(kind, tmp_path, planted, capsys):
    path, left_behind = refusals(tmp_path, planted)[kind]
    _, out, _ = run_cli(capsys, "check", "--baseline", str(path), "--trust-evolvers")
    assert out.startswith("will run ")
    # it ran (what comes of it does not matter here: neither is an evolver)
    assert left_behind.exists()


def test_an_installed_evolver_runs_without_the_option(tmp_path, capsys):
    store = tmp_path / "runs.db"
    neuroyard.run("rwg", "xor-v2", runs=2, seed=1, budget=40, store=store, progress=False)
    path = tmp_path / "baseline.json"
    neuroyard.baseline(store, path)
    code, out, err = run_cli(capsys, "check", "--baseline", str(path))
    assert (code, err) == (0, "")
    (planned,) = [line for line in out.splitlines() if line.startswith("will run ")]
    assert "2 run(s): the installed evolver 'rwg', options {}" in planned
    assert out.splitlines()[-1].startswith("0 regression(s)")


def test_reading_the_fresh_runs_from_a_store_runs_nothing_and_needs_no_trust(
    tmp_path, planted, capsys
):
    path, left_behind = refusals(tmp_path, planted)["os:system"]
    store = tmp_path / "other.db"
    neuroyard.run("rwg", "xor-v2", runs=1, seed=1, budget=20, store=store, progress=False)
    code, out, err = run_cli(capsys, "check", "--baseline", str(path), "--store", str(store))
    assert (code, out) == (2, "")  # the store has no such runs: nothing to compare
    assert f"results store {store}: no runs of os:system " in err
    assert not left_behind.exists()


def test_the_pytest_fixture_refuses_without_trust_and_runs_with_it(pytester, tmp_path):
    ran = tmp_path / "ran"
    baseline_file(pytester.path / "baseline.json", "os:system", {"command": f"touch {ran}"})
    pytester.makepyfile(
        "def test_gate(assert_no_regression):\n    assert_no_regression(baseline='baseline.json')\n"
    )
    refused = pytester.runpytest()
    refused.assert_outcomes(failed=1)
    refused.stdout.fnmatch_lines(["*neuroyard: error: baseline *baseline.json: groups.0*"])
    assert not ran.exists()
    pytester.makepyfile(
        "def test_gate(assert_no_regression):\n"
        "    assert_no_regression(baseline='baseline.json', trust_evolvers=True)\n"
    )
    pytester.runpytest()
    assert ran.exists()

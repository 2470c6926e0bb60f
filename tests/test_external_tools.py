"""The tests that need chromium, node or cc (:mod:`external_tools`): skipped with a reason
where the program is missing, failed under NEUROYARD_REQUIRE_TOOLS=1, run where it is there.

Outside reference: pytest itself (its ``pytester`` fixture runs a small test file in a fresh
session with the plugin, and reports outcomes and the summary as pytest prints them), on a
PATH holding only the folder this test fills.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from external_tools import REQUIRE_VARIABLE, TOOLS

pytest_plugins = ["pytester"]

ROOT = Path(__file__).resolve().parents[1]
NEEDS_NODE = """
import pytest

@pytest.mark.needs_tool("node")
def test_runs_node():
    assert True
"""
REASON = "node is not on PATH (runs the JavaScript example evolver; Debian package nodejs, "
REASON += "which .ci/run installs)"


@pytest.fixture
def bare_path(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """An empty folder as the whole PATH (the session's own setting is put back after)."""
    folder = tmp_path / "bin"
    folder.mkdir()
    monkeypatch.setenv("PATH", str(folder))
    monkeypatch.delenv(REQUIRE_VARIABLE, raising=False)
    return folder


def test_a_missing_tool_skips_the_test_and_the_summary_says_why(pytester, bare_path):
    pytester.makepyfile(test_tool=NEEDS_NODE)
    result = pytester.runpytest("-p", "external_tools", "-rs")
    result.assert_outcomes(skipped=1)
    assert result.ret == 0
    # the test's place (its decorator, line 3 of the file pytester writes) and the reason
    result.stdout.fnmatch_lines([f"SKIPPED [[]1[]] test_tool.py:3: {REASON}"])


def test_under_the_variable_a_missing_tool_fails_the_test(pytester, bare_path, monkeypatch):
    monkeypatch.setenv(REQUIRE_VARIABLE, "1")
    pytester.makepyfile(test_tool=NEEDS_NODE)
    result = pytester.runpytest("-p", "external_tools")
    result.assert_outcomes(errors=1)  # at set-up, before any fixture of the test
    assert result.ret == 1
    result.stdout.fnmatch_lines(
        [
            f"{REASON}; {REQUIRE_VARIABLE}=1 makes this a failure",
            "ERROR test_tool.py::test_runs_node - Failed: node is not on PATH*",
        ]
    )


@pytest.mark.parametrize("required", ["", "1"])
def test_a_tool_on_path_lets_the_test_run(pytester, bare_path, monkeypatch, required):
    monkeypatch.setenv(REQUIRE_VARIABLE, required)
    node = bare_path / "node"
    node.write_text("")  # found on PATH is all the marker asks; never run
    node.chmod(0o755)
    pytester.makepyfile(test_tool=NEEDS_NODE)
    pytester.runpytest("-p", "external_tools").assert_outcomes(passed=1)


def test_ci_installs_every_tool_and_turns_skips_into_failures():
    script = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    for tool in TOOLS.values():
        install = f"command -v {tool.program} >/dev/null || missing+=({' '.join(tool.packages)})"
        assert install in script
    exported = re.search(rf"^export {REQUIRE_VARIABLE}=1$", script, re.MULTILINE)
    tests = re.search(r"^\.venv/bin/python -m pytest$", script, re.MULTILINE)
    assert exported and tests and exported.start() < tests.start()

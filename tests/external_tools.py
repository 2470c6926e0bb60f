"""Tests that need a program from outside Python: a pytest plugin (loaded by conftest.py).

A test that runs such a program is marked ``@pytest.mark.needs_tool("node", ...)`` with the
names of :data:`TOOLS`. When one of them is not on PATH, the test is skipped with a reason
naming the program, the Debian package that provides it and that ``.ci/run`` installs it
(``-rs`` in the default options lists each skipped test and its reason), so the README's
test command passes on a machine without them. With ``NEUROYARD_REQUIRE_TOOLS=1``, which
``.ci/run`` sets, the same reason fails the test instead: CI never skips these tests.
"""

from __future__ import annotations

import os
import shutil
from dataclasses import dataclass

import pytest

REQUIRE_VARIABLE = "NEUROYARD_REQUIRE_TOOLS"
MARKER = "needs_tool"


@dataclass(frozen=True)
class Tool:
    """A program some tests run, looked up on PATH as ``program``."""

    program: str
    packages: tuple[str, ...]  # the Debian packages .ci/run installs for it
    use: str


TOOLS = {
    "chromium": Tool("chromium", ("chromium",), "opens the HTML reports"),
    "node": Tool("node", ("nodejs",), "runs the JavaScript example evolver"),
    "cc": Tool("cc", ("gcc", "libc6-dev"), "builds the C example evolver"),
}


def missing_reason(names: tuple[str, ...]) -> str | None:
    """Why a test needing the tools ``names`` cannot run here, or None when all are on PATH."""
    missing = [TOOLS[name] for name in names if shutil.which(TOOLS[name].program) is None]
    if not missing:
        return None
    return "; ".join(
        f"{tool.program} is not on PATH ({tool.use}; Debian package "
        f"{' and '.join(tool.packages)}, which .ci/run installs)"
        for tool in missing
    )


def _needed(item: pytest.Item) -> tuple[str, ...]:
    return tuple(name for mark in item.iter_markers(MARKER) for name in mark.args)


def _required() -> bool:
    return os.environ.get(REQUIRE_VARIABLE) == "1"


def pytest_configure(config: pytest.Config) -> None:
    config.addinivalue_line(
        "markers",
        f"{MARKER}(*names): the test runs these programs ({', '.join(TOOLS)}); skipped "
        f"when one is missing, failed instead under {REQUIRE_VARIABLE}=1",
    )


def pytest_collection_modifyitems(items: list[pytest.Item]) -> None:
    # a skip mark (not pytest.skip() at set-up) so the summary names each test, not this file
    if _required():
        return
    for item in items:
        reason = missing_reason(_needed(item))
        if reason:
            item.add_marker(pytest.mark.skip(reason=reason))


@pytest.hookimpl(tryfirst=True)  # before any fixture is set up
def pytest_runtest_setup(item: pytest.Item) -> None:
    reason = missing_reason(_needed(item)) if _required() else None
    if reason:
        pytest.fail(f"{reason}; {REQUIRE_VARIABLE}=1 makes this a failure", pytrace=False)

"""What a baseline file makes a check run, and the refusal of code a file names.

A baseline file names each group's evolver, and a check that makes the runs again
(:func:`neuroyard.api.judging.check` without a store) builds and runs those evolvers: an
evolver's name is code. An installed name (an entry point of ``neuroyard.evolvers``,
``neuroyard evolvers``) runs code installed in this environment. A ``module:attr`` path
imports the module and calls the attribute with the group's options (``os:system`` with
a ``command`` option runs a shell command), and ``process:COMMAND`` runs the command. A
check runs evolvers that are not installed ones only when its caller says it trusts the
file (``trust_evolvers=True``; ``neuroyard check --trust-evolvers``, and the pytest
fixture's ``trust_evolvers``); otherwise it refuses with one line before importing,
building or starting anything.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from neuroyard.core import jsonsafe
from neuroyard.core.evolver_registry import INSTALLED, MODULE, PROCESS, origin
from neuroyard.core.process_evolver import PREFIX as PROCESS_PREFIX
from neuroyard.reports.baseline import Baseline, BaselineError

TRUST_HINT = "--trust-evolvers on the command line, trust_evolvers=True in Python"


class UntrustedEvolverError(BaselineError):
    """A check would run code that its baseline file names, and the file was not trusted."""


@dataclass(frozen=True)
class PlannedEvolver:
    """One baseline group's evolver as a check would build and run it.

    ``group`` is the group's label, ``runs`` the runs the check makes, ``evolver`` and
    ``config`` the name and options the file gives, ``origin`` where the name takes its
    code from (:func:`~neuroyard.core.evolver_registry.origin`: ``installed``,
    ``module``, ``process`` or ``unknown``)."""

    group: str
    runs: int
    evolver: str
    config: dict[str, Any]
    origin: str

    @property
    def needs_trust(self) -> bool:
        """Whether running it needs the caller's trust: every evolver but an installed one."""
        return self.origin != INSTALLED

    def what(self) -> str:
        """The code the name runs, in words."""
        if self.origin == INSTALLED:
            return f"the installed evolver {self.evolver!r}"
        if self.origin == PROCESS:
            command = self.evolver.removeprefix(PROCESS_PREFIX)
            return f"{self.evolver!r}, which runs the command {command!r}"
        if self.origin == MODULE:
            module, _, attr = self.evolver.partition(":")
            return f"{self.evolver!r}, which imports module {module!r} and calls {attr!r}"
        return f"{self.evolver!r}, which is not an installed evolver"

    def line(self) -> str:
        """One line: the group, its runs, the code and the options."""
        options = jsonsafe.dumps(self.config, sort_keys=True)
        return f"will run {self.group}, {self.runs} run(s): {self.what()}, options {options}"


def planned(baseline: Baseline) -> tuple[PlannedEvolver, ...]:
    """Every group's evolver as a check would run it, in the file's order; loads nothing."""
    return tuple(
        PlannedEvolver(g.label, g.run_count, g.evolver, dict(g.config), origin(g.evolver))
        for g in baseline.groups
    )


def refuse_untrusted(evolvers: Sequence[PlannedEvolver], where: str) -> None:
    """Raise :class:`UntrustedEvolverError` (one line naming the file, each group and the
    code its name runs) when any of ``evolvers`` needs trust."""
    named = [
        f"groups.{k} ({p.group}) would run {p.what()}"
        for k, p in enumerate(evolvers)
        if p.needs_trust
    ]
    if named:
        raise UntrustedEvolverError(
            f"baseline {where}: {'; '.join(named)}; nothing was run: a baseline file names "
            f"the code a check runs, so trust the file first ({TRUST_HINT})"
        )

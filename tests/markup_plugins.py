"""Plugins for the HTML report test whose names and values carry markup: an evolver named
``markup_plugins:<b>x</b>&"'``, one that fails with the markup in its reason, and a task
with a free-text setting.

Not part of the package; the test puts this folder on sys.path, loads the evolvers by
``markup_plugins:NAME`` and adds the task to the registry for its own duration only.
"""

from __future__ import annotations

from neuroyard.core.options import Option
from neuroyard.reference.hill_climber import HillClimber
from neuroyard.tasks.logic import Xor

MARKUP = "<b>x</b>&\"'"


class Climber(HillClimber):
    """The reference hill climber under a name that is markup (it solves XOR in some runs)."""


globals()[MARKUP] = Climber  # the attribute that ``markup_plugins:<b>x</b>&"'`` names


class Breaks:
    """Raises in ask(), with the markup in the message (so in the failure reason)."""

    def start(self, problem, seed):
        pass

    def ask(self):
        raise RuntimeError(f"cannot ask {MARKUP}")

    def tell(self, evaluations):
        pass


class LabelledXor(Xor):
    """XOR with a free-text setting that changes nothing but what the report shows."""

    id = "markup-v1"
    options = (
        *Xor.options,
        Option("label", "", "free text carried into the report", source="ours"),
    )

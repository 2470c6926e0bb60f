"""neuroyard: benchmark tasks and an honest validation harness for neuroevolution.

The public API, all of it importable from here (``neuroyard.__all__``)::

    import neuroyard

    results = neuroyard.run("neat", ["xor-v2", "parity-v2"], runs=10, seed=1)
    results.runs_table()            # one row per run (a pandas DataFrame with pandas)
    results.generations_table()     # one row per generation, the evolver's statistics too
    neuroyard.compare("neat", "neat@1a2b3c")   # is B better than A?

- **the contract** an evolver is written against: :class:`Network`, :class:`Node`,
  :class:`Connection` (what an evolver hands the harness), :class:`Problem` (what it is
  told at ``start``), :class:`Evaluation` (what ``tell`` receives), :class:`Outcome`
  (what ``stop`` receives), :class:`Evolver` (the methods), :class:`Option` and
  :class:`OptionTable` (declared options, given as keyword arguments of the constructor);
- **tasks**: :class:`Task`, :class:`TaskSpec`, :class:`SuccessCheck`, :class:`Metric`,
  :func:`register`, :func:`make_task`, :func:`list_tasks` (the task package itself is
  ``neuroyard.tasks``, hence not ``tasks()``);
- **running**: :func:`run` (an evolver may be a class defined in your script or notebook),
  :func:`open_store`, :class:`Results`, :class:`RunRecord`, :class:`GenerationLog`,
  :func:`evaluate` and :class:`NetworkEvaluation` (one network on one task);
- **judging**: :func:`compare` (:class:`Comparison`), :func:`baseline` (:class:`Baseline`),
  :func:`check` (:class:`CheckResult`, :class:`Thresholds`) and :func:`check_plan` (what
  a check runs), :func:`verify` (:class:`VerifyResult`: do a store's solved claims hold);
- **errors**: :class:`NeuroyardError` and its subclasses for bad input (one line that says
  what was wrong and where), :class:`InternalError` for a fault of neuroyard itself.

Everything else (``neuroyard.core``, ``neuroyard.execution``, ...) is the machinery under
this front door and may change between releases. Names load on first use, so ``import
neuroyard`` itself is instant and loads neither numpy, numba nor scipy.

Before 0.2 the harness was ``neuroyard.harness``; those import paths are gone.
"""

from __future__ import annotations

import importlib
from typing import Any

# public name -> (module, attribute) it is loaded from on first use
_PUBLIC: dict[str, tuple[str, str]] = {
    **{name: ("neuroyard.core.network", name) for name in ("Network", "Node", "Connection")},
    **{
        name: ("neuroyard.core.evolver", name)
        for name in ("Problem", "Evaluation", "Outcome", "Evolver")
    },
    **{name: ("neuroyard.core.options", name) for name in ("Option", "OptionTable")},
    **{
        name: ("neuroyard.tasks.base", name)
        for name in ("Task", "TaskSpec", "SuccessCheck", "Metric")
    },
    "register": ("neuroyard.tasks.registry", "register"),
    "make_task": ("neuroyard.tasks.registry", "make"),
    "list_tasks": ("neuroyard.tasks.registry", "specs"),
    "run": ("neuroyard.api.campaigns", "run"),
    "open_store": ("neuroyard.api.results", "open_store"),
    "Results": ("neuroyard.api.results", "Results"),
    "RunRecord": ("neuroyard.records.runs", "RunRecord"),
    "GenerationLog": ("neuroyard.records.runs", "GenerationLog"),
    "evaluate": ("neuroyard.execution.evaluation", "evaluate"),
    "NetworkEvaluation": ("neuroyard.execution.evaluation", "NetworkEvaluation"),
    **{
        name: ("neuroyard.api.judging", name)
        for name in ("compare", "baseline", "check", "check_plan", "verify")
    },
    "VerifyResult": ("neuroyard.execution.verification", "VerifyResult"),
    "Comparison": ("neuroyard.reports.compare", "Comparison"),
    "Baseline": ("neuroyard.reports.baseline", "Baseline"),
    "CheckResult": ("neuroyard.reports.baseline", "CheckResult"),
    "Thresholds": ("neuroyard.reports.gate", "Thresholds"),
    **{
        name: ("neuroyard.core.errors", name)
        for name in (
            "NeuroyardError",
            "NetworkError",
            "EvolverError",
            "TaskError",
            "SettingError",
            "StoreError",
        )
    },
    "InternalError": ("neuroyard.execution.crashlog", "InternalError"),
}

__all__ = sorted(_PUBLIC)


def __getattr__(name: str) -> Any:
    if name == "__version__":
        from importlib.metadata import PackageNotFoundError, version

        try:
            found = version("neuroyard")
        except PackageNotFoundError:  # a source tree that was never installed
            found = "0+unknown"
    elif name in _PUBLIC:
        module, attribute = _PUBLIC[name]
        found = getattr(importlib.import_module(module), attribute)
    else:
        raise AttributeError(f"module 'neuroyard' has no attribute {name!r}")
    globals()[name] = found  # loaded once
    return found


def __dir__() -> list[str]:
    return sorted({*globals(), *__all__, "__version__"})

"""A pytest plugin for evolver authors: a test that fails when the evolver regressed.

Installed with neuroyard (entry-point group ``pytest11``, name ``neuroyard``), it offers
one fixture::

    def test_my_evolver_did_not_regress(assert_no_regression):
        assert_no_regression(baseline="tests/baseline.json", workers=2)

``assert_no_regression(baseline, workers=1, trust_evolvers=False)`` makes the baseline's
runs again on ``workers`` worker processes and compares them with the baseline as
``neuroyard check`` does (:func:`neuroyard.api.judging.check`); the test fails with the
lines of the regressions, or with the one line that says what is wrong with the baseline
file. A relative ``baseline`` path is taken from pytest's root folder (``rootdir``). It
returns the :class:`~neuroyard.reports.baseline.CheckResult` when nothing regressed.

The baseline file names the evolvers the fixture runs. As with ``neuroyard check``, an
evolver other than an installed one (a ``module:attr`` path, such as the evolver of the
project under test, or ``process:COMMAND``) runs only with ``trust_evolvers=True``, for a
file the project keeps and has read; without it the test fails with one line and nothing
runs.

The plugin imports nothing of neuroyard when pytest loads it: the gate (numpy, numba,
scipy, the harness) is imported when the fixture is first called, so a test run that does
not use it is neither slowed nor changed. Disable it with ``-p no:neuroyard``.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest


@pytest.fixture
def assert_no_regression(request: pytest.FixtureRequest) -> Callable[..., Any]:
    """The check of a baseline, as a function of ``baseline`` (path), ``workers`` and
    ``trust_evolvers``."""

    def check(baseline: str | Path, workers: int = 1, trust_evolvers: bool = False) -> Any:
        from neuroyard.api.judging import check as check_baseline  # loaded on use, see above
        from neuroyard.core.errors import NeuroyardError

        path = Path(baseline)
        if not path.is_absolute():
            path = request.config.rootpath / path
        try:
            result = check_baseline(
                path, workers=workers, progress=False, trust_evolvers=trust_evolvers
            )
        except NeuroyardError as exc:
            pytest.fail(f"neuroyard: error: {exc}", pytrace=False)
        if result.regressions:
            pytest.fail("\n".join(result.regressions), pytrace=False)
        return result

    return check

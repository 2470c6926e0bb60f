"""The runs of results stores, for Python: records, flat tables, the report.

:class:`Results` reads its stores each time it is asked (read-only: a store is never changed
by reading it), so a :class:`Results` of a store that a campaign is still filling shows the
runs finished so far.
"""

from __future__ import annotations

from collections.abc import Collection, Sequence
from pathlib import Path
from typing import Any

from neuroyard.core.defaults import DEFAULT_PATH
from neuroyard.core.errors import NeuroyardError
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore
from neuroyard.reports import renderers, report, tables
from neuroyard.reports.report import ReportRow


class Results:
    """The runs of one or more results stores, or of one campaign in them.

    Made by :func:`open_store` (every run of the stores) and :func:`~.campaigns.run` (the
    runs of the campaign it ran, whether made now or found in the store). A run stored in
    several of the stores counts once (the first store's record).

    Args:
        stores: paths of the results stores (SQLite files), read in this order.
        keys: the run keys to keep (None: every run of the stores).
        done: runs the campaign that made this object finished and stored (0 from
            :func:`open_store`).
        skipped: runs of that campaign already in the store when it started.

    Raises:
        StoreError: a store that does not exist or is not a neuroyard store (checked when
            the object is made).

    Example:
        >>> import neuroyard, tempfile, pathlib
        >>> path = pathlib.Path(tempfile.mkdtemp()) / "demo.db"
        >>> results = neuroyard.run("rwg", "xor-v2", runs=2, budget=200, store=path,
        ...                         progress=False)  # doctest: +SKIP
        >>> len(results), results.done  # doctest: +SKIP
        (2, 2)
        >>> results.runs_table()[["evolver", "status", "evaluations"]]  # doctest: +SKIP
    """

    def __init__(
        self,
        stores: Sequence[str | Path],
        keys: Collection[str] | None = None,
        done: int = 0,
        skipped: int = 0,
    ) -> None:
        if not stores:
            raise NeuroyardError("results: name at least one results store")
        self.stores = tuple(Path(s) for s in stores)
        self.keys = None if keys is None else frozenset(keys)
        self.done = done
        self.skipped = skipped
        for path in self.stores:  # a missing or foreign file is an error now, not later
            ResultStore(path, write=False).close()

    def __repr__(self) -> str:
        where = ", ".join(str(p) for p in self.stores)
        chosen = "" if self.keys is None else f", {len(self.keys)} runs of a campaign"
        return f"Results({where}{chosen})"

    def __len__(self) -> int:
        return len(self.records())

    def records(self, with_log: bool = False) -> list[RunRecord]:
        """The run records, in each store's order (evolver, configuration, task, run index).

        Args:
            with_log: also read each run's generation log (``RunRecord.log``).

        Returns:
            A list of :class:`~neuroyard.records.runs.RunRecord`.

        Raises:
            StoreError: a store can no longer be read.

        Example:
            >>> [r.status for r in results.records()]  # doctest: +SKIP
            ['solved', 'unsolved']
        """
        seen: set[str] = set()
        out = []
        for path in self.stores:
            with ResultStore(path, write=False) as store:
                for run in store.stored_runs(with_log):
                    if run.key in seen or (self.keys is not None and run.key not in self.keys):
                        continue
                    seen.add(run.key)
                    out.append(run.record)
        return out

    def runs_table(self) -> Any:
        """One row per run, with the columns documented in :mod:`neuroyard.reports.tables`
        (the same as ``neuroyard export --format csv``).

        Returns:
            A pandas ``DataFrame`` when pandas is installed (``pip install
            'neuroyard[analysis]'``), else a list of dicts, one per row, each with every
            column (None where a run has no value).

        Raises:
            StoreError: a store can no longer be read.

        Example:
            >>> results.runs_table().groupby("evolver")["solved"].mean()  # doctest: +SKIP
        """
        return _table(tables.runs_rows(self.records()), "runs")

    def generations_table(self) -> Any:
        """One row per generation of every run, the evolver's own statistics as
        ``stat.NAME`` columns (see :mod:`neuroyard.reports.tables`).

        Returns:
            A pandas ``DataFrame`` when pandas is installed, else a list of dicts.

        Raises:
            StoreError: a store can no longer be read.

        Example:
            >>> table = results.generations_table()  # doctest: +SKIP
            >>> table.groupby("generation")["best_fitness"].median()  # doctest: +SKIP
        """
        return _table(tables.generations_rows(self.records(with_log=True)), "generations")

    def summary(self) -> list[ReportRow]:
        """The report's rows: per evolver configuration, task, settings and budget, the
        summary figures beside the published ones (what ``neuroyard report`` prints).

        Returns:
            A list of :class:`~neuroyard.reports.report.ReportRow` (``row.summary`` holds
            runs, solved, success rate, ERT, ...; ``row.to_json()`` all of it as JSON).

        Raises:
            StoreError: a store can no longer be read.

        Example:
            >>> [(row.evolver, row.summary.solved) for row in results.summary()]  # doctest: +SKIP
        """
        return report.build(self.records())

    def report(self, format: str = "text") -> str:
        """The report as text in ``format`` (``text``, ``markdown``, ``json``, ``html`` or an
        installed renderer), as ``neuroyard report --format`` writes it.

        Args:
            format: the renderer's name.

        Returns:
            The document.

        Raises:
            NeuroyardError: an unknown format.
            StoreError: a store can no longer be read.

        Example:
            >>> print(results.report("markdown"))  # doctest: +SKIP
        """
        renderers.check_format(format)
        rows = report.build(self.records(with_log=renderers.needs_logs(format)))
        return renderers.render(rows, format)


def _table(rows: list[dict[str, Any]], table: str) -> Any:
    """``rows`` as a DataFrame with the table's columns, or as full dicts without pandas."""
    names = tables.columns(rows, table)
    try:
        import pandas  # an optional extra: neuroyard[analysis]
    except ImportError:
        return [{name: row.get(name) for name in names} for row in rows]
    return pandas.DataFrame(rows, columns=names)


def open_store(*paths: str | Path) -> Results:
    """Every run of one or more results stores.

    Args:
        *paths: the stores' files (default ``results/neuroyard.db``, where ``neuroyard run``
            writes); a run stored in several counts once.

    Returns:
        A :class:`Results` of all their runs.

    Raises:
        StoreError: a store that does not exist or is not a neuroyard store.

    Example:
        >>> import neuroyard
        >>> neuroyard.open_store("no/such/store.db")
        Traceback (most recent call last):
        ...
        neuroyard.core.errors.StoreError: results store no/such/store.db: no such file
    """
    return Results(paths or (DEFAULT_PATH,))

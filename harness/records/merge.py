"""Merging the stores of one campaign's shares (batch jobs, :mod:`.shares`) into one store.

Every store given must be a sound neuroyard store of the current schema (SQLite's
``PRAGMA integrity_check``) holding exactly one campaign, and all of them the same plan
(the same plan hash); so must the output store when it exists already. A run held by
several stores is taken once, from the first store given that holds it, and only when every
store holding it holds the same record of it (:func:`~.runs.content_digest`: the whole
record, generation log included, but timing, host and versions); a stored record whose key
does not match its own values is refused as corrupt. Everything is checked before the
output store is opened for writing, and the output is written in one transaction (the
store's :meth:`~.store.ResultStore.merge_in`), so a refused or failed merge leaves it as it
was, and creates none when there was none.
"""

from __future__ import annotations

import contextlib
import sqlite3
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from neuroyard.core.errors import StoreError
from neuroyard.records.runs import content_digest, record_key
from neuroyard.records.shares import Share
from neuroyard.records.store import (
    SCHEMA_VERSION,
    Campaign,
    ResultStore,
    RunConflict,
    StoredRun,
)


@dataclass(frozen=True)
class MergeResult:
    """What :func:`merge` did: runs ``added`` to the output, runs of the sources it held
    already (``present``), runs it holds now (``held``) of the plan's ``planned`` runs
    (None when the plan does not say), the plan's hash and the shares the output holds."""

    added: int
    present: int
    held: int
    planned: int | None
    plan_hash: str
    shares: tuple[Share, ...]


def merge(out: Path, sources: Sequence[Path]) -> MergeResult:
    """Merge the stores ``sources`` into the store ``out`` (created when missing); see the
    module docstring. Every refusal is a :class:`StoreError` naming the store (and, for a
    conflict, the run key and both stores), raised before ``out`` is changed."""
    campaigns = [_check(path) for path in sources]
    first = campaigns[0]
    for path, campaign in zip(sources, campaigns, strict=True):
        if campaign.plan_hash != first.plan_hash:
            raise StoreError(
                f"results store {path}: holds plan {campaign.plan_hash}, not the plan "
                f"{first.plan_hash} of {sources[0]}"
            )
    takes = _choose_runs(sources)
    shares = set().union(*(c.shares for c in campaigns))
    existed = out.exists()
    if existed:
        before = _check(out, allow_empty=True)
        if before is not None:
            if before.plan_hash != first.plan_hash:
                raise StoreError(
                    f"results store {out}: holds plan {before.plan_hash}, not the plan "
                    f"{first.plan_hash} of {sources[0]}"
                )
            shares |= before.shares
    merged = Campaign(first.plan_hash, first.seed, first.plan, frozenset(shares))
    try:
        with ResultStore(out) as store:
            added = store.merge_in(merged, _taken_runs(sources, takes))
            held = len(store.finished_keys())
    except BaseException:
        if not existed and out.exists():  # a failed merge creates no store (its transaction
            out.unlink()  # rolled back); asked only when the file is there, since unlinking
        raise  # a missing file on a read-only file system fails with EROFS, not ENOENT
    return MergeResult(
        added,
        len(takes) - added,
        held,
        planned_runs(first.plan),
        first.plan_hash,
        tuple(sorted(shares)),
    )


def planned_runs(plan: Mapping[str, Any]) -> int | None:
    """How many runs a plan as stored (``CampaignPlan.describe()``: evolvers, tasks, runs)
    asks for; None for a plan that does not say."""
    try:
        return len(plan["evolvers"]) * len(plan["tasks"]) * int(plan["runs"])
    except (KeyError, TypeError, ValueError):
        return None


def _check(path: Path, allow_empty: bool = False) -> Campaign | None:
    """The one campaign of the store at ``path``, after checking that it is a sound store
    of the current schema; with ``allow_empty``, None for a store with no campaign yet."""
    with _reading(path) as store:
        if store.version < SCHEMA_VERSION:
            raise StoreError(
                f"results store {path}: schema version {store.version}, older than this "
                f"neuroyard's {SCHEMA_VERSION}; running its campaign into it again upgrades it"
            )
        verdict = store.integrity()
        if verdict != "ok":
            raise StoreError(f"results store {path}: corrupt (SQLite integrity check: {verdict})")
        campaigns = store.campaigns()
    if not campaigns and allow_empty:
        return None
    if len(campaigns) != 1:
        raise StoreError(
            f"results store {path}: holds {len(campaigns)} campaigns; merge takes stores of one "
            "campaign each"
        )
    return campaigns[0]


def _choose_runs(sources: Sequence[Path]) -> dict[str, Path]:
    """For every run key of the stores, the first store that holds it; a key held with
    different records is a :class:`RunConflict`, a record whose key does not match its
    values a corrupt store."""
    seen: dict[str, tuple[str, Path]] = {}
    for path in sources:
        with _reading(path) as store:
            for run in store.stored_runs():
                if record_key(run.record) != run.key:
                    raise StoreError(
                        f"results store {path}: corrupt (the record of run {run.key} is not "
                        "the record of that run)"
                    )
                digest = content_digest(run.record)
                held = seen.setdefault(run.key, (digest, path))
                if held[0] != digest:
                    raise RunConflict(run.key, held[1], path)
    return {key: path for key, (_, path) in seen.items()}


def _taken_runs(sources: Sequence[Path], takes: Mapping[str, Path]) -> Iterator[StoredRun]:
    """The runs chosen by :func:`_choose_runs`, each read from the store it is taken from."""
    for path in dict.fromkeys(sources):  # a store given twice is read once
        with _reading(path) as store:
            for run in store.stored_runs():
                if takes[run.key] == path:
                    yield run


@contextlib.contextmanager
def _reading(path: Path) -> Iterator[ResultStore]:
    """The store at ``path`` open read-only; a file SQLite cannot read, or a record that is
    not JSON, is a :class:`StoreError` naming the path."""
    with ResultStore(path, write=False) as store:
        try:
            yield store
        except (sqlite3.DatabaseError, ValueError) as exc:
            raise StoreError(f"results store {path}: corrupt ({exc})") from None

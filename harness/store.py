"""The results store: one SQLite file, one transaction per finished run.

Tables: ``meta`` (schema version), ``campaigns`` (seed and plan of each campaign),
``runs`` (one row per finished run, the full record as JSON plus the columns reports
filter on) and ``generations`` (the per-generation log). A run is written whole or not at
all, so a store left by a killed process opens cleanly with every finished run in it, and
running the same campaign again skips the runs whose key is already stored.

Schema versions: 1 had no ``champion_test`` column in ``generations``. A version-1 store is
read as it is (its generations have an empty ``champion_test``) and is upgraded to
version 2 inside the transaction of the first run written to it, so an upgrade that fails
leaves the store as it was.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Iterator, Mapping
from dataclasses import asdict
from pathlib import Path
from typing import Any

from .errors import StoreError
from .runner import GenerationLog, RunRecord

SCHEMA_VERSION = 2
READABLE_VERSIONS = tuple(str(v) for v in range(1, SCHEMA_VERSION + 1))  # older ones upgrade
DEFAULT_PATH = Path("results") / "neuroyard.db"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS campaigns (
    id INTEGER PRIMARY KEY,
    plan_hash TEXT NOT NULL UNIQUE,
    seed INTEGER NOT NULL,
    plan TEXT NOT NULL,
    created_at TEXT NOT NULL DEFAULT (datetime('now'))
);
CREATE TABLE IF NOT EXISTS runs (
    id INTEGER PRIMARY KEY,
    run_key TEXT NOT NULL UNIQUE,
    campaign_id INTEGER NOT NULL REFERENCES campaigns(id),
    evolver TEXT NOT NULL,
    config_hash TEXT NOT NULL,
    task TEXT NOT NULL,
    run_index INTEGER NOT NULL,
    status TEXT NOT NULL,
    evaluations INTEGER NOT NULL,
    generations INTEGER NOT NULL,
    record TEXT NOT NULL,
    finished_at TEXT NOT NULL DEFAULT (datetime('now'))
);
CREATE TABLE IF NOT EXISTS generations (
    run_id INTEGER NOT NULL REFERENCES runs(id),
    generation INTEGER NOT NULL,
    evaluations INTEGER NOT NULL,
    best_fitness REAL NOT NULL,
    mean_fitness REAL NOT NULL,
    best_hidden INTEGER NOT NULL,
    best_connections INTEGER NOT NULL,
    stats TEXT NOT NULL,
    champion_test TEXT NOT NULL DEFAULT '{}',
    PRIMARY KEY (run_id, generation)
);
"""


class ResultStore:
    """Open (creating if needed) the store at ``path``; use as a context manager."""

    def __init__(self, path: str | Path = DEFAULT_PATH, create: bool = True) -> None:
        self.path = Path(path)
        if not self.path.exists():
            if not create:
                raise StoreError(f"results store {self.path}: no such file")
            try:
                self.path.parent.mkdir(parents=True, exist_ok=True)
            except OSError as exc:
                raise StoreError(
                    f"results store {self.path}: cannot create folder ({exc.strerror})"
                ) from None
        elif self.path.is_dir():
            raise StoreError(f"results store {self.path}: is a folder, not a store file")
        try:
            self.db = sqlite3.connect(self.path, timeout=30)
            self.db.execute("PRAGMA foreign_keys = ON")
            self._check_schema(create)
        except sqlite3.DatabaseError as exc:
            raise StoreError(f"results store {self.path}: not a neuroyard store ({exc})") from None

    def _check_schema(self, create: bool) -> None:
        tables = {
            r[0] for r in self.db.execute("SELECT name FROM sqlite_master WHERE type='table'")
        }
        if not tables:
            if not create:
                raise StoreError(f"results store {self.path}: empty file, no results")
            with self.db:
                self.db.executescript(_SCHEMA)
                self.db.execute(
                    "INSERT INTO meta(key, value) VALUES ('schema_version', ?)",
                    (str(SCHEMA_VERSION),),
                )
            self.version = SCHEMA_VERSION
            return
        if "meta" not in tables:
            raise StoreError(f"results store {self.path}: a SQLite file, but not a neuroyard store")
        row = self.db.execute("SELECT value FROM meta WHERE key='schema_version'").fetchone()
        if row is None or row[0] not in READABLE_VERSIONS:
            found = row[0] if row else "none"
            raise StoreError(
                f"results store {self.path}: schema version {found}, this neuroyard reads "
                f"{', '.join(READABLE_VERSIONS)}"
            )
        self.version = int(row[0])

    def _upgrade(self) -> None:
        """Bring a version-1 store to the current schema (call inside a transaction)."""
        # the UPDATE opens the transaction, so the ALTER below is rolled back with it
        self.db.execute(
            "UPDATE meta SET value=? WHERE key='schema_version'", (str(SCHEMA_VERSION),)
        )
        self.db.execute(
            "ALTER TABLE generations ADD COLUMN champion_test TEXT NOT NULL DEFAULT '{}'"
        )

    def __enter__(self) -> ResultStore:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        self.db.close()

    def campaign(self, seed: int, plan: Mapping[str, Any], plan_hash: str) -> int:
        """Id of the campaign with this plan, created on first use."""
        with self.db:
            self.db.execute(
                "INSERT OR IGNORE INTO campaigns(plan_hash, seed, plan) VALUES (?, ?, ?)",
                (plan_hash, seed, json.dumps(plan, sort_keys=True)),
            )
        return self.db.execute(
            "SELECT id FROM campaigns WHERE plan_hash=?", (plan_hash,)
        ).fetchone()[0]

    def finished_keys(self) -> set[str]:
        return {r[0] for r in self.db.execute("SELECT run_key FROM runs")}

    def save(self, run_key: str, campaign_id: int, record: RunRecord) -> None:
        """Write one finished run and its log in one transaction (all or nothing)."""
        doc = record.to_dict()
        log = doc.pop("log")
        with self.db:
            if self.version < SCHEMA_VERSION:
                self._upgrade()
            cur = self.db.execute(
                "INSERT INTO runs(run_key, campaign_id, evolver, config_hash, task, run_index, status,"
                " evaluations, generations, record) VALUES (?,?,?,?,?,?,?,?,?,?)",
                (
                    run_key,
                    campaign_id,
                    record.evolver,
                    record.config_hash,
                    record.task,
                    record.run_index,
                    record.status,
                    record.evaluations,
                    record.generations,
                    json.dumps(doc, sort_keys=True),
                ),
            )
            self.db.executemany(
                "INSERT INTO generations VALUES (?,?,?,?,?,?,?,?,?)",
                [
                    (
                        cur.lastrowid,
                        g["generation"],
                        g["evaluations"],
                        g["best_fitness"],
                        g["mean_fitness"],
                        g["best_hidden"],
                        g["best_connections"],
                        json.dumps(g["stats"], sort_keys=True),
                        json.dumps(g["champion_test"], sort_keys=True),
                    )
                    for g in log
                ],
            )
        self.version = SCHEMA_VERSION  # reached only when the transaction committed

    def records(self, with_log: bool = True) -> Iterator[RunRecord]:
        """Every stored run, in a stable order (evolver, task, run index)."""
        rows = self.db.execute(
            "SELECT id, record FROM runs ORDER BY evolver, config_hash, task, run_index, id"
        ).fetchall()
        for run_id, text in rows:
            doc = json.loads(text)
            doc["log"] = self._log(run_id) if with_log else []
            yield RunRecord.from_dict(doc)

    def _log(self, run_id: int) -> list[dict[str, Any]]:
        champion_test = "champion_test" if self.version >= 2 else "'{}'"
        rows = self.db.execute(
            "SELECT generation, evaluations, best_fitness, mean_fitness, best_hidden,"
            f" best_connections, stats, {champion_test} FROM generations"
            " WHERE run_id=? ORDER BY generation",
            (run_id,),
        ).fetchall()
        return [
            asdict(GenerationLog(g, e, bf, mf, bh, bc, json.loads(st), json.loads(ct)))
            for g, e, bf, mf, bh, bc, st, ct in rows
        ]

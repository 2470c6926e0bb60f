"""The results store: one SQLite file, one transaction per finished run.

Tables: ``meta`` (schema version), ``campaigns`` (seed and plan of each campaign),
``campaign_shares`` (which shares of its plan a campaign was run for: 1/1 the whole plan,
K/N the runs of batch job K of N, :mod:`.shares`; a merged store holds the shares of its
sources), ``runs`` (one row per finished run, the full record as JSON plus the columns
reports filter on), ``generations`` (the per-generation log) and ``claims`` (which coordinator
process is running which pending run). A run is written whole or not at all, so a store
left by a killed process opens cleanly with every finished run in it, and running the same
campaign again skips the runs whose key is already stored.

**Opening.** ``ResultStore(path)`` opens for writing: it creates the file (and its folder)
when missing and checks at once that the store can be written (the file, its folder, which
SQLite needs for its journal, and free disk space), so ``run`` fails before any run starts.
``ResultStore(path, write=False)`` opens an existing store read-only (SQLite's ``mode=ro``):
reports and exports work on a read-only file, in a read-only folder, and never change it.

**Claims.** Several coordinator processes may run the same campaign on one store: each
pending run is claimed atomically before it starts (:meth:`ResultStore.claim`); a claim
whose owner has shown no sign of life for :data:`CLAIM_EXPIRY` seconds (it refreshes its
claims every :data:`HEARTBEAT` seconds) is void and may be claimed again, and so is at once
the claim of a process of this machine that no longer exists. A run finished by
two coordinators (a claim taken over from a stalled one) is stored once.

**JSON.** Record, stats and details are stored as strict JSON (non-finite numbers by the
rule of :mod:`.jsonsafe`).

Schema versions: 1 had no ``champion_test`` column in ``generations``; 2 had no
``non_finite_fitness`` column and no ``claims`` table; 3 keyed runs by the values as given
(a budget or setting left at its default hashed differently from the same value given) and
may hold former option names; 5 had no ``campaign_shares`` table (every campaign ran
whole, so the upgrade records share 1/1 for each). An older store is read as it is (missing
columns read as their defaults, former option names read as the current ones) and is
upgraded inside the transaction of the first write to it, so an upgrade that fails leaves
the store as it was. The upgrade to 4 recomputes every run's key and configuration hash
from its recorded, resolved values (:func:`~.runs.record_key`); a run stored twice under
the old keys (asked for once with and once without a default value) is kept once, the
first stored.
"""

from __future__ import annotations

import contextlib
import os
import secrets
import shutil
import socket
import sqlite3
import threading
import time
from collections.abc import Callable, Iterable, Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from neuroyard.core import jsonsafe
from neuroyard.core.defaults import DEFAULT_PATH
from neuroyard.core.errors import EvolverError, StoreError
from neuroyard.core.evolver_registry import EvolverSpec, canonical_config
from neuroyard.core.inputfile import decode_utf8
from neuroyard.records.recordcheck import RecordProblem, check_generation, check_record
from neuroyard.records.runs import RunRecord, content_digest, record_key
from neuroyard.records.shares import WHOLE, Share

SCHEMA_VERSION = 6
READABLE_VERSIONS = tuple(str(v) for v in range(1, SCHEMA_VERSION + 1))  # older ones upgrade
CLAIM_EXPIRY = 60.0  # s without a heartbeat after which a claim is void (ours)
HEARTBEAT = 10.0  # s between a coordinator's refreshes of its claims (ours)
MIN_FREE_BYTES = 1 << 20  # below this much free disk space a store counts as full (ours)
# the columns of a generation log row, by the names of GenerationLog's fields; the JSON ones
_LOG_COLUMNS = (
    "generation",
    "evaluations",
    "best_fitness",
    "mean_fitness",
    "best_hidden",
    "best_connections",
    "stats",
    "champion_test",
    "non_finite_fitness",
)
_JSON_COLUMNS = ("stats", "champion_test")

_CLAIMS = """CREATE TABLE IF NOT EXISTS claims (
    run_key TEXT PRIMARY KEY,
    owner TEXT NOT NULL,
    heartbeat REAL NOT NULL
)"""
_SHARES = """CREATE TABLE IF NOT EXISTS campaign_shares (
    campaign_id INTEGER NOT NULL REFERENCES campaigns(id),
    share_index INTEGER NOT NULL,
    share_count INTEGER NOT NULL,
    PRIMARY KEY (campaign_id, share_index, share_count)
)"""
_SCHEMA = (
    """
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
    non_finite_fitness INTEGER NOT NULL DEFAULT 0,
    PRIMARY KEY (run_id, generation)
);
"""
    + _CLAIMS
    + ";"
    + _SHARES
    + ";"
)


def _statements(*sql: str) -> Callable[[sqlite3.Connection], None]:
    def upgrade(db: sqlite3.Connection) -> None:
        for statement in sql:
            db.execute(statement)

    return upgrade


def _rekey(db: sqlite3.Connection) -> None:
    """Every run keyed by its resolved values, under current option names: version 3 -> 4
    (keys from resolved values), and 4 -> 5 (NEAT's selection and novelty options, whose
    defaults every NEAT run ran under, enter each NEAT run's effective configuration)."""
    taken: set[str] = set()
    rows = db.execute("SELECT id, record FROM runs ORDER BY id").fetchall()
    for run_id, text in rows:
        record = _current_names(RunRecord.from_dict({**jsonsafe.loads(text), "log": []}))
        # an evolver not installed here, or whose options changed, keeps its hash
        with contextlib.suppress(EvolverError):
            record.config_hash = EvolverSpec(record.evolver, record.config).config_hash
        key = record_key(record)
        if key in taken:  # the same run stored twice under the old keys
            db.execute("DELETE FROM generations WHERE run_id=?", (run_id,))
            db.execute("DELETE FROM runs WHERE id=?", (run_id,))
            continue
        taken.add(key)
        doc = record.to_dict()
        doc.pop("log")
        db.execute(
            "UPDATE runs SET run_key=?, config_hash=?, record=? WHERE id=?",
            (key, record.config_hash, jsonsafe.dumps(doc, sort_keys=True), run_id),
        )
    db.execute("DELETE FROM claims")


def _current_names(record: RunRecord) -> RunRecord:
    """``record`` with former evolver option names replaced by the current ones."""
    record.config = canonical_config(record.evolver, record.config)
    record.evolver_settings = canonical_config(record.evolver, record.evolver_settings)
    return record


# What brings a store of version v to v + 1 (run inside a write transaction).
_UPGRADES: dict[int, Callable[[sqlite3.Connection], None]] = {
    1: _statements("ALTER TABLE generations ADD COLUMN champion_test TEXT NOT NULL DEFAULT '{}'"),
    2: _statements(
        "ALTER TABLE generations ADD COLUMN non_finite_fitness INTEGER NOT NULL DEFAULT 0",
        _CLAIMS,
    ),
    3: _rekey,
    4: _rekey,
    5: _statements(_SHARES, "INSERT OR IGNORE INTO campaign_shares SELECT id, 1, 1 FROM campaigns"),
}


@dataclass(frozen=True)
class Campaign:
    """A campaign as stored: its plan (:meth:`CampaignPlan.describe`), the plan's hash, its
    seed, and the shares of the plan it was run for."""

    plan_hash: str
    seed: int
    plan: dict[str, Any]
    shares: frozenset[Share]


@dataclass(frozen=True)
class StoredRun:
    """A stored run: its key, its record (with or without the log), when it was stored
    (SQLite's ``datetime('now')``, UTC) and the store it was read from."""

    key: str
    record: RunRecord
    finished_at: str
    source: Path


class RunConflict(StoreError):
    """Two stores hold different records of one run (beyond :data:`~.runs.MACHINE_FIELDS`)."""

    def __init__(self, key: str, first: Path, second: Path) -> None:
        super().__init__(
            f"run {key}: {first} and {second} hold different records of it "
            "(they differ in more than timing, host and versions)"
        )


class ResultStore:
    """Open the store at ``path`` for writing (created if needed) or, with ``write=False``,
    an existing store read-only; use as a context manager. Every problem with the file is
    a :class:`StoreError` that names the path and the reason."""

    def __init__(self, path: str | Path = DEFAULT_PATH, write: bool = True) -> None:
        self.path = Path(path)
        self.writable = write
        if self.path.is_dir():
            raise StoreError(f"results store {self.path}: is a folder, not a store file")
        if write:
            self._prepare_for_writing()
        elif not self.path.exists():
            raise StoreError(f"results store {self.path}: no such file")
        try:
            if write:
                self.db = sqlite3.connect(self.path, timeout=30)
            else:
                self.db = sqlite3.connect(f"{self.path.resolve().as_uri()}?mode=ro", uri=True)
            self.db.execute("PRAGMA foreign_keys = ON")
            self._check_schema()
            if write:
                self._probe_write()
        except sqlite3.DatabaseError as exc:
            raise StoreError(f"results store {self.path}: {_reason(exc)}") from None

    def _prepare_for_writing(self) -> None:
        """Create the folder; fail with the reason when the file, its folder (SQLite writes
        its journal beside the file) or the disk cannot take a write."""
        folder = self.path.parent
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StoreError(
                f"results store {self.path}: cannot create its folder ({exc.strerror})"
            ) from None
        if self.path.exists() and not os.access(self.path, os.W_OK):
            raise StoreError(f"results store {self.path}: cannot write it: the file is read-only")
        if not os.access(folder, os.W_OK | os.X_OK):
            what = "write to" if self.path.exists() else "create"
            raise StoreError(
                f"results store {self.path}: cannot {what} it: its folder {folder} is read-only"
            )
        free = shutil.disk_usage(folder).free
        if free < MIN_FREE_BYTES:
            raise StoreError(
                f"results store {self.path}: cannot write it: the disk is full "
                f"({free:,} bytes free)"
            )

    def _probe_write(self) -> None:
        """A write that is rolled back: proves the file and its journal can be written."""
        self.db.execute("BEGIN IMMEDIATE")
        try:
            self.db.execute("UPDATE meta SET value = value WHERE key = 'schema_version'")
        finally:
            self.db.rollback()

    def _tables(self) -> set[str]:
        return {r[0] for r in self.db.execute("SELECT name FROM sqlite_master WHERE type='table'")}

    def _create_schema(self) -> None:
        """Create the tables in one write transaction, unless another process got there
        first: two coordinators may open a new store at the same moment."""
        self.db.execute("BEGIN IMMEDIATE")
        try:
            if not self._tables():
                for statement in _SCHEMA.split(";"):
                    if statement.strip():
                        self.db.execute(statement)
                self.db.execute(
                    "INSERT INTO meta(key, value) VALUES ('schema_version', ?)",
                    (str(SCHEMA_VERSION),),
                )
            self.db.commit()
        except BaseException:
            self.db.rollback()
            raise

    def _check_schema(self) -> None:
        tables = self._tables()
        if not tables:
            if not self.writable:
                raise StoreError(f"results store {self.path}: empty file, no results")
            self._create_schema()
            tables = self._tables()
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

    @contextmanager
    def _write(self) -> Iterator[sqlite3.Connection]:
        """A write transaction that first upgrades an older store; all or nothing. A write
        the file cannot take (disk full, read-only, locked past the timeout) rolls back and
        is a :class:`StoreError` naming the path and the reason."""
        try:
            self.db.execute("BEGIN IMMEDIATE")
            try:
                for version in range(self.version, SCHEMA_VERSION):
                    _UPGRADES[version](self.db)
                if self.version < SCHEMA_VERSION:
                    self.db.execute(
                        "UPDATE meta SET value=? WHERE key='schema_version'",
                        (str(SCHEMA_VERSION),),
                    )
                yield self.db
                self.db.commit()
            except BaseException:
                self.db.rollback()
                raise
        except sqlite3.OperationalError as exc:
            raise StoreError(f"results store {self.path}: {_reason(exc, writing=True)}") from None
        self.version = SCHEMA_VERSION  # reached only when the commit went through

    def __enter__(self) -> ResultStore:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        self.db.close()

    def campaign(
        self, seed: int, plan: Mapping[str, Any], plan_hash: str, share: Share = WHOLE
    ) -> int:
        """Id of the campaign with this plan, created on first use; ``share`` is recorded
        among the shares of the plan it is run for."""
        with self._write() as db:
            return _add_campaign(db, seed, plan, plan_hash, [share])

    def campaigns(self) -> list[Campaign]:
        """Every campaign of the store, in the order they were first run."""
        rows = self.db.execute("SELECT id, plan_hash, seed, plan FROM campaigns ORDER BY id")
        found = []
        for campaign_id, plan_hash, seed, plan in rows.fetchall():
            if self.version < 6:  # every campaign ran whole (see the module docstring)
                shares = frozenset({WHOLE})
            else:
                shares = frozenset(
                    Share(*row)
                    for row in self.db.execute(
                        "SELECT share_index, share_count FROM campaign_shares WHERE campaign_id=?",
                        (campaign_id,),
                    )
                )
            found.append(Campaign(plan_hash, seed, jsonsafe.loads(plan), shares))
        return found

    def finished_keys(self) -> set[str]:
        return {r[0] for r in self.db.execute("SELECT run_key FROM runs")}

    def claim(self, keys: Iterable[str], owner: str, limit: int) -> list[str]:
        """Claim for ``owner`` up to ``limit`` of ``keys`` that are neither stored nor claimed
        by a live owner (claims older than :data:`CLAIM_EXPIRY` are void); atomic, so two
        coordinators never claim the same run. Returns the keys claimed, in ``keys`` order."""
        if limit < 1:
            return []
        now = time.time()
        with self._write() as db:
            db.execute("DELETE FROM claims WHERE heartbeat < ?", (now - CLAIM_EXPIRY,))
            owners = {r[0] for r in db.execute("SELECT DISTINCT owner FROM claims")}
            db.executemany("DELETE FROM claims WHERE owner=?", [(o,) for o in owners if _gone(o)])
            taken = {r[0] for r in db.execute("SELECT run_key FROM claims")}
            done = {r[0] for r in db.execute("SELECT run_key FROM runs")}
            chosen = [k for k in keys if k not in taken and k not in done][:limit]
            db.executemany(
                "INSERT INTO claims(run_key, owner, heartbeat) VALUES (?, ?, ?)",
                [(k, owner, now) for k in chosen],
            )
        return chosen

    def claimed_elsewhere(self, keys: Iterable[str], owner: str) -> int:
        """How many of ``keys`` are not stored and claimed by another live owner."""
        wanted = set(keys)
        if self.version < SCHEMA_VERSION:
            return 0  # no claims table yet: nobody else is running this store
        rows = self.db.execute(
            "SELECT run_key FROM claims WHERE owner != ? AND heartbeat >= ?"
            " AND run_key NOT IN (SELECT run_key FROM runs)",
            (owner, time.time() - CLAIM_EXPIRY),
        )
        return sum(1 for (key,) in rows if key in wanted)

    @contextmanager
    def keep_alive(self, owner: str) -> Iterator[None]:
        """While the block runs, a thread refreshes ``owner``'s claims every
        :data:`HEARTBEAT` seconds (through its own connection, so it goes on while this
        thread is busy with a run)."""
        stop = threading.Event()

        def beat() -> None:
            db = sqlite3.connect(self.path, timeout=30)
            try:
                while not stop.wait(HEARTBEAT):
                    with contextlib.suppress(sqlite3.Error), db:
                        db.execute(
                            "UPDATE claims SET heartbeat=? WHERE owner=?", (time.time(), owner)
                        )
            finally:
                db.close()

        thread = threading.Thread(target=beat, name="neuroyard-claims", daemon=True)
        thread.start()
        try:
            yield
        finally:
            stop.set()
            thread.join()

    def release(self, owner: str, keys: Iterable[str] | None = None) -> None:
        """Drop the claims of ``owner`` (all of them, or those of ``keys``)."""
        with self._write() as db:
            if keys is None:
                db.execute("DELETE FROM claims WHERE owner=?", (owner,))
            else:
                db.executemany(
                    "DELETE FROM claims WHERE owner=? AND run_key=?", [(owner, k) for k in keys]
                )

    def save(self, run_key: str, campaign_id: int, record: RunRecord) -> bool:
        """Write one finished run and its log in one transaction (all or nothing), and drop
        its claim. Returns False when the run was already stored (by another coordinator)."""
        with self._write() as db:
            db.execute("DELETE FROM claims WHERE run_key=?", (run_key,))
            return _insert_run(db, run_key, campaign_id, record)

    def merge_in(self, campaign: Campaign, runs: Iterable[StoredRun]) -> int:
        """Add ``campaign`` (created or, when its plan is stored, given its ``shares`` too)
        and every run of ``runs`` whose key is not stored yet, with its log and the time it
        was stored, in one transaction: all or nothing. A run already stored with other
        content (:func:`~.runs.content_digest`) is a :class:`RunConflict` and nothing is
        written. Returns the number of runs added."""
        added = 0
        with self._write() as db:
            campaign_id = _add_campaign(
                db, campaign.seed, campaign.plan, campaign.plan_hash, campaign.shares
            )
            for run in runs:
                if _insert_run(db, run.key, campaign_id, run.record, run.finished_at):
                    added += 1
                    continue
                run_id, data = db.execute(
                    "SELECT id, CAST(record AS BLOB) FROM runs WHERE run_key=?", (run.key,)
                ).fetchone()
                if content_digest(self._record(run_id, run.key, data)) != content_digest(
                    run.record
                ):
                    raise RunConflict(run.key, run.source, self.path)
        return added

    def integrity(self) -> str:
        """SQLite's ``PRAGMA integrity_check``: ``"ok"`` for a sound file."""
        return "; ".join(r[0] for r in self.db.execute("PRAGMA integrity_check"))

    def records(self, with_log: bool = True) -> Iterator[RunRecord]:
        """Every stored run, in a stable order (evolver, task, run index)."""
        for run in self.stored_runs(with_log):
            yield run.record

    def stored_runs(self, with_log: bool = True) -> Iterator[StoredRun]:
        """Every stored run with its key, in the order of :meth:`records`; a run whose record
        or log is broken is a :class:`StoreError` naming the store, the run and what is
        wrong (:meth:`check_records`)."""
        for run_id, key, data, finished_at in self._runs():
            yield StoredRun(key, self._record(run_id, key, data, with_log), finished_at, self.path)

    def check_records(self) -> None:
        """Check every stored run, record and log, against the record classes
        (:mod:`.recordcheck`): each is UTF-8 JSON of at most 100 levels, has every field, no
        unknown one, and a value of the field's type in each. A hand-edited store can break
        that; ``run`` checks before it adds to a store, and every reader meets the same
        error when it reads the run.

        Raises:
            StoreError: naming the store, the first broken run (its key) and what is wrong."""
        for run_id, key, data, _ in self._runs():
            self._document(run_id, key, data, with_log=True)

    def _runs(self) -> list[tuple[int, str, bytes, str]]:
        """(row id, key, record as bytes, finished at) of every run, in a stable order."""
        return self._rows(
            "SELECT id, run_key, CAST(record AS BLOB), finished_at FROM runs"
            " ORDER BY evolver, config_hash, task, run_index, id"
        )

    def _rows(self, sql: str, parameters: tuple[Any, ...] = ()) -> list[Any]:
        """The rows of a query; a file SQLite cannot read (or text that it cannot decode) is
        a :class:`StoreError` naming the store."""
        try:
            return self.db.execute(sql, parameters).fetchall()
        except sqlite3.DatabaseError as exc:
            raise StoreError(f"results store {self.path}: cannot read it ({exc})") from None

    def _record(self, run_id: int, key: str, data: bytes, with_log: bool = True) -> RunRecord:
        record = RunRecord.from_dict(self._document(run_id, key, data, with_log))
        return record if self.version >= 4 else _current_names(record)

    def _document(self, run_id: int, key: str, data: bytes, with_log: bool) -> dict[str, Any]:
        """The checked JSON form of run ``key``'s record (row ``run_id``; ``data``: the
        stored record's bytes), with its log rows when ``with_log`` (else an empty log)."""
        where = f"results store {self.path}: run {key}"
        doc = _json_cell(data, f"{where}: its record")
        try:
            check_record(doc)
        except RecordProblem as exc:
            raise StoreError(f"{where}: its record: {exc}") from None
        doc["log"] = self._log(run_id, where) if with_log else []
        return doc

    def _log(self, run_id: int, where: str) -> list[dict[str, Any]]:
        """The checked log rows of row ``run_id`` (:class:`GenerationLog` fields); errors
        start with ``where`` and name the generation."""
        select = {name: name for name in _LOG_COLUMNS}
        select.update({name: f"CAST({name} AS BLOB)" for name in _JSON_COLUMNS})
        if self.version < 2:  # columns added by later versions read as their defaults
            select["champion_test"] = "CAST('{}' AS BLOB)"
        if self.version < 3:
            select["non_finite_fitness"] = "0"
        rows = self._rows(
            f"SELECT {', '.join(select.values())} FROM generations WHERE run_id=?"
            " ORDER BY generation",
            (run_id,),
        )
        log = []
        for values in rows:
            row = dict(zip(_LOG_COLUMNS, values, strict=True))
            at = f"{where}: generation {row['generation']}"
            for name in _JSON_COLUMNS:
                row[name] = _json_cell(row[name], f"{at}: {name}")
            try:
                check_generation(row)
            except RecordProblem as exc:
                raise StoreError(f"{at}: {exc}") from None
            log.append(row)
        return log


def _json_cell(data: bytes | None, where: str) -> Any:
    """The JSON value a cell holds, read from its bytes (SQLite's text may be any bytes,
    which Python's sqlite3 would fail to decode); a :class:`StoreError` starting with
    ``where`` when it is NULL, not UTF-8 or not JSON (:func:`~neuroyard.core.jsonsafe.loads`)."""
    if data is None:
        raise StoreError(f"{where}: missing (NULL)")
    text = decode_utf8(data, where, StoreError)
    try:
        return jsonsafe.loads(text)
    except ValueError as exc:
        raise StoreError(f"{where}: not valid JSON ({exc})") from None


def _add_campaign(
    db: sqlite3.Connection,
    seed: int,
    plan: Mapping[str, Any],
    plan_hash: str,
    shares: Iterable[Share],
) -> int:
    """Inside a write transaction: the id of the campaign of ``plan_hash`` (created when
    missing), with ``shares`` added to the shares it was run for."""
    db.execute(
        "INSERT OR IGNORE INTO campaigns(plan_hash, seed, plan) VALUES (?, ?, ?)",
        (plan_hash, seed, jsonsafe.dumps(plan, sort_keys=True)),
    )
    (campaign_id,) = db.execute(
        "SELECT id FROM campaigns WHERE plan_hash=?", (plan_hash,)
    ).fetchone()
    db.executemany(
        "INSERT OR IGNORE INTO campaign_shares(campaign_id, share_index, share_count)"
        " VALUES (?, ?, ?)",
        [(campaign_id, share.index, share.count) for share in shares],
    )
    return campaign_id


def _insert_run(
    db: sqlite3.Connection,
    run_key: str,
    campaign_id: int,
    record: RunRecord,
    finished_at: str | None = None,
) -> bool:
    """Inside a write transaction: store ``record`` and its log under ``run_key`` (stored
    now, or at ``finished_at``); False, writing nothing, when the key is stored already."""
    doc = record.to_dict()
    log = doc.pop("log")
    cur = db.execute(
        "INSERT OR IGNORE INTO runs(run_key, campaign_id, evolver, config_hash, task,"
        " run_index, status, evaluations, generations, record, finished_at)"
        " VALUES (?,?,?,?,?,?,?,?,?,?, COALESCE(?, datetime('now')))",
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
            jsonsafe.dumps(doc, sort_keys=True),
            finished_at,
        ),
    )
    if cur.rowcount == 0:
        return False
    db.executemany(
        "INSERT INTO generations(run_id, generation, evaluations, best_fitness,"
        " mean_fitness, best_hidden, best_connections, stats, champion_test, non_finite_fitness)"
        " VALUES (?,?,?,?,?,?,?,?,?,?)",
        [
            (
                cur.lastrowid,
                g["generation"],
                g["evaluations"],
                g["best_fitness"],
                g["mean_fitness"],
                g["best_hidden"],
                g["best_connections"],
                jsonsafe.dumps(g["stats"], sort_keys=True),
                jsonsafe.dumps(g["champion_test"], sort_keys=True),
                g["non_finite_fitness"],
            )
            for g in log
        ],
    )
    return True


def owner_id() -> str:
    """A name for this coordinator process in the claims: ``host:process id:nonce``."""
    return f"{socket.gethostname()}:{os.getpid()}:{secrets.token_hex(4)}"


def _gone(owner: str) -> bool:
    """True when ``owner`` was a process of this host that no longer exists, so its claims
    are void at once (a process elsewhere is judged by its heartbeat only)."""
    host, _, rest = owner.partition(":")
    pid = rest.partition(":")[0]
    if host != socket.gethostname() or not pid.isdigit():
        return False
    try:
        os.kill(int(pid), 0)
    except ProcessLookupError:
        return True
    except PermissionError:
        return False
    return False


def _reason(exc: sqlite3.DatabaseError, writing: bool = False) -> str:
    """The user's words for a SQLite error on opening (or, ``writing``, writing) a store."""
    text = str(exc)
    if "readonly" in text:
        return "cannot write it: the file or its folder is read-only"
    if "disk is full" in text or "database or disk is full" in text:
        return "cannot write it: the disk is full"
    if "unable to open" in text:
        return f"cannot open it ({text})"
    if "locked" in text:
        return f"another process holds it locked ({text})"
    if "malformed" in text:
        return f"corrupt ({text})"
    return f"cannot write it ({text})" if writing else f"not a neuroyard store ({text})"

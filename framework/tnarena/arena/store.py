"""The study database: an embedded SQLite file (standard library sqlite3, WAL mode).

Only the parent process writes. Each finished task is one transaction, so a
study killed at any moment keeps everything it finished and resumes from
there; the primary key (point, setting, instance) makes a task present once.

Tables: ``meta`` (study seed, title, source), ``runs`` (one row per
invocation), ``points``, ``settings`` and ``results`` (one row per task:
columns :data:`RESULT_COLUMNS`).
"""

from __future__ import annotations

import json
import sqlite3
import time
from collections.abc import Iterable
from typing import Any

from tnarena.errors import TnarenaError

SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS runs (
    id INTEGER PRIMARY KEY, started REAL NOT NULL, finished REAL, workers INTEGER, tasks INTEGER);
CREATE TABLE IF NOT EXISTS points (
    id INTEGER PRIMARY KEY, key TEXT UNIQUE NOT NULL, label TEXT NOT NULL,
    family TEXT NOT NULL, lattice TEXT, size INTEGER NOT NULL, model TEXT NOT NULL,
    rate REAL NOT NULL, options TEXT NOT NULL,
    n INTEGER, k INTEGER, distances TEXT, fingerprint TEXT, nodes INTEGER);
CREATE TABLE IF NOT EXISTS settings (
    id INTEGER PRIMARY KEY, key TEXT UNIQUE NOT NULL, label TEXT NOT NULL,
    strategy TEXT NOT NULL, params TEXT NOT NULL, exact INTEGER NOT NULL,
    compared INTEGER NOT NULL DEFAULT 0, reference INTEGER NOT NULL DEFAULT 0,
    fallback INTEGER NOT NULL DEFAULT 0);
CREATE TABLE IF NOT EXISTS plans (
    point_id INTEGER NOT NULL REFERENCES points(id),
    setting_id INTEGER NOT NULL REFERENCES settings(id),
    run_id INTEGER NOT NULL REFERENCES runs(id),
    status TEXT NOT NULL CHECK (status IN ('ok', 'failed')),
    reason TEXT, seconds REAL, plan BLOB, worker INTEGER, finished REAL NOT NULL, choice TEXT,
    PRIMARY KEY (point_id, setting_id));
CREATE TABLE IF NOT EXISTS results (
    point_id INTEGER NOT NULL REFERENCES points(id),
    setting_id INTEGER NOT NULL REFERENCES settings(id),
    instance INTEGER NOT NULL,
    run_id INTEGER NOT NULL REFERENCES runs(id),
    status TEXT NOT NULL CHECK (status IN ('ok', 'failed')),
    reason TEXT,
    syndrome TEXT, classes TEXT, log_probs TEXT, decision TEXT, true_class TEXT, logical_failure INTEGER,
    contract_seconds REAL, decode_seconds REAL, plan_seconds REAL,
    flops REAL, intermediate_bytes REAL, traced_peak_bytes REAL, discarded_weight REAL,
    worker INTEGER, finished REAL NOT NULL, profile TEXT, batch INTEGER,
    PRIMARY KEY (point_id, setting_id, instance));
"""

#: What a worker reports for a task (besides point, setting, instance).
RESULT_COLUMNS = ("status", "reason", "syndrome", "classes", "log_probs", "decision", "true_class", "logical_failure",
                  "contract_seconds", "decode_seconds", "plan_seconds", "flops", "intermediate_bytes",
                  "traced_peak_bytes", "discarded_weight", "worker", "profile", "batch")


class Store:
    """A study database at ``path`` (``':memory:'`` for a throw-away one)."""

    def __init__(self, path: str) -> None:
        self.path = path
        try:
            self.db = sqlite3.connect(path, isolation_level=None)  # explicit transactions below
        except sqlite3.Error as exc:
            raise TnarenaError(f"cannot open the study database {path!r}: {exc}.") from None
        self.db.row_factory = sqlite3.Row
        try:
            self.db.execute("PRAGMA journal_mode=WAL")
            self.db.execute("PRAGMA synchronous=NORMAL")  # WAL + NORMAL: durable across a killed process
            self.db.executescript(SCHEMA)
            for table, column, kind in (("plans", "choice", "TEXT"), ("results", "profile", "TEXT"),
                                        ("results", "batch", "INTEGER")):  # databases made before them
                if column not in {r[1] for r in self.db.execute(f"PRAGMA table_info({table})")}:
                    self.db.execute(f"ALTER TABLE {table} ADD COLUMN {column} {kind}")
        except sqlite3.DatabaseError as exc:
            raise TnarenaError(f"{path!r} is not a tnarena study database ({exc}); give another --db path.") from None

    def close(self) -> None:
        self.db.close()

    # ---- study description ------------------------------------------------------
    def meta(self) -> dict[str, str]:
        return {r["key"]: r["value"] for r in self.db.execute("SELECT key, value FROM meta")}

    def bind_study(self, seed: int, title: str, source: str) -> None:
        """Record the study seed, or refuse a database made with another seed."""
        held = self.meta().get("seed")
        if held is not None and int(held) != seed:
            raise TnarenaError(
                f"the database {self.path!r} holds a study with seed {held}, not {seed}; its instances "
                f"would differ. Give another --db path, or the seed {held}."
            )
        with self._transaction():
            for key, value in (("seed", str(seed)), ("title", title), ("source", source)):
                self.db.execute("INSERT OR REPLACE INTO meta (key, value) VALUES (?, ?)", (key, value))

    def upsert_point(self, key: str, label: str, fields: dict[str, Any]) -> int:
        cols = ("family", "lattice", "size", "model", "rate", "options", "n", "k", "distances",
                "fingerprint", "nodes")
        values = [fields.get(c) for c in cols]
        with self._transaction():
            self.db.execute(
                f"INSERT INTO points (key, label, {', '.join(cols)}) VALUES (?, ?, {', '.join('?' * len(cols))}) "
                f"ON CONFLICT(key) DO UPDATE SET {', '.join(f'{c} = excluded.{c}' for c in cols)}",
                [key, label, *values],
            )
        return int(self.db.execute("SELECT id FROM points WHERE key = ?", (key,)).fetchone()[0])

    def set_settings(self, rows: Iterable[dict[str, Any]]) -> dict[str, int]:
        """Record the study's settings and their roles; returns key -> id. Older settings stay, unflagged."""
        ids = {}
        with self._transaction():
            self.db.execute("UPDATE settings SET compared = 0, reference = 0, fallback = 0")
            for r in rows:
                self.db.execute(
                    "INSERT INTO settings (key, label, strategy, params, exact, compared, reference, fallback) "
                    "VALUES (:key, :label, :strategy, :params, :exact, :compared, :reference, :fallback) "
                    "ON CONFLICT(key) DO UPDATE SET compared = excluded.compared, "
                    "reference = excluded.reference, fallback = excluded.fallback", r)
        for r in self.db.execute("SELECT id, key FROM settings"):
            ids[r["key"]] = int(r["id"])
        return ids

    # ---- runs and results ------------------------------------------------------------
    def start_run(self, workers: int, tasks: int) -> int:
        with self._transaction():
            cur = self.db.execute("INSERT INTO runs (started, workers, tasks) VALUES (?, ?, ?)",
                                  (time.time(), workers, tasks))
        return int(cur.lastrowid)

    def finish_run(self, run_id: int) -> None:
        with self._transaction():
            self.db.execute("UPDATE runs SET finished = ? WHERE id = ?", (time.time(), run_id))

    def plans(self) -> dict[tuple[int, int], sqlite3.Row]:
        """(point id, setting id) -> its plans row (status, reason, seconds, plan)."""
        return {(r["point_id"], r["setting_id"]): r for r in self.db.execute("SELECT * FROM plans")}

    def add_plan(self, point_id: int, setting_id: int, run_id: int, row: dict[str, Any]) -> None:
        with self._transaction():
            self.db.execute(
                "INSERT INTO plans (point_id, setting_id, run_id, status, reason, seconds, plan, worker, finished, "
                "choice) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (point_id, setting_id, run_id, row["status"], row.get("reason"), row.get("plan_seconds"),
                 row.get("plan"), row.get("worker"), time.time(), row.get("choice")))

    def finished_tasks(self) -> set[tuple[int, int, int]]:
        """(point id, setting id, instance) of every task with a stored result."""
        return {(r[0], r[1], r[2]) for r in self.db.execute("SELECT point_id, setting_id, instance FROM results")}

    def add_result(self, point_id: int, setting_id: int, instance: int, run_id: int, row: dict[str, Any]) -> None:
        """Store one finished task, in its own transaction."""
        values = [_sql_value(row.get(c)) for c in RESULT_COLUMNS]
        with self._transaction():
            self.db.execute(
                f"INSERT INTO results (point_id, setting_id, instance, run_id, finished, {', '.join(RESULT_COLUMNS)}) "
                f"VALUES (?, ?, ?, ?, ?, {', '.join('?' * len(RESULT_COLUMNS))})",
                [point_id, setting_id, instance, run_id, time.time(), *values],
            )

    def rows(self, sql: str, params: Iterable[Any] = ()) -> list[sqlite3.Row]:
        return list(self.db.execute(sql, tuple(params)))

    def _transaction(self):
        return _Transaction(self.db)


class _Transaction:
    """BEGIN IMMEDIATE ... COMMIT, or ROLLBACK on an exception."""

    def __init__(self, db: sqlite3.Connection) -> None:
        self.db = db

    def __enter__(self) -> None:
        self.db.execute("BEGIN IMMEDIATE")

    def __exit__(self, kind, value, tb) -> None:
        self.db.execute("COMMIT" if kind is None else "ROLLBACK")


def _sql_value(value: Any) -> Any:
    """Lists and dicts as JSON text; everything else as it is."""
    if isinstance(value, (list, tuple, dict)):
        return json.dumps(value)
    return value

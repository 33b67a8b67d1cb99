"""Choices kept in an SQLite file (the arena's database format: standard sqlite3, WAL), table ``choices``.

A choice is keyed by the network structure's fingerprint, a digest of the noise
table (the structure does not hold the rates), the target, the budget, the seed,
the number of calibration instances, the chi cap and the strategies named: the
same question is answered from the store.
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
import time
from collections.abc import Sequence

import numpy as np

from tnarena.errors import TnarenaError

from tnarena.chooser.model import Budget, Choice, Target

SCHEMA = """
CREATE TABLE IF NOT EXISTS choices (
    key TEXT PRIMARY KEY, fingerprint TEXT NOT NULL, noise TEXT NOT NULL, question TEXT NOT NULL,
    strategy TEXT NOT NULL, params TEXT NOT NULL, met INTEGER NOT NULL, evidence TEXT NOT NULL,
    created REAL NOT NULL);
CREATE INDEX IF NOT EXISTS choices_fingerprint ON choices (fingerprint);
"""


def noise_digest(table: np.ndarray) -> str:
    """SHA-256 of the noise table (shape (n, 4)) rounded to 1e-12."""
    return hashlib.sha256(np.round(np.asarray(table, dtype=float), 12).tobytes()).hexdigest()


def choice_question(fingerprint: str, table: np.ndarray, target: Target, budget: Budget, seed: int,
                    calibration: int, chi_cap: int, strategies: Sequence[str],
                    allow_exact: bool = True) -> tuple[str, dict]:
    """(store key, question): the key is the SHA-256 of the question, everything the choice depends on."""
    question = {"fingerprint": fingerprint, "noise": noise_digest(table),
                "target": [target.max_error, target.min_agreement],
                "budget": [budget.memory_bytes, budget.seconds_per_decode],
                "seed": int(seed), "calibration": int(calibration), "chi_cap": int(chi_cap),
                "strategies": list(strategies)}
    if not allow_exact:  # keys of choices that may be exact stay as they were
        question["allow_exact"] = False
    return hashlib.sha256(json.dumps(question, sort_keys=True).encode()).hexdigest(), question


class ChoiceStore:
    """The ``choices`` table of an SQLite file at ``path`` (created if missing; ':memory:' works)."""

    def __init__(self, path: str) -> None:
        self.path = path
        try:
            self.db = sqlite3.connect(path, isolation_level=None)
            self.db.execute("PRAGMA journal_mode=WAL")
            self.db.executescript(SCHEMA)
        except sqlite3.Error as exc:
            raise TnarenaError(f"cannot use {path!r} as a choices database ({exc}); give another --db path.") from None

    def get(self, key: str) -> Choice | None:
        row = self.db.execute("SELECT evidence FROM choices WHERE key = ?", (key,)).fetchone()
        return None if row is None else Choice.from_dict(json.loads(row[0]), from_store=True)

    def put(self, choice: Choice) -> None:
        """Save (or replace) a choice under its key: one statement, committed at once."""
        self.db.execute(
            "INSERT OR REPLACE INTO choices VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (choice.key, choice.fingerprint, choice.question.get("noise", ""), json.dumps(choice.question),
             choice.strategy, json.dumps(choice.params, default=_plain), int(choice.met),
             json.dumps(choice.to_dict(), default=_plain), time.time()))

    def for_structure(self, fingerprint: str) -> list[Choice]:
        """Every stored choice for one structure, oldest first."""
        rows = self.db.execute("SELECT evidence FROM choices WHERE fingerprint = ? ORDER BY created",
                               (fingerprint,)).fetchall()
        return [Choice.from_dict(json.loads(r[0]), from_store=True) for r in rows]

    def close(self) -> None:
        self.db.close()


def _plain(value):
    """JSON for numpy scalars that slip into params or costs."""
    if isinstance(value, np.generic):
        return value.item()
    raise TypeError(f"cannot store {type(value).__name__} in a choice")

"""The results store: one SQLite file holding every part's result, keyed by content, and every run.

One writer: only the parent process opens the store; workers return their results to it, and each result
is written in its own transaction as soon as it arrives, so an interrupted lot loses at most the parts that
were still being fitted. The database runs in WAL journal mode (readers do not block the writer; a killed
writer leaves a consistent file).

Tables:

- ``results``: ``key`` (primary), ``file``, ``sha256``, ``model``, ``options`` (JSON), ``status``,
  ``payload`` (the job's JSON record), ``run_id``, ``created`` (UTC ISO 8601), ``elapsed_s``;
- ``fits``: one row per result computed and written (``key``, ``run_id``, ``created``); counting these per
  key shows whether anything was fitted twice;
- ``runs``: ``id``, ``started``, ``finished`` (NULL while running or when interrupted), ``version``,
  ``settings`` (JSON: model, specs, options) and ``items`` (JSON: the lot's files, parts, conditions,
  keys).

The key is the SHA-256 of a canonical JSON of: the bench file's SHA-256, the standards' SHA-256, the model
text, the reading and fitting options, and the tool version. An unchanged file fitted the same way has the
same key, so a rerun reuses its result; anything that changes the result changes the key.
"""

from __future__ import annotations

import datetime
import hashlib
import json
import sqlite3
from collections.abc import Iterable
from pathlib import Path

from ..exceptions import InputError, OutputError

__all__ = ["ResultStore", "result_key"]

_SCHEMA = """
CREATE TABLE IF NOT EXISTS results (
    key TEXT PRIMARY KEY, file TEXT NOT NULL, sha256 TEXT NOT NULL, model TEXT NOT NULL,
    options TEXT NOT NULL, status TEXT NOT NULL, payload TEXT NOT NULL, run_id INTEGER,
    created TEXT NOT NULL, elapsed_s REAL);
CREATE TABLE IF NOT EXISTS fits (
    id INTEGER PRIMARY KEY AUTOINCREMENT, key TEXT NOT NULL, run_id INTEGER, created TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS runs (
    id INTEGER PRIMARY KEY AUTOINCREMENT, started TEXT NOT NULL, finished TEXT, version TEXT NOT NULL,
    settings TEXT NOT NULL, items TEXT NOT NULL);
"""


def _now() -> str:
    return datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds").replace("+00:00", "Z")


def result_key(sha256: str, standards: Iterable[str], model: str, options: dict, version: str) -> str:
    """Content key of one part's result (see the module docstring)."""
    canonical = json.dumps({"sha256": sha256, "standards": list(standards), "model": model.strip(),
                            "options": options, "version": version}, sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(canonical.encode()).hexdigest()


class ResultStore:
    """The SQLite store of a lot's results (one writer: the process that opened it).

    Parameters
    ----------
    path : str or Path
        The database file; created with its folder when missing.
    create : bool
        False to refuse a missing file (rebuilding a table from a store).
    """

    def __init__(self, path: str | Path, create: bool = True) -> None:
        self.path = Path(path)
        if not create and not self.path.is_file():
            raise InputError(f"{self.path}: no such results store")
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            self._db = sqlite3.connect(self.path, timeout=30.0, isolation_level=None)
            self._db.execute("PRAGMA journal_mode=WAL")
            # WAL with synchronous=NORMAL: every committed result survives a killed process (not a power
            # cut, which may lose the last few); much cheaper than a sync per result
            self._db.execute("PRAGMA synchronous=NORMAL")
            self._db.executescript(_SCHEMA)
        except sqlite3.DatabaseError as exc:
            raise OutputError(f"{self.path}: cannot open the results store ({exc})") from exc

    def close(self) -> None:
        self._db.close()

    def __enter__(self) -> ResultStore:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def _write(self, statements: list[tuple[str, tuple]]) -> int | None:
        """Run statements in one transaction; returns the last row id."""
        try:
            with self._db:
                self._db.execute("BEGIN IMMEDIATE")
                last = None
                for sql, values in statements:
                    last = self._db.execute(sql, values).lastrowid
            return last
        except sqlite3.DatabaseError as exc:
            raise OutputError(f"{self.path}: cannot write the results store ({exc})") from exc

    def begin_run(self, version: str, settings: dict, items: list[dict]) -> int:
        """Record a new run (settings and planned items); returns its id."""
        return int(self._write([("INSERT INTO runs (started, version, settings, items) VALUES (?, ?, ?, ?)",
                                 (_now(), version, json.dumps(settings), json.dumps(items)))]))

    def finish_run(self, run_id: int) -> None:
        self._write([("UPDATE runs SET finished = ? WHERE id = ?", (_now(), run_id))])

    def put(self, key: str, file: str, sha256: str, model: str, options: dict, payload: dict,
            run_id: int | None) -> None:
        """Write one computed result (replacing an older one of the same key) and log the fit."""
        self.put_many([(key, file, sha256, model, options, payload)], run_id)

    def put_many(self, rows: Iterable[tuple[str, str, str, str, dict, dict]], run_id: int | None) -> None:
        """Write computed results ``(key, file, sha256, model, options, payload)`` in one transaction
        (each replacing an older one of the same key) and log their fits."""
        now = _now()
        statements = []
        for key, file, sha256, model, options, payload in rows:
            statements += [
                ("INSERT OR REPLACE INTO results (key, file, sha256, model, options, status, payload, "
                 "run_id, created, elapsed_s) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                 (key, file, sha256, model, json.dumps(options, sort_keys=True), payload["status"],
                  json.dumps(payload), run_id, now, payload.get("elapsed_s"))),
                ("INSERT INTO fits (key, run_id, created) VALUES (?, ?, ?)", (key, run_id, now)),
            ]
        if statements:
            self._write(statements)

    def get(self, key: str) -> dict | None:
        """The stored payload of a key, or None."""
        row = self._db.execute("SELECT payload FROM results WHERE key = ?", (key,)).fetchone()
        return None if row is None else json.loads(row[0])

    def get_many(self, keys: Iterable[str]) -> dict[str, dict]:
        """Stored payloads of the given keys (missing keys left out)."""
        keys = list(dict.fromkeys(keys))
        found: dict[str, dict] = {}
        for start in range(0, len(keys), 500):
            chunk = keys[start:start + 500]
            marks = ",".join("?" * len(chunk))
            for key, payload in self._db.execute(
                    f"SELECT key, payload FROM results WHERE key IN ({marks})", chunk):
                found[key] = json.loads(payload)
        return found

    def fit_counts(self) -> dict[str, int]:
        """Key -> how many times a result was computed and written for it."""
        return dict(self._db.execute("SELECT key, COUNT(*) FROM fits GROUP BY key").fetchall())

    def runs(self) -> list[dict]:
        """Every run (oldest first) with its settings and items."""
        rows = self._db.execute(
            "SELECT id, started, finished, version, settings, items FROM runs ORDER BY id")
        return [{"id": r[0], "started": r[1], "finished": r[2], "version": r[3],
                 "settings": json.loads(r[4]), "items": json.loads(r[5])} for r in rows]

    def run(self, run_id: int | None = None) -> dict:
        """One run (default: the latest).

        Raises
        ------
        InputError
            The store holds no run, or none with that id.
        """
        runs = self.runs()
        if not runs:
            raise InputError(f"{self.path}: the store holds no lot run")
        if run_id is None:
            return runs[-1]
        for run in runs:
            if run["id"] == run_id:
                return run
        raise InputError(f"{self.path}: no run {run_id} (runs: {', '.join(str(r['id']) for r in runs)})")

"""The result store: one SQLite file, one row per candidate key, written by one process.

Each write is its own transaction in write-ahead-log mode, so a sweep killed at any moment
leaves every finished candidate stored and no half-written row; the next run skips what is
done or rejected. Only the sweep's parent process writes; workers return their results.
"""

from __future__ import annotations

import json
import sqlite3
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path

from fluxlab.errors import FluxlabError
from fluxlab.sweep.candidates import canonical_json
from fluxlab.version import __version__

__all__ = ["STATUSES", "StoredResult", "ResultStore", "STORE_NAME", "LOCK_NAME", "FolderLock"]

STATUSES = ("done", "rejected", "failed")
STORE_NAME = "results.sqlite"
LOCK_NAME = ".fluxlab_sweep.lock"


class FolderLock:
    """An exclusive lock on a sweep's output folder, held while a sweep runs there.

    An advisory ``flock`` on :data:`LOCK_NAME` in the folder: the kernel releases it when
    the process ends in any way (even SIGKILL), so a crashed sweep never leaves the folder
    locked. A second sweep into the folder is refused at once instead of evaluating the
    same candidates again. (The lock file itself stays; it holds the owner's pid, for
    information only.) Where ``fcntl`` is missing (Windows) no lock is taken.

    Raises
    ------
    FluxlabError
        On entering, when another process holds the lock.
    """

    def __init__(self, folder: str | Path):
        self.path = Path(folder) / LOCK_NAME
        self._file = None

    def __enter__(self) -> FolderLock:
        import os

        try:
            import fcntl
        except ImportError:  # not POSIX: no lock
            return self

        f = self.path.open("a+")
        try:
            fcntl.flock(f.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError as err:
            f.seek(0)
            owner = f.read().strip()
            f.close()
            raise FluxlabError(
                f"{self.path.parent}: another sweep is running into this folder (lock "
                f"{self.path} held{' by pid ' + owner if owner else ''}); wait for it to end "
                "or choose another --out") from err
        f.truncate(0)
        f.write(f"{os.getpid()}\n")
        f.flush()
        self._file = f
        return self

    def __exit__(self, *exc) -> None:
        if self._file is not None:
            self._file.close()  # closing the file releases the flock
            self._file = None

_SCHEMA = """
CREATE TABLE IF NOT EXISTS results (
    key TEXT PRIMARY KEY,
    status TEXT NOT NULL CHECK (status IN ('done', 'rejected', 'failed')),
    studies TEXT NOT NULL,
    parameters TEXT NOT NULL,
    machine TEXT NOT NULL,
    summary TEXT,
    curves TEXT,
    message TEXT NOT NULL DEFAULT '',
    elapsed_s REAL,
    attempts INTEGER NOT NULL DEFAULT 1,
    fluxlab_version TEXT NOT NULL,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
)
"""
_COLUMNS = ("key", "status", "studies", "parameters", "machine", "summary", "curves",
            "message", "elapsed_s", "attempts", "fluxlab_version", "created_at", "updated_at")


@dataclass(frozen=True)
class StoredResult:
    """One stored candidate.

    ``summary`` is the evaluation summary (None unless done); ``curves`` maps a curve name
    (``torque_vs_position``, ``torque_vs_current_angle``) to its columns, for full studies.
    Times are ISO 8601 UTC; ``elapsed_s`` is the evaluation wall time in s.
    """

    key: str
    status: str
    studies: str
    parameters: dict
    machine: dict
    summary: dict | None
    curves: dict | None
    message: str
    elapsed_s: float | None
    attempts: int
    fluxlab_version: str
    created_at: str
    updated_at: str


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="milliseconds")


def _row(values: tuple) -> StoredResult:
    d = dict(zip(_COLUMNS, values, strict=True))
    for name in ("parameters", "machine", "summary", "curves"):
        d[name] = None if d[name] is None else json.loads(d[name])
    return StoredResult(**d)


class ResultStore:
    """A sweep's SQLite result file.

    Parameters
    ----------
    path
        The database file; created with its table when missing.
    """

    def __init__(self, path: str | Path):
        self.path = Path(path)
        self._conn = sqlite3.connect(self.path, timeout=60.0, isolation_level=None)
        self._conn.execute("PRAGMA journal_mode=WAL")
        # FULL: every committed candidate survives even a power cut, at a negligible cost
        # (one fsync per candidate, and a candidate takes seconds).
        self._conn.execute("PRAGMA synchronous=FULL")
        self._conn.execute(_SCHEMA)

    def __enter__(self) -> ResultStore:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        """Close the connection (every write is already committed)."""
        self._conn.close()

    def put(self, key: str, status: str, *, studies: str, parameters: dict, machine: dict,
            summary: dict | None = None, curves: dict | None = None, message: str = "",
            elapsed_s: float | None = None) -> None:
        """Write one candidate in its own transaction, replacing an earlier row of ``key``.

        A replaced row keeps its ``created_at`` and counts one more attempt.
        """

        if status not in STATUSES:
            raise ValueError(f"status = {status!r}: must be one of {', '.join(STATUSES)}")
        now = _now()
        values = (key, status, studies, canonical_json(parameters), canonical_json(machine),
                  None if summary is None else canonical_json(summary),
                  None if curves is None else canonical_json(curves),
                  message, elapsed_s, 1, __version__, now, now)
        self._conn.execute("BEGIN IMMEDIATE")
        try:
            self._conn.execute(
                f"INSERT INTO results ({', '.join(_COLUMNS)}) VALUES "
                f"({', '.join('?' * len(_COLUMNS))}) ON CONFLICT(key) DO UPDATE SET "
                "status=excluded.status, studies=excluded.studies, "
                "parameters=excluded.parameters, machine=excluded.machine, "
                "summary=excluded.summary, curves=excluded.curves, message=excluded.message, "
                "elapsed_s=excluded.elapsed_s, attempts=results.attempts + 1, "
                "fluxlab_version=excluded.fluxlab_version, updated_at=excluded.updated_at",
                values,
            )
        except BaseException:
            self._conn.execute("ROLLBACK")
            raise
        self._conn.execute("COMMIT")

    def statuses(self) -> dict[str, str]:
        """``{key: status}`` of every stored candidate."""
        return dict(self._conn.execute("SELECT key, status FROM results"))

    def get(self, key: str) -> StoredResult | None:
        """The stored candidate ``key``, or None."""
        row = self._conn.execute(
            f"SELECT {', '.join(_COLUMNS)} FROM results WHERE key = ?", (key,)).fetchone()
        return None if row is None else _row(row)

    def results(self) -> list[StoredResult]:
        """Every stored candidate, oldest first."""
        rows = self._conn.execute(
            f"SELECT {', '.join(_COLUMNS)} FROM results ORDER BY created_at, key")
        return [_row(r) for r in rows]

    def counts(self) -> dict[str, int]:
        """Number of stored candidates per status."""
        out = dict.fromkeys(STATUSES, 0)
        out.update(self._conn.execute("SELECT status, COUNT(*) FROM results GROUP BY status"))
        return out

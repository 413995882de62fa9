"""The result store of a batch: SQLite beside a folder of posterior files.

Each finished candidate (scheme x variant) is one row, keyed by a content hash of the
scheme text, the variant, the study's content, the settings and the mechfit version, so
a rerun skips what is done and a changed input is done again. The database is in WAL
mode so that results can be read while a batch writes them; every result is written in
one transaction, and its posterior file is first written under a temporary name and
then renamed, so a batch killed at any moment leaves either a whole result or none.

Examples
--------
>>> import tempfile, pathlib
>>> store = ResultStore(pathlib.Path(tempfile.mkdtemp()) / "batch.sqlite")
>>> key = content_key(scheme="A -> B @ k1\\n", variant="full", study="...", settings={})
>>> store.has(key)
False
>>> store.put(key, name="ab", variant="full", status="ok", summary={"aicc": 1.5})
>>> store.get(key)["summary"]["aicc"]
1.5
"""

from __future__ import annotations

import hashlib
import json
import os
import sqlite3
import time
from collections.abc import Callable, Iterator, Mapping
from pathlib import Path
from typing import Any

from mechfit import __version__
from mechfit.errors import MechfitError
from mechfit.plain_json import json_default

SCHEMA = """
CREATE TABLE IF NOT EXISTS results (
    key        TEXT PRIMARY KEY,
    name       TEXT NOT NULL,
    variant    TEXT NOT NULL,
    status     TEXT NOT NULL CHECK (status IN ('ok', 'failed')),
    reason     TEXT,
    summary    TEXT NOT NULL,
    posterior  TEXT,
    seconds    REAL,
    finished   REAL NOT NULL,
    version    TEXT NOT NULL
);
"""


class StoreError(MechfitError):
    """The result store cannot be opened or is not a mechfit store."""


def content_key(*, scheme: str, variant: str, study: str, settings: Mapping[str, Any],
                version: str = __version__) -> str:
    """The content hash (SHA-256, hex) that identifies one piece of batch work.

    ``study`` is the study's content (its file texts joined), not its path, so moving a
    study does not redo work and editing one value does.
    """
    blob = json.dumps({"scheme": scheme, "variant": variant, "study": study,
                       "settings": settings, "version": version},
                      sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha256(blob.encode("utf-8")).hexdigest()


class ResultStore:
    """SQLite store of batch results, with posterior files in ``<name>.posteriors/``.

    Parameters
    ----------
    path
        The SQLite file (created if missing).
    """

    def __init__(self, path: str | os.PathLike[str]) -> None:
        self.path = Path(path)
        self.posterior_dir = self.path.with_suffix(self.path.suffix + ".posteriors")
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            con = self._connect()
            con.execute("PRAGMA journal_mode=WAL")
            con.executescript(SCHEMA)
            con.close()
        except sqlite3.DatabaseError as exc:
            raise StoreError(f"{self.path}: not a mechfit result store ({exc}); "
                             "give --store a new file name") from None

    def _connect(self) -> sqlite3.Connection:
        con = sqlite3.connect(self.path, timeout=60.0, isolation_level=None)
        con.execute("PRAGMA busy_timeout=60000")
        return con

    # ---- reading -------------------------------------------------------------
    def has(self, key: str) -> bool:
        """Whether a result (finished or failed) is stored under ``key``."""
        con = self._connect()
        try:
            row = con.execute("SELECT 1 FROM results WHERE key = ?", (key,)).fetchone()
        finally:
            con.close()
        return row is not None

    def get(self, key: str) -> dict | None:
        """The stored result under ``key`` as a dict, or ``None``."""
        for row in self._rows("WHERE key = ?", (key,)):
            return row
        return None

    def results(self, status: str | None = None) -> list[dict]:
        """All stored results (optionally only ``"ok"`` or ``"failed"``), oldest first."""
        if status is None:
            return list(self._rows("", ()))
        return list(self._rows("WHERE status = ?", (status,)))

    def _rows(self, where: str, args: tuple) -> Iterator[dict]:
        con = self._connect()
        try:
            cur = con.execute(
                "SELECT key, name, variant, status, reason, summary, posterior, seconds, "
                f"finished, version FROM results {where} ORDER BY finished", args)
            rows = cur.fetchall()
        finally:
            con.close()
        for r in rows:
            yield {"key": r[0], "name": r[1], "variant": r[2], "status": r[3],
                   "reason": r[4], "summary": json.loads(r[5]),
                   "posterior": str(self.posterior_dir / r[6]) if r[6] else None,
                   "seconds": r[7], "finished": r[8], "version": r[9]}

    def __len__(self) -> int:
        con = self._connect()
        try:
            return con.execute("SELECT COUNT(*) FROM results").fetchone()[0]
        finally:
            con.close()

    # ---- writing -------------------------------------------------------------
    def put(self, key: str, *, name: str, variant: str, status: str,
            summary: Mapping[str, Any], reason: str | None = None,
            write_posterior: Callable[[Path], None] | None = None,
            seconds: float | None = None) -> None:
        """Store one result atomically.

        ``write_posterior(path)`` writes the posterior file (netCDF) to the path it is
        given; it is called with a temporary name that is renamed into place before the
        row is committed, so a row never points at a half-written file. A result already
        stored under ``key`` is kept (the first finished copy wins): reruns never
        duplicate a row.
        """
        if status not in {"ok", "failed"}:
            raise ValueError(f"status must be 'ok' or 'failed', not {status!r}")
        posterior_name = None
        if write_posterior is not None:
            self.posterior_dir.mkdir(parents=True, exist_ok=True)
            posterior_name = f"{key[:20]}.nc"
            final = self.posterior_dir / posterior_name
            tmp = final.with_name(f".{posterior_name}.{os.getpid()}.tmp")
            write_posterior(tmp)
            os.replace(tmp, final)
        con = self._connect()
        try:
            con.execute("BEGIN IMMEDIATE")
            con.execute(
                "INSERT OR IGNORE INTO results (key, name, variant, status, reason, summary, "
                "posterior, seconds, finished, version) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (key, name, variant, status, reason,
                 json.dumps(summary, sort_keys=True, default=json_default), posterior_name,
                 seconds, time.time(), __version__))
            con.execute("COMMIT")
        except BaseException:
            if con.in_transaction:
                con.execute("ROLLBACK")
            raise
        finally:
            con.close()

    def size_bytes(self) -> int:
        """Bytes on disk: the database (with its WAL) and the posterior files."""
        total = 0
        for p in [self.path, Path(str(self.path) + "-wal"), Path(str(self.path) + "-shm")]:
            if p.exists():
                total += p.stat().st_size
        if self.posterior_dir.exists():
            total += sum(p.stat().st_size for p in self.posterior_dir.iterdir() if p.is_file())
        return total

    def remove_stray_files(self) -> int:
        """Delete temporary posterior files left by a killed batch; returns how many."""
        if not self.posterior_dir.exists():
            return 0
        n = 0
        for p in self.posterior_dir.glob(".*.tmp"):
            p.unlink(missing_ok=True)
            n += 1
        return n



"""The fleet store: analyses kept in one SQLite file.

Why SQLite: it ships with Python (:mod:`sqlite3`, no new dependency), keeps
everything in one file next to the manifest, and every write is a
transaction, so an interrupted run leaves the store as it was after the last
committed batch, never half-written.  A columnar format would pay off only for
bulk scans of millions of rows; the fleet reads a few thousand small records.

Schema (``schema_version`` 1)
-----------------------------
``meta(key TEXT PRIMARY KEY, value TEXT)``
    ``schema_version`` and ``created_by``.
``files(path TEXT PRIMARY KEY, size INTEGER, mtime_ns INTEGER, sha256 TEXT)``
    Cache of content hashes: a file whose size and modification time are
    unchanged is not read again to hash it.
``analyses(content_sha256, settings_key, path, kind, ok, error, method,
sample_rate_hz, duration_s, resolution_hz, warnings, elapsed_s, analysed_at)``
    One row per analysed (content, settings) pair; primary key
    ``(content_sha256, settings_key)``.  ``ok`` is 1 or 0; ``error`` holds the
    one-line error of a failed analysis; ``warnings`` is a JSON list of
    sentences; ``analysed_at`` is UTC ISO 8601.
``modes(content_sha256, settings_key, idx, name, frequency_hz, damping,
damping_low, damping_high, axis, confidence, viscous_damping,
friction_drop_per_cycle)``
    The modes of each successful analysis (SI: Hz, damping ratios), primary
    key ``(content_sha256, settings_key, idx)``.

A recording is analysed again only when its bytes or its settings change;
the same file listed for two aircraft is analysed once.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import os
import sqlite3
from collections.abc import Iterable
from pathlib import Path

from ..errors import InputError, OutputError
from .records import AnalysisRecord, ModeRecord

__all__ = ["Store", "STORE_SCHEMA_VERSION", "file_sha256", "DEFAULT_STORE_NAME"]

#: Version of the store's schema.
STORE_SCHEMA_VERSION = 1
#: File name of the store next to the manifest.
DEFAULT_STORE_NAME = "fleet-store.sqlite"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS files (
    path TEXT PRIMARY KEY, size INTEGER NOT NULL, mtime_ns INTEGER NOT NULL, sha256 TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS analyses (
    content_sha256 TEXT NOT NULL, settings_key TEXT NOT NULL,
    path TEXT NOT NULL, kind TEXT NOT NULL, ok INTEGER NOT NULL, error TEXT,
    method TEXT, sample_rate_hz REAL, duration_s REAL, resolution_hz REAL,
    warnings TEXT NOT NULL DEFAULT '[]', elapsed_s REAL, analysed_at TEXT NOT NULL,
    PRIMARY KEY (content_sha256, settings_key));
CREATE TABLE IF NOT EXISTS modes (
    content_sha256 TEXT NOT NULL, settings_key TEXT NOT NULL, idx INTEGER NOT NULL,
    name TEXT NOT NULL, frequency_hz REAL NOT NULL, damping REAL,
    damping_low REAL NOT NULL, damping_high REAL NOT NULL, axis TEXT NOT NULL,
    confidence REAL NOT NULL, viscous_damping REAL, friction_drop_per_cycle REAL,
    PRIMARY KEY (content_sha256, settings_key, idx));
"""


def file_sha256(path: str | os.PathLike[str], chunk: int = 1 << 20) -> str:
    """SHA-256 of a file's bytes, read in chunks.

    Parameters
    ----------
    path : str or PathLike
        The file.
    chunk : int
        Bytes read at a time.

    Returns
    -------
    str
        The hex digest.
    """
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        while block := fh.read(chunk):
            h.update(block)
    return h.hexdigest()


def _is_fleet_store(path: Path) -> bool:
    """Whether ``path`` is an SQLite file that ``clashcheck fleet`` created (read-only look)."""
    if not path.is_file():
        return False
    try:
        db = sqlite3.connect(f"file:{path}?mode=ro", uri=True)
        try:
            row = db.execute("SELECT value FROM meta WHERE key = 'created_by'").fetchone()
        finally:
            db.close()
    except sqlite3.Error:
        return False
    return row is not None and row[0] == "clashcheck fleet"


class Store:
    """Analyses of recordings, keyed by content hash and settings, in one SQLite file.

    Parameters
    ----------
    path : str or Path
        The store file; created when missing.
    inputs : iterable of path
        Files the store must not be (the manifest, the recordings, the builds).
    """

    def __init__(self, path: str | Path, inputs: Iterable[str | Path] = ()) -> None:
        from ..files import check_target

        self.path = Path(path)
        # a store is updated in place, so the output register cannot vouch for it: its own
        # meta table does (an existing file that is not a clashcheck store still needs --force)
        check_target(self.path, inputs, force=True if _is_fleet_store(self.path) else None)
        try:
            self._db = sqlite3.connect(str(self.path), timeout=60.0)
            self._db.executescript(_SCHEMA)
            row = self._db.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
            if row is None:
                with self._db:
                    self._db.execute("INSERT INTO meta VALUES ('schema_version', ?)",
                                     (str(STORE_SCHEMA_VERSION),))
                    self._db.execute("INSERT OR REPLACE INTO meta VALUES ('created_by', 'clashcheck fleet')")
            elif row[0] != str(STORE_SCHEMA_VERSION):
                raise InputError(str(self.path), f"a fleet store of schema version {STORE_SCHEMA_VERSION}",
                                 row[0], "use --store to start a new store")
        except sqlite3.DatabaseError as exc:
            raise OutputError(str(self.path), f"not a usable fleet store ({exc})") from None

    def close(self) -> None:
        """Close the database."""
        self._db.close()

    def __enter__(self) -> "Store":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def content_hash(self, path: str) -> str:
        """SHA-256 of a file, from the cache when its size and mtime are unchanged.

        Parameters
        ----------
        path : str
            Absolute path of the file.

        Returns
        -------
        str
            The hex digest.
        """
        st = os.stat(path)
        row = self._db.execute("SELECT size, mtime_ns, sha256 FROM files WHERE path = ?", (path,)).fetchone()
        if row is not None and row[0] == st.st_size and row[1] == st.st_mtime_ns:
            return str(row[2])
        digest = file_sha256(path)
        with self._db:
            self._db.execute("INSERT OR REPLACE INTO files VALUES (?, ?, ?, ?)",
                             (path, st.st_size, st.st_mtime_ns, digest))
        return digest

    def cached_hash(self, path: str, size: int, mtime_ns: int) -> str | None:
        """The cached SHA-256 of a file whose size and mtime are as given, or ``None``.

        Parameters
        ----------
        path : str
            Absolute path.
        size : int
            Size [bytes] seen now.
        mtime_ns : int
            Modification time [ns] seen now.

        Returns
        -------
        str or None
            The hex digest, when cached for this size and mtime.
        """
        row = self._db.execute("SELECT size, mtime_ns, sha256 FROM files WHERE path = ?", (path,)).fetchone()
        if row is not None and row[0] == size and row[1] == mtime_ns:
            return str(row[2])
        return None

    def known(self) -> set[tuple[str, str]]:
        """Every (content_sha256, settings_key) pair in the store."""
        return {(a, b) for a, b in self._db.execute("SELECT content_sha256, settings_key FROM analyses")}

    def put(self, records: Iterable[AnalysisRecord],
            hashes: Iterable[tuple[str, int, int, str]] = ()) -> int:
        """Write records (and content hashes found by workers) in one transaction (all or none).

        Parameters
        ----------
        records : iterable of AnalysisRecord
            Analyses to keep; a record with the same key replaces the old one.
        hashes : iterable of (str, int, int, str)
            (path, size [bytes], mtime [ns], sha256) rows for the hash cache.

        Returns
        -------
        int
            Records written.
        """
        now = _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")
        n = 0
        try:
            with self._db:
                self._db.executemany("INSERT OR REPLACE INTO files VALUES (?, ?, ?, ?)", list(hashes))
                for r in records:
                    key = (r.content_sha256, r.settings_key)
                    self._db.execute("DELETE FROM modes WHERE content_sha256 = ? AND settings_key = ?", key)
                    self._db.execute(
                        "INSERT OR REPLACE INTO analyses VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?)",
                        (*key, r.path, r.kind, int(r.ok), r.error, r.method, r.sample_rate_hz,
                         r.duration_s, r.resolution_hz, json.dumps(list(r.warnings)), r.elapsed_s, now))
                    self._db.executemany(
                        "INSERT INTO modes VALUES (?,?,?,?,?,?,?,?,?,?,?,?)",
                        [(*key, i, m.name, m.frequency_hz, m.damping, m.damping_low, m.damping_high, m.axis,
                          m.confidence, m.viscous_damping, m.friction_drop_per_cycle)
                         for i, m in enumerate(r.modes)])
                    n += 1
        except sqlite3.DatabaseError as exc:
            raise OutputError(str(self.path), f"cannot write the fleet store ({exc})") from None
        return n

    def get(self, content_sha256: str, settings_key: str) -> AnalysisRecord | None:
        """The stored analysis of one (content, settings) pair, or ``None``.

        Parameters
        ----------
        content_sha256 : str
            The recording's content hash.
        settings_key : str
            The settings' hash.

        Returns
        -------
        AnalysisRecord or None
            The record as stored (``elapsed_s`` as measured then).
        """
        key = (content_sha256, settings_key)
        row = self._db.execute(
            "SELECT path, kind, ok, error, method, sample_rate_hz, duration_s, resolution_hz, warnings, "
            "elapsed_s FROM analyses WHERE content_sha256 = ? AND settings_key = ?", key).fetchone()
        if row is None:
            return None
        modes = tuple(
            ModeRecord(name=m[0], frequency_hz=m[1], damping=m[2], damping_low=m[3], damping_high=m[4],
                       axis=m[5], confidence=m[6], viscous_damping=m[7], friction_drop_per_cycle=m[8])
            for m in self._db.execute(
                "SELECT name, frequency_hz, damping, damping_low, damping_high, axis, confidence, "
                "viscous_damping, friction_drop_per_cycle FROM modes "
                "WHERE content_sha256 = ? AND settings_key = ? ORDER BY idx", key))
        return AnalysisRecord(content_sha256=content_sha256, settings_key=settings_key, path=row[0],
                              kind=row[1], ok=bool(row[2]), error=row[3], modes=modes, method=row[4] or "",
                              sample_rate_hz=row[5], duration_s=row[6], resolution_hz=row[7],
                              warnings=tuple(json.loads(row[8])), elapsed_s=row[9] or 0.0)

"""The SQLite file behind :mod:`app.store`: connections, transactions, schema and migrations.

One database file, ``DATA_DIR/haulcast.sqlite3``, shared by every thread of a waitress server
and by every process of ``--workers N``:

- WAL journal, so readers never wait for a writer and a writer never waits for readers;
- ``synchronous=FULL``, so a save that returned survives a power cut as well as a killed process;
- ``busy_timeout``, so a writer waits for another writer instead of failing;
- one connection per thread and per process (a connection is never shared; a forked child opens
  its own instead of reusing its parent's);
- every write is one ``BEGIN IMMEDIATE`` ... ``COMMIT`` transaction (see :meth:`Database.write`).

The schema carries its version in ``schema_version`` (one row per applied migration). Opening a
data folder applies the missing migrations in order, inside one write transaction, so two
processes starting at once cannot both migrate. A folder written by a newer Haulcast is refused
rather than guessed at.
"""

from __future__ import annotations

import json
import logging
import os
import re
import sqlite3
import threading
import weakref
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from datetime import UTC, datetime
from pathlib import Path

import forecasting_core as fc

DB_NAME = "haulcast.sqlite3"
BUSY_TIMEOUT_MS = 15_000
_HEX64 = re.compile(r"^[0-9a-f]{64}$")
logger = logging.getLogger("haulcast.store")

#: Message raised by the triggers that keep published analyses, sign-offs and datasets unchanged.
IMMUTABLE = "haulcast: immutable row"

_V1 = f"""
CREATE TABLE datasets (
    id        TEXT PRIMARY KEY CHECK (length(id) = 64),
    filename  TEXT NOT NULL,
    kind      TEXT NOT NULL CHECK (kind IN ('csv', 'xlsx')),
    size      INTEGER NOT NULL CHECK (size > 0),
    saved_at  TEXT NOT NULL,
    saved_by  TEXT,
    sample    INTEGER NOT NULL DEFAULT 0
);
CREATE TABLE analyses (
    seq          INTEGER PRIMARY KEY AUTOINCREMENT,
    id           TEXT NOT NULL UNIQUE CHECK (length(id) = 32),
    root_id      TEXT NOT NULL,
    version      INTEGER NOT NULL CHECK (version >= 1),
    parent_id    TEXT REFERENCES analyses (id),
    dataset_id   TEXT NOT NULL REFERENCES datasets (id),
    series       TEXT NOT NULL,
    title        TEXT NOT NULL,
    season       TEXT NOT NULL,
    settings     TEXT NOT NULL CHECK (json_valid(settings)),
    model        TEXT NOT NULL,
    forecast     TEXT NOT NULL CHECK (json_valid(forecast)),
    status       TEXT NOT NULL CHECK (status IN ('draft', 'published')),
    author       TEXT NOT NULL,
    created_at   TEXT NOT NULL,
    published_at TEXT,
    published_by TEXT,
    UNIQUE (root_id, version),
    CHECK ((status = 'published') = (published_at IS NOT NULL))
);
CREATE INDEX analyses_series ON analyses (series, seq);
CREATE INDEX analyses_status ON analyses (status, seq);
CREATE TABLE signoffs (
    seq         INTEGER PRIMARY KEY AUTOINCREMENT,
    analysis_id TEXT NOT NULL REFERENCES analyses (id),
    name        TEXT NOT NULL,
    role        TEXT NOT NULL,
    note        TEXT NOT NULL,
    signed_at   TEXT NOT NULL
);
CREATE INDEX signoffs_analysis ON signoffs (analysis_id, seq);

-- What an analysis says never changes; a draft may only become published, once.
CREATE TRIGGER analyses_content_is_fixed
BEFORE UPDATE OF id, root_id, version, parent_id, dataset_id, series, title, season, settings,
                 model, forecast, author, created_at ON analyses
BEGIN SELECT RAISE(ABORT, '{IMMUTABLE}'); END;
CREATE TRIGGER analyses_published_is_fixed
BEFORE UPDATE ON analyses WHEN OLD.status = 'published'
BEGIN SELECT RAISE(ABORT, '{IMMUTABLE}'); END;
CREATE TRIGGER analyses_published_is_kept
BEFORE DELETE ON analyses WHEN OLD.status = 'published'
BEGIN SELECT RAISE(ABORT, '{IMMUTABLE}'); END;
CREATE TRIGGER signoffs_on_published_only
BEFORE INSERT ON signoffs
WHEN (SELECT status FROM analyses WHERE id = NEW.analysis_id) IS NOT 'published'
BEGIN SELECT RAISE(ABORT, '{IMMUTABLE}'); END;
CREATE TRIGGER signoffs_are_fixed BEFORE UPDATE ON signoffs
BEGIN SELECT RAISE(ABORT, '{IMMUTABLE}'); END;
CREATE TRIGGER signoffs_are_kept BEFORE DELETE ON signoffs
BEGIN SELECT RAISE(ABORT, '{IMMUTABLE}'); END;
CREATE TRIGGER datasets_are_fixed
BEFORE UPDATE OF id, filename, kind, size, saved_at, saved_by ON datasets
BEGIN SELECT RAISE(ABORT, '{IMMUTABLE}'); END;
"""


def now_utc() -> str:
    """The current time as ISO 8601 UTC to the second, e.g. ``2026-12-01T20:54:19+00:00``."""
    return datetime.now(UTC).isoformat(timespec="seconds")


def _migrate_1(conn: sqlite3.Connection, data_dir: Path) -> str:
    """Create the tables and adopt the datasets the folder-only version left behind."""
    for statement in _split_sql(_V1):
        conn.execute(statement)
    adopted = 0
    root = data_dir / "datasets"
    if root.is_dir():
        for folder in sorted(root.iterdir()):
            row = _previous_meta(folder)
            if row is None:
                continue
            conn.execute(
                "INSERT OR IGNORE INTO datasets (id, filename, kind, size, saved_at, saved_by)"
                " VALUES (?, ?, ?, ?, ?, NULL)",
                row,
            )
            adopted += 1
    return f"created tables; adopted {adopted} dataset folder(s) of the previous version"


def _previous_meta(folder: Path) -> tuple[str, str, str, int, str] | None:
    """The dataset row for one ``datasets/<sha256>/{raw,meta.json}`` folder, or None.

    Only folders named by a content hash whose ``raw`` has the recorded size are adopted; the
    name in ``meta.json`` is display text and never becomes a path.
    """
    if not _HEX64.match(folder.name) or not folder.is_dir():
        return None
    raw, meta_path = folder / "raw", folder / "meta.json"
    try:
        meta = json.loads(meta_path.read_text(encoding="utf-8"))
        size = raw.stat().st_size
    except (OSError, ValueError):
        return None
    if not isinstance(meta, dict) or meta.get("id", folder.name) != folder.name or size <= 0:
        return None
    from app.store import sanitise_filename  # local: store imports this module

    filename = sanitise_filename(str(meta.get("filename") or "upload.csv"))
    kind = "xlsx" if meta.get("kind") == "xlsx" else "csv"
    saved_at = str(meta.get("saved_at") or now_utc())[:40]
    return folder.name, filename, kind, size, saved_at


def _split_sql(script: str) -> list[str]:
    """Statements of a script (triggers keep their inner ``;`` before ``END``)."""
    out, current = [], []
    for line in script.splitlines():
        if line.strip().startswith("--") or not line.strip():
            continue
        current.append(line)
        joined = "\n".join(current).strip()
        inside_trigger = joined.upper().startswith("CREATE TRIGGER")
        if joined.endswith(";") and (not inside_trigger or joined.upper().endswith("END;")):
            out.append(joined)
            current = []
    if current:
        out.append("\n".join(current))
    return out


#: Sign-offs a migration took out of ``signoffs`` are kept here, never deleted outright.
_V2_SET_ASIDE = f"""
CREATE TABLE signoffs_set_aside (
    seq          INTEGER PRIMARY KEY,
    analysis_id  TEXT NOT NULL,
    name         TEXT NOT NULL,
    role         TEXT NOT NULL,
    note         TEXT NOT NULL,
    signed_at    TEXT NOT NULL,
    kept_seq     INTEGER NOT NULL,
    reason       TEXT NOT NULL,
    set_aside_at TEXT NOT NULL
);
CREATE TRIGGER signoffs_set_aside_are_fixed BEFORE UPDATE ON signoffs_set_aside
BEGIN SELECT RAISE(ABORT, '{IMMUTABLE}'); END;
CREATE TRIGGER signoffs_set_aside_are_kept BEFORE DELETE ON signoffs_set_aside
BEGIN SELECT RAISE(ABORT, '{IMMUTABLE}'); END;
"""
_SIGNOFFS_ARE_KEPT = (
    "CREATE TRIGGER signoffs_are_kept BEFORE DELETE ON signoffs\n"
    f"BEGIN SELECT RAISE(ABORT, '{IMMUTABLE}'); END;"
)
#: One sign-off per analysis, name and role. The store compares names and roles with Python's
#: ``casefold`` before inserting; SQLite's NOCASE folds ASCII letters only, so the index never
#: refuses what the store's check let through, and it holds for any other writer of the file.
_SIGNOFFS_ONCE = (
    "CREATE UNIQUE INDEX signoffs_once ON signoffs"
    " (analysis_id, name COLLATE NOCASE, role COLLATE NOCASE)"
)


def _migrate_2(conn: sqlite3.Connection, data_dir: Path) -> str:
    """Make sign-offs unique per (analysis, name, role) in the database itself.

    A folder from before this index may hold repeats (a double click on Sign off used to record
    two). Of each set of sign-offs with the same analysis, name and role (compared ignoring case,
    as the store does) the earliest is kept in ``signoffs``; the later ones move, unchanged, to
    ``signoffs_set_aside`` with the ``seq`` of the one kept, and the migration's note in
    ``schema_version`` (and the server log) says how many.
    """
    for statement in _split_sql(_V2_SET_ASIDE):
        conn.execute(statement)
    kept: dict[tuple[str, str, str], int] = {}
    repeats: list[tuple[int, int, str]] = []
    for seq, analysis_id, name, role in conn.execute(
        "SELECT seq, analysis_id, name, role FROM signoffs ORDER BY seq"
    ).fetchall():
        key = (analysis_id, str(name).casefold(), str(role).casefold())
        if key in kept:
            repeats.append((seq, kept[key], analysis_id))
        else:
            kept[key] = seq
    if repeats:
        moved_at = now_utc()
        conn.execute("DROP TRIGGER signoffs_are_kept")
        for seq, kept_seq, _analysis in repeats:
            conn.execute(
                "INSERT INTO signoffs_set_aside (seq, analysis_id, name, role, note, signed_at,"
                " kept_seq, reason, set_aside_at)"
                " SELECT seq, analysis_id, name, role, note, signed_at, ?, ?, ? FROM signoffs"
                " WHERE seq = ?",
                (
                    kept_seq,
                    "a repeat of an earlier sign-off in the same name and role",
                    moved_at,
                    seq,
                ),
            )
            conn.execute("DELETE FROM signoffs WHERE seq = ?", (seq,))
        conn.execute(_SIGNOFFS_ARE_KEPT)
    conn.execute(_SIGNOFFS_ONCE)
    note = "sign-offs unique per analysis, name and role"
    if repeats:
        analyses = len({analysis_id for _, _, analysis_id in repeats})
        note += (
            f"; {len(repeats)} repeated sign-off(s) on {analyses} analysis(es) set aside in"
            " signoffs_set_aside (the earliest of each name and role kept)"
        )
        logger.warning("Store migration 2 in %s: %s.", data_dir, note)
    return note


#: Forward migrations: (version, function(conn, data_dir) -> note). Append only; never edit one
#: that has shipped.
MIGRATIONS: tuple[tuple[int, Callable[[sqlite3.Connection, Path], str]], ...] = (
    (1, _migrate_1),
    (2, _migrate_2),
)
SCHEMA_VERSION = MIGRATIONS[-1][0]


def _fold(text: object) -> str:
    return str(text or "").casefold()


class Database:
    """The store's SQLite file: a connection per thread and process, explicit transactions.

    Parameters
    ----------
    data_dir : Path
        Folder holding ``haulcast.sqlite3`` (created when missing).
    """

    def __init__(self, data_dir: Path) -> None:
        self.data_dir = Path(data_dir)
        self.path = self.data_dir / DB_NAME
        self._lock = threading.Lock()
        self._conns: dict[tuple[int, int], sqlite3.Connection] = {}
        self._finalizer = weakref.finalize(self, _close_all, self._conns, self._lock)
        self._migrate()

    # -- connections --------------------------------------------------------------------------

    def conn(self) -> sqlite3.Connection:
        """This thread's connection (opened on first use, in this process)."""
        key = (os.getpid(), threading.get_ident())
        conn = self._conns.get(key)
        if conn is None:
            conn = self._open()
            with self._lock:
                self._prune()
                self._conns[key] = conn
        return conn

    def _open(self) -> sqlite3.Connection:
        conn = sqlite3.connect(
            self.path, timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None, check_same_thread=False
        )
        conn.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
        mode = conn.execute("PRAGMA journal_mode = WAL").fetchone()[0]
        if str(mode).lower() != "wal":  # pragma: no cover - e.g. a network file system
            raise fc.InputError(
                f"the data folder {self.data_dir} does not support SQLite's WAL journal "
                f"(got {mode!r}). Use a folder on a local disk."
            )
        conn.execute("PRAGMA synchronous = FULL")
        conn.execute("PRAGMA foreign_keys = ON")
        conn.create_function("hc_fold", 1, _fold, deterministic=True)
        return conn

    def _prune(self) -> None:
        """Close connections of threads that ended and of processes we were forked from."""
        pid = os.getpid()
        alive = {t.ident for t in threading.enumerate()}
        for key in list(self._conns):
            if key[0] != pid:
                _INHERITED.append(self._conns.pop(key))
            elif key[1] not in alive:
                try:
                    self._conns.pop(key).close()
                except sqlite3.Error:  # pragma: no cover
                    pass

    def close(self) -> None:
        """Close every connection this process opened (the store can be used again after)."""
        _close_all(self._conns, self._lock)

    # -- transactions -------------------------------------------------------------------------

    @contextmanager
    def write(self) -> Iterator[sqlite3.Connection]:
        """One write transaction: ``BEGIN IMMEDIATE`` ... ``COMMIT``, rolled back on any error.

        Raises
        ------
        forecasting_core.InputError
            When the database stayed locked by another writer for ``BUSY_TIMEOUT_MS`` or the
            disk is full (nothing was written; the message says to try again).
        """
        conn = self.conn()
        _plainly(conn.execute, "BEGIN IMMEDIATE")
        try:
            yield conn
        except BaseException:
            if conn.in_transaction:
                conn.execute("ROLLBACK")
            raise
        try:
            _plainly(conn.execute, "COMMIT")
        finally:
            if conn.in_transaction:  # COMMIT failed: nothing of this transaction is kept
                conn.execute("ROLLBACK")

    @contextmanager
    def read(self) -> Iterator[sqlite3.Connection]:
        """One read transaction: every query inside sees the same snapshot."""
        conn = self.conn()
        conn.execute("BEGIN")
        try:
            yield conn
        finally:
            if conn.in_transaction:
                conn.execute("COMMIT")

    # -- schema -------------------------------------------------------------------------------

    def version(self) -> int:
        """The schema version of the file (0 for a folder the SQLite store never opened)."""
        return _current_version(self.conn())

    def _migrate(self) -> None:
        self.data_dir.mkdir(parents=True, exist_ok=True)
        conn = self.conn()
        if _current_version(conn) == SCHEMA_VERSION:
            return
        with self.write() as tx:
            tx.execute(
                "CREATE TABLE IF NOT EXISTS schema_version ("
                " version INTEGER PRIMARY KEY, applied_at TEXT NOT NULL, note TEXT NOT NULL)"
            )
            current = _current_version(tx)
            if current > SCHEMA_VERSION:
                raise fc.InputError(
                    f"the data folder {self.data_dir} was written by a newer Haulcast "
                    f"(schema {current}; this version knows up to {SCHEMA_VERSION}). "
                    "Upgrade Haulcast or use another data folder."
                )
            for version, migrate in MIGRATIONS:
                if version > current:
                    note = migrate(tx, self.data_dir)
                    tx.execute(
                        "INSERT INTO schema_version (version, applied_at, note) VALUES (?, ?, ?)",
                        (version, now_utc(), note),
                    )

    def integrity(self) -> str:
        """``PRAGMA integrity_check`` ("ok" when the file is sound)."""
        rows = self.conn().execute("PRAGMA integrity_check").fetchall()
        return "; ".join(str(r[0]) for r in rows)


def _plainly(execute: Callable[[str], object], sql: str) -> None:
    """Run ``sql``; a locked database or a full disk becomes a plain InputError."""
    try:
        execute(sql)
    except sqlite3.OperationalError as err:
        text = str(err).lower()
        if "locked" in text or "busy" in text:
            raise fc.InputError(
                "the store is busy with another save that is taking unusually long. Nothing was "
                "saved; try again in a moment."
            ) from err
        if "full" in text:
            raise fc.InputError(
                "the data folder's disk is full. Nothing was saved; ask the administrator to "
                "free some space."
            ) from err
        raise


def _current_version(conn: sqlite3.Connection) -> int:
    has_table = conn.execute(
        "SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'schema_version'"
    ).fetchone()
    if not has_table:
        return 0
    return int(conn.execute("SELECT coalesce(max(version), 0) FROM schema_version").fetchone()[0])


#: Connections a forked process inherited from its parent. They are kept referenced and never
#: closed here: closing a parent's handle in the child could release the child's own POSIX
#: locks on the file (SQLite docs, "How To Corrupt An SQLite Database File": carrying an open
#: connection across a fork()).
_INHERITED: list[sqlite3.Connection] = []


def _close_all(conns: dict[tuple[int, int], sqlite3.Connection], lock: threading.Lock) -> None:
    pid = os.getpid()
    with lock:
        for key in list(conns):
            conn = conns.pop(key)
            if key[0] != pid:
                _INHERITED.append(conn)
            else:
                try:
                    conn.close()
                except sqlite3.Error:  # pragma: no cover
                    pass

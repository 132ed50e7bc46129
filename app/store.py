"""The server's store: datasets, saved analyses and sign-offs in the data folder.

Layout under ``DATA_DIR``::

    haulcast.sqlite3               datasets (metadata), analyses, sign-offs, schema_version
    datasets/<sha256>/raw          the bytes exactly as uploaded (content-addressed, write-once)
    datasets/<sha256>/meta.json    {"id", "filename", "kind", "size", "saved_at"} (a copy)

The raw bytes stay in content-addressed files rather than SQLite blobs: an upload may be 20 MB,
and as files they never hold SQLite's single write lock while they are written, never pass
through the WAL twice, and can be checked against their name (the sha256) at any time. A file is
written completely (temporary folder, fsync, rename) before its row is committed, so a row always
has its bytes; a crash in between leaves at most an unreferenced folder that the next save of the
same bytes adopts. The row in SQLite, not the folder, is what makes a dataset exist. A store
created by the folder-only previous version opens unchanged: the first migration adopts its
folders.

A dataset is immutable: saving the same bytes again returns the same id. The original file
name is kept (sanitised) only for display and for telling CSV from Excel; it is never used as a
path, and neither is any other id (both are checked to be hexadecimal first). Which datasets a
visitor may see is decided by the browser session (its list of uploaded ids, kept in the
``hc-selection`` store) plus the sample datasets that everyone sees; the server keeps no
per-visitor state. Analyses are described in :mod:`app.store_analyses`, the SQLite file in
:mod:`app.store_db`, the input checks in :mod:`app.store_checks`.
"""

from __future__ import annotations

import functools
import json
import os
import re
import tempfile
import time
import unicodedata
from collections.abc import Iterable
from dataclasses import asdict, dataclass
from hashlib import sha256
from pathlib import Path

import forecasting_core as fc
from app.store_analyses import AnalysesMixin, Analysis, SignOff
from app.store_checks import check_analysis_id, check_text
from app.store_db import DB_NAME, SCHEMA_VERSION, Database, now_utc

__all__ = [
    "DB_NAME",
    "SCHEMA_VERSION",
    "Analysis",
    "DatasetMeta",
    "DatasetStore",
    "SignOff",
    "check_analysis_id",
    "check_dataset_id",
    "get_store",
    "sanitise_filename",
]

_ID = re.compile(r"^[0-9a-f]{64}$")
_SAFE = re.compile(r"[^A-Za-z0-9 ._()+-]+")
EXCEL_SUFFIXES = (".xlsx", ".xlsm")
DATA_SUFFIXES = (".csv", ".txt", ".tsv", *EXCEL_SUFFIXES)


@dataclass(frozen=True)
class DatasetMeta:
    """What the store knows about one dataset.

    Parameters
    ----------
    id : str
        sha256 of the raw bytes (64 lowercase hex digits).
    filename : str
        Sanitised original file name (display only).
    kind : {"csv", "xlsx"}
    size : int
        Bytes.
    saved_at : str
        ISO 8601 UTC time of the first save.
    sample : bool
        One of the demo datasets every visitor sees.
    saved_by : str or None
        Who uploaded it, when known.
    """

    id: str
    filename: str
    kind: str
    size: int
    saved_at: str
    sample: bool = False
    saved_by: str | None = None

    def to_dict(self) -> dict[str, object]:
        return asdict(self)


def sanitise_filename(filename: str | None) -> str:
    """A display-safe file name: last path part, printable ASCII, at most 120 characters.

    >>> sanitise_filename("../../etc/passwd")
    'passwd'
    >>> sanitise_filename("C:\\\\data\\\\Landings 2025 (final).csv")
    'Landings 2025 (final).csv'
    """
    name = str(filename or "")
    name = re.split(r"[\\/]", name)[-1]
    name = unicodedata.normalize("NFKD", name).encode("ascii", "ignore").decode("ascii")
    name = _SAFE.sub("_", name).strip(" .")
    name = re.sub(r"_+", "_", name)
    if len(name) > 120:
        stem, dot, ext = name.rpartition(".")
        name = (stem[:110] + dot + ext[:8]) if dot and len(ext) <= 8 else name[:120]
    return name or "upload.csv"


def _kind(filename: str) -> str:
    return "xlsx" if filename.lower().endswith(EXCEL_SUFFIXES) else "csv"


def check_dataset_id(dataset_id: str) -> str:
    """Return ``dataset_id`` if it looks like a content hash, else raise InputError."""
    if not isinstance(dataset_id, str) or not _ID.match(dataset_id):
        raise fc.InputError(
            f"dataset id must be 64 hexadecimal digits. Got {str(dataset_id)[:80]!r} instead."
        )
    return dataset_id


class DatasetStore(AnalysesMixin):
    """Datasets, analyses and sign-offs of one data folder.

    One object serves every thread of a process (each thread gets its own SQLite connection);
    several processes may open the same folder at once.

    Parameters
    ----------
    data_dir : str or Path
        Created when missing.
    max_bytes : int
        Largest upload accepted, in bytes (defaults to ``forecasting_core.MAX_FILE_BYTES``).
    """

    def __init__(self, data_dir: str | os.PathLike[str], *, max_bytes: int | None = None) -> None:
        self.data_dir = Path(data_dir)
        self.root = self.data_dir / "datasets"
        self.root.mkdir(parents=True, exist_ok=True)
        self.max_bytes = int(max_bytes if max_bytes is not None else fc.MAX_FILE_BYTES)
        self._samples: list[str] = []
        self.db = Database(self.data_dir)
        _remove_stale_temporaries(self.root)
        # Datasets are immutable, so a per-store memo is safe to share between sessions.
        self._load = functools.lru_cache(maxsize=32)(self._load_uncached)

    # -- writing ------------------------------------------------------------------------------

    def save(
        self, raw: bytes, filename: str, *, sample: bool = False, author: str | None = None
    ) -> str:
        """Keep ``raw`` (the bytes of one uploaded file) and return its id (sha256 hex).

        ``author`` (optional) is recorded as who uploaded it. Saving bytes already kept changes
        nothing and returns the same id.

        Raises
        ------
        forecasting_core.InputError
            When the file is empty or larger than ``max_bytes``.
        """
        if not isinstance(raw, bytes | bytearray):
            raise fc.InputError(f"file contents must be bytes. Got {type(raw).__name__} instead.")
        if len(raw) == 0:
            raise fc.InputError(
                "the file is empty (0 bytes). Choose a CSV or .xlsx file with a header row and data."
            )
        if len(raw) > self.max_bytes:
            raise fc.InputError(
                f"the file must be at most {_mb(self.max_bytes)}. Got {_mb(len(raw))} instead. "
                "Split it, or export only the columns you need."
            )
        digest = sha256(raw).hexdigest()
        clean = sanitise_filename(filename)
        saved_by = check_text(author, "author", required=False) or None
        if not self.exists(digest):
            meta = DatasetMeta(
                id=digest,
                filename=clean,
                kind=_kind(clean),
                size=len(raw),
                saved_at=now_utc(),
                sample=sample,
                saved_by=saved_by,
            )
            self._write_folder(digest, bytes(raw), meta)
            with self.db.write() as tx:
                # INSERT OR IGNORE: another request may have saved the same bytes meanwhile, and
                # the first name stays.
                tx.execute(
                    "INSERT OR IGNORE INTO datasets (id, filename, kind, size, saved_at, saved_by,"
                    " sample) VALUES (?, ?, ?, ?, ?, ?, ?)",
                    (
                        digest,
                        meta.filename,
                        meta.kind,
                        meta.size,
                        meta.saved_at,
                        saved_by,
                        int(sample),
                    ),
                )
        if sample and digest not in self._samples:
            self._samples.append(digest)
        return digest

    def _write_folder(self, digest: str, raw: bytes, meta: DatasetMeta) -> None:
        """Write ``datasets/<digest>`` completely, then rename it into place (write-once)."""
        folder = self.root / digest
        if (folder / "meta.json").exists() and (folder / "raw").stat().st_size == len(raw):
            return  # written before (by the previous version, or by a save killed before its row)
        tmp = Path(tempfile.mkdtemp(prefix=".tmp-", dir=self.root))
        try:
            for name, data in (
                ("raw", raw),
                ("meta.json", json.dumps(meta.to_dict(), indent=1).encode("utf-8")),
            ):
                with open(tmp / name, "wb") as fh:
                    fh.write(data)
                    fh.flush()
                    os.fsync(fh.fileno())
            try:
                os.replace(tmp, folder)
            except OSError:  # another request saved the same bytes first
                pass
            else:
                _fsync_dir(self.root)
        finally:
            if tmp.exists():
                for p in tmp.iterdir():
                    p.unlink()
                tmp.rmdir()

    def load_samples(self, folder: str | os.PathLike[str]) -> list[str]:
        """Save every data file in ``folder`` as a sample dataset; return their ids, demo first.

        The demo (what a brand-new visitor sees) is the wide annual landings file: the first
        file whose name mentions landings and not a month, else the first file by name.
        """
        folder = Path(folder)
        if not folder.is_dir():
            return []
        files = sorted(
            p for p in folder.iterdir() if p.is_file() and p.suffix.lower() in DATA_SUFFIXES
        )
        files.sort(key=lambda p: (not _is_demo_name(p.name), p.name))
        for path in files:
            self.save(path.read_bytes(), path.name, sample=True)
        return list(self._samples)

    # -- reading ------------------------------------------------------------------------------

    def exists(self, dataset_id: str | None) -> bool:
        return (
            isinstance(dataset_id, str)
            and bool(_ID.match(dataset_id))
            and self._row(dataset_id) is not None
        )

    def meta(self, dataset_id: str) -> DatasetMeta:
        """Metadata of one dataset (InputError when unknown)."""
        check_dataset_id(dataset_id)
        row = self._row(dataset_id)
        if row is None:
            raise fc.InputError(_not_found(dataset_id))
        filename, kind, size, saved_at, saved_by = row
        return DatasetMeta(
            id=dataset_id,
            filename=filename,
            kind=kind,
            size=int(size),
            saved_at=saved_at,
            sample=dataset_id in self._samples,
            saved_by=saved_by,
        )

    def raw(self, dataset_id: str) -> bytes:
        """The bytes exactly as uploaded."""
        return (self._folder(dataset_id) / "raw").read_bytes()

    def load_table(self, dataset_id: str) -> fc.Table:
        """The file read by :func:`forecasting_core.read_table` (memoized; do not mutate)."""
        self._folder(dataset_id)
        return self._load(dataset_id)

    def samples(self) -> list[str]:
        """Ids of the sample datasets, the demo dataset first."""
        return list(self._samples)

    def default_id(self) -> str | None:
        """The demo dataset a new visitor sees (None when no samples are loaded)."""
        return self._samples[0] if self._samples else None

    def visible(self, dataset_id: str | None, uploads: Iterable[str] = ()) -> bool:
        """Whether a session with these uploads may open ``dataset_id``."""
        if not dataset_id:
            return False
        return (dataset_id in self._samples or dataset_id in set(uploads or ())) and self.exists(
            dataset_id
        )

    def list(self, uploads: Iterable[str] = ()) -> list[DatasetMeta]:  # noqa: A003
        """Datasets one session may see: the samples, then its own uploads (newest last)."""
        out = [self.meta(i) for i in self._samples if self.exists(i)]
        seen = set(self._samples)
        for i in uploads or ():
            if i not in seen and self.exists(i):
                out.append(self.meta(i))
                seen.add(i)
        return out

    # -- internals ----------------------------------------------------------------------------

    def schema_version(self) -> int:
        """Version of the data folder's schema (see :mod:`app.store_db`)."""
        return self.db.version()

    def integrity_check(self) -> str:
        """SQLite's ``PRAGMA integrity_check`` of the database ("ok" when sound)."""
        return self.db.integrity()

    def close(self) -> None:
        """Close this process's database connections (they reopen on the next call)."""
        self.db.close()

    # -- internals ----------------------------------------------------------------------------

    def _row(self, dataset_id: str) -> tuple[str, str, int, str, str | None] | None:
        return (
            self.db.conn()
            .execute(
                "SELECT filename, kind, size, saved_at, saved_by FROM datasets WHERE id = ?",
                (dataset_id,),
            )
            .fetchone()
        )

    def _folder(self, dataset_id: str) -> Path:
        check_dataset_id(dataset_id)
        folder = self.root / dataset_id
        if self._row(dataset_id) is None or not (folder / "raw").is_file():
            raise fc.InputError(_not_found(dataset_id))
        return folder

    def _known_dataset(self, dataset_id: str) -> None:
        self._folder(dataset_id)

    def _series_names(self, dataset_id: str) -> list[str]:
        return list(self.load_table(dataset_id).info)

    def _load_uncached(self, dataset_id: str) -> fc.Table:
        folder = self._folder(dataset_id)
        return fc.read_table((folder / "raw").read_bytes(), name=self.meta(dataset_id).filename)


def _not_found(dataset_id: str) -> str:
    return f"dataset {dataset_id[:12]} was not found on this server. Upload the file again."


#: A temporary dataset folder older than this (seconds) belongs to a save that died.
STALE_TEMPORARY_S = 3600.0


def _remove_stale_temporaries(root: Path) -> None:
    """Remove ``.tmp-*`` folders of saves killed before their rename (older than an hour).

    Younger ones may belong to a save running in another process right now, so they stay.
    """
    cutoff = time.time() - STALE_TEMPORARY_S
    for tmp in root.glob(".tmp-*"):
        try:
            if not tmp.is_dir() or tmp.stat().st_mtime > cutoff:
                continue
            for p in tmp.iterdir():
                p.unlink()
            tmp.rmdir()
        except OSError:  # another process removed it first, or it is not ours to remove
            continue


def _fsync_dir(path: Path) -> None:
    """Make a rename in ``path`` durable (a no-op where directories cannot be opened)."""
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:  # pragma: no cover - e.g. Windows
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover
        pass
    finally:
        os.close(fd)


def _is_demo_name(name: str) -> bool:
    low = name.lower()
    return "landings" in low and not any(w in low for w in ("month", "squid", "long", "20"))


def _mb(n: int) -> str:
    """Bytes as MB/kB with 1 MB = 1024 x 1024 bytes (as file managers show them)."""
    return f"{n / 1048576:.1f} MB" if n >= 102_400 else f"{n / 1024:.0f} kB"


def get_store() -> DatasetStore:
    """The store of the running app (call inside a request or callback)."""
    from flask import current_app

    return current_app.extensions["haulcast"]["store"]

"""The store under concurrent writers and hard kills, and opening a previous version's folder.

Threads and processes write at once (a waitress server's threads, ``--workers N``'s processes);
a writer killed with SIGKILL mid-stream loses nothing it had confirmed and leaves nothing
half-written; and a data folder written by the folder-only previous version opens with its
datasets. Every check is against SQLite's own ``PRAGMA integrity_check`` (SQLite docs: it
returns the single row "ok" for a sound database) and against what the writers reported.
"""

from __future__ import annotations

import hashlib
import json
import multiprocessing
import os
import random
import signal
import sqlite3
import threading
import time
from pathlib import Path

import pytest

from app.store import DB_NAME, SCHEMA_VERSION, DatasetStore

CSV = b"year,cod_t\n" + b"".join(
    f"{y},{100 + 3 * (y - 1990) + y % 4}\n".encode() for y in range(1990, 2020)
)


def _forecast(tag: str, i: int, rows: int = 5) -> dict:
    """A forecast-shaped payload whose every number follows from (tag, i): checkable later."""
    return {
        "tag": tag,
        "i": i,
        "forecast": [
            {"step": s, "mean": (i + 1) / 7 + s / 3, "intervals": {"95": [i / 3 - s, i / 3 + s]}}
            for s in range(1, rows + 1)
        ],
    }


def _check_complete(store: DatasetStore, analysis) -> None:
    """The analysis holds exactly what its writer sent (nothing half-written)."""
    tag, i = analysis.settings["tag"], analysis.settings["i"]
    rows = analysis.settings["rows"]
    assert analysis.forecast == _forecast(tag, i, rows), analysis.id
    assert analysis.series == "cod_t" and analysis.author == f"writer {tag}"


# -- threads ----------------------------------------------------------------------------------


def test_threads_writing_at_once_lose_nothing(tmp_path):
    store = DatasetStore(tmp_path)
    dataset_id = store.save(CSV, "cod.csv")
    store.load_table(dataset_id)
    base = store.save_analysis(
        dataset_id=dataset_id,
        series="cod_t",
        settings={"tag": "base", "i": 0, "rows": 5},
        model="m",
        forecast=_forecast("base", 0),
        author="writer base",
    )
    saved: list[str] = []
    revisions: list[int] = []
    errors: list[BaseException] = []
    lock = threading.Lock()

    def work(t: int) -> None:
        try:
            for i in range(15):
                a = store.save_analysis(
                    dataset_id=dataset_id,
                    series="cod_t",
                    settings={"tag": f"t{t}", "i": i, "rows": 5},
                    model="m",
                    forecast=_forecast(f"t{t}", i),
                    author=f"writer t{t}",
                )
                r = store.revise(base.id, author="writer base")
                with lock:
                    saved.append(a.id)
                    revisions.append(r.version)
                store.list_analyses(query=f"t{t}")
        except BaseException as err:  # noqa: BLE001 - reported below
            errors.append(err)

    threads = [threading.Thread(target=work, args=(t,)) for t in range(6)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(60)
    assert not errors, errors
    assert len(saved) == len(set(saved)) == 90
    # versions in one chain are unique even when six threads revise the same analysis at once
    assert sorted(revisions) == list(range(2, 92))
    reopened = DatasetStore(tmp_path)
    for analysis_id in saved:
        _check_complete(reopened, reopened.get_analysis(analysis_id))
    assert len(reopened.list_analyses()) == 1 + 90 + 90
    assert reopened.integrity_check() == "ok"
    store.close()
    reopened.close()


# -- processes --------------------------------------------------------------------------------


def _write_loop(folder: str, tag: str, count: int, rows: int, fd: int) -> None:
    """A writer process: save analyses (now and then a dataset and a publish) in a loop.

    Each id is written to ``fd`` only after the call that saved it returned ("confirmed").
    ``count == 0`` loops until killed.
    """
    out = os.fdopen(fd, "w", buffering=1)
    store = DatasetStore(folder)
    dataset_id = store.save(CSV, "cod.csv")
    i = 0
    while count == 0 or i < count:
        if i % 4 == 3:  # a folder write, then its row
            extra = store.save(CSV + f"2020,{i}\n".encode(), f"{tag}-{i}.csv")
            print("dataset", extra, file=out, flush=True)
        a = store.save_analysis(
            dataset_id=dataset_id,
            series="cod_t",
            settings={"tag": tag, "i": i, "rows": rows},
            model="m",
            forecast=_forecast(tag, i, rows),
            author="writer " + tag,
        )
        if i % 3 == 0:
            store.publish(a.id, author="writer " + tag)
        print("saved", a.id, file=out, flush=True)
        i += 1
    print("done", file=out, flush=True)
    out.close()


def _writer(folder: Path, tag: str, count: int, rows: int = 5):
    """Start ``_write_loop`` in a forked process; return (process, its output as a text file).

    Forked rather than a fresh interpreter: a child then starts in milliseconds instead of
    importing the scientific stack again, and it opens its own store and connections.
    """
    ctx = multiprocessing.get_context("fork")
    read_fd, write_fd = os.pipe()
    proc = ctx.Process(target=_write_loop, args=(str(folder), tag, count, rows, write_fd))
    proc.start()
    os.close(write_fd)
    return proc, os.fdopen(read_fd, "r")


def _previous_version_folder(folder: Path, raw: bytes, filename: str) -> str:
    """What the folder-only previous version wrote: datasets/<sha256>/{raw, meta.json}."""
    digest = hashlib.sha256(raw).hexdigest()
    target = folder / "datasets" / digest
    target.mkdir(parents=True)
    (target / "raw").write_bytes(raw)
    meta = {
        "id": digest,
        "filename": filename,
        "kind": "csv",
        "size": len(raw),
        "saved_at": "2026-03-02T09:15:00+00:00",
        "sample": False,
    }
    (target / "meta.json").write_text(json.dumps(meta, indent=1), encoding="utf-8")
    return digest


def test_two_processes_upgrading_and_writing_at_once_lose_nothing(tmp_path):
    # both start on a previous-version folder, so they also race to migrate it
    old_id = _previous_version_folder(tmp_path, CSV, "cod.csv")
    writers = [_writer(tmp_path, tag, 40) for tag in ("a", "b")]
    outputs = [pipe.read() for _, pipe in writers]
    for proc, pipe in writers:
        proc.join(60)
        pipe.close()
        assert proc.exitcode == 0
    saved = [line.split()[1] for out in outputs for line in out.splitlines() if "saved" in line]
    assert len(saved) == len(set(saved)) == 80
    store = DatasetStore(tmp_path)
    assert store.integrity_check() == "ok"
    for analysis_id in saved:
        _check_complete(store, store.get_analysis(analysis_id))
    assert len(store.list_analyses()) == 80
    assert len(store.list_analyses(status="published")) == 2 * 14
    assert store.meta(old_id).saved_at == "2026-03-02T09:15:00+00:00"
    conn = sqlite3.connect(tmp_path / DB_NAME)
    try:
        versions = conn.execute("SELECT version FROM schema_version").fetchall()
    finally:
        conn.close()
    assert versions == [(v,) for v in range(1, SCHEMA_VERSION + 1)]  # migrated exactly once
    store.close()


# -- kill -------------------------------------------------------------------------------------


def _kill_mid_stream(folder: Path, tag: str, confirmed_before_kill: int, rows: int) -> list[str]:
    """Start a writer, wait for some confirmed saves, SIGKILL it; return its output lines."""
    proc, pipe = _writer(folder, tag, 0, rows)
    lines: list[str] = []
    try:
        while sum(ln.startswith("saved") for ln in lines) < confirmed_before_kill:
            line = pipe.readline()
            if not line:
                break
            lines.append(line.strip())
        time.sleep(random.Random(confirmed_before_kill).uniform(0, 0.01))
        os.kill(proc.pid, signal.SIGKILL)
        proc.join(30)
        lines += [ln.strip() for ln in pipe.read().splitlines() if ln.strip()]
    finally:
        pipe.close()
        if proc.is_alive():  # pragma: no cover
            proc.kill()
            proc.join(10)
    assert proc.exitcode == -signal.SIGKILL
    assert "done" not in lines
    return lines


def test_a_writer_killed_mid_stream_loses_no_confirmed_save_and_leaves_nothing_half_written(
    tmp_path,
):
    lines: list[str] = []
    # two rounds on the same folder; bigger payloads make a kill inside a write likelier
    for tag, confirmed, rows in (("k1", 12, 400), ("k2", 25, 50)):
        lines += _kill_mid_stream(tmp_path, tag, confirmed, rows)
    saved = [ln.split()[1] for ln in lines if ln.startswith("saved")]
    datasets = [ln.split()[1] for ln in lines if ln.startswith("dataset")]
    assert len(saved) >= 37

    store = DatasetStore(tmp_path)
    assert store.integrity_check() == "ok"
    everything = store.list_analyses()
    ids = {a.id for a in everything}
    assert set(saved) <= ids  # every confirmed save is there
    assert len(ids) - len(saved) <= 2  # at most the one in flight per kill committed unconfirmed
    for analysis in everything:  # and every row there is complete
        _check_complete(store, analysis)
    for dataset_id in datasets:
        assert hashlib.sha256(store.raw(dataset_id)).hexdigest() == dataset_id
        assert list(store.load_table(dataset_id).series) == ["cod_t"]
    # the store keeps working after the kills: a new save, publish and sign-off
    fresh = store.revise(saved[-1], author="after restart")
    store.publish(fresh.id, author="after restart")
    assert store.add_signoff(fresh.id, name="Dee", role="lead", note="").signoffs[0].name == "Dee"
    store.close()


# -- the previous version's folder ------------------------------------------------------------


def test_a_previous_version_folder_opens_with_its_datasets(tmp_path):
    xlsx_like = CSV.replace(b"cod_t", b"ling_t")
    first = _previous_version_folder(tmp_path, CSV, "cod landings.csv")
    second = _previous_version_folder(tmp_path, xlsx_like, "ling.csv")
    (tmp_path / "datasets" / ".tmp-abandoned").mkdir()  # a save the old version never finished
    (tmp_path / "datasets" / ("f" * 64)).mkdir()  # a folder with no meta.json: not a dataset
    assert not (tmp_path / DB_NAME).exists()

    store = DatasetStore(tmp_path)
    assert store.schema_version() == SCHEMA_VERSION
    assert store.exists(first) and store.exists(second)
    assert not store.exists("f" * 64)
    meta = store.meta(first)
    assert (meta.filename, meta.size, meta.kind) == ("cod landings.csv", len(CSV), "csv")
    assert meta.saved_at == "2026-03-02T09:15:00+00:00"
    assert store.raw(second) == xlsx_like
    assert list(store.load_table(first).series) == ["cod_t"]
    # the old files stay where they were, and saving the same bytes again finds the dataset
    assert (tmp_path / "datasets" / first / "raw").read_bytes() == CSV
    assert store.save(CSV, "other name.csv") == first
    assert store.meta(first).filename == "cod landings.csv"
    # and an analysis can be saved on an adopted dataset
    a = store.save_analysis(
        dataset_id=first,
        series="cod_t",
        settings={"tag": "u", "i": 1, "rows": 5},
        model="m",
        forecast=_forecast("u", 1),
        author="writer u",
    )
    store.close()
    assert DatasetStore(tmp_path).get_analysis(a.id) == a


def test_reopening_an_upgraded_folder_does_not_migrate_again(tmp_path):
    _previous_version_folder(tmp_path, CSV, "cod.csv")
    DatasetStore(tmp_path).close()
    store = DatasetStore(tmp_path)
    rows = store.db.conn().execute("SELECT version, note FROM schema_version").fetchall()
    assert [v for v, _ in rows] == list(range(1, SCHEMA_VERSION + 1))
    assert "adopted 1 dataset folder" in rows[0][1]
    store.close()


def test_a_folder_from_a_newer_version_is_refused_with_a_plain_message(tmp_path):
    DatasetStore(tmp_path).close()
    conn = sqlite3.connect(tmp_path / DB_NAME)
    with conn:
        conn.execute("INSERT INTO schema_version VALUES (99, '2030-01-01T00:00:00+00:00', 'x')")
    conn.close()
    import forecasting_core as fc

    with pytest.raises(fc.InputError, match=r"written by a newer Haulcast \(schema 99"):
        DatasetStore(tmp_path)


def test_a_row_always_has_its_bytes_even_if_a_save_died_before_its_row(tmp_path):
    # a save killed between writing the folder and committing the row leaves only the folder:
    # the dataset does not exist yet, and the next save of the same bytes completes it
    store = DatasetStore(tmp_path)
    digest = hashlib.sha256(CSV).hexdigest()
    _previous_version_folder(tmp_path / "elsewhere", CSV, "cod.csv")
    os.replace(tmp_path / "elsewhere" / "datasets" / digest, tmp_path / "datasets" / digest)
    assert not store.exists(digest)
    assert store.save(CSV, "cod.csv") == digest
    assert store.raw(digest) == CSV
    store.close()


def test_temporary_folders_of_dead_saves_are_removed_once_stale(tmp_path):
    root = tmp_path / "datasets"
    root.mkdir()
    stale, fresh = root / ".tmp-dead", root / ".tmp-running"
    for folder in (stale, fresh):
        folder.mkdir()
        (folder / "raw").write_bytes(CSV)
    two_hours_ago = time.time() - 7200
    os.utime(stale, (two_hours_ago, two_hours_ago))
    DatasetStore(tmp_path).close()
    assert not stale.exists()
    assert (fresh / "raw").read_bytes() == CSV  # may be another process's save in progress


def _save_with_inherited(store: DatasetStore, dataset_id: str, fd: int) -> None:
    out = os.fdopen(fd, "w", buffering=1)
    for i in range(10):
        a = store.save_analysis(
            dataset_id=dataset_id,
            series="cod_t",
            settings={"tag": "child", "i": i, "rows": 5},
            model="m",
            forecast=_forecast("child", i),
            author="writer child",
        )
        print(a.id, file=out, flush=True)
    out.close()


def test_a_store_object_inherited_through_fork_opens_its_own_connection(tmp_path):
    # a pre-forking server may build the store before forking: the child must not reuse the
    # parent's SQLite connection (SQLite docs, "How To Corrupt An SQLite Database File")
    store = DatasetStore(tmp_path)
    dataset_id = store.save(CSV, "cod.csv")
    parent_conn = store.db.conn()
    read_fd, write_fd = os.pipe()
    proc = multiprocessing.get_context("fork").Process(
        target=_save_with_inherited, args=(store, dataset_id, write_fd)
    )
    proc.start()
    os.close(write_fd)
    mine = [
        store.save_analysis(
            dataset_id=dataset_id,
            series="cod_t",
            settings={"tag": "parent", "i": i, "rows": 5},
            model="m",
            forecast=_forecast("parent", i),
            author="writer parent",
        ).id
        for i in range(10)
    ]
    with os.fdopen(read_fd) as pipe:
        theirs = pipe.read().split()
    proc.join(30)
    assert proc.exitcode == 0
    assert store.db.conn() is parent_conn
    listed = {a.id: a for a in store.list_analyses()}
    assert set(listed) == set(mine) | set(theirs) and len(listed) == 20
    for a in listed.values():
        _check_complete(store, a)
    assert store.integrity_check() == "ok"
    store.close()

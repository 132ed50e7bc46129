"""Schema migrations of the store: a folder made by the previous schema (version 1, before the
unique index on sign-offs) upgrades, its repeated sign-offs from the old double-click bug are
set aside keeping the earliest, and the database itself then refuses a repeat.

The previous schema is made by the shipped migration 1 alone (``MIGRATIONS[:1]``), exactly what
the previous Haulcast wrote; its repeats are inserted with plain SQL, as that version allowed.
Unique indexes and COLLATE NOCASE behave as the SQLite documentation describes ("CREATE INDEX":
a UNIQUE index refuses a second row with equal indexed values; "Datatypes", collating sequences:
NOCASE folds the 26 ASCII letters only).
"""

from __future__ import annotations

import logging
import sqlite3
from pathlib import Path

import pytest

import forecasting_core as fc
from app import store_db
from app.store import DB_NAME, SCHEMA_VERSION, DatasetStore

CSV = b"year,cod_t\n" + b"".join(
    f"{y},{100 + 3 * (y - 1990) + y % 4}\n".encode() for y in range(1990, 2020)
)


def _previous_schema_folder(folder: Path, monkeypatch: pytest.MonkeyPatch) -> tuple[str, str]:
    """A data folder at schema 1 with a published analysis and a draft; returns their ids."""
    with monkeypatch.context() as m:
        m.setattr(store_db, "MIGRATIONS", store_db.MIGRATIONS[:1])
        m.setattr(store_db, "SCHEMA_VERSION", 1)
        old = DatasetStore(folder)
        assert old.schema_version() == 1
        dataset = old.save(CSV, "cod.csv")
        fields = {
            "dataset_id": dataset,
            "series": "cod_t",
            "settings": {"horizon": 3},
            "model": "ARIMA(0,1,1)",
            "forecast": {"forecast": [{"time": "2020", "mean": 1.5}]},
            "author": "Ana",
        }
        published = old.save_analysis(**fields, title="published")
        old.publish(published.id, author="Ana")
        draft = old.save_analysis(**fields, title="draft")
        old.close()
    return published.id, draft.id


def _insert_signoffs(folder: Path, rows: list[tuple[str, str, str, str, str]]) -> None:
    """Sign-offs written straight into the file, as the previous schema let a double click do."""
    conn = sqlite3.connect(folder / DB_NAME)
    with conn:
        conn.executemany(
            "INSERT INTO signoffs (analysis_id, name, role, note, signed_at) VALUES (?,?,?,?,?)",
            rows,
        )
    conn.close()


def test_the_schema_has_a_second_migration():
    assert [v for v, _ in store_db.MIGRATIONS] == list(range(1, SCHEMA_VERSION + 1))
    assert SCHEMA_VERSION >= 2


def test_repeated_sign_offs_of_the_previous_schema_keep_the_earliest_and_are_set_aside(
    tmp_path, monkeypatch, caplog
):
    published, _draft = _previous_schema_folder(tmp_path, monkeypatch)
    _insert_signoffs(
        tmp_path,
        [
            (published, "Dee Ola", "stock lead", "Bands checked.", "2026-03-02T09:15:00+00:00"),
            (published, "Dee Ola", "stock lead", "", "2026-03-02T09:15:01+00:00"),  # 2nd click
            (published, "Eli", "manager", "", "2026-03-02T10:00:00+00:00"),
            (published, "dee ola", "Stock Lead", "again", "2026-03-03T08:00:00+00:00"),
            (published, "Dee Ola", "manager", "", "2026-03-03T09:00:00+00:00"),  # another role
        ],
    )
    with caplog.at_level(logging.WARNING, logger="haulcast.store"):
        store = DatasetStore(tmp_path)
    assert store.schema_version() == SCHEMA_VERSION
    kept = store.get_analysis(published).signoffs
    assert [(s.name, s.role, s.note) for s in kept] == [
        ("Dee Ola", "stock lead", "Bands checked."),
        ("Eli", "manager", ""),
        ("Dee Ola", "manager", ""),
    ]
    conn = store.db.conn()
    aside = conn.execute(
        "SELECT name, role, note, signed_at, kept_seq FROM signoffs_set_aside ORDER BY seq"
    ).fetchall()
    first_seq = conn.execute("SELECT min(seq) FROM signoffs").fetchone()[0]
    assert aside == [
        ("Dee Ola", "stock lead", "", "2026-03-02T09:15:01+00:00", first_seq),
        ("dee ola", "Stock Lead", "again", "2026-03-03T08:00:00+00:00", first_seq),
    ]
    note = conn.execute("SELECT note FROM schema_version WHERE version = 2").fetchone()[0]
    assert "2 repeated sign-off(s) on 1 analysis(es) set aside" in note
    assert "earliest of each name and role kept" in note
    assert any("2 repeated sign-off(s)" in r.getMessage() for r in caplog.records)
    # the trigger that keeps sign-offs is back after the migration moved the repeats, and the
    # rows set aside are kept the same way
    for sql in (
        "DELETE FROM signoffs",
        "DELETE FROM signoffs_set_aside",
        "UPDATE signoffs_set_aside SET note = 'x'",
    ):
        with pytest.raises(sqlite3.IntegrityError, match=store_db.IMMUTABLE):
            with store.db.write() as tx:
                tx.execute(sql)
    assert store.integrity_check() == "ok"
    store.close()


def test_a_previous_schema_folder_without_repeats_migrates_quietly(tmp_path, monkeypatch, caplog):
    published, draft = _previous_schema_folder(tmp_path, monkeypatch)
    _insert_signoffs(tmp_path, [(published, "Eli", "manager", "", "2026-03-02T10:00:00+00:00")])
    with caplog.at_level(logging.WARNING, logger="haulcast.store"):
        store = DatasetStore(tmp_path)
    assert not [r for r in caplog.records if r.name == "haulcast.store"]
    rows = store.db.conn().execute("SELECT version, note FROM schema_version").fetchall()
    assert rows[1] == (2, "sign-offs unique per analysis, name and role")
    assert [s.name for s in store.get_analysis(published).signoffs] == ["Eli"]
    assert store.get_analysis(draft).status == "draft"  # the rest is untouched
    store.close()


def test_after_the_upgrade_the_store_still_refuses_a_repeat_with_its_own_message(
    tmp_path, monkeypatch
):
    published, _ = _previous_schema_folder(tmp_path, monkeypatch)
    store = DatasetStore(tmp_path)
    store.add_signoff(published, name="Dee Ola", role="stock lead", note="")
    with pytest.raises(fc.InputError, match="Dee Ola already signed off this analysis as stock"):
        store.add_signoff(published, name="DEE OLA", role="stock lead", note="x")
    store.close()


@pytest.mark.parametrize(
    ("name", "role"),
    [("Dee Ola", "stock lead"), ("DEE OLA", "Stock Lead")],  # NOCASE folds ASCII letters
)
def test_the_database_itself_refuses_a_repeated_sign_off(tmp_path, monkeypatch, name, role):
    published, _ = _previous_schema_folder(tmp_path, monkeypatch)
    DatasetStore(tmp_path).add_signoff(published, name="Dee Ola", role="stock lead", note="")
    conn = sqlite3.connect(tmp_path / DB_NAME)
    try:
        with pytest.raises(sqlite3.IntegrityError, match="UNIQUE constraint failed: signoffs"):
            with conn:
                conn.execute(
                    "INSERT INTO signoffs (analysis_id, name, role, note, signed_at)"
                    " VALUES (?, ?, ?, '', '2026-03-04T00:00:00+00:00')",
                    (published, name, role),
                )
        with pytest.raises(sqlite3.IntegrityError, match=store_db.IMMUTABLE):
            with conn:
                conn.execute("DELETE FROM signoffs")
    finally:
        conn.close()


def test_the_index_is_the_belt_to_the_stores_check(tmp_path, monkeypatch):
    # the store's check is skipped here on purpose: the index still stops the repeat, and the
    # store answers with a plain message instead of SQLite's
    published, _ = _previous_schema_folder(tmp_path, monkeypatch)
    store = DatasetStore(tmp_path)
    store.add_signoff(published, name="Dee Ola", role="stock lead", note="")
    with pytest.raises(fc.InputError, match="already signed off this analysis as this role"):
        with store._writing() as tx:
            tx.execute(
                "INSERT INTO signoffs (analysis_id, name, role, note, signed_at)"
                " VALUES (?, 'Dee Ola', 'stock lead', '', '2026-03-04T00:00:00+00:00')",
                (published,),
            )
    assert len(store.get_analysis(published).signoffs) == 1
    store.close()


def test_a_second_store_on_the_upgraded_folder_does_not_migrate_again(tmp_path, monkeypatch):
    published, _ = _previous_schema_folder(tmp_path, monkeypatch)
    _insert_signoffs(
        tmp_path,
        [(published, "Eli", "manager", "", f"2026-03-02T10:00:0{i}+00:00") for i in range(3)],
    )
    first, second = DatasetStore(tmp_path), DatasetStore(tmp_path)
    versions = first.db.conn().execute("SELECT version FROM schema_version").fetchall()
    assert versions == [(1,), (2,)]
    assert len(second.get_analysis(published).signoffs) == 1
    first.close()
    second.close()

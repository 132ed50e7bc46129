"""The dataset store: content-addressed, immutable, file names never used as paths, uploads
visible only to the sessions that list them."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pytest

import forecasting_core as fc
from app.state import resolve_selection, update_selection
from app.store import DatasetStore, check_dataset_id, sanitise_filename

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_data"

CSV = b"year,cod_t\n" + b"".join(
    f"{y},{100 + 3 * (y - 1990) + y % 4}\n".encode() for y in range(1990, 2020)
)


@pytest.fixture
def store(tmp_path: Path) -> DatasetStore:
    return DatasetStore(tmp_path)


def test_save_returns_the_sha256_of_the_bytes(store):
    # reference: hashlib's sha256 of the same bytes
    assert store.save(CSV, "cod.csv") == hashlib.sha256(CSV).hexdigest()


def test_saving_the_same_bytes_twice_keeps_one_dataset(store, tmp_path):
    first = store.save(CSV, "cod.csv")
    second = store.save(CSV, "renamed.csv")
    assert first == second
    assert [p.name for p in (tmp_path / "datasets").iterdir()] == [first]
    assert store.meta(first).filename == "cod.csv"  # the first name stays: datasets are immutable


def test_raw_bytes_and_metadata_are_kept(store, tmp_path):
    dataset_id = store.save(CSV, "cod.csv")
    folder = tmp_path / "datasets" / dataset_id
    assert (folder / "raw").read_bytes() == CSV
    meta = json.loads((folder / "meta.json").read_text())
    assert meta["id"] == dataset_id
    assert meta["size"] == len(CSV)
    assert meta["kind"] == "csv"
    assert store.raw(dataset_id) == CSV


def test_who_uploaded_is_kept_when_known(store):
    assert store.meta(store.save(CSV, "cod.csv", author=" Ana Ruiz ")).saved_by == "Ana Ruiz"
    other = store.save(CSV + b"2020,1\n", "cod2.csv")
    assert store.meta(other).saved_by is None
    with pytest.raises(fc.InputError, match="author must be at most 80 characters"):
        store.save(CSV + b"2021,1\n", "cod3.csv", author="x" * 81)


@pytest.mark.parametrize(
    ("given", "kept"),
    [
        ("../../etc/passwd", "passwd"),
        ("C:\\data\\Landings 2025 (final).csv", "Landings 2025 (final).csv"),
        ("résumé_catch.xlsx", "resume_catch.xlsx"),
        ("a<b>c|d.csv", "a_b_c_d.csv"),
        ("", "upload.csv"),
        ("....", "upload.csv"),
        (None, "upload.csv"),
    ],
)
def test_file_names_are_sanitised_for_display(given, kept):
    assert sanitise_filename(given) == kept


def test_a_hostile_file_name_never_becomes_a_path(store, tmp_path):
    dataset_id = store.save(CSV, "../../outside.csv")
    assert not (tmp_path.parent / "outside.csv").exists()
    assert sorted(p.name for p in (tmp_path / "datasets" / dataset_id).iterdir()) == [
        "meta.json",
        "raw",
    ]


def test_very_long_names_are_shortened_keeping_the_extension():
    name = sanitise_filename("x" * 300 + ".xlsx")
    assert len(name) <= 120
    assert name.endswith(".xlsx")


@pytest.mark.parametrize(
    ("raw", "message"),
    [
        (b"", "the file is empty"),
        (b"x" * 2001, r"at most 2 kB\. Got 2 kB instead"),
    ],
)
def test_empty_and_oversized_files_are_refused_with_a_plain_message(tmp_path, raw, message):
    store = DatasetStore(tmp_path, max_bytes=2000)
    with pytest.raises(fc.InputError, match=message):
        store.save(raw, "big.csv")


def test_the_default_cap_is_the_cores_file_limit(store):
    assert store.max_bytes == fc.MAX_FILE_BYTES


@pytest.mark.parametrize("bad_id", ["", "abc", "../" + "a" * 61, "A" * 64, "g" * 64, None])
def test_malformed_dataset_ids_are_refused(store, bad_id):
    with pytest.raises(fc.InputError, match="dataset id must be 64 hexadecimal digits"):
        store.load_table(bad_id)
    assert not store.exists(bad_id)
    assert check_dataset_id("a" * 64) == "a" * 64


def test_an_unknown_dataset_says_to_upload_again(store):
    with pytest.raises(fc.InputError, match="was not found on this server. Upload the file again"):
        store.load_table("0" * 64)


def test_load_table_reads_the_file_and_is_memoized(store):
    dataset_id = store.save(CSV, "cod.csv")
    table = store.load_table(dataset_id)
    assert list(table.series) == ["cod_t"]
    assert table.sha256 == dataset_id
    assert table.source == "cod.csv"
    assert store.load_table(dataset_id) is table


def test_excel_uploads_are_read_as_excel(store):
    openpyxl = pytest.importorskip("openpyxl")
    import io

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["year", "ling_t"])
    for i in range(20):
        sheet.append([2000 + i, 50.0 + 2 * i + (i % 3)])
    buffer = io.BytesIO()
    book.save(buffer)
    dataset_id = store.save(buffer.getvalue(), "ling.xlsx")
    assert store.meta(dataset_id).kind == "xlsx"
    assert list(store.load_table(dataset_id).series) == ["ling_t"]


def test_samples_are_listed_for_everyone_with_the_wide_annual_landings_first(store):
    ids = store.load_samples(SAMPLES)
    names = [store.meta(i).filename for i in ids]
    assert names[0] == "vellmouth_landings.csv"
    assert sorted(names) == sorted(p.name for p in SAMPLES.glob("*.csv"))
    assert store.default_id() == ids[0]
    assert [m.id for m in store.list()] == ids
    assert all(m.sample for m in store.list())


def test_uploads_are_listed_only_for_the_sessions_that_hold_them(store):
    store.load_samples(SAMPLES)
    mine = store.save(CSV, "mine.csv")
    theirs = store.save(CSV.replace(b"cod_t", b"hake_t"), "theirs.csv")
    listed = [m.filename for m in store.list([mine])]
    assert "mine.csv" in listed and "theirs.csv" not in listed
    assert "theirs.csv" not in [m.filename for m in store.list()]
    assert store.visible(mine, [mine])
    assert not store.visible(theirs, [mine])
    assert store.visible(store.default_id(), [])


def test_a_new_visitor_resolves_to_the_demo_dataset_and_its_first_series(store):
    store.load_samples(SAMPLES)
    sel = resolve_selection(None, store)
    assert sel["dataset_id"] == store.default_id()
    # sample_data/README.md: the landings file's first column after year is hake_t
    assert sel["series"] == "hake_t"
    assert sel["transform"] == "auto"
    assert sel["uploads"] == []
    assert sel["is_demo"] is True


def test_another_sessions_dataset_id_falls_back_to_the_demo(store):
    store.load_samples(SAMPLES)
    theirs = store.save(CSV, "theirs.csv")
    sel = resolve_selection(
        {"dataset_id": theirs, "series": "cod_t", "model": "ARIMA(1,1,0)"}, store
    )
    assert sel["dataset_id"] == store.default_id()
    assert sel["series"] == "hake_t"
    assert sel["model"] is None


def test_an_own_upload_resolves_to_itself_and_an_unknown_series_to_the_first_usable(store):
    store.load_samples(SAMPLES)
    mine = store.save(CSV, "mine.csv")
    sel = resolve_selection({"dataset_id": mine, "series": "no_such", "uploads": [mine]}, store)
    assert (sel["dataset_id"], sel["series"]) == (mine, "cod_t")
    assert sel["is_demo"] is False


def test_a_choice_made_on_the_demo_is_kept_while_the_dataset_is_unset(store):
    store.load_samples(SAMPLES)
    sel = resolve_selection({"dataset_id": None, "series": "plaice_t", "model": "m"}, store)
    assert (sel["series"], sel["model"]) == ("plaice_t", "m")


@pytest.mark.parametrize(
    ("change", "cleared"),
    [
        ({"dataset_id": "b" * 64}, {"series", "model", "reference"}),
        ({"series": "other"}, {"model", "reference"}),
        ({"transform": "log"}, {"model"}),
        ({"bench": {"horizon": 3}}, {"model"}),
        ({"reference": 1200.0}, set()),
    ],
)
def test_changing_a_key_clears_what_depended_on_it(change, cleared):
    before = {
        "dataset_id": "a" * 64,
        "series": "cod_t",
        "transform": "auto",
        "bench": None,
        "model": "ARIMA(0,1,1)",
        "reference": 900.0,
        "uploads": ["a" * 64],
    }
    after = update_selection(before, **change)
    for key in ("series", "model", "reference"):
        if key in change:
            continue
        assert (after[key] is None) == (key in cleared), key
    assert after["uploads"] == ["a" * 64]
    assert before["model"] == "ARIMA(0,1,1)"  # the incoming dict is not changed


def test_update_selection_drops_unknown_keys_and_fills_defaults():
    out = update_selection({"series": "x", "is_demo": True, "junk": 1})
    assert "junk" not in out and "is_demo" not in out
    assert set(out) >= {  # the selection may gain keys (e.g. an opened analysis)
        "dataset_id",
        "series",
        "transform",
        "bench",
        "model",
        "reference",
        "uploads",
    }
    assert out["transform"] == "auto"

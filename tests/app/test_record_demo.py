"""The demo's forecast record: published forecasts from the 2020 vintage, seeded once."""

from __future__ import annotations

import json
import subprocess
import sys
import time
from hashlib import sha256
from pathlib import Path

import pytest

import app.demo_record as demo
import forecasting_core as fc
from app.record_views import record_section
from app.store import DatasetStore

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_data"


@pytest.fixture
def store(tmp_path: Path) -> DatasetStore:
    s = DatasetStore(tmp_path / "data")
    s.load_samples(SAMPLES)
    return s


def _demo(store: DatasetStore) -> list:
    return [a for a in store.list_analyses() if a.settings.get(demo.MARKER_KEY)]


def _full_landings(store: DatasetStore) -> str:
    return next(i for i in store.samples() if store.meta(i).filename == "vellmouth_landings.csv")


def test_precomputed_forecasts_match_the_vintage():
    raw = (SAMPLES / demo.VINTAGE_FILE).read_bytes()
    payload = json.loads((SAMPLES / demo.PRECOMPUTED_FILE).read_text(encoding="utf-8"))
    assert payload["sha256"] == sha256(raw).hexdigest()
    assert demo.load_precomputed(SAMPLES, raw) == payload
    table = fc.read_table(raw, name=demo.VINTAGE_FILE)
    assert [a["series"] for a in payload["analyses"]] == list(table.series)
    for item in payload["analyses"]:
        times = [r["time"] for r in item["forecast"]["forecast"]]
        assert times == ["2021", "2022", "2023", "2024", "2025"]  # data to 2020, 5 years
        assert item["forecast"]["levels"] == [50, 80, 95]
        assert item["model"] == item["forecast"]["model"] == item["settings"]["model"]


def test_precomputed_forecasts_are_what_the_core_makes_today():
    # The board recomputes an opened analysis and compares it with the saved forecast to a
    # relative 1e-9 (app.saved.forecast_differences); the demo's must pass that check. When a
    # change to the core moves the fitted numbers, rewrite the file: python -m app.demo_record
    from app.saved import forecast_differences

    raw = (SAMPLES / demo.VINTAGE_FILE).read_bytes()
    payload = demo.load_precomputed(SAMPLES, raw)
    table = fc.read_table(raw, name=demo.VINTAGE_FILE)
    for saved in payload["analyses"]:
        y = table.series[saved["series"]]
        comparison = fc.compare_models(y, horizon=5, hindcast=False)  # hindcast: same model
        forecast = fc.make_forecast(comparison.best, horizon=5)
        assert comparison.best.label == saved["model"]
        assert forecast_differences(saved["forecast"], forecast.to_dict()) == [], (
            f"{demo.PRECOMPUTED_FILE} is stale for {saved['series']}: run python -m app.demo_record"
        )


def test_seed_publishes_one_signed_off_forecast_per_stock_once(store):
    start = time.perf_counter()
    made = demo.seed_demo_record(store, SAMPLES)
    elapsed = time.perf_counter() - start
    assert sorted(a.series for a in made) == ["hake_t", "herring_t", "plaice_t", "whiting_t"]
    for a in made:
        assert a.status == "published" and a.author == demo.AUTHOR
        assert a.season == "2021"
        assert [s.name for s in a.signoffs] == ["Demo manager"]
        assert a.title == f"Demo: {a.series}, 5-year forecast from data to 2020"
    assert elapsed < 5.0  # measured about 0.06 s; the bound only catches a recomputation
    assert demo.seed_demo_record(store, SAMPLES) == []
    assert len(_demo(store)) == 4


def test_seed_finishes_a_draft_left_by_an_interrupted_start(store):
    raw = (SAMPLES / demo.VINTAGE_FILE).read_bytes()
    payload = demo.load_precomputed(SAMPLES, raw)
    item = payload["analyses"][0]
    vintage = store.save(raw, demo.VINTAGE_FILE, sample=True)
    draft = store.save_analysis(
        dataset_id=vintage,
        series=item["series"],
        settings={**item["settings"], demo.MARKER_KEY: demo.demo_marker(raw)},
        model=item["model"],
        forecast=item["forecast"],
        author=demo.AUTHOR,
        title="Demo: interrupted",
    )
    made = demo.seed_demo_record(store, SAMPLES)
    assert len(made) == 4 and draft.id in {a.id for a in made}
    assert len(_demo(store)) == 4


def test_several_processes_seeding_at_once_make_no_duplicates(tmp_path):
    data = tmp_path / "data"
    DatasetStore(data).load_samples(SAMPLES)
    # each process imports, says it is ready, then waits for the same start signal
    code = (
        "import sys, time, pathlib; from app.store import DatasetStore;"
        "from app.demo_record import seed_demo_record;"
        "s = DatasetStore(sys.argv[1]); s.load_samples(sys.argv[2]);"
        "pathlib.Path(sys.argv[3] + '.ready').touch();"
        "go = pathlib.Path(sys.argv[4])\n"
        "while not go.exists(): time.sleep(0.01)\n"
        "print(len(seed_demo_record(s, sys.argv[2])))"
    )
    go = tmp_path / "go"
    procs = [
        subprocess.Popen(
            [sys.executable, "-c", code, str(data), str(SAMPLES), str(tmp_path / f"p{k}"), str(go)],
            cwd=ROOT,
            stdout=subprocess.PIPE,
            text=True,
        )
        for k in range(2)
    ]
    deadline = time.monotonic() + 120
    while len(list(tmp_path.glob("p*.ready"))) < 2 and time.monotonic() < deadline:
        time.sleep(0.05)
    go.touch()
    made = [int(p.communicate(timeout=120)[0].strip()) for p in procs]
    assert sorted(made) == [0, 4]
    assert len(_demo(DatasetStore(data))) == 4


def test_no_vintage_no_demo_record(store, tmp_path):
    (tmp_path / "other").mkdir()
    assert demo.seed_demo_record(store, tmp_path / "other") == []
    assert _demo(store) == []


def test_stale_precomputed_file_computes_in_the_background(store, tmp_path, monkeypatch):
    folder = tmp_path / "samples"
    folder.mkdir()
    raw = (SAMPLES / demo.VINTAGE_FILE).read_bytes()
    (folder / demo.VINTAGE_FILE).write_bytes(raw)
    payload = demo.load_precomputed(SAMPLES, raw)
    (folder / demo.PRECOMPUTED_FILE).write_text(json.dumps({**payload, "sha256": "0" * 64}))
    calls = []

    def fake_build(path):  # stands in for the several-second search
        calls.append(Path(path).name)
        return payload

    monkeypatch.setattr(demo, "build_demo_forecasts", fake_build)
    assert demo.seed_demo_record(store, folder) == []  # returned at once
    deadline = time.monotonic() + 30
    while len(_demo(store)) < 4 and time.monotonic() < deadline:
        time.sleep(0.05)
    assert calls == [demo.VINTAGE_FILE]
    assert len(_demo(store)) == 4


def test_demo_shows_on_the_full_landings(store):
    demo.seed_demo_record(store, SAMPLES)
    section = record_section(store, _full_landings(store), "plaice_t")
    assert section is not None
    text = json.dumps(section.to_plotly_json(), default=str)
    # plaice 2021-2025 realised 1501.3, 1318.8, 1364.1, 1688.8, 1390.2: all inside the
    # saved 80% bands (about 1,265 to 1,935 t)
    assert "Of 5 past forecast years, 5 fell inside the 80% band (80% expected)" in text
    assert "5 years scored: too few to judge coverage" in text


def test_create_app_seeds_the_demo_record(tmp_path):
    from app import create_app

    app = create_app({"DATA_DIR": str(tmp_path / "data"), "CACHE_TYPE": "SimpleCache"})
    store = app.server.extensions["haulcast"]["store"]
    assert len(_demo(store)) == 4
    bare = create_app({"DATA_DIR": str(tmp_path / "bare"), "LOAD_SAMPLES": False})
    assert _demo(bare.server.extensions["haulcast"]["store"]) == []


def test_a_failing_store_does_not_stop_the_start(store, caplog):
    class Broken:
        data_dir = store.data_dir

        def save(self, *args, **kwargs):
            raise OSError("disk full")

        def save_analysis(self, **kwargs):  # pragma: no cover - never reached
            raise AssertionError

    assert demo.seed_demo_record(Broken(), SAMPLES) == []
    assert "Could not seed the demo forecast record" in caplog.text

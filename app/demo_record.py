"""The demo's forecast record: published forecasts made from the 2020 vintage of the sample data.

The sample scenario has an earlier vintage of the landings file,
``sample_data/vellmouth_landings_2020.csv`` (data to 2020). :func:`seed_demo_record` saves, for
each of its stocks, the 5-year forecast a team would have published from it with Haulcast's
default settings (best ARIMA by AICc, automatic transform, 50/80/95% bands), by "Demo analyst",
published and signed off. The Forecast Board then shows, on the full landings file (data to
2025), how those forecasts did.

Start-up speed: the search behind the four forecasts takes several seconds, so the forecasts
are precomputed into ``sample_data/vellmouth_record_2020.json`` (written by
``python -m app.demo_record``). Seeding from it takes a few milliseconds plus the store's
writes. The file names the sha256 of the vintage it was made from; when it is missing or does
not match the CSV, the forecasts are computed in a background thread instead (logged), so a
server start is never held up.

Idempotent: every demo analysis carries ``settings["demo_record"]``, a marker made from the
vintage's sha256. Seeding looks for published analyses with that marker first and only adds
what is missing, under an exclusive lock on ``DATA_DIR/demo-record.lock`` (an OS file lock), so
several server processes starting at once create each demo analysis once. A draft left by a
process killed between save and publish is published instead of duplicated.
"""

from __future__ import annotations

import json
import logging
import os
import threading
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from hashlib import sha256
from pathlib import Path
from typing import Any

import forecasting_core as fc
from app.analysis import LEVELS, bench_settings, compare_kwargs

__all__ = [
    "AUTHOR",
    "MARKER_KEY",
    "PRECOMPUTED_FILE",
    "VINTAGE_FILE",
    "build_demo_forecasts",
    "demo_marker",
    "seed_demo_record",
]

logger = logging.getLogger("haulcast.app")

#: The earlier vintage of the sample landings (years 1978-2020).
VINTAGE_FILE = "vellmouth_landings_2020.csv"
#: Its forecasts, precomputed (see the module docstring).
PRECOMPUTED_FILE = "vellmouth_record_2020.json"
#: Settings key holding the marker of a demo analysis.
MARKER_KEY = "demo_record"
AUTHOR = "Demo analyst"
SIGNOFF = {
    "name": "Demo manager",
    "role": "stock lead (demo)",
    "note": "Demo sign-off on invented data, to show how the forecast record works.",
}
HORIZON = 5

_THREAD_LOCK = threading.Lock()


def demo_marker(raw: bytes) -> str:
    """The marker of the demo analyses made from a vintage with these bytes."""
    return f"vellmouth-2020-{sha256(raw).hexdigest()[:16]}"


def build_demo_forecasts(vintage: str | os.PathLike[str]) -> dict[str, Any]:
    """Compute each stock's default 5-year forecast from the vintage file (several seconds).

    Parameters
    ----------
    vintage : path
        The earlier vintage CSV.

    Returns
    -------
    dict
        ``{"source", "sha256", "made_with", "analyses": [{"series", "model", "season",
        "settings", "forecast"}]}``, JSON-ready; ``forecast`` is ``Forecast.to_dict()``.
    """
    path = Path(vintage)
    raw = path.read_bytes()
    table = fc.read_table(raw, name=path.name)
    bench = bench_settings(None)
    analyses = []
    for name, y in table.series.items():
        info = table.info.get(name)
        if info is not None and not info.usable:
            continue
        # The board's defaults; the hindcast does not change the chosen model or its bands.
        comparison = fc.compare_models(y, **compare_kwargs(bench, "auto"), hindcast=False)
        forecast = fc.make_forecast(comparison.best, horizon=HORIZON, levels=LEVELS)
        analyses.append(
            {
                "series": name,
                "model": comparison.best.label,
                "season": str(forecast.table["time"].iloc[0]),
                "settings": {
                    "transform": "auto",
                    "bench": bench,
                    "model": comparison.best.label,
                    "reference": None,
                    "horizon": HORIZON,
                    "levels": list(LEVELS),
                },
                "forecast": forecast.to_dict(),
            }
        )
    return {
        "source": path.name,
        "sha256": sha256(raw).hexdigest(),
        "made_with": f"Haulcast {fc.__version__}",
        "analyses": analyses,
    }


def load_precomputed(sample_dir: str | os.PathLike[str], raw: bytes) -> dict[str, Any] | None:
    """The precomputed forecasts when present and made from exactly these vintage bytes."""
    path = Path(sample_dir) / PRECOMPUTED_FILE
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(data, Mapping) or data.get("sha256") != sha256(raw).hexdigest():
        return None
    return dict(data)


def seed_demo_record(
    store: Any, sample_dir: str | os.PathLike[str], *, background: bool = True
) -> list[Any]:
    """Publish the demo's past forecasts once (from the 2020 vintage), if not there yet.

    Parameters
    ----------
    store : app.store.DatasetStore
        The app's store (samples already loaded).
    sample_dir : path
        The folder with the sample files; nothing happens without the vintage file in it.
    background : bool
        When the precomputed forecasts are missing or stale, compute them in a daemon thread
        (True, what the server does) or here (False, several seconds).

    Returns
    -------
    list of app.store.Analysis
        The analyses this call published (empty when all were there already, when the work
        went to a background thread, or when seeding failed: that is logged, and the server
        starts without the demo record rather than not at all).
    """
    try:
        return _seed_demo_record(store, sample_dir, background=background)
    except Exception:  # noqa: BLE001 - a demo must never keep the server from starting
        logger.exception("Could not seed the demo forecast record")
        return []


def _seed_demo_record(
    store: Any, sample_dir: str | os.PathLike[str], *, background: bool
) -> list[Any]:
    folder = Path(sample_dir)
    vintage = folder / VINTAGE_FILE
    if not vintage.is_file() or not hasattr(store, "save_analysis"):
        return []
    raw = vintage.read_bytes()
    dataset_id = store.save(raw, VINTAGE_FILE, sample=True)
    marker = demo_marker(raw)
    payload = load_precomputed(folder, raw)
    if payload is not None:
        return _seed(store, dataset_id, marker, payload)
    if _published_series(store, dataset_id, marker) >= _vintage_series(store, dataset_id):
        return []
    if not background:
        return _seed(store, dataset_id, marker, build_demo_forecasts(vintage))
    logger.warning(
        "%s is missing or does not match %s: computing the demo forecast record in the "
        "background (run `python -m app.demo_record` to precompute it)",
        PRECOMPUTED_FILE,
        VINTAGE_FILE,
    )
    thread = threading.Thread(
        target=_seed_in_background,
        args=(store, dataset_id, marker, vintage),
        name="haulcast-demo-record",
        daemon=True,
    )
    thread.start()
    return []


def _seed_in_background(store: Any, dataset_id: str, marker: str, vintage: Path) -> None:
    try:
        _seed(store, dataset_id, marker, build_demo_forecasts(vintage))
    except Exception:  # noqa: BLE001 - a demo must never take the server down
        logger.exception("Could not seed the demo forecast record")


def _vintage_series(store: Any, dataset_id: str) -> set[str]:
    table = store.load_table(dataset_id)
    return {name for name, info in table.info.items() if info.usable}


def _published_series(store: Any, dataset_id: str, marker: str) -> set[str]:
    return {a.series for a in _marked(store, dataset_id, marker, None) if a.status == "published"}


def _marked(store: Any, dataset_id: str, marker: str, series: str | None) -> list[Any]:
    found = store.list_analyses(query="demo", series=series)
    return [
        a
        for a in found
        if a.dataset_id == dataset_id
        and isinstance(a.settings, Mapping)
        and a.settings.get(MARKER_KEY) == marker
    ]


def _seed(store: Any, dataset_id: str, marker: str, payload: Mapping[str, Any]) -> list[Any]:
    items = [a for a in payload.get("analyses", ()) if isinstance(a, Mapping)]
    if not items:
        return []
    wanted = {str(a["series"]) for a in items}
    if wanted <= _published_series(store, dataset_id, marker):
        return []  # the usual start: everything is there, no lock taken
    made = []
    with _exclusive(Path(store.data_dir) / "demo-record.lock"):
        marked = _marked(store, dataset_id, marker, None)
        done = {a.series for a in marked if a.status == "published"}
        drafts = {a.series: a for a in marked if a.status == "draft"}
        for item in items:
            series = str(item["series"])
            if series in done:
                continue
            draft = drafts.get(series)
            if draft is None:
                origin = _origin(item)
                draft = store.save_analysis(
                    dataset_id=dataset_id,
                    series=series,
                    settings={**dict(item["settings"]), MARKER_KEY: marker},
                    model=str(item["model"]),
                    forecast=dict(item["forecast"]),
                    author=AUTHOR,
                    title=f"Demo: {series}, {HORIZON}-year forecast from data to {origin}",
                    season=str(item.get("season") or ""),
                )
            published = store.publish(draft.id, author=AUTHOR)
            made.append(store.add_signoff(published.id, **SIGNOFF))
    return made


def _origin(item: Mapping[str, Any]) -> str:
    """The last year of data behind a precomputed forecast (the year before its first)."""
    first = str(item.get("season") or item["forecast"]["forecast"][0]["time"])
    return str(int(first) - 1) if first.isdigit() else first


@contextmanager
def _exclusive(path: Path) -> Iterator[None]:
    """An exclusive lock held by one thread of one process at a time (OS file lock)."""
    with _THREAD_LOCK, open(path, "a+b") as fh:
        if os.name == "nt":  # pragma: no cover - Windows
            import msvcrt

            fh.seek(0)
            while True:
                try:
                    msvcrt.locking(fh.fileno(), msvcrt.LK_LOCK, 1)
                    break
                except OSError:  # LK_LOCK gives up after ten seconds: keep waiting
                    continue
            try:
                yield
            finally:
                fh.seek(0)
                msvcrt.locking(fh.fileno(), msvcrt.LK_UNLCK, 1)
        else:
            import fcntl

            fcntl.flock(fh.fileno(), fcntl.LOCK_EX)
            try:
                yield
            finally:
                fcntl.flock(fh.fileno(), fcntl.LOCK_UN)


def main() -> None:
    """Write ``sample_data/vellmouth_record_2020.json`` from the vintage (``make``-free)."""
    folder = Path(__file__).resolve().parents[1] / "sample_data"
    payload = build_demo_forecasts(folder / VINTAGE_FILE)
    out = folder / PRECOMPUTED_FILE
    out.write_text(json.dumps(payload, indent=1, allow_nan=False) + "\n", encoding="utf-8")
    print(f"wrote {out} ({len(payload['analyses'])} forecasts)")


if __name__ == "__main__":
    main()

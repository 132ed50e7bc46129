"""Work done once at server start, in the background, so that a first visitor never waits for it.

:func:`warm_start` compiles the core's screening likelihood (:func:`forecasting_core.warm_up`)
and then computes, into the result cache, what a new visitor's first pages ask for: the
default Model Bench comparison of every series of the demo dataset (the default series first),
the picked model's hindcast and residual figures, and its forecast. A first "Run comparison"
with the default settings is then a cache hit. Nothing here is needed for correctness: a
request that arrives while a comparison is still being prepared waits for that computation
(see :mod:`app.cache`) instead of starting a second one.
"""

from __future__ import annotations

import logging
import time

from flask import Flask

import forecasting_core as fc

log = logging.getLogger(__name__)


def prepare_demo(server: Flask, limit: int | None = None) -> list[str]:
    """Fill the result cache with the demo dataset's default comparisons.

    Parameters
    ----------
    server : flask.Flask
        The app's server (``create_app(...).server``).
    limit : int, optional
        Prepare only the first ``limit`` series (the default series first); None: all.

    Returns
    -------
    list of str
        The series prepared, in the order they were computed; a series whose comparison fails
        is logged and skipped.
    """
    from app.analysis import LEVELS, bench_settings, comparison_key
    from app.bench_panels import panels
    from app.cache import get_comparison, get_forecast
    from app.state import resolve_selection
    from app.store import get_store

    done: list[str] = []
    with server.app_context():
        store = get_store()
        first = resolve_selection(None, store)
        if not first.get("dataset_id") or not first.get("series"):
            return done
        names = list(store.load_table(first["dataset_id"]).series)
        names.remove(first["series"])
        for name in [first["series"], *names][:limit]:
            sel = resolve_selection({"dataset_id": first["dataset_id"], "series": name}, store)
            key = comparison_key(sel)
            try:
                comparison = get_comparison(*key)
                if comparison.best.ok:
                    panels(*key, comparison.best.label)
                    horizon = bench_settings(sel.get("bench"))["horizon"]
                    get_forecast(*key, comparison.best.label, horizon, LEVELS, None)
            except Exception:  # noqa: BLE001 - a demo series that fails is left to the pages
                log.exception("Could not prepare the demo comparison of %s", name)
                continue
            done.append(name)
    return done


def warm_start(server: Flask | None = None) -> None:
    """Compile the core's fast path, then :func:`prepare_demo` (with a server); logs the times.

    Meant for a background thread started with the server
    (``threading.Thread(target=warm_start, args=(app.server,), daemon=True)``).
    """
    started = time.perf_counter()
    fc.warm_up()
    compiled = time.perf_counter()
    log.info("Warmed up the forecasting core in %.1f s.", compiled - started)
    if server is None:
        return
    done = prepare_demo(server)
    log.info(
        "Prepared the demo's default comparisons (%d series) in %.1f s.",
        len(done),
        time.perf_counter() - compiled,
    )

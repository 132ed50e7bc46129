"""The browser session's selection (``dcc.Store(id="hc-selection", storage_type="session")``).

The store holds ids and settings only, never data::

    {"dataset_id": str | None,     # content hash of a dataset (app.store)
     "series": str | None,         # series name in that dataset
     "transform": "auto" | "none" | "log" | "boxcox",
     "bench": dict | None,         # Model Bench settings
     "model": str | None,          # chosen candidate label
     "reference": float | None,    # reference level on the original scale
     "analysis": str | None,       # id of the saved analysis being looked at (app.store)
     "uploads": [str, ...]}        # dataset ids uploaded (or opened from a saved analysis)

Pages write it with ``Output("hc-selection", "data", allow_duplicate=True)`` and
``prevent_initial_call=True``, starting from the incoming ``State("hc-selection", "data")``
and changing only their own keys (use :func:`update_selection`). Pages read it through
:func:`resolve_selection`, which fills in the demo dataset for a new visitor.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

SELECTION_ID = "hc-selection"
TRANSFORMS = ("auto", "none", "log", "boxcox")
TRANSFORM_LABELS = {"auto": "Automatic", "none": "None", "log": "Log", "boxcox": "Box-Cox"}

DEFAULT_SELECTION: dict[str, Any] = {
    "dataset_id": None,
    "series": None,
    "transform": "auto",
    "bench": None,
    "model": None,
    "reference": None,
    "analysis": None,
    "uploads": [],
}


def empty_selection() -> dict[str, Any]:
    """A fresh selection dict (a new copy each call)."""
    return {**DEFAULT_SELECTION, "uploads": []}


def update_selection(data: Mapping[str, Any] | None, **changes: Any) -> dict[str, Any]:
    """Copy of ``data`` (the store's current value) with ``changes`` applied.

    Changing the dataset clears the series, model and reference (they belong to the old
    dataset); changing the series clears model and reference; changing the transform or
    the bench settings clears the model. Changing the dataset or the series also leaves the
    saved analysis being looked at (``analysis``); other changes keep it, so saving them
    makes a new version of it.
    """
    out = empty_selection()
    if isinstance(data, Mapping):
        out.update({k: v for k, v in data.items() if k in DEFAULT_SELECTION})
        out["uploads"] = list(out.get("uploads") or [])
    if "dataset_id" in changes and changes["dataset_id"] != out["dataset_id"]:
        out.update(series=None, model=None, reference=None, analysis=None)
    if "series" in changes and changes["series"] != out["series"]:
        out.update(model=None, reference=None, analysis=None)
    if ("transform" in changes and changes["transform"] != out["transform"]) or (
        "bench" in changes and _settings_only(changes["bench"]) != _settings_only(out["bench"])
    ):
        out.update(model=None)
    out.update(changes)
    return out


def _settings_only(bench: Any) -> Any:
    # the bench settings without what they were made for (the frequency and the series are
    # notes, not settings; see app.analysis.MARKER_KEYS)
    if isinstance(bench, Mapping):
        return {k: v for k, v in bench.items() if k not in ("frequency", "for_series")}
    return bench


def resolve_selection(data: Mapping[str, Any] | None, store: Any | None = None) -> dict[str, Any]:
    """The selection with the demo filled in, safe to use.

    Parameters
    ----------
    data : dict or None
        ``hc-selection`` as the browser sent it (None for a new visitor).
    store : DatasetStore, optional
        Defaults to the running app's store (inside a callback).

    Returns
    -------
    dict
        All keys of the selection. ``dataset_id`` is a dataset this session may see (its own
        upload or a sample), else the demo dataset (the wide annual landings file);
        ``series`` is a usable series of it, else its first usable series (None when it has
        none); ``transform`` is one of :data:`TRANSFORMS`. The extra key ``"is_demo"`` is
        True when the demo was filled in; ``"bench_note"`` says which Model Bench settings
        went back to their defaults because they were chosen for a series of another
        frequency, or a d or D set by hand for another series (None when none did).
    """
    if store is None:
        from app.store import get_store

        store = get_store()
    out = update_selection(data)
    uploads = out["uploads"]
    is_demo = False
    if out["dataset_id"] is None:
        # a new visitor (or a page that never chose): the demo, keeping any series/model chosen on it
        out["dataset_id"] = store.default_id()
        is_demo = True
    elif not store.visible(out["dataset_id"], uploads):
        # unknown here, or another session's upload: never open it; fall back to the demo
        out.update(
            dataset_id=store.default_id(), series=None, model=None, reference=None, analysis=None
        )
        is_demo = True
    if out["transform"] not in TRANSFORMS:
        out["transform"] = "auto"
    frequency = None
    if out["dataset_id"] is not None:
        try:
            table = store.load_table(out["dataset_id"])
            usable = list(table.series)
        except Exception:  # noqa: BLE001 - an unreadable table shows its own alert on Intake
            table, usable = None, []
        if out["series"] not in usable:
            out.update(
                series=usable[0] if usable else None, model=None, reference=None, analysis=None
            )
        info = table.info.get(out["series"]) if table is not None and out["series"] else None
        frequency = info.frequency if info is not None else None
    else:
        out["series"] = None
    # Model Bench settings made for another series: those that depend on the frequency go
    # back to their defaults when it differs, a hand-set d or D back to Automatic
    # (app.analysis.bench_for_series), with a note saying so
    from app.analysis import bench_for_series

    out["bench"], out["bench_note"] = bench_for_series(
        out["bench"], out["dataset_id"], out["series"], frequency, store
    )
    out["is_demo"] = is_demo
    return out

"""Saved analyses between the browser session and the store: pure helpers, nothing drawn.

An analysis (see ``app.store.Analysis``) keeps the dataset id, the series, the settings that
produced its forecast and the forecast itself (``forecasting_core.Forecast.to_dict()``). The
board recomputes the forecast from the dataset and the settings when an analysis is opened,
and :func:`forecast_matches` says whether it came out the same as saved.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Mapping, Sequence
from datetime import datetime
from typing import Any

from app.analysis import LEVELS, bench_settings, stamp_bench
from app.state import update_selection

#: The settings keys an analysis keeps (and compares when telling whether it was changed).
SETTING_KEYS = ("transform", "bench", "model", "reference", "horizon", "levels")
_ID = re.compile(r"^[0-9a-f]{32}$")


def settings_from_selection(
    sel: Mapping[str, Any], reference: float | None, model: str | None = None
) -> dict[str, Any]:
    """The JSON settings an analysis keeps, from a resolved selection and the reference level.

    Parameters
    ----------
    sel : Mapping
        A resolved ``hc-selection`` (see :func:`app.state.resolve_selection`).
    reference : float or None
        Reference level on the original scale, as the forecast used it.
    model : str, optional
        Label of the candidate that made the forecast (default: the selection's pick).

    Returns
    -------
    dict
        ``transform``, ``bench`` (every Model Bench setting, defaults filled in), ``model``
        (the candidate label; None for the best by AICc), ``reference``,
        ``horizon`` (steps at the series' frequency) and ``levels`` (band levels in percent).
    """
    bench = bench_settings(sel.get("bench"))
    return {
        "transform": str(sel.get("transform") or "auto"),
        "bench": bench,
        "model": model or sel.get("model") or None,
        "reference": None if reference is None else float(reference),
        "horizon": int(bench["horizon"]),
        "levels": list(LEVELS),
    }


def same_settings(saved: Mapping[str, Any] | None, current: Mapping[str, Any]) -> bool:
    """Whether ``current`` settings are those an analysis was saved with.

    Both sides should name the model by its label (see :func:`settings_from_selection`).
    """
    saved = dict(saved or {})
    for key in SETTING_KEYS:
        a, b = saved.get(key), current.get(key)
        if key == "bench":
            try:
                a = bench_settings(a)
            except Exception:  # noqa: BLE001 - an unreadable saved value is simply different
                return False
            b = bench_settings(b)
        if key == "levels":
            a = [int(x) for x in (a or LEVELS)]
            b = [int(x) for x in (b or LEVELS)]
        if isinstance(a, float) and isinstance(b, float):
            if not (a == b or (math.isnan(a) and math.isnan(b))):
                return False
        elif a != b:
            return False
    return True


def selection_from_analysis(analysis: Any, data: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """The ``hc-selection`` that restores a saved analysis on top of the session's one.

    The analysis' dataset joins the session's ``uploads`` (so it is visible to this browser
    session) and ``analysis`` names the analysis being looked at.

    Parameters
    ----------
    analysis : Analysis or Mapping
        From the store (attributes or keys ``id``, ``dataset_id``, ``series``, ``settings``).
    data : Mapping, optional
        The session's current ``hc-selection``.
    """
    get = _getter(analysis)
    settings = dict(get("settings") or {})
    base = update_selection(data)
    uploads = list(base["uploads"])
    if get("dataset_id") not in uploads:
        uploads.append(get("dataset_id"))
    return update_selection(
        base,
        dataset_id=get("dataset_id"),
        series=get("series"),
        transform=settings.get("transform") or "auto",
        # stamped with the analysis' series and its frequency (see app.analysis.stamp_bench),
        # so a series chosen later resets what does not carry over to it
        bench=stamp_bench(bench_settings(settings.get("bench")), get("dataset_id"), get("series")),
        model=settings.get("model") or get("model") or None,
        reference=settings.get("reference"),
        analysis=get("id"),
        uploads=uploads,
    )


def overlay(data: Mapping[str, Any] | None, opened: Mapping[str, Any] | None) -> dict[str, Any]:
    """The session's selection with an analysis opened by link laid over it.

    ``opened`` is the board's ``board-open`` store: ``{"selection": {...}}`` as made by
    :func:`selection_from_analysis`, or None when nothing was opened on this visit.
    """
    if not isinstance(opened, Mapping) or not isinstance(opened.get("selection"), Mapping):
        return update_selection(data)
    sel = dict(opened["selection"])
    base = update_selection(data)
    uploads = list(base["uploads"])
    for extra in sel.get("uploads") or ():
        if extra not in uploads:
            uploads.append(extra)
    sel["uploads"] = uploads
    return update_selection(
        base, **{k: v for k, v in sel.items() if k != "uploads"}, uploads=uploads
    )


def season_label(forecast_dict: Mapping[str, Any]) -> str:
    """The label of the first forecast period (``"2026"``, ``"2026-07"``), or ``""``."""
    rows = forecast_dict.get("forecast") or []
    return str(rows[0].get("time", "")) if rows else ""


def _close(a: Any, b: Any, rel: float) -> bool:
    if a is None or b is None:
        return a is None and b is None
    fa, fb = float(a), float(b)
    if math.isnan(fa) or math.isnan(fb):
        return math.isnan(fa) and math.isnan(fb)
    return fa == fb or abs(fa - fb) <= rel * max(abs(fa), abs(fb))


def forecast_differences(
    saved: Mapping[str, Any], recomputed: Mapping[str, Any], *, rel: float = 1e-9
) -> list[str]:
    """Where a recomputed forecast differs from the saved one (empty when they agree).

    Parameters
    ----------
    saved, recomputed : Mapping
        ``Forecast.to_dict()`` output (the JSON contract's forecast object).
    rel : float
        Relative tolerance for numbers (1e-9: only the last digits of a float may differ).

    Returns
    -------
    list of str
        One short sentence per difference, naming the period and the value.
    """
    out: list[str] = []
    for key in ("series", "model", "frequency", "horizon", "levels"):
        if saved.get(key) != recomputed.get(key):
            out.append(f"{key} was {saved.get(key)!r}, now {recomputed.get(key)!r}")
    if not _close(saved.get("reference"), recomputed.get("reference"), rel):
        out.append(f"reference was {saved.get('reference')!r}, now {recomputed.get('reference')!r}")
    a_rows = list(saved.get("forecast") or [])
    b_rows = list(recomputed.get("forecast") or [])
    if len(a_rows) != len(b_rows):
        out.append(f"{len(a_rows)} periods saved, {len(b_rows)} now")
    for a, b in zip(a_rows, b_rows, strict=False):
        period = a.get("time")
        if a.get("time") != b.get("time"):
            out.append(f"period {a.get('time')} is now {b.get('time')}")
            continue
        for key in ("mean", "median", "prob_below_reference"):
            if not _close(a.get(key), b.get(key), rel):
                out.append(f"{period} {key}: saved {a.get(key)}, now {b.get(key)}")
        a_int, b_int = a.get("intervals") or {}, b.get("intervals") or {}
        for level in sorted(set(a_int) | set(b_int), key=str):
            pa, pb = a_int.get(level) or [None, None], b_int.get(level) or [None, None]
            if not (_close(pa[0], pb[0], rel) and _close(pa[1], pb[1], rel)):
                out.append(f"{period} {level}% band: saved {pa}, now {pb}")
    return out


def forecast_matches(
    saved: Mapping[str, Any], recomputed: Mapping[str, Any], *, rel: float = 1e-9
) -> bool:
    """Whether a recomputed forecast gives the saved numbers (see :func:`forecast_differences`)."""
    return not forecast_differences(saved, recomputed, rel=rel)


def _getter(obj: Any) -> Any:
    if isinstance(obj, Mapping):
        return obj.get
    return lambda key, default=None: getattr(obj, key, default)


def newest_in_chain(analysis: Any, analyses: Iterable[Any]) -> Any | None:
    """The newest later version of ``analysis`` (following ``parent_id`` links), or None.

    Parameters
    ----------
    analysis : Analysis
    analyses : iterable of Analysis
        Candidates, e.g. every analysis of the same series.
    """
    items = list(analyses)
    children: dict[str, list[Any]] = {}
    for a in items:
        parent = _getter(a)("parent_id")
        if parent:
            children.setdefault(str(parent), []).append(a)
    best: Any | None = None
    todo = [str(_getter(analysis)("id"))]
    seen: set[str] = set()
    while todo:
        current = todo.pop()
        if current in seen:
            continue
        seen.add(current)
        for child in children.get(current, []):
            g = _getter(child)
            if best is None or (g("version"), g("created_at") or "") > (
                _getter(best)("version"),
                _getter(best)("created_at") or "",
            ):
                best = child
            todo.append(str(g("id")))
    return best


def newest_version(analysis: Any, chain: Iterable[Any]) -> Any | None:
    """The highest version in ``analysis``' chain when it is newer than ``analysis``, else None.

    Parameters
    ----------
    analysis : Analysis
    chain : iterable of Analysis
        Every version of the chain (``store.history(id)``); versions number the whole chain.
    """
    g = _getter(analysis)
    newer = [a for a in chain if _getter(a)("version") > g("version")]
    return max(newer, key=lambda a: _getter(a)("version")) if newer else None


def superseded_ids(analyses: Iterable[Any]) -> set[str]:
    """Ids of analyses that a later version revises (someone set ``parent_id`` to them)."""
    return {str(_getter(a)("parent_id")) for a in analyses if _getter(a)("parent_id")}


def fmt_time(iso: str | None) -> str:
    """An ISO 8601 UTC time as ``2026-12-01 21:04 UTC`` (blank for None)."""
    if not iso:
        return ""
    try:
        moment = datetime.fromisoformat(str(iso).replace("Z", "+00:00"))
    except ValueError:
        return str(iso)
    return moment.strftime("%Y-%m-%d %H:%M UTC")


#: How the home page orders its rows.
SORTS = {
    "stock": "Stock, then season",
    "newest": "Newest saved first",
    "season": "Season, then stock",
}


def sort_analyses(analyses: Sequence[Any], sort: str = "stock") -> list[Any]:
    """Analyses in the home page's order.

    ``"stock"``: by series name (case-insensitive), then season newest first, then newest
    saved first; ``"season"``: season newest first, then series; ``"newest"``: newest saved
    first. Ties keep the store's order (newest first).
    """
    items = list(analyses)
    items.sort(key=lambda a: str(_getter(a)("created_at") or ""), reverse=True)
    if sort == "newest":
        return items
    items.sort(key=lambda a: str(_getter(a)("season") or ""), reverse=True)
    if sort == "season":
        items.sort(key=lambda a: str(_getter(a)("series") or "").lower())
        items.sort(key=lambda a: str(_getter(a)("season") or ""), reverse=True)
        return items
    items.sort(key=lambda a: str(_getter(a)("series") or "").lower())
    return items


def matches_query(analysis: Any, query: str | None) -> bool:
    """Whether every word of ``query`` appears in the title, series, season, author or model."""
    words = [w for w in str(query or "").lower().split() if w]
    if not words:
        return True
    g = _getter(analysis)
    text = " ".join(
        str(g(k) or "") for k in ("title", "series", "season", "author", "model", "status")
    ).lower()
    text += (
        " "
        + " ".join(
            f"{_getter(s)('name')} {_getter(s)('role')}" for s in (g("signoffs") or ())
        ).lower()
    )
    return all(w in text for w in words)


def open_href(analysis: Any) -> str:
    """Where a saved analysis opens: the Forecast Board, with the analysis named in the query.

    Drafts open on the board too (saving, publishing and sign-off live there).
    """
    return f"/board?analysis={_getter(analysis)('id')}"


def looks_like_id(text: Any) -> bool:
    """Whether ``text`` has the shape of an analysis id (32 lowercase hex digits)."""
    return isinstance(text, str) and bool(_ID.match(text))


def _root(analysis: Any, by_id: Mapping[str, Any]) -> str:
    """The first version of ``analysis``' chain among ``by_id`` (following ``parent_id``)."""
    current = analysis
    seen: set[str] = set()
    while True:
        g = _getter(current)
        parent = g("parent_id")
        if not parent or parent not in by_id or parent in seen:
            return str(g("id"))
        seen.add(str(parent))
        current = by_id[parent]


def latest_versions(analyses: Sequence[Any]) -> list[Any]:
    """The highest version of each chain of revisions, and its highest published version when
    that is an earlier one (a draft revision does not hide what was published), in the given
    order.

    Chains are followed through ``parent_id`` among ``analyses`` themselves.
    """
    by_id = {str(_getter(a)("id")): a for a in analyses}
    best: dict[str, Any] = {}
    published: dict[str, Any] = {}
    for a in analyses:
        g = _getter(a)
        root = _root(a, by_id)
        if root not in best or g("version") > _getter(best[root])("version"):
            best[root] = a
        if g("status") == "published" and (
            root not in published or g("version") > _getter(published[root])("version")
        ):
            published[root] = a
    keep = {id(a) for a in (*best.values(), *published.values())}
    return [a for a in analyses if id(a) in keep]


def group_analyses(analyses: Sequence[Any], sort: str = "stock") -> list[tuple[str, list[Any]]]:
    """The home page's groups: ``(heading, analyses)`` in order.

    ``"stock"``: one group per series; ``"season"``: one group per season; ``"newest"``: one
    group headed ``""`` with every analysis, newest saved first.
    """
    ordered = sort_analyses(analyses, sort if sort in SORTS else "stock")
    if sort == "newest":
        return [("", ordered)] if ordered else []
    key = "season" if sort == "season" else "series"
    groups: list[tuple[str, list[Any]]] = []
    for a in ordered:
        heading = str(_getter(a)(key) or "")
        if groups and groups[-1][0] == heading:
            groups[-1][1].append(a)
        else:
            groups.append((heading, [a]))
    return groups


def newer_version_numbers(analyses: Sequence[Any]) -> dict[str, int]:
    """``{id: highest version of its chain}`` for every analysis that a later version revises.

    Chains are followed through ``parent_id`` among ``analyses`` themselves.
    """
    by_id = {str(_getter(a)("id")): a for a in analyses}
    top: dict[str, int] = {}
    roots = {key: _root(a, by_id) for key, a in by_id.items()}
    for key, a in by_id.items():
        top[roots[key]] = max(top.get(roots[key], 0), int(_getter(a)("version")))
    return {
        key: top[roots[key]]
        for key, a in by_id.items()
        if int(_getter(a)("version")) < top[roots[key]]
    }

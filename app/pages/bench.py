"""Model Bench (/bench): order search, benchmarks, hindcast skill and residual checks.

The page keeps its settings in ``hc-selection["bench"]`` and the picked candidate in
``hc-selection["model"]``; the comparison itself is memoized on the server in layers
(:mod:`app.cache`), so the Forecast Board reuses it. The layout is in :mod:`app.bench_views`,
the picked model's charts in :mod:`app.bench_panels`.

On arrival, when the result cache already holds the session's whole answer (the server
prepares the demo's at start), :func:`layout` builds it in (:func:`first_answer`) and no
callback runs for it; a clientside check ("bench-go") starts the arrival callbacks when it
does not, or when the session's selection is not the one the layout was built for. Those
callbacks, and "Run", answer in two parts side by side: the search (status line and
candidates table) and the hindcast (benchmarks, skill table, verdict), so the table shows as
soon as the order search is done. Picking a row (the best one to start with) draws the
charts, once the table is drawn ("bench-shown"), so that loading plotly.js never delays it.
"""

from __future__ import annotations

import logging
import time
from collections.abc import Mapping
from typing import Any

import dash
from dash import Input, Output, State, callback, clientside_callback, ctx, html, no_update
from dash.exceptions import PreventUpdate

import forecasting_core as fc
from app import bench_views, tables
from app.analysis import (
    DEFAULT_BENCH,
    FREQUENCY_KEY,
    bench_settings,
    changed_selection,
    chosen_candidate,
    comparison_for,
    comparison_key,
    differences_words,
    search_for,
)
from app.bench_panels import panels
from app.cache import NotCached, cached_only
from app.state import SELECTION_ID, resolve_selection
from app.ui import guarded

log = logging.getLogger(__name__)

#: The page's address.
PATH = "/bench"

dash.register_page(
    __name__, path=PATH, name="Model Bench", order=2, title="Model Bench \u00b7 Haulcast"
)


def layout(
    selection: Mapping[str, Any] | None = None,
    shell_page: Mapping[str, Any] | None = None,
    **_query: Any,
) -> Any:
    """The Model Bench page, with its first answer in it when the result cache has it.

    Parameters
    ----------
    selection : dict, optional
        The session's ``hc-selection`` as the page router saw it (``routing_callback_inputs``
        in :func:`app.create_app`); None for a new visitor.
    shell_page : dict, optional
        ``{"path": "/bench"}`` when the shell was built with this page in it for a new
        visitor (:func:`prefilled`) and the router has not answered yet; then a new visitor
        keeps that page (``no_update``: nothing is sent or drawn again).
    """
    if (
        selection is None
        and not _query
        and isinstance(shell_page, Mapping)
        and shell_page.get("path") == PATH
    ):
        return no_update
    return bench_views.page(first_answer(selection))


def prefilled() -> Any | None:
    """The page a new visitor gets, to build into the shell; None unless its answer is cached.

    See :func:`app._shell_page`: the browser then shows the candidates table with the shell,
    without waiting for the page router's callback.
    """
    answer = first_answer(None)
    if not answer:
        log.info("Model Bench not built into the shell: the demo's first answer is not cached yet")
        return None
    return bench_views.page(answer)


# ---------------------------------------------------------------------------------------------
# Callbacks (thin: settings -> core -> figures)
# ---------------------------------------------------------------------------------------------

_CONTROLS = [
    "bench-search",
    "bench-max-p",
    "bench-max-q",
    "bench-seasonal",
    "bench-transform",
    "bench-constant",
    "bench-origins",
    "bench-horizon",
    "bench-d",
    "bench-D",
]


def _selection_request(data: Mapping[str, Any] | None) -> dict[str, Any]:
    """The comparison request the session's selection stands for (bad settings: defaults)."""
    sel = resolve_selection(data)
    try:
        sel["bench"] = bench_settings(sel.get("bench"))
    except fc.InputError:
        sel["bench"] = dict(DEFAULT_BENCH)
    return sel


def _request(sel: Mapping[str, Any]) -> dict[str, Any]:
    return {k: sel.get(k) for k in ("dataset_id", "series", "transform", "bench", "model")} | {
        "t": time.time()
    }


#: The outputs of each arrival callback, as (component id, property); the same values go
#: into the layout when the first answer is built there (see first_answer).
RESTORE_OUT: tuple[tuple[str, str], ...] = (
    *[(c, "value") for c in _CONTROLS],
    ("bench-seasonal", "options"),
    ("bench-D", "disabled"),
    ("bench-settings-note", "children"),
    ("bench-alert", "children"),
)
SEARCH_OUT: tuple[tuple[str, str], ...] = (
    ("bench-status", "children"),
    ("bench-candidates", "data"),
    ("bench-candidates", "selected_rows"),
    ("bench-alert", "children"),
)
HINDCAST_OUT: tuple[tuple[str, str], ...] = (
    ("bench-benchmarks", "children"),
    ("bench-skill", "data"),
    ("bench-verdict", "children"),
    ("bench-timing", "children"),
    ("bench-alert", "children"),
)
PICK_OUT: tuple[tuple[str, str], ...] = (
    *[(f"{graph_id}-box", "children") for graph_id, _name, _height in bench_views.GRAPHS],
    ("bench-ljung", "children"),
    ("bench-picked", "children"),
    (SELECTION_ID, "data"),
    ("bench-alert", "children"),
    ("bench-candidates", "style_data_conditional"),
)


#: Outputs more than one callback writes.
_SHARED = {(SELECTION_ID, "data"), ("bench-alert", "children")}


def _outputs(spec: tuple[tuple[str, str], ...]) -> list[Output]:
    return [Output(i, p, allow_duplicate=(i, p) in _SHARED) for i, p in spec]


def first_answer(selection: Mapping[str, Any] | None) -> dict[tuple[str, str], Any]:
    """The page's first answer for this session, when every part of it is already cached.

    Returns
    -------
    dict
        ``{(component id, property): value}`` of what the arrival callbacks (restore, render,
        render_hindcast) would show, the picked row's tint, and ``("bench-prefill", "data")``
        holding the selection it was built for; empty when any part is not cached yet
        (nothing is computed here) or on any error, and the callbacks answer as before. The
        charts are left to ``pick``, which also writes any correction of the selection.
    """
    if selection is not None and not isinstance(selection, Mapping):
        return {}
    try:
        with cached_only():
            return _first_answer(selection)
    except NotCached as missing:
        log.debug("No first answer in the Model Bench layout: %s not cached", missing)
        return {}
    except Exception:  # noqa: BLE001 - the callbacks answer (and show any error) instead
        log.debug("No first answer in the Model Bench layout", exc_info=True)
        return {}


def _first_answer(selection: Mapping[str, Any] | None) -> dict[tuple[str, str], Any]:
    sel = _selection_request(selection)
    if not sel["dataset_id"] or not sel["series"]:
        return {}
    request = _request(sel)
    filled = dict(zip(RESTORE_OUT, _restored(sel), strict=True))
    searched = _searched(request)
    filled.update(zip(SEARCH_OUT, searched, strict=True))
    filled.update(zip(HINDCAST_OUT, _replayed(request), strict=True))
    rows, selected = searched[1], searched[2]
    if not selected:
        return {}
    # the charts and the residual verdict are left to pick (called as the page is inserted)
    filled[("bench-candidates", "style_data_conditional")] = tables.candidate_styles(rows[selected[0]]["id"])
    filled[("bench-prefill", "data")] = {"selection": selection}
    return filled


# On arrival the layout may already hold the answer (first_answer): then nothing is sent to
# the server. Otherwise, or when the session's selection is not the one the layout was built
# for, "bench-go" starts the arrival callbacks.
clientside_callback(
    """
    function(_mount, selection, shown) {
        const same = shown && JSON.stringify(selection == null ? null : selection) ===
            JSON.stringify(shown.selection == null ? null : shown.selection);
        return same ? window.dash_clientside.no_update : Date.now();
    }
    """,
    Output("bench-go", "data"),
    Input("bench-mount", "data"),
    State(SELECTION_ID, "data"),
    State("bench-prefill", "data"),
)


# "bench-shown" turns true once the candidates table has drawn (it then reports its rows).
clientside_callback(
    """
    function(_rows, shown) {
        return shown ? window.dash_clientside.no_update : true;
    }
    """,
    Output("bench-shown", "data"),
    Input("bench-candidates", "derived_virtual_data"),
    State("bench-shown", "data"),
    prevent_initial_call=True,
)


@callback(
    *_outputs(RESTORE_OUT),
    Input("bench-go", "data"),
    State(SELECTION_ID, "data"),
    prevent_initial_call=True,
)
@guarded("restoring the Model Bench settings", outputs=len(RESTORE_OUT), alert_at=len(RESTORE_OUT) - 1)
def restore(_go: Any, data: Mapping[str, Any] | None) -> list[Any]:
    return _restored(_selection_request(data))


def _frequency(sel: Mapping[str, Any]) -> str | None:
    if not sel.get("dataset_id") or not sel.get("series"):
        return None
    from app.store import get_store

    return get_store().load_table(sel["dataset_id"]).info[sel["series"]].frequency


def _restored(sel: Mapping[str, Any]) -> list[Any]:
    b = sel["bench"]
    annual = _frequency(sel) in (None, "annual")
    options = [
        {
            "label": "Search seasonal terms" + (" (not for annual data)" if annual else ""),
            "value": "on",
            "disabled": annual,
        }
    ]
    return [
        b["search"],
        b["max_p"],
        b["max_q"],
        ["on"] if b["seasonal"] and not annual else [],
        sel["transform"],
        b["constant"],
        b["origins"],
        b["horizon"],
        "auto" if b["d"] is None else b["d"],
        "auto" if b["D"] is None or annual else b["D"],
        options,
        annual,  # no seasonal differences in annual data
        sel.get("bench_note"),
        None,
    ]


@callback(
    Output("bench-request", "data", allow_duplicate=True),
    Output(SELECTION_ID, "data", allow_duplicate=True),
    Output("bench-alert", "children", allow_duplicate=True),
    Input("bench-run", "n_clicks"),
    *[State(c, "value") for c in _CONTROLS],
    State(SELECTION_ID, "data"),
    prevent_initial_call=True,
)
@guarded("reading the settings", outputs=3, alert_at=2)
def run(
    _n: int,
    search: str,
    max_p: Any,
    max_q: Any,
    seasonal: list[str] | None,
    transform: str,
    constant: str,
    origins: Any,
    horizon: Any,
    d: Any,
    big_d: Any,
    data: Mapping[str, Any] | None,
) -> list[Any]:
    if not _n:
        raise PreventUpdate
    sel = _selection_request(data)
    frequency = _frequency(sel)
    annual = frequency in (None, "annual")
    bench = bench_settings(
        {
            "search": search,
            "max_p": max_p,
            "max_q": max_q,
            # annual data: the box is greyed out and unticked, which is no choice; keep the
            # session's (so a monthly series chosen later still gets its seasonal terms)
            "seasonal": sel["bench"]["seasonal"] if annual else "on" in (seasonal or []),
            "constant": constant,
            "origins": origins,
            "horizon": horizon,
            "d": d,
            "D": None if annual else big_d,
        }
    )
    # the frequency these settings were chosen for (see app.analysis.bench_for_frequency)
    bench[FREQUENCY_KEY] = frequency
    new = changed_selection(data, bench=bench, transform=transform)
    return [_request(resolve_selection(new)), new, None]


def _arrival_request(request: Mapping[str, Any] | None, data: Mapping[str, Any] | None) -> Mapping[str, Any]:
    # on arrival: the session's selection (no extra round trip); after "Run": the new request
    if ctx.triggered_id != "bench-request" or not request:
        return _request(_selection_request(data))
    return request


def _warnings(warnings: tuple[str, ...] | list[str]) -> list[html.Div]:
    return [html.Div(f"Warning: {w}", className="hc-alert hc-alert--warning bench-warning") for w in warnings]


@callback(
    *_outputs(SEARCH_OUT),
    Input("bench-go", "data"),
    Input("bench-request", "data"),
    State(SELECTION_ID, "data"),
    prevent_initial_call=True,
)
@guarded("comparing models", outputs=4, alert_at=3)
def render(
    _go: Any, request: Mapping[str, Any] | None, data: Mapping[str, Any] | None
) -> list[Any]:
    return _searched(_arrival_request(request, data))


def differences_text(search: fc.Comparison, bench: Mapping[str, Any] | None) -> str:
    """The differences a search used and where they came from, e.g. "d = 1 (set here)".

    Parameters
    ----------
    search : Comparison
        The search (its ``settings`` hold the ``d`` and ``D`` used).
    bench : Mapping, optional
        The Model Bench settings asked for (``d``, ``D``: None when automatic).
    """
    return differences_words(search.settings, bench, where="here")


def _searched(request: Mapping[str, Any]) -> list[Any]:
    search = search_for(request)
    picked = chosen_candidate(search, request.get("model"))
    n_ok = len(search.accepted)
    status = [
        html.Strong(f"{search.series_name}: "),
        f"{search.observations} {search.frequency} values, transform "
        f"{search.transform.name}"
        + (f" (lambda {search.transform.lam:.2f})" if search.transform.lam is not None else "")
        + f", {differences_text(search, request.get('bench'))}"
        + f"; {n_ok} candidate{'s' if n_ok != 1 else ''} accepted, {len(search.rejected)} rejected. "
        f"Best by AICc: {search.best.label}.",
        *_warnings(search.warnings),
    ]
    rows = tables.candidate_rows(search)
    picked_at = [i for i, r in enumerate(rows) if r["id"] == picked.label and picked.ok]
    return [
        status,
        rows,
        picked_at[:1],
        None,
    ]


@callback(
    *_outputs(HINDCAST_OUT),
    Input("bench-go", "data"),
    Input("bench-request", "data"),
    State(SELECTION_ID, "data"),
    prevent_initial_call=True,
)
@guarded("replaying past years", outputs=5, alert_at=4)
def render_hindcast(
    _go: Any, request: Mapping[str, Any] | None, data: Mapping[str, Any] | None
) -> list[Any]:
    return _replayed(_arrival_request(request, data))


def _replayed(request: Mapping[str, Any]) -> list[Any]:
    # the whole answer: the search (computed or waited for beside render) and the hindcast
    started = time.perf_counter()
    comparison = comparison_for(request)
    elapsed = time.perf_counter() - started
    # the warnings the hindcast added to the search's (the status line shows the search's)
    extra = comparison.warnings[len(search_for(request).warnings) :]
    verdict = comparison.hindcast.verdict if comparison.hindcast else "No hindcast was run."
    return [
        tables.benchmark_panel(comparison),
        tables.skill_rows(comparison),
        [html.P(verdict), *_warnings(extra)],
        f"Answered in {elapsed:.2f} s." if elapsed >= 0.01 else "Answered in under 0.01 s (saved results).",
        None,
    ]


@callback(
    *_outputs(PICK_OUT),
    Input("bench-candidates", "selected_rows"),
    # a new hindcast (e.g. "Run" with another horizon, the same row picked) redraws the charts
    Input("bench-skill", "data"),
    Input("bench-shown", "data"),
    State("bench-candidates", "data"),
    State(SELECTION_ID, "data"),
    prevent_initial_call=True,
)
@guarded("showing the picked model", outputs=10, alert_at=8)
def pick(
    selected: list[int] | None,
    _skill: Any,
    shown: Any,
    rows: list[dict[str, Any]] | None,
    data: Mapping[str, Any] | None,
) -> list[Any]:
    # Not before the table is drawn (plotly.js, loaded with the first chart, would delay it).
    # Dash also calls this as the page is inserted (it writes the shell's hc-selection, so
    # prevent_initial_call does not hold): with the layout's first answer in, the charts are
    # drawn once the table is ("bench-shown")
    if not shown or not selected or not rows or selected[0] >= len(rows):
        raise PreventUpdate
    # "Run" writes its settings into the selection, so the selection names this comparison
    return _picked(_selection_request(data), data, rows[selected[0]]["id"])


def _picked(request: Mapping[str, Any], data: Mapping[str, Any] | None, label: str) -> list[Any]:
    comparison = comparison_for(request)
    candidate = next((c for c in comparison.candidates if c.label == label), None)
    if candidate is None or not candidate.ok:
        why = candidate.reason if candidate is not None else "not part of this comparison"
        return [no_update] * 8 + [
            html.Div(
                f"{label} cannot be used: {why}. Pick an accepted model.",
                className="hc-alert hc-alert--warning",
                role="alert",
            ),
            no_update,
        ]
    drawn = panels(*comparison_key(request), label)
    ljung = [html.P([html.Strong(f"{label}: "), drawn["verdict"]])]
    if not drawn["replayed"]:
        ljung.append(
            html.P(
                f"{label} was not replayed on the hindcast (only the best three are); "
                f"the hindcast plot shows {comparison.best.label}.",
                className="hc-small",
            )
        )
    stored = None if label == comparison.best.label else label
    sel = resolve_selection(data)
    new_sel = no_update if sel.get("model") == stored else changed_selection(data, model=stored)
    picked = f"Forecast Board will use {label}" + (" (best by AICc)." if stored is None else ".")
    return [
        *[
            bench_views.graph(graph_id, figure)
            for (graph_id, _name, _height), figure in zip(bench_views.GRAPHS, drawn["figures"], strict=True)
        ],
        ljung,
        picked,
        new_sel,
        None,
        tables.candidate_styles(label),
    ]

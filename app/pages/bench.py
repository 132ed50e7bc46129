"""Model Bench (/bench): order search, benchmarks, hindcast skill and residual checks.

The page keeps its settings in ``hc-selection["bench"]`` and the picked candidate in
``hc-selection["model"]``; the comparison itself is memoized on the server in layers
(:mod:`app.cache`), so the Forecast Board reuses it. The layout is in :mod:`app.bench_views`,
the picked model's charts in :mod:`app.bench_panels`.

On arrival or after "Run", two callbacks answer side by side: the search (status line and
candidates table) and the hindcast (benchmarks, skill table, verdict), so the table shows as
soon as the order search is done. Picking a row (the best one to start with) draws the charts.
"""

from __future__ import annotations

import time
from collections.abc import Mapping
from typing import Any

import dash
from dash import Input, Output, State, callback, ctx, html, no_update
from dash.exceptions import PreventUpdate

import forecasting_core as fc
from app import bench_views, tables
from app.analysis import (
    DEFAULT_BENCH,
    bench_settings,
    changed_selection,
    chosen_candidate,
    comparison_for,
    comparison_key,
    search_for,
)
from app.bench_panels import panels
from app.state import SELECTION_ID, resolve_selection
from app.ui import guarded

dash.register_page(
    __name__, path="/bench", name="Model Bench", order=2, title="Model Bench \u00b7 Haulcast"
)


def layout(**_query: Any) -> Any:
    """The Model Bench page."""
    return bench_views.page()


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


@callback(
    *[Output(c, "value") for c in _CONTROLS],
    Output("bench-seasonal", "options"),
    Output("bench-alert", "children"),
    Input("bench-mount", "data"),
    State(SELECTION_ID, "data"),
)
@guarded("restoring the Model Bench settings", outputs=10, alert_at=9)
def restore(_mount: Any, data: Mapping[str, Any] | None) -> list[Any]:
    sel = _selection_request(data)
    b = sel["bench"]
    frequency = None
    if sel["dataset_id"] and sel["series"]:
        from app.store import get_store

        frequency = get_store().load_table(sel["dataset_id"]).info[sel["series"]].frequency
    annual = frequency in (None, "annual")
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
        options,
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
    data: Mapping[str, Any] | None,
) -> list[Any]:
    if not _n:
        raise PreventUpdate
    bench = bench_settings(
        {
            "search": search,
            "max_p": max_p,
            "max_q": max_q,
            "seasonal": "on" in (seasonal or []),
            "constant": constant,
            "origins": origins,
            "horizon": horizon,
        }
    )
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
    Output("bench-status", "children"),
    Output("bench-candidates", "data"),
    Output("bench-candidates", "selected_rows"),
    Output("bench-alert", "children", allow_duplicate=True),
    Input("bench-mount", "data"),
    Input("bench-request", "data"),
    State(SELECTION_ID, "data"),
    prevent_initial_call="initial_duplicate",
)
@guarded("comparing models", outputs=4, alert_at=3)
def render(
    _mount: Any, request: Mapping[str, Any] | None, data: Mapping[str, Any] | None
) -> list[Any]:
    request = _arrival_request(request, data)
    search = search_for(request)
    picked = chosen_candidate(search, request.get("model"))
    n_ok = len(search.accepted)
    status = [
        html.Strong(f"{search.series_name}: "),
        f"{search.observations} {search.frequency} values, transform "
        f"{search.transform.name}"
        + (f" (lambda {search.transform.lam:.2f})" if search.transform.lam is not None else "")
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
    Output("bench-benchmarks", "children"),
    Output("bench-skill", "data"),
    Output("bench-verdict", "children"),
    Output("bench-timing", "children"),
    Output("bench-alert", "children", allow_duplicate=True),
    Input("bench-mount", "data"),
    Input("bench-request", "data"),
    State(SELECTION_ID, "data"),
    prevent_initial_call="initial_duplicate",
)
@guarded("replaying past years", outputs=5, alert_at=4)
def render_hindcast(
    _mount: Any, request: Mapping[str, Any] | None, data: Mapping[str, Any] | None
) -> list[Any]:
    request = _arrival_request(request, data)
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
    *[Output(f"{graph_id}-box", "children") for graph_id, _name, _height in bench_views.GRAPHS],
    Output("bench-ljung", "children"),
    Output("bench-picked", "children"),
    Output(SELECTION_ID, "data", allow_duplicate=True),
    Output("bench-alert", "children", allow_duplicate=True),
    Output("bench-candidates", "style_data_conditional"),
    Input("bench-candidates", "selected_rows"),
    # a new hindcast (e.g. "Run" with another horizon, the same row picked) redraws the charts
    Input("bench-skill", "data"),
    State("bench-candidates", "data"),
    State(SELECTION_ID, "data"),
    prevent_initial_call=True,
)
@guarded("showing the picked model", outputs=10, alert_at=8)
def pick(
    selected: list[int] | None,
    _skill: Any,
    rows: list[dict[str, Any]] | None,
    data: Mapping[str, Any] | None,
) -> list[Any]:
    if not selected or not rows or selected[0] >= len(rows):
        raise PreventUpdate
    # "Run" writes its settings into the selection, so the selection names this comparison
    request = _selection_request(data)
    comparison = comparison_for(request)
    label = rows[selected[0]]["id"]
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

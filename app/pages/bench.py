"""Model Bench (/bench): order search, benchmarks, hindcast skill and residual checks.

The page keeps its settings in ``hc-selection["bench"]`` and the picked candidate in
``hc-selection["model"]``; the comparison itself is memoized on the server
(:func:`app.cache.get_comparison`), so the Forecast Board reuses it.
"""

from __future__ import annotations

import functools
import time
from collections.abc import Mapping
from typing import Any

import dash
from dash import Input, Output, State, callback, ctx, dcc, html, no_update
from dash.exceptions import PreventUpdate

import forecasting_core as fc
from app import figures, tables
from app.analysis import (
    CONSTANT_LABELS,
    DEFAULT_BENCH,
    SEARCH_LABELS,
    bench_settings,
    changed_selection,
    chosen_candidate,
    comparison_for,
    comparison_key,
)
from app.cache import (
    cache,
    get_comparison,
    get_residuals,
    parse_settings,
    settings_json,
    split_settings,
)
from app.state import (
    SELECTION_ID,
    TRANSFORM_LABELS,
    TRANSFORMS,
    resolve_selection,
)
from app.ui import guarded, page_header, section

dash.register_page(
    __name__, path="/bench", name="Model Bench", order=2, title="Model Bench \u00b7 Haulcast"
)


# ---------------------------------------------------------------------------------------------
# Layout
# ---------------------------------------------------------------------------------------------


def _field(label: str, control: Any, hint: str | None = None) -> html.Div:
    parts = [
        html.Label(label, className="hc-field__label", htmlFor=getattr(control, "id", None)),
        control,
    ]
    if hint:
        parts.append(html.Span(hint, className="hc-field__hint"))
    return html.Div(parts, className="hc-field")


def _settings_panel() -> html.Section:
    number = {"type": "number", "step": 1, "debounce": True, "className": "hc-input"}
    return section(
        "Settings",
        _field(
            "Search",
            dcc.RadioItems(
                id="bench-search",
                options=[{"label": v, "value": k} for k, v in SEARCH_LABELS.items()],
                value="auto",
                className="hc-choices",
            ),
        ),
        html.Div(
            [
                _field(
                    "Largest AR order p",
                    dcc.Input(id="bench-max-p", min=0, max=5, value=5, **number),
                ),
                _field(
                    "Largest MA order q",
                    dcc.Input(id="bench-max-q", min=0, max=5, value=5, **number),
                ),
            ],
            className="hc-row bench-pair",
        ),
        _field(
            "Seasonal part",
            dcc.Checklist(
                id="bench-seasonal",
                options=[{"label": "Search seasonal terms", "value": "on"}],
                value=["on"],
                className="hc-choices",
            ),
            hint="Monthly and quarterly data only.",
        ),
        _field(
            "Transform",
            dcc.Dropdown(
                id="bench-transform",
                options=[{"label": TRANSFORM_LABELS[t], "value": t} for t in TRANSFORMS],
                value="auto",
                clearable=False,
                className="hc-dropdown",
            ),
        ),
        _field(
            "Constant or drift",
            dcc.RadioItems(
                id="bench-constant",
                options=[{"label": v, "value": k} for k, v in CONSTANT_LABELS.items()],
                value="auto",
                className="hc-choices bench-inline",
            ),
        ),
        html.Div(
            [
                _field(
                    "Hindcast origins",
                    dcc.Input(
                        id="bench-origins", min=1, max=40, value=None, placeholder="auto", **number
                    ),
                    hint="Blank: the last min(10, n/4) years.",
                ),
                _field(
                    "Horizon",
                    dcc.Input(id="bench-horizon", min=1, max=30, value=5, **number),
                    hint="Steps ahead.",
                ),
            ],
            className="hc-row bench-pair",
        ),
        html.Button("Run comparison", id="bench-run", n_clicks=0, className="hc-button bench-run"),
        html.P(id="bench-timing", className="hc-figure-note"),
        className="bench-settings",
    )


def _progress() -> html.Div:
    return html.Div(
        [
            html.Div(html.Div(className="bench-progress__bar"), className="bench-progress__track"),
            html.P(
                "Fitting every candidate order, then replaying past years (hindcast)\u2026",
                className="bench-progress__text",
            ),
        ],
        className="bench-progress",
        role="progressbar",
        **{"aria-label": "Comparison running"},
    )


@functools.cache
def _blank(height: int) -> dict[str, Any]:
    """A placeholder figure as plain JSON (built once: layouts are built on every visit)."""
    return figures.blank_figure(height).to_plotly_json()


def _graph(graph_id: str, name: str, height: int = 260) -> dcc.Graph:
    return dcc.Graph(
        id=graph_id,
        config=figures.graph_config(name),
        className="hc-graph",
        style={"height": f"{height}px"},
        figure=_blank(height),
    )


def layout(**_query: Any) -> html.Div:
    """The Model Bench page."""
    results = html.Div(
        [
            html.Div(id="bench-status", className="bench-status"),
            html.Div(
                [
                    section(
                        "Candidates",
                        tables.candidates_table(),
                        html.P(
                            [
                                "Pick a row to carry that model to the Forecast Board; the best "
                                "by AICc is picked to start with. Click a heading to sort. ",
                                dcc.Link("Open the Forecast Board \u2192", href="/board"),
                            ],
                            className="hc-figure-note",
                        ),
                        lead="ARIMA orders ranked by AICc; rejected fits are listed with the reason.",
                    ),
                    section(
                        "Benchmarks",
                        html.Div(id="bench-benchmarks"),
                        lead="Simple methods every model must beat on past years.",
                    ),
                ],
                className="hc-grid bench-grid--cands",
            ),
            section(
                "Hindcast",
                html.Div(id="bench-verdict", className="hc-verdict"),
                tables.skill_table(),
                html.Div(
                    [
                        _graph("bench-hindcast-graph", "hindcast", 380),
                        _graph("bench-skill-graph", "hindcast_mase", 260),
                    ],
                    className="hc-grid bench-grid--hc",
                ),
                html.P(
                    "Each line starts at an origin year and shows what the model forecast from "
                    "the data up to then; the dark line is what happened. Click 'last value' in "
                    "the legend to compare.",
                    className="hc-figure-note",
                ),
                lead="Past years replayed with a rolling origin: fit on the data up to each year, "
                "forecast ahead, compare with what happened.",
            ),
            section(
                "Residual checks",
                html.Div(id="bench-ljung", className="hc-verdict"),
                html.Div(
                    [
                        _graph("bench-resid-time", "residuals"),
                        _graph("bench-resid-acf", "residual_acf"),
                        _graph("bench-resid-qq", "residual_qq"),
                    ],
                    className="hc-grid bench-grid--3",
                ),
                lead="One-step residuals of the picked model on the transformed scale.",
            ),
        ],
        id="bench-results",
    )
    return html.Div(
        [
            dcc.Store(id="bench-mount", data=True),
            dcc.Store(id="bench-request"),
            page_header(
                "Model Bench",
                "Search ARIMA orders, measure them against simple benchmarks "
                "on past years, check the residuals and pick the model to forecast with.",
                step=2,
            ),
            html.Div(id="bench-alert"),
            html.Div(
                [
                    _settings_panel(),
                    html.Div(
                        [
                            dcc.Loading(
                                results,
                                custom_spinner=_progress(),
                                delay_show=120,
                                overlay_style={"visibility": "visible", "opacity": 0.35},
                            ),
                            html.Div(
                                [
                                    html.Span(id="bench-picked", className="hc-muted"),
                                    dcc.Link(
                                        "Go to Forecast Board \u2192",
                                        href="/board",
                                        id="bench-to-board",
                                        className="hc-button",
                                    ),
                                ],
                                className="hc-next",
                            ),
                        ]
                    ),
                ],
                className="hc-grid hc-grid--side",
            ),
        ],
        className="hc-page bench-page",
    )


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


@callback(
    Output("bench-status", "children"),
    Output("bench-candidates", "data"),
    Output("bench-candidates", "selected_rows"),
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
@guarded("comparing models", outputs=8, alert_at=7)
def render(
    _mount: Any, request: Mapping[str, Any] | None, data: Mapping[str, Any] | None
) -> list[Any]:
    # on arrival: the session's selection (no extra round trip); after "Run": the new request
    if ctx.triggered_id != "bench-request" or not request:
        request = _request(_selection_request(data))
    started = time.perf_counter()
    comparison = comparison_for(request)
    elapsed = time.perf_counter() - started
    picked = chosen_candidate(comparison, request.get("model"))
    n_ok = len(comparison.accepted)
    status = [
        html.Strong(f"{comparison.series_name}: "),
        f"{comparison.observations} {comparison.frequency} values, transform "
        f"{comparison.transform.name}"
        + (
            f" (lambda {comparison.transform.lam:.2f})"
            if comparison.transform.lam is not None
            else ""
        )
        + f"; {n_ok} candidate{'s' if n_ok != 1 else ''} accepted, {len(comparison.rejected)} rejected. "
        f"Best by AICc: {comparison.best.label}.",
        *[
            html.Div(f"Warning: {w}", className="hc-alert hc-alert--warning bench-warning")
            for w in comparison.warnings
        ],
    ]
    verdict = comparison.hindcast.verdict if comparison.hindcast else "No hindcast was run."
    rows = tables.candidate_rows(comparison)
    picked_at = [i for i, r in enumerate(rows) if r["id"] == picked.label and picked.ok]
    return [
        status,
        rows,
        picked_at[:1],
        tables.benchmark_panel(comparison),
        tables.skill_rows(comparison),
        html.P(verdict),
        f"Answered in {elapsed:.2f} s." if elapsed >= 0.01 else "Answered in under 0.01 s (saved results).",
        None,
    ]


@callback(
    Output("bench-hindcast-graph", "figure"),
    Output("bench-skill-graph", "figure"),
    Output("bench-resid-time", "figure"),
    Output("bench-resid-acf", "figure"),
    Output("bench-resid-qq", "figure"),
    Output("bench-ljung", "children"),
    Output("bench-picked", "children"),
    Output(SELECTION_ID, "data", allow_duplicate=True),
    Output("bench-alert", "children", allow_duplicate=True),
    Output("bench-candidates", "style_data_conditional"),
    Input("bench-candidates", "selected_rows"),
    State("bench-candidates", "data"),
    State(SELECTION_ID, "data"),
    prevent_initial_call=True,
)
@guarded("showing the picked model", outputs=10, alert_at=8)
def pick(
    selected: list[int] | None, rows: list[dict[str, Any]] | None, data: Mapping[str, Any] | None
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
    panels = _panels(*comparison_key(request), label)
    ljung = [html.P([html.Strong(f"{label}: "), panels["verdict"]])]
    if not panels["replayed"]:
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
        *panels["figures"],
        ljung,
        picked,
        new_sel,
        None,
        tables.candidate_styles(label),
    ]


def _panels(dataset_id: str, series: str, settings: str, label: str) -> dict:
    """Hindcast and residual figures (as JSON) for one accepted candidate.

    Two memoized halves: the hindcast figures depend on every setting, the residual ones only
    on the search layer's (a new horizon redraws only the hindcast).
    """
    style = f"{fc.__version__}+{figures.STYLE}"
    search, _hind = split_settings(parse_settings(settings))
    hindcast = _hindcast_panels(dataset_id, series, settings, label, style)
    residuals = _residual_panels(dataset_id, series, settings_json(search), label, style)
    return {
        "figures": [*hindcast["figures"], *residuals["figures"]],
        "verdict": residuals["verdict"],
        "replayed": hindcast["replayed"],
    }


@cache.memoize()
def _hindcast_panels(dataset_id: str, series: str, settings: str, label: str, style: str) -> dict:
    comparison = get_comparison(dataset_id, series, settings)
    candidate = comparison.candidate(label)
    unit = _unit({"dataset_id": dataset_id, "series": series})
    replayed = comparison.hindcast is not None and comparison.hindcast.score(label) is not None
    if comparison.hindcast is not None:
        hc_fig = figures.hindcast_figure(
            comparison.hindcast,
            candidate.series,
            model=label if replayed else comparison.best.label,
            unit=unit,
            series_name=comparison.series_name,
        )
        skill_fig = figures.skill_figure(comparison.hindcast)
    else:
        hc_fig = skill_fig = figures.blank_figure(260)
    return {"figures": [hc_fig.to_plotly_json(), skill_fig.to_plotly_json()], "replayed": replayed}


@cache.memoize()
def _residual_panels(dataset_id: str, series: str, search: str, label: str, style: str) -> dict:
    report = get_residuals(dataset_id, series, search, label)
    figs = [
        figures.residuals_figure(report),
        figures.residual_acf_figure(report),
        figures.qq_figure(report),
    ]
    return {"figures": [f.to_plotly_json() for f in figs], "verdict": report.verdict}


def _unit(request: Mapping[str, Any]) -> str | None:
    from app.store import get_store

    info = get_store().load_table(request["dataset_id"]).info.get(request["series"])
    return info.unit if info is not None else None

"""Forecast Board (/board): forecast bands, the reference level, the summary and the exports.

The board follows the model picked on the Model Bench (``hc-selection["model"]``; the best by
AICc when none was picked) and reads the same memoized comparison. ``?present=1`` (or the
presentation button) switches to large type with the technical panels hidden.
``?analysis=<id>`` opens a saved analysis: its dataset, series and settings are restored and
the forecast is recomputed from them (the saved-analysis panel, :mod:`app.board_saved`, says
whether the numbers match the saved ones).
"""

from __future__ import annotations

import functools
import re
from collections.abc import Mapping
from typing import Any

import dash
import plotly.graph_objects as go
from dash import (
    Input,
    Output,
    State,
    callback,
    clientside_callback,
    dcc,
    html,
    no_update,
)
from dash.exceptions import PreventUpdate

import forecasting_core as fc
from app import board_saved, export, figures, saved, saved_views, tables, wording
from app.analysis import LEVELS, board_state, changed_selection, comparison_key, parse_reference
from app.cache import cache, get_comparison
from app.record_views import record_section
from app.state import SELECTION_ID
from app.ui import alert, caution_box, fmt_number, guarded, html_table, page_header, section

dash.register_page(
    __name__, path="/board", name="Forecast Board", order=3, title="Forecast Board \u00b7 Haulcast"
)

#: Years of history drawn before the forecast, by frequency.
HISTORY_YEARS = {"annual": 40, "quarterly": 15, "monthly": 10}


# ---------------------------------------------------------------------------------------------
# Pieces
# ---------------------------------------------------------------------------------------------


def _fan(state: Mapping[str, Any], present: bool) -> go.Figure:
    forecast = state["forecast"]
    fig = figures.fan_chart(
        forecast,
        state["candidate"].series,
        unit=state["unit"],
        history_years=HISTORY_YEARS.get(forecast.frequency, 40),
        height=560 if present else 440,
    )
    if present:
        fig.update_layout(font={"size": 19})
    return fig


def _prob(state: Mapping[str, Any], present: bool) -> go.Figure:
    forecast = state["forecast"]
    fig = figures.prob_below_figure(forecast, height=300 if present else 240)
    if forecast.reference is not None:
        # the bars' labels follow the forecast table's rule ("less than 1%", never "0%")
        labels = [wording.fmt_chance(float(p)) for p in forecast.table["prob_below_reference"]]
        fig.update_traces(text=labels, selector={"type": "bar"})
    if present:
        fig.update_layout(font={"size": 18})
    return fig


def _figures(state: Mapping[str, Any], present: bool) -> list[dict[str, Any]]:
    """Fan chart and chance-below chart as JSON, memoized on what they show."""
    forecast = state["forecast"]
    return _figures_memo(
        *comparison_key(state["selection"]),
        state["candidate"].label,
        forecast.horizon,
        forecast.reference,
        present,
        f"{fc.__version__}+{figures.STYLE}",
    )


@cache.memoize()
def _figures_memo(
    dataset_id: str,
    series: str,
    settings: str,
    label: str,
    horizon: int,
    reference: float | None,
    present: bool,
    core_version: str,
) -> list[dict[str, Any]]:
    from app.store import get_store

    candidate = get_comparison(dataset_id, series, settings).candidate(label)
    forecast = fc.make_forecast(candidate, horizon=horizon, levels=LEVELS, reference=reference)
    info = get_store().load_table(dataset_id).info.get(series)
    state = {"forecast": forecast, "candidate": candidate, "unit": info.unit if info else None}
    return [_fan(state, present).to_plotly_json(), _prob(state, present).to_plotly_json()]


def _details(state: Mapping[str, Any]) -> list[Any]:
    c: fc.Candidate = state["candidate"]
    comparison: fc.Comparison = state["comparison"]
    forecast: fc.Forecast = state["forecast"]
    spec = c.transform
    rows = [
        {"k": "Model", "v": c.label},
        {
            "k": "Transform",
            "v": spec.name + (f" (lambda {spec.lam:.3f})" if spec.lam is not None else ""),
        },
        {"k": "AICc", "v": fmt_number(c.aicc, 6)},
        {"k": "Innovation variance (transformed scale)", "v": fmt_number(c.sigma2, 4)},
        {
            "k": "Coefficients",
            "v": ", ".join(f"{k} {v:.4g}" for k, v in c.params.items() if k != "sigma2") or "none",
        },
        {"k": "Bands from", "v": forecast.band_source},
        {"k": "Observations", "v": str(comparison.observations)},
    ]
    parts: list[Any] = [html_table(rows, [("k", "Item"), ("v", "Value")])]
    if comparison.hindcast is not None:
        parts.append(
            html.P(
                [
                    html.Strong("Hindcast: "),
                    f"{c.label}. ",
                    wording.hindcast_sentence(comparison, c.label),
                ]
            )
        )
    diag = wording.residual_report(comparison, c.label)
    if diag is not None:
        parts.append(html.P([html.Strong("Residuals: "), diag.verdict]))
    for w in (*forecast.warnings, *comparison.warnings):
        parts.append(html.Div(w, className="hc-alert hc-alert--warning", role="note"))
    return parts


def _safe_name(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", text).strip("_") or "forecast"


# ---------------------------------------------------------------------------------------------
# Layout
# ---------------------------------------------------------------------------------------------


@functools.cache
def _blank(height: int) -> dict[str, Any]:
    """A placeholder figure as plain JSON (built once: layouts are built on every visit)."""
    return figures.blank_figure(height).to_plotly_json()


def _progress() -> html.Div:
    return html.Div(
        [
            html.Div(html.Div(className="bench-progress__bar"), className="bench-progress__track"),
            html.P(
                "Preparing the forecast. The first time for a series or a setting this runs the "
                "model comparison (search and hindcast), which takes a moment\u2026",
                className="bench-progress__text",
            ),
        ],
        className="bench-progress",
        role="progressbar",
        **{"aria-label": "Forecast being prepared"},
    )


def _graph(graph_id: str, name: str, height: int) -> dcc.Graph:
    return dcc.Graph(
        id=graph_id,
        config=figures.graph_config(name),
        className="hc-graph",
        figure=_blank(height),
    )


def _opened(analysis: str | None) -> tuple[dict[str, Any] | None, Any]:
    """The ``board-open`` store for ``?analysis=<id>`` and an alert when it cannot be opened."""
    if analysis is None:
        return None, None
    from app.store import get_store

    try:
        found = get_store().get_analysis(str(analysis).strip().lower())
    except fc.InputError as err:
        return None, alert(
            f"The analysis in this link cannot be opened: {err} The board shows this "
            "browser's own selection instead.",
            "warning",
            title="Saved analysis",
        )
    return board_saved.opened_store(found), None


def _record(sel: Mapping[str, Any]) -> Any:
    """The forecast record panel (past published forecasts of this series), when there are any."""
    from app.store import get_store

    if not sel.get("dataset_id") or not sel.get("series"):
        return None
    return record_section(get_store(), sel["dataset_id"], sel["series"])


def layout(present: str | None = None, analysis: str | None = None, **_query: Any) -> html.Div:
    """The Forecast Board page (``?present=1``: presentation mode; ``?analysis=<id>``: open a
    saved analysis)."""
    on = str(present or "").strip().lower() in ("1", "true", "yes", "on")
    opened, note = _opened(analysis)
    return html.Div(
        [
            dcc.Store(id="board-mount", data=True),
            dcc.Store(id="board-present", data=on),
            html.Div(
                [
                    page_header(
                        "Forecast Board",
                        "The forecast with its uncertainty, the chance of "
                        "falling below a reference level, and the exports.",
                        step=3,
                    ),
                    html.Button(
                        "Leave presentation" if on else "Presentation mode",
                        id="board-present-toggle",
                        n_clicks=0,
                        className="hc-button hc-button--quiet board-present-toggle",
                    ),
                ],
                className="board-head",
            ),
            html.Div(id="board-alert"),
            note,
            dcc.Loading(
                [
                    section(
                        "In plain words",
                        html.Div(id="board-summary", className="board-summary"),
                        html.P(id="board-model", className="board-model"),
                        className="board-summary-box",
                    ),
                    html.Div(
                        [
                            section(
                                "Forecast",
                                _graph("board-fan", "fan_chart", 440),
                                caution_box(compact=True),
                                html.P(
                                    "Shaded bands: 50%, 80% and 95% of outcomes expected inside. "
                                    "Camera button on the chart: save it as PNG.",
                                    className="hc-figure-note hc-technical",
                                ),
                            ),
                            section(
                                "Reference level",
                                html.Div(
                                    [
                                        html.Label(
                                            "Reference level",
                                            htmlFor="board-reference",
                                            className="hc-field__label",
                                        ),
                                        dcc.Input(
                                            id="board-reference",
                                            type="number",
                                            debounce=0.6,
                                            placeholder="e.g. a limit reference point",
                                            className="hc-input",
                                        ),
                                        html.Span(
                                            "The chance that each period ahead falls below it.",
                                            className="hc-field__hint",
                                        ),
                                    ],
                                    className="hc-field",
                                ),
                                _graph("board-prob", "chance_below_reference", 240),
                            ),
                        ],
                        className="hc-grid board-grid",
                    ),
                    section(
                        "Forecast table", html.Div(id="board-table", className="hc-table-wrap")
                    ),
                    section(
                        "Model details",
                        html.Div(id="board-details"),
                        className="hc-technical",
                        lead="What produced these bands.",
                    ),
                ],
                custom_spinner=_progress(),
                delay_show=150,
                overlay_style={"visibility": "visible", "opacity": 0.35},
            ),
            html.Div(id="board-record"),
            saved_views.saved_section(opened),
            section(
                "Export",
                html.Div(
                    [
                        html.Button(
                            "Download forecast CSV",
                            id="board-download-csv",
                            n_clicks=0,
                            className="hc-button",
                        ),
                        html.Button(
                            "Download HTML report",
                            id="board-download-html",
                            n_clicks=0,
                            className="hc-button hc-button--quiet",
                        ),
                    ],
                    className="hc-row",
                ),
                html.P(
                    "The report opens offline and records the settings, the data hash and package "
                    "versions. For a PNG of a chart, use the camera button above it.",
                    className="hc-figure-note",
                ),
                dcc.Download(id="board-csv"),
                dcc.Download(id="board-html"),
                className="hc-technical",
            ),
        ],
        id="board-wrapper",
        className="hc-page board-page" + (" hc-present" if on else ""),
    )


# ---------------------------------------------------------------------------------------------
# Callbacks
# ---------------------------------------------------------------------------------------------


# In the browser (no round trip): the reference level of the analysis opened by link, else
# the session's.
clientside_callback(
    """function (_mount, data, opened) {
        var sel = (opened && opened.selection) ? opened.selection : data;
        var r = sel ? sel.reference : null;
        return (typeof r === "number" && isFinite(r)) ? r : null;
    }""",
    Output("board-reference", "value"),
    Input("board-mount", "data"),
    State(SELECTION_ID, "data"),
    State(saved_views.OPEN_ID, "data"),
)


@callback(
    Output("board-present", "data"),
    Output("board-wrapper", "className"),
    Output("board-present-toggle", "children"),
    Input("board-present-toggle", "n_clicks"),
    State("board-present", "data"),
    prevent_initial_call=True,
)
def toggle_present(_n: int, on: bool | None) -> list[Any]:
    on = not bool(on)
    return [
        on,
        "hc-page board-page" + (" hc-present" if on else ""),
        "Leave presentation" if on else "Presentation mode",
    ]


@callback(
    Output("board-summary", "children"),
    Output("board-model", "children"),
    Output("board-fan", "figure"),
    Output("board-prob", "figure"),
    Output("board-table", "children"),
    Output("board-details", "children"),
    Output("board-alert", "children"),
    Input("board-reference", "value"),
    Input("board-present", "data"),
    State(SELECTION_ID, "data"),
    State(saved_views.OPEN_ID, "data"),
)
@guarded("drawing the forecast", outputs=7, alert_at=6)
def render(
    reference: Any,
    present: bool | None,
    data: Mapping[str, Any] | None,
    opened: Mapping[str, Any] | None = None,
) -> list[Any]:
    state = board_state(saved.overlay(data, opened), reference)
    forecast = state["forecast"]
    sentences = wording.forecast_summary(forecast, state["comparison"], unit=state["unit"])
    how = "picked on the Model Bench" if state["picked"] else "best by AICc on the Model Bench"
    if state["selection"].get("analysis"):
        how = "from the saved analysis"
    model = [
        html.Span("Model: ", className="hc-muted"),
        html.Strong(state["candidate"].label, id="board-model-label"),
        f" ({how})",
    ]
    return [
        [html.P(s) for s in sentences],
        model,
        *_figures(state, bool(present)),
        tables.forecast_table(forecast, state["unit"]),
        _details(state),
        _reference_notes(forecast),
    ]


def _reference_notes(forecast: fc.Forecast) -> Any:
    """The core's notes on an implausible reference level, shown beside the forecast."""
    notes = [w for w in forecast.warnings if "reference level" in w]
    return alert(" ".join(notes), "warning", title="Reference level") if notes else None


@callback(
    Output(SELECTION_ID, "data", allow_duplicate=True),
    Input("board-reference", "value"),
    State(SELECTION_ID, "data"),
    State(saved_views.OPEN_ID, "data"),
    prevent_initial_call=True,
)
def save_reference(
    reference: Any, data: Mapping[str, Any] | None, opened: Mapping[str, Any] | None = None
) -> Any:
    try:
        ref = parse_reference(reference)
    except fc.InputError:
        return no_update
    # an analysis opened by link on this visit: its selection, so this write agrees with the
    # one board_saved.open_analysis makes whichever lands first
    base = saved.overlay(data, opened)
    if isinstance(data, Mapping) and all(
        data.get(k) == v for k, v in {**base, "reference": ref}.items()
    ):
        raise PreventUpdate
    return changed_selection(base, reference=ref)


@callback(
    Output("board-csv", "data"),
    Output("board-alert", "children", allow_duplicate=True),
    Input("board-download-csv", "n_clicks"),
    State("board-reference", "value"),
    State(SELECTION_ID, "data"),
    State(saved_views.OPEN_ID, "data"),
    prevent_initial_call=True,
)
@guarded("writing the forecast CSV", outputs=2, alert_at=1)
def download_csv(
    n: int, reference: Any, data: Mapping[str, Any] | None, opened: Mapping[str, Any] | None
) -> list[Any]:
    if not n:
        raise PreventUpdate
    state = board_state(saved.overlay(data, opened), reference)
    text = export.forecast_csv(
        state["forecast"],
        state["comparison"],
        unit=state["unit"],
        dataset_hash=state["selection"]["dataset_id"],
        dataset_name=state["dataset_name"],
        analysis=_export_analysis(state),
    )
    name = f"{_safe_name(state['forecast'].series_name)}_forecast.csv"
    return [dcc.send_string(text, name, type="text/csv"), None]


@callback(
    Output("board-html", "data"),
    Output("board-alert", "children", allow_duplicate=True),
    Input("board-download-html", "n_clicks"),
    State("board-reference", "value"),
    State(SELECTION_ID, "data"),
    State(saved_views.OPEN_ID, "data"),
    prevent_initial_call=True,
)
@guarded("writing the HTML report", outputs=2, alert_at=1)
def download_html(
    n: int, reference: Any, data: Mapping[str, Any] | None, opened: Mapping[str, Any] | None
) -> list[Any]:
    if not n:
        raise PreventUpdate
    state = board_state(saved.overlay(data, opened), reference)
    forecast, comparison = state["forecast"], state["comparison"]
    figs: list[tuple[str, go.Figure]] = [("Forecast", _fan(state, False))]
    if forecast.reference is not None:
        figs.append(("Chance of falling below the reference level", _prob(state, False)))
    if comparison.hindcast is not None:
        label = state["candidate"].label
        shown = label if comparison.hindcast.score(label) else comparison.best.label
        figs.append(
            (
                f"Hindcast: {shown} on past years",
                figures.hindcast_figure(
                    comparison.hindcast,
                    state["candidate"].series,
                    model=shown,
                    unit=state["unit"],
                    series_name=comparison.series_name,
                ),
            )
        )
    page = export.report_html(
        forecast,
        comparison,
        figures=figs,
        unit=state["unit"],
        dataset_hash=state["selection"]["dataset_id"],
        dataset_name=state["dataset_name"],
        analysis=_export_analysis(state),
    )
    name = f"{_safe_name(forecast.series_name)}_report.html"
    return [dcc.send_string(page, name, type="text/html"), None]


def _export_analysis(state: Mapping[str, Any]) -> dict[str, Any] | None:
    """The saved analysis the exports describe: the one being looked at, unless changed since."""
    from app.store import get_store

    analysis, changed, _settings = board_saved.looking_at(state, get_store())
    return None if analysis is None or changed else analysis.to_dict()


# The record depends on the dataset and the series only (not on the model or the reference level).
@callback(
    Output("board-record", "children"),
    Input("board-mount", "data"),
    Input(saved_views.OPEN_ID, "data"),
    State(SELECTION_ID, "data"),
)
@guarded("showing the forecast record", outputs=1)
def show_record(
    _mount: Any, opened: Mapping[str, Any] | None, data: Mapping[str, Any] | None
) -> Any:
    from app.state import resolve_selection

    return _record(resolve_selection(saved.overlay(data, opened)))

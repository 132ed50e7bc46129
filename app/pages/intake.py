"""Intake (/intake): upload a file, see what was read and what is wrong with it, choose a
series and a transform, and see how many differences make it stationary.

Component ids start with ``intake-``. The page writes ``dataset_id``, ``series``,
``transform`` and ``uploads`` of ``hc-selection`` and reads the rest.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import dash
import pandas as pd
from dash import (
    ClientsideFunction,
    Input,
    Output,
    State,
    callback,
    clientside_callback,
    ctx,
    dcc,
    html,
    no_update,
)
from flask import request

import forecasting_core as fc
from app.cache import cache, get_stationarity, resolve_transform
from app.figures import graph_config, value_axis_title
from app.intake_figures import (
    empty_figure,
    series_figure,
    stationarity_figure,
    transform_axis_title,
)
from app.intake_views import (
    dataset_options,
    decode_upload,
    preview_title,
    problems_view,
    series_options,
    series_table_view,
    series_unit,
    share_note,
    stationarity_stats,
    summary_view,
    tests_view,
    transform_note,
    transform_options,
    upload_area,
    upload_message,
)
from app.state import SELECTION_ID, resolve_selection, update_selection
from app.store import get_store
from app.ui import (
    PALETTE,
    alert,
    guarded,
    loading,
    page_header,
    section,
)

dash.register_page(__name__, path="/intake", name="Intake", order=1, title="Intake \u00b7 Haulcast")


def _max_bytes() -> int:
    from flask import current_app

    return int(current_app.extensions["haulcast"]["config"]["MAX_UPLOAD_BYTES"])


def layout(dataset: str | None = None, **_query: Any) -> html.Div:
    """The Intake page (rebuilt on every visit; the data comes from callbacks).

    Parameters
    ----------
    dataset : str, optional
        ``/intake?dataset=<id>``: a share link; the dataset joins this session's list.
    """
    try:
        max_bytes = _max_bytes()
    except (RuntimeError, KeyError):
        max_bytes = fc.MAX_FILE_BYTES
    mb = f"{max_bytes / 1048576:.0f} MB"
    return html.Div(
        [
            page_header(
                "Intake",
                "Bring in a spreadsheet of annual, quarterly or monthly values, check what was read, "
                "and find how many differences make a series stationary.",
                step=1,
            ),
            dcc.Store(id="intake-upload-payload"),
            dcc.Store(id="intake-upload-rejected"),
            dcc.Store(id="intake-max-bytes", data=max_bytes),
            dcc.Store(id="intake-shared", data=dataset if isinstance(dataset, str) else None),
            html.Div(
                [
                    section(
                        "Data",
                        upload_area(mb),
                        loading(html.Div(id="intake-upload-status")),
                        html.Div(
                            [
                                html.Label(
                                    "Dataset", htmlFor="intake-dataset", className="hc-field__label"
                                ),
                                dcc.Dropdown(
                                    id="intake-dataset",
                                    clearable=False,
                                    searchable=False,
                                    className="hc-dropdown",
                                ),
                                html.Span(
                                    "Demo data is shared by everyone; your uploads are visible only in this browser session.",
                                    className="hc-field__hint",
                                ),
                            ],
                            className="hc-field",
                            style={"marginTop": "1rem"},
                        ),
                        html.Div(id="intake-share", className="hc-share"),
                        id="intake-data-section",
                    ),
                    section(
                        "What was read",
                        loading(
                            html.Div(
                                [
                                    html.Div(id="intake-read-alert"),
                                    html.Div(id="intake-read-summary"),
                                    html.Div(id="intake-series-table"),
                                ]
                            )
                        ),
                        html.Div(
                            [
                                html.Label(
                                    "Series to work on",
                                    htmlFor="intake-series",
                                    className="hc-field__label",
                                ),
                                dcc.Dropdown(
                                    id="intake-series", clearable=False, className="hc-dropdown"
                                ),
                            ],
                            className="hc-field",
                            style={"marginTop": "1rem", "maxWidth": "30rem"},
                        ),
                        id="intake-read-section",
                    ),
                ],
                className="hc-grid hc-grid--2",
            ),
            section(
                "Problems found",
                loading(html.Div(id="intake-problems")),
                lead="Each problem names the file row (the header is row 1), the year or period and "
                "the column. Errors stop a series from being used; warnings do not.",
                id="intake-problems-section",
            ),
            section(
                "The series",
                html.Div(id="intake-series-alert"),
                loading(
                    dcc.Graph(
                        id="intake-series-graph",
                        className="hc-graph",
                        config=graph_config("haulcast-series"),
                        figure=empty_figure("Loading\u2026", height=320),
                    )
                ),
                html.Div(
                    [
                        html.Div(
                            [
                                html.Div("Transform", className="hc-field__label"),
                                dcc.RadioItems(
                                    id="intake-transform",
                                    options=transform_options(),
                                    className="hc-choices",
                                ),
                                html.P(
                                    id="intake-transform-note",
                                    className="hc-small",
                                    style={"marginTop": "0.6rem"},
                                ),
                            ]
                        ),
                        loading(
                            dcc.Graph(
                                id="intake-transform-graph",
                                className="hc-graph",
                                config=graph_config("haulcast-transform"),
                                figure=empty_figure("Loading\u2026", height=300),
                            )
                        ),
                    ],
                    className="hc-grid hc-grid--side",
                ),
                lead="Missing years are shown as gaps (shaded), never as zeros. The transform is applied before testing and modelling.",
                id="intake-plot-section",
            ),
            section(
                "Stationarity",
                loading(
                    html.Div(
                        [
                            html.Div(id="intake-stationarity-alert"),
                            html.Div(id="intake-verdict", className="hc-verdict"),
                            html.Div(id="intake-stationarity-stats"),
                            dcc.Graph(
                                id="intake-stationarity-graph",
                                className="hc-graph",
                                config=graph_config("haulcast-stationarity"),
                                figure=empty_figure("Loading\u2026", height=300),
                            ),
                            html.P(
                                "Bars beyond the dashed lines (approximate 95% limits, \u00b11.96/\u221an) are darker: "
                                "autocorrelation that dies out quickly suggests a stationary series.",
                                className="hc-figure-note",
                            ),
                            html.H3("Unit-root and stationarity tests"),
                            html.Div(id="intake-tests-table"),
                        ]
                    )
                ),
                lead="KPSS (null: stationary) decides how many differences, at 5%, with at most two; ADF (null: unit root) checks it.",
                id="intake-stationarity-section",
            ),
            html.Div(
                [
                    html.Span(
                        "Your dataset, series and transform go with you.", className="hc-muted"
                    ),
                    dcc.Link(
                        ["Go to Model Bench", html.Span("\u2192", **{"aria-hidden": "true"})],
                        href="/bench",
                        id="intake-go-bench",
                        className="hc-button",
                    ),
                ],
                className="hc-next",
            ),
        ],
        className="hc-page hc-page--intake",
    )


# ---------------------------------------------------------------------------------------------
# Upload and selection
# ---------------------------------------------------------------------------------------------

clientside_callback(
    ClientsideFunction(namespace="haulcast", function_name="checkUpload"),
    Output("intake-upload-payload", "data"),
    Output("intake-upload-rejected", "data"),
    Output("intake-upload", "contents"),
    Input("intake-upload", "contents"),
    State("intake-upload", "filename"),
    State("intake-max-bytes", "data"),
    prevent_initial_call=True,
)


@callback(
    Output(SELECTION_ID, "data", allow_duplicate=True),
    Output("intake-dataset", "options"),
    Output("intake-dataset", "value"),
    Output("intake-series", "options"),
    Output("intake-series", "value"),
    Output("intake-transform", "value"),
    Output("intake-upload-status", "children"),
    Output("intake-share", "children"),
    Input("intake-dataset", "value"),
    Input("intake-series", "value"),
    Input("intake-transform", "value"),
    Input("intake-upload-payload", "data"),
    Input("intake-upload-rejected", "data"),
    State(SELECTION_ID, "data"),
    State("intake-shared", "data"),
    prevent_initial_call="initial_duplicate",
)
@guarded("reading the upload", outputs=8, alert_at=6)
def sync_selection(
    dataset_value: str | None,
    series_value: str | None,
    transform_value: str | None,
    payload: Mapping[str, Any] | None,
    rejected: Mapping[str, Any] | None,
    data: Mapping[str, Any] | None,
    shared: str | None = None,
) -> list[Any]:
    """Keep the pickers and ``hc-selection`` in step; save uploads; open share links."""
    store = get_store()
    trigger = ctx.triggered_id
    # On the page's first render Dash reports every input as triggered: only fill the pickers.
    initial = all(t.get("value") is None for t in ctx.triggered)
    if initial:
        trigger = None
    sel = update_selection(data)
    status: Any = no_update
    write = trigger is not None
    if initial and shared:
        if store.exists(shared):
            if not store.visible(shared, sel["uploads"]):
                sel = update_selection(sel, uploads=[*sel["uploads"], shared])
            sel = update_selection(sel, dataset_id=shared)
            write = True
            status = alert(
                f"Opened the shared dataset {store.meta(shared).filename}; "
                "it is now in this session's list.",
                "info",
                title="Shared with you",
            )
        else:
            status = alert(
                "The shared dataset was not found on this server: ask for the file itself "
                "and upload it.",
                "warning",
                title="Link not found",
            )
    if trigger == "intake-upload-payload" and payload:
        raw = decode_upload(payload.get("contents", ""))
        dataset_id = store.save(raw, str(payload.get("filename") or "upload.csv"))
        uploads = sel["uploads"] + (
            [dataset_id]
            if dataset_id not in sel["uploads"] and dataset_id not in store.samples()
            else []
        )
        sel = update_selection(sel, dataset_id=dataset_id, uploads=uploads)
        status = upload_message(store, dataset_id)
    elif trigger == "intake-upload-rejected":
        if not rejected:
            raise dash.exceptions.PreventUpdate
        status = alert(
            rejected.get("message", "The file was refused."), "error", title="File too large"
        )
        write = False
    elif trigger == "intake-dataset" and dataset_value:
        sel = update_selection(sel, dataset_id=dataset_value)
        status = None
    elif trigger == "intake-series" and series_value:
        sel = update_selection(sel, series=series_value)
    elif trigger == "intake-transform" and transform_value:
        sel = update_selection(sel, transform=transform_value)
    resolved = resolve_selection(sel, store)
    sel = update_selection(
        sel,
        dataset_id=resolved["dataset_id"],
        series=resolved["series"],
        transform=resolved["transform"],
    )
    table = store.load_table(resolved["dataset_id"]) if resolved["dataset_id"] else None
    write = write and sel != update_selection(data)
    return [
        sel if write else no_update,
        dataset_options(store, sel["uploads"]),
        resolved["dataset_id"],
        series_options(table) if table is not None else [],
        resolved["series"],
        resolved["transform"],
        status,
        share_note(store, resolved["dataset_id"], request.host_url),
    ]


# ---------------------------------------------------------------------------------------------
# What was read
# ---------------------------------------------------------------------------------------------


@callback(
    Output("intake-read-alert", "children"),
    Output("intake-read-summary", "children"),
    Output("intake-problems", "children"),
    Output("intake-series-table", "children"),
    Input(SELECTION_ID, "data"),
)
@guarded("reading the dataset", outputs=4, alert_at=0, fallback=[None, None, None, None])
def show_table(data: Mapping[str, Any] | None) -> list[Any]:
    store = get_store()
    sel = resolve_selection(data, store)
    if sel["dataset_id"] is None:
        return [alert("No dataset yet: upload a file above.", "info"), None, None, None]
    table = store.load_table(sel["dataset_id"])
    note = None
    if store.meta(sel["dataset_id"]).sample:
        note = alert(
            "You are looking at the demo data (an invented fishery). Upload your own file to work on it.",
            "info",
            title="Demo",
        )
    return [note, summary_view(table), problems_view(table), series_table_view(table)]


# ---------------------------------------------------------------------------------------------
# Series and transform
# ---------------------------------------------------------------------------------------------


@callback(
    Output("intake-series-alert", "children"),
    Output("intake-series-graph", "figure"),
    Output("intake-transform-graph", "figure"),
    Output("intake-transform-note", "children"),
    Input(SELECTION_ID, "data"),
)
@guarded(
    "drawing the series",
    outputs=4,
    alert_at=0,
    fallback=[None, empty_figure("No series to draw"), empty_figure("No preview"), None],
)
def show_series(data: Mapping[str, Any] | None) -> list[Any]:
    store = get_store()
    sel = resolve_selection(data, store)
    if sel["series"] is None:
        msg = "This dataset has no usable series." if sel["dataset_id"] else "No dataset yet."
        return [
            alert(msg, "warning"),
            empty_figure(msg, height=320),
            empty_figure("No preview", height=300),
            None,
        ]
    fig, preview, spec = _series_figures(
        sel["dataset_id"], sel["series"], sel["transform"], fc.__version__
    )
    return [None, fig, preview, transform_note(sel["transform"], spec)]


@cache.memoize()
def _series_figures(
    dataset_id: str, series: str, transform: str, core_version: str
) -> tuple[dict[str, Any], dict[str, Any], fc.TransformSpec]:
    """The series and transform-preview figures (as plotly JSON), memoized like the results."""
    table = get_store().load_table(dataset_id)
    y = table.series[series]
    fig = series_figure(
        y, y_title=value_axis_title(series, series_unit(table, series)), title=f"{series} as read"
    )
    spec = resolve_transform(y, transform)
    z = fc.transform_series(y, spec)
    if not isinstance(z, pd.Series):
        z = pd.Series(z, index=y.index, name=y.name)
    preview = series_figure(
        z,
        y_title=transform_axis_title(series, spec),
        title=preview_title(spec),
        color=PALETTE["teal"],
        height=300,
    )
    return fig.to_plotly_json(), preview.to_plotly_json(), spec


@cache.memoize()
def _stationarity_figure(
    dataset_id: str, series: str, transform: str, core_version: str
) -> dict[str, Any]:
    """The stationarity grid (as plotly JSON), memoized like the report it draws."""
    return stationarity_figure(get_stationarity(dataset_id, series, transform)).to_plotly_json()


# ---------------------------------------------------------------------------------------------
# Stationarity
# ---------------------------------------------------------------------------------------------


@callback(
    Output("intake-stationarity-alert", "children"),
    Output("intake-verdict", "children"),
    Output("intake-stationarity-stats", "children"),
    Output("intake-stationarity-graph", "figure"),
    Output("intake-tests-table", "children"),
    Input(SELECTION_ID, "data"),
)
@guarded(
    "testing stationarity",
    outputs=5,
    alert_at=0,
    fallback=[None, None, None, empty_figure("No stationarity panel"), None],
)
def show_stationarity(data: Mapping[str, Any] | None) -> list[Any]:
    store = get_store()
    sel = resolve_selection(data, store)
    if sel["series"] is None:
        return [None, "Choose a usable series to test it.", None, empty_figure("No series"), None]
    report = get_stationarity(sel["dataset_id"], sel["series"], sel["transform"])
    verdict = html.P(report.verdict or f"d = {report.d}.", id="intake-verdict-text")
    return [
        None,
        verdict,
        stationarity_stats(report),
        _stationarity_figure(sel["dataset_id"], sel["series"], sel["transform"], fc.__version__),
        tests_view(report),
    ]

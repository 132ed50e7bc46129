"""Forecast Board (/board): forecast bands, the reference level, the summary and the exports.

The board follows the model picked on the Model Bench (``hc-selection["model"]``; the best by
AICc when none was picked) and reads the same memoized comparison. ``?present=1`` (or the
presentation button) switches to large type with the technical panels hidden.
``?analysis=<id>`` opens a saved analysis: its dataset, series and settings are restored and
the forecast is recomputed from them (the saved-analysis panel, :mod:`app.board_saved`, says
whether the numbers match the saved ones).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import dash
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

# board_delete and board_exports register the panel's and the downloads' callbacks
from app import board_delete, board_exports, board_saved, saved, saved_views, tables, wording
from app.analysis import board_state, changed_selection, parse_reference
from app.board_views import board_figures, details, graph, progress, reference_notes
from app.record_views import record_section
from app.state import SELECTION_ID
from app.ui import alert, caution_box, guarded, page_header, section

__all__ = ["board_delete", "board_exports", "layout"]

dash.register_page(
    __name__, path="/board", name="Forecast Board", order=3, title="Forecast Board \u00b7 Haulcast"
)

# ---------------------------------------------------------------------------------------------
# Layout
# ---------------------------------------------------------------------------------------------


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
    # scored against the newest values of the series on the server (the session's uploads too)
    return record_section(
        get_store(), sel["dataset_id"], sel["series"], extra=sel.get("uploads") or ()
    )


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
                                graph("board-fan", "fan_chart", 440),
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
                                graph("board-prob", "chance_below_reference", 240),
                            ),
                        ],
                        className="hc-grid board-grid",
                    ),
                    section(
                        "Forecast table",
                        # the whole table (at most 30 rows), not a scroll box inside the card
                        html.Div(id="board-table", className="hc-table-wrap hc-table-wrap--full"),
                    ),
                    section(
                        "Model details",
                        html.Div(id="board-details"),
                        className="hc-technical",
                        lead="What produced these bands.",
                    ),
                ],
                custom_spinner=progress(),
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
        *board_figures(state, bool(present)),
        tables.forecast_table(forecast, state["unit"]),
        details(state),
        reference_notes(forecast),
    ]


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

"""The Forecast Board's downloads: the forecast CSV and the standalone HTML report.

Both describe the saved analysis being looked at (unless its settings changed since), with its
sign-offs; both carry the forecast record of this series when there is one (the CSV as
``# record:`` lines).
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

import plotly.graph_objects as go
from dash import Input, Output, State, callback, dcc
from dash.exceptions import PreventUpdate

from app import board_saved, export, figures, saved, saved_views
from app.analysis import board_state, differences_words
from app.board_views import fan_figure, prob_figure, series_notes
from app.record_views import RecordData, record_data
from app.state import SELECTION_ID
from app.ui import guarded


def safe_name(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", text).strip("_") or "forecast"


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
    past = _record(state["selection"])
    text = export.forecast_csv(
        state["forecast"],
        state["comparison"],
        unit=state["unit"],
        dataset_hash=state["selection"]["dataset_id"],
        dataset_name=state["dataset_name"],
        analysis=export_analysis(state),
        data=series_notes(state),
        differences=_differences(state),
        record=past.record if past is not None else None,
        record_scored_on=past.scored_on if past is not None else "",
        record_newer=past.newer if past is not None else False,
    )
    name = f"{safe_name(state['forecast'].series_name)}_forecast.csv"
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
    figs: list[tuple[str, go.Figure]] = [("Forecast", fan_figure(state, False))]
    if forecast.reference is not None:
        figs.append(("Chance of falling below the reference level", prob_figure(state, False)))
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
    past = _record(state["selection"])
    page = export.report_html(
        forecast,
        comparison,
        figures=figs,
        unit=state["unit"],
        dataset_hash=state["selection"]["dataset_id"],
        dataset_name=state["dataset_name"],
        analysis=export_analysis(state),
        record=past.record if past is not None else None,
        record_analyses=[a.to_dict() for a in past.analyses] if past is not None else (),
        record_scored_on=past.scored_on if past is not None else "",
        record_newer=past.newer if past is not None else False,
        data=series_notes(state),
        settings={**comparison.settings, "differences_words": _differences(state)},
    )
    name = f"{safe_name(forecast.series_name)}_report.html"
    return [dcc.send_string(page, name, type="text/html"), None]


def _differences(state: Mapping[str, Any]) -> str:
    """The differences used and where they came from (the tests, or fixed on the Model Bench)."""
    return differences_words(state["comparison"].settings, state["selection"].get("bench"))


def export_analysis(state: Mapping[str, Any]) -> dict[str, Any] | None:
    """The saved analysis the exports describe: the one being looked at, unless changed since."""
    from app.store import get_store

    analysis, changed, _settings = board_saved.looking_at(state, get_store())
    return None if analysis is None or changed else analysis.to_dict()


def _record(sel: Mapping[str, Any]) -> RecordData | None:
    """The board's forecast record for the report (None when the board shows none)."""
    from app.store import get_store

    return record_data(
        get_store(), sel["dataset_id"], sel["series"], extra=sel.get("uploads") or ()
    )

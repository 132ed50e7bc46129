"""The Forecast Board's pieces: its two charts (memoized as JSON), the model details, the
placeholders and the progress note. :mod:`app.pages.board` lays them out and owns the callbacks.
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from typing import Any

import plotly.graph_objects as go
from dash import dcc, html

import forecasting_core as fc
from app import figures, wording
from app.analysis import LEVELS, comparison_key
from app.cache import cache, get_comparison
from app.ui import alert, fmt_number, html_table

#: Years of history drawn before the forecast, by frequency.
HISTORY_YEARS = {"annual": 40, "quarterly": 15, "monthly": 10}


# ---------------------------------------------------------------------------------------------
# Pieces
# ---------------------------------------------------------------------------------------------


def fan_figure(state: Mapping[str, Any], present: bool) -> go.Figure:
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


def prob_figure(state: Mapping[str, Any], present: bool) -> go.Figure:
    forecast = state["forecast"]
    fig = figures.prob_below_figure(forecast, height=300 if present else 240)
    if forecast.reference is not None:
        # the bars' labels follow the forecast table's rule ("less than 1%", never "0%")
        labels = [wording.fmt_chance(float(p)) for p in forecast.table["prob_below_reference"]]
        fig.update_traces(text=labels, selector={"type": "bar"})
    if present:
        fig.update_layout(font={"size": 18})
    return fig


def board_figures(state: Mapping[str, Any], present: bool) -> list[dict[str, Any]]:
    """Fan chart and chance-below chart as JSON, memoized on what they show."""
    forecast = state["forecast"]
    return figures_memo(
        *comparison_key(state["selection"]),
        state["candidate"].label,
        forecast.horizon,
        forecast.reference,
        present,
        f"{fc.__version__}+{figures.STYLE}",
    )


@cache.memoize()
def figures_memo(
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
    return [
        fan_figure(state, present).to_plotly_json(),
        prob_figure(state, present).to_plotly_json(),
    ]


def variance_label(spec: fc.TransformSpec) -> str:
    """The innovation variance's heading, naming the scale the model was fitted on."""
    scale = {"none": "original", "log": "log", "boxcox": "Box-Cox"}.get(spec.name, spec.name)
    return f"Innovation variance ({scale} scale)"


def details(state: Mapping[str, Any]) -> list[Any]:
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
        {"k": variance_label(spec), "v": fmt_number(c.sigma2, 4)},
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
        parts.append(
            html.Div(wording.shown_warning(w), className="hc-alert hc-alert--warning", role="note")
        )
    for note in series_notes(state):
        parts.append(
            html.Div(note, className="hc-alert hc-alert--warning board-data-note", role="note")
        )
    return parts


def series_notes(state: Mapping[str, Any]) -> list[str]:
    """What the file check found in the board's series (gaps, cells read as missing, zeros)."""
    from app.store import get_store

    sel = state["selection"]
    try:
        info = get_store().load_table(sel["dataset_id"]).info.get(sel["series"])
    except fc.InputError:
        return []
    return wording.data_notes(info)


@functools.cache
def blank(height: int) -> dict[str, Any]:
    """A placeholder figure as plain JSON (built once: layouts are built on every visit)."""
    return figures.blank_figure(height).to_plotly_json()


def progress() -> html.Div:
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


def graph(graph_id: str, name: str, height: int) -> dcc.Graph:
    return dcc.Graph(
        id=graph_id,
        config=figures.graph_config(name),
        className="hc-graph",
        figure=blank(height),
    )


def reference_notes(forecast: fc.Forecast) -> Any:
    """The core's notes beside the forecast: band ends shown as 0, an implausible reference level.

    Each kind has its own banner and title; the note on clipping at 0 says what "Expected"
    means at the clipped periods.
    """
    clip = [wording.shown_warning(w) for w in forecast.warnings if wording.is_clip_note(w)]
    ref = [w for w in forecast.warnings if "reference level" in w and not wording.is_clip_note(w)]
    out = []
    if clip:
        out.append(alert(" ".join(clip), "warning", title="Never below zero"))
    if ref:
        out.append(alert(" ".join(ref), "warning", title="Reference level"))
    return html.Div(out) if out else None

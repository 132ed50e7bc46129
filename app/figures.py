"""Pure figure builders: core result -> plotly Figure.

Every function here takes results from :mod:`forecasting_core` (plus plain values such as a
unit string) and returns a :class:`plotly.graph_objects.Figure`. Nothing here reads the
session, the cache or the request, so the same functions draw the pages and the HTML report.

The shared look lives in :mod:`app.figure_style` and the Model Bench's figures in
:mod:`app.bench_figures`; every name they had here is still importable from this module.

Style (Haulcast's own): one deep-sea teal hue for everything the model says, graded from pale
(95% band) to solid (median); observed values in a near-black slate; the reference level in a
warm coral; thin grid lines and no chart frame.
"""

from __future__ import annotations

import math
from typing import Any

import pandas as pd
import plotly.graph_objects as go

from app.bench_figures import (
    hindcast_figure,
    qq_figure,
    residual_acf_figure,
    residuals_figure,
    skill_figure,
)
from app.figure_style import (
    BAND_ALPHA,
    COLORS,
    FONT_FAMILY,
    STYLE,
    TEMPLATE,
    _band_alpha,
    _fmt,
    _rgba,
    _style,
    blank_figure,
    graph_config,
    period_x,
    periods_x,
    series_frequency,
    value_axis_title,
)
from forecasting_core import Comparison, Forecast

__all__ = [
    "BAND_ALPHA",
    "COLORS",
    "FONT_FAMILY",
    "STYLE",
    "TEMPLATE",
    "blank_figure",
    "comparison_history",
    "fan_chart",
    "graph_config",
    "hindcast_figure",
    "period_x",
    "periods_x",
    "prob_below_figure",
    "qq_figure",
    "residual_acf_figure",
    "residuals_figure",
    "series_frequency",
    "skill_figure",
    "value_axis_title",
]


def _levels_desc(forecast: Forecast) -> list[int]:
    return sorted((int(lv) for lv in forecast.levels), reverse=True)


def fan_chart(
    forecast: Forecast,
    history: pd.Series,
    *,
    unit: str | None = None,
    reference: float | None = None,
    history_years: int | None = None,
    title: str | None = None,
    height: int = 440,
) -> go.Figure:
    """History, median and graded forecast bands on the original scale.

    Parameters
    ----------
    forecast : Forecast
        From ``make_forecast``; its table holds ``lo{level}``/``hi{level}`` per level.
    history : pandas.Series
        Observed values on the original scale with a PeriodIndex (gaps stay gaps).
    unit : str, optional
        Unit of the values (shown in the axis title).
    reference : float, optional
        Reference level drawn as a horizontal line (defaults to ``forecast.reference``).
    history_years : int, optional
        Show only this many years of history before the forecast (all when None).
    title : str, optional
    height : int
        Pixels.

    Returns
    -------
    plotly.graph_objects.Figure
        Traces: ``Observed``, one ``{level}% band`` per level (two traces each: the lower edge
        has no legend entry), ``Median forecast``, ``Expected (mean)``.
    """
    frequency = forecast.frequency
    hist = history.astype(float)
    if history_years is not None and len(hist):
        per_year = {"annual": 1, "quarterly": 4, "monthly": 12}.get(frequency, 1)
        hist = hist.iloc[-history_years * per_year :]
    table = forecast.table
    fx = periods_x(table["time"], frequency)

    # Attach the fan to the last observation so the bands open from what was seen.
    anchor_x: list[Any] = []
    anchor_y: list[float] = []
    if len(hist) and not math.isnan(float(hist.iloc[-1])):
        anchor_x = [period_x(hist.index[-1], frequency)]
        anchor_y = [float(hist.iloc[-1])]

    fig = go.Figure()
    fig.add_trace(
        go.Scatter(
            x=periods_x(hist.index, frequency),
            y=hist.to_numpy(),
            name="Observed",
            mode="lines+markers",
            line={"color": COLORS["history"], "width": 2},
            marker={"size": 4, "color": COLORS["history"]},
            connectgaps=False,
            hovertemplate="%{y:,.4~g}",
        )
    )
    for level in _levels_desc(forecast):
        lo = anchor_y + [float(v) for v in table[f"lo{level}"]]
        hi = anchor_y + [float(v) for v in table[f"hi{level}"]]
        xs = anchor_x + fx
        fig.add_trace(
            go.Scatter(
                x=xs,
                y=lo,
                mode="lines",
                line={"width": 0, "color": COLORS["model"]},
                name=f"{level}% band (lower)",
                legendgroup=f"band{level}",
                showlegend=False,
                hovertemplate=f"{level}% low %{{y:,.4~g}}<extra></extra>",
            )
        )
        fig.add_trace(
            go.Scatter(
                x=xs,
                y=hi,
                mode="lines",
                line={"width": 0, "color": COLORS["model"]},
                fill="tonexty",
                fillcolor=_rgba(COLORS["model"], _band_alpha(level)),
                name=f"{level}% band",
                legendgroup=f"band{level}",
                hovertemplate=f"{level}% high %{{y:,.4~g}}<extra></extra>",
            )
        )
    fig.add_trace(
        go.Scatter(
            x=anchor_x + fx,
            y=anchor_y + [float(v) for v in table["median"]],
            name="Median forecast",
            mode="lines+markers",
            line={"color": COLORS["model_dark"], "width": 2.5},
            marker={"size": 6, "color": COLORS["model_dark"]},
            hovertemplate="median %{y:,.4~g}<extra></extra>",
        )
    )
    fig.add_trace(
        go.Scatter(
            x=fx,
            y=[float(v) for v in table["mean"]],
            name="Expected (mean)",
            mode="markers",
            marker={"symbol": "diamond-open", "size": 8, "color": COLORS["model_dark"]},
            hovertemplate="expected %{y:,.4~g}<extra></extra>",
        )
    )
    ref = forecast.reference if reference is None else reference
    has_ref = ref is not None and not (isinstance(ref, float) and math.isnan(ref))
    if has_ref:
        fig.add_hline(
            y=float(ref),
            line={"color": COLORS["reference"], "width": 2, "dash": "dash"},
        )
    _style(
        fig,
        title=title,
        y_title=value_axis_title(forecast.series_name, unit),
        frequency=frequency,
        height=height,
    )
    if has_ref:
        # the label sits in the right margin, level with the line: never over the data
        fig.add_annotation(
            text=f"reference<br>level<br>{_fmt(float(ref))}",
            xref="paper",
            x=1,
            xanchor="left",
            xshift=6,
            yref="y",
            y=float(ref),
            yanchor="middle",
            align="left",
            showarrow=False,
            font={"color": COLORS["reference"], "size": 11},
        )
        fig.update_layout(margin={"r": REFERENCE_MARGIN_PX})
    return fig


#: Right margin (px) of a fan chart with a reference level: room for its label.
REFERENCE_MARGIN_PX = 72

#: Top margin (px) that keeps a figure's text clear of plotly's modebar.
MODEBAR_PX = 34

#: Every modebar button of a cartesian plotly chart (the names plotly's layout.modebar.remove
#: accepts):
#: removed from a chart that is only a note.
NOTE_ONLY_REMOVE = [
    "toImage",
    "zoom2d",
    "pan2d",
    "select2d",
    "lasso2d",
    "zoomIn2d",
    "zoomOut2d",
    "autoScale2d",
    "resetScale2d",
    "resetViews",
    "toggleSpikelines",
    "toggleHover",
    "hoverCompareCartesian",
    "sendChartToCloud",
]


def prob_below_figure(forecast: Forecast, *, height: int = 240) -> go.Figure:
    """Chance (percent) that each period ahead falls below the reference level.

    Returns
    -------
    plotly.graph_objects.Figure
        One bar trace ``Chance below reference`` (empty figure with a note without a reference).
    """
    table = forecast.table
    fig = go.Figure()
    if forecast.reference is None:
        height = min(height, 90)
        fig.add_annotation(
            text="No reference level set yet.",
            showarrow=False,
            x=0.5,
            y=0.5,
            xref="paper",
            yref="paper",
            font={"color": COLORS["muted"]},
        )
        fig.update_xaxes(visible=False)
        fig.update_yaxes(visible=False)
    else:
        pct = [100.0 * float(p) for p in table["prob_below_reference"]]
        fig.add_trace(
            go.Bar(
                x=[str(t) for t in table["time"]],
                y=pct,
                name="Chance below reference",
                marker={"color": _rgba(COLORS["reference"], 0.75)},
                text=[f"{p:.0f}%" for p in pct],
                textposition="outside",
                cliponaxis=False,
                hovertemplate="%{x}: %{y:.1f}%<extra></extra>",
            )
        )
    _style(fig, title=None, y_title="chance below (%)", frequency="annual", height=height)
    fig.update_xaxes(type="category", title_text=None)
    fig.update_yaxes(range=[0, 105], ticksuffix="%", separatethousands=False)
    fig.update_layout(showlegend=False, hovermode="closest", margin={"t": 16})
    if forecast.reference is None:
        # the note sits below the modebar's row (plotly draws it top right on hover, about
        # 30 px high), which covered it when centred in the whole 90 px; with nothing to zoom
        # or save the modebar has no buttons either, so neither it nor a button's hover label
        # ("Zoom") can cover the note
        fig.update_layout(margin={"t": MODEBAR_PX, "b": 4}, modebar={"remove": NOTE_ONLY_REMOVE})
    return fig


# ---------------------------------------------------------------------------------------------
# Model Bench
# ---------------------------------------------------------------------------------------------


def comparison_history(comparison: Comparison) -> pd.Series:
    """The original-scale series a comparison was run on (from its best candidate)."""
    return comparison.best.series

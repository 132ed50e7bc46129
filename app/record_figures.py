"""Pure figure builders for the forecast record: ForecastRecord -> plotly Figure.

Style (Haulcast's own, as in :mod:`app.figures`): observed values in slate, what a model said
in teal (the 95% band palest, the 80% band stronger, the median a dashed dark-teal line), and
the realised values of each past forecast period marked by shape and colour: a filled teal
circle inside the 80% band, an open coral diamond outside it.
"""

from __future__ import annotations

from typing import Any

import pandas as pd
import plotly.graph_objects as go

import forecasting_core as fc
from app.figure_style import _style as shared_style
from app.ui import PALETTE

__all__ = ["record_figure", "record_x"]

#: Band fill opacity per level (the narrower the band, the stronger the tint).
_ALPHA = {50: 0.40, 80: 0.26, 95: 0.13}
#: More past forecasts than this: only their 80% bands are drawn (the chart stays readable).
MANY = 3


def _rgba(hex_color: str, alpha: float) -> str:
    h = hex_color.lstrip("#")
    r, g, b = (int(h[i : i + 2], 16) for i in (0, 2, 4))
    return f"rgba({r},{g},{b},{alpha:.2f})"


def record_x(label: str, frequency: str) -> Any:
    """Plot position of a period label (``2026``, ``2026-Q3``, ``2026-07``): the year for
    annual data, else the ISO date of the period's first day."""
    text = str(label)
    if frequency == "annual":
        return int(text[:4]) if text[:4].isdigit() else text
    freq = {"quarterly": "Q-DEC", "monthly": "M"}.get(frequency, "M")
    try:
        return pd.Period(text, freq=freq).start_time.strftime("%Y-%m-%d")
    except (ValueError, TypeError):
        return text


def _window(record: fc.ForecastRecord, history: pd.Series) -> pd.Series:
    """The observed values from a few periods before the earliest origin to the end."""
    per_year = {"annual": 1, "quarterly": 4, "monthly": 12}.get(record.frequency, 1)
    origins = [f.origin for f in record.forecasts]
    if not len(history) or not origins:
        return history
    try:
        first = min(pd.Period(o, freq=history.index.freq) for o in origins)
    except (ValueError, TypeError, AttributeError):
        return history
    return history[history.index >= first - 8 * per_year]


def record_figure(
    record: fc.ForecastRecord,
    history: pd.Series,
    *,
    y_title: str | None = None,
    height: int = 400,
) -> go.Figure:
    """Realised values against each past forecast's bands.

    Parameters
    ----------
    record : ForecastRecord
        From :func:`forecasting_core.score_forecast_record`.
    history : pandas.Series
        The newer data (original scale, PeriodIndex) the record was scored on.
    y_title : str, optional
        Value axis title (default: the series name).
    height : int
        Pixels.

    Returns
    -------
    plotly.graph_objects.Figure
        Traces: ``Observed``; per past forecast ``<label>: 95% band`` and ``<label>: 80% band``
        (two traces each, the lower edge without a legend entry; only the 80% band when more
        than three forecasts are drawn) and ``<label>: median``; then ``Inside the 80% band``
        and ``Outside the 80% band`` (realised values of scored periods). With a single past
        forecast the names drop the label: ``95% band``, ``80% band`` and
        ``Median forecast (data to <origin>)``.
    """
    freq = record.frequency
    hist = _window(record, history.astype(float))
    fig = go.Figure()
    fig.add_trace(
        go.Scatter(
            x=[record_x(fc.time_label(p), freq) for p in hist.index],
            y=hist.to_numpy(),
            name="Observed",
            mode="lines+markers",
            line={"color": PALETTE["slate"], "width": 1.8},
            marker={"size": 4, "color": PALETTE["slate"]},
            connectgaps=False,
            hovertemplate="observed %{y:,.4~g}<extra></extra>",
        )
    )
    levels = [lv for lv in (95, 80) if lv in record.levels]
    if len(record.forecasts) > MANY:
        levels = [lv for lv in levels if lv == 80] or levels[-1:]
    inside_x: list[Any] = []
    inside_y: list[float] = []
    outside_x: list[Any] = []
    outside_y: list[float] = []
    for past in record.forecasts:
        t = past.table
        if not len(t):
            continue
        xs = [record_x(v, freq) for v in t["time"]]
        group = f"past-{past.label}"
        # one past forecast: short legend names; several: each named by its label
        prefix = f"{past.label}: " if len(record.forecasts) > 1 else ""
        for lv in levels:
            if f"lo{lv}" not in t:
                continue
            fig.add_trace(
                go.Scatter(
                    x=xs,
                    y=t[f"lo{lv}"].astype(float).tolist(),
                    mode="lines",
                    line={"width": 0, "color": PALETTE["teal"]},
                    name=f"{prefix}{lv}% band (lower)",
                    legendgroup=group,
                    showlegend=False,
                    hovertemplate=f"{lv}% low %{{y:,.4~g}}<extra></extra>",
                )
            )
            fig.add_trace(
                go.Scatter(
                    x=xs,
                    y=t[f"hi{lv}"].astype(float).tolist(),
                    mode="lines",
                    line={"width": 0, "color": PALETTE["teal"]},
                    fill="tonexty",
                    fillcolor=_rgba(PALETTE["teal"], _ALPHA.get(lv, 0.2)),
                    name=f"{prefix}{lv}% band",
                    legendgroup=group,
                    hovertemplate=f"{lv}% high %{{y:,.4~g}}<extra></extra>",
                )
            )
        fig.add_trace(
            go.Scatter(
                x=xs,
                y=t["median"].astype(float).tolist(),
                mode="lines+markers",
                line={"color": PALETTE["teal_dark"], "width": 2, "dash": "dash"},
                marker={"size": 5, "color": PALETTE["teal_dark"]},
                name=f"{prefix}median" if prefix else f"Median forecast (data to {past.origin})",
                legendgroup=group,
                hovertemplate="forecast median %{y:,.4~g}<extra></extra>",
            )
        )
        scored = t[t["status"] == "scored"]
        flag = scored["inside80"] if "inside80" in scored else pd.Series(pd.NA, index=scored.index)
        for (_, row), ok in zip(scored.iterrows(), flag, strict=True):
            if pd.isna(ok):  # no 80% band for this period
                continue
            xs_, ys_ = (inside_x, inside_y) if bool(ok) else (outside_x, outside_y)
            xs_.append(record_x(row["time"], freq))
            ys_.append(float(row["actual"]))
    fig.add_trace(
        go.Scatter(
            x=inside_x,
            y=inside_y,
            mode="markers",
            name="Inside the 80% band",
            marker={
                "symbol": "circle",
                "size": 10,
                "color": PALETTE["teal"],
                "line": {"color": "#ffffff", "width": 1.5},
            },
            hovertemplate="realised %{y:,.4~g}: inside the 80% band<extra></extra>",
        )
    )
    fig.add_trace(
        go.Scatter(
            x=outside_x,
            y=outside_y,
            mode="markers",
            name="Outside the 80% band",
            marker={
                "symbol": "diamond-open",
                "size": 12,
                "color": PALETTE["coral"],
                "line": {"color": PALETTE["coral"], "width": 2.5},
            },
            hovertemplate="realised %{y:,.4~g}: outside the 80% band<extra></extra>",
        )
    )
    return _style(fig, y_title=y_title or record.series_name, frequency=freq, height=height)


def _style(fig: go.Figure, *, y_title: str, frequency: str, height: int) -> go.Figure:
    """The app's shared chart look (:mod:`app.figure_style`), legend items in one row."""
    shared_style(fig, title=None, y_title=y_title, frequency=frequency, height=height)
    fig.update_layout(legend={"traceorder": "normal"})  # one row, not one block per group
    return fig

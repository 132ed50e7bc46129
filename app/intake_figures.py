"""Figures of the Intake page: a series with its gaps, its transformed preview, the
stationarity grid (original, first and second differences, each with ACF and PACF).

Pure functions: core results in, plotly Figures out. Kept beside :mod:`app.figures` (the
Model Bench and Forecast Board figures) and sharing its time-axis helpers.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from app.figure_style import wrap_title
from app.figures import period_x, periods_x, series_frequency
from app.ui import FONT_FAMILY, PALETTE
from forecasting_core import StationarityReport, TransformSpec

_LEVEL_NAMES = {0: "Original", 1: "First difference", 2: "Second difference"}


def _base_layout(fig: go.Figure, *, height: int, title: str | None = None) -> go.Figure:
    fig.update_layout(
        template="plotly_white",
        height=height,
        title={
            "text": title,
            "x": 0.0,
            "xanchor": "left",
            "font": {"size": 15, "color": PALETTE["deep"]},
        }
        if title
        else None,
        font={"family": FONT_FAMILY, "size": 13, "color": PALETTE["ink"]},
        margin={"l": 64, "r": 20, "t": 52 if title else 28, "b": 44},
        paper_bgcolor="rgba(0,0,0,0)",
        plot_bgcolor="#ffffff",
        hovermode="x unified",
        legend={"orientation": "h", "yanchor": "bottom", "y": 1.0, "xanchor": "right", "x": 1.0},
    )
    fig.update_xaxes(gridcolor=PALETTE["grid"], linecolor=PALETTE["line"], zeroline=False)
    fig.update_yaxes(
        gridcolor=PALETTE["grid"], linecolor=PALETTE["line"], zeroline=False, separatethousands=True
    )
    return fig


def _gap_runs(y: pd.Series) -> list[tuple[Any, Any, int]]:
    """Runs of missing periods strictly inside the observed range: (first, last, length)."""
    values = y.to_numpy(dtype=float, na_value=np.nan)
    observed = np.flatnonzero(~np.isnan(values))
    if observed.size == 0:
        return []
    runs: list[tuple[Any, Any, int]] = []
    start = None
    for i in range(int(observed[0]), int(observed[-1]) + 1):
        if np.isnan(values[i]):
            start = i if start is None else start
        elif start is not None:
            runs.append((y.index[start], y.index[i - 1], i - start))
            start = None
    return runs


def _span(first: Any, last: Any, frequency: str) -> tuple[Any, Any]:
    if frequency == "annual":
        return period_x(first, frequency) - 0.5, period_x(last, frequency) + 0.5
    if isinstance(first, pd.Period):
        mid = (first.end_time - first.start_time) / 2
        x0 = first.start_time - mid
        x1 = last.end_time - mid
        return x0.strftime("%Y-%m-%d"), x1.strftime("%Y-%m-%d")
    return period_x(first, frequency), period_x(last, frequency)


def series_figure(
    y: pd.Series,
    *,
    y_title: str,
    title: str | None = None,
    color: str | None = None,
    height: int = 320,
) -> go.Figure:
    """A series over time; missing periods break the line and are shaded.

    Parameters
    ----------
    y : pandas.Series
        Values on a complete PeriodIndex (annual, quarterly or monthly); NaN = missing.
    y_title : str
        Value axis title with the unit, e.g. ``"hake_t (t)"``.
    title : str, optional
    color : str, optional
        Line colour (default: the palette's slate).
    height : int
        Pixels.
    """
    frequency = series_frequency(y)
    x = periods_x(y.index, frequency)
    values = [
        None if (v is None or (isinstance(v, float) and np.isnan(v))) else float(v)
        for v in y.tolist()
    ]
    fig = go.Figure()
    runs = _gap_runs(y)
    unit_word = {"annual": "year", "quarterly": "quarter", "monthly": "month"}[frequency]
    n_missing = sum(n for *_, n in runs)
    for first, last, _n in runs:
        x0, x1 = _span(first, last, frequency)
        fig.add_vrect(
            x0=x0, x1=x1, fillcolor=PALETTE["amber_bg"], line_width=0, layer="below", opacity=1.0
        )
    if runs:
        # a legend entry for the shading
        fig.add_trace(
            go.Scatter(
                x=[x[0]],
                y=[None],
                mode="markers",
                marker={
                    "symbol": "square",
                    "size": 14,
                    "color": PALETTE["amber_bg"],
                    "line": {"color": "#c98a00", "width": 1},
                },
                name=f"missing: {n_missing} {unit_word}{'s' if n_missing != 1 else ''} (a gap, not zero)",
                hoverinfo="skip",
            )
        )
    fig.add_trace(
        go.Scatter(
            x=x,
            y=values,
            mode="lines+markers",
            connectgaps=False,
            line={"color": color or PALETTE["slate"], "width": 2.2},
            marker={"size": 5 if len(x) <= 80 else 3, "color": color or PALETTE["slate"]},
            name=y.name if isinstance(y.name, str) else "value",
            hovertemplate="%{y:,.4g}<extra></extra>",
        )
    )
    _base_layout(fig, height=height, title=title)
    fig.update_yaxes(title_text=y_title)
    if frequency == "annual":
        fig.update_xaxes(tickformat="d", title_text="Year")
    else:
        fig.update_xaxes(type="date", title_text=None)
    return fig


def transform_axis_title(series_name: str, spec: TransformSpec) -> str:
    """``log(hake_t)``, ``Box-Cox(hake_t), lambda 0.31`` or the name itself.

    A long title is broken onto lines (:func:`app.figure_style.wrap_title`).
    """
    if spec.name == "log":
        return wrap_title(f"log({series_name})")
    if spec.name == "boxcox":
        lam = f", \u03bb = {spec.lam:.2f}" if spec.lam is not None else ""
        return wrap_title(f"Box-Cox({series_name}){lam}")
    return wrap_title(series_name)


def _correlogram_for(report: StationarityReport, d: int):
    exact = [
        c
        for c in report.correlograms
        if c.differences == d and c.seasonal_differences == report.seasonal_d
    ]
    if exact:
        return exact[0]
    loose = [c for c in report.correlograms if c.differences == d]
    return loose[0] if loose else None


def stationarity_figure(report: StationarityReport, *, height: int = 640) -> go.Figure:
    """Original, first and second differences side by side, each with ACF and PACF bars.

    The column of the chosen ``d`` is marked in its title; bars beyond the approximate 95%
    limits (dashed lines, 1.96 / sqrt(n)) are drawn darker.
    """
    levels = [d for d in (0, 1, 2) if d in report.differenced] or [0]
    ncols = len(levels)
    seasonal = ", D = 1" if report.seasonal_d else ""
    titles = []
    for d in levels:
        name = _LEVEL_NAMES.get(d, f"{d} differences")
        titles.append(
            f"<b>{name} \u2714 chosen (d = {d}{seasonal})</b>"
            if d == report.d
            else f"{name} (d = {d}{seasonal})"
        )
    fig = make_subplots(
        rows=3, cols=ncols, column_titles=titles, vertical_spacing=0.1, horizontal_spacing=0.06
    )
    traces: list[Any] = []
    rows: list[int] = []
    cols: list[int] = []
    shapes: list[dict[str, Any]] = []
    axes: dict[str, Any] = {}
    dash_line = {"color": PALETTE["coral"], "width": 1.2, "dash": "dash"}
    for col, d in enumerate(levels, start=1):
        series = report.differenced.get(d)
        line_color = PALETTE["teal"] if d == report.d else PALETTE["slate"]
        if series is not None and len(series):
            frequency = series_frequency(series)
            vals = [None if pd.isna(v) else float(v) for v in series.tolist()]
            traces.append(
                go.Scatter(
                    x=periods_x(series.index, frequency),
                    y=vals,
                    mode="lines",
                    connectgaps=False,
                    line={"color": line_color, "width": 1.8},
                    showlegend=False,
                    hovertemplate="%{x}: %{y:.4g}<extra></extra>",
                )
            )
            rows.append(1)
            cols.append(col)
            axes[_axis("xaxis", 1, col, ncols)] = (
                {"tickformat": "d"} if frequency == "annual" else {"type": "date"}
            )
        corr = _correlogram_for(report, d)
        if corr is None:
            continue
        lags = list(corr.lags)
        for row, key in ((2, "acf"), (3, "pacf")):
            vals = np.asarray(getattr(corr, key), dtype=float)
            strong = np.abs(vals) > corr.limit
            traces.append(
                go.Bar(
                    x=lags,
                    y=vals,
                    marker_color=[PALETTE["teal_dark"] if s else "#9cc7cf" for s in strong],
                    width=0.6,
                    showlegend=False,
                    hovertemplate=f"lag %{{x}}: {key.upper()} %{{y:.2f}}<extra></extra>",
                )
            )
            rows.append(row)
            cols.append(col)
            n = (row - 1) * ncols + col
            suffix = "" if n == 1 else str(n)
            for sign in (1, -1):
                shapes.append(
                    {
                        "type": "line",
                        "xref": f"x{suffix} domain",
                        "yref": f"y{suffix}",
                        "x0": 0,
                        "x1": 1,
                        "y0": sign * corr.limit,
                        "y1": sign * corr.limit,
                        "line": dash_line,
                    }
                )
            axes[_axis("yaxis", row, col, ncols)] = {"range": [-1.05, 1.05]}
            axes[_axis("xaxis", row, col, ncols)] = {
                "dtick": _lag_tick(len(lags)),
                "title": {"text": "lag"} if row == 3 else None,
            }
    for row, label in enumerate(["Values", "ACF", "PACF"], start=1):
        key = _axis("yaxis", row, 1, ncols)
        axes.setdefault(key, {})["title"] = {"text": label}
    fig.add_traces(traces, rows=rows, cols=cols)
    _base_layout(fig, height=height)
    fig.update_layout(
        shapes=shapes,
        hovermode="closest",
        bargap=0.3,
        margin={"l": 64, "r": 16, "t": 56, "b": 40},
        **axes,
    )
    fig.update_annotations(font={"size": 14, "color": PALETTE["deep"]})
    return fig


def _axis(kind: str, row: int, col: int, ncols: int) -> str:
    n = (row - 1) * ncols + col
    return kind if n == 1 else f"{kind}{n}"


def _lag_tick(n: int) -> int:
    return 1 if n <= 12 else (2 if n <= 24 else 6)


def empty_figure(message: str, *, height: int = 260) -> go.Figure:
    """A blank figure with a centred note (no data to draw yet)."""
    fig = go.Figure()
    fig.add_annotation(
        text=message,
        x=0.5,
        y=0.5,
        xref="paper",
        yref="paper",
        showarrow=False,
        font={"size": 15, "color": PALETTE["muted"]},
    )
    _base_layout(fig, height=height)
    fig.update_xaxes(visible=False)
    fig.update_yaxes(visible=False)
    return fig

"""Pure figure builders of the Model Bench: hindcast, skill, residual checks (core result -> Figure).

Nothing here reads the session, the cache or the request. The shared look is
:mod:`app.figure_style`; :mod:`app.figures` re-exports every builder here under its old name.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from scipy import stats

from app.figure_style import (
    COLORS,
    _style,
    period_x,
    periods_x,
    series_frequency,
    value_axis_title,
)
from forecasting_core import Hindcast, ResidualReport


def _pick(frame: pd.DataFrame, names: Sequence[str]) -> str | None:
    return next((n for n in names if n in frame.columns), None)


def hindcast_figure(
    hindcast: Hindcast,
    history: pd.Series,
    *,
    model: str | None = None,
    benchmark: str | None = "last value",
    unit: str | None = None,
    series_name: str = "",
    height: int = 400,
) -> go.Figure:
    """Each hindcast origin's forecasts against what happened.

    Parameters
    ----------
    hindcast : Hindcast
        Its ``errors`` frame holds one row per (model, origin, step).
    history : pandas.Series
        Observed values on the original scale (PeriodIndex).
    model : str, optional
        Model to draw (default: the first score, the chosen model).
    benchmark : str, optional
        Benchmark drawn for comparison (hidden until clicked in the legend).
    unit, series_name : str
        For the axis title.

    Returns
    -------
    plotly.graph_objects.Figure
        ``Observed``, then one ``from {origin}`` trace per origin for ``model`` (first one
        carries the legend entry ``{model}``), then the benchmark's traces.
    """
    frequency = series_frequency(history)
    errors = hindcast.errors
    model = model or (hindcast.scores[0].model if hindcast.scores else None)
    start = None
    if hindcast.origins:
        # Origins and horizon are periods; show some context before the first origin
        # (8 years of annual data, 3 years of quarterly or monthly data).
        context = {"annual": 8, "quarterly": 12, "monthly": 36}[frequency]
        start = max(0, len(history) - (len(hindcast.origins) + hindcast.horizon + context))
    hist = history.iloc[start:] if start else history
    fig = go.Figure()
    fig.add_trace(
        go.Scatter(
            x=periods_x(hist.index, frequency),
            y=hist.astype(float).to_numpy(),
            name="Observed",
            mode="lines+markers",
            line={"color": COLORS["history"], "width": 2},
            marker={"size": 5},
            hovertemplate="observed %{y:,.4~g}<extra></extra>",
        )
    )
    model_col = _pick(errors, ["model"])
    origin_col = _pick(errors, ["origin"])
    point_col = _pick(errors, ["median", "mean", "forecast"])
    if model_col and origin_col and point_col:
        history_lookup = {period_x(p, frequency): float(v) for p, v in history.items()}
        for who, color, width, dash, visible in (
            (model, COLORS["model"], 2.0, "solid", True),
            (benchmark, COLORS["benchmark"], 1.5, "dot", "legendonly"),
        ):
            if who is None:
                continue
            rows = errors[errors[model_col] == who]
            for i, (origin, grp) in enumerate(rows.groupby(origin_col, sort=True)):
                grp = grp.sort_values(_pick(grp, ["step"]) or origin_col)
                ox = period_x(origin, frequency)
                xs = periods_x(grp["time"], frequency)
                ys = [float(v) for v in grp[point_col]]
                if ox in history_lookup and not math.isnan(history_lookup[ox]):
                    xs, ys = [ox, *xs], [history_lookup[ox], *ys]
                fig.add_trace(
                    go.Scatter(
                        x=xs,
                        y=ys,
                        mode="lines+markers",
                        name=who if i == 0 else f"from {origin}",
                        legendgroup=f"hc-{who}",
                        showlegend=i == 0,
                        visible=visible,
                        line={"color": color, "width": width, "dash": dash},
                        marker={"size": 4},
                        hovertemplate=f"{who} from {origin}: %{{y:,.4~g}}<extra></extra>",
                    )
                )
    _style(
        fig,
        title=None,
        y_title=value_axis_title(series_name, unit),
        frequency=frequency,
        height=height,
    )
    fig.update_layout(hovermode="closest")
    return fig


def skill_figure(hindcast: Hindcast, *, height: int = 260) -> go.Figure:
    """MASE of every model on the hindcast (lower is better; 1 = the in-sample last value)."""
    scores = sorted(hindcast.scores, key=lambda s: (math.isnan(s.mase), s.mase))
    colors = [COLORS["model"] if s.kind == "arima" else COLORS["benchmark"] for s in scores]
    fig = go.Figure(
        go.Bar(
            x=[s.mase for s in scores],
            y=[s.model for s in scores],
            orientation="h",
            marker={"color": colors},
            name="MASE",
            text=[f"{s.mase:.2f}" for s in scores],
            textposition="outside",
            cliponaxis=False,
            hovertemplate="%{y}: MASE %{x:.3f}<extra></extra>",
        )
    )
    fig.add_vline(x=1.0, line={"color": COLORS["muted"], "dash": "dot", "width": 1})
    _style(fig, title=None, y_title="", frequency="annual", height=height)
    fig.update_xaxes(tickformat=None, title_text="MASE on the hindcast (lower is better)")
    fig.update_yaxes(autorange="reversed", separatethousands=False)
    fig.update_layout(showlegend=False, hovermode="closest")
    return fig


def residuals_figure(report: ResidualReport, *, height: int = 260) -> go.Figure:
    """Standardized residuals over time with +-1.96 guides; the largest ones labelled."""
    res = report.residuals.astype(float)
    frequency = series_frequency(res)
    xs = periods_x(res.index, frequency)
    fig = go.Figure(
        go.Scatter(
            x=xs,
            y=res.to_numpy(),
            mode="lines+markers",
            name="standardized residual",
            line={"color": COLORS["model"], "width": 1.2},
            marker={"size": 4},
            hovertemplate="%{y:.2f}<extra></extra>",
        )
    )
    for y in (-1.96, 1.96):
        fig.add_hline(y=y, line={"color": COLORS["muted"], "width": 1, "dash": "dot"})
    fig.add_hline(y=0, line={"color": COLORS["history"], "width": 1})
    for period, value in report.largest[:3]:
        if abs(value) >= 1.96:
            fig.add_annotation(
                x=period_x(period, frequency),
                y=value,
                text=str(period),
                showarrow=True,
                arrowhead=0,
                ax=0,
                ay=-18 if value > 0 else 18,
                font={"size": 11, "color": COLORS["muted"]},
            )
    _style(
        fig, title="Residuals over time", y_title="standardized", frequency=frequency, height=height
    )
    fig.update_layout(showlegend=False, hovermode="closest")
    fig.update_xaxes(title_text=None)
    return fig


def residual_acf_figure(report: ResidualReport, *, height: int = 260) -> go.Figure:
    """Residual autocorrelation by lag with the approximate 95% limits."""
    lags = list(range(1, len(report.acf) + 1))
    acf = [float(a) for a in report.acf]
    fig = go.Figure(
        go.Bar(
            x=lags,
            y=acf,
            name="residual ACF",
            width=0.35,
            marker={
                "color": [
                    COLORS["reference"] if abs(a) > report.limit else COLORS["model"] for a in acf
                ]
            },
            hovertemplate="lag %{x}: %{y:.3f}<extra></extra>",
        )
    )
    if not math.isnan(report.limit):
        for y in (-report.limit, report.limit):
            fig.add_hline(y=y, line={"color": COLORS["muted"], "width": 1, "dash": "dash"})
    _style(fig, title="Residual ACF", y_title="autocorrelation", frequency="annual", height=height)
    fig.update_xaxes(title_text="lag", tickformat="d", dtick=max(1, len(lags) // 8 or 1))
    fig.update_yaxes(range=[-1, 1], separatethousands=False)
    fig.update_layout(showlegend=False, hovermode="closest")
    return fig


def qq_figure(report: ResidualReport, *, height: int = 260) -> go.Figure:
    """Normal Q-Q plot of the standardized residuals (``scipy.stats.probplot``)."""
    res = report.residuals.astype(float).dropna().to_numpy()
    fig = go.Figure()
    if len(res) >= 3:
        (theoretical, ordered), (slope, intercept, _r) = stats.probplot(res, dist="norm")
        fig.add_trace(
            go.Scatter(
                x=theoretical,
                y=ordered,
                mode="markers",
                name="residuals",
                marker={"color": COLORS["model"], "size": 5},
                hovertemplate="normal %{x:.2f}, residual %{y:.2f}<extra></extra>",
            )
        )
        line_x = np.array([theoretical.min(), theoretical.max()])
        fig.add_trace(
            go.Scatter(
                x=line_x,
                y=intercept + slope * line_x,
                mode="lines",
                name="normal line",
                line={"color": COLORS["history"], "width": 1, "dash": "dash"},
                hoverinfo="skip",
            )
        )
    _style(fig, title="Normal Q-Q", y_title="residual quantile", frequency="annual", height=height)
    fig.update_xaxes(title_text="normal quantile", tickformat=None)
    fig.update_yaxes(separatethousands=False)
    fig.update_layout(showlegend=False, hovermode="closest")
    return fig

"""Pure figure builders: core result -> plotly Figure.

Every function here takes results from :mod:`forecasting_core` (plus plain values such as a
unit string) and returns a :class:`plotly.graph_objects.Figure`. Nothing here reads the
session, the cache or the request, so the same functions draw the pages and the HTML report.

Style (Haulcast's own): one deep-sea teal hue for everything the model says, graded from pale
(95% band) to solid (median); observed values in a near-black slate; the reference level in a
warm coral; thin grid lines and no chart frame.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Sequence
from typing import Any

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from scipy import stats

from forecasting_core import Comparison, Forecast, Hindcast, ResidualReport, frequency_of

#: Part of the cache key of memoized figures: change it whenever the figures' look changes,
#: so a server upgrade never serves figures drawn by older code.
STYLE = "2"

#: Colours used by the figures (hex strings; bands use ``rgba`` of ``model``).
COLORS: dict[str, str] = {
    "history": "#1e2b36",
    "model": "#0f6e80",
    "model_dark": "#0a4f5d",
    "benchmark": "#8a94a0",
    "reference": "#c2452d",
    "grid": "#e3e8ec",
    "text": "#14222e",
    "muted": "#5a6672",
}

#: Band opacity per level: the narrower the band, the stronger the tint.
BAND_ALPHA: dict[int, float] = {50: 0.42, 80: 0.26, 95: 0.14}

#: Locally installed fonts only (the same stack as the pages).
FONT_FAMILY = "'Segoe UI', 'Noto Sans', 'DejaVu Sans', 'Helvetica Neue', Arial, sans-serif"


def _fmt(x: float) -> str:
    """A value for an annotation: ``12,340``, ``45.6``, ``0.123``."""
    return f"{x:,.0f}" if abs(x) >= 100 else f"{x:.3g}"


def _rgba(hex_color: str, alpha: float) -> str:
    h = hex_color.lstrip("#")
    r, g, b = (int(h[i : i + 2], 16) for i in (0, 2, 4))
    return f"rgba({r},{g},{b},{alpha:.2f})"


def _band_alpha(level: int) -> float:
    if level in BAND_ALPHA:
        return BAND_ALPHA[level]
    return float(np.clip(0.5 - level / 220.0, 0.08, 0.5))


# ---------------------------------------------------------------------------------------------
# Time axis
# ---------------------------------------------------------------------------------------------

_QUARTER = re.compile(r"^\s*(\d{4})\s*-?\s*Q([1-4])\s*$", re.IGNORECASE)
_MONTH = re.compile(r"^\s*(\d{4})-(\d{1,2})\s*$")
_YEAR = re.compile(r"^\s*(\d{4})(?:\.0+)?\s*$")


def period_x(value: Any, frequency: str) -> Any:
    """Plot position of one period.

    Parameters
    ----------
    value : pandas.Period, str or int
        A period, or a label written ``2026``, ``2026-Q3`` or ``2026-07``.
    frequency : {"annual", "quarterly", "monthly"}

    Returns
    -------
    int or str
        The year (annual data) or an ISO date of the period's first day, which plotly
        places on a date axis.
    """
    if isinstance(value, pd.Period):
        return int(value.year) if frequency == "annual" else value.start_time.strftime("%Y-%m-%d")
    if isinstance(value, int | np.integer):
        return int(value)
    if isinstance(value, pd.Timestamp):
        return int(value.year) if frequency == "annual" else value.strftime("%Y-%m-%d")
    text = str(value)
    if m := _QUARTER.match(text):
        year, q = int(m.group(1)), int(m.group(2))
        return year if frequency == "annual" else f"{year}-{3 * (q - 1) + 1:02d}-01"
    if m := _MONTH.match(text):
        year, month = int(m.group(1)), int(m.group(2))
        return year if frequency == "annual" else f"{year}-{month:02d}-01"
    if m := _YEAR.match(text):
        year = int(m.group(1))
        return year if frequency == "annual" else f"{year}-01-01"
    return text


def periods_x(values: Iterable[Any], frequency: str) -> list[Any]:
    """:func:`period_x` for many periods."""
    return [period_x(v, frequency) for v in values]


def series_frequency(series: pd.Series) -> str:
    """The core's frequency name of a series; ``"annual"`` for an index without periods."""
    return frequency_of(series) if isinstance(series.index, pd.PeriodIndex) else "annual"


def _x_hover(frequency: str) -> str:
    return {"annual": "%{x}", "quarterly": "%{x|%Y Q%q}", "monthly": "%{x|%b %Y}"}.get(
        frequency, "%{x}"
    )


#: Haulcast's own small plotly template (much cheaper to apply than a built-in one).
TEMPLATE = go.layout.Template(
    layout={
        "font": {"family": FONT_FAMILY, "size": 13, "color": COLORS["text"]},
        "paper_bgcolor": "rgba(0,0,0,0)",
        "plot_bgcolor": "#ffffff",
        "colorway": [COLORS["model"], COLORS["history"], COLORS["benchmark"], COLORS["reference"]],
        "xaxis": {
            "gridcolor": COLORS["grid"],
            "linecolor": COLORS["grid"],
            "zeroline": False,
            "automargin": True,
            "ticks": "",
        },
        "yaxis": {
            "gridcolor": COLORS["grid"],
            "linecolor": COLORS["grid"],
            "zeroline": False,
            "automargin": True,
            "ticks": "",
        },
        "hoverlabel": {"font": {"family": FONT_FAMILY}},
    }
)


def _style(
    fig: go.Figure, *, title: str | None, y_title: str, frequency: str, height: int
) -> go.Figure:
    fig.update_layout(
        title={"text": title, "x": 0.0, "xanchor": "left", "font": {"size": 15}} if title else None,
        template=TEMPLATE,
        font={"family": FONT_FAMILY, "size": 13, "color": COLORS["text"]},
        height=height,
        margin={"l": 64, "r": 24, "t": 48 if title else 32, "b": 92},
        paper_bgcolor="rgba(0,0,0,0)",
        plot_bgcolor="#ffffff",
        hovermode="x unified",
        # below the plot: the modebar (PNG button) sits top right
        # anchored to the bottom of the whole figure, so no resize can put it on the axis title
        legend={
            "orientation": "h",
            "yref": "container",
            "yanchor": "bottom",
            "y": 0.0,
            "xanchor": "left",
            "x": 0.0,
            "bgcolor": "rgba(255,255,255,0.6)",
        },
    )
    fig.update_yaxes(
        title_text=y_title, gridcolor=COLORS["grid"], zeroline=False, separatethousands=True
    )
    if frequency == "annual":
        fig.update_xaxes(tickformat="d", gridcolor=COLORS["grid"], title_text="Year")
    else:
        fig.update_xaxes(type="date", gridcolor=COLORS["grid"], title_text=None)
    return fig


def blank_figure(height: int = 260) -> go.Figure:
    """An empty placeholder (no axes) shown until a result arrives."""
    fig = go.Figure()
    fig.update_layout(
        template=TEMPLATE,
        height=height,
        paper_bgcolor="rgba(0,0,0,0)",
        plot_bgcolor="rgba(0,0,0,0)",
        margin={"l": 0, "r": 0, "t": 0, "b": 0},
    )
    fig.update_xaxes(visible=False)
    fig.update_yaxes(visible=False)
    return fig


def value_axis_title(series_name: str, unit: str | None) -> str:
    """Axis title for values on the original scale, e.g. ``hake landings (t)``.

    A name that already carries its unit in brackets (``Landings (t)``) is left as it is.
    """
    if not unit or series_name.rstrip().endswith((f"({unit})", f"[{unit}]")):
        return series_name
    return f"{series_name} ({unit})"


def graph_config(filename: str) -> dict[str, Any]:
    """``dcc.Graph`` config: the modebar's own PNG button, named after the figure.

    Parameters
    ----------
    filename : str
        File name (without ``.png``) offered by the browser's download.
    """
    safe = re.sub(r"[^A-Za-z0-9_.-]+", "_", filename).strip("_") or "haulcast"
    return {
        "displaylogo": False,
        "toImageButtonOptions": {"format": "png", "filename": safe, "scale": 2},
        "modeBarButtonsToRemove": ["lasso2d", "select2d", "autoScale2d"],
    }


# ---------------------------------------------------------------------------------------------
# Forecast Board
# ---------------------------------------------------------------------------------------------


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
    if ref is not None and not (isinstance(ref, float) and math.isnan(ref)):
        fig.add_hline(
            y=float(ref),
            line={"color": COLORS["reference"], "width": 2, "dash": "dash"},
            annotation_text=f"reference level {_fmt(float(ref))}",
            annotation_position="bottom left",
            annotation_font={"color": COLORS["reference"]},
        )
    _style(
        fig,
        title=title,
        y_title=value_axis_title(forecast.series_name, unit),
        frequency=frequency,
        height=height,
    )
    return fig


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
    return fig


# ---------------------------------------------------------------------------------------------
# Model Bench
# ---------------------------------------------------------------------------------------------


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


def comparison_history(comparison: Comparison) -> pd.Series:
    """The original-scale series a comparison was run on (from its best candidate)."""
    return comparison.best.series

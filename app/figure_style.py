"""Shared look of Haulcast's figures: colours, the plotly template, axis helpers, blank figure.

Used by :mod:`app.figures` (forecast figures), :mod:`app.bench_figures` (Model Bench figures)
and :mod:`app.intake_figures`. Pure: nothing here reads the session, the cache or the request.

Style (Haulcast's own): one deep-sea teal hue for everything the model says, graded from pale
(95% band) to solid (median); observed values in a near-black slate; the reference level in a
warm coral; thin grid lines and no chart frame.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from typing import Any

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from forecasting_core import frequency_of

#: Part of the cache key of memoized figures: change it whenever the figures' look changes,
#: so a server upgrade never serves figures drawn by older code.
STYLE = "3"

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

    A name that already carries its unit in brackets (``Landings (t)``) is left as it is. A
    title longer than :data:`AXIS_TITLE_CHARS` is broken onto lines (``<br>``) after a space,
    ``_`` or ``-``: plotly never wraps an axis title, and a long one was cut off at the ends of
    a chart a few hundred pixels high.
    """
    return wrap_title(with_unit(series_name, unit))


def with_unit(series_name: str, unit: str | None) -> str:
    """``hake landings (t)`` on one line: the unit once, after the name (for labels)."""
    if not unit or series_name.rstrip().endswith((f"({unit})", f"[{unit}]")):
        return series_name
    return f"{series_name} ({unit})"


#: Longest line of a vertical axis title (characters), about 220 px at the charts' 13 px font.
AXIS_TITLE_CHARS = 30


def wrap_title(text: str, width: int = AXIS_TITLE_CHARS) -> str:
    """``text`` broken with ``<br>`` into lines of at most ``width`` characters where it can be.

    Breaks go after a space, ``_`` or ``-`` (kept at the end of the line); a piece longer than
    ``width`` with none of them stays whole.
    """
    if len(text) <= width:
        return text
    pieces = re.findall(r"[^ _-]*[ _-]?", text)
    lines: list[str] = []
    line = ""
    for piece in (p for p in pieces if p):
        if line and len(line) + len(piece.rstrip()) > width:
            lines.append(line.rstrip())
            line = ""
        line += piece
    if line:
        lines.append(line.rstrip())
    return "<br>".join(lines)


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

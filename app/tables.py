"""Table rows and table components for the Model Bench and the Forecast Board."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from dash import dash_table, html
from dash.dash_table.Format import Format, Scheme, Symbol

import forecasting_core as fc
from app import wording
from app.ui import FONT_FAMILY, PALETTE, fmt_number, html_table


def _num(x: Any) -> float | None:
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return None if math.isnan(v) or math.isinf(v) else v


def candidate_rows(comparison: fc.Comparison) -> list[dict[str, Any]]:
    """Rows of the candidates table (``id`` is the label; rejected ones last, with reasons)."""
    return [
        {
            "id": c.label,
            "model": c.label,
            "aicc": _num(c.aicc),
            "delta": _num(c.delta_aicc),
            "weight": _num(c.weight),
            "bic": _num(c.bic),
            "status": "ok" if c.ok else f"rejected: {c.reason or 'no reason given'}",
        }
        for c in comparison.candidates
    ]


def skill_rows(comparison: fc.Comparison) -> list[dict[str, Any]]:
    """Rows of the hindcast skill table, one per model replayed."""
    if comparison.hindcast is None:
        return []
    # every other model on the origins where the chosen one also forecast (as the verdict)
    return [
        {
            "id": s.model,
            "model": s.model,
            "kind": "ARIMA" if s.kind == "arima" else "benchmark",
            "origins": s.origins,
            "mae": _num(s.mae),
            "rmse": _num(s.rmse),
            "mase": _num(s.mase),
            "cov80": _num(s.coverage80),
            "cov95": _num(s.coverage95),
            "is80": _num(s.interval_score80),
            "is95": _num(s.interval_score95),
        }
        for s in comparison.hindcast.beside()
    ]


def _fixed(digits: int) -> Format:
    return Format(precision=digits, scheme=Scheme.fixed).group(True)


def _table_style(**extra: Any) -> dict[str, Any]:
    return {
        "style_table": {"overflowX": "auto"},
        "style_cell": {
            "fontFamily": FONT_FAMILY,
            "fontSize": "0.92rem",
            "padding": "6px 10px",
            "textAlign": "right",
            "border": "none",
            "borderBottom": f"1px solid {PALETTE['line']}",
        },
        "style_header": {
            "fontFamily": FONT_FAMILY,
            "backgroundColor": "#efe8da",
            "color": PALETTE["deep"],
            "fontWeight": 700,
            "borderBottom": f"2px solid {PALETTE['line']}",
            "whiteSpace": "normal",
            "height": "auto",
        },
        "style_cell_conditional": [
            *({"if": {"column_id": c}, "textAlign": "left"} for c in ("model", "status", "kind")),
            {
                "if": {"column_id": "status"},
                "whiteSpace": "normal",
                "minWidth": "9rem",
                "maxWidth": "22rem",
            },
            {"if": {"column_id": "model"}, "whiteSpace": "nowrap"},
        ],
        **extra,
    }


def candidate_styles(picked: str | None) -> list[dict[str, Any]]:
    """Row styles of the candidates table: rejected rows muted, the picked row tinted."""
    styles: list[dict[str, Any]] = [
        {
            "if": {"filter_query": '{status} != "ok"'},
            "color": PALETTE["muted"],
            "fontStyle": "italic",
        },
        {
            "if": {"state": "selected"},
            "backgroundColor": "inherit",
            "border": "none",
            "borderBottom": f"1px solid {PALETTE['line']}",
        },
    ]
    if picked:
        quoted = picked.replace("\\", "\\\\").replace('"', '\\"')
        styles.append(
            {
                "if": {"filter_query": f'{{id}} = "{quoted}"'},
                "backgroundColor": PALETTE["foam"],
                "fontWeight": 600,
            }
        )
    return styles


def candidates_table() -> dash_table.DataTable:
    columns = [
        {"name": "Model", "id": "model"},
        {"name": "AICc", "id": "aicc", "type": "numeric", "format": _fixed(2)},
        {"name": "\u0394 AICc", "id": "delta", "type": "numeric", "format": _fixed(2)},
        {"name": "Weight", "id": "weight", "type": "numeric", "format": _fixed(3)},
        {"name": "BIC", "id": "bic", "type": "numeric", "format": _fixed(2)},
        {"name": "Status", "id": "status"},
    ]
    return dash_table.DataTable(
        id="bench-candidates",
        columns=columns,
        data=[],
        row_selectable="single",
        sort_action="native",
        page_action="native",
        page_size=12,
        selected_row_ids=[],
        tooltip_delay=0,
        tooltip_duration=None,
        **_table_style(
            style_data_conditional=candidate_styles(None),
        ),
    )


def skill_table() -> html.Div:
    """The hindcast skill table (id ``bench-skill``) with the note on MAE and RMSE below it."""
    pct = Format(precision=0, scheme=Scheme.fixed, symbol=Symbol.yes, symbol_suffix="%")
    columns = [
        {"name": "Model", "id": "model"},
        {"name": "Kind", "id": "kind"},
        {"name": "Origins", "id": "origins", "type": "numeric", "format": _fixed(0)},
        {"name": "MAE", "id": "mae", "type": "numeric", "format": _fixed(1)},
        {"name": "RMSE", "id": "rmse", "type": "numeric", "format": _fixed(1)},
        {"name": "MASE", "id": "mase", "type": "numeric", "format": _fixed(3)},
        {"name": "80% coverage", "id": "cov80", "type": "numeric", "format": pct},
        {"name": "95% coverage", "id": "cov95", "type": "numeric", "format": pct},
        {"name": "Interval score 80%", "id": "is80", "type": "numeric", "format": _fixed(1)},
        {"name": "Interval score 95%", "id": "is95", "type": "numeric", "format": _fixed(1)},
    ]
    style = _table_style()
    # ten columns in a card of about 850 px at 1440 px: smaller type, tighter cells and the
    # numeric headings wrapped onto two lines make it fit (it scrolls sideways when not)
    style["style_cell"] = {**style["style_cell"], "fontSize": "0.86rem", "padding": "5px 5px"}
    style["style_header"] = {**style["style_header"], "fontSize": "0.84rem"}
    style["style_cell_conditional"] = [
        *style["style_cell_conditional"],
        {
            "if": {"column_id": "model"},
            "whiteSpace": "normal",
            "minWidth": "7rem",
            "maxWidth": "10rem",
        },
    ]
    style["style_header_conditional"] = [
        {"if": {"column_id": c["id"]}, "maxWidth": "5rem", "minWidth": "3rem"}
        for c in columns
        if c.get("type") == "numeric"
    ]
    style["style_table"] = {"overflowX": "auto", "maxWidth": "100%"}
    table = dash_table.DataTable(
        id="bench-skill",
        columns=columns,
        data=[],
        sort_action="native",
        tooltip_header={"mae": wording.MAE_TIP, "rmse": wording.RMSE_TIP},
        tooltip_delay=0,
        tooltip_duration=None,
        **style,
    )
    return html.Div(
        [table, html.P(wording.MAE_RMSE_NOTE, className="hc-figure-note", id="bench-skill-note")],
        className="hc-skill-wrap",
    )


def table_decimals(values: Any) -> int:
    """One number of decimals for a whole table, from the size of its typical value.

    0 from 100 up (tonnes), 1 from 10, 2 from 1, 3 below (indices, anomalies in deg C).
    """
    arr = np.abs(np.asarray(values, dtype=float))
    arr = arr[np.isfinite(arr)]
    typical = float(np.median(arr)) if arr.size else 0.0
    return 0 if typical >= 100 else 1 if typical >= 10 else 2 if typical >= 1 else 3


def forecast_rows(forecast: fc.Forecast) -> list[dict[str, Any]]:
    """Rows of the on-page forecast table (values formatted, ranges as 'low - high')."""
    decimals = table_decimals(forecast.table["median"])

    def num(value: Any) -> str:
        v = float(value)
        return "" if not math.isfinite(v) else f"{v:,.{decimals}f}"

    rows = []
    for _, r in forecast.table.iterrows():
        row = {
            "time": str(r["time"]),
            "mean": num(r["mean"]),
            "median": num(r["median"]),
        }
        for lv in forecast.levels:
            row[f"r{lv}"] = f"{num(r[f'lo{lv}'])} \u2013 {num(r[f'hi{lv}'])}"
        if forecast.reference is not None:
            row["below"] = wording.fmt_chance(float(r["prob_below_reference"]))
        rows.append(row)
    return rows


def forecast_table(forecast: fc.Forecast, unit: str | None) -> html.Table:
    u = f" ({unit})" if unit else ""
    columns = [("time", "Period"), ("mean", f"Expected{u}"), ("median", f"Median{u}")]
    columns += [(f"r{lv}", f"{lv}% range") for lv in forecast.levels]
    if forecast.reference is not None:
        columns.append(("below", f"Chance below {fmt_number(forecast.reference)}"))
    return html_table(
        forecast_rows(forecast),
        columns,
        id="board-table-rows",
        numeric=[k for k, _ in columns if k != "time"],
    )


def benchmark_panel(comparison: fc.Comparison) -> Any:
    """The benchmarks with their hindcast MASE and how the best ARIMA compares.

    Each benchmark is scored on the origins where the best ARIMA's refit also gave a forecast
    (the pair of :meth:`forecasting_core.Hindcast.versus`), so its MASE and the "x% better"
    are the numbers the hindcast verdict compares; a note says over how many origins.
    """
    hc = comparison.hindcast
    best_label = comparison.best.label
    best = hc.score(best_label) if hc else None
    rows = []
    counts: set[int] = set()
    for b in comparison.benchmarks:
        pair = hc.versus(b.label, best_label) if hc is not None and best is not None else None
        if pair is not None and pair[0].forecasts:
            mine, score = pair
            counts.add(score.origins)
        else:
            mine, score = best, (hc.score(b.label) if hc else None)
        mase = score.mase if score else math.nan
        if mine is not None and score is not None and not math.isnan(mine.mase) and score.mase:
            change = 1.0 - mine.mase / score.mase
            vs = f"{abs(change) * 100:.0f}% {'better' if change > 0 else 'worse'}"
        else:
            vs = "\u2014"
        rows.append({"bench": b.label, "mase": "" if math.isnan(mase) else f"{mase:.3f}", "vs": vs})
    notes = ["MASE below 1: better than the in-sample last-value forecast."]
    if hc is not None and counts:
        total = len(hc.origins)
        k = max(counts) if len(counts) == 1 else None
        if k == total:
            notes.append(f"Scored over all {total} hindcast origins.")
        else:
            shown = (
                f"{k} of {total}" if k is not None else f"{min(counts)} to {max(counts)} of {total}"
            )
            notes.append(
                f"Scored on the {shown} hindcast origins where {best_label} and the benchmark "
                "both gave a forecast, the same origins as the verdict."
            )
    return [
        html_table(
            rows,
            [("bench", "Benchmark"), ("mase", "MASE"), ("vs", "Best ARIMA is")],
            numeric=("mase", "vs"),
        ),
        html.P(" ".join(notes), className="hc-figure-note"),
    ]

"""Pieces of the standalone HTML report (:func:`app.export.report_html`): its style sheet, the
escaped tables built from core results and the saved-analysis block.

Every string that reaches the HTML goes through :func:`html.escape`.
"""

from __future__ import annotations

import datetime as _dt
import html
import math
from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import Any

import pandas as pd

from app.tables import table_decimals
from forecasting_core import Comparison, Forecast


def when(iso: Any) -> str:
    """An ISO 8601 UTC time as ``2026-12-01 21:04 UTC`` (the text itself when unreadable)."""
    if not iso:
        return ""
    try:
        moment = _dt.datetime.fromisoformat(str(iso).replace("Z", "+00:00"))
    except ValueError:
        return str(iso)
    if moment.tzinfo is not None:
        moment = moment.astimezone(_dt.UTC)
    return moment.strftime("%Y-%m-%d %H:%M UTC")


REPORT_CSS = """
body { font-family: 'Segoe UI', 'Noto Sans', 'DejaVu Sans', 'Helvetica Neue', Arial, sans-serif; color: #24313d;
       margin: 0; background: #f4f6f8; }
main { max-width: 1040px; margin: 0 auto; padding: 24px 32px 48px; background: #fff; }
h1 { font-size: 26px; margin: 8px 0 4px; color: #0a4f5d; }
h2 { font-size: 18px; margin: 28px 0 8px; border-bottom: 2px solid #e3e8ec; padding-bottom: 4px; }
.sub { color: #6b7783; margin: 0 0 16px; }
.summary p { font-size: 17px; line-height: 1.5; margin: 6px 0; }
.cautions { border-left: 5px solid #d0573f; background: #fbf0ed; padding: 10px 16px;
            margin: 16px 0; }
.cautions p { margin: 6px 0; }
table { border-collapse: collapse; font-size: 13px; margin: 8px 0; }
th, td { border-bottom: 1px solid #e3e8ec; padding: 4px 10px; text-align: right; }
th { background: #f4f6f8; }
td.l, th.l { text-align: left; }
.meta td { text-align: left; }
code { font-size: 12px; }
.analysis { background: #f4f6f8; padding: 8px 16px; margin: 12px 0; }
.signoffs li { margin: 4px 0; }
.record .headline { font-size: 16px; line-height: 1.5; }
.record .caveat { border-left: 5px solid #c98a1b; background: #fdf6e8; padding: 6px 12px; }
.record-table tr.first td { border-top: 2px solid #c9d2d9; }
.record-table td.muted, .note { color: #6b7783; }
.note { font-size: 12px; }
th[title] { cursor: help; }
h3 { font-size: 15px; margin: 16px 0 6px; }
td.in { color: #2d6a3e; }
td.out { color: #b0402c; font-weight: 600; }
"""


def td(value: Any, left: bool = False) -> str:
    cls = ' class="l"' if left else ""
    return f"<td{cls}>{html.escape(str(value))}</td>"


def num(x: Any, digits: int = 4) -> str:
    try:
        v = float(x)
    except (TypeError, ValueError):
        return str(x)
    if math.isnan(v):
        return ""
    return f"{v:,.{digits}g}" if abs(v) < 1e5 else f"{v:,.0f}"


def table_html(frame: pd.DataFrame, left_cols: Sequence[str] = ()) -> str:
    head = "".join(
        f'<th class="l">{html.escape(str(c))}</th>'
        if c in left_cols
        else f"<th>{html.escape(str(c))}</th>"
        for c in frame.columns
    )
    rows = []
    for _, r in frame.iterrows():
        cells = "".join(
            td(r[c], left=True)
            if c in left_cols
            else td(num(r[c]) if not isinstance(r[c], str) else r[c])
            for c in frame.columns
        )
        rows.append(f"<tr>{cells}</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>"


def forecast_frame(forecast: Forecast) -> pd.DataFrame:
    t = forecast.table
    out = pd.DataFrame(
        {"period": [str(x) for x in t["time"]], "expected": t["mean"], "median": t["median"]}
    )
    for lv in forecast.levels:
        out[f"{lv}% low"] = t[f"lo{lv}"]
        out[f"{lv}% high"] = t[f"hi{lv}"]
    if forecast.reference is not None:
        out["chance below reference"] = [
            f"{100 * float(p):.1f}%" for p in t["prob_below_reference"]
        ]
    return out


def beside(comparison: Comparison | None, model: str) -> Comparison | None:
    """``comparison`` with its hindcast scores set beside ``model`` (see ``Hindcast.beside``)."""
    hc = comparison.hindcast if comparison is not None else None
    if hc is None or hc.score(model) is None:
        return comparison
    return replace(comparison, hindcast=replace(hc, scores=hc.beside(model)))


def column(values: Sequence[Any], decimals: int | None = None) -> list[str]:
    """One column's numbers with one number of decimals (from :func:`table_decimals`)."""
    nums = []
    for v in values:
        try:
            nums.append(float(v))
        except (TypeError, ValueError):
            nums.append(math.nan)
    d = table_decimals(nums) if decimals is None else decimals
    return ["" if not math.isfinite(v) else f"{v:,.{d}f}" for v in nums]


def skill_frame(comparison: Comparison, model: str | None = None) -> pd.DataFrame | None:
    """The hindcast skill table beside ``model``: the others on the origins it forecast."""
    hc = comparison.hindcast
    if hc is None:
        return None
    scores = hc.beside(model if model is not None and hc.score(model) else None)
    out = pd.DataFrame({"model": [s.model for s in scores]})
    out["origins"] = [str(s.origins) for s in scores]
    out["MAE"] = column([s.mae for s in scores])
    out["RMSE"] = column([s.rmse for s in scores])
    out["MASE"] = column([s.mase for s in scores], 3)
    out["80% coverage"] = [f"{s.coverage80:.0f}%" for s in scores]
    out["95% coverage"] = [f"{s.coverage95:.0f}%" for s in scores]
    out["interval score (95%)"] = column([s.interval_score95 for s in scores])
    return out


def candidates_frame(comparison: Comparison, limit: int = 10) -> pd.DataFrame:
    shown = comparison.accepted[:limit]
    out = pd.DataFrame({"model": [c.label for c in shown]})
    out["AICc"] = column([c.aicc for c in shown], 2)
    out["delta AICc"] = column([c.delta_aicc for c in shown], 2)
    out["weight"] = column([c.weight for c in shown], 3)
    out["BIC"] = column([c.bic for c in shown], 2)
    return out


def meta_table(pairs: Mapping[str, Any]) -> str:
    rows = "".join(
        f"<tr><th class='l'>{html.escape(str(k))}</th>{td(v, left=True)}</tr>"
        for k, v in pairs.items()
    )
    return f'<table class="meta"><tbody>{rows}</tbody></table>'


def analysis_html(analysis: Mapping[str, Any]) -> str:
    """The saved analysis block of the report: what it is, then the dated sign-offs."""
    e = html.escape
    status = str(analysis.get("status") or "draft")
    state = (
        f"published {when(analysis.get('published_at'))}"
        if status == "published"
        else "draft, not published"
    )
    title = analysis.get("title") or analysis.get("series") or ""
    parts = [
        "<section class='analysis'>",
        f"<p><strong>Saved analysis:</strong> {e(str(title))} &middot; version "
        f"{e(str(analysis.get('version', '')))} &middot; season {e(str(analysis.get('season') or ''))}"
        f" &middot; {e(state)} &middot; saved by {e(str(analysis.get('author') or ''))} "
        f"{e(when(analysis.get('created_at')))}</p>",
        f"<p class='sub'>Analysis id <code>{e(str(analysis.get('id', '')))}</code></p>",
    ]
    signoffs = list(analysis.get("signoffs") or ())
    if status == "published":
        parts.append("<h2>Sign-offs</h2>")
        if signoffs:
            items = "".join(
                f"<li>{e(when(s.get('signed_at')))} &mdash; <strong>{e(str(s.get('name', '')))}</strong>"
                + (f" ({e(str(s.get('role')))})" if s.get("role") else "")
                + (f": {e(str(s.get('note')))}" if s.get("note") else "")
                + "</li>"
                for s in signoffs
            )
            parts.append(f"<ol class='signoffs'>{items}</ol>")
        else:
            parts.append("<p>No sign-offs yet.</p>")
    parts.append("</section>")
    return "".join(parts)

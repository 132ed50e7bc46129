"""The forecast record as plain rows and as static HTML (no Dash, no JavaScript).

:func:`table_rows` formats the record table once for both places it appears: the board's panel
(:mod:`app.record_views`, which turns the inside/outside flags into marks) and the HTML report
(:func:`record_html`, every string escaped).
"""

from __future__ import annotations

import html
import math
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

import pandas as pd

import forecasting_core as fc
from app.wording import MISS, MISS_PCT, MISS_PCT_TIP, MISS_TIP, RECORD_FOOTNOTE, mase_words

__all__ = ["columns", "record_html", "table_rows"]

_PERIOD = {"annual": "year", "quarterly": "quarter", "monthly": "month"}


def _decimals(values: Iterable[float]) -> int:
    vals = [abs(float(v)) for v in values if v is not None and math.isfinite(float(v))]
    typical = sorted(vals)[len(vals) // 2] if vals else 0.0
    return 0 if typical >= 100 else 1 if typical >= 10 else 2 if typical >= 1 else 3


def _float(v: Any) -> float:
    return float(v) if v is not None and not pd.isna(v) else math.nan


def table_rows(record: fc.ForecastRecord) -> list[dict[str, Any]]:
    """One row per period of every past forecast, its numbers as text.

    Returns
    -------
    list of dict
        ``forecast`` (the name, on a forecast's first row only), ``first`` (True on each
        forecast's first row), ``time``, ``median``, ``status`` (``scored``, ``pending`` or
        ``missing``); for scored rows ``actual``, ``in{level}`` (True, False or None),
        ``error`` and ``pct`` (signed, with a true minus sign); for the others ``note``
        ("not yet realised" or "no value in this data"). Numbers carry one number of decimals
        for the whole table (from the typical median).
    """
    frame = record.to_frame()
    if not len(frame):
        return []
    decimals = _decimals(frame["median"])

    def num(v: Any) -> str:
        v = _float(v)
        return f"{v:,.{decimals}f}" if math.isfinite(v) else ""

    def signed(v: Any, fmt: str) -> str:
        v = _float(v)
        return format(v, fmt).replace("-", "\u2212") if math.isfinite(v) else ""

    out = []
    previous = None
    for r in frame.to_dict("records"):
        first = r["forecast"] != previous
        previous = r["forecast"]
        row: dict[str, Any] = {
            "forecast": r["forecast"] if first else "",
            "first": first,
            "time": str(r["time"]),
            "median": num(r["median"]),
            "status": r["status"],
        }
        if r["status"] == "scored":
            row["actual"] = num(r["actual"])
            for lv in record.levels:
                value = r.get(f"inside{lv}")
                row[f"in{lv}"] = None if value is None or pd.isna(value) else bool(value)
            row["error"] = signed(r["error"], f"+,.{decimals}f")
            pct = signed(r["pct_error"], "+.0f")
            row["pct"] = f"{pct}%" if pct else ""
        else:
            row["note"] = (
                "not yet realised" if r["status"] == "pending" else "no value in this data"
            )
        out.append(row)
    return out


def columns(record: fc.ForecastRecord) -> list[tuple[str, str, str | None]]:
    """The record table's columns: (key, heading, tooltip or None)."""
    out: list[tuple[str, str, str | None]] = []
    if len(record.forecasts) != 1:  # one past forecast: its name is in the list below
        out.append(("forecast", "Past forecast", None))
    out += [("time", "Period", None), ("actual", "Realised", None)]
    out.append(("median", "Median forecast", None))
    out += [(f"in{lv}", f"{lv}% band", None) for lv in record.levels]
    out += [("error", MISS, MISS_TIP), ("pct", MISS_PCT, MISS_PCT_TIP)]
    return out


def coverage_lines(record: fc.ForecastRecord) -> list[str]:
    """The panel's cards as sentences: inside each band, the MASE in words, what was scored."""
    lines = []
    for lv in sorted(record.levels, key=lambda v: (v != 80, -v)):
        k, n = record.inside.get(lv, 0), record.scored_by_level.get(lv, 0)
        if n:
            lines.append(f"Inside the {lv}% band: {k} of {n} ({lv}% expected).")
    if not math.isnan(record.mase):
        words = mase_words(record.mase, record.frequency)
        lines.append(f"MASE of past forecasts: {record.mase:.2f}, {words} before each forecast.")
    n = record.periods_scored
    one = _PERIOD.get(record.frequency, "period")
    k = record.forecasts_scored
    lines.append(
        f"Scored: {n} {one if n == 1 else one + 's'} from {k} past forecast{'' if k == 1 else 's'}."
    )
    return lines


def record_lines(record: fc.ForecastRecord, scored_on: str = "", newer: bool = False) -> list[str]:
    """The record as plain lines for the CSV's ``# record:`` lines, as the report says it.

    The lead (which forecasts, against which data), the headline, the caveat when there is
    one, then :func:`coverage_lines` (inside each band, the MASE in words, what was scored).
    """
    lines = [record_lead(record, scored_on, newer), record.headline()]
    if record.caveat:
        lines.append(f"Read with care: {record.caveat}")
    return lines + coverage_lines(record)


def _source_line(analysis: Mapping[str, Any], past: fc.PastForecastScore) -> str:
    when = str(analysis.get("published_at") or "")[:10]
    who = analysis.get("published_by") or analysis.get("author") or ""
    text = f"{past.label}: {past.model}, data to {past.origin}, published {when} by {who}"
    signed = "; ".join(
        f"signed off by {s.get('name', '')} ({s.get('role', '')})"
        for s in analysis.get("signoffs") or ()
    )
    return text + (f"; {signed}" if signed else "") + "."


def record_lead(record: fc.ForecastRecord, scored_on: str = "", newer: bool = False) -> str:
    """The panel's lead: which forecasts are scored, and against which data."""
    if newer and scored_on:
        return (
            f"Forecasts published for {record.series_name} from data that ended before "
            f"{record.last_observed}, scored against the newest data on the server for this "
            f"series: {scored_on}, not the dataset on this board."
        )
    where = f" ({scored_on})" if scored_on else ""
    return (
        f"Forecasts published earlier for {record.series_name}, made from data that ended "
        f"before this dataset's last value ({record.last_observed}), against what was "
        f"then observed here{where}."
    )


def record_html(
    record: fc.ForecastRecord,
    analyses: Sequence[Mapping[str, Any]] = (),
    *,
    scored_on: str = "",
    newer: bool = False,
) -> str:
    """The "How past forecasts did" section of the HTML report.

    Parameters
    ----------
    record : ForecastRecord
        The scored record (see :func:`app.record_views.record_data`).
    analyses : sequence of Mapping, optional
        ``Analysis.to_dict()`` of the published analyses behind ``record.forecasts`` (same
        order), for who published and signed off each.
    scored_on : str, optional
        The dataset scored against (``RecordData.scored_on``), named in the lead.
    newer : bool, optional
        Whether that dataset has newer values than the one the report is made from.

    Returns
    -------
    str
        An HTML fragment: heading, lead, headline, caveat, the cards as lines, the table with
        its footnote, the forecasts scored, the record's warnings and a caution. Every string
        from the data or a user is escaped.
    """
    e = html.escape
    parts = [
        "<section class='record'>",
        "<h2>How past forecasts did</h2>",
        f"<p class='sub'>{e(record_lead(record, scored_on, newer))}</p>",
        f"<p class='headline'>{e(record.headline())}</p>",
    ]
    if record.caveat:
        parts.append(f"<p class='caveat'><strong>Read with care:</strong> {e(record.caveat)}</p>")
    parts.append("<ul class='record-lines'>")
    parts += [f"<li>{e(line)}</li>" for line in coverage_lines(record)]
    parts.append("</ul>")
    cols = columns(record)
    head = "".join(
        f"<th class='l'>{e(h)}</th>"
        if key in ("forecast", "time")
        else (f"<th title='{e(tip)}'>{e(h)}&thinsp;*</th>" if tip else f"<th>{e(h)}</th>")
        for key, h, tip in cols
    )
    body = []
    for row in table_rows(record):
        cells = []
        for key, _h, _tip in cols:
            if key in ("forecast", "time"):
                cells.append(f"<td class='l'>{e(str(row.get(key, '')))}</td>")
            elif key == "actual" and row["status"] != "scored":
                cells.append(f"<td class='muted'>{e(row['note'])}</td>")
            elif key.startswith("in"):
                flag = row.get(key)
                if flag is None:
                    cells.append("<td></td>")
                else:  # a mark and a word, not only colour
                    cls, word = ("in", "\u2714 inside") if flag else ("out", "\u2716 outside")
                    cells.append(f"<td class='{cls}'>{e(word)}</td>")
            else:
                cells.append(f"<td>{e(str(row.get(key, '')))}</td>")
        cls = " class='first'" if row["first"] and body else ""
        body.append(f"<tr{cls}>{''.join(cells)}</tr>")
    parts.append(
        f"<table class='record-table'><thead><tr>{head}</tr></thead>"
        f"<tbody>{''.join(body)}</tbody></table>"
    )
    parts.append(f"<p class='note'>* {e(RECORD_FOOTNOTE)}</p>")
    if analyses:
        parts.append("<h3>Past forecasts scored</h3><ul class='record-sources'>")
        parts += [
            f"<li>{e(_source_line(a, past))}</li>"
            for a, past in zip(analyses, record.forecasts, strict=True)
        ]
        parts.append("</ul>")
    parts += [f"<p class='note'>{e(w)}</p>" for w in record.warnings]
    parts.append(
        "<p class='note'>A good record does not promise a good forecast this time: it says how "
        "the bands held before, and changes in fishing effort, regulation or reporting can "
        "break the pattern.</p>"
    )
    parts.append("</section>")
    return "".join(parts)

"""Exports from the Forecast Board: forecast CSV and a standalone HTML report.

Both are pure functions of core results, so they can be tested without a browser. The CSV
is safe to open in a spreadsheet (no cell is ever run as a formula); the report opens
offline (plotly.js is inlined once) and escapes every user-supplied string.
"""

from __future__ import annotations

import csv
import datetime as _dt
import html
import io
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import replace
from importlib import metadata
from typing import Any

import pandas as pd
import plotly.graph_objects as go

from app.figures import graph_config
from app.tables import table_decimals
from app.wording import forecast_summary, hindcast_sentence, residual_report
from forecasting_core import CAUTIONS, Comparison, Forecast, time_label

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NEGATIVE = re.compile(r"^-(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


def neutralise_cell(value: Any) -> Any:
    """Make one CSV cell safe for spreadsheets.

    A text cell starting with ``=``, ``+``, ``-``, ``@`` (or a tab / carriage return) gets a
    leading single quote so a spreadsheet shows it as text instead of running it as a
    formula; plain negative numbers such as ``-2.5`` stay as they are (common practice,
    after the OWASP guidance on CSV injection).

    Parameters
    ----------
    value : Any
        Cell value; non-strings pass through unchanged.
    """
    if not isinstance(value, str) or not value:
        return value
    if value.startswith(_FORMULA_START) and not _PLAIN_NEGATIVE.match(value):
        return "'" + value
    return value


def _one_line(text: Any) -> str:
    return re.sub(r"\s+", " ", str(text)).strip()


def _comment_line(text: str) -> str:
    """``# text`` on one physical line that no spreadsheet runs as a formula.

    The text keeps its commas (``pandas.read_csv(comment="#")`` skips the whole line), so a
    spreadsheet may split it into cells; every piece after a comma is neutralised like a cell.
    Double quotes become single quotes so no quoted field can open.
    """
    pieces = _one_line(text).replace('"', "'").split(",")
    safe = [pieces[0]] + [
        (" '" + p.lstrip())
        if p.lstrip().startswith(_FORMULA_START) and not _PLAIN_NEGATIVE.match(p.strip())
        else p
        for p in pieces[1:]
    ]
    return "# " + ",".join(safe)


def package_versions() -> dict[str, str]:
    """Versions of the packages that produce a forecast (for exports)."""
    out: dict[str, str] = {}
    for name in ("haulcast", "numpy", "pandas", "scipy", "statsmodels", "dash", "plotly"):
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            continue
    return out


def _now() -> str:
    return _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%d %H:%M UTC")


def _when(iso: Any) -> str:
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


def analysis_lines(analysis: Mapping[str, Any]) -> list[str]:
    """A saved analysis as plain lines for exports: what it is, its status and every sign-off.

    Parameters
    ----------
    analysis : Mapping
        ``Analysis.to_dict()`` from the store: ``id, version, title, season, status, author,
        created_at, published_at, signoffs`` (each ``name, role, note, signed_at``).

    Returns
    -------
    list of str
        ``analysis: ...``, ``analysis id: ...``, ``status: ...`` and one ``sign-off: ...`` line
        per sign-off, oldest first (``sign-offs: none`` when there are none).
    """
    status = str(analysis.get("status") or "draft")
    if status == "published":
        state = f"published {_when(analysis.get('published_at'))}".strip()
    else:
        state = "draft, not published"
    lines = [
        f"analysis: {analysis.get('title') or analysis.get('series') or ''}",
        f"analysis id: {analysis.get('id', '')}",
        f"analysis version: {analysis.get('version', '')}",
        f"season: {analysis.get('season') or ''}",
        f"status: {state}",
        f"saved by: {analysis.get('author') or ''}, {_when(analysis.get('created_at'))}",
    ]
    signoffs = list(analysis.get("signoffs") or ())
    if status == "published" and not signoffs:
        lines.append("sign-offs: none")
    for s in signoffs:
        role = f" ({s.get('role')})" if s.get("role") else ""
        note = f": {s.get('note')}" if s.get("note") else ""
        lines.append(f"sign-off: {_when(s.get('signed_at'))}, {s.get('name', '')}{role}{note}")
    return lines


def export_meta(
    forecast: Forecast,
    comparison: Comparison | None = None,
    *,
    unit: str | None = None,
    dataset_hash: str | None = None,
    dataset_name: str | None = None,
) -> dict[str, Any]:
    """What produced a forecast, as ordered label -> value pairs for exports."""
    meta: dict[str, Any] = {
        "series": forecast.series_name,
        "unit": unit or "",
        "dataset": dataset_name or "",
        "data sha256": dataset_hash
        or (
            str(comparison.provenance.get("data_sha256", comparison.provenance.get("sha256", "")))
            if comparison is not None
            else ""
        ),
        "model": forecast.model,
        "transform": forecast.transform.name
        + (f" (lambda {forecast.transform.lam:.3g})" if forecast.transform.lam is not None else ""),
        "band source": forecast.band_source,
        "band levels": ", ".join(f"{lv}%" for lv in forecast.levels),
        "reference level": "" if forecast.reference is None else f"{forecast.reference:g}",
        "generated": _now(),
    }
    return meta


def forecast_csv(
    forecast: Forecast,
    comparison: Comparison | None = None,
    *,
    unit: str | None = None,
    dataset_hash: str | None = None,
    dataset_name: str | None = None,
    analysis: Mapping[str, Any] | None = None,
) -> str:
    """The forecast table as CSV text with a commented header.

    The header lines start with ``#`` (``pandas.read_csv(..., comment="#")`` skips them):
    what produced the forecast, the saved analysis and its sign-offs when ``analysis`` is
    given (see :func:`analysis_lines`), then every caution. Then one row per step: ``time, step,
    mean, median, lo{level}, hi{level}, ..., prob_below_reference`` (probability 0..1, empty
    without a reference level). Every cell goes through :func:`neutralise_cell`.

    Returns
    -------
    str
        CSV text (``\\r\\n`` line ends, as the csv module writes them).
    """
    buf = io.StringIO()
    meta = export_meta(
        forecast, comparison, unit=unit, dataset_hash=dataset_hash, dataset_name=dataset_name
    )
    header = ["Haulcast forecast"]
    header += [f"{key}: {value}" for key, value in meta.items() if value != ""]
    if analysis is not None:
        header += analysis_lines(analysis)
    header += [f"caution: {c}" for c in (forecast.cautions or CAUTIONS)]
    for line in header:
        buf.write(_comment_line(line) + "\r\n")
    writer = csv.writer(buf)
    columns = ["time", "step", "mean", "median"]
    for lv in forecast.levels:
        columns += [f"lo{lv}", f"hi{lv}"]
    columns.append("prob_below_reference")
    writer.writerow(columns)
    table = forecast.table
    for _, row in table.iterrows():
        cells: list[Any] = []
        for col in columns:
            value = row.get(col)
            if col == "prob_below_reference" and forecast.reference is None:
                value = ""
            elif isinstance(value, float) and math.isnan(value):
                value = ""
            elif col == "prob_below_reference":
                value = round(float(value), 4)
            elif isinstance(value, float):
                value = float(f"{value:.6g}")
            elif col == "time":
                value = time_label(value) if isinstance(value, pd.Period) else str(value)
            elif col == "step":
                value = int(value)
            cells.append(neutralise_cell(value if not isinstance(value, str) else _one_line(value)))
        writer.writerow(cells)
    return buf.getvalue()


# ---------------------------------------------------------------------------------------------
# HTML report
# ---------------------------------------------------------------------------------------------

_REPORT_CSS = """
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
"""


def _td(value: Any, left: bool = False) -> str:
    cls = ' class="l"' if left else ""
    return f"<td{cls}>{html.escape(str(value))}</td>"


def _num(x: Any, digits: int = 4) -> str:
    try:
        v = float(x)
    except (TypeError, ValueError):
        return str(x)
    if math.isnan(v):
        return ""
    return f"{v:,.{digits}g}" if abs(v) < 1e5 else f"{v:,.0f}"


def _table_html(frame: pd.DataFrame, left_cols: Sequence[str] = ()) -> str:
    head = "".join(
        f'<th class="l">{html.escape(str(c))}</th>'
        if c in left_cols
        else f"<th>{html.escape(str(c))}</th>"
        for c in frame.columns
    )
    rows = []
    for _, r in frame.iterrows():
        cells = "".join(
            _td(r[c], left=True)
            if c in left_cols
            else _td(_num(r[c]) if not isinstance(r[c], str) else r[c])
            for c in frame.columns
        )
        rows.append(f"<tr>{cells}</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>"


def _forecast_frame(forecast: Forecast) -> pd.DataFrame:
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


def _beside(comparison: Comparison | None, model: str) -> Comparison | None:
    """``comparison`` with its hindcast scores set beside ``model`` (see ``Hindcast.beside``)."""
    hc = comparison.hindcast if comparison is not None else None
    if hc is None or hc.score(model) is None:
        return comparison
    return replace(comparison, hindcast=replace(hc, scores=hc.beside(model)))


def _column(values: Sequence[Any], decimals: int | None = None) -> list[str]:
    """One column's numbers with one number of decimals (from :func:`table_decimals`)."""
    nums = []
    for v in values:
        try:
            nums.append(float(v))
        except (TypeError, ValueError):
            nums.append(math.nan)
    d = table_decimals(nums) if decimals is None else decimals
    return ["" if not math.isfinite(v) else f"{v:,.{d}f}" for v in nums]


def _skill_frame(comparison: Comparison, model: str | None = None) -> pd.DataFrame | None:
    """The hindcast skill table beside ``model``: the others on the origins it forecast."""
    hc = comparison.hindcast
    if hc is None:
        return None
    scores = hc.beside(model if model is not None and hc.score(model) else None)
    out = pd.DataFrame({"model": [s.model for s in scores]})
    out["origins"] = [str(s.origins) for s in scores]
    out["MAE"] = _column([s.mae for s in scores])
    out["RMSE"] = _column([s.rmse for s in scores])
    out["MASE"] = _column([s.mase for s in scores], 3)
    out["80% coverage"] = [f"{s.coverage80:.0f}%" for s in scores]
    out["95% coverage"] = [f"{s.coverage95:.0f}%" for s in scores]
    out["interval score (95%)"] = _column([s.interval_score95 for s in scores])
    return out


def _candidates_frame(comparison: Comparison, limit: int = 10) -> pd.DataFrame:
    shown = comparison.accepted[:limit]
    out = pd.DataFrame({"model": [c.label for c in shown]})
    out["AICc"] = _column([c.aicc for c in shown], 2)
    out["delta AICc"] = _column([c.delta_aicc for c in shown], 2)
    out["weight"] = _column([c.weight for c in shown], 3)
    out["BIC"] = _column([c.bic for c in shown], 2)
    return out


_SEARCH_WORDS = {"exhaustive": "every order", "stepwise": "stepwise"}
_PERIOD_WORDS = {"annual": "year", "quarterly": "quarter", "monthly": "month"}


def _transform_words(used: Any) -> str:
    if isinstance(used, Mapping):
        name, lam = str(used.get("name", "")), used.get("lambda")
    else:
        name, lam = str(used or ""), None
    if name == "boxcox":
        return "Box-Cox" + (f" (\u03bb={float(lam):.2f})" if lam is not None else "")
    if name == "log":
        return "log"
    return name or ""


def settings_rows(
    settings: Mapping[str, Any], comparison: Comparison | None = None
) -> dict[str, str]:
    """The settings that produced a comparison as labelled lines a manager can read.

    Program internals (worker count, engine, screening margins, raw dicts) are left out.

    Parameters
    ----------
    settings : Mapping
        ``Comparison.settings`` (the core's keys) or the Model Bench's settings
        (``search, max_p, max_q, seasonal, constant, origins, horizon``).
    comparison : Comparison, optional
        Gives the frequency (for "5 years ahead") and the hindcast's origin count.

    Returns
    -------
    dict
        Label -> plain text, e.g. ``{"Transform": "log (chosen automatically)", ...}``.
    """
    s = dict(settings)
    out: dict[str, str] = {}
    chosen = s.get("transform")
    used = s.get("transform_used")
    if used is None and comparison is not None:
        used = comparison.transform.to_dict()
    if used is not None or chosen:
        text = _transform_words(used if used is not None else chosen)
        out["Transform"] = text + (" (chosen automatically)" if chosen == "auto" else "")
    order = s.get("order")
    if order:
        seasonal_order = s.get("seasonal_order")
        label = f"ARIMA({','.join(str(int(x)) for x in order)})"
        if seasonal_order:
            so = [int(x) for x in seasonal_order]
            label += f"({so[0]},{so[1]},{so[2]})[{so[3]}]"
        out["Model order"] = f"fixed at {label}"
    else:
        search, search_used = s.get("search"), s.get("search_used") or s.get("search")
        if search_used:
            out["Order search"] = _SEARCH_WORDS.get(str(search_used), str(search_used)) + (
                " (chosen automatically)" if search == "auto" and s.get("search_used") else ""
            )
        if s.get("max_p") is not None and s.get("max_q") is not None:
            text = f"p \u2264 {s['max_p']}, q \u2264 {s['max_q']}"
            if s.get("seasonal") and s.get("max_P") is not None:
                text += f"; seasonal P \u2264 {s['max_P']}, Q \u2264 {s.get('max_Q')}"
            out["Orders searched"] = text
        elif "seasonal" in s:
            out["Seasonal terms"] = "searched" if s["seasonal"] else "not searched"
    if s.get("d") is not None:
        how = " (from the stationarity tests)" if s.get("stationarity") else ""
        text = f"d = {s['d']}"
        if s.get("seasonal") or s.get("D"):
            text += f", seasonal D = {s.get('D') or 0}"
        out["Differences"] = text + how
    constant = s.get("constant", "absent")
    constant_words = {
        None: "decided by AICc (fitted with and without)",
        "auto": "decided by AICc (fitted with and without)",
        True: "always included",
        "on": "always included",
        False: "never included",
        "off": "never included",
    }
    if constant != "absent" and constant in constant_words:
        out["Constant or drift"] = constant_words[constant]
    frequency = comparison.frequency if comparison is not None else "annual"
    period = _PERIOD_WORDS.get(frequency, "period")
    if s.get("horizon") is not None:
        h = int(s["horizon"])
        out["Horizon"] = f"{h} {period}{'s' if h != 1 else ''} ahead"
    hc = comparison.hindcast if comparison is not None else None
    if s.get("hindcast") is False and hc is None:
        out["Hindcast"] = "not run"
    else:
        origins = s.get("hindcast_origins", s.get("origins"))
        if hc is not None:
            n = len(hc.origins)
            how = "" if origins is not None else f" (default: the last min(10, n/4) {period}s)"
            out["Hindcast"] = f"{n} origin{'s' if n != 1 else ''}{how}, {hc.method}"
        elif origins is not None:
            out["Hindcast"] = f"{origins} origins"
    if s.get("stationarity"):
        out["Stationarity check"] = str(s["stationarity"])
    return out


def _meta_table(pairs: Mapping[str, Any]) -> str:
    rows = "".join(
        f"<tr><th class='l'>{html.escape(str(k))}</th>{_td(v, left=True)}</tr>"
        for k, v in pairs.items()
    )
    return f'<table class="meta"><tbody>{rows}</tbody></table>'


def _analysis_html(analysis: Mapping[str, Any]) -> str:
    """The saved analysis block of the report: what it is, then the dated sign-offs."""
    e = html.escape
    status = str(analysis.get("status") or "draft")
    state = (
        f"published {_when(analysis.get('published_at'))}"
        if status == "published"
        else "draft, not published"
    )
    title = analysis.get("title") or analysis.get("series") or ""
    parts = [
        "<section class='analysis'>",
        f"<p><strong>Saved analysis:</strong> {e(str(title))} &middot; version "
        f"{e(str(analysis.get('version', '')))} &middot; season {e(str(analysis.get('season') or ''))}"
        f" &middot; {e(state)} &middot; saved by {e(str(analysis.get('author') or ''))} "
        f"{e(_when(analysis.get('created_at')))}</p>",
        f"<p class='sub'>Analysis id <code>{e(str(analysis.get('id', '')))}</code></p>",
    ]
    signoffs = list(analysis.get("signoffs") or ())
    if status == "published":
        parts.append("<h2>Sign-offs</h2>")
        if signoffs:
            items = "".join(
                f"<li>{e(_when(s.get('signed_at')))} &mdash; <strong>{e(str(s.get('name', '')))}</strong>"
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


def report_html(
    forecast: Forecast,
    comparison: Comparison | None = None,
    *,
    figures: Sequence[tuple[str, go.Figure]] = (),
    unit: str | None = None,
    dataset_hash: str | None = None,
    dataset_name: str | None = None,
    settings: Mapping[str, Any] | None = None,
    summary: Sequence[str] | None = None,
    analysis: Mapping[str, Any] | None = None,
) -> str:
    """A standalone HTML report that opens offline.

    Parameters
    ----------
    forecast : Forecast
    comparison : Comparison, optional
        Adds the hindcast skill table, the top candidates and the core's provenance.
    figures : sequence of (str, Figure)
        Headed figures embedded in order; plotly.js is inlined once, with the first.
    unit, dataset_hash, dataset_name : str, optional
    settings : Mapping, optional
        Model Bench settings (default: ``comparison.settings``).
    summary : sequence of str, optional
        Sentences for the top (default: :func:`app.wording.forecast_summary`).
    analysis : Mapping, optional
        The saved analysis this forecast is (``Analysis.to_dict()``): its title, version,
        status and the dated list of sign-offs appear near the top.

    Returns
    -------
    str
        A complete HTML document. Every user-supplied string is escaped.
    """
    e = html.escape
    # the sentences compare the forecast's model with the last value on the origins both forecast
    paired = _beside(comparison, forecast.model)
    sentences = (
        list(summary) if summary is not None else forecast_summary(forecast, paired, unit=unit)
    )
    meta = export_meta(
        forecast, comparison, unit=unit, dataset_hash=dataset_hash, dataset_name=dataset_name
    )
    parts = [
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>",
        f"<title>Haulcast report: {e(forecast.series_name)}</title>",
        f"<style>{_REPORT_CSS}</style></head><body><main>",
        f"<h1>Forecast report: {e(forecast.series_name)}</h1>",
        f"<p class='sub'>Haulcast, generated {e(meta['generated'])} &middot; model {e(forecast.model)}</p>",
        _analysis_html(analysis) if analysis is not None else "",
        "<section class='summary'>" + "".join(f"<p>{e(s)}</p>" for s in sentences) + "</section>",
        "<section class='cautions'><strong>Read before use</strong>"
        + "".join(f"<p>{e(c)}</p>" for c in (forecast.cautions or CAUTIONS))
        + "</section>",
    ]
    first = True
    for heading, fig in figures:
        parts.append(f"<h2>{e(heading)}</h2>")
        parts.append(
            fig.to_html(
                full_html=False,
                include_plotlyjs=first,
                config=graph_config(heading),
                default_width="100%",
            )
        )
        first = False
    parts.append("<h2>Forecast table</h2>")
    parts.append(_table_html(_forecast_frame(forecast), left_cols=("period",)))
    if comparison is not None:
        skill = _skill_frame(comparison, forecast.model)
        if skill is not None:
            parts.append("<h2>Hindcast skill</h2>")
            if comparison.hindcast is not None:
                parts.append(
                    f"<p>{e(forecast.model)}: {e(hindcast_sentence(paired, forecast.model))}</p>"
                )
            parts.append(_table_html(skill, left_cols=("model",)))
        parts.append("<h2>Best candidates by AICc</h2>")
        parts.append(_table_html(_candidates_frame(comparison), left_cols=("model",)))
        diag = residual_report(comparison, forecast.model)
        if diag is not None and diag.verdict:
            parts.append(f"<p>Residual checks ({e(diag.model)}): {e(diag.verdict)}</p>")
    for w in forecast.warnings + (comparison.warnings if comparison is not None else ()):
        parts.append(f"<p><strong>Warning:</strong> {e(w)}</p>")
    parts.append("<h2>What produced this forecast</h2>")
    parts.append(_meta_table({k: v for k, v in meta.items() if v != ""}))
    chosen = (
        dict(settings)
        if settings is not None
        else (dict(comparison.settings) if comparison else {})
    )
    if chosen:
        parts.append("<h2>Settings</h2>")
        parts.append(_meta_table(settings_rows(chosen, comparison)))
    versions = package_versions()
    if comparison is not None:
        for v in dict(comparison.provenance).values():
            if isinstance(v, Mapping):
                versions.update({str(kk): str(vv) for kk, vv in v.items()})
    parts.append("<h2>Package versions</h2>")
    parts.append(_meta_table(versions))
    parts.append("</main></body></html>")
    return "\n".join(parts)

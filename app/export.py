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
from importlib import metadata
from typing import Any

import pandas as pd
import plotly.graph_objects as go

from app.export_settings import settings_rows
from app.figures import graph_config
from app.record_report import record_html, record_lines
from app.report_parts import (
    REPORT_CSS,
    analysis_html,
    beside,
    candidates_frame,
    forecast_frame,
    meta_table,
    skill_frame,
    table_html,
    when,
)
from app.wording import (
    MAE_RMSE_NOTE,
    forecast_summary,
    hindcast_sentence,
    residual_report,
    shown_warning,
    specific_notes,
)
from forecasting_core import CAUTIONS, Comparison, Forecast, ForecastRecord, time_label

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
        state = f"published {when(analysis.get('published_at'))}".strip()
    else:
        state = "draft, not published"
    lines = [
        f"analysis: {analysis.get('title') or analysis.get('series') or ''}",
        f"analysis id: {analysis.get('id', '')}",
        f"analysis version: {analysis.get('version', '')}",
        f"season: {analysis.get('season') or ''}",
        f"status: {state}",
        f"saved by: {analysis.get('author') or ''}, {when(analysis.get('created_at'))}",
    ]
    signoffs = list(analysis.get("signoffs") or ())
    if status == "published" and not signoffs:
        lines.append("sign-offs: none")
    for s in signoffs:
        role = f" ({s.get('role')})" if s.get("role") else ""
        note = f": {s.get('note')}" if s.get("note") else ""
        lines.append(f"sign-off: {when(s.get('signed_at'))}, {s.get('name', '')}{role}{note}")
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
    data: Sequence[str] = (),
    differences: str = "",
    record: ForecastRecord | None = None,
    record_scored_on: str = "",
    record_newer: bool = False,
) -> str:
    """The forecast table as CSV text with a commented header.

    The header lines start with ``#`` (``pandas.read_csv(..., comment="#")`` skips them):
    what produced the forecast, the saved analysis and its sign-offs when ``analysis`` is
    given (see :func:`analysis_lines`), then every caution: the general ones, then those the
    board shows for this forecast (:func:`app.wording.specific_notes`: ``hindcast:``,
    ``caution:``, ``residuals:``, ``warning:`` lines, and ``data:`` lines for ``data``, the
    notes on the series' data from :func:`app.wording.data_notes`); ``differences`` (when given,
    e.g. "d = 0 (set on the Model Bench)") is a ``differences:`` line. With ``record`` (the
    board's forecast record, as the HTML report has it), ``record:`` lines say how past
    forecasts did (:func:`app.record_report.record_lines`). Then one row per step: ``time, step,
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
    if differences:
        # where d (and D) came from: the stationarity tests or the Model Bench
        header.append(f"differences: {differences}")
    if analysis is not None:
        header += analysis_lines(analysis)
    header += [f"caution: {c}" for c in (forecast.cautions or CAUTIONS)]
    # the board's own cautions for this forecast (hindcast, bands, residuals, data warnings)
    header += [f"{kind}: {text}" for kind, text in specific_notes(forecast, comparison, data)]
    if record is not None:
        header += [
            f"record: {line}" for line in record_lines(record, record_scored_on, record_newer)
        ]
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
    record: ForecastRecord | None = None,
    record_analyses: Sequence[Mapping[str, Any]] = (),
    record_scored_on: str = "",
    record_newer: bool = False,
    data: Sequence[str] = (),
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
    record : ForecastRecord, optional
        How earlier published forecasts of this series did (the board's "How past forecasts
        did"): its headline, caveat, coverage and MASE lines and table, after the forecast
        table (see :func:`app.record_report.record_html`).
    record_analyses : sequence of Mapping, optional
        ``Analysis.to_dict()`` of the analyses behind ``record.forecasts`` (same order).
    record_scored_on : str, optional
        The dataset the record was scored against (``RecordData.scored_on``).
    record_newer : bool, optional
        Whether that dataset has newer values than the forecast's.
    data : sequence of str, optional
        Notes on the series' data (:func:`app.wording.data_notes`), shown with the warnings.

    Returns
    -------
    str
        A complete HTML document. Every user-supplied string is escaped.
    """
    e = html.escape
    # the sentences compare the forecast's model with the last value on the origins both forecast
    paired = beside(comparison, forecast.model)
    sentences = (
        list(summary) if summary is not None else forecast_summary(forecast, paired, unit=unit)
    )
    meta = export_meta(
        forecast, comparison, unit=unit, dataset_hash=dataset_hash, dataset_name=dataset_name
    )
    parts = [
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>",
        f"<title>Haulcast report: {e(forecast.series_name)}</title>",
        f"<style>{REPORT_CSS}</style></head><body><main>",
        f"<h1>Forecast report: {e(forecast.series_name)}</h1>",
        f"<p class='sub'>Haulcast, generated {e(meta['generated'])} &middot; model {e(forecast.model)}</p>",
        analysis_html(analysis) if analysis is not None else "",
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
    parts.append(table_html(forecast_frame(forecast), left_cols=("period",)))
    if record is not None:
        parts.append(
            record_html(record, record_analyses, scored_on=record_scored_on, newer=record_newer)
        )
    if comparison is not None:
        skill = skill_frame(comparison, forecast.model)
        if skill is not None:
            parts.append("<h2>Hindcast skill</h2>")
            if comparison.hindcast is not None:
                parts.append(
                    f"<p>{e(forecast.model)}: {e(hindcast_sentence(paired, forecast.model))}</p>"
                )
            parts.append(table_html(skill, left_cols=("model",)))
            parts.append(f"<p class='sub'>{e(MAE_RMSE_NOTE)}</p>")
        parts.append("<h2>Best candidates by AICc</h2>")
        parts.append(table_html(candidates_frame(comparison), left_cols=("model",)))
        diag = residual_report(comparison, forecast.model)
        if diag is not None and diag.verdict:
            parts.append(f"<p>Residual checks ({e(diag.model)}): {e(diag.verdict)}</p>")
    for w in forecast.warnings + (comparison.warnings if comparison is not None else ()):
        parts.append(f"<p><strong>Warning:</strong> {e(shown_warning(w))}</p>")
    for note in data:
        parts.append(f"<p><strong>Data:</strong> {e(note)}</p>")
    parts.append("<h2>What produced this forecast</h2>")
    parts.append(meta_table({k: v for k, v in meta.items() if v != ""}))
    chosen = (
        dict(settings)
        if settings is not None
        else (dict(comparison.settings) if comparison else {})
    )
    if chosen:
        parts.append("<h2>Settings</h2>")
        parts.append(meta_table(settings_rows(chosen, comparison)))
    versions = package_versions()
    if comparison is not None:
        for v in dict(comparison.provenance).values():
            if isinstance(v, Mapping):
                versions.update({str(kk): str(vv) for kk, vv in v.items()})
    parts.append("<h2>Package versions</h2>")
    parts.append(meta_table(versions))
    parts.append("</main></body></html>")
    return "\n".join(parts)

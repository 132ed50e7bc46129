"""Pieces of the Intake page built from core results: the problems table, the series list,
the transform note and the stationarity test table. Pure functions (results in, Dash
components out), kept apart from the page's layout and callbacks.
"""

from __future__ import annotations

import base64
import binascii
import re
from typing import Any

from dash import dcc, html

import forecasting_core as fc
from app.figure_style import with_unit
from app.state import TRANSFORM_LABELS
from app.ui import alert, fmt_number, html_table, severity_badge, stat_card, stat_row

#: Problems shown in the table at most (the rest are counted).
MAX_PROBLEM_ROWS = 300


def dataset_options(store: Any, uploads: list[str]) -> list[dict[str, Any]]:
    options = []
    for meta in store.list(uploads):
        note = "demo data" if meta.sample else "your upload"
        options.append({"label": f"{meta.filename} \u00b7 {note}", "value": meta.id})
    return options


def series_options(table: fc.Table) -> list[dict[str, Any]]:
    options = []
    for name, info in table.info.items():
        unit = with_unit(name, info.unit)[len(name) :]
        if info.usable and name in table.series:
            options.append(
                {
                    "label": f"{name}{unit} \u00b7 {info.frequency}, {info.start}\u2013{info.end}",
                    "value": name,
                }
            )
        else:
            options.append(
                {"label": f"{name}{unit} \u00b7 not usable", "value": name, "disabled": True}
            )
    return options


def upload_message(store: Any, dataset_id: str) -> html.Div:
    meta = store.meta(dataset_id)
    table = store.load_table(dataset_id)
    usable = len(table.series)
    total = len(table.info) + len(set_aside(table))  # as the cards and the series table
    n_err, n_warn = len(table.errors), len(table.warnings)
    text = (
        f"Read {meta.filename}: {total} series, {usable} usable; "
        f"{n_err} error{'s' if n_err != 1 else ''} and {n_warn} warning{'s' if n_warn != 1 else ''}."
    )
    kind = "ok" if usable and not n_err else ("warning" if usable else "error")
    title = {"ok": "Uploaded", "warning": "Uploaded, with problems", "error": "Nothing usable"}[
        kind
    ]
    return alert(text, kind, title=title)


def share_note(store: Any, dataset_id: str | None, host_url: str) -> Any:
    """For an upload (not demo data): the link that opens it in another browser session."""
    if not dataset_id or dataset_id in store.samples():
        return None
    url = f"{host_url.rstrip('/')}/intake?dataset={dataset_id}"
    return html.Div(
        [
            html.Span("Share this dataset: ", className="hc-field__label"),
            html.A(url, href=url, id="intake-share-link", className="hc-mono hc-small"),
            html.Div(
                "Anyone who can reach this server and has the link can open it; nobody else sees it.",
                className="hc-field__hint",
            ),
        ]
    )


def _problem_rows(problems: tuple[fc.Problem, ...]) -> list[dict[str, Any]]:
    rows = []
    for p in problems[:MAX_PROBLEM_ROWS]:
        rows.append(
            {
                "severity": severity_badge(p.severity),
                "row": "" if p.row is None else str(p.row),
                "time": p.time or "",
                "column": p.column or "",
                "message": p.message,
                "_class": f"hc-row--{p.severity}",
            }
        )
    return rows


def problems_view(table: fc.Table) -> Any:
    """The problems table (severity by icon, word and colour; file row; year)."""
    if not table.problems:
        return alert(
            "No problems found: every cell was read as a number or left blank on purpose.",
            "ok",
            title="Clean",
        )
    ordered = tuple(sorted(table.problems, key=lambda p: p.severity != "error"))
    more = len(ordered) - MAX_PROBLEM_ROWS
    caption = f"{more} more problems are not shown; fix the ones above first." if more > 0 else None
    return html.Div(
        html_table(
            _problem_rows(ordered),
            [
                ("severity", "Severity"),
                ("row", "File row"),
                ("time", "Year / period"),
                ("column", "Column"),
                ("message", "What was found"),
            ],
            id="intake-problems-table",
            numeric=("row",),
            caption=caption,
        ),
        # up to 25 problems stand on the page without an inner scroll; longer lists scroll
        className="hc-table-wrap hc-table-wrap--full" if len(ordered) <= 25 else "hc-table-wrap",
    )


def set_aside(table: fc.Table) -> dict[str, str]:
    """Series named by an error but not read at all (e.g. a monthly one in an annual file).

    Returns
    -------
    dict of str to str
        Series name to the reason, the core's message from "was not read:" on.
    """
    out: dict[str, str] = {}
    for p in table.errors:
        name = p.column
        if not name or name in table.info or name in out:
            continue
        reason = p.message.split("was not read:", 1)[-1].strip()
        out[name] = reason[:1].upper() + reason[1:]
    return out


def summary_view(table: fc.Table) -> html.Div:
    usable = len(table.series)
    # a series set aside (not read) counts as one that cannot be used, as in the series table
    total = len(table.info) + len(set_aside(table))
    n_err, n_warn = len(table.errors), len(table.warnings)
    return stat_row(
        [
            stat_card(
                "Layout",
                table.layout,
                "one column per series" if table.layout == "wide" else "series, time, value",
            ),
            stat_card(
                "Usable series",
                f"{usable} of {total}",
                tone="good" if usable == total and total else ("warning" if usable else "error"),
            ),
            stat_card(
                "Errors",
                str(n_err),
                error_hint(n_err, total - usable),
                tone="error" if n_err else "good",
            ),
            stat_card(
                "Warnings",
                str(n_warn),
                "usable, with care" if n_warn else "none",
                tone="warning" if n_warn else "good",
            ),
        ]
    )


def series_table_view(table: fc.Table) -> Any:
    rows = []
    for name, info in table.info.items():
        usable = info.usable and name in table.series
        rows.append(
            {
                "name": html.Strong(name),
                "unit": info.unit or "\u2014",
                "frequency": info.frequency,
                "years": f"{info.start}\u2013{info.end}",
                "observations": str(info.observations),
                "missing": str(info.missing),
                "status": severity_badge("ok") if usable else severity_badge("error"),
                "_class": None if usable else "hc-row--error",
            }
        )
    for name, reason in set_aside(table).items():
        rows.append(
            {
                "name": [
                    html.Strong(name),
                    html.Div(f"Not read. {reason}", className="hc-series-note"),
                ],
                "unit": "\u2014",
                "frequency": "\u2014",
                "years": "\u2014",
                "observations": "0",
                "missing": "\u2014",
                "status": severity_badge("error"),
                "_class": "hc-row--error",
            }
        )
    if not rows:
        return alert("No series were found in this file.", "error")
    return html.Div(
        html_table(
            rows,
            [
                ("name", "Series"),
                ("unit", "Unit"),
                ("frequency", "Frequency"),
                ("years", "Years"),
                ("observations", "Values"),
                ("missing", "Missing"),
                ("status", "Usable"),
            ],
            id="intake-series-list",
            numeric=("observations", "missing"),
        ),
        className="hc-table-wrap",
    )


def error_hint(n_err: int, unusable: int) -> str:
    """The Errors card's hint: how many series the errors stop (not how many errors there are)."""
    if not n_err:
        return "none"
    if not unusable:
        return "no series stopped"
    return f"{unusable} series cannot be used"


def transform_note(choice: str, spec: fc.TransformSpec) -> list[Any]:
    lam = f" (\u03bb = {spec.lam:.3f})" if spec.name == "boxcox" and spec.lam is not None else ""
    lead = "Automatic chose " if choice == "auto" else "Using "
    parts: list[Any] = [
        html.Strong(f"{lead}{TRANSFORM_LABELS.get(spec.name, spec.name).lower()}{lam}.")
    ]
    reason = re.sub(
        r"^\s*automatic:\s*(log|no transform|box-?cox|none)\s*,?\s*",
        "",
        spec.reason or "",
        flags=re.IGNORECASE,
    )
    reason = re.sub(r"^\s*chosen by the user\s*;?\s*", "", reason, flags=re.IGNORECASE)
    # "because X, so Y" reads as a sentence once "because" goes ("X, so Y.")
    reason = re.sub(r"^\s*because\s+(?=.*,\s*so\s)", "", reason, flags=re.IGNORECASE)
    if reason:
        parts.append(" " + reason[0].upper() + reason[1:].rstrip(".") + ".")
    return parts


def pvalue_text(t: fc.StationarityTest) -> str:
    bound = getattr(t, "pvalue_bound", None)
    if t.pvalue is None or t.pvalue != t.pvalue:
        return "\u2014"
    if t.pvalue == t.pvalue and t.pvalue < 0.001 and bound is None:
        return "< 0.001"
    text = fmt_number(t.pvalue, 2 if t.pvalue >= 0.01 else 1)
    if bound == "at most":
        return f"\u2264 {text}"
    if bound == "at least":
        return f"\u2265 {text}"
    return text


def _stat(value: float) -> str:
    """A test statistic: 4 significant digits, scientific when huge, a dash when not computed."""
    if value is None or value != value:
        return "\u2014"
    if abs(value) >= 1e5:
        return f"{value:.3g}"
    return fmt_number(value, 4) if abs(value) < 1000 else f"{value:,.1f}"


def tests_view(report: fc.StationarityReport) -> Any:
    rows = []
    for t in report.tests:
        crit = t.critical_values.get("5%")
        level = f"d = {t.differences}" + (
            f", D = {t.seasonal_differences}" if t.seasonal_differences else ""
        )
        chosen = t.differences == report.d and t.seasonal_differences == report.seasonal_d
        rows.append(
            {
                "test": html.Strong(t.test),
                "regression": t.regression,
                "level": level,
                "statistic": _stat(t.statistic),
                "pvalue": pvalue_text(t),
                "critical": fmt_number(crit, 4) if crit is not None else "",
                "lags": str(t.lags),
                "null": t.null,
                "result": "rejects the null" if t.rejected else "keeps the null",
                "_class": "hc-row--chosen" if chosen else None,
            }
        )
    if not rows:
        return alert("No tests could be run on this series.", "warning")
    return html.Div(
        html_table(
            rows,
            [
                ("test", "Test"),
                ("regression", "Terms"),
                ("level", "Differences"),
                ("statistic", "Statistic"),
                ("critical", "5% critical value"),
                ("pvalue", "p-value"),
                ("lags", "Lags"),
                ("null", "Null hypothesis"),
                ("result", "At 5%"),
            ],
            id="intake-tests",
            numeric=("statistic", "critical", "pvalue", "lags"),
            caption="Shaded rows: the differencing level chosen.",
        ),
        className="hc-table-wrap hc-table-wrap--full",
    )


def stationarity_stats(report: fc.StationarityReport) -> html.Div:
    cards = [
        # the labels are shown in capitals: the letters d and D go in the values, whose case stays
        stat_card("Differences", f"d = {report.d}", "chosen by KPSS at 5%", tone="good"),
    ]
    if report.frequency != "annual":
        strength = (
            ""
            if report.seasonal_strength is None
            else f"seasonal strength {report.seasonal_strength:.2f}"
        )
        cards.append(stat_card("Seasonal differences", f"D = {report.seasonal_d}", strength))
    cards.append(
        stat_card(
            "ADF and KPSS",
            "disagree" if report.tests_disagree else "agree",
            "read the verdict" if report.tests_disagree else "on the number of differences",
            tone="warning" if report.tests_disagree else "good",
        )
    )
    return stat_row(cards)


TRANSFORM_HINTS = {
    "auto": "Haulcast decides: log when every value is positive and the spread grows with the level.",
    "none": "Model the values as they are.",
    "log": "For positive values whose ups and downs grow with the level.",
    "boxcox": "A power between none and log, with lambda estimated from the data.",
}


def transform_options() -> list[dict[str, Any]]:
    """The transform choices, each with a one-line hint."""
    return [
        {
            "label": html.Span(
                [
                    html.Strong(TRANSFORM_LABELS[k]),
                    html.Span(" \u2014 " + TRANSFORM_HINTS[k], className="hc-muted hc-small"),
                ]
            ),
            "value": k,
        }
        for k in ("auto", "none", "log", "boxcox")
    ]


def upload_area(mb: str) -> dcc.Upload:
    """The drag-and-drop area (``mb``: the size cap as text, e.g. ``"20 MB"``)."""
    return dcc.Upload(
        html.Div(
            [
                html.Div(
                    "\u21e7",
                    className="hc-upload__icon",
                    **{"aria-hidden": "true"},
                ),
                html.Div(
                    "Drop a CSV or Excel (.xlsx) file here, or click to choose one",
                    className="hc-upload__title",
                ),
                html.Div(
                    f"Up to {mb}. Wide layout (a year or month column, then one column per series) "
                    "or long layout (series, time, value, optional unit).",
                    className="hc-upload__hint",
                ),
            ]
        ),
        id="intake-upload",
        accept=".csv,.txt,.tsv,.xlsx,text/csv,application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
        multiple=False,
        className="hc-upload",
        className_active="hc-upload hc-upload--active",
        className_reject="hc-upload hc-upload--reject",
        style={},
        style_active={},
        style_reject={},
    )


def decode_upload(contents: str) -> bytes:
    """Bytes of a ``dcc.Upload`` data URL (``data:<type>;base64,<data>``).

    An empty file comes as ``data:`` or ``data:<type>;base64,`` and gives ``b""`` (the store
    then says the file is empty).
    """
    text = str(contents)
    _, comma, data = text.partition(",")
    if not comma:
        data = "" if text.startswith("data:") else text
    try:
        return base64.b64decode(data, validate=False)
    except (binascii.Error, ValueError) as err:
        raise fc.InputError("the upload could not be decoded. Choose the file again.") from err


def series_unit(table: fc.Table, series: str) -> str | None:
    info = table.info.get(series)
    return info.unit if info else None


def preview_title(spec: fc.TransformSpec) -> str:
    """Title of the transform preview figure."""
    if spec.name == "none":
        return "Preview: no transform (the values as read)"
    if spec.name == "boxcox" and spec.lam is not None:
        return f"Preview: Box-Cox scale (\u03bb = {spec.lam:.2f})"
    return f"Preview: {TRANSFORM_LABELS.get(spec.name, spec.name).lower()} scale"

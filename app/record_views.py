"""The Forecast Board's forecast-record panel: how earlier published forecasts did.

For the dataset and series on the board, :func:`record_section` finds the published analyses of
the same series name made on *other* datasets from data that ended before this dataset's last
observed period, scores their saved forecasts on this dataset's values
(:func:`forecasting_core.score_forecast_record`) and builds the panel: the track-record
sentence a manager reads first, a caveat when few periods are scored, a chart of the realised
values against each past forecast's bands, and a table per period.

Which published analyses count: of a chain of revisions (``parent_id`` links) with the same
season, only the newest published version (the one in force); analyses of another frequency
than this series are left out. The MASE scale of each past forecast comes from the data it was
made from (its own dataset, up to its origin), or from this dataset when that one is gone.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd
from dash import dcc, html

import forecasting_core as fc
from app.record_figures import record_figure
from app.record_report import columns, record_lead, table_rows
from app.ui import alert, html_table, section, stat_card, stat_row
from app.wording import RECORD_FOOTNOTE, mase_words

__all__ = ["RecordData", "past_analyses", "record_data", "record_panel", "record_section"]

logger = logging.getLogger("haulcast.app")

SECTION_ID = "record-panel"


# ---------------------------------------------------------------------------------------------
# Finding the past forecasts
# ---------------------------------------------------------------------------------------------


def _first_period(analysis: Any, frequency: str) -> pd.Period | None:
    try:
        rows = analysis.forecast["forecast"]
        code = {"annual": "Y-DEC", "quarterly": "Q-DEC", "monthly": "M"}[frequency]
        return min(pd.Period(str(r["time"]), freq=code) for r in rows)
    except (KeyError, TypeError, ValueError, AttributeError):
        return None


def _in_force(analyses: Iterable[Any]) -> list[Any]:
    """The newest published version of each chain of revisions and season (newest first)."""
    by_id = {a.id: a for a in analyses}

    def root(a: Any) -> str:
        seen = set()
        while a.parent_id in by_id and a.id not in seen:
            seen.add(a.id)
            a = by_id[a.parent_id]
        return a.id

    best: dict[tuple[str, str], Any] = {}
    for a in by_id.values():
        key = (root(a), str(a.season))
        if key not in best or a.version > best[key].version:
            best[key] = a
    return sorted(best.values(), key=lambda a: str(a.published_at or ""), reverse=True)


def past_analyses(store: Any, dataset_id: str, series: str, y: pd.Series) -> list[Any]:
    """Published analyses of ``series`` on other datasets whose data ended before ``y``'s.

    Parameters
    ----------
    store : app.store.DatasetStore
    dataset_id : str
        The dataset on the board (its own analyses are left out).
    series : str
        The series name on the board (matched exactly).
    y : pandas.Series
        That series (PeriodIndex).

    Returns
    -------
    list of app.store.Analysis
        Oldest forecast first (by first forecast period).
    """
    if not hasattr(store, "list_analyses"):
        return []
    frequency = fc.frequency_of(y)
    observed = y[y.notna()]
    if not len(observed):
        return []
    last = observed.index.max()
    try:
        published = store.list_analyses(status="published", series=series)
    except fc.InputError:  # a name the store could never have saved (e.g. too long)
        return []
    found = []
    for a in _in_force(published):
        if a.dataset_id == dataset_id:
            continue
        if not isinstance(a.forecast, dict) or a.forecast.get("frequency") != frequency:
            continue
        first = _first_period(a, frequency)
        if first is None or not first - 1 < last:  # made from data ending before this one's
            continue
        found.append((first, str(a.published_at or ""), a))
    found.sort(key=lambda item: (item[0], item[1]))
    return [a for _, _, a in found]


def _history(store: Any, analysis: Any) -> pd.Series | None:
    """The series an analysis was made from (None when its dataset cannot be read)."""
    try:
        return store.load_table(analysis.dataset_id).series.get(analysis.series)
    except Exception:  # noqa: BLE001 - a missing old dataset only costs the MASE scale's source
        return None


def _label(analysis: Any) -> str:
    rows = analysis.forecast.get("forecast") or [{}]
    first = str(rows[0].get("time", "?"))
    text = analysis.title or f"{analysis.series}, forecast for {first} onwards"
    if analysis.version > 1:
        text += f" (v{analysis.version})"
    return text


def _score(
    analyses: Sequence[Any], y: pd.Series, histories: Sequence[pd.Series | None]
) -> tuple[fc.ForecastRecord | None, list[Any]]:
    """Score all; on a bad saved forecast, score the good ones and log the others."""
    labels = [_label(a) for a in analyses]
    try:
        record = fc.score_forecast_record(
            [a.forecast for a in analyses], y, labels=labels, histories=list(histories)
        )
        return record, list(analyses)
    except fc.InputError:
        keep = []
        for a, h in zip(analyses, histories, strict=True):
            try:
                fc.score_forecast_record(a.forecast, y, histories=[h])
                keep.append((a, h))
            except fc.InputError as err:
                logger.warning("Forecast record: analysis %s left out: %s", a.id, err)
        if not keep:
            return None, []
        record = fc.score_forecast_record(
            [a.forecast for a, _ in keep],
            y,
            labels=[_label(a) for a, _ in keep],
            histories=[h for _, h in keep],
        )
        return record, [a for a, _ in keep]


# ---------------------------------------------------------------------------------------------
# The panel
# ---------------------------------------------------------------------------------------------


def _mark(value: Any) -> Any:
    """Inside/outside as icon and word (shape and text, not only colour)."""
    if value is None:
        return ""
    if value:
        return html.Span(["\u2714 ", "inside"], className="record-in")
    return html.Span(["\u2716 ", "outside"], className="record-out")


def _rows(record: fc.ForecastRecord) -> list[dict[str, Any]]:
    out = []
    for r in table_rows(record):
        row = dict(r)
        # a line above each past forecast after the first (its periods follow it)
        row["_class"] = "record-first" if r["first"] and out else None
        if r["status"] == "scored":
            for lv in record.levels:
                row[f"in{lv}"] = _mark(r.get(f"in{lv}"))
        else:
            row["actual"] = html.Span(r["note"], className="hc-muted")
            row["_class"] = " ".join(c for c in (row["_class"], "record-unscored") if c)
        out.append(row)
    return out


def _cards(record: fc.ForecastRecord) -> html.Div:
    cards = []
    for lv in sorted(record.levels, key=lambda v: (v != 80, -v)):
        k, n = record.inside.get(lv, 0), record.scored_by_level.get(lv, 0)
        if not n:
            continue
        # our rule: a warning tone only when enough periods say the band held far too few
        tone = "warning" if n >= 10 and 100.0 * k / n < lv - 15 else "neutral"
        cards.append(
            stat_card(f"Inside the {lv}% band", f"{k} of {n}", f"{lv}% expected", tone=tone)
        )
    if not math.isnan(record.mase):
        cards.append(
            stat_card(
                "MASE of past forecasts",
                f"{record.mase:.2f}",
                mase_words(record.mase, record.frequency),
            )
        )
    n = record.periods_scored
    cards.append(
        stat_card(
            "Scored",
            f"{n} {_word(record.frequency, n)}",
            f"from {record.forecasts_scored} past forecast"
            + ("" if record.forecasts_scored == 1 else "s"),
        )
    )
    return stat_row(cards)


def _word(frequency: str, n: int) -> str:
    """``year``/``years`` (``quarter``, ``month``) for ``n`` periods."""
    one = {"annual": "year", "quarterly": "quarter", "monthly": "month"}.get(frequency, "period")
    return one if n == 1 else one + "s"


def _sources(analyses: Sequence[Any], record: fc.ForecastRecord) -> html.Ul:
    items = []
    for a, past in zip(analyses, record.forecasts, strict=True):
        when = str(a.published_at or "")[:10]
        signed = "; ".join(f"signed off by {s.name} ({s.role})" for s in a.signoffs)
        text = (
            f"{past.model}, data to {past.origin}, published {when} by "
            f"{getattr(a, 'published_by', None) or a.author}"
        )
        items.append(
            html.Li(
                [
                    html.A(past.label, href=f"/board?analysis={a.id}", className="record-open"),
                    html.Span(f": {text}" + (f"; {signed}" if signed else "") + "."),
                ]
            )
        )
    return html.Ul(items, className="record-sources hc-small")


def record_panel(
    record: fc.ForecastRecord,
    history: pd.Series,
    *,
    analyses: Sequence[Any] = (),
    y_title: str | None = None,
    scored_on: str = "",
    newer: bool = False,
) -> html.Section:
    """The panel for a scored record (no store needed: tests and reports call it directly).

    Parameters
    ----------
    record : ForecastRecord
    history : pandas.Series
        The newer data the record was scored on.
    analyses : sequence of Analysis, optional
        The published analyses behind ``record.forecasts`` (same order), for their links,
        authors and sign-offs.
    y_title : str, optional
        Value axis title.
    scored_on : str, optional
        The dataset scored against, named in the lead (see :class:`RecordData`).
    newer : bool, optional
        Whether that dataset has newer values than the one on the board.
    """
    children: list[Any] = [html.P(record.headline(), className="record-headline")]
    if record.caveat:
        children.append(alert(record.caveat, "warning", title="Read with care"))
    children.append(_cards(record))
    if record.periods_scored:
        children.append(
            dcc.Graph(
                id=f"{SECTION_ID}-figure",
                figure=record_figure(record, history, y_title=y_title),
                config={"displaylogo": False, "modeBarButtonsToRemove": ["lasso2d", "select2d"]},
                className="record-figure",
            )
        )
    cols = columns(record)
    headings = [
        (key, html.Span([h, "\u2009*"], title=tip, className="record-tip") if tip else h)
        for key, h, tip in cols
    ]
    children.append(
        html.Div(
            [
                html_table(
                    _rows(record),
                    headings,
                    id=f"{SECTION_ID}-table",
                    numeric=["actual", "median", "error", "pct"],
                ),
                html.P(f"* {RECORD_FOOTNOTE}", className="hc-small hc-muted record-note"),
            ],
            className="hc-table-wrap record-table",
        )
    )
    if analyses:
        children.append(html.H3("Past forecasts scored"))
        children.append(_sources(analyses, record))
    for w in record.warnings:
        children.append(html.P(w, className="hc-small hc-muted"))
    return section(
        "How past forecasts did",
        *children,
        id=SECTION_ID,
        lead=record_lead(record, scored_on, newer),
        className="record-section",
    )


def _last(y: pd.Series | None) -> pd.Period | None:
    observed = y[y.notna()] if y is not None else None
    return observed.index.max() if observed is not None and len(observed) else None


def newest_data(
    store: Any, dataset_id: str, series: str, y: pd.Series, extra: Iterable[str] = ()
) -> tuple[str, pd.Series] | None:
    """The dataset on the server with the newest values of ``series``, when newer than ``y``.

    Looked at: the sample datasets, the datasets of published analyses of ``series`` (shared
    by their links) and ``extra`` (e.g. the session's uploads). Only a series of the same name
    and frequency whose last observed period is after ``y``'s counts; the latest wins (the
    first found of equal ones).

    Returns
    -------
    tuple of (str, pandas.Series) or None
        The dataset id and its series; None when no dataset has newer values.
    """
    frequency = fc.frequency_of(y)
    best, top = None, _last(y)
    if top is None:
        return None
    ids: list[str] = list(store.samples()) if hasattr(store, "samples") else []
    if hasattr(store, "list_analyses"):
        try:
            ids += [a.dataset_id for a in store.list_analyses(status="published", series=series)]
        except fc.InputError:
            pass
    ids += list(extra)
    for other in dict.fromkeys(ids):
        if other == dataset_id or not store.exists(other):
            continue
        try:
            candidate = store.load_table(other).series.get(series)
        except Exception:  # noqa: BLE001 - an unreadable dataset is simply not newer data
            continue
        if candidate is None or fc.frequency_of(candidate) != frequency:
            continue
        last = _last(candidate)
        if last is not None and last > top:
            best, top = (other, candidate), last
    return best


@dataclass(frozen=True)
class RecordData:
    """What the record panel and the report's record section are drawn from.

    Parameters
    ----------
    record : ForecastRecord
    history : pandas.Series
        The newer data the record was scored on.
    analyses : tuple of Analysis
        The published analyses behind ``record.forecasts`` (same order).
    y_title : str
        Value axis title (series and unit).
    scored_on : str
        Where the values scored come from: the dataset's file name and its last period,
        e.g. ``"landings.csv (data to 2025)"``.
    newer : bool
        Whether that is another dataset with newer values than the one on the board.
    """

    record: fc.ForecastRecord
    history: pd.Series
    analyses: tuple[Any, ...]
    y_title: str
    scored_on: str = ""
    newer: bool = False


def record_data(
    store: Any, dataset_id: str, series: str, *, extra: Iterable[str] = ()
) -> RecordData | None:
    """The scored record of past published forecasts of ``series``, or None when there is none.

    The forecasts are scored against the newest values of ``series`` on the server
    (:func:`newest_data`; ``extra`` adds datasets to look at, e.g. the session's uploads), or
    against this dataset's when none is newer. So a forecast opened by its link shows how it
    did as soon as newer data are on the server.

    Parameters
    ----------
    store : app.store.DatasetStore
        The app's store (``app.store.get_store()`` inside a callback).
    dataset_id : str
        The dataset on the board.
    series : str
        The series on the board.

    Returns
    -------
    RecordData or None
        None when the dataset or series cannot be read, or no published forecast of this
        series from earlier data exists on other datasets.
    """
    try:
        table = store.load_table(dataset_id)
    except fc.InputError:
        return None
    y = table.series.get(series)
    if y is None:
        return None
    newer = newest_data(store, dataset_id, series, y, extra)
    scored_id = dataset_id
    if newer is not None:
        scored_id, y = newer
    analyses = past_analyses(store, scored_id, series, y)
    if not analyses:
        return None
    histories = [_history(store, a) for a in analyses]
    record, used = _score(analyses, y, histories)
    if record is None:
        return None
    info = table.info.get(series)
    unit = getattr(info, "unit", None)
    y_title = f"{series} ({unit})" if unit and not series.endswith(f"({unit})") else series
    try:
        name = store.meta(scored_id).filename
    except (fc.InputError, AttributeError):
        name = "this dataset"
    scored_on = f"{name} (data to {fc.time_label(_last(y))})"
    return RecordData(record, y, tuple(used), y_title, scored_on, newer is not None)


def record_section(
    store: Any, dataset_id: str, series: str, *, extra: Iterable[str] = ()
) -> html.Section | None:
    """The forecast-record panel for the board, or None when there is nothing to show.

    The arguments are those of :func:`record_data`.
    """
    data = record_data(store, dataset_id, series, extra=extra)
    if data is None:
        return None
    return record_panel(
        data.record,
        data.history,
        analyses=data.analyses,
        y_title=data.y_title,
        scored_on=data.scored_on,
        newer=data.newer,
    )

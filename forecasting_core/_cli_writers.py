"""Files and streams the ``forecast`` and ``batch`` subcommands write: CSV and JSON.

The forecast CSV holds comment lines (source, cautions; each series' warnings before its rows)
and the table, so that ``pandas.read_csv(path, comment="#")`` reads it; cells are safe to open
in a spreadsheet.
"""

from __future__ import annotations

import json
import math
import re
import textwrap
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any, TextIO

from forecasting_core._results import CAUTIONS

#: Columns of the forecast CSV: the series and model, then the dashboard's order (time, step,
#: mean, median, bands, probability below the reference).
CSV_COLUMNS = (
    "series", "model", "time", "step", "mean", "median", "lo50", "hi50", "lo80", "hi80",
    "lo95", "hi95", "prob_below_reference",
)  # fmt: skip
#: A cell a spreadsheet would run as a formula starts with one of these.
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"^-?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")
#: A cell holding one of these is quoted (see :func:`csv_line`).
_QUOTED = re.compile(r'[,"\r\n#]')


def safe_cell(value: Any) -> str:
    """A CSV cell a spreadsheet will not run as a formula.

    Text starting with ``= + - @`` (or a tab or carriage return) gets a leading single
    quote, except plain numbers such as ``-0.45``, which stay numbers (common practice for
    CSV injection; OWASP "CSV Injection").
    """
    if value is None:
        return ""
    if isinstance(value, float):
        return "" if not math.isfinite(value) else repr(value)
    text = str(value)
    if text.startswith(_FORMULA_START) and not _PLAIN_NUMBER.match(text):
        return "'" + text
    return text


def csv_rows(record: dict[str, Any]) -> list[list[str]]:
    """Forecast rows of one record in :data:`CSV_COLUMNS` order."""
    out = []
    for r in record.get("forecast", []):
        row = {
            "series": record["series"],
            "model": record["model"]["label"],
            "time": r["time"],
            "step": r["step"],
            "median": r["median"],
            "mean": r["mean"],
            "prob_below_reference": r["prob_below_reference"],
        }
        for lv, (lo, hi) in r["intervals"].items():
            row[f"lo{lv}"], row[f"hi{lv}"] = lo, hi
        out.append([safe_cell(row.get(c)) for c in CSV_COLUMNS])
    return out


def comment_line(text: str) -> str:
    """``# text`` as one physical CSV line, never quoted, that no spreadsheet runs as a formula.

    ``pandas.read_csv(path, comment="#")`` skips the whole line, commas included (a quoted
    line would not start with ``#`` and would be read as data). Whitespace runs (line breaks
    too) become one space and double quotes single ones, so no quoted field can open; a
    spreadsheet may split the line at its commas, so every piece after a comma that would
    start a formula gets a single quote, as :func:`safe_cell` does for data cells.
    """
    pieces = re.sub(r"\s+", " ", str(text)).strip().replace('"', "'").split(",")
    safe = [pieces[0]] + [
        " '" + p.lstrip()
        if p.lstrip().startswith(_FORMULA_START) and not _PLAIN_NUMBER.match(p.strip())
        else p
        for p in pieces[1:]
    ]
    return "# " + ",".join(safe)


def _forecast_csv_head(fh: TextIO, source: str | None) -> None:
    """The comment lines (source, cautions) and column names of a forecast CSV.

    ``fh`` is a text file opened with ``newline=""``; lines end in ``\\r\\n`` like the csv
    module's rows.
    """
    fh.write(comment_line(f"Haulcast forecasts{' from ' + source if source else ''}") + "\r\n")
    for c in CAUTIONS:
        fh.write(comment_line(f"Caution: {c}") + "\r\n")
    fh.write(csv_line(CSV_COLUMNS))


def csv_line(cells: Sequence[str]) -> str:
    """One CSV row (comma-separated, ``\\r\\n`` line end) that ``comment="#"`` keeps whole.

    Cells are quoted as the csv module quotes them (a comma, double quote or line break
    inside; quotes doubled), and also when they hold ``#``: ``pandas.read_csv(path,
    comment="#")`` cuts an unquoted row at its ``#`` (a series named ``Stock #3`` would lose
    the rest of its row), while its default C parser keeps ``#`` inside a quoted cell. Rows
    without ``#`` come out exactly as ``csv.writer`` writes them.
    """
    out = []
    for cell in cells:
        text = str(cell)
        if _QUOTED.search(text):
            text = '"' + text.replace('"', '""') + '"'
        out.append(text)
    if len(out) == 1 and not out[0]:
        out[0] = '""'  # a row with one empty cell, as csv.writer writes it
    return ",".join(out) + "\r\n"


def series_comment_lines(record: dict[str, Any]) -> list[str]:
    """The ``#`` lines of one series: its warnings (or why it failed), before its rows.

    Each reads ``# <series>: warning: <text>`` (``# <series>: failed: <text>`` for a series
    that could not be forecast). The record's ``warnings`` hold the file check's findings for
    the series, the comparison's and the forecast's warnings (below-zero clipping, a benchmark
    that did better, bands too narrow on the hindcast, residuals that are not white noise).
    """
    name = re.sub(r"\s+", " ", str(record.get("series", ""))).strip()
    if "error" in record:
        return [comment_line(f"{name}: failed: {record['error']}") + "\r\n"]
    return [comment_line(f"{name}: warning: {w}") + "\r\n" for w in record.get("warnings") or ()]


def write_record(fh: TextIO, record: dict[str, Any]) -> None:
    """One series' ``#`` lines (:func:`series_comment_lines`) and then its forecast rows."""
    fh.writelines(series_comment_lines(record))
    if "error" not in record:
        write_csv_rows(fh, csv_rows(record))


def write_csv_rows(fh: TextIO, rows: Iterable[Sequence[str]]) -> None:
    """Write rows with :func:`csv_line` (``fh`` opened with ``newline=""``)."""
    fh.writelines(csv_line(row) for row in rows)


def write_forecast_csv(
    path: Path | str, records: Sequence[dict[str, Any]], source: str | None = None
) -> None:
    """Write forecast rows after comment lines holding the source and the cautions.

    Each series' warnings come as ``#`` lines just before its rows (:func:`write_record`).
    ``pandas.read_csv(path, comment="#")`` reads the table (:data:`CSV_COLUMNS`), cells with
    ``#`` included (they are quoted, see :func:`csv_line`).
    """
    with open(path, "w", newline="", encoding="utf-8") as fh:
        _forecast_csv_head(fh, source)
        for record in records:
            write_record(fh, record)


def _dump(obj: Any, out: TextIO) -> None:
    json.dump(obj, out, indent=2, allow_nan=False)
    out.write("\n")


class JsonListWriter:
    """Write a JSON list one object at a time, byte-identical to ``json.dump(items, indent=2)``.

    The batch streams its records through this, so a batch of thousands of series never holds
    all of them in memory.
    """

    def __init__(self, out: TextIO) -> None:
        self._out, self.count = out, 0

    def add(self, obj: Any) -> None:
        text = json.dumps(obj, indent=2, allow_nan=False)
        self._out.write(("[\n" if self.count == 0 else ",\n") + textwrap.indent(text, "  "))
        self.count += 1

    def close(self) -> None:
        self._out.write("\n]\n" if self.count else "[]\n")

"""CSV/Excel -> series + problems (1-based file row numbers).

Rules (the README and ``check`` report refer to these):

* **Raise or report.** :func:`read_table` raises :class:`InputError` only when nothing can be
  read as a table: missing file, file over :data:`MAX_FILE_BYTES`, empty file, binary or
  undecodable bytes, damaged workbook, or no column that can serve as time. Everything else
  (header only, bad cells, bad rows, unusable series) comes back as a :class:`Table` whose
  ``problems`` say what is wrong; ``error`` means the series (or, without a column, the file)
  cannot be used, ``warning`` that it can.
* **Rows** are numbered as a spreadsheet shows them: the header is row 1 (title lines above it
  count), the first data row is row 2. For the long layout a problem names the row of its record.
* **Layouts.** Wide: one time column and one column per series. Long: a name column (header
  such as ``series``/``stock``/``species``, or any text column whose values repeat while the
  times repeat too), a time column, one or more value columns, optionally a ``unit`` column.
* **Time.** The time column is found by its header (``year``, ``date``, ``period``, ``Jahr``,
  ``año`` ...) or as the leftmost column whose cells are mostly times. Accepted: integer years,
  ``YYYY-MM`` (also ``YYYY/MM``, ``Mar 2020``), ``YYYY-Qn`` (also ``YYYYQn``, ``Qn YYYY``), ISO
  dates ``YYYY-MM-DD`` (frequency from their spacing: all steps multiples of 12 months -> annual,
  of 3 -> quarterly, else monthly), and a year column plus a ``month``/``quarter`` column. Years
  must be 1800-2100. A row whose time has digits but cannot be read is an error for every series
  with a value in it; a row whose time is a word (``Total``, ``Mean``) is skipped with a warning.
* **Numbers.** Decimal point or comma is chosen from unambiguous cells (``12.5`` vs ``12,5``);
  the other mark is accepted as thousands separator only in groups of three (``1,234.5``,
  ``1.234,5``, ``1 234,5``). Empty, ``NA``, ``-``, ``..`` and similar are missing values (warning).
  Text in a number cell (``about 900``, ``12.5t``) becomes a missing value with a warning naming
  the row and text; the series stays usable unless too few values remain.
* **Minimum length.** 15 non-missing values for annual series, 20 for quarterly, 36 for monthly
  (:data:`MIN_OBSERVATIONS`); fewer is an error saying how many there are and how many are needed.
* **Units.** From a long-layout unit column (a change of unit inside a series is an error), a
  units row under the header (warning, the row is not data), or the header: ``name (unit)`` /
  ``name [unit]``, or a last ``_``-separated word that is a known unit (``hake_t`` -> ``t``,
  ``cpue_index`` -> ``index``; ``hake_kg_per_tow`` -> ``kg/tow``). Series keep the full header as their name (``hake_t``).
* Nothing is dropped silently: skipped rows, columns and cells are all reported; missing values
  stay NaN on a complete PeriodIndex from the first to the last value of each series.
"""

from __future__ import annotations

import hashlib
import re
from collections import Counter, defaultdict
from pathlib import Path

import pandas as pd

from forecasting_core._results import InputError, Problem, SeriesInfo, Table
from forecasting_core._table_parse import (
    KNOWN_UNITS,
    Grid,
    cell_text,
    check_not_binary,
    compact,
    decode,
    detect_decimal,
    is_empty,
    month_ordinal,
    parse_month,
    parse_number,
    parse_time,
    text_grid,
    xlsx_grid,
)
from forecasting_core._table_series import MIN_OBSERVATIONS, Obs, build_series, label, rows_text

__all__ = ["MAX_FILE_BYTES", "MIN_OBSERVATIONS", "read_table"]

#: Largest file accepted, in bytes (20 MB).
MAX_FILE_BYTES = 20 * 1024 * 1024

_TIME_WORDS = {
    "year", "years", "yr", "yrs", "date", "dates", "time", "period", "periode", "periodo", "season",
    "jahr", "ano", "año", "anio", "annee", "année", "anno", "jaar", "år", "aar", "ar", "vuosi",
    "rok", "fecha", "datum", "data", "zeit", "tid", "tijd", "fy",
}
_MONTH_WORDS = {"month", "mes", "monat", "mois", "maand", "mese", "mnd", "maaned", "måned", "kk"}
_QUARTER_WORDS = {"quarter", "qtr", "trimestre", "quartal", "kwartaal", "kvartal"}
_NAME_WORDS = {
    "series", "serie", "stock", "stocks", "species", "especie", "especies", "espece", "espèce",
    "art", "arten", "name", "nombre", "nom", "navn", "variable", "item", "indicator", "bestand",
    "population", "run", "key",
}
_UNIT_WORDS = {"unit", "units", "unidad", "unidades", "unidade", "einheit", "unite", "unité", "enhet", "eenheid", "uom"}
_FREQ_OF_KIND = {"Y": "annual", "Q": "quarterly", "M": "monthly"}


def _tokens(header: str) -> set[str]:
    return {t for t in re.split(r"[^0-9a-zà-öø-ÿ]+", header.lower()) if t}


def header_unit(header: str) -> str | None:
    """Unit in a header: ``landings (t)`` / ``landings [t]`` -> ``t``; ``hake_t`` -> ``t``."""
    m = re.fullmatch(r".*?[\(\[]\s*([^\)\]]+?)\s*[\)\]]\s*", header)
    if m:
        return m.group(1)
    m = re.fullmatch(r".*?[_ ]([A-Za-z0-9]+)[_ ]per[_ ]([A-Za-z0-9]+)\s*", header)
    if m and m.group(1).lower() in KNOWN_UNITS:
        return f"{m.group(1)}/{m.group(2)}"
    for sep in ("_", " "):
        if sep in header.strip():
            last = header.strip().rsplit(sep, 1)[1]
            if last.lower() in KNOWN_UNITS:
                return last
    return None


def read_table(source: str | Path | bytes, *, name: str | None = None) -> Table:
    """Read a wide or long CSV/Excel file into series and problems.

    Parameters
    ----------
    source : str, Path or bytes
        A file path, or the raw bytes of an upload (then give ``name``).
    name : str, optional
        File name to report (and to detect ``.xlsx``) when ``source`` is bytes.

    Returns
    -------
    Table
        Usable series (float, complete PeriodIndex, gaps NaN), what was kept of every series,
        and every problem with its 1-based file row, period and column.

    Raises
    ------
    InputError
        When nothing can be read as a table (see the module rules); never anything else.
    """
    if isinstance(source, bytes | bytearray | memoryview):
        data = bytes(source)
        label_ = name or "upload"
        if len(data) > MAX_FILE_BYTES:
            raise InputError(_too_big(len(data)))
    else:
        path = Path(source)
        label_ = name or path.name
        try:
            size = path.stat().st_size
            if not path.is_file():
                raise InputError(f"the file must be a regular file. Got {str(path)!r} (a folder?) instead.")
            if size > MAX_FILE_BYTES:
                raise InputError(_too_big(size))
            data = path.read_bytes()
        except FileNotFoundError:
            raise InputError(f"file {str(path)!r} does not exist. Check the path.") from None
        except OSError as exc:
            raise InputError(f"file {str(path)!r} cannot be read: {exc.strerror or exc}.") from None
    sha = hashlib.sha256(data).hexdigest()
    if not data.strip():
        raise InputError("the file is empty. Export the sheet again with its header and values.")
    if label_.lower().endswith((".xlsx", ".xlsm")) or data.startswith(b"PK\x03\x04"):
        grid = xlsx_grid(data)
    else:
        check_not_binary(data)
        text, notes = decode(data)
        grid = text_grid(text)
        grid.notes[:0] = notes
    return _Reader(grid, label_, sha).read()


def _short(text: str, limit: int = 40) -> str:
    """A cell text cut to ``limit`` characters for messages."""
    text = " ".join(text.split())
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _too_big(size: int) -> str:
    return (
        f"the file must be at most {MAX_FILE_BYTES // (1024 * 1024)} MB. Got {size / (1024 * 1024):.1f} MB "
        "instead; split it or remove unused sheets and columns."
    )


class _Reader:
    """One pass over a grid: header, time column, layout, rows, series."""

    def __init__(self, grid: Grid, source: str, sha: str) -> None:
        self.grid = grid
        self.source = source
        self.sha = sha
        self.file_problems: list[Problem] = list(grid.notes)

    # -- helpers -------------------------------------------------------------------------
    def note(self, severity: str, message: str, row: int | None = None, time: str | None = None, column: str | None = None) -> None:
        self.file_problems.append(Problem(severity, message, row=row, time=time, column=column))  # type: ignore[arg-type]

    def table(self, layout: str, infos: dict[str, SeriesInfo], series: dict[str, pd.Series]) -> Table:
        file_level = sorted(self.file_problems, key=lambda p: (p.row is not None, p.row or 0))
        problems = tuple(file_level) + tuple(p for info in infos.values() for p in info.problems)
        return Table(series=series, info=infos, problems=problems, layout=layout, source=self.source, sha256=self.sha)

    # -- main ----------------------------------------------------------------------------
    def read(self) -> Table:
        rows = self.grid.rows
        filled = [i for i, r in enumerate(rows) if any(not is_empty(c) for c in r)]
        if not filled:
            raise InputError("the file is empty (no cell has a value). Export the sheet again with its header and values.")
        h = self._header_index(rows, filled)
        header_raw = rows[h]
        width = max(len(header_raw), max(len(r) for r in rows))
        data = [(i + 1, list(r) + [None] * (width - len(r))) for i, r in enumerate(rows) if i > h]
        header = [cell_text(c).strip() for c in header_raw] + [""] * (width - len(header_raw))
        data = self._drop_empty_rows(data)
        if not data:
            self.note("error", f"the file has a header (row {h + 1}) but no data rows; add the values below the header.", row=h + 1)
            return self.table("wide", {}, {})
        self.raw_header = header
        names, keep = self._columns(header, data, len(header_raw) if self.grid.delimiter else width, h + 1)
        tcol, partner = self._time_column(names, keep, data)
        units_row = self._units_row(names, keep, tcol, partner, data)
        if units_row is not None:
            data = [d for d in data if d[0] != units_row[0]]
        value_cols = [j for j in keep if j not in (tcol, partner)]
        decimal, why = detect_decimal((d[1][j] for d in data for j in value_cols), self.grid.delimiter)
        if why:
            self.note(why.severity, why.message)
        self.decimal = decimal
        return self._read_rows(names, value_cols, tcol, partner, data, units_row)

    def _header_index(self, rows: list[list], filled: list[int]) -> int:
        """First row as wide as the table, skipping title lines above it (fewer cells)."""
        def count(i: int) -> int:
            return sum(not is_empty(c) for c in rows[i])

        widths = Counter(count(i) for i in filled[:60])
        typical = max(w for w, n in widths.items() if n == max(widths.values()))
        header = next((i for i in filled[:12] if count(i) >= typical), filled[0])
        skipped = [i for i in filled if i < header]
        if skipped:
            shown = "; ".join(repr(_short(" ".join(cell_text(c) for c in rows[i] if not is_empty(c)))) for i in skipped[:3])
            self.note(
                "warning",
                f"{rows_text([i + 1 for i in skipped])} above the header (row {header + 1}) "
                f"{'was skipped as a title line' if len(skipped) == 1 else 'were skipped as title lines'}: {shown}.",
                row=skipped[0] + 1,
            )
        return header

    def _drop_empty_rows(self, data: list[tuple[int, list]]) -> list[tuple[int, list]]:
        empty = [r for r, cells in data if all(is_empty(c) for c in cells)]
        if empty:
            last_filled = max((r for r, cells in data if not all(is_empty(c) for c in cells)), default=0)
            inner = [r for r in empty if r < last_filled]
            trailing = len(empty) - len(inner)
            parts = []
            if inner:
                parts.append(f"{rows_text(inner)} inside the table")
            if trailing:
                parts.append(f"{trailing} at the end")
            self.note("warning", f"empty rows were skipped: {' and '.join(parts)}.", row=empty[0])
        return [(r, cells) for r, cells in data if not all(is_empty(c) for c in cells)]

    def _columns(self, header: list[str], data: list[tuple[int, list]], header_len: int, hrow: int) -> tuple[list[str], list[int]]:
        """Column names (unique), and the columns that hold anything."""
        width = len(header)
        has_data = [any(not is_empty(cells[j]) for _, cells in data) for j in range(width)]
        empty_cols = [j + 1 for j in range(width) if not header[j] and not has_data[j]]
        if empty_cols:
            self.note("warning", f"empty column{'s' if len(empty_cols) > 1 else ''} {compact(empty_cols)} (no header, no values) ignored.", row=hrow)
        # Cells to the right of the header in a CSV: a row with more cells than the header.
        if header_len < width:
            over = [r for r, cells in data if any(not is_empty(c) for c in cells[header_len:])]
            if over:
                hint = " (a decimal comma in a comma-separated file? Quote such values or use ';' as delimiter)" if self.grid.delimiter == "," else ""
                self.note(
                    "error",
                    f"{rows_text(over)} {'has' if len(over) == 1 else 'have'} more cells than the header's {header_len}{hint}; "
                    "the values of such rows cannot be matched to columns and were not used.",
                    row=over[0],
                )
                self.misaligned = set(over)
        names: list[str] = []
        seen: dict[str, int] = {}
        keep: list[int] = []
        for j in range(width):
            name = header[j]
            if not name and not has_data[j]:
                names.append("")
                continue
            if j >= header_len:
                names.append(f"column {j + 1}")
                continue
            if not name and has_data[j]:
                name = f"column {j + 1}"
                self.note("warning", f"column {j + 1} has values but no header; it was named {name!r}.", row=hrow, column=name)
            if name in seen:
                new = f"{name} (column {j + 1})"
                self.note(
                    "warning",
                    f"column {j + 1} has the same header {name!r} as column {seen[name] + 1}; it was read as {new!r}. "
                    "Give every column its own name.",
                    row=hrow,
                    column=new,
                )
                name = new
            seen.setdefault(header[j], j)
            names.append(name)
            if name:
                keep.append(j)
        return names, keep

    def _time_column(self, names: list[str], keep: list[int], data: list[tuple[int, list]]) -> tuple[int, int | None]:
        def shares(j: int) -> tuple[float, float, Counter]:
            kinds = Counter(parse_time(cells[j])[0] for _, cells in data[:2000] if not is_empty(cells[j]))
            total = sum(kinds.values()) or 1
            good = sum(kinds[k] for k in "YQMD")
            return good / total, (good + kinds["range"]) / total, kinds

        keyword = [j for j in keep if _tokens(names[j]) & (_TIME_WORDS | _MONTH_WORDS | _QUARTER_WORDS)]
        scored = sorted(((shares(j)[1], -j, j) for j in keyword), reverse=True)
        tcol = scored[0][2] if scored and scored[0][0] > 0 else None
        if tcol is None:
            tcol = next((j for j in keep if shares(j)[0] >= 0.8), None)
        if tcol is None:
            tried = ", ".join(repr(names[j]) for j in keep[:8])
            looked = f" Column {names[keyword[0]]!r} has a time-like header but none of its cells is a year or date." if keyword else ""
            raise InputError(
                "the file must have a time column (years such as 1998, months 1998-07, quarters "
                f"1998-Q3 or dates 1998-07-01). Got columns {tried} instead.{looked}"
            )
        partner = None
        kinds = shares(tcol)[2]
        if kinds and kinds.most_common(1)[0][0] == "Y":
            for j in keep:
                toks = _tokens(names[j])
                limit = 12 if toks & _MONTH_WORDS else 4 if toks & _QUARTER_WORDS else 0
                if j != tcol and limit:
                    cells = [cells[j] for _, cells in data if not is_empty(cells[j])]
                    if cells and sum(parse_month(c, limit) is not None for c in cells) >= 0.8 * len(cells):
                        partner, self.partner_limit = j, limit
                        break
        return tcol, partner

    def _units_row(self, names, keep, tcol, partner, data) -> tuple[int, dict[int, str]] | None:
        """A row right under the header with units (``t``, ``kg``) instead of values."""
        row, cells = data[0]
        if parse_time(cells[tcol])[0] not in ("empty", "words"):
            return None
        others = [j for j in keep if j not in (tcol, partner) and not is_empty(cells[j])]
        if not others or any(parse_number(cells[j], ".")[0] != "text" or len(cell_text(cells[j])) > 24 for j in others):
            return None
        later = [c for _, c in data[1:6]]
        if not later or not any(parse_number(c[j], ".")[0] == "num" or parse_number(c[j], ",")[0] == "num" for c in later for j in others):
            return None
        units = {j: cell_text(cells[j]).strip("()[] ") for j in others}
        shown = ", ".join(f"{names[j]}: {u!r}" for j, u in list(units.items())[:6])
        self.note("warning", f"row {row} looks like a units row ({shown}); it was read as the units, not as data.", row=row)
        return row, units

    # -- rows ----------------------------------------------------------------------------
    def _read_rows(self, names, value_cols, tcol, partner, data, units_row) -> Table:
        tname = names[tcol]
        self.tcol = tcol
        misaligned = getattr(self, "misaligned", set())
        parsed: list[tuple[int, str, tuple[int, ...], list]] = []
        lost: dict[int, str] = {}  # row -> why its values cannot be placed in time
        capped = 0
        for row, cells in data:
            kind, parts = parse_time(cells[tcol])
            raw = cell_text(cells[tcol])
            if partner is not None and kind == "Y":
                sub = parse_month(cells[partner], self.partner_limit)
                if sub is None:
                    kind = "bad"
                    raw = f"{raw} {cell_text(cells[partner])}".strip()
                else:
                    kind, parts = ("M" if self.partner_limit == 12 else "Q"), (parts[0], sub)
            has_values = any(not is_empty(cells[j]) for j in value_cols)
            if row in misaligned:
                lost[row] = "it has more cells than the header"
                continue
            if kind in ("Y", "Q", "M", "D"):
                parsed.append((row, kind, parts, cells))
                continue
            if kind == "words" or (kind == "empty" and not has_values):
                what = f"{_short(raw)!r} is not a time" if raw else "it has no time"
                self.note("warning", f"row {row} was skipped: {what} (a total, note or footer row?).", row=row, column=tname)
                continue
            if kind == "range":
                why = f"year {parts[0]} is outside 1800-2100"
            elif kind == "empty":
                why = "the time cell is empty"
            else:
                why = f"{_short(raw)!r} is not a year, month, quarter or date"
            lost[row] = why
            if capped < 10:
                self.note("error", f"row {row}: {why}; write the time as 1998, 1998-07, 1998-Q3 or 1998-07-01. The row's values were not used.", row=row, column=tname)
            capped += 1
        if capped > 10:
            rows = [r for r in lost if r not in misaligned]
            self.note("error", f"{capped - 10} more rows have times that cannot be read ({rows_text(rows[10:])}).", row=rows[10], column=tname)

        freq, ordinals = self._frequency(parsed, tname)
        lost.update(self.mixed)
        if not freq:
            return self.table("wide", {}, {})
        decimal = self.decimal
        rows_ok = [
            (row, ordinals[row], cells, {j: parse_number(cells[j], decimal) for j in value_cols})
            for row, _, _, cells in parsed
            if row in ordinals
        ]
        long = self._long_roles(names, value_cols, tcol, rows_ok)
        if long is not None:
            return self._build_long(names, long, freq, rows_ok, data, lost, tname)
        return self._build_wide(names, value_cols, freq, rows_ok, data, lost, units_row)

    def _frequency(self, parsed, tname) -> tuple[str, dict[int, int]]:
        self.mixed: dict[int, str] = {}
        if not parsed:
            self.note("error", f"no row has a time that can be read in column {tname!r}; write times as 1998, 1998-07, 1998-Q3 or 1998-07-01.", column=tname)
            return "", {}
        kinds = Counter(k for _, k, _, _ in parsed)
        main = kinds.most_common(1)[0][0]
        odd = [(row, k, cells) for row, k, _, cells in parsed if k != main]
        names = {"Y": "a year", "Q": "a quarter", "M": "a month", "D": "a date"}
        for row, k, cells in odd[:10]:
            self.note(
                "error",
                f"row {row}: the time {_short(cell_text(cells[self.tcol]))!r} is {names[k]} but most rows have {names[main]}; "
                "one file holds one frequency. The row's values were not used.",
                row=row,
                column=tname,
            )
        self.mixed = {
            row: f"its time {_short(cell_text(cells[self.tcol]))!r} is {names[k]} while most rows have {names[main]}"
            for row, k, cells in odd
        }
        good = [(row, parts) for row, k, parts, _ in parsed if k == main]
        if main == "D":
            months = sorted({month_ordinal("D", p) for _, p in good})
            steps = [b - a for a, b in zip(months, months[1:], strict=False)]
            freq = "annual" if all(s % 12 == 0 for s in steps) else "quarterly" if all(s % 3 == 0 for s in steps) else "monthly"
            by_month: dict[int, list[int]] = defaultdict(list)
            for row, p in good:
                by_month[month_ordinal("D", p)].append(row)
            close = [(m, rows) for m, rows in by_month.items() if len({tuple(p) for r, p in good if r in rows}) > 1]
            if close:
                m, rows = min(close)
                self.note(
                    "error",
                    f"dates closer than one month (rows {compact(rows)} fall in {m // 12}-{m % 12 + 1:02d}); "
                    "the file must hold annual, quarterly or monthly values: add them up to months first.",
                    row=rows[0],
                    column=tname,
                )
        else:
            freq = _FREQ_OF_KIND[main]
        ordinals: dict[int, int] = {}
        for row, p in good:
            y = p[0]
            if freq == "annual":
                ordinals[row] = y
            elif freq == "quarterly":
                ordinals[row] = y * 4 + ((p[1] - 1) // 3 if main == "D" else p[1] - 1)
            else:
                ordinals[row] = y * 12 + p[1] - 1
        return freq, ordinals

    def _order_warning(self, freq: str, seq: list[tuple[int, int]], column: str | None) -> None:
        """Warn once when rows are not in time order (they are sorted)."""
        ords = [o for _, o in seq]
        if all(a <= b for a, b in zip(ords, ords[1:], strict=False)):
            return
        if all(a > b for a, b in zip(ords, ords[1:], strict=False)):
            msg = "rows run from the newest to the oldest period; they were sorted oldest first."
            self.note("warning", msg, row=seq[0][0], time=label(freq, seq[0][1]), column=column)
            return
        k = next(i for i in range(1, len(ords)) if ords[i] < ords[i - 1])
        what = f" in series {column!r}" if column else ""
        self.note(
            "warning",
            f"rows are not in time order{what}: row {seq[k][0]} ({label(freq, ords[k])}) comes after "
            f"{label(freq, ords[k - 1])}; they were sorted.",
            row=seq[k][0],
            time=label(freq, ords[k]),
            column=column,
        )

    def _exact_duplicates(self, rows_ok, key) -> list:
        seen: dict[tuple, int] = {}
        out = []
        dups: list[tuple[int, int]] = []
        for item in rows_ok:
            k = key(item)
            if k in seen:
                dups.append((item[0], seen[k]))
                continue
            seen[k] = item[0]
            out.append(item)
        for row, first in dups[:10]:
            self.note("warning", f"row {row} repeats row {first} exactly; it was kept once.", row=row)
        if len(dups) > 10:
            self.note("warning", f"{len(dups) - 10} more exact repeats ({rows_text([r for r, _ in dups[10:]])}) were kept once.", row=dups[10][0])
        return out

    def _lost_problems(self, row_values: dict[str, list[int]], lost: dict[int, str]) -> dict[str, list[Problem]]:
        out: dict[str, list[Problem]] = {}
        for name, rows in row_values.items():
            if rows:
                out[name] = [
                    Problem(
                        "error",
                        f"{rows_text(rows)} {'has a value' if len(rows) == 1 else 'have values'} for this series "
                        f"that cannot be placed in time ({lost[rows[0]]}); fix the time cell so the value is not lost.",
                        row=rows[0],
                        column=name,
                    )
                ]
        return out

    # -- layouts -------------------------------------------------------------------------
    @staticmethod
    def _classify(parsed: list[tuple[str, float]]) -> str:
        """``num``, ``text`` or ``empty`` for a column from its parsed cells."""
        kinds = Counter(kind for kind, _ in parsed)
        if kinds["num"] + kinds["text"] == 0:
            return "empty"
        return "num" if kinds["num"] >= 0.5 * (kinds["num"] + kinds["text"]) else "text"

    def _long_roles(self, names, value_cols, tcol, rows_ok):
        roles = {j: self._classify([p[j] for _, _, _, p in rows_ok]) for j in value_cols}
        texts = [j for j in value_cols if roles[j] == "text"]
        nums = [j for j in value_cols if roles[j] == "num"]
        if not texts or not nums:
            return None
        unit_cols = [j for j in texts if _tokens(names[j]) & _UNIT_WORDS]
        if not unit_cols:
            unit_cols = [j for j in texts if all(cell_text(cells[j]).lower() in KNOWN_UNITS for _, _, cells, _ in rows_ok if not is_empty(cells[j]))]
        keys = [j for j in texts if j not in unit_cols]
        # Long when the times repeat (several series share them) and a text column repeats its
        # names; or a name-like header (``series``, ``stock``) over repeated times or one name.
        n = len(rows_ok)
        times_repeat = len({o for _, o, _, _ in rows_ok}) <= 0.75 * n
        distinct = {j: len({cell_text(c[j]) for _, _, c, _ in rows_ok if not is_empty(c[j])}) for j in keys}
        repeated = [j for j in keys if distinct[j] <= n / 2]
        named = [j for j in keys if _tokens(names[j]) & _NAME_WORDS and (times_repeat or distinct[j] == 1)]
        if named:
            return named, unit_cols[:1], nums
        if times_repeat and repeated:
            return repeated, unit_cols[:1], nums
        return None

    def _build_wide(self, names, value_cols, freq, rows_ok, data, lost, units_row) -> Table:
        rows_ok = self._exact_duplicates(rows_ok, key=lambda it: (it[1], tuple(it[2][j] for j in value_cols)))
        self._order_warning(freq, [(r, o) for r, o, _, _ in rows_ok], None)
        infos: dict[str, SeriesInfo] = {}
        series: dict[str, pd.Series] = {}
        cells_by_row = dict(data)
        for j in value_cols:
            if self._classify([p[j] for _, _, _, p in rows_ok]) == "text":
                example = next((r, cell_text(c[j])) for r, _, c, p in rows_ok if p[j][0] == "text")
                self.note(
                    "warning",
                    f"column {names[j]!r} holds text, not numbers (e.g. {_short(example[1])!r} in row {example[0]}); it was not read as a series. "
                    "If it is one, write only numbers in it.",
                    row=example[0],
                    column=names[j],
                )
                continue
            obs = []
            for row, ordinal, cells, p in rows_ok:
                kind, value = p[j]
                obs.append(Obs(row, ordinal, kind, value, cell_text(cells[j])))
            lost_rows = [r for r in lost if not is_empty(cells_by_row[r][j])]
            pre = self._lost_problems({names[j]: lost_rows}, lost).get(names[j], [])
            unit = units_row[1].get(j) if units_row and j in units_row[1] else header_unit(self.raw_header[j])
            info, s = build_series(names[j], obs, freq, unit=unit, decimal=self.decimal, problems=pre)
            infos[names[j]] = info
            if s is not None:
                series[names[j]] = s
        if not infos:
            self.note("error", "the file has a time column but no column of numbers to read as a series.")
        return self.table("wide", infos, series)

    def _build_long(self, names, roles, freq, rows_ok, data, lost, tname) -> Table:
        keys, unit_cols, nums = roles
        ucol = unit_cols[0] if unit_cols else None
        rows_ok = self._exact_duplicates(rows_ok, key=lambda it: (it[1], tuple(it[2][j] for j in keys + unit_cols + nums)))
        obs_by: dict[str, list[Obs]] = {}
        for row, ordinal, cells, p in rows_ok:
            key = " ".join(cell_text(cells[j]) for j in keys if not is_empty(cells[j])).strip()
            if not key:
                if any(not is_empty(cells[j]) for j in nums):
                    self.note("warning", f"row {row} has a value but no series name ({names[keys[0]]!r} is empty); the row was skipped.", row=row, time=label(freq, ordinal))
                continue
            for j in nums:
                name = key if len(nums) == 1 else f"{key} {names[j]}"
                kind, value = p[j]
                unit = cell_text(cells[ucol]) if ucol is not None and not is_empty(cells[ucol]) else None
                obs_by.setdefault(name, []).append(Obs(row, ordinal, kind, value, cell_text(cells[j]), unit))
        cells_by_row = dict(data)
        lost_by: dict[str, list[int]] = defaultdict(list)
        for r in lost:
            cells = cells_by_row[r]
            key = " ".join(cell_text(cells[j]) for j in keys if not is_empty(cells[j])).strip()
            for j in nums:
                if key and not is_empty(cells[j]):
                    lost_by[key if len(nums) == 1 else f"{key} {names[j]}"].append(r)
        pre = self._lost_problems(lost_by, lost)
        infos: dict[str, SeriesInfo] = {}
        series: dict[str, pd.Series] = {}
        for name, obs in obs_by.items():
            self._order_warning(freq, [(o.row, o.ordinal) for o in obs], name)
            default_unit = header_unit(self.raw_header[nums[0]]) if len(nums) == 1 else None
            info, s = build_series(name, obs, freq, unit=default_unit, decimal=self.decimal, problems=pre.get(name))
            infos[name] = info
            if s is not None:
                series[name] = s
        used = f"series names from {', '.join(repr(names[j]) for j in keys)}, values from {', '.join(repr(names[j]) for j in nums)}"
        if ucol is not None:
            used += f", units from {names[ucol]!r}"
        if not infos:
            self.note("error", f"long layout ({used}) but no row has both a series name and a time.")
        return self.table("long", infos, series)

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
  ``YYYY-MM`` (also ``YYYY/MM``, ``2020-Mar``), ``YYYY-Qn`` (also ``YYYYQn``, ``Qn YYYY``), dates
  ``YYYY-MM-DD``, ``DD.MM.YYYY``, ``DD/MM/YYYY`` or ``MM/DD/YYYY`` (day or month first is decided
  from the whole column; a guess is reported), and a year column plus a ``month``/``quarter``
  column. The frequency of dates comes from their spacing: all steps whole years -> annual, all
  multiples of 3 months -> quarterly, else monthly; two dates in one month is an error. Years
  must be 1800-2100. A row whose time has digits but cannot be read (or has another frequency)
  is an error for every series with a value in it; a row whose time is a word (``Total``,
  ``Source: ...``) is skipped with a warning. Unsorted rows are sorted, with a warning.
* **Duplicates.** A period in two rows with different values is an error for that series naming
  both rows; the same value twice, or an exact repeat of a whole row, is kept once (warning).
* **Files.** A workbook is recognised by its content (a zip archive), whatever its name; only
  the first sheet is read (the report says which). Text may be UTF-8 with or without BOM,
  UTF-16 with BOM, else Windows-1252/Latin-1 (warning); delimiters comma, semicolon, tab or bar;
  a ``sep=;`` first line is honoured; title lines above the header are skipped (warning).
* **Comment lines.** A line starting with an unquoted ``#`` is a comment (as for
  ``pandas.read_csv(comment="#")``): skipped with a warning naming its rows, above the header or
  inside the table (unless another of its cells holds a time); a header written ``#year,...``
  is read as the header. A ``#`` inside a cell (``Stock #3``, a note) is ordinary text.
* **Numbers.** Decimal point or comma is chosen from unambiguous cells (``12.5`` vs ``12,5``);
  the other mark is accepted as thousands separator only in groups of three (``1,234.5``,
  ``1.234,5``, ``1 234,5``). Empty, ``NA``, ``-``, ``..`` and similar are missing values (warning).
  Text in a number cell (``about 900``, ``12.5t``) becomes a missing value with a warning naming
  the row and text; the series stays usable unless too few values remain.
* **Minimum length.** 15 non-missing values for annual series, 20 for quarterly, 36 for monthly
  (:data:`MIN_OBSERVATIONS`); fewer is an error saying how many there are and how many are needed.
* **Units.** From a long-layout unit column (a change of unit inside a series is an error), a
  units row under the header (warning, the row is not data), a wide file's ``unit`` column with
  one value throughout, or the header: ``name (unit)`` /
  ``name [unit]``, or a last ``_``-separated word that is a known unit (``hake_t`` -> ``t``,
  ``cpue_index`` -> ``index``; ``hake_kg_per_tow`` -> ``kg/tow``). Series keep the full
  header as their name (``hake_t``).
* Nothing is dropped silently: skipped rows, columns and cells are all reported; missing values
  stay NaN on a complete PeriodIndex from the first to the last value of each series.
"""

from __future__ import annotations

import hashlib
from collections import Counter
from pathlib import Path

import pandas as pd

from forecasting_core._results import InputError, Problem, SeriesInfo, Table
from forecasting_core._table_comments import (
    comments_above,
    drop_comments_in_table,
    header_written_as_comment,
    is_number_or_time,
)
from forecasting_core._table_parse import (
    Grid,
    cell_text,
    check_not_binary,
    compact,
    decode,
    detect_decimal,
    is_empty,
    parse_month,
    parse_number,
    parse_time,
    text_grid,
)
from forecasting_core._table_rows import (
    MONTH_WORDS,
    QUARTER_WORDS,
    TIME_WORDS,
    RowsMixin,
    header_unit,
    short,
    tokens,
)
from forecasting_core._table_series import MIN_OBSERVATIONS, rows_text
from forecasting_core._table_xlsx import xlsx_grid

__all__ = ["MAX_FILE_BYTES", "MIN_OBSERVATIONS", "header_unit", "read_table"]

#: Largest file accepted, in bytes (20 MB).
MAX_FILE_BYTES = 20 * 1024 * 1024


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
                raise InputError(
                    f"the file must be a regular file. Got {str(path)!r} (a folder?) instead."
                )
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
    if data.startswith(b"PK\x03\x04"):  # a workbook is a zip archive, whatever its name
        grid = xlsx_grid(data)
    else:
        check_not_binary(data)
        text, notes = decode(data)
        grid = text_grid(text)
        grid.notes[:0] = notes
        if label_.lower().endswith((".xlsx", ".xlsm")):
            grid.notes.insert(
                0,
                Problem(
                    "warning",
                    f"{label_!r} is named like a workbook but holds text; it was read as CSV.",
                ),
            )
    return _Reader(grid, label_, sha).read()


def _too_big(size: int) -> str:
    return (
        f"the file must be at most {MAX_FILE_BYTES // (1024 * 1024)} MB. Got {size / (1024 * 1024):.1f} MB "
        "instead; split it or remove unused sheets and columns."
    )


class _Reader(RowsMixin):
    """One pass over a grid: header, time column, layout, rows, series."""

    def __init__(self, grid: Grid, source: str, sha: str) -> None:
        self.grid = grid
        self.source = source
        self.sha = sha
        self.file_problems: list[Problem] = list(grid.notes)

    # -- helpers -------------------------------------------------------------------------
    def note(
        self,
        severity: str,
        message: str,
        row: int | None = None,
        time: str | None = None,
        column: str | None = None,
    ) -> None:
        self.file_problems.append(Problem(severity, message, row=row, time=time, column=column))  # type: ignore[arg-type]

    def table(
        self, layout: str, infos: dict[str, SeriesInfo], series: dict[str, pd.Series]
    ) -> Table:
        file_level = sorted(self.file_problems, key=lambda p: (p.row is not None, p.row or 0))
        problems = tuple(file_level) + tuple(p for info in infos.values() for p in info.problems)
        return Table(
            series=series,
            info=infos,
            problems=problems,
            layout=layout,
            source=self.source,
            sha256=self.sha,
        )

    # -- main ----------------------------------------------------------------------------
    def read(self) -> Table:
        rows = self.grid.rows
        comments = set(self.grid.comment_rows)
        filled = [
            i for i, r in enumerate(rows) if i not in comments and any(not is_empty(c) for c in r)
        ]
        if not filled and comments:
            raise InputError(
                f"the file must hold a table. Got only comment lines instead "
                f"({rows_text(sorted(i + 1 for i in comments))} start with '#'); remove the '#' at "
                "the start of the header and data rows."
            )
        if not filled:
            raise InputError(
                "the file is empty (no cell has a value). Export the sheet again with its header and values."
            )
        h = self._header_index(rows, filled)
        as_comment = header_written_as_comment(rows, h, comments)
        if as_comment is not None:
            h = as_comment[0]
            self.file_problems.append(as_comment[1])
        above = comments_above(rows, h, comments)
        if above is not None:
            self.file_problems.append(above)
        header_raw = rows[h]
        data, inside = drop_comments_in_table(
            [(i + 1, r) for i, r in enumerate(rows) if i > h], comments
        )
        if inside is not None:
            self.file_problems.append(inside)
        width = max(len(header_raw), max((len(r) for _, r in data), default=0))
        data = [(row, list(r) + [None] * (width - len(r))) for row, r in data]
        header = [cell_text(c).strip() for c in header_raw] + [""] * (width - len(header_raw))
        data = self._drop_empty_rows(data)
        if not data:
            self.note(
                "error",
                f"the file has a header (row {h + 1}) but no data rows; add the values below the header.",
                row=h + 1,
            )
            return self.table("wide", {}, {})
        self.raw_header = header
        names, keep = self._columns(
            header, data, len(header_raw) if self.grid.delimiter else width, h + 1
        )
        tcol, partner = self._time_column(names, keep, data)
        units_row = self._units_row(names, keep, tcol, partner, data)
        if units_row is not None:
            data = [d for d in data if d[0] != units_row[0]]
        value_cols = [j for j in keep if j not in (tcol, partner)]
        decimal, why = detect_decimal(
            (d[1][j] for d in data for j in value_cols), self.grid.delimiter
        )
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

        # A header with an empty name or two (or a units row under it) is narrower than the
        # data: when the first full row is data (numbers where the next row has them), the
        # header is the earliest of the text rows filling half the width right above it and
        # above any data rows with gaps before it.
        def like_next(i: int, j: int) -> bool:
            """Row i holds numbers, in the same filled columns as row j does."""
            pairs = [
                (is_number_or_time(a), is_number_or_time(b))
                for a, b in zip(rows[i], rows[j], strict=False)
                if not is_empty(a) and not is_empty(b)
            ]
            return any(a for a, _ in pairs) and all(a == b for a, b in pairs)

        after = next((i for i in filled if i > header), None)
        if after is not None and like_next(header, after):
            before = [i for i in filled if i < header]
            while before and like_next(before[-1], header):  # data rows with gaps
                before.pop()
            text_row = None
            while (
                before
                and count(before[-1]) >= max(2, typical / 2)
                and not any(map(is_number_or_time, rows[before[-1]]))
            ):
                text_row = before.pop()
            if text_row is not None:
                header = text_row
        skipped = [i for i in filled if i < header]
        if skipped:
            shown = "; ".join(
                repr(short(" ".join(cell_text(c) for c in rows[i] if not is_empty(c))))
                for i in skipped[:3]
            )
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
            last_filled = max(
                (r for r, cells in data if not all(is_empty(c) for c in cells)), default=0
            )
            inner = [r for r in empty if r < last_filled]
            trailing = len(empty) - len(inner)
            parts = []
            if inner:
                parts.append(f"{rows_text(inner)} inside the table")
            if trailing:
                parts.append(f"{trailing} at the end")
            self.note("warning", f"empty rows were skipped: {' and '.join(parts)}.", row=empty[0])
        return [(r, cells) for r, cells in data if not all(is_empty(c) for c in cells)]

    def _columns(
        self, header: list[str], data: list[tuple[int, list]], header_len: int, hrow: int
    ) -> tuple[list[str], list[int]]:
        """Column names (unique), and the columns that hold anything."""
        width = len(header)
        has_data = [any(not is_empty(cells[j]) for _, cells in data) for j in range(width)]
        empty_cols = [j + 1 for j in range(width) if not header[j] and not has_data[j]]
        if empty_cols:
            self.note(
                "warning",
                f"empty column{'s' if len(empty_cols) > 1 else ''} {compact(empty_cols)} (no header, no values) ignored.",
                row=hrow,
            )
        # Cells to the right of the header in a CSV: a row with more cells than the header.
        if header_len < width:
            over = [r for r, cells in data if any(not is_empty(c) for c in cells[header_len:])]
            if over:
                hint = (
                    " (a decimal comma in a comma-separated file? Quote such values or use ';' as delimiter)"
                    if self.grid.delimiter == ","
                    else ""
                )
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
                self.note(
                    "warning",
                    f"column {j + 1} has values but no header; it was named {name!r}.",
                    row=hrow,
                    column=name,
                )
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

    def _time_column(
        self, names: list[str], keep: list[int], data: list[tuple[int, list]]
    ) -> tuple[int, int | None]:
        def shares(j: int) -> tuple[float, float, Counter]:
            kinds = Counter(
                parse_time(cells[j])[0] for _, cells in data[:2000] if not is_empty(cells[j])
            )
            total = sum(kinds.values()) or 1
            good = sum(kinds[k] for k in ("Y", "Q", "M", "D", "DX"))
            return good / total, (good + kinds["range"]) / total, kinds

        keyword = [j for j in keep if tokens(names[j]) & (TIME_WORDS | MONTH_WORDS | QUARTER_WORDS)]
        # Prefer the keyword column with most readable times, then most year-like cells.
        scored = sorted(((*shares(j)[:2], -j, j) for j in keyword), reverse=True)
        tcol = scored[0][3] if scored and scored[0][1] > 0 else None
        if tcol is None:
            tcol = next((j for j in keep if shares(j)[0] >= 0.8), None)
        if tcol is None:
            tried = ", ".join(repr(names[j]) for j in keep[:8])
            looked = ""
            if keyword:
                example = next(
                    (cell_text(c[keyword[0]]) for _, c in data if not is_empty(c[keyword[0]])), ""
                )
                looked = (
                    f" Column {names[keyword[0]]!r} has a time-like header but none of its cells is a year or "
                    f"date (e.g. {short(example)!r})."
                )
            across = [j for j in keep if parse_time(names[j])[0] in ("Y", "Q", "M", "D")]
            if len(across) >= max(2, len(keep) // 2):
                looked += (
                    f" The times run across the header ({names[across[0]]!r} ... {names[across[-1]]!r}):"
                    " transpose the table so that each row is one period and each column one series."
                )
            raise InputError(
                "the file must have a time column (years such as 1998, months 1998-07, quarters "
                f"1998-Q3 or dates 1998-07-01). Got columns {tried} instead.{looked}"
            )
        partner = None
        kinds = shares(tcol)[2]
        if kinds and kinds.most_common(1)[0][0] == "Y":
            for j in keep:
                toks = tokens(names[j])
                limit = 12 if toks & MONTH_WORDS else 4 if toks & QUARTER_WORDS else 0
                if j != tcol and limit:
                    cells = [cells[j] for _, cells in data if not is_empty(cells[j])]
                    if cells and sum(parse_month(c, limit) is not None for c in cells) >= 0.8 * len(
                        cells
                    ):
                        partner, self.partner_limit = j, limit
                        break
        return tcol, partner

    def _units_row(self, names, keep, tcol, partner, data) -> tuple[int, dict[int, str]] | None:
        """A row right under the header with units (``t``, ``kg``) instead of values."""
        row, cells = data[0]
        if parse_time(cells[tcol])[0] not in ("empty", "words"):
            return None
        others = [j for j in keep if j not in (tcol, partner) and not is_empty(cells[j])]
        if not others or any(
            parse_number(cells[j], ".")[0] != "text" or len(cell_text(cells[j])) > 24
            for j in others
        ):
            return None
        later = [c for _, c in data[1:6]]
        if not later or not any(
            parse_number(c[j], ".")[0] == "num" or parse_number(c[j], ",")[0] == "num"
            for c in later
            for j in others
        ):
            return None
        units = {j: cell_text(cells[j]).strip("()[] ") for j in others}
        shown = ", ".join(f"{names[j]}: {u!r}" for j, u in list(units.items())[:6])
        self.note(
            "warning",
            f"row {row} looks like a units row ({shown}); it was read as the units, not as data.",
            row=row,
        )
        return row, units

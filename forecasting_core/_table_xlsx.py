"""First sheet of an ``.xlsx`` workbook -> grid of cells, for :mod:`forecasting_core._table`."""

from __future__ import annotations

import io
import warnings

from forecasting_core._results import InputError, Problem
from forecasting_core._table_parse import Grid, is_comment_cell


def xlsx_grid(data: bytes) -> Grid:
    """Read the first sheet of an ``.xlsx`` workbook (values, not formulas)."""
    try:
        import openpyxl
    except ImportError:  # pragma: no cover - openpyxl is a dependency
        raise InputError(
            "reading .xlsx needs the openpyxl package. Save the sheet as CSV instead."
        ) from None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
            names = list(book.sheetnames)
            if not names:
                raise InputError("the workbook must contain a sheet. Got none instead.")
            sheet = book[names[0]]
            rows = [
                [c.strip() if isinstance(c, str) else c for c in row]
                for row in sheet.iter_rows(values_only=True)
            ]
            book.close()
            unsaved = _unsaved_formulas(openpyxl, data, names[0], rows)
    except InputError:
        raise
    except Exception as exc:  # openpyxl raises many types on damaged files
        raise InputError(
            f"the file must be a readable .xlsx workbook. Got a damaged or unsupported one instead ({type(exc).__name__})."
        ) from None
    notes = []
    if unsaved:
        count, (r, c, formula) = unsaved
        notes.append(
            Problem(
                "warning",
                f"{count} cell{'s hold formulas' if count > 1 else ' holds a formula'} without saved results "
                f"(e.g. row {r}, column {c}: {formula!r}), so they read as empty. Open the workbook in "
                "a spreadsheet program and save it again, or export the sheet as CSV.",
                row=r,
            )
        )
    if len(names) > 1:
        others = ", ".join(repr(n) for n in names[1:])
        notes.append(
            Problem(
                "warning",
                f"the workbook has {len(names)} sheets; only the first, {names[0]!r}, was read "
                f"(not {others}). Move the data to the first sheet to read another one.",
            )
        )
    comments = {i for i, row in enumerate(rows) if row and is_comment_cell(row[0])}
    return Grid(rows=rows, delimiter=None, notes=notes, comment_rows=comments)


def _unsaved_formulas(openpyxl, data: bytes, sheet_name: str, values: list[list]):
    """(count, first (row, column, formula)) of formula cells whose saved value is empty."""
    if len(data) > 5 * 1024 * 1024:
        return None
    book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=False)
    found = []
    for i, row in enumerate(book[sheet_name].iter_rows(values_only=True)):
        for j, cell in enumerate(row):
            if isinstance(cell, str) and cell.startswith("="):
                value = values[i][j] if i < len(values) and j < len(values[i]) else None
                if value is None:
                    found.append((i + 1, j + 1, cell))
    book.close()
    return (len(found), found[0]) if found else None

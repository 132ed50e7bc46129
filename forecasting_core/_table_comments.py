"""Comment lines (rows starting with ``#``) for :mod:`forecasting_core._table`.

Data files often carry notes on lines that start with ``#`` (``pandas.read_csv(path,
comment="#")`` skips them, and Haulcast's own CSV exports write their source and cautions so).
The reader skips such lines and says which rows it skipped; a ``#`` inside a cell (``Stock #3``,
a note column) is ordinary text. Three rules:

* Above the header, a comment line is skipped and reported; it never counts as a title line or
  as the header, even when its commas make it as wide as the table.
* A header written as a comment (``#year,hake`` over rows of data) is read as the header
  without its ``#``, with a warning.
* Below the header, a row starting with ``#`` is skipped as a comment unless another of its
  cells holds a time (then it is data whose first cell begins with ``#``, e.g. a stock named
  ``#3`` in the long layout).
"""

from __future__ import annotations

from collections.abc import Sequence

from forecasting_core._results import Problem
from forecasting_core._table_parse import Cell, cell_text, is_empty, parse_number, parse_time
from forecasting_core._table_series import rows_text

_TIME_KINDS = ("Y", "Q", "M", "D", "DX")


def _count(row: Sequence[Cell]) -> int:
    return sum(not is_empty(c) for c in row)


def is_number_or_time(cell: Cell) -> bool:
    """True for a cell that holds a number or a time (data, not a header)."""
    if is_empty(cell):
        return False
    return (
        parse_number(cell, ".")[0] == "num"
        or parse_number(cell, ",")[0] == "num"
        or parse_time(cell)[0] in _TIME_KINDS
    )


def _line_text(row: Sequence[Cell]) -> str:
    text = ", ".join(cell_text(c) for c in row if not is_empty(c))
    text = " ".join(text.split())
    return text if len(text) <= 60 else text[:57] + "..."


def header_written_as_comment(
    rows: list[list[Cell]], header: int, comments: set[int]
) -> tuple[int, Problem] | None:
    """The comment row right above ``header`` when it is the real header (``#year,hake``).

    It is when no other row lies between them, both have the same number of filled cells (two
    or more), the chosen header row holds numbers or times (so it is data) and the comment row,
    without its ``#``, holds none. Returns (row index, warning) and strips the ``#`` in place.
    """
    above = [c for c in comments if c < header]
    if not above:
        return None
    c = max(above)
    between = any(_count(rows[i]) for i in range(c + 1, header))
    width = _count(rows[header])
    if between or width < 2 or _count(rows[c]) != width:
        return None
    first = cell_text(rows[c][0]).strip().lstrip("#").strip()
    candidate = [first, *rows[c][1:]]
    if not first or any(is_number_or_time(cell) for cell in candidate):
        return None
    if not any(is_number_or_time(cell) for cell in rows[header]):
        return None
    rows[c] = candidate
    comments.discard(c)
    return c, Problem(
        "warning",
        f"row {c + 1} starts with '#' but is the table's header (row {header + 1} below it holds "
        f"values); it was read as the header without the '#'.",
        row=c + 1,
    )


def comments_above(rows: list[list[Cell]], header: int, comments: set[int]) -> Problem | None:
    """One warning for the comment lines above the header (None when there are none)."""
    skipped = sorted(c for c in comments if c < header and _count(rows[c]))
    if not skipped:
        return None
    shown = "; ".join(repr(_line_text(rows[i])) for i in skipped[:2])
    more = f" and {len(skipped) - 2} more" if len(skipped) > 2 else ""
    verb = "starts with '#' and was skipped as a comment line" if len(skipped) == 1 else (
        "start with '#' and were skipped as comment lines"
    )  # fmt: skip
    return Problem(
        "warning",
        f"{rows_text([i + 1 for i in skipped])} above the header (row {header + 1}) {verb}: "
        f"{shown}{more}.",
        row=skipped[0] + 1,
    )


def drop_comments_in_table(
    data: list[tuple[int, list[Cell]]], comments: set[int]
) -> tuple[list[tuple[int, list[Cell]]], Problem | None]:
    """Data rows without the comment lines below the header, and a warning naming them.

    ``data`` holds (1-based file row, cells). A row counts as a comment when its file row is
    in ``comments`` (0-based) and none of its other cells holds a time.
    """
    if not comments:
        return data, None
    kept, skipped = [], []
    for row, cells in data:
        if row - 1 in comments and not any(
            not is_empty(c) and parse_time(c)[0] in _TIME_KINDS for c in cells[1:]
        ):
            skipped.append((row, cells))
        else:
            kept.append((row, cells))
    if not skipped:
        return data, None
    shown = "; ".join(repr(_line_text(cells)) for _, cells in skipped[:2])
    more = f" and {len(skipped) - 2} more" if len(skipped) > 2 else ""
    one = len(skipped) == 1
    return kept, Problem(
        "warning",
        f"{rows_text([r for r, _ in skipped])} inside the table "
        f"{'starts' if one else 'start'} with '#' and {'was' if one else 'were'} skipped as "
        f"{'a comment line' if one else 'comment lines'}: {shown}{more}. If "
        f"{'it holds' if one else 'they hold'} data, remove the '#' at the start of the row "
        "(a name starting with '#' is read when the row has its time).",
        row=skipped[0][0],
    )

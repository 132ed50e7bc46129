"""Rows whose time has another frequency than most rows of the file: one problem per group.

Used by :class:`forecasting_core._table_rows.RowsMixin` once the layout is known, so a long
file names the series it could not read instead of listing its rows one by one.
"""

from __future__ import annotations

from collections import Counter, defaultdict

from forecasting_core._results import Problem
from forecasting_core._table_series import rows_text

_SINGULAR = {"Y": "a year", "Q": "a quarter", "M": "a month", "D": "a date"}
_PLURAL = {"Y": "years", "Q": "quarters", "M": "months", "D": "dates"}


def mixed_frequency_problems(
    mixed_rows: dict[int, tuple[str, str]],
    main: str,
    n_main: int,
    tname: str,
    owner: dict[int, str] | None = None,
    named: set[str] | None = None,
) -> list[Problem]:
    """Errors for the rows whose time kind differs from the file's main kind.

    Parameters
    ----------
    mixed_rows : dict
        1-based file row -> (time kind ``Y``/``Q``/``M``/``D``, the time cell's text).
    main : str
        The kind most rows have.
    n_main : int
        How many rows have the main kind.
    tname : str
        The time column's header (the column of file-wide problems).
    owner : dict, optional
        Long layout: row -> series name of the row. A series whose rows all have the other
        kind gets one error naming it (it is not read at all).
    named : set of str, optional
        Long layout: the series that have rows of the main kind; their own lost-rows problem
        names the rows, so no file-wide error is added for them.

    Returns
    -------
    list of Problem
        In a wide layout (``owner`` None) one error for all such rows.
    """
    groups: dict[str, list[int]] = defaultdict(list)
    for row in mixed_rows:
        groups[owner.get(row, "") if owner is not None else ""].append(row)
    out: list[Problem] = []
    for name, rows in groups.items():
        if owner is not None and name in (named or set()):
            continue
        k = Counter(mixed_rows[r][0] for r in rows).most_common(1)[0][0]
        example = mixed_rows[rows[0]][1]
        if len(rows) == 1 and not name:
            msg = (
                f"row {rows[0]}: the time {example!r} is {_SINGULAR[k]} but most rows have "
                f"{_SINGULAR[main]}; one file holds one frequency. The row's values were not used."
            )
        else:
            counted = f"{len(rows)} {'row' if len(rows) == 1 else 'rows'} (file {rows_text(rows)})"
            other = f"the other {n_main} rows have {_PLURAL[main]}"
            if name:
                msg = (
                    f"series {name!r} was not read: its {counted} have times that are "
                    f"{_PLURAL[k]} (e.g. {example!r}) while {other}, and one file holds one "
                    f"frequency. Split the file by frequency: put {name!r} in a file of its "
                    "own and load that file."
                )
            else:
                msg = (
                    f"{counted} have times that are {_PLURAL[k]} (e.g. {example!r}) while "
                    f"{other}; one file holds one frequency, so their values were not used. "
                    "Split the file by frequency and load each part."
                )
        out.append(Problem("error", msg, row=rows[0], column=name or tname))
    return out

"""Which row is the header: a header with empty names is not mistaken for a title line.

Invented plumbing data (a trend per column). The rule checked (see ``forecasting_core._table``):
title lines above the header are skipped, but a header narrower than the data rows because a
name or two is missing, possibly with a units row under it, stays the header; the first data
row never becomes the header when text rows fill the width above it.
"""

from __future__ import annotations

import re

import pytest

from forecasting_core._table import read_table

YEARS = range(1990, 2012)  # 22 years: above the 15-value minimum for annual series


def table_text(header: str, *, above: tuple[str, ...] = (), units: str | None = None) -> str:
    lines = [*above, header] + ([units] if units is not None else [])
    for i, year in enumerate(YEARS):
        lines.append(f"{year},{100 + i},{200 + 2 * i},{300 + 3 * i},{400 + 4 * i}")
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize(
    ("text", "series", "message"),
    [
        (table_text("year,hake,cod,ling,skate"), ["hake", "cod", "ling", "skate"], None),
        (table_text("year,hake,,ling,skate"), ["hake", "column 3", "ling", "skate"],
         r"column 3 has values but no header; it was named 'column 3'\."),
        (table_text(",hake,cod,,skate"), ["hake", "cod", "column 4", "skate"],
         r"column 4 has values but no header"),
        (table_text("year,hake,,ling,skate", units=",t,t,t,t"), ["hake", "column 3", "ling", "skate"],
         r"row 2 looks like a units row"),
        (table_text("year,hake,cod,ling,skate", above=("Landings by stock",)),
         ["hake", "cod", "ling", "skate"],
         r"row 1 above the header \(row 2\) was skipped as a title line"),
        (table_text("year,hake,,ling,skate", above=("Landings by stock", "tonnes, live weight")),
         ["hake", "column 3", "ling", "skate"],
         r"rows 1, 2 above the header \(row 3\) were skipped as title lines"),
    ],
)  # fmt: skip
def test_header_with_empty_names_stays_the_header(text, series, message):
    table = read_table(text.encode(), name="h.csv")
    assert list(table.series) == series
    assert table.series[series[0]].loc["1990"] == 100.0
    assert not table.errors, [p.message for p in table.problems]
    if message is not None:
        assert any(re.search(message, p.message) for p in table.problems)


@pytest.mark.parametrize(
    "footer",
    ["Source: port log; values provisional after 2018", "Revised 12/2019", "1750"],
)
def test_a_footer_note_with_digits_and_no_values_is_a_warning(footer):
    text = table_text("year,hake,cod,ling,skate") + footer + "\n"
    table = read_table(text.encode(), name="f.csv")
    assert not table.errors
    row = len(YEARS) + 2
    assert any(
        p.severity == "warning" and p.row == row and f"row {row} was skipped" in p.message
        for p in table.problems
    )


def test_a_numbered_header_under_a_title_stays_the_header():
    # Station numbers as column names: the header row holds numbers but is no data row.
    lines = ["Catch per station, tonnes", "year,1,2,3"]
    lines += [f"{y},{10 + i},{20 + i},{30 + i}" for i, y in enumerate(YEARS)]
    table = read_table(("\n".join(lines) + "\n").encode(), name="n.csv")
    assert list(table.series) == ["1", "2", "3"]
    assert any("row 1 above the header (row 2)" in p.message for p in table.problems)


def test_a_header_with_an_empty_name_over_a_first_row_with_gaps_stays_the_header():
    lines = ["year,hake,,ling"] + [
        f"{y},{'' if i < 3 else 100 + i},{200 + i},{300 + i}" for i, y in enumerate(YEARS)
    ]
    table = read_table(("\n".join(lines) + "\n").encode(), name="g.csv")
    assert list(table.series) == ["hake", "column 3", "ling"]
    assert table.series["ling"].loc["1990"] == 300.0

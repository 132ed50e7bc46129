"""``#`` in an uploaded file: comment lines are skipped and named, ``#`` inside cells is text.

Reference outside the project: ``pandas.read_csv(path, comment="#")`` with its default C
parser, which skips a line starting with ``#`` and keeps ``#`` inside a quoted cell (pandas
documentation of ``read_csv``, "comment"); where a file has comments only on whole lines, the
values read here must equal pandas' values. Data are invented plumbing values (a trend).
"""

from __future__ import annotations

import io
import re

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from forecasting_core._cli_writers import write_forecast_csv
from forecasting_core._results import InputError
from forecasting_core._table import read_table

YEARS = range(1990, 2015)  # 25 years: above the 15-value minimum for annual series


def wide(header: str, sep: str = ",", extra: dict[int, str] | None = None) -> str:
    """A wide file: ``header``, then one row per year with values 50+i and 20+i; ``extra``
    inserts a line after the given year."""
    lines = [header]
    for i, year in enumerate(YEARS):
        lines.append(sep.join([str(year), str(50 + i), str(20 + i)]))
        if extra and year in extra:
            lines.append(extra[year])
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize(
    ("name", "text", "series", "message"),
    [
        ("hash in a header", wide("year,Stock #3,hake"), ["Stock #3", "hake"], None),
        ("hash in a value's note", wide("year,hake,cod", extra=None).replace("1995,55", "1995,55 #est"),
         ["hake", "cod"], r"'55 #est' is not a number"),
        ("comments above the header",
         "# landings from the port log\n# Caution: a, b, c\n" + wide("year,hake,cod"),
         ["hake", "cod"],
         r"rows 1, 2 above the header \(row 3\) start with '#' and were skipped as comment lines: "
         r"'# landings from the port log'; '# Caution: a, b, c'\."),
        ("a comment inside the table",
         wide("year,hake,cod", extra={2003: "# revised 2003 values, see memo"}),
         ["hake", "cod"],
         r"row 16 inside the table starts with '#' and was skipped as a comment line: "
         r"'# revised 2003 values, see memo'"),
        ("a header written as a comment", wide("#year,hake,cod"), ["hake", "cod"],
         r"row 1 starts with '#' but is the table's header \(row 2 below it holds values\)"),
        ("a semicolon header written as a comment", "# export\n" + wide("# year;hake;cod", sep=";"),
         ["hake", "cod"], r"row 2 starts with '#' but is the table's header"),
    ],
)  # fmt: skip
def test_hash_in_a_file_is_read_or_named(name, text, series, message):
    table = read_table(text.encode(), name="f.csv")
    assert list(table.series) == series, name
    for s in series:
        assert table.series[s].notna().sum() >= len(YEARS) - 1
    warnings = [p.message for p in table.problems]
    assert not table.errors, warnings
    if message is None:
        assert not any("#" in w for w in warnings)
    else:
        assert any(re.search(message, w) for w in warnings), warnings


@pytest.mark.parametrize(
    "text",
    [
        "# source: port log\n# Caution: a, b, c\n" + wide('year,"Stock #3",hake'),
        wide("year,hake,cod", extra={2003: "# revised, see memo", 2010: "#"}),
        wide('year,"North #2, (t)",cod'),
    ],
)
def test_values_equal_pandas_read_csv_with_comment_option(text):
    ours = read_table(text.encode(), name="f.csv")
    theirs = pd.read_csv(io.StringIO(text), comment="#").set_index("year")
    assert list(ours.series) == list(theirs.columns)
    for name, values in theirs.items():
        np.testing.assert_array_equal(ours.series[name].to_numpy(), values.to_numpy(float))
        assert ours.series[name].index[0].year == theirs.index[0]


def test_a_stock_named_with_hash_in_the_long_layout_is_data():
    # The row has its time (1990 ...) in another cell: not a comment, whatever its first cell.
    text = "stock,year,value\n" + "".join(
        f"#{k},{y},{10 * k + i}\n" for k in (1, 2) for i, y in enumerate(YEARS)
    )
    table = read_table(text.encode(), name="long.csv")
    assert list(table.series) == ["#1", "#2"]
    assert table.series["#2"].iloc[0] == 20.0
    assert not any("comment" in p.message for p in table.problems)


def test_a_quoted_hash_at_the_start_of_a_line_is_a_cell_not_a_comment():
    text = "stock,year,value\n" + "".join(f'"#3 pond",{y},{i}\n' for i, y in enumerate(YEARS))
    table = read_table(text.encode(), name="q.csv")
    assert list(table.series) == ["#3 pond"]


@pytest.mark.parametrize("error_value", ["#N/A", "#DIV/0!", "#VALUE!", "#NAME?"])
def test_spreadsheet_error_values_are_cells_not_comments(error_value):
    text = wide("year,hake,cod").replace("1995,55,25", f"1995,{error_value},25")
    table = read_table(text.encode(), name="e.csv")
    assert np.isnan(table.series["hake"].loc["1995"])
    assert table.series["cod"].loc["1995"] == 25.0
    assert not any("comment" in p.message for p in table.problems)


def test_a_file_of_comment_lines_only_names_the_rows():
    with pytest.raises(
        InputError, match=r"only comment lines instead \(rows 1, 2 start with '#'\)"
    ):
        read_table(b"# a,b\n# 1,2\n", name="c.csv")


def test_comment_rows_in_a_workbook_are_skipped_and_named(tmp_path):
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["# exported from the port log", None, None])
    sheet.append(["year", "hake", "cod"])
    for i, year in enumerate(YEARS):
        sheet.append([year, 50 + i, 20 + i])
        if year == 2000:
            sheet.append(["# survey vessel changed", None, None])
    path = tmp_path / "book.xlsx"
    book.save(path)
    table = read_table(path)
    assert list(table.series) == ["hake", "cod"]
    assert table.series["hake"].notna().sum() == len(YEARS)
    messages = " ".join(p.message for p in table.problems)
    assert "row 1 above the header (row 2) starts with '#'" in messages
    assert "row 14 inside the table starts with '#'" in messages


def test_haulcasts_own_forecast_csv_reads_back_with_its_comment_lines_named(tmp_path):
    record = {
        "series": "Stock #3", "model": {"label": "ARIMA(0,1,1)"},
        "forecast": [{"time": str(2026 + k), "step": k + 1, "mean": 1.0, "median": 1.0,
                      "intervals": {"80": [0.5, 1.5]}, "prob_below_reference": None}
                     for k in range(2)],
    }  # fmt: skip
    path = tmp_path / "fc.csv"
    write_forecast_csv(path, [record], source="x.csv")
    table = read_table(path)
    first = table.problems[0]
    assert first.row == 1 and "rows 1-3 above the header (row 4) start with '#'" in first.message


@settings(max_examples=60, deadline=None)
@given(
    where=st.lists(st.integers(min_value=0, max_value=len(YEARS) + 1), max_size=4),
    note=st.text(alphabet=st.sampled_from(list("ab #,;:-")), max_size=12),
)
def test_comment_lines_anywhere_leave_the_values_as_without_them(where, note):
    plain = wide("year,hake,cod")
    lines = plain.splitlines()
    for k in sorted(where, reverse=True):
        lines.insert(k, "#" + note)
    with_comments = read_table(("\n".join(lines) + "\n").encode(), name="c.csv")
    without = read_table(plain.encode(), name="p.csv")
    assert list(with_comments.series) == list(without.series) == ["hake", "cod"]
    for name in ("hake", "cod"):
        pd.testing.assert_series_equal(with_comments.series[name], without.series[name])
    assert not with_comments.errors


@pytest.mark.parametrize(
    ("comments", "sep"),
    [
        ("# a; b; c; d; e\n" * 40, ","),  # a long notes block, split evenly by ';'
        ("# a, b, c, d, e\n" * 40, ";"),
    ],
)
def test_comment_lines_do_not_decide_the_delimiter(comments, sep):
    table = read_table((comments + wide(sep.join(["year", "hake", "cod"]), sep=sep)).encode())
    assert list(table.series) == ["hake", "cod"]

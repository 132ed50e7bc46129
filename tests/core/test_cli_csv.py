"""Forecast CSVs keep cells with ``#`` whole when read with ``pandas.read_csv(comment="#")``.

References outside the project: the csv module of the standard library (how it quotes a row
and reads it back) and pandas' default C parser, whose ``comment`` option cuts an unquoted
line at ``#`` but keeps ``#`` inside a quoted field (pandas documentation of ``read_csv``,
"comment"; behaviour checked in the first test so a change in pandas shows up here).
"""

from __future__ import annotations

import argparse
import csv
import io

import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import forecasting_core._search as search_mod
from forecasting_core._cli_models import CSV_COLUMNS, _cli_batch, csv_line, write_forecast_csv


def _record(series: str) -> dict:
    return {
        "series": series,
        "model": {"label": "ARIMA(0,1,1)"},
        "forecast": [
            {"time": str(2026 + k), "step": k + 1, "mean": 10.5 + k, "median": 10.0 + k,
             "intervals": {"50": [9.0, 11.0], "80": [8.0, 12.0], "95": [7.0, 13.0]},
             "prob_below_reference": None}
            for k in range(2)
        ],
    }  # fmt: skip


@pytest.mark.parametrize(
    ("text", "cells"),
    [
        ("a,b\nStock #3,1\n", ["Stock ", None]),  # unquoted: the row is cut at '#'
        ('a,b\n"Stock #3",1\n', ["Stock #3", 1]),  # quoted: kept whole
        ('a,b\n"#3",1\n', ["#3", 1]),  # quoted at the start of a line: not a comment
    ],
)
def test_pandas_comment_option_keeps_hash_only_inside_quotes(text, cells):
    row = pd.read_csv(io.StringIO(text), comment="#").iloc[0].tolist()
    assert [None if pd.isna(v) else v for v in row] == cells


@pytest.mark.parametrize(
    ("series", "written"),
    [
        ("Stock #3", "Stock #3"),
        ("#3", "#3"),
        ("North, #2 (t)", "North, #2 (t)"),
        ('pen "A" #1', 'pen "A" #1'),
        ("=#1+2", "'=#1+2"),  # a formula start is neutralised as well (OWASP "CSV Injection")
        ("hake_t", "hake_t"),
    ],
)
def test_series_names_with_hash_read_back_whole_with_pandas_comment(tmp_path, series, written):
    path = tmp_path / "out.csv"
    write_forecast_csv(path, [_record(series), _record("plain")], source="file #7.csv")
    table = pd.read_csv(path, comment="#")
    assert list(table.columns) == list(CSV_COLUMNS)
    assert table["series"].tolist() == [written, written, "plain", "plain"]
    assert table["time"].tolist() == [2026, 2027, 2026, 2027]
    assert table["hi95"].tolist() == [13.0] * 4
    assert table["prob_below_reference"].isna().all()


@pytest.mark.parametrize(
    ("cells", "line"),
    [
        (["a", "b"], "a,b\r\n"),
        (["Stock #3", "1"], '"Stock #3",1\r\n'),
        (["#", ""], '"#",\r\n'),
        (['say "hi"', "x,y"], '"say ""hi""","x,y"\r\n'),
        ([""], '""\r\n'),
        (["two\nlines"], '"two\nlines"\r\n'),
    ],
)
def test_csv_line_quotes_hash_cells_and_what_the_csv_module_quotes(cells, line):
    assert csv_line(cells) == line


_cell = st.text(alphabet=st.sampled_from(list('ab #,"\r\n\t=-1.')), max_size=8)


@settings(max_examples=300, deadline=None)
@given(st.lists(_cell, min_size=1, max_size=5))
def test_csv_line_reads_back_with_the_csv_module_and_matches_it_without_hash(cells):
    line = csv_line(cells)
    assert next(csv.reader(io.StringIO(line, newline=""))) == cells
    if not any("#" in c for c in cells):
        buf = io.StringIO(newline="")
        csv.writer(buf).writerow(cells)
        assert line == buf.getvalue()


@settings(max_examples=200, deadline=None)
@given(st.lists(st.text(alphabet=st.sampled_from(list("ab #,'=")), min_size=1, max_size=8),
                min_size=2, max_size=4))  # fmt: skip
def test_rows_of_csv_line_read_back_whole_with_pandas_comment(cells):
    text = csv_line([f"c{j}" for j in range(len(cells))]) + csv_line(cells) + csv_line(cells)
    table = pd.read_csv(io.StringIO(text), comment="#", dtype=str, keep_default_na=False)
    assert table.shape == (2, len(cells))
    assert table.iloc[0].tolist() == table.iloc[1].tolist() == cells


def test_batch_forecasts_csv_keeps_a_series_named_with_hash(tmp_path, capsys, monkeypatch):
    real = search_mod.compare_models  # small fixed order: plumbing, not model quality
    monkeypatch.setattr(
        search_mod, "compare_models",
        lambda y, *a, **k: real(y, *a, **{**k, "order": (0, 1, 1), "hindcast_origins": 2}),
    )  # fmt: skip
    lines = ["year,Stock #3,cod_t"]
    for i in range(30):
        lines.append(f"{1996 + i},{500 + 7 * i + (i % 3) * 11},{80 + (i % 4)}")
    src = tmp_path / "stocks.csv"
    src.write_text("\n".join(lines) + "\n", encoding="utf-8")
    args = argparse.Namespace(
        file=str(src), horizon="2", transform="none", workers="1", json=False,
        out=str(tmp_path / "o"),
    )  # fmt: skip
    assert _cli_batch(args) == 0, capsys.readouterr().err
    table = pd.read_csv(tmp_path / "o" / "forecasts.csv", comment="#")
    assert table["series"].tolist() == ["Stock #3", "Stock #3", "cod_t", "cod_t"]
    assert table[["mean", "median", "lo95", "hi95"]].notna().all().all()

"""Rows whose time has another frequency than the rest of the file: one plain problem per group.

Common practice (one frequency per series; a monthly series cannot share a time axis with annual
ones without aggregation): the reader keeps the majority frequency and must say which rows and
which series it left out, how many, and what to do (split the file by frequency).
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

import forecasting_core as fc
from forecasting_core.__main__ import main


def _long_mixed_text(n_monthly: int = 36) -> str:
    # Invented data for the reader only: two annual series then one monthly series, long layout.
    rows = ["series,time,value,unit"]
    for name, base in (("hake_t", 1000.0), ("cod_t", 400.0)):
        rows += [f"{name},{y},{base + 3 * (y - 1990)},t" for y in range(1990, 2015)]
    rows += [
        f"octopus_t,{2014 + k // 12}-{k % 12 + 1:02d},{60 + (k * 7) % 13},t"
        for k in range(n_monthly)
    ]
    return "\n".join(rows) + "\n"


def _mixed_errors(table: fc.Table) -> list[fc.Problem]:
    return [p for p in table.errors if "frequency" in p.message]


def test_a_monthly_series_in_an_annual_long_file_gets_one_error_naming_it_and_its_rows():
    table = fc.read_table(_long_mixed_text().encode(), name="mixed.csv")
    assert set(table.series) == {"hake_t", "cod_t"}
    errors = _mixed_errors(table)
    assert len(errors) == 1  # one problem, not one per row
    p = errors[0]
    # Header is file row 1, 50 annual rows are rows 2-51, the 36 monthly rows are 52-87.
    assert p.row == 52 and p.column == "octopus_t"
    assert "series 'octopus_t' was not read" in p.message
    assert "36 rows (file rows 52-87)" in p.message
    assert "months (e.g. '2014-01')" in p.message and "the other 50 rows have years" in p.message
    assert "Split the file by frequency" in p.message
    assert len(table.errors) == 1  # nothing else is counted as an error


def test_check_json_carries_the_one_mixed_frequency_problem(tmp_path: Path, capsys):
    path = tmp_path / "mixed.csv"
    path.write_text(_long_mixed_text(), encoding="utf-8")
    assert main(["check", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    messages = [p["message"] for p in out["problems"] if p["severity"] == "error"]
    assert len(messages) == 1
    assert "'octopus_t'" in messages[0] and "rows 52-87" in messages[0]


@pytest.mark.parametrize(
    ("odd_rows", "needle"),
    [
        ((15,), r"row 15: the time '2003-06' is a month but most rows have a year"),
        ((15, 16, 17), r"3 rows \(file rows 15-17\) have times that are months \(e.g. '2003-06'\)"),
    ],
)
def test_wide_rows_of_another_frequency_are_one_file_problem(odd_rows, needle):
    lines = ["year,hake_t,cod_t"]
    for k in range(25):
        row = k + 2
        time = f"{1990 + k}-06" if row in odd_rows else str(1990 + k)
        lines.append(f"{time},{1000 + 5 * k},{400 + 3 * k}")
    table = fc.read_table(("\n".join(lines) + "\n").encode(), name="wide.csv")
    file_level = [p for p in _mixed_errors(table) if p.column == "year"]
    assert len(file_level) == 1
    assert file_level[0].row == odd_rows[0]
    assert re.search(needle, file_level[0].message)
    per_series = [p for p in table.info["hake_t"].problems if p.severity == "error"]
    assert per_series and "split the file by frequency" in per_series[0].message

"""The command-line forecast CSVs carry each series' warnings as ``#`` lines before its rows.

Every export carries the cautions (DESIGN.md, "Cautions the interface shows"); the series' own
warnings (file-check findings, below-zero clipping, a benchmark that did better, bands too
narrow, residual verdict) come from its forecast record. pandas' ``read_csv(comment="#")``
skips whole ``#`` lines (pandas documentation of ``read_csv``, "comment"), so the data columns
read back unchanged.
"""

from __future__ import annotations

import argparse

import pandas as pd
import pytest

import forecasting_core._search as search_mod
from forecasting_core._cli_models import CSV_COLUMNS, _cli_batch, write_forecast_csv
from forecasting_core._cli_writers import series_comment_lines


def _record(series: str, warnings: list[str]) -> dict:
    return {
        "series": series,
        "model": {"label": "ARIMA(0,1,1)"},
        "forecast": [
            {"time": str(2026 + k), "step": k + 1, "mean": 10.5 + k, "median": 10.0 + k,
             "intervals": {"50": [9.0, 11.0], "80": [8.0, 12.0], "95": [0.0, 13.0]},
             "prob_below_reference": None}
            for k in range(2)
        ],
        "warnings": warnings,
    }  # fmt: skip


@pytest.mark.parametrize(
    ("record", "lines"),
    [
        (_record("hake_t", ["The model's lower band went below zero in 2026."]),
         ["# hake_t: warning: The model's lower band went below zero in 2026.\r\n"]),
        (_record("cod_t", ["File check: row 5, 1994: kept as missing.", "Bands too narrow."]),
         ["# cod_t: warning: File check: row 5, 1994: kept as missing.\r\n",
          "# cod_t: warning: Bands too narrow.\r\n"]),
        (_record("ling_t", []), []),
        ({"series": "sprat_t", "error": "series 'sprat_t' cannot be used: too short."},
         ["# sprat_t: failed: series 'sprat_t' cannot be used: too short.\r\n"]),
    ],
)  # fmt: skip
def test_each_series_warning_is_one_comment_line_naming_the_series(record, lines):
    assert series_comment_lines(record) == lines


def test_warnings_sit_before_their_series_rows_and_the_table_reads_back(tmp_path):
    path = tmp_path / "f.csv"
    records = [
        _record("hake_t", ["On the hindcast the long-run mean benchmark did better."]),
        {"series": "sprat_t", "error": "too short."},
        _record("Stock #3", ["The model's lower band went below zero, shown as 0."]),
    ]
    write_forecast_csv(path, records, source="x.csv")
    text = path.read_text(encoding="utf-8").splitlines()
    i_warn = text.index("# hake_t: warning: On the hindcast the long-run mean benchmark did better.")
    first_row = next(i for i, line in enumerate(text) if line.startswith("hake_t,"))
    assert i_warn < first_row
    assert "# sprat_t: failed: too short." in text
    # the comma in a warning does not split the comment line into cells
    assert "# Stock #3: warning: The model's lower band went below zero, shown as 0." in text
    table = pd.read_csv(path, comment="#")
    assert list(table.columns) == list(CSV_COLUMNS)
    assert table["series"].tolist() == ["hake_t", "hake_t", "Stock #3", "Stock #3"]
    assert table["lo95"].tolist() == [0.0, 0.0, 0.0, 0.0]


def test_batch_forecasts_csv_carries_the_clipping_note_and_file_findings(tmp_path, capsys, monkeypatch):
    real = search_mod.compare_models  # small fixed order: plumbing, not model quality
    monkeypatch.setattr(
        search_mod, "compare_models",
        lambda y, *a, **k: real(y, *a, **{**k, "order": (0, 0, 0), "hindcast_origins": 2}),
    )  # fmt: skip
    # Invented values near zero with a wide spread: a white-noise model's 95% band goes below 0.
    lines = ["year,mullet_t"]
    values = [3, 40, 1, 35, 2, 44, 0, 38, 5, 30] * 3
    lines += [f"{1996 + i},{v}" for i, v in enumerate(values)]
    lines.append(f"{1996 + 29},{values[-1]}")  # repeats the row above exactly
    src = tmp_path / "mullet.csv"
    src.write_text("\n".join(lines) + "\n", encoding="utf-8")
    args = argparse.Namespace(
        file=str(src), horizon="2", transform="none", workers="1", json=False,
        out=str(tmp_path / "o"),
    )  # fmt: skip
    assert _cli_batch(args) == 0, capsys.readouterr().err
    out = tmp_path / "o" / "forecasts.csv"
    comments = [x for x in out.read_text(encoding="utf-8").splitlines() if x.startswith("#")]
    mine = [x for x in comments if x.startswith("# mullet_t: warning: ")]
    assert any("went below zero" in x for x in mine), comments
    assert any("File check: row 32" in x and "repeats row 31" in x for x in mine), comments
    assert sum(x.startswith("# Caution: ") for x in comments) == 2
    table = pd.read_csv(out, comment="#")
    assert list(table.columns) == list(CSV_COLUMNS)
    assert table["lo95"].min() == 0.0

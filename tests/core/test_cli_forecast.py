"""The ``forecast`` and ``batch`` subcommands: the JSON contract, exit codes, exports.

The contract checked here is the one in DESIGN.md ("forecast --json prints one object"), plus
the ``cautions`` and ``provenance`` keys every export carries. Runs use the invented sample
data with a forced order and short horizons (plumbing, not model quality).
"""

from __future__ import annotations

import argparse
import csv
import json
import subprocess
import sys
from pathlib import Path

import pytest

import forecasting_core._search as search_mod
from forecasting_core._cli_models import (
    CSV_COLUMNS,
    _cli_batch,
    _cli_forecast,
    safe_cell,
    write_forecast_csv,
)
from forecasting_core._results import CAUTIONS

ROOT = Path(__file__).resolve().parents[2]
LANDINGS = ROOT / "sample_data" / "vellmouth_landings.csv"

CONTRACT_KEYS = [
    "series", "observations", "frequency", "transform", "model", "candidates", "hindcast",
    "forecast", "warnings", "cautions", "provenance",
]  # fmt: skip


def forecast_args(**kw) -> argparse.Namespace:
    base = dict(
        file=str(LANDINGS), series="hake_t", horizon="3", order="1,1,0", seasonal=None,
        transform="log", no_constant=False, reference=None, json=True, csv=None,
    )  # fmt: skip
    base.update(kw)
    return argparse.Namespace(**base)


@pytest.fixture(scope="module")
def hake_json(tmp_path_factory):
    capture = pytest.MonkeyPatch()  # module-scoped run: capture stdout by hand
    import io

    out, err = io.StringIO(), io.StringIO()
    capture.setattr(sys, "stdout", out)
    capture.setattr(sys, "stderr", err)
    csv_path = tmp_path_factory.mktemp("cli") / "hake.csv"
    try:
        code = _cli_forecast(forecast_args(reference="15000", csv=str(csv_path)))
    finally:
        capture.undo()
    return code, out.getvalue(), err.getvalue(), csv_path


def test_forecast_json_has_exactly_the_contract_keys(hake_json):
    code, out, err, _ = hake_json
    assert code == 0, err
    record = json.loads(out)
    assert list(record) == CONTRACT_KEYS
    assert set(record["transform"]) == {"name", "lambda"}
    assert set(record["model"]) == {
        "label", "order", "seasonal_order", "constant", "ar", "ma", "seasonal_ar",
        "seasonal_ma", "sigma2", "aicc",
    }  # fmt: skip
    for cand in record["candidates"]:
        assert set(cand) == {"label", "order", "seasonal_order", "aicc", "delta_aicc", "weight"}
    assert set(record["hindcast"]) == {"origins", "mase", "rmse", "coverage"}
    assert set(record["hindcast"]["coverage"]) == {"80", "95"}
    assert [row["time"] for row in record["forecast"]] == ["2026", "2027", "2028"]
    for row in record["forecast"]:
        assert set(row) == {"time", "step", "mean", "median", "intervals", "prob_below_reference"}
        assert set(row["intervals"]) == {"50", "80", "95"}
        assert 0.0 <= row["prob_below_reference"] <= 1.0
        lo95, hi95 = row["intervals"]["95"]
        assert lo95 < row["median"] < hi95
    assert record["cautions"] == list(CAUTIONS)
    assert record["model"]["order"] == [1, 1, 0]
    assert len(record["provenance"]["data_sha256"]) == 64


def test_forecast_csv_starts_with_the_cautions(hake_json):
    *_, csv_path = hake_json
    lines = csv_path.read_text(encoding="utf-8").splitlines()
    # Comment lines are written as they are, never quoted (the cautions hold commas).
    assert lines[1] == f"# Caution: {CAUTIONS[0]}"
    assert lines[2] == f"# Caution: {CAUTIONS[1]}"
    rows = list(csv.reader(lines[3:]))
    assert rows[0][:6] == ["series", "model", "time", "step", "mean", "median"]
    assert [r[2] for r in rows[1:]] == ["2026", "2027", "2028"]


def test_forecast_csv_reads_with_pandas_comment_option(hake_json):
    import pandas as pd

    *_, csv_path = hake_json
    table = pd.read_csv(csv_path, comment="#")  # pandas skips lines that start with '#'
    assert list(table.columns) == list(CSV_COLUMNS)
    assert table["time"].tolist() == [2026, 2027, 2028]
    assert table["step"].tolist() == [1, 2, 3]
    assert (table["lo95"] < table["median"]).all() and (table["median"] < table["hi95"]).all()
    assert table["prob_below_reference"].between(0, 1).all()


def test_csv_columns_follow_the_dashboard_order():
    # The dashboard's CSV download: time, step, mean, median, lo/hi per level, probability.
    dashboard = ["time", "step", "mean", "median", "lo50", "hi50", "lo80", "hi80", "lo95", "hi95",
                 "prob_below_reference"]  # fmt: skip
    assert list(CSV_COLUMNS) == ["series", "model", *dashboard]


@pytest.mark.parametrize(
    "source",
    ['landings, "2025".csv', "=cmd|' /C calc'!A0.csv", "a,=HYPERLINK(1),b.csv", "two\nlines.csv"],
)
def test_comment_lines_of_any_source_name_stay_one_unquoted_safe_line(tmp_path, source):
    import pandas as pd

    path = tmp_path / "out.csv"
    write_forecast_csv(path, [SMALL_RECORD], source=source)
    lines = path.read_text(encoding="utf-8").splitlines()
    assert [line.startswith("# ") for line in lines[:4]] == [True, True, True, False]
    assert '"' not in lines[0]
    # A spreadsheet splits the line at commas: no piece may start a formula (OWASP "CSV Injection").
    assert not any(piece.lstrip().startswith(("=", "+", "@")) for piece in lines[0].split(","))
    table = pd.read_csv(path, comment="#")
    assert table.shape == (1, len(CSV_COLUMNS))


def test_plain_forecast_is_a_readable_table_with_verdict_and_cautions(capsys):
    code = _cli_forecast(forecast_args(json=False, horizon="2", reference="15000"))
    out = capsys.readouterr().out
    assert code == 0
    for text in ("Model: ARIMA(1,1,0)", "Hindcast: ", "median", "80% range", "P(below 15000)",
                 "Cautions:", CAUTIONS[0]):  # fmt: skip
        assert text in out
    assert "Traceback" not in out


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (
            {"series": "cod_t"},
            "--series must be one of hake_t, plaice_t, herring_t, whiting_t. Got 'cod_t' instead.",
        ),
        ({"order": "1,x,0"}, "--order must be 3 non-negative integers separated by commas"),
        ({"order": "1,1"}, "--order must be 3 non-negative integers separated by commas"),
        ({"horizon": "0"}, "--horizon must be an integer from 1 to 30. Got 0 instead."),
        ({"horizon": "five"}, "--horizon must be an integer from 1 to 30. Got 'five' instead."),
        ({"reference": "lots"}, "--reference must be a number"),
        ({"file": "no_such_file.csv"}, "FILE must be an existing CSV or Excel file."),
        (
            {"order": "1,3,0"},
            "--order 1,3,0: d, the second number, must be an integer from 0 to 2. Got 3 instead.",
        ),
    ],
)
def test_unusable_arguments_exit_2_with_a_plain_message(capsys, change, message):
    code = _cli_forecast(forecast_args(**change))
    err = capsys.readouterr().err
    assert code == 2
    assert message in err
    assert "Traceback" not in err


def test_module_command_exits_2_without_traceback_for_an_unknown_series():
    proc = subprocess.run(
        [sys.executable, "-m", "forecasting_core", "forecast", str(LANDINGS),
         "--series", "cod_t", "--horizon", "5"],
        capture_output=True, text=True, timeout=120, cwd=ROOT,
    )  # fmt: skip
    assert proc.returncode == 2
    assert "hake_t, plaice_t, herring_t, whiting_t" in proc.stderr
    assert "Traceback" not in proc.stdout + proc.stderr


@pytest.mark.parametrize(
    ("cell", "written"),
    [
        ('=HYPERLINK("http://x")', '\'=HYPERLINK("http://x")'),
        ("+cmd", "'+cmd"),
        ("-2+3", "'-2+3"),
        ("@SUM(A1)", "'@SUM(A1)"),
        ("\tlead", "'\tlead"),
        ("-0.45", "-0.45"),  # a plain negative number stays a number
        ("-12", "-12"),
        ("-1.5e-3", "-1.5e-3"),
        (-0.45, "-0.45"),
        ("hake_t", "hake_t"),
    ],
)
def test_csv_cells_that_start_a_formula_are_neutralised(cell, written):
    # Common practice (OWASP "CSV Injection"): prefix = + - @ tab CR with a single quote.
    assert safe_cell(cell) == written


SMALL_RECORD = {
    "series": "=cmd|' /C calc'!A0",
    "model": {"label": "ARIMA(1,0,0) with constant"},
    "forecast": [
        {"time": "2026", "step": 1, "mean": -0.25, "median": -0.25,
         "intervals": {"80": [-0.5, 0.0]}, "prob_below_reference": None},
    ],
}  # fmt: skip


def test_written_csv_neutralises_names_and_keeps_negative_numbers(tmp_path):
    path = tmp_path / "out.csv"
    write_forecast_csv(path, [SMALL_RECORD])
    rows = list(csv.reader(path.read_text(encoding="utf-8").splitlines()[3:]))
    data = dict(zip(rows[0], rows[1], strict=True))
    assert data["series"] == "'=cmd|' /C calc'!A0"
    assert (data["median"], data["lo80"], data["hi80"]) == ("-0.25", "-0.5", "0.0")
    assert float(data["median"]) == -0.25


def test_batch_writes_outputs_reports_progress_and_failures(tmp_path, capsys, monkeypatch):
    # Small search for speed: the batch command itself has no search options.
    real = search_mod.compare_models
    monkeypatch.setattr(
        search_mod, "compare_models",
        lambda y, *a, **k: real(y, *a, **{**k, "order": (0, 1, 1), "hindcast_origins": 2}),
    )  # fmt: skip
    lines = ["year,cod_t,skate_t"]
    for i in range(30):
        lines.append(f"{1996 + i},{500 + 7 * i + (i % 3) * 11}.0,{'' if i < 25 else 40 + i}")
    src = tmp_path / "two.csv"
    src.write_text("\n".join(lines) + "\n", encoding="utf-8")
    args = argparse.Namespace(
        file=str(src),
        horizon="2",
        transform="none",
        workers="1",
        json=False,
        out=str(tmp_path / "o"),
    )
    code = _cli_batch(args)
    out, err = capsys.readouterr()
    assert code == 0
    assert "[1/2] skate_t failed" in err and "[2/2] cod_t done" in err
    assert "failed: skate_t: series 'skate_t' cannot be used" in err
    assert "1 of 2 series forecast" in out and CAUTIONS[1] in out
    models = json.loads((tmp_path / "o" / "models.json").read_text(encoding="utf-8"))
    assert [m["series"] for m in models] == ["cod_t", "skate_t"]
    text = (tmp_path / "o" / "forecasts.csv").read_text(encoding="utf-8")
    assert text.splitlines()[1:3] == [f"# Caution: {c}" for c in CAUTIONS]
    import pandas as pd

    table = pd.read_csv(tmp_path / "o" / "forecasts.csv", comment="#")
    assert list(table.columns) == list(CSV_COLUMNS)
    assert table["series"].tolist() == ["cod_t", "cod_t"]
    assert table["time"].tolist() == [2026, 2027]
    assert "Traceback" not in out + err


@pytest.mark.parametrize("command", ["forecast", "batch"])
def test_file_without_series_exits_2_naming_the_problem(tmp_path, capsys, command):
    src = tmp_path / "words.csv"
    src.write_text("year,cod_t\n1990,many\n1991,few\n", encoding="utf-8")
    args = argparse.Namespace(
        file=str(src), series="cod_t", horizon="3", order=None, seasonal=None, transform="auto",
        no_constant=False, reference=None, json=False, csv=None, workers="1", out=None,
    )  # fmt: skip
    run = _cli_forecast if command == "forecast" else _cli_batch
    assert run(args) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ")
    assert "words.csv" in err and "Traceback" not in err


def test_forecast_json_warnings_hold_the_files_data_problems(tmp_path, capsys):
    # Invented plumbing data: a units row (row 2), a repeat of 2010 (row 20), a gap in 2003
    # (row 12) in cod_t only. File rows are 1-based with the header as row 1.
    lines = ["year,cod_t,ling_t", ",tonnes,tonnes"]
    for i in range(32):
        year = 1994 + i
        lines.append(f"{year},{'' if year == 2003 else 500 + 7 * i + (i % 3) * 11},{80 + (i % 4)}")
        if year == 2010:
            lines.append(lines[-1])
    src = tmp_path / "messy.csv"
    src.write_text("\n".join(lines) + "\n", encoding="utf-8")
    code = _cli_forecast(forecast_args(file=str(src), series="cod_t", horizon="2", order="0,1,1"))
    out, err = capsys.readouterr()
    assert code == 0, err
    record = json.loads(out)
    assert list(record) == CONTRACT_KEYS
    assert record["warnings"][:3] == [
        "File check: row 2: row 2 looks like a units row (cod_t: 'tonnes', ling_t: 'tonnes'); "
        "it was read as the units, not as data.",
        "File check: row 20: row 20 repeats row 19 exactly; it was kept once.",
        "File check: row 12, 2003: empty or NA cells in row 12 (2003); kept as missing.",
    ]

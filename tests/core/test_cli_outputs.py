"""Output paths of ``forecast --csv`` and ``batch --out``, and the readable reports' wording.

DESIGN.md, "Command line": arguments that cannot be used exit 2 with a plain message, anything
else 1, never a traceback. Output paths are checked before any model is fitted, so a long batch
does not fail at its end; a failed batch leaves no half-written output behind.
"""

from __future__ import annotations

import argparse
import re
from pathlib import Path

import pytest

import forecasting_core._batch as batch_mod
from forecasting_core.__main__ import main
from forecasting_core._cli_models import _cli_batch, _cli_forecast, forecast_text
from forecasting_core._cli_text import _batch_line


def _landings(tmp_path: Path) -> Path:
    path = tmp_path / "landings.csv"
    rows = ["year,hake_t"] + [f"{1990 + k},{1000 + 13 * k + (k * 37) % 29}" for k in range(25)]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def _args(tmp_path: Path, **kw) -> argparse.Namespace:
    base = dict(
        file=str(_landings(tmp_path)), series="hake_t", horizon="2", order="0,1,1",
        seasonal=None, transform="none", no_constant=False, reference=None, json=False,
        csv=None, workers="1", out=None, scheduler=None,
    )  # fmt: skip
    base.update(kw)
    return argparse.Namespace(**base)


@pytest.fixture
def no_fitting(monkeypatch):
    """Fail loudly if a model would be fitted: path checks must come first."""

    def boom(*a, **k):
        raise AssertionError("a model was fitted before the output path was checked")

    monkeypatch.setattr(batch_mod, "compute_one", boom)
    monkeypatch.setattr(batch_mod, "iter_batch", boom)


@pytest.mark.parametrize(
    ("where", "message"),
    [
        ("missing/forecast.csv", r"--csv must name a file in an existing folder\. Got '.*missing/forecast\.csv' instead; the folder '.*missing' does not exist\."),
        (".", r"--csv must name a file, not a folder\. Got '.*' \(a folder\) instead\."),
        ("", r"--csv must name a file such as forecast\.csv\. Got '' instead\."),
    ],
)  # fmt: skip
def test_unusable_csv_path_exits_2_before_fitting(tmp_path, capsys, no_fitting, where, message):
    target = str(tmp_path / where) if where else ""
    assert _cli_forecast(_args(tmp_path, csv=target)) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "Traceback" not in err
    assert re.search(message, err), err


@pytest.mark.parametrize(
    ("where", "message"),
    [
        ("afile", r"--out must name a folder\. Got '.*afile' instead, which is a file\."),
        ("afile/sub", r"--out must name a folder that can be created\. Got '.*afile/sub' instead; '.*afile' is not a folder\."),
    ],
)  # fmt: skip
def test_unusable_out_folder_exits_2_before_fitting(tmp_path, capsys, no_fitting, where, message):
    (tmp_path / "afile").write_text("x", encoding="utf-8")
    assert _cli_batch(_args(tmp_path, out=str(tmp_path / where))) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "Traceback" not in err
    assert re.search(message, err), err


def test_a_batch_that_fails_midway_leaves_no_partial_outputs(tmp_path, capsys, monkeypatch):
    def half_then_fault(*a, **k):
        yield {"series": "hake_t", "error": "x", "error_kind": "data"}
        raise RuntimeError("worker lost")

    monkeypatch.setattr(batch_mod, "iter_batch", half_then_fault)
    out = tmp_path / "results"
    assert main(["batch", str(_landings(tmp_path)), "--horizon", "2", "--out", str(out)]) == 1
    err = capsys.readouterr().err
    assert "RuntimeError: worker lost" in err and "Traceback" not in err
    assert sorted(p.name for p in out.iterdir()) == []


def _record(series: str) -> dict:
    return {
        "series": series, "observations": 25, "frequency": "annual",
        "transform": {"name": "none", "lambda": None},
        "model": {"label": "ARIMA(0,0,0)", "aicc": None}, "candidates": [{}],
        "forecast": [{"time": "2015", "step": 1, "mean": 0.0, "median": 0.0,
                      "intervals": {"80": [-114.372, 114.372]}, "prob_below_reference": None}],
        "warnings": [],
    }  # fmt: skip


@pytest.mark.parametrize(
    ("series", "unit", "head"),
    [
        ("Dorsch (t)", "t", "Dorsch (t): 25 annual values"),
        ("ling [kg]", "kg", "ling [kg]: 25 annual values"),
        ("hake_t", "t", "hake_t (t): 25 annual values"),
        ("cpue", None, "cpue: 25 annual values"),
    ],
)
def test_forecast_report_names_the_unit_once(series, unit, head):
    assert forecast_text(_record(series), unit=unit).splitlines()[0].startswith(head)


def test_batch_line_gives_the_band_the_decimals_it_needs():
    # A median of 0 alone would choose 3 decimals; the band sets them (about 4 significant digits).
    line = _batch_line(_record("stock_41"))[0]
    assert "2015 median 0.0 (80% -114.4 to 114.4)" in line


@pytest.mark.parametrize("command", ["forecast", "batch"])
def test_help_describes_file_and_the_horizon_range(command, capsys):
    assert main([command, "--help"]) == 0
    out = " ".join(capsys.readouterr().out.split())
    assert "FILE CSV, TSV or .xlsx file (wide or long layout)" in out
    assert "frequency (1-30)" in out


def test_batch_summary_prints_file_wide_findings_once(tmp_path, capsys, monkeypatch):
    import forecasting_core._search as search_mod

    real = search_mod.compare_models  # small fixed order: plumbing, not model quality
    monkeypatch.setattr(
        search_mod, "compare_models",
        lambda y, *a, **k: real(y, *a, **{**k, "order": (0, 1, 1), "hindcast_origins": 2}),
    )  # fmt: skip
    lines = ["# port log export", "year,cod_t,ling_t,note"]
    for i in range(25):
        lines.append(f"{1996 + i},{500 + 7 * i + (i % 3) * 11},{80 + (i % 4)},checked")
    src = tmp_path / "logged.csv"
    src.write_text("\n".join(lines) + "\n", encoding="utf-8")
    assert main(["batch", str(src), "--horizon", "2", "--workers", "1"]) == 0
    out = capsys.readouterr().out
    comment = "File check: row 1: row 1 above the header (row 2) starts with '#'"
    note = "File check: row 3, column 'note': column 'note' holds text"
    assert out.count(comment) == 1 and out.count(note) == 1
    assert out.index(comment) < out.index("cod_t: ARIMA(0,1,1)")

"""The command line: check's report and JSON contract, exit codes, no tracebacks."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from forecasting_core.__main__ import build_parser, main

ROOT = Path(__file__).resolve().parents[2]
BAD = ROOT / "tests" / "data" / "bad"
SAMPLES = sorted((ROOT / "sample_data").glob("*.csv"))

# DESIGN.md, "Command line": the keys check --json must carry.
SERIES_KEYS = {
    "name",
    "observations",
    "missing",
    "start",
    "end",
    "frequency",
    "problems",
    "stationarity",
}
STATIONARITY_KEYS = {"d", "seasonal_d", "tests", "verdict"}
PROBLEM_KEYS = {"severity", "row", "time", "column", "message"}


def _run(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "forecasting_core", *args],
        capture_output=True,
        text=True,
        cwd=ROOT,
        timeout=120,
    )


def _usable_csv(tmp_path: Path) -> Path:
    path = tmp_path / "landings.csv"
    rows = ["year,hake_t,cod_t"] + [
        f"{1990 + k},{1000 + 13 * k + (k * 37) % 29},{'' if k == 5 else 400 + (k * 11) % 17}"
        for k in range(25)
    ]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def test_check_json_follows_the_contract(tmp_path, capsys):
    code = main(["check", str(_usable_csv(tmp_path)), "--json"])
    out = json.loads(capsys.readouterr().out)
    assert code == 0
    assert {"series", "problems"} <= set(out)
    assert [s["name"] for s in out["series"]] == ["hake_t", "cod_t"]
    for item in out["series"]:
        assert SERIES_KEYS <= set(item)
        assert item["frequency"] == "annual"
        for p in item["problems"]:
            assert set(p) == PROBLEM_KEYS
        if item["stationarity"] is not None:
            assert STATIONARITY_KEYS <= set(item["stationarity"])
            assert item["stationarity"]["d"] in (0, 1, 2)
    cod = out["series"][1]
    assert cod["missing"] == 1
    assert any(
        p["row"] == 7 and p["time"] == "1995" and p["severity"] == "warning"
        for p in cod["problems"]
    )


def test_check_text_report_names_the_series_and_the_verdict(tmp_path, capsys):
    code = main(["check", str(_usable_csv(tmp_path))])
    out = capsys.readouterr().out
    assert code == 0
    assert "hake_t [t]: annual, 1990-2014, 25 values, 0 missing - usable" in out
    assert "row 7, 1995, column 'cod_t'" in out
    assert "2 of 2 series can be used." in out


@pytest.mark.parametrize(
    ("file", "code", "needle"),
    [
        ("too_few_annual.csv", 2, "needs at least 15"),
        ("header_only.csv", 2, "no data rows"),
        ("empty.csv", 2, "the file is empty"),
        ("binary_noise.csv", 2, "binary file"),
        ("no_time_column.csv", 2, "must have a time column"),
        ("text_about.csv", 0, "'about 900' is not a number"),
        (
            "duplicate_year_different_values.csv",
            0,
            "1995 appears in rows 7, 8 with different values",
        ),
    ],
)
def test_check_exit_codes_and_messages(file, code, needle, capsys):
    assert main(["check", str(BAD / file)]) == code
    captured = capsys.readouterr()
    assert needle in captured.out + captured.err
    assert "Traceback" not in captured.out + captured.err


def test_check_json_of_an_unusable_file_still_prints_json_and_exits_2(capsys):
    assert main(["check", str(BAD / "constant_series.csv"), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    hake = next(s for s in out["series"] if s["name"] == "hake_t")
    assert hake["stationarity"] is None and hake["problems"][0]["severity"] == "error"
    assert main(["check", str(BAD / "header_only.csv"), "--json"]) == 2
    out = json.loads(capsys.readouterr().out)
    assert out["series"] == [] and out["problems"][0]["row"] == 1


@pytest.mark.parametrize(
    "argv",
    [
        [],
        ["nonsense"],
        ["check"],
        ["forecast", "x.csv"],
        ["forecast", "x.csv", "--series", "a"],
        ["batch", "x.csv"],
        ["check", "x.csv", "--bogus"],
        ["forecast", "x.csv", "--series", "a", "--horizon", "5", "--transform", "sqrt"],
    ],
)
def test_bad_arguments_exit_2_with_a_plain_message(argv, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "error:" in err and "Traceback" not in err


def test_help_exits_0(capsys):
    assert main(["--help"]) == 0
    assert "check" in capsys.readouterr().out


def test_parser_has_the_design_options():
    # DESIGN.md, "Command line": forecast and batch options, spelled exactly.
    parser = build_parser()
    args = parser.parse_args(
        [
            "forecast",
            "f.csv",
            "--series",
            "hake_t",
            "--horizon",
            "5",
            "--order",
            "1,1,0",
            "--seasonal",
            "0,1,1,12",
            "--transform",
            "log",
            "--no-constant",
            "--reference",
            "900",
            "--json",
            "--csv",
            "out.csv",
        ]
    )
    assert (args.file, args.series, args.horizon, args.order, args.seasonal) == (
        "f.csv",
        "hake_t",
        "5",
        "1,1,0",
        "0,1,1,12",
    )
    assert (args.transform, args.no_constant, args.reference, args.json, args.csv) == (
        "log",
        True,
        "900",
        True,
        "out.csv",
    )
    args = parser.parse_args(
        [
            "batch",
            "f.csv",
            "--horizon",
            "3",
            "--transform",
            "auto",
            "--workers",
            "2",
            "--json",
            "--out",
            "d",
        ]
    )
    assert (args.horizon, args.transform, args.workers, args.json, args.out) == (
        "3",
        "auto",
        "2",
        True,
        "d",
    )


def test_unexpected_errors_exit_1_with_one_line_and_no_traceback(monkeypatch, capsys):
    import forecasting_core._table as table_module

    def boom(*_args, **_kwargs):
        raise RuntimeError("simulated failure")

    monkeypatch.setattr(table_module, "read_table", boom)
    assert main(["check", str(BAD / "text_about.csv")]) == 1
    err = capsys.readouterr().err
    assert "please report" in err and "simulated failure" in err and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1


@pytest.mark.parametrize("as_json", [False, True])
def test_check_never_prints_a_traceback_on_any_corpus_file(as_json, monkeypatch, capsys):
    # The stationarity step is stubbed here (it has its own tests); this is about the reader
    # and the report on every malformed file.
    import forecasting_core.__main__ as cli

    monkeypatch.setattr(cli, "_stationarity", lambda table, transform="auto": {})
    files = sorted(BAD.iterdir())
    assert len(files) >= 25
    for path in files:
        code = main(["check", str(path)] + (["--json"] if as_json else []))
        captured = capsys.readouterr()
        assert code in (0, 2), path.name
        assert "Traceback" not in captured.out + captured.err
        if as_json and code == 0:
            json.loads(captured.out)
        if code == 2 and not captured.out:
            assert captured.err.startswith("error: "), path.name


def test_the_module_entry_point_exits_2_with_a_plain_message():
    proc = _run("check", str(BAD / "pdf_renamed.csv"))
    assert proc.returncode == 2
    assert (
        proc.stderr.startswith("error: the file must be a CSV/text table")
        and "Traceback" not in proc.stderr
    )
    assert proc.stdout == ""


@pytest.mark.skipif(not SAMPLES, reason="sample_data/ not generated yet")
@pytest.mark.parametrize("path", SAMPLES, ids=[p.name for p in SAMPLES])
def test_every_sample_file_reads_without_errors_and_check_exits_0(path, capsys):
    import forecasting_core as fc

    table = fc.read_table(path)
    assert not table.errors, [p.summary() for p in table.errors]
    assert table.series and all(info.usable for info in table.info.values())
    assert main(["check", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert all(s["stationarity"] is not None for s in out["series"])

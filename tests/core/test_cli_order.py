"""--order and --seasonal: a rejected number is named with its option and what was given.

The allowed ranges are those of the core's own check (forecasting_core._search.check_order);
the message style follows the brief's convention after scikit-learn's parameter checks
("horizon must be an integer from 1 to 30. Got 0 instead.").
"""

from __future__ import annotations

from pathlib import Path

import pytest

from forecasting_core.__main__ import main
from forecasting_core._cli_args import ORDER_RANGES, parse_ints
from forecasting_core._results import InputError
from forecasting_core._search import check_order

ROOT = Path(__file__).resolve().parents[2]
LANDINGS = ROOT / "sample_data" / "vellmouth_landings.csv"


@pytest.mark.parametrize(
    ("option", "count", "value", "pattern"),
    [
        ("--order", 3, "9,3,9", r"^--order 9,3,9: d, the second number, must be an integer from 0 to 2\. Got 3 instead\.$"),
        ("--order", 3, "11,0,0", r"^--order 11,0,0: p, the first number, must be an integer from 0 to 10\. Got 11"),
        ("--order", 3, "1,1,12", r"^--order 1,1,12: q, the third number, must be an integer from 0 to 10\. Got 12"),
        ("--seasonal", 4, "4,1,1,12", r"^--seasonal 4,1,1,12: P, the first number, must be an integer from 0 to 3"),
        ("--seasonal", 4, "0,2,1,12", r"^--seasonal 0,2,1,12: D, the second number, must be an integer from 0 to 1"),
        ("--seasonal", 4, "0,1,1,7", r"^--seasonal 0,1,1,7: m, the fourth number, must be 4 or 12 .* Got 7 instead\.$"),
    ],
)  # fmt: skip
def test_a_number_out_of_range_names_the_option_the_number_and_the_value(
    option, count, value, pattern
):
    with pytest.raises(InputError, match=pattern):
        parse_ints(value, count, option, "1,1,0")


@pytest.mark.parametrize("position", range(4))
def test_the_cli_ranges_agree_with_the_cores_check(position):
    # Every single-number change from a valid order is accepted by both or rejected by both.
    base_order, base_seasonal = [1, 1, 1], [1, 1, 1, 12]
    for v in range(0, 14):
        if position < 3:
            order = list(base_order)
            order[position] = v
            cli_ok = v in ORDER_RANGES["--order"][position][1]
            try:
                check_order(tuple(order))
                core_ok = True
            except InputError:
                core_ok = False
            assert cli_ok == core_ok, ("order", position, v)
        seasonal = list(base_seasonal)
        seasonal[position] = v
        cli_ok = v in ORDER_RANGES["--seasonal"][position][1]
        try:
            check_order((1, 1, 1), tuple(seasonal))
            core_ok = True
        except InputError:
            core_ok = False
        assert cli_ok == core_ok, ("seasonal", position, v)


def test_the_command_line_exits_2_with_the_option_named(capsys):
    assert (
        main(
            ["forecast", str(LANDINGS), "--series", "hake_t", "--horizon", "3", "--order", "9,3,9"]
        )
        == 2
    )
    err = capsys.readouterr().err
    assert "--order 9,3,9: d, the second number" in err


def test_a_seasonal_order_on_annual_data_names_the_option_and_the_frequency(capsys):
    argv = ["forecast", str(LANDINGS), "--series", "hake_t", "--horizon", "3"]
    assert main([*argv, "--order", "1,1,0", "--seasonal", "1,1,1,12"]) == 2
    err = capsys.readouterr().err
    assert "--seasonal 1,1,1,12: the series is annual, so it needs no --seasonal" in err


@pytest.mark.parametrize(
    ("value", "pattern"),
    [
        ("11,3,12", r"^--order 11,3,12: p, the first number, must be an integer from 0 to 10; "
                    r"d, the second number, must be an integer from 0 to 2; q, the third number, "
                    r"must be an integer from 0 to 10\. Got 11, 3 and 12 instead\.$"),
        ("1,3,12", r"^--order 1,3,12: d, the second number, .*; q, the third number, .* Got 3 and 12 instead\.$"),
    ],
)  # fmt: skip
def test_every_number_out_of_range_is_named_in_one_message(value, pattern):
    with pytest.raises(InputError, match=pattern):
        parse_ints(value, 3, "--order", "1,1,0")


def test_no_statsmodels_warning_reaches_the_user_of_the_command_line():
    # A fresh process: statsmodels' first import adds "always" filters for its own warnings
    # (ConvergenceWarning, EstimationWarning), which an earlier "ignore" must not lose to.
    import subprocess
    import sys

    argv = ["forecast", str(LANDINGS), "--series", "hake_t", "--horizon", "3", "--order", "9,1,9"]
    done = subprocess.run(
        [sys.executable, "-m", "forecasting_core", *argv],
        capture_output=True, text=True, timeout=120, cwd=ROOT,
    )  # fmt: skip
    assert done.returncode == 2
    assert "Warning" not in done.stderr and "site-packages" not in done.stderr, done.stderr
    assert done.stderr.startswith("error: ")


def test_a_series_set_aside_for_its_frequency_is_named_as_such(tmp_path, capsys):
    # Invented data for the reader only: one annual series, then a monthly one in the same file.
    rows = ["series,time,value"] + [f"hake_t,{y},{1000 + 3 * (y - 1970)}" for y in range(1970, 2015)]
    rows += [f"octopus_t,{2014 + k // 12}-{k % 12 + 1:02d},{60 + (k * 7) % 13}" for k in range(36)]
    src = tmp_path / "mixed.csv"
    src.write_text("\n".join(rows) + "\n", encoding="utf-8")
    assert main(["forecast", str(src), "--series", "octopus_t", "--horizon", "3"]) == 2
    err = capsys.readouterr().err
    assert "error: --series 'octopus_t' was set aside when the file was read: row 47:" in err
    assert "months (e.g. '2014-01')" in err and "must be one of" not in err

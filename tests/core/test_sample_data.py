"""The invented Vellmouth sample data: reproducible, as documented, and its known d recovered."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import forecasting_core as fc

SAMPLE = Path(__file__).resolve().parents[2] / "sample_data"
FILES = (
    "vellmouth_landings.csv",
    "vellmouth_landings_2020.csv",
    "vellmouth_survey_cpue.csv",
    "vellmouth_squid_monthly.csv",
    "vellmouth_sea_temperature.csv",
)


def load_generator():
    spec = importlib.util.spec_from_file_location("make_samples", SAMPLE / "make_samples.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def tables() -> dict[str, fc.Table]:
    return {name: fc.read_table(SAMPLE / name) for name in FILES}


def test_rerunning_the_generator_reproduces_every_file_byte_for_byte(tmp_path):
    load_generator().main(tmp_path)
    assert sorted(p.name for p in tmp_path.glob("*.csv")) == sorted(FILES)
    for name in FILES:
        assert (tmp_path / name).read_bytes() == (SAMPLE / name).read_bytes(), name


@pytest.mark.parametrize("name", FILES)
def test_files_are_plain_utf8_comma_separated_with_newline_endings(name):
    raw = (SAMPLE / name).read_bytes()
    text = raw.decode("utf-8")
    assert not raw.startswith(b"\xef\xbb\xbf") and b"\r" not in raw and text.endswith("\n")
    assert len({line.count(",") for line in text.splitlines()}) == 1


@pytest.mark.parametrize(
    ("name", "header", "first", "last"),
    [
        ("vellmouth_landings.csv", "year,hake_t,plaice_t,herring_t,whiting_t", "1978", "2025"),
        ("vellmouth_landings_2020.csv", "year,hake_t,plaice_t,herring_t,whiting_t", "1978", "2020"),
        ("vellmouth_survey_cpue.csv", "year,hake_kg_per_tow,plaice_kg_per_tow", "1985", "2025"),
        (
            "vellmouth_squid_monthly.csv",
            "series,month,value,unit",
            "squid,2011-01",
            "squid,2025-12",
        ),
        ("vellmouth_sea_temperature.csv", "year,sea_temp_anomaly_degC", "1978", "2025"),
    ],
)
def test_layout_and_span_are_as_documented(name, header, first, last):
    lines = (SAMPLE / name).read_text(encoding="utf-8").splitlines()
    assert lines[0] == header
    assert lines[1].startswith(first + ",") and lines[-1].startswith(last + ",")


def test_the_2020_vintage_equals_the_full_file_up_to_2020():
    full = pd.read_csv(SAMPLE / "vellmouth_landings.csv")
    old = pd.read_csv(SAMPLE / "vellmouth_landings_2020.csv")
    pd.testing.assert_frame_equal(old, full[full["year"] <= 2020].reset_index(drop=True))


def test_every_sample_series_reads_as_usable_with_its_unit(tables):
    units = {
        "hake_t": "t",
        "plaice_t": "t",
        "herring_t": "t",
        "whiting_t": "t",
        "hake_kg_per_tow": "kg/tow",
        "plaice_kg_per_tow": "kg/tow",
        "squid": "t",
        "sea_temp_anomaly_degC": "degC",
    }
    seen = {}
    for table in tables.values():
        assert not table.errors
        for series_name, info in table.info.items():
            assert info.usable, series_name
            seen[series_name] = info.unit
    assert seen == units


def test_negative_temperature_anomalies_are_a_warning_not_an_error(tables):
    table = tables["vellmouth_sea_temperature.csv"]
    assert "sea_temp_anomaly_degC" in table.series
    assert (table.series["sea_temp_anomaly_degC"] < 0).any()
    assert all(p.severity == "warning" for p in table.problems)


# The truth, from make_samples.py and sample_data/README.md (invented processes, seeded).
KNOWN = [
    ("vellmouth_landings.csv", "hake_t", "log", 1, 0),  # log ARIMA(1,1,0) with drift
    ("vellmouth_landings.csv", "plaice_t", "log", 0, 0),  # log AR(1), phi 0.6
    ("vellmouth_landings.csv", "herring_t", "log", 1, 0),  # level shift in 1998: KPSS picks 1
    ("vellmouth_landings.csv", "whiting_t", "log", 1, 0),  # log ARIMA(0,1,1)
    ("vellmouth_survey_cpue.csv", "hake_kg_per_tow", "log", 0, 0),  # log AR(1), phi 0.5, gaps
    ("vellmouth_survey_cpue.csv", "plaice_kg_per_tow", "log", 0, 0),  # log AR(1), phi 0.4, gaps
    ("vellmouth_squid_monthly.csv", "squid", "log", 0, 1),  # log ARIMA(1,0,0)(0,1,1)[12]
    ("vellmouth_sea_temperature.csv", "sea_temp_anomaly_degC", "none", 1, 0),  # trend + AR(1)
]


@pytest.mark.parametrize(("name", "series", "transform", "d", "seasonal_d"), KNOWN)
def test_known_differencing_order_is_recovered(tables, name, series, transform, d, seasonal_d):
    report = fc.assess_stationarity(tables[name].series[series], transform=transform)
    assert (report.d, report.seasonal_d) == (d, seasonal_d)
    assert f"d = {d}" in report.verdict


def test_regime_shift_series_shows_the_tests_disagreeing_and_says_so(tables):
    y = tables["vellmouth_landings.csv"].series["herring_t"]
    report = fc.assess_stationarity(y, transform="log")
    assert report.tests_disagree
    assert "ADF and KPSS disagree" in report.verdict and "level that shifted" in report.verdict
    # The documented drop of 0.3 on the log scale from 1998 on (mean of each regime, AR noise sd ~0.16).
    logy = np.log(y)
    drop = logy[: pd.Period("1997", freq="Y")].mean() - logy[pd.Period("1998", freq="Y") :].mean()
    assert drop == pytest.approx(0.3, abs=0.15)


def test_squid_has_a_strong_cycle_peaking_in_september(tables):
    y = tables["vellmouth_squid_monthly.csv"].series["squid"]
    report = fc.assess_stationarity(y, transform="log")
    assert report.seasonal_strength > 0.64 and report.seasonal_d == 1
    by_month = np.log(y).groupby(y.index.month).mean()
    assert by_month.idxmax() == 9 and by_month.idxmin() == 3  # cos(2 pi (month - 9) / 12)


def test_cpue_gaps_are_reported_with_the_right_years(tables):
    raw = pd.read_csv(SAMPLE / "vellmouth_survey_cpue.csv")  # plain pandas as the reference
    table = tables["vellmouth_survey_cpue.csv"]
    for column, documented in (
        ("hake_kg_per_tow", [1991, 2003, 2004, 2020]),
        ("plaice_kg_per_tow", [1991, 2012, 2020]),
    ):
        gap_years = raw.loc[raw[column].isna(), "year"].tolist()
        assert gap_years == documented
        labels = [str(year) for year in gap_years]
        assert table.info[column].missing == len(gap_years)
        messages = " ".join(p.message for p in table.problems if p.column == column)
        assert all(label in messages for label in labels)
        report = fc.assess_stationarity(table.series[column], transform="log")
        assert f"{len(labels)} missing years ({', '.join(labels)})" in report.verdict
        assert [
            p.year for p in report.differenced[0].index[report.differenced[0].isna()]
        ] == gap_years

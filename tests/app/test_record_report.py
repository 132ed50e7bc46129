"""The forecast record in words and in the HTML report: the plain column names and the MASE
gloss, the report's static "How past forecasts did" section (escaped, with its caveat and
caution), and the board's download carrying it.

Numbers are hand-worked in the comments, on the same invented stock as test_record_views.py:
data 2001-2015 is 10, 12, 11, 14, 13 three times over (MASE scale 27 / 14 = 1.928571); a
forecast from 2015 with medians 13, 13.5, 14 against realised 15, 12, 20.
"""

from __future__ import annotations

import math
import re
from typing import Any

import pytest

import forecasting_core as fc
from app import export, record_report, wording

OLD_CSV = "year,cod_t\n" + "".join(
    f"{2001 + i},{v}\n" for i, v in enumerate([10, 12, 11, 14, 13] * 3)
)
NEW_CSV = OLD_CSV + "2016,15\n2017,12\n2018,20\n"


def _forecast(label_series: str = "cod_t") -> dict[str, Any]:
    rows = [
        ("2016", 13.0, {"50": [12.0, 14.0], "80": [11.0, 15.0], "95": [10.0, 16.0]}),
        ("2017", 13.5, {"50": [12.5, 14.5], "80": [11.5, 15.5], "95": [10.0, 17.0]}),
        ("2018", 14.0, {"50": [12.5, 15.5], "80": [11.0, 17.0], "95": [9.0, 19.0]}),
    ]
    return {
        "series": label_series,
        "model": "ARIMA(0,1,0)",
        "frequency": "annual",
        "levels": [50, 80, 95],
        "forecast": [
            {"time": t, "step": i, "mean": m, "median": m, "intervals": b}
            for i, (t, m, b) in enumerate(rows, start=1)
        ],
    }


@pytest.fixture(scope="module")
def newer() -> Any:
    return fc.read_table(NEW_CSV.encode(), name="cod.csv").series["cod_t"]


@pytest.fixture(scope="module")
def record(newer) -> fc.ForecastRecord:
    older = fc.read_table(OLD_CSV.encode(), name="old.csv").series["cod_t"]
    return fc.score_forecast_record(
        [_forecast()], newer, labels=["Cod <b>2016</b> & on"], histories=[older]
    )


# -- words ------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("mase", "frequency", "words"),
    [
        (9.93, "annual", "errors 9.9 times the typical year-to-year change"),
        (1.64, "annual", "errors 1.6 times the typical year-to-year change"),
        (0.65, "annual", "errors 0.65 times the typical year-to-year change"),
        (1.01, "annual", "errors about as large as the typical year-to-year change"),
        (12.4, "annual", "errors 12 times the typical year-to-year change"),
        (2.0, "monthly", "errors 2.0 times the typical change from the same month a year earlier"),
        (2.0, "quarterly", "the typical change from the same quarter a year earlier"),
        (math.nan, "annual", ""),
    ],
)
def test_mase_is_glossed_in_plain_words(mase, frequency, words):
    # MASE = mean |error| / mean |naive change| (Hyndman and Koehler 2006), so 9.93 reads as
    # errors 9.9 times the typical change; the seasonal naive for monthly and quarterly data
    if words:
        assert words in wording.mase_words(mase, frequency)
    else:
        assert wording.mase_words(mase, frequency) == ""


def test_the_percentage_column_is_named_plainly_with_its_meaning(record):
    keys = {key: (heading, tip) for key, heading, tip in record_report.columns(record)}
    assert keys["pct"][0] == "Miss, % of realised"
    assert "percentage of the realised value" in keys["pct"][1]
    assert keys["error"][0] == "Miss" and "Realised value minus the median" in keys["error"][1]
    assert "Error %" not in [h for h, _ in keys.values()]


def test_table_rows_hold_the_hand_worked_misses(record):
    rows = record_report.table_rows(record)
    # misses 15 - 13 = +2.0, 12 - 13.5 = -1.5, 20 - 14 = +6.0; as % of realised
    # 2 / 15 = +13%, -1.5 / 12 = -12.5% (rounded half to even: -12%), 6 / 20 = +30%
    assert [r["error"] for r in rows] == ["+2.0", "\u22121.5", "+6.0"]
    assert [r["pct"] for r in rows] == ["+13%", "\u221212%", "+30%"]
    # inside the 80% band with its ends included: 15 in [11, 15], 12 in [11.5, 15.5], 20 not
    assert [r["in80"] for r in rows] == [True, True, False]
    assert [r["first"] for r in rows] == [True, False, False]


def test_coverage_lines_say_the_cards_in_words(record):
    lines = record_report.coverage_lines(record)
    assert lines[0] == "Inside the 80% band: 2 of 3 (80% expected)."
    # MASE = (2 + 1.5 + 6) / 3 / (27 / 14) = 1.64
    assert (
        "MASE of past forecasts: 1.64, errors 1.6 times the typical year-to-year change "
        "before each forecast." in lines
    )
    assert lines[-1] == "Scored: 3 years from 1 past forecast."


# -- the report -------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def report(forecast, comparison, record) -> str:
    analyses = [
        {
            "published_at": "2026-03-02T09:15:00+00:00",
            "published_by": "A. <i>Analyst</i>",
            "author": "A",
            "signoffs": [{"name": "B. Manager", "role": "stock lead"}],
        }
    ]
    return export.report_html(forecast, comparison, record=record, record_analyses=analyses)


def _section(page: str) -> str:
    start = page.index("<section class='record'>")
    return page[start : page.index("</section>", start)]


def test_the_report_has_the_record_headline_and_table(report):
    part = _section(report)
    assert "<h2>How past forecasts did</h2>" in part
    assert "Of 3 past forecast years, 2 fell inside the 80% band (80% expected)" in part
    for cell in ("+2.0", "\u22121.5", "+30%", "\u2714 inside", "\u2716 outside", "15.0", "13.5"):
        assert f">{cell}<" in part, cell
    assert ">Miss, % of realised&thinsp;*</th>" in part
    assert "title='The miss as a percentage of the realised value" in part
    assert "* Miss = realised \u2212 median forecast." in part
    assert "errors 1.6 times the typical year-to-year change" in part


def test_the_record_section_carries_its_caveat_and_a_caution(report):
    part = _section(report)
    # 3 scored periods are fewer than the 10 the core asks for to judge coverage
    assert "Read with care:</strong> 3 years scored: too few to judge coverage" in part
    assert "does not promise a good forecast this time" in part
    # and the report's own cautions are still there, once each
    for caution in fc.CAUTIONS:
        assert report.count(caution) == 1


def test_names_in_the_record_are_escaped(report):
    part = _section(report)
    assert "<b>2016</b>" not in part and "<i>Analyst</i>" not in part
    assert "Cod &lt;b&gt;2016&lt;/b&gt; &amp; on" in part
    assert "published 2026-03-02 by A. &lt;i&gt;Analyst&lt;/i&gt;" in part
    assert "signed off by B. Manager (stock lead)" in part


def test_the_record_section_needs_no_javascript(report):
    part = _section(report)
    assert "<script" not in part and not re.search(r"\son\w+=", part)


def test_without_a_record_the_report_has_no_record_section(forecast, comparison):
    assert "How past forecasts did" not in export.report_html(forecast, comparison)


def test_pending_periods_show_as_not_yet_realised(forecast, comparison):
    y = fc.read_table((OLD_CSV + "2016,15\n").encode(), name="c.csv").series["cod_t"]
    rec = fc.score_forecast_record(_forecast(), y)
    part = _section(export.report_html(forecast, comparison, record=rec))
    assert part.count(">not yet realised<") == 2

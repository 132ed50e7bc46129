"""Forecast CSV and HTML report exports, on results from real core calls.

Data: the Nile river flow series that statsmodels ships (statsmodels.datasets.nile,
annual volumes 1871-1970, 10^8 m^3).
"""

from __future__ import annotations

import csv
import dataclasses
import io
import re

import pandas as pd
import pytest

import forecasting_core as fc
from app import figures
from app.export import _comment_line, forecast_csv, neutralise_cell, report_html
from app.wording import fmt_chance, fmt_value, forecast_summary

FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
PLAIN_NUMBER = re.compile(r"^-?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


def _renamed(forecast: fc.Forecast, name: str) -> fc.Forecast:
    return dataclasses.replace(forecast, series_name=name)


# -- CSV: nothing a spreadsheet would run ------------------------------------------------------


@pytest.mark.parametrize(
    ("cell", "expected"),
    [
        # Formula starts neutralised with a leading quote (common practice, OWASP CSV injection).
        ("=1+1", "'=1+1"),
        ("+cmd", "'+cmd"),
        ("@SUM(A1:A2)", "'@SUM(A1:A2)"),
        ("-cmd|' /C calc'!A0", "'-cmd|' /C calc'!A0"),
        ("-2.5+1", "'-2.5+1"),
        ("-", "'-"),
        ("\t=1", "'\t=1"),
        ("\r=1", "'\r=1"),
        # Plain negative numbers stay numbers.
        ("-2.5", "-2.5"),
        ("-17", "-17"),
        ("-1e-3", "-1e-3"),
        ("-.5", "-.5"),
        # Everything else passes through.
        ("hake_t", "hake_t"),
        ("2026-Q3", "2026-Q3"),
        ("", ""),
        (-2.5, -2.5),
        (3, 3),
        (None, None),
    ],
)
def test_csv_cell_neutralisation(cell, expected):
    assert neutralise_cell(cell) == expected


def test_comment_line_keeps_text_and_neutralises_pieces_after_commas():
    line = _comment_line('series: x,=HYPERLINK("http://e.x"), -2,@A1')
    assert line.startswith("# series: x,")
    for piece in next(csv.reader([line])):
        assert not piece.lstrip().startswith(FORMULA_START) or PLAIN_NUMBER.match(piece.strip())
    assert '"' not in line


def test_csv_reads_back_as_the_forecast_table(forecast):
    text = forecast_csv(forecast, unit="10^8 m^3")
    back = pd.read_csv(io.StringIO(text), comment="#")
    assert list(back.columns) == [
        "time",
        "step",
        "mean",
        "median",
        "lo50",
        "hi50",
        "lo80",
        "hi80",
        "lo95",
        "hi95",
        "prob_below_reference",
    ]
    assert len(back) == 5
    for col in ("mean", "median", "lo80", "hi95"):
        pd.testing.assert_series_equal(
            back[col],
            forecast.table[col].astype(float).reset_index(drop=True),
            check_names=False,
            rtol=1e-5,
        )
    assert back["prob_below_reference"].between(0, 1).all()


def test_csv_carries_every_caution_as_a_comment(forecast):
    lines = forecast_csv(forecast).splitlines()
    for caution in fc.CAUTIONS:
        assert f"# caution: {caution}" in lines


def test_csv_without_reference_leaves_probability_blank(comparison):
    fcst = fc.make_forecast(comparison.best, horizon=3)
    back = pd.read_csv(io.StringIO(forecast_csv(fcst)), comment="#")
    assert back["prob_below_reference"].isna().all()


@pytest.mark.parametrize("name", ["=cmd|' /C calc'!A0", "+1,=2+3", "@SUM(1)", 'x"\n=1'])
def test_csv_never_has_a_formula_cell_even_with_hostile_names(forecast, name):
    text = forecast_csv(_renamed(forecast, name), unit="=t", dataset_name="-bad,@file")
    for row in csv.reader(io.StringIO(text)):
        for cell in row:
            assert not cell.startswith(FORMULA_START) or PLAIN_NUMBER.match(cell), cell


# -- HTML report: offline, escaped, complete ---------------------------------------------------


@pytest.fixture(scope="module")
def report(forecast, comparison, nile) -> str:
    figs = [
        ("Forecast", figures.fan_chart(forecast, nile, unit="10^8 m^3")),
        ("Chance below the reference level", figures.prob_below_figure(forecast)),
    ]
    return report_html(forecast, comparison, figures=figs, unit="10^8 m^3", dataset_hash="ab" * 32)


def test_report_inlines_plotly_once_and_loads_nothing_from_the_network(report):
    assert "plotly.js v" in report or "Plotly" in report
    assert report.count("plotly.js v") <= 1
    assert not re.search(r"<script[^>]*\bsrc\s*=", report, flags=re.IGNORECASE)
    assert not re.search(r"<link[^>]*\bhref\s*=\s*['\"]?https?://", report, flags=re.IGNORECASE)
    assert report.count("Plotly.newPlot") == 2


def test_report_records_cautions_hash_versions_and_summary(report, forecast):
    for caution in fc.CAUTIONS:
        assert caution in report
    assert "ab" * 32 in report
    assert "statsmodels" in report and "plotly" in report
    assert "80% chance" in report
    assert forecast.model in report


def test_report_escapes_a_script_in_the_series_name(forecast, comparison, nile):
    hostile = "<script>alert('x')</script>"
    fcst = _renamed(forecast, hostile)
    page = report_html(
        fcst, comparison, figures=[("Forecast", figures.fan_chart(fcst, nile))], unit="<b>t</b>"
    )
    assert "<script>alert" not in page
    assert "&lt;script&gt;alert(&#x27;x&#x27;)&lt;/script&gt;" in page
    assert "<b>t</b>" not in page


# -- the plain-language summary shared by the board and the report -------------------------------


@pytest.mark.parametrize(
    ("p", "text"),
    [
        (0.0, "less than 1%"),
        (0.004, "less than 1%"),
        (0.2349, "23%"),
        (0.995, "more than 99%"),
        (float("nan"), "n/a"),
    ],
)
def test_chances_are_read_as_whole_percent(p, text):
    assert fmt_chance(p) == text


def test_summary_reads_the_forecast_table(forecast, comparison):
    first = forecast.table.iloc[0]
    sentences = forecast_summary(forecast, comparison, unit="10^8 m^3")
    assert sentences[0].startswith(
        f"For {first['time']}, the expected nile is {fmt_value(first['mean'], '10^8 m^3')}"
    )
    assert (
        f"between {fmt_value(first['lo80'], '10^8 m^3')} and {fmt_value(first['hi80'], '10^8 m^3')}"
        in sentences[1]
    )
    assert any("reference level of 800 10^8 m^3" in s for s in sentences)
    assert sentences[-1].startswith(f"The forecast comes from {forecast.model}.")
    # the hindcast sentence uses the same measure (MASE) as the Model Bench verdict
    mine = comparison.hindcast.score(forecast.model).mase
    naive = comparison.hindcast.score("last value").mase
    assert f"{abs(100 * (1 - mine / naive)):.0f}%" in sentences[-1]


def test_report_describes_the_picked_model_not_the_best(comparison):
    # The report's hindcast sentence and residual checks follow the model in use.
    other = next(c for c in comparison.accepted if c.label != comparison.best.label)
    picked = fc.make_forecast(other, horizon=5, levels=(50, 80, 95))
    page = report_html(picked, comparison)
    assert f"Residual checks ({other.label})" in page
    assert f"<p>{other.label}:" in page.replace("&#x27;", "'")


# -- A saved analysis and its sign-offs in both exports ----------------------------------------

SIGNED = {
    "id": "0123456789abcdef0123456789abcdef",
    "version": 2,
    "parent_id": "f" * 32,
    "series": "nile",
    "title": "Nile flow outlook",
    "season": "1971",
    "status": "published",
    "author": "Ana Ortiz",
    "created_at": "2026-12-01T20:10:00+00:00",
    "published_at": "2026-12-01T20:15:00+00:00",
    "signoffs": [
        {
            "name": "Ben Ito",
            "role": "Manager",
            "note": "Fine for the meeting",
            "signed_at": "2026-12-01T20:30:00+00:00",
        },
        {
            "name": '=HYPERLINK("x")',
            "role": "+role",
            "note": "@note, -cmd",
            "signed_at": "2026-12-01T20:40:00+00:00",
        },
    ],
}


def test_csv_lists_the_analysis_and_each_dated_signoff_before_the_cautions(forecast):
    text = forecast_csv(forecast, analysis=SIGNED)
    header = [line for line in text.splitlines() if line.startswith("#")]
    joined = "\n".join(header)
    assert "# analysis: Nile flow outlook" in joined
    assert "# analysis version: 2" in joined
    assert "# status: published 2026-12-01 20:15 UTC" in joined
    assert "# sign-off: 2026-12-01 20:30 UTC, Ben Ito (Manager): Fine for the meeting" in joined
    first_caution = next(i for i, line in enumerate(header) if line.startswith("# caution:"))
    last_signoff = max(i for i, line in enumerate(header) if line.startswith("# sign-off:"))
    assert last_signoff < first_caution
    for caution in fc.CAUTIONS:
        assert caution.replace('"', "'") in text
    # the table still reads back, and no cell of any header line is a formula
    table = pd.read_csv(io.StringIO(text), comment="#")
    assert len(table) == len(forecast.table)
    for row in csv.reader(io.StringIO(text)):
        for cell in row[1:]:
            assert not cell.lstrip().startswith(FORMULA_START) or PLAIN_NUMBER.match(cell.strip())


def test_csv_of_a_draft_says_it_is_not_published(forecast):
    draft = {**SIGNED, "status": "draft", "published_at": None, "signoffs": []}
    text = forecast_csv(forecast, analysis=draft)
    assert "# status: draft, not published" in text
    assert "sign-off" not in text


def test_report_shows_the_signoffs_as_a_dated_list_with_the_cautions(forecast, comparison):
    hostile = {**SIGNED, "title": "<script>alert(1)</script>"}
    page = report_html(forecast, comparison, analysis=hostile)
    assert "<h2>Sign-offs</h2>" in page
    assert (
        "2026-12-01 20:30 UTC &mdash; <strong>Ben Ito</strong> (Manager): Fine for the meeting"
        in page
    )
    assert page.index("Ben Ito") < page.index("=HYPERLINK")  # oldest first
    assert "<script>alert(1)</script>" not in page
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    for caution in fc.CAUTIONS:
        assert caution in page


# -- report: settings a manager can read, one format per column --------------------------------


def _section(page: str, heading: str) -> str:
    start = page.index(f"<h2>{heading}</h2>")
    end = page.find("<h2>", start + 5)
    return page[start : end if end > 0 else None]


def test_report_settings_are_labelled_in_plain_words_without_internals(report):
    settings = _section(report, "Settings")
    # Nile: no transform, exhaustive search up to p, q = 5, constant tried both ways.
    for text in (
        "Transform",
        "none (chosen automatically)",
        "Orders searched",
        "p \u2264 5, q \u2264 5",
        "Constant or drift",
        "decided by AICc",
        "Horizon",
        "5 years ahead",
        "Hindcast",
        "10 origins",
    ):
        assert text in settings, text
    for internal in ("transform_used", "workers", "engine", "None", "{", "screening", "max_p"):
        assert internal not in settings, internal


@pytest.mark.parametrize(
    ("settings", "label", "text"),
    [
        ({"transform": "boxcox", "transform_used": {"name": "boxcox", "lambda": 0.25}},
         "Transform", "Box-Cox (\u03bb=0.25)"),
        ({"transform": "auto", "transform_used": {"name": "log", "lambda": None}},
         "Transform", "log (chosen automatically)"),
        ({"order": [1, 1, 0], "seasonal_order": [0, 1, 1, 12]}, "Model order",
         "fixed at ARIMA(1,1,0)(0,1,1)[12]"),
        ({"constant": True}, "Constant or drift", "always included"),
        ({"constant": "off"}, "Constant or drift", "never included"),
        ({"horizon": 1}, "Horizon", "1 year ahead"),
    ],
)  # fmt: skip
def test_settings_rows_read_each_setting_in_words(settings, label, text):
    from app.export import settings_rows

    assert settings_rows(settings)[label] == text


def test_report_hindcast_table_uses_one_number_of_decimals_per_column(report):
    table = _section(report, "Hindcast skill")
    head = re.findall(r"<th[^>]*>([^<]*)</th>", table)
    rows = re.findall(r"<tr>(.*?)</tr>", table)[1:]
    cells = [re.findall(r"<td[^>]*>([^<]*)</td>", r) for r in rows]
    assert cells
    for j, name in enumerate(head):
        if name == "model":
            continue
        decimals = {len(c[j].split(".")[1]) if "." in c[j] else 0 for c in cells if c[j]}
        assert len(decimals) == 1, (name, [c[j] for c in cells])

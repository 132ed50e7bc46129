"""Forecast Board in real Chromium: the fan chart and summary for the demo, the reference level
and its probabilities, the CSV and HTML downloads, and presentation mode.

The data is the invented demo (sample_data/vellmouth_landings.csv, series hake_t, annual
landings in tonnes; sample_data/README.md documents its generating process).
"""

from __future__ import annotations

import io
import re

import pandas as pd
from playwright.sync_api import expect

import forecasting_core as fc

#: The first board visit may have to run the comparison (cold cache, busy machine).
COMPARE_MS = 120_000


def _open_board(page, open_page, settle, path: str = "/board") -> None:
    open_page(page, path, settle=False)
    expect(page.locator("#board-summary p").first).to_be_visible(timeout=COMPARE_MS)
    settle(page)


def _chances(page) -> list[str]:
    cells = page.locator("#board-table-rows tbody tr td:last-child")
    return [c.strip() for c in cells.all_inner_texts()]


def test_board_shows_the_demo_forecast_with_bands_summary_and_cautions(
    page, open_page, settle, screenshot
):
    _open_board(page, open_page, settle)
    expect(page.locator("#board-model-label")).to_have_text(re.compile(r"^ARIMA\("))
    summary = page.locator("#board-summary")
    expect(summary).to_contain_text("expected hake_t is")
    expect(summary).to_contain_text("80% chance")
    expect(summary).to_contain_text("Replayed from each of the last")
    # fan chart: the bands and the median, the unit in the axis title
    fan = page.locator("#board-fan")
    for name in ("95% band", "80% band", "50% band", "Median forecast", "Observed"):
        expect(fan.locator(".legendtext", has_text=name)).to_have_count(1)
    expect(fan.locator(".ytitle")).to_have_text("hake_t (t)")
    # the cautions next to the forecast
    for caution in fc.CAUTIONS:
        expect(page.locator(".hc-caution")).to_contain_text(caution[:60])
    # PNG from the modebar's own button, without the plotly logo
    fan.hover()
    expect(fan.locator(".modebar-btn[data-title^='Download plot as a']")).to_have_count(1)
    expect(fan.locator(".modebar-btn--logo")).to_have_count(0)
    screenshot(page, "board")


def test_reference_level_sets_the_chance_of_falling_below(page, open_page, settle):
    _open_board(page, open_page, settle)
    reference = page.locator("#board-reference")
    reference.fill("1000")
    reference.press("Enter")
    expect(page.locator("#board-table-rows thead")).to_contain_text("Chance below 1,000")
    settle(page)
    low = _chances(page)
    expect(page.locator("#board-prob .bars .point").first).to_be_attached()
    # the label sits in the chart's right margin on three short lines (one text element each)
    expect(page.locator("#board-fan")).to_contain_text(re.compile(r"reference\s*level\s*1,000"))

    reference.fill("100000")
    reference.press("Enter")
    expect(page.locator("#board-table-rows thead")).to_contain_text("Chance below 100,000")
    settle(page)
    high = _chances(page)
    assert len(low) == len(high) >= 1
    assert low != high
    # far above every band: almost certain to fall below it
    assert all(c == "more than 99%" for c in high), high
    expect(page.locator("#board-summary")).to_contain_text(
        "chance of falling below the reference level"
    )


def test_the_chance_chart_labels_round_as_the_table_does(page, open_page, settle):
    _open_board(page, open_page, settle)
    reference = page.locator("#board-reference")
    reference.fill("1")  # far below every band: the table says "less than 1%"
    reference.press("Enter")
    expect(page.locator("#board-table-rows thead")).to_contain_text("Chance below 1")
    settle(page)
    chances = _chances(page)
    assert chances and all(c == "less than 1%" for c in chances), chances
    labels = page.locator("#board-prob text.bartext")
    expect(labels.first).to_be_attached()
    assert [t.strip() for t in labels.all_text_contents()] == chances


def test_reference_level_below_zero_is_questioned(page, open_page, settle):
    _open_board(page, open_page, settle)
    reference = page.locator("#board-reference")
    reference.fill("-5")
    reference.press("Enter")
    expect(page.locator("#board-alert")).to_contain_text("at or below zero")


def test_downloads_csv_and_report_with_cautions(page, open_page, settle, tmp_path):
    _open_board(page, open_page, settle)
    page.locator("#board-reference").fill("2000")
    page.locator("#board-reference").press("Enter")
    expect(page.locator("#board-table-rows thead")).to_contain_text("Chance below 2,000")
    settle(page)

    with page.expect_download() as info:
        page.locator("#board-download-csv").click()
    download = info.value
    assert download.suggested_filename == "hake_t_forecast.csv"
    path = tmp_path / download.suggested_filename
    download.save_as(path)
    text = path.read_text(encoding="utf-8")
    for caution in fc.CAUTIONS:
        assert f"# caution: {caution}" in text
    assert "# reference level: 2000" in text
    table = pd.read_csv(io.StringIO(text), comment="#")
    assert list(table["step"]) == list(range(1, len(table) + 1))
    assert table["prob_below_reference"].between(0, 1).all()
    assert (table["lo95"] <= table["median"]).all() and (table["median"] <= table["hi95"]).all()

    with page.expect_download() as info:
        page.locator("#board-download-html").click()
    report_path = tmp_path / info.value.suggested_filename
    info.value.save_as(report_path)
    report = report_path.read_text(encoding="utf-8")
    assert report_path.name == "hake_t_report.html"
    assert "Plotly" in report and not re.search(r"<script[^>]*\bsrc\s*=", report, re.IGNORECASE)
    for caution in fc.CAUTIONS:
        assert caution in report
    assert "data sha256" in report and "statsmodels" in report
    # the demo's earlier published hake forecast, scored on this data, as on the board
    record = report[report.index("<section class='record'>") :]
    assert "<h2>How past forecasts did</h2>" in record
    assert "Of 5 past forecast years" in record and "Miss, % of realised" in record
    assert "<script" not in record[: record.index("</section>")]


def test_presentation_mode_by_button_and_by_query(page, open_page, settle, screenshot):
    _open_board(page, open_page, settle)
    wrapper = page.locator("#board-wrapper")
    expect(wrapper).not_to_have_class(re.compile(r"hc-present"))
    expect(page.locator("#board-details")).to_be_visible()
    page.locator("#board-present-toggle").click()
    expect(wrapper).to_have_class(re.compile(r"hc-present"))
    expect(page.locator("#board-details")).to_be_hidden()
    expect(page.locator("#board-download-csv")).to_be_hidden()
    expect(page.locator("#board-present-toggle")).to_have_text("Leave presentation")
    page.locator("#board-present-toggle").click()
    expect(wrapper).not_to_have_class(re.compile(r"hc-present"))

    _open_board(page, open_page, settle, "/board?present=1")
    expect(wrapper).to_have_class(re.compile(r"hc-present"))
    expect(page.locator("#board-details")).to_be_hidden()
    expect(page.locator("#board-summary")).to_be_visible()
    size = page.locator("#board-summary p").first.evaluate(
        "e => parseFloat(getComputedStyle(e).fontSize)"
    )
    assert size >= 28, size
    screenshot(page, "board_present")

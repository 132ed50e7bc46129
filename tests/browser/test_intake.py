"""Intake in real Chromium: pages load by URL, uploads are read, problems name rows and years,
the stationarity panel gives a verdict.

Expected findings come from the sample data's documented generating processes
(sample_data/README.md) and from the file the test itself builds (its rows are counted here:
the header is file row 1).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from playwright.sync_api import expect

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_data"


@pytest.mark.parametrize(
    ("path", "title"),
    [("/intake", "Intake"), ("/bench", "Model Bench"), ("/board", "Forecast Board")],
)
def test_each_page_loads_directly_by_url(page, open_page, screenshot, path, title):
    # Intake is waited for to the end; the other pages' own tests wait for their results
    open_page(page, path, settle=path == "/intake")
    expect(page).to_have_title(f"{title} \u00b7 Haulcast")
    # the top bar: product, the three steps in order, the current page marked
    expect(page.locator(".hc-brand__name")).to_have_text("Haulcast")
    expect(page.locator(".hc-nav__name")).to_have_text(["Intake", "Model Bench", "Forecast Board"])
    expect(page.locator(".hc-nav__link--current .hc-nav__name")).to_have_text(title)
    # a new visitor sees the demo dataset named in the top bar
    expect(page.locator("#hc-context-dataset")).to_contain_text("vellmouth_landings.csv")
    if path == "/intake":
        expect(page.locator("#intake-verdict-text")).to_be_visible()
        expect(page.locator("[role=alert].hc-alert--error")).to_have_count(0)
        screenshot(page, "intake")


def test_root_opens_the_home_page(page, app_url):
    page.goto(app_url + "/")
    expect(page).to_have_url(app_url + "/")
    expect(page.locator("h1.hc-page__title")).to_have_text("Saved analyses")
    expect(page.locator(".hc-nav__link--current .hc-nav__home")).to_have_text("Home")


def test_uploading_a_sample_csv_lists_its_series_and_gap_years(
    page, open_page, upload_file, screenshot
):
    open_page(page, "/intake")
    data = (SAMPLES / "vellmouth_survey_cpue.csv").read_bytes()
    upload_file(page, "vellmouth_survey_cpue.csv", data)
    # the same bytes are a sample already: still read and selected
    series_list = page.locator("#intake-series-list")
    expect(series_list).to_contain_text("hake_kg_per_tow")
    expect(series_list).to_contain_text("plaice_kg_per_tow")
    # README: hake survey gaps 1991, 2003, 2004, 2020 -> 4 missing inside 1985-2025
    hake_row = series_list.locator("tr", has_text="hake_kg_per_tow")
    expect(hake_row).to_contain_text("1985\u20132025")
    expect(hake_row.locator("td").nth(5)).to_have_text("4")
    problems = page.locator("#intake-problems-table")
    expect(problems).to_contain_text("1991")
    expect(page.locator("#hc-context-dataset")).to_contain_text("vellmouth_survey_cpue.csv")
    expect(page.locator("#hc-context-series")).to_have_text("hake_kg_per_tow")
    screenshot(page, "intake-cpue-upload")


def _bad_csv() -> bytes:
    # file row 1 is the header; row n holds year 1988 + n
    lines = ["year,cod_t,ling_t"]
    for year in range(1990, 2012):
        cod, ling = str(100 + year - 1990), str(50 + year - 1990)
        if year == 1991:
            cod = "about 900"  # file row 3: text in a numeric cell
        if year == 1992:
            ling = ""  # file row 4: a blank cell
        lines.append(f"{year},{cod},{ling}")
    lines.append("1995,999,55")  # file row 24: 1995 again (first at row 7), a different cod value
    return ("\n".join(lines) + "\n").encode()


def test_malformed_csv_shows_each_problem_with_its_row_and_year(
    page, open_page, upload_file, screenshot
):
    open_page(page, "/intake")
    upload_file(page, "bad_landings.csv", _bad_csv())
    table = page.locator("#intake-problems-table")
    expect(table).to_be_visible()
    text_row = table.locator("tbody tr", has_text="about 900")
    expect(text_row.locator("td").nth(1)).to_have_text("3")
    expect(text_row.locator("td").nth(2)).to_have_text("1991")
    expect(text_row.locator("td").nth(3)).to_have_text("cod_t")
    blank_row = table.locator("tbody tr", has=page.locator("td:nth-child(3)", has_text="1992"))
    expect(blank_row.first.locator("td").nth(3)).to_have_text("ling_t")
    expect(blank_row.first.locator("td").nth(1)).to_have_text("4")
    # the duplicated year is an error: shown by icon, word and colour
    dup = table.locator("tbody tr", has_text="1995 appears")
    expect(dup.first.locator(".hc-sev--error")).to_have_text("\u2716Error")
    expect(dup.first.locator("td").nth(2)).to_have_text("1995")
    expect(dup.first).to_contain_text("24")
    # cod_t cannot be used; the stat card counts the errors
    cod = page.locator("#intake-series-list tr", has_text="cod_t")
    expect(cod).to_contain_text("Error")
    expect(page.locator("#intake-upload-status")).to_contain_text("bad_landings.csv")
    screenshot(page, "intake-bad-file")


def test_file_over_the_size_cap_is_refused_with_a_message(page, open_page, live_app):
    open_page(page, "/intake")
    cap = live_app.server.config["MAX_UPLOAD_BYTES"]
    # Build the file inside the browser and drop it (sending 20 MB through the driver is slow)
    drop = page.evaluate_handle(
        """(n) => {
            const dt = new DataTransfer();
            dt.items.add(new File([new Uint8Array(n).fill(49)], "huge.csv", {type: "text/csv"}));
            return dt;
        }""",
        cap + 1024,
    )
    page.locator("#intake-upload > div").first.dispatch_event("drop", {"dataTransfer": drop})
    status = page.locator("#intake-upload-status [role=alert]")
    expect(status).to_contain_text("at most 20.0 MB")
    expect(status).to_contain_text("huge.csv")
    # nothing changed: still the demo
    expect(page.locator("#hc-context-dataset")).to_contain_text("vellmouth_landings.csv")


def test_stationarity_panel_gives_a_verdict_and_follows_the_series(page, open_page, screenshot):
    open_page(page, "/intake")
    verdict = page.locator("#intake-verdict-text")
    # README: hake_t is a log-scale ARIMA(1,1,0) with drift, true d = 1
    expect(verdict).to_contain_text("d = 1")
    tests = page.locator("#intake-tests")
    expect(tests.locator("tbody tr", has_text="ADF").first).to_be_visible()
    expect(tests.locator("tbody tr", has_text="KPSS").first).to_be_visible()
    expect(page.locator("#intake-stationarity-graph .main-svg").first).to_be_visible()
    # README: plaice_t is a log-scale AR(1) around a fixed mean, true d = 0
    page.locator("#intake-series").click()
    page.get_by_role("option", name="plaice_t", exact=False).click()
    expect(page.locator("#hc-context-series")).to_have_text("plaice_t")
    expect(verdict).to_contain_text("d = 0")
    screenshot(page, "intake-stationarity")


def test_transform_choice_updates_the_preview_and_goes_on_to_model_bench(page, open_page):
    open_page(page, "/intake")
    expect(page.locator("#intake-transform-note")).to_contain_text("Automatic chose log")
    page.locator("#intake-transform").get_by_role("option", name=re.compile(r"^None")).click()
    expect(page.locator("#hc-context-transform")).to_have_text("None")
    expect(page.locator("#intake-transform-note")).to_contain_text("Using none")
    expect(page.locator("#intake-transform-graph .gtitle")).to_contain_text("no transform")
    # the selection (kept in the browser session) goes with the link
    page.locator("#intake-go-bench").click()
    expect(page.locator("h1.hc-page__title")).to_have_text("Model Bench")
    expect(page).to_have_url(re.compile(r"/bench$"))
    expect(page.locator("#hc-context-transform")).to_have_text("None")
    expect(page.locator("#hc-context-series")).to_have_text("hake_t")


def test_an_empty_upload_says_the_file_is_empty(page, open_page, upload_file):
    open_page(page, "/intake")
    upload_file(page, "empty.csv", b"")
    status = page.locator("#intake-upload-status [role=alert]")
    expect(status).to_contain_text("the file is empty")
    expect(status).not_to_contain_text("could not be decoded")

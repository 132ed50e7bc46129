"""Forecast Board in real Chromium: a published forecast opened by its link shows its record,
and the layout keeps labels, buttons and tables readable.

The data is the invented demo (sample_data/vellmouth_landings.csv, data to 2025, and its 2020
vintage with the demo's published forecasts; sample_data/README.md documents both).
"""

from __future__ import annotations

import re

from playwright.sync_api import expect

#: The first board visit may have to run the comparison (cold cache, busy machine).
COMPARE_MS = 120_000

#: Labels of the top bar's context items that must never be cut (the trial saw "TASET").
CUT_LABELS = """() => {
    const box = document.querySelector('#hc-context').getBoundingClientRect();
    const cut = [];
    for (const item of document.querySelectorAll('.hc-context__item')) {
        const label = item.querySelector('.hc-context__label');
        const r = label.getBoundingClientRect();
        if (r.left < box.left - 0.5 || r.right > box.right + 0.5
            || label.scrollWidth > item.clientWidth + 1) cut.push(label.textContent);
    }
    return cut;
}"""


def _open_board(page, open_page, settle, path: str = "/board") -> None:
    open_page(page, path, settle=False)
    expect(page.locator("#board-summary p").first).to_be_visible(timeout=COMPARE_MS)
    settle(page)


def test_a_published_forecast_opened_by_its_link_shows_how_it_did_on_the_newest_data(
    page, open_page, settle, live_app, screenshot
):
    store = live_app.server.extensions["haulcast"]["store"]
    hake = next(
        a
        for a in store.list_analyses(status="published", series="hake_t")
        if a.settings.get("demo_record")
    )
    _open_board(page, open_page, settle, f"/board?analysis={hake.id}")
    # the board shows the 2020 vintage the forecast was made from ...
    expect(page.locator("#hc-context-dataset")).to_contain_text("vellmouth_landings_2020.csv")
    # ... and scores the forecast against the newest hake data on the server, naming it
    panel = page.locator("#board-record #record-panel")
    expect(panel).to_contain_text("How past forecasts did", timeout=COMPARE_MS)
    expect(panel).to_contain_text(
        "newest data on the server for this series: vellmouth_landings.csv (data to 2025)"
    )
    expect(panel).to_contain_text("Of 5 past forecast years")
    screenshot(page, "board-link-record")


def test_top_bar_labels_are_never_cut_by_a_long_model_label(page, open_page, settle):
    _open_board(page, open_page, settle)
    # long names as on an uploaded monthly file (the widths where the trial saw "TASET")
    page.evaluate(
        """() => {
        document.querySelector('#hc-context-dataset').textContent = 'messy_season_long_name.csv';
        document.querySelector('#hc-context-series').textContent = 'silverjack_t';
        document.querySelector('#hc-context-model').textContent =
            'ARIMA(2,1,2)(0,1,1)[12] with drift';
    }"""
    )
    for width in (1160, 1280, 1340, 1400, 1460, 1600):
        page.set_viewport_size({"width": width, "height": 800})
        assert page.evaluate(CUT_LABELS) == [], width


def test_quiet_buttons_are_quiet_before_hover(page, open_page, settle):
    _open_board(page, open_page, settle)
    quiet = page.locator("#board-download-html")
    filled = page.locator("#board-download-csv")
    bg = "e => getComputedStyle(e).backgroundColor"
    assert quiet.evaluate(bg) == "rgb(255, 255, 255)"
    assert filled.evaluate(bg) != "rgb(255, 255, 255)"
    quiet.hover()
    expect(quiet).not_to_have_css("background-color", "rgb(255, 255, 255)")


def test_presentation_toggle_stands_clear_of_the_first_card(page, open_page, settle, screenshot):
    _open_board(page, open_page, settle, "/board?present=1")
    expect(page.locator("#board-wrapper")).to_have_class(re.compile(r"hc-present"))
    toggle = page.locator("#board-present-toggle").bounding_box()
    card = page.locator(".board-summary-box").bounding_box()
    assert card["y"] - (toggle["y"] + toggle["height"]) >= 8, (toggle, card)
    screenshot(page, "board-present-head")


def test_forecast_table_is_whole_in_its_card(page, open_page, settle):
    _open_board(page, open_page, settle)
    table = page.locator("#board-table")
    # no scroll box of its own: a 12-month table shows every row in the card
    assert table.evaluate("e => getComputedStyle(e).maxHeight") == "none"
    assert table.evaluate("e => e.scrollHeight <= e.clientHeight + 1")

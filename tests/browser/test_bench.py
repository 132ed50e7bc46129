"""Model Bench in real Chromium: a comparison runs and shows the candidates, the benchmarks,
the hindcast and the residual checks; a picked model is carried to the Forecast Board.

The data is the invented demo (sample_data/vellmouth_landings.csv, series hake_t, 48 annual
values; sample_data/README.md documents its generating process).
"""

from __future__ import annotations

import re
import time

from playwright.sync_api import expect

#: A comparison can take a while on a busy 2-core test machine (first call, cold caches).
COMPARE_MS = 120_000


def _wait_for_results(page) -> None:
    expect(page.locator("#bench-candidates tbody tr td.dash-cell").first).to_be_visible(
        timeout=COMPARE_MS
    )
    expect(page.locator("#bench-timing")).to_contain_text("Answered in", timeout=COMPARE_MS)


def test_running_a_comparison_shows_candidates_benchmarks_and_hindcast(
    page, open_page, settle, screenshot
):
    open_page(page, "/bench", settle=False)
    _wait_for_results(page)
    settle(page)
    expect(page.locator("[role=alert].hc-alert--error")).to_have_count(0)

    # change settings and run again: a fresh (smaller) comparison answers
    for control, value in (("#bench-max-p", "2"), ("#bench-max-q", "2"), ("#bench-horizon", "3")):
        page.locator(control).fill(value)
        page.locator(control).press("Tab")
    before = page.locator("#bench-status").inner_text()
    started = time.perf_counter()
    page.locator("#bench-run").click()
    # the smaller grid (p, q <= 2) gives a different count of candidates
    expect(page.locator("#bench-status")).not_to_have_text(before, timeout=COMPARE_MS)
    expect(page.locator("#bench-skill")).to_contain_text("last value")
    settle(page)
    print(f"comparison after pressing run: {time.perf_counter() - started:.2f} s")

    candidates = page.locator("#bench-candidates")
    expect(candidates.locator("th")).to_contain_text(
        ["Model", "AICc", "AICc", "Weight", "BIC", "Status"]
    )
    expect(candidates.locator("tbody")).to_contain_text("ARIMA(")
    # the best by AICc is picked to start with, and the status column says "ok"
    expect(page.locator("#bench-picked")).to_contain_text("best by AICc")
    expect(candidates.locator("tbody")).to_contain_text("ok")
    # benchmarks beside the candidates, scored on the hindcast
    expect(page.locator("#bench-benchmarks")).to_contain_text("last value")
    expect(page.locator("#bench-benchmarks")).to_contain_text("long-run mean")
    # the hindcast skill table and its verdict sentence
    skill = page.locator("#bench-skill")
    for heading in ("MAE", "RMSE", "MASE", "80% coverage", "95% coverage", "Interval score 80%"):
        expect(skill).to_contain_text(heading)
    expect(page.locator("#bench-verdict")).to_contain_text(re.compile(r"last value"))
    # plots: hindcast paths and the three residual checks, with a Ljung-Box verdict
    expect(page.locator("#bench-hindcast-graph .scatterlayer .trace").first).to_be_attached()
    for graph in ("#bench-resid-time", "#bench-resid-acf", "#bench-resid-qq"):
        expect(page.locator(f"{graph} .main-svg").first).to_be_attached()
    expect(page.locator("#bench-ljung")).to_contain_text("Ljung-Box")
    # sortable: clicking the AICc heading's sort arrow reorders without breaking the table
    candidates.locator("th[data-dash-column=aicc] .column-header--sort").click()
    expect(candidates.locator("tbody")).to_contain_text("ARIMA(")
    screenshot(page, "bench")

    # a setting out of range: a plain message on the page, the results stay
    page.locator("#bench-max-p").fill("7")
    page.locator("#bench-max-p").press("Tab")
    page.locator("#bench-run").click()
    expect(page.locator("#bench-alert [role=alert]")).to_contain_text(
        "Largest AR order p must be an integer from 0 to 5."
    )
    expect(candidates.locator("tbody")).to_contain_text("ARIMA(")


def test_picking_a_model_carries_it_to_the_board(page, open_page, settle):
    open_page(page, "/bench", settle=False)
    _wait_for_results(page)
    settle(page)
    rows = page.locator("#bench-candidates tbody tr:has(td.dash-cell)")
    # the second row: accepted candidates come first by AICc, the best on top
    second = rows.nth(1)
    expect(second.locator("td[data-dash-column=status]")).to_have_text("ok")
    label = second.locator("td[data-dash-column=model]").inner_text().strip()
    second.locator("input[type=radio]").check()
    expect(page.locator("#bench-picked")).to_contain_text(f"Forecast Board will use {label}.")
    expect(page.locator("#hc-context-model")).to_have_text(label)
    settle(page)

    page.locator("#bench-to-board").click()
    expect(page.locator("h1.hc-page__title")).to_have_text("Forecast Board")
    expect(page.locator("#board-model-label")).to_have_text(label, timeout=COMPARE_MS)
    expect(page.locator("#board-model")).to_contain_text("picked on the Model Bench")
    expect(page.locator("#board-summary")).to_contain_text(label)


def test_skill_table_fits_its_card_and_the_top_bar_keeps_clear_of_the_nav(page, open_page, settle):
    # 1360 px wide (the suite's viewport, a common laptop width): the ten skill columns are not
    # cut off at the card's edge, and the context items sit beside or below the nav links.
    open_page(page, "/bench", settle=False)
    _wait_for_results(page)
    settle(page)
    expect(page.locator("#bench-skill")).to_contain_text("last value", timeout=COMPARE_MS)
    # the table stays inside its card: it fits, or scrolls sideways within the card
    box = page.evaluate(
        """() => { const e = document.querySelector('#bench-skill .dash-spreadsheet-container');
             const card = e.closest('.hc-section').getBoundingClientRect();
             return {right: e.getBoundingClientRect().right, card: card.right,
                     overflow: getComputedStyle(e).overflowX,
                     extra: e.scrollWidth - e.clientWidth}; }"""
    )
    assert box["right"] <= box["card"], box
    assert box["extra"] <= 1 or box["overflow"] == "auto", box
    overlaps = page.evaluate(
        """() => {
          const n = document.querySelector('.hc-nav').getBoundingClientRect();
          return [...document.querySelectorAll('.hc-context__item')]
            .map(e => e.getBoundingClientRect())
            .filter(r => r.top < n.bottom && r.bottom > n.top && r.left < n.right).length;
        }"""
    )
    assert overlaps == 0

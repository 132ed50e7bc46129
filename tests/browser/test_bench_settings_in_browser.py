"""Model Bench settings in real Chromium: a typed horizon is the one "Run" uses, settings that
depend on the frequency go back to their defaults on a series of another frequency, and the
number of differences d can be fixed.

Data: the invented demo (sample_data/README.md): vellmouth_landings.csv (hake_t, 48 annual
values) and vellmouth_squid_monthly.csv (squid, monthly).
"""

from __future__ import annotations

import json
import re

from playwright.sync_api import expect

#: A comparison can take a while on a busy 2-core test machine (first call, cold caches).
COMPARE_MS = 120_000


def _selection(page) -> dict:
    return json.loads(page.evaluate("() => sessionStorage.getItem('hc-selection')") or "null") or {}


def _wait_for_results(page, settle) -> None:
    expect(page.locator("#bench-candidates tbody tr td.dash-cell").first).to_be_visible(
        timeout=COMPARE_MS
    )
    expect(page.locator("#bench-timing")).to_contain_text("Answered in", timeout=COMPARE_MS)
    settle(page)


def _run(page, settle) -> None:
    before = page.locator("#bench-status").inner_text()
    page.locator("#bench-run").click()
    expect(page.locator("#bench-status")).not_to_have_text(before, timeout=COMPARE_MS)
    settle(page)


def test_a_typed_horizon_is_the_one_run_uses_after_the_page_restored_another(
    page, open_page, settle, app_url
):
    # a session whose Bench settings say 9 years ahead (as after a Run and a visit elsewhere);
    # the small grid keeps the comparison quick and out of the results other tests cached
    page.goto(app_url + "/")
    bench = {"max_p": 1, "max_q": 2, "horizon": 9, "frequency": "annual"}
    page.evaluate(
        "(v) => sessionStorage.setItem('hc-selection', v)",
        json.dumps({"series": "hake_t", "bench": bench}),
    )
    open_page(page, "/bench", settle=False)
    _wait_for_results(page, settle)
    horizon = page.locator("#bench-horizon")
    expect(horizon).to_have_value("9")
    expect(page.locator("#bench-skill")).to_contain_text("last value")
    # type the page's own first value (5) and run: before, this was dropped and 9 was used
    horizon.fill("5")
    page.locator("#bench-run").click()
    page.wait_for_function(
        "() => JSON.parse(sessionStorage.getItem('hc-selection')).bench.horizon === 5",
        timeout=COMPARE_MS,
    )
    expect(page.locator("#bench-timing")).to_contain_text("Answered in", timeout=COMPARE_MS)
    settle(page)
    assert _selection(page)["bench"]["horizon"] == 5
    # and back to 9 with the stepper and Enter: each value typed is the one used
    horizon.fill("8")
    horizon.press("Enter")
    page.locator(".dash-input-container:has(#bench-horizon) .dash-stepper-increment").click()
    expect(horizon).to_have_value("9")
    page.locator("#bench-run").click()
    page.wait_for_function(
        "() => JSON.parse(sessionStorage.getItem('hc-selection')).bench.horizon === 9",
        timeout=COMPARE_MS,
    )
    settle(page)


def test_fixed_d_and_a_monthly_series_after_an_annual_run(page, open_page, settle, screenshot):
    open_page(page, "/bench", settle=False)
    _wait_for_results(page, settle)
    # annual data: the seasonal box is greyed out
    expect(page.locator("#bench-seasonal input")).to_be_disabled()
    # fix d = 0, 6 years ahead, a small grid; run
    for control, value in (("#bench-max-p", "1"), ("#bench-max-q", "1"), ("#bench-horizon", "6")):
        page.locator(control).fill(value)
    page.locator("#bench-d").click()
    page.get_by_role("option", name="0", exact=True).click()
    _run(page, settle)
    expect(page.locator("#bench-status")).to_contain_text("d = 0 (set here)")
    models = page.locator("#bench-candidates td[data-dash-column=model]").all_inner_texts()
    assert models and all(re.match(r"ARIMA\(\d,0,\d\)", m) for m in models), models
    assert _selection(page)["bench"]["d"] == 0

    # a monthly series chosen on Intake
    page.locator("a[href='/intake']").first.click()
    expect(page.locator("h1.hc-page__title")).to_have_text("Intake")
    settle(page)
    page.locator("#intake-dataset").click()
    page.get_by_role("option", name=re.compile("vellmouth_squid_monthly")).click()
    expect(page.locator("#hc-context-dataset")).to_contain_text("vellmouth_squid_monthly")
    settle(page)
    page.locator("a[href='/bench']").first.click()
    expect(page.locator("h1.hc-page__title")).to_have_text("Model Bench")
    # seasonal terms searched again, the horizon back to its default, and a note saying so
    expect(page.locator("#bench-seasonal input")).to_be_checked()
    expect(page.locator("#bench-horizon")).to_have_value("5")
    expect(page.locator("#bench-settings-note")).to_contain_text(
        "Horizon reset to 5 months (the default): the 6 years set for annual data"
    )
    # d set by hand belongs to hake_t: back to Automatic on another series, with a note
    expect(page.locator("#bench-settings-note")).to_contain_text(
        "d was set by hand for hake_t; back to Automatic for squid."
    )
    expect(page.locator("#bench-d")).to_contain_text("Automatic")
    _wait_for_results(page, settle)
    expect(page.locator("#bench-status")).to_contain_text("monthly values")
    expect(page.locator("#bench-status")).to_contain_text(
        re.compile(r"d = \d, D = \d \(from the stationarity tests\)")
    )
    screenshot(page, "bench-monthly-after-annual")


def test_an_annual_upload_after_a_saved_monthly_analysis_opened_by_link_resets_the_horizon(
    page, open_page, settle, upload_file, screenshot, live_app, nile
):
    # a saved monthly analysis, 12 months ahead, straight through the store
    store = live_app.server.extensions["haulcast"]["store"]
    squid = next(i for i in store.samples() if store.meta(i).filename == "vellmouth_squid_monthly.csv")
    demo = next(a for a in store.list_analyses(status="published") if a.version == 1)
    bench = {"search": "auto", "max_p": 1, "max_q": 1, "seasonal": True, "horizon": 12}
    analysis = store.save_analysis(
        dataset_id=squid,
        series="squid",
        settings={"transform": "auto", "bench": bench, "model": None, "reference": None, "horizon": 12},
        model=demo.model,
        forecast=demo.forecast,
        author="Ana Analyst",
        title="Squid 12 months",
    )
    open_page(page, f"/board?analysis={analysis.id}", settle=False)
    expect(page.locator("#hc-context-series")).to_contain_text("squid", timeout=COMPARE_MS)
    settle(page)
    # then an annual file (the Nile's flow at Aswan, open data shipped by statsmodels)
    page.locator("a[href='/intake']").first.click()
    expect(page.locator("h1.hc-page__title")).to_have_text("Intake")
    settle(page)
    lines = ["year,nile"] + [f"{p.year},{v:g}" for p, v in nile.items()]
    upload_file(page, "nile_annual.csv", ("\n".join(lines) + "\n").encode())
    page.locator("a[href='/bench']").first.click()
    expect(page.locator("h1.hc-page__title")).to_have_text("Model Bench")
    expect(page.locator("#bench-horizon")).to_have_value("5")
    expect(page.locator("#bench-settings-note")).to_contain_text(
        "Horizon reset to 5 years (the default): the 12 months set for monthly data"
    )
    _wait_for_results(page, settle)
    screenshot(page, "bench-annual-after-saved-monthly")
    # the Board forecasts 5 years (1971-1975), not 12
    page.locator("a[href='/board']").first.click()
    expect(page.locator("#board-table")).to_contain_text("1975", timeout=COMPARE_MS)
    settle(page)
    expect(page.locator("#board-table")).not_to_contain_text("1976")
    screenshot(page, "board-annual-after-saved-monthly")

"""A new visitor's Model Bench comes with the shell; a returning session still gets its own.

The server builds the Bench a new visitor would get into the shell when the demo's default
answer is cached (app._shell_page); the browser draws it without the page router's round
trip. A session that already has a selection must never be shown that page, not even for a
moment. The data is the invented demo (sample_data/vellmouth_landings.csv; sample_data/README.md
documents it).
"""

from __future__ import annotations

import json

from playwright.sync_api import expect

from app.state import resolve_selection
from app.warm import prepare_demo

#: Records every text the status line shows, from the first moment it is in the document.
_STATUS_SEEN = """
window.__hcStatus = [];
new MutationObserver(() => {
  const el = document.querySelector('#bench-status');
  const text = el && el.innerText;
  if (text && window.__hcStatus[window.__hcStatus.length - 1] !== text) window.__hcStatus.push(text);
}).observe(document, {subtree: true, childList: true, characterData: true});
"""


def _demo_selection(live_app) -> dict:
    store = live_app.server.extensions["haulcast"]["store"]
    return {k: v for k, v in resolve_selection(None, store).items() if k != "is_demo"}


def test_a_new_visitor_gets_the_table_without_a_callback_for_it(live_app, app_url, new_page, settle):
    prepare_demo(live_app.server, limit=1)
    page = new_page()
    answers: list[dict] = []

    def on_response(response) -> None:
        if "_dash-update-component" in response.url and response.status == 200:
            answers.append(response.json().get("response", {}))

    page.on("response", on_response)
    page.goto(app_url + "/bench")
    expect(page.locator("#bench-candidates tbody tr td.dash-cell").first).to_be_visible()
    settle(page)
    demo = _demo_selection(live_app)
    expect(page.locator("#bench-status")).to_contain_text(demo["series"])
    # no callback sent the page, the table or the status line: they came with the shell
    sent = {(c, prop) for answer in answers for c, props in answer.items() for prop in props}
    assert not sent & {("_pages_content", "children"), ("bench-candidates", "data"), ("bench-status", "children")}, sent
    # the charts still come, and the page still routes: the board and back
    expect(page.locator("#bench-resid-qq .main-svg").first).to_be_attached()
    page.get_by_role("link", name="Forecast Board").first.click()
    expect(page.locator("h1.hc-page__title")).to_have_text("Forecast Board")
    page.get_by_role("link", name="Model Bench").first.click()
    expect(page.locator("h1.hc-page__title")).to_have_text("Model Bench")
    expect(page.locator("#bench-candidates tbody tr td.dash-cell").first).to_be_visible()


def test_a_returning_session_never_sees_the_new_visitors_page(live_app, app_url, new_page, settle):
    prepare_demo(live_app.server, limit=1)
    demo = _demo_selection(live_app)
    store = live_app.server.extensions["haulcast"]["store"]
    others = [s for s in store.load_table(demo["dataset_id"]).info if s != demo["series"]]
    chosen = {**demo, "series": others[0], "bench": {"max_p": 1, "max_q": 1}}
    page = new_page()
    page.add_init_script(
        "if (!sessionStorage.getItem('hc-selection'))"
        f" sessionStorage.setItem('hc-selection', {json.dumps(json.dumps(chosen))});"
    )
    page.add_init_script(_STATUS_SEEN)
    page.goto(app_url + "/bench")
    expect(page.locator("#bench-status")).to_contain_text(others[0], timeout=120_000)
    settle(page)
    seen = page.evaluate("window.__hcStatus")
    assert seen and all(demo["series"] + ":" not in text for text in seen), seen
    expect(page.locator("#bench-max-p")).to_have_value("1")

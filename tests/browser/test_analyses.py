"""Saved analyses in real Chromium: two browsers on one server save, publish, find, reopen, sign
off and revise an analysis, and the reopened board shows the saved numbers.

Data: the Nile river flow series that statsmodels ships (statsmodels.datasets.nile, annual
volumes 1871-1970, 10^8 m^3), uploaded as a CSV the way an analyst would.
"""

from __future__ import annotations

import io
import uuid
from pathlib import Path

import pandas as pd
import statsmodels.api as sm
from playwright.sync_api import expect

import forecasting_core as fc
from app import saved
from app.analysis import LEVELS, compare_kwargs

SCREENS = Path(__file__).resolve().parents[2] / "test-artifacts" / "screens"
#: The first board visit may have to run the comparison (cold cache, busy machine).
COMPARE_MS = 120_000


def nile_csv() -> bytes:
    data = sm.datasets.nile.load_pandas().data
    frame = pd.DataFrame({"year": data["year"].astype(int), "nile_flow": data["volume"]})
    return frame.to_csv(index=False).encode()


def _wait_board(page, settle) -> None:
    expect(page.locator("#board-summary p").first).to_be_visible(timeout=COMPARE_MS)
    settle(page)
    expect(page.locator("#board-saved-status p").first).to_be_visible(timeout=COMPARE_MS)
    settle(page)


def _table(page) -> list[str]:
    return [t.strip() for t in page.locator("#board-table-rows tbody tr").all_inner_texts()]


def _recomputed(store, analysis) -> fc.Forecast:
    """The forecast made again from the stored dataset and settings, outside the app."""
    settings = analysis.settings
    y = store.load_table(analysis.dataset_id).series[analysis.series]
    comparison = fc.compare_models(y, **compare_kwargs(settings["bench"], settings["transform"]))
    candidate = comparison.candidate(analysis.model)
    return fc.make_forecast(
        candidate, horizon=settings["horizon"], levels=LEVELS, reference=settings["reference"]
    )


def test_two_browsers_save_publish_reopen_sign_off_and_revise(
    new_page, open_page, settle, upload_file, live_app, screenshot
):
    token = uuid.uuid4().hex[:8]
    title = f"Nile outlook {token}"
    store = live_app.server.extensions["haulcast"]["store"]

    # A uploads the file, opens the board and saves the forecast as a draft
    ana = new_page()
    open_page(ana, "/intake")
    upload_file(ana, f"nile_{token}.csv", nile_csv())
    expect(ana.locator("#hc-context-dataset")).to_have_text(f"nile_{token}.csv")
    ana.locator("#hc-nav-board").click()
    _wait_board(ana, settle)
    expect(ana.locator("#board-saved-none")).to_be_visible()
    expect(ana.locator("#board-publish-box")).to_be_hidden()
    ana.fill("#board-save-title", title)
    ana.fill("#board-save-name", "Ana Analyst")
    expect(ana.locator("#board-save-season-hint")).to_contain_text("(1971)")  # the Nile ends 1970
    ana.click("#board-save")
    expect(ana.locator("#board-saved-state")).to_have_text("draft")
    expect(ana.locator("#board-saved-version")).to_have_text("version 1")
    expect(ana).to_have_url(f"{live_app.test_base_url}/board?analysis=" + _id_of(store, title, 1))
    saved_rows = _table(ana)
    ana.click("#board-publish")
    expect(ana.locator("#board-saved-state")).to_have_text("published")
    expect(ana.locator("#board-signoffs-none")).to_be_visible()
    v1 = _id_of(store, title, 1)

    # the stored forecast is the one recomputed from the dataset and the settings
    first = store.get_analysis(v1)
    assert first.season == "1971" and first.author == "Ana Analyst"
    recomputed = _recomputed(store, first).to_dict()
    assert saved.forecast_differences(first.forecast, recomputed, rel=0.0) == []

    # B, another browser, finds it on the home page by a word of its title
    ben = new_page()
    open_page(ben, "/", title="Saved analyses")
    expect(ben.locator(".hc-nav__link--current .hc-nav__home")).to_have_text("Home")
    ben.fill("#home-search", token)
    rows = ben.locator(".home-table tbody tr")
    expect(rows).to_have_count(1)
    expect(rows.first).to_contain_text("published")
    expect(rows.first).to_contain_text("Ana Analyst")
    expect(ben.locator("#home-count")).to_have_text(f"1 analysis matching \u201c{token}\u201d")
    screenshot(ben, "home-search")
    rows.first.locator("a.home-open").click()
    _wait_board(ben, settle)
    expect(ben).to_have_url(f"{live_app.test_base_url}/board?analysis={v1}")
    # the same numbers, its dataset now visible to B, the app's own check agreeing
    assert _table(ben) == saved_rows
    expect(ben.locator("#hc-context-dataset")).to_have_text(f"nile_{token}.csv")
    expect(ben.locator("#board-saved-check")).to_contain_text("the same numbers as saved")
    expect(ben.locator("#board-saved-check")).not_to_contain_text("floating-point")  # exactly
    expect(ben.locator("#board-save")).to_have_text("Save analysis")

    # B signs off
    ben.fill("#board-signoff-name", "Ben Manager")
    ben.fill("#board-signoff-role", "Stock manager")
    ben.fill("#board-signoff-note", "Fine for Thursday's meeting")
    ben.click("#board-signoff")
    signoffs = ben.locator("#board-signoffs li")
    expect(signoffs).to_have_count(1)
    expect(signoffs.first).to_contain_text(
        "Ben Manager (Stock manager): Fine for Thursday's meeting"
    )
    screenshot(ben, "board-signed-off")
    ben.locator("#board-saved").screenshot(path=str(SCREENS / "board-saved-panel.png"))

    # the CSV of the signed analysis carries the sign-off and every caution
    with ben.expect_download() as info:
        ben.click("#board-download-csv")
    text = open(info.value.path(), encoding="utf-8").read()
    assert f"# analysis: {title}" in text
    assert (
        "# sign-off: " in text
        and "Ben Manager (Stock manager): Fine for Thursday's meeting" in text
    )
    for caution in fc.CAUTIONS:
        assert caution.replace('"', "'") in text
    assert len(pd.read_csv(io.StringIO(text), comment="#")) == len(saved_rows)
    with ben.expect_download() as info:
        ben.click("#board-download-html")
    report = open(info.value.path(), encoding="utf-8").read()
    assert (
        "<h2>Sign-offs</h2>" in report and "<strong>Ben Manager</strong> (Stock manager)" in report
    )
    for caution in fc.CAUTIONS:
        assert caution in report

    # A sees the sign-off on reopening the link
    ana.reload()
    _wait_board(ana, settle)
    expect(ana.locator("#board-signoffs li")).to_contain_text(["Ben Manager"])

    # A changes the reference level: the published version stays; saving makes version 2
    ana.fill("#board-reference", "700")
    ana.press("#board-reference", "Enter")
    expect(ana.locator("#board-saved-changed")).to_be_visible()
    expect(ana.locator("#board-signoff-box")).to_be_hidden()
    expect(ana.locator("#board-save")).to_have_text("Save as version 2")
    settle(ana)
    ana.click("#board-save")
    expect(ana.locator("#board-saved-version")).to_have_text("version 2")
    expect(ana.locator("#board-saved-state")).to_have_text("draft")
    v2 = store.get_analysis(_id_of(store, title, 2))
    assert v2.parent_id == v1 and v2.settings["reference"] == 700.0
    assert store.get_analysis(v1).settings["reference"] is None  # never edited in place
    assert len(store.get_analysis(v1).signoffs) == 1

    # B, still on version 1, is told that a newer version exists
    ben.reload()
    _wait_board(ben, settle)
    expect(ben.locator("#board-saved-newer")).to_contain_text("version 2 (draft, by Ana Analyst")
    expect(ben.locator("#board-saved-version")).to_have_text("version 1")
    ben.locator("#board-saved").screenshot(path=str(SCREENS / "board-saved-newer.png"))


def _id_of(store, title: str, version: int) -> str:
    found = [a for a in store.list_analyses(query=title) if a.version == version]
    assert len(found) == 1, [(a.title, a.version) for a in found]
    return found[0].id


def test_saving_needs_a_name_and_the_name_is_remembered_in_this_browser(
    new_page, open_page, settle
):
    page = new_page()
    open_page(page, "/board", settle=False)
    _wait_board(page, settle)
    page.click("#board-save")
    expect(page.locator("#board-saved-msg [role=alert]")).to_contain_text(
        "Your name is needed. Type it in the Your name box"
    )
    page.fill("#board-save-name", "Cleo Coder")
    page.fill("#board-save-title", f"Demo draft {uuid.uuid4().hex[:8]}")
    page.click("#board-save")
    expect(page.locator("#board-saved-state")).to_have_text("draft")
    # saving again with nothing changed makes no empty version
    page.click("#board-save")
    expect(page.locator("#board-saved-msg [role=alert]")).to_contain_text(
        "nothing changed since version 1"
    )
    # another tab of the same browser (same localStorage) fills the name in
    other = page.context.new_page()
    open_page(other, "/board", settle=False)
    _wait_board(other, settle)
    expect(other.locator("#board-save-name")).to_have_value("Cleo Coder")
    # the sign-off name is not filled in: nobody is invited to sign off their own work
    expect(other.locator("#board-signoff-name")).to_have_value("")


def test_a_broken_analysis_link_says_so_and_shows_the_board_with_its_record(
    page, open_page, settle, screenshot
):
    open_page(page, "/board?analysis=" + "0" * 32, settle=False)
    _wait_board(page, settle)
    expect(page.locator("[role=alert]", has_text="cannot be opened")).to_contain_text(
        "was not found"
    )
    expect(page.locator("#board-saved-none")).to_be_visible()
    # below the forecast: how the demo's earlier published forecasts of this stock did
    expect(page.locator("#board-record #record-panel")).to_contain_text("How past forecasts did")
    screenshot(page, "board-demo-record")


def test_home_page_groups_by_stock_and_says_when_nothing_matches(page, open_page, screenshot):
    open_page(page, "/", title="Saved analyses")
    # the demo's published forecasts are listed, one heading per stock
    headings = page.locator(".home-group__title")
    expect(headings.first).to_be_visible()
    names = [t.strip() for t in headings.all_inner_texts()]
    assert names == sorted(names, key=str.lower)
    screenshot(page, "home")
    page.fill("#home-search", "no-such-stock-" + uuid.uuid4().hex[:6])
    expect(page.locator("#home-empty")).to_contain_text("No saved analysis matches")
    expect(page.locator("#home-count")).to_contain_text("0 analyses")


def _saved_demo(store, title: str, *, publish: bool) -> str:
    """A demo analysis saved (and published) straight through the store; its id."""
    demo = next(a for a in store.list_analyses(status="published") if a.version == 1)
    new = store.save_analysis(
        dataset_id=demo.dataset_id,
        series=demo.series,
        settings=demo.settings,
        model=demo.model,
        forecast=demo.forecast,
        author="Ana Analyst",
        title=title,
        season=demo.season,
    )
    if publish:
        store.publish(new.id, author="Ana Analyst")
    return new.id


def test_double_clicking_sign_off_records_one_sign_off_and_the_name_box_starts_empty(
    new_page, open_page, settle, live_app
):
    store = live_app.server.extensions["haulcast"]["store"]
    analysis_id = _saved_demo(store, f"Double click {uuid.uuid4().hex[:8]}", publish=True)
    page = new_page()
    # this browser remembers an author name from saving
    open_page(page, "/board", settle=False)
    page.evaluate("localStorage.setItem('board-author', JSON.stringify({name: 'Ana Analyst'}))")
    open_page(page, f"/board?analysis={analysis_id}", settle=False)
    _wait_board(page, settle)
    expect(page.locator("#board-signoff-box")).to_be_visible()
    # the author's name is kept for Save, but nobody is invited to sign off their own work
    expect(page.locator("#board-save-name")).to_have_value("Ana Analyst")
    expect(page.locator("#board-signoff-name")).to_have_value("")
    page.fill("#board-signoff-name", "Ben Manager")
    page.fill("#board-signoff-role", "Stock manager")
    page.fill("#board-signoff-note", "Fine")
    page.dblclick("#board-signoff")
    expect(page.locator("#board-signoffs li")).to_have_count(1)
    settle(page)
    page.wait_for_timeout(1500)
    expect(page.locator("#board-signoffs li")).to_have_count(1)
    assert len(store.get_analysis(analysis_id).signoffs) == 1
    # the form is cleared after the sign-off
    expect(page.locator("#board-signoff-name")).to_have_value("")
    expect(page.locator("#board-signoff-note")).to_have_value("")
    # a late second click on the cleared form is ignored: no sign-off, no error
    page.click("#board-signoff")
    page.wait_for_timeout(1500)
    settle(page)
    expect(page.locator("#board-saved-msg")).to_contain_text("Signed off by Ben Manager")
    assert len(store.get_analysis(analysis_id).signoffs) == 1


def test_saving_a_new_version_puts_its_id_in_the_address_bar(new_page, open_page, settle, live_app):
    store = live_app.server.extensions["haulcast"]["store"]
    title = f"Address bar {uuid.uuid4().hex[:8]}"
    v1 = _saved_demo(store, title, publish=True)
    page = new_page()
    open_page(page, f"/board?analysis={v1}", settle=False)
    _wait_board(page, settle)
    page.fill("#board-reference", "1")
    page.press("#board-reference", "Enter")
    expect(page.locator("#board-save")).to_have_text("Save as version 2")
    settle(page)
    page.fill("#board-save-name", "Ana Analyst")
    page.click("#board-save")
    expect(page.locator("#board-saved-version")).to_have_text("version 2")
    v2 = _id_of(store, title, 2)
    expect(page).to_have_url(f"{live_app.test_base_url}/board?analysis={v2}")


def test_an_author_deletes_their_own_draft_after_a_confirm_step(
    new_page, open_page, settle, live_app
):
    store = live_app.server.extensions["haulcast"]["store"]
    token = uuid.uuid4().hex[:8]
    draft_id = _saved_demo(store, f"Draft to delete {token}", publish=False)
    published_id = _saved_demo(store, f"Kept for good {token}", publish=True)
    page = new_page()
    open_page(page, "/board", settle=False)
    page.evaluate("localStorage.setItem('board-author', JSON.stringify({name: 'Ben Other'}))")

    # a published analysis offers no delete at all
    open_page(page, f"/board?analysis={published_id}", settle=False)
    _wait_board(page, settle)
    expect(page.locator("#board-saved-state")).to_have_text("published")
    expect(page.locator("#board-delete-box")).to_be_hidden()

    open_page(page, f"/board?analysis={draft_id}", settle=False)
    _wait_board(page, settle)
    expect(page.locator("#board-saved-state")).to_have_text("draft")
    # the first click only asks, naming the draft; "No" leaves it alone
    page.click("#board-delete")
    question = page.locator("#board-delete-question")
    expect(question).to_contain_text(f"Delete version 1 of \u201cDraft to delete {token}\u201d")
    expect(question).to_contain_text("saved by Ana Analyst")
    page.click("#board-delete-no")
    expect(page.locator("#board-delete-confirm")).to_be_hidden()
    assert store.get_analysis(draft_id).status == "draft"

    # someone else's name in Your name: refused with a plain message, nothing deleted
    page.click("#board-delete")
    page.click("#board-delete-yes")
    expect(page.locator("#board-saved-msg [role=alert]")).to_contain_text(
        "only the draft's author (Ana Analyst) can delete it; you typed"
    )
    assert store.get_analysis(draft_id).status == "draft"

    # the author (any case) deletes it: the forecast stays on the board, unsaved
    page.fill("#board-save-name", "ana analyst")
    page.click("#board-delete")
    expect(page.locator("#board-delete-confirm")).to_be_visible()
    page.click("#board-delete-yes")
    expect(page.locator("#board-saved-msg")).to_contain_text(
        f"Deleted the draft \u201cDraft to delete {token}\u201d (version 1)"
    )
    expect(page.locator("#board-saved-none")).to_be_visible()
    expect(page.locator("#board-delete-box")).to_be_hidden()
    expect(page.locator("#board-summary p").first).to_be_visible()
    expect(page).to_have_url(f"{live_app.test_base_url}/board")  # the dead link is gone
    assert draft_id not in {a.id for a in store.list_analyses(status="draft")}
    assert store.get_analysis(published_id).status == "published"

    # and the home page no longer lists it
    open_page(page, "/", title="Saved analyses")
    page.fill("#home-search", f"Draft to delete {token}")
    expect(page.locator("#home-empty")).to_contain_text("No saved analysis matches")


def test_a_draft_is_deleted_from_the_home_page_after_a_confirm_step(
    new_page, open_page, live_app, screenshot
):
    store = live_app.server.extensions["haulcast"]["store"]
    token = uuid.uuid4().hex[:8]
    draft_id = _saved_demo(store, f"Home draft {token}", publish=False)
    _saved_demo(store, f"Home published {token}", publish=True)
    page = new_page()
    open_page(page, "/", title="Saved analyses")
    page.evaluate("localStorage.setItem('board-author', JSON.stringify({name: 'Ana Analyst'}))")
    page.fill("#home-search", token)
    rows = page.locator(".home-table tbody tr")
    expect(rows).to_have_count(2)
    # only the draft's row offers Delete…
    expect(rows.filter(has_text="Home published").locator("button.home-delete")).to_have_count(0)
    draft_row = rows.filter(has_text="Home draft")
    draft_row.locator("button.home-delete").click()
    confirm = page.locator("#home-delete-confirm")
    expect(confirm).to_be_visible()
    expect(page.locator("#home-delete-question")).to_contain_text(
        f"Delete version 1 of \u201cHome draft {token}\u201d (a draft saved by Ana Analyst"
    )
    # the name this browser saved under on the board is filled in
    expect(page.locator("#home-delete-name")).to_have_value("Ana Analyst")
    screenshot(page, "home-delete-confirm")
    page.click("#home-delete-no")
    expect(confirm).to_be_hidden()
    assert store.get_analysis(draft_id).status == "draft"

    # another name is refused plainly; then the author deletes it and the list is redrawn
    draft_row.locator("button.home-delete").click()
    page.fill("#home-delete-name", "Ben Other")
    page.click("#home-delete-yes")
    expect(page.locator("#home-delete-msg [role=alert]")).to_contain_text(
        "only the draft's author (Ana Analyst) can delete it; you typed Ben Other."
    )
    page.fill("#home-delete-name", "Ana Analyst")
    page.click("#home-delete-yes")
    expect(page.locator("#home-delete-msg")).to_contain_text(
        f"Deleted the draft \u201cHome draft {token}\u201d (version 1)"
    )
    expect(confirm).to_be_hidden()
    expect(rows).to_have_count(1)
    expect(rows.first).to_contain_text("Home published")
    assert draft_id not in {a.id for a in store.list_analyses(status="draft")}


def test_a_draft_a_later_version_revises_offers_no_delete(new_page, open_page, settle, live_app):
    # the store keeps a draft while a later version revises it: the board offers no Delete
    # that would only refuse after the confirm step; the later version still has one
    store = live_app.server.extensions["haulcast"]["store"]
    v1 = _saved_demo(store, f"Revised draft {uuid.uuid4().hex[:8]}", publish=False)
    v2 = store.revise(v1, author="Ana Analyst", title="second try").id
    page = new_page()
    open_page(page, f"/board?analysis={v1}", settle=False)
    _wait_board(page, settle)
    expect(page.locator("#board-saved-state")).to_have_text("draft")
    expect(page.locator("#board-delete-box")).to_be_hidden()
    open_page(page, f"/board?analysis={v2}", settle=False)
    _wait_board(page, settle)
    expect(page.locator("#board-saved-version")).to_have_text("version 2")
    expect(page.locator("#board-delete-box")).to_be_visible()

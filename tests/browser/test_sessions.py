"""Two people on one server: each browser session sees the demo data and its own uploads only.

Each session uploads a file with a canary series name nobody else uses; the other sessions
must never see it, not in the dataset picker, not in the series list, not in the top bar,
and not by writing the other file's id into their own session store; only a share link that
the uploader hands on opens it elsewhere.
"""

from __future__ import annotations

import hashlib
import json

from playwright.sync_api import expect


def canary_csv(series: str, level: int) -> bytes:
    """A clean 30-year annual file with one series called ``series``."""
    rows = [f"year,{series}"] + [f"{1990 + i},{level + 7 * i + (i % 3)}" for i in range(30)]
    return ("\n".join(rows) + "\n").encode()


def dataset_choices(page) -> list[str]:
    """The labels of the Intake dataset picker's options."""
    page.locator("#intake-dataset").click()
    options = page.get_by_role("option")
    expect(options.first).to_be_visible()
    texts = [t.strip() for t in options.all_inner_texts()]
    page.keyboard.press("Escape")
    return texts


def test_two_sessions_at_once_see_only_their_own_uploads(new_page, open_page, settle, upload_file):
    alice, bob, carol = new_page(), new_page(), new_page()
    # the three load at the same time; then wait for each
    for visitor in (alice, bob, carol):
        open_page(visitor, "/intake", settle=False)
    for visitor in (alice, bob, carol):
        settle(visitor)
    alice_file = canary_csv("canary_alice_t", 400)
    upload_file(alice, "alice_landings.csv", alice_file)
    bob_file = canary_csv("canary_bob_t", 900)
    upload_file(bob, "bob_landings.csv", bob_file)

    expect(alice.locator("#intake-series-list")).to_contain_text("canary_alice_t")
    expect(bob.locator("#intake-series-list")).to_contain_text("canary_bob_t")
    expect(alice.locator("#hc-context-dataset")).to_have_text("alice_landings.csv")
    expect(bob.locator("#hc-context-dataset")).to_have_text("bob_landings.csv")

    alice_choices = dataset_choices(alice)
    bob_choices = dataset_choices(bob)
    assert any("alice_landings.csv" in t for t in alice_choices)
    assert not any("bob_landings.csv" in t for t in alice_choices)
    assert any("bob_landings.csv" in t for t in bob_choices)
    assert not any("alice_landings.csv" in t for t in bob_choices)
    # both see the demo data
    assert any("vellmouth_landings.csv" in t for t in alice_choices)
    assert any("vellmouth_landings.csv" in t for t in bob_choices)

    # a third visitor, there all along, sees the demo only
    carol_choices = dataset_choices(carol)
    assert not any("alice" in t or "bob" in t for t in carol_choices)
    expect(carol.locator("#hc-context-dataset")).to_contain_text("vellmouth_landings.csv")

    # a reload keeps the session's own upload
    alice.reload()
    expect(alice.locator("#hc-context-dataset")).to_have_text("alice_landings.csv")

    # writing Alice's dataset id into Bob's session does not open it: the server falls back to the demo
    # ids are the sha256 of the file (hashlib as reference)
    alice_id = hashlib.sha256(alice_file).hexdigest()
    bob_id = hashlib.sha256(bob_file).hexdigest()
    forged = {"dataset_id": alice_id, "series": "canary_alice_t", "uploads": [bob_id]}
    bob.evaluate("(v) => sessionStorage.setItem('hc-selection', v)", json.dumps(forged))
    bob.reload()
    expect(bob.locator("h1.hc-page__title")).to_have_text("Intake")
    expect(bob.locator("#hc-context-dataset")).to_contain_text("vellmouth_landings.csv")
    expect(bob.locator("#intake-series-list")).not_to_contain_text("canary_alice_t")

    # ... but Alice can share it: her share link opens it in Bob's session
    link = alice.locator("#intake-share-link")
    expect(link).to_contain_text(alice_id)
    bob.goto(link.get_attribute("href"))
    expect(bob.locator("#intake-upload-status")).to_contain_text(
        "Opened the shared dataset alice_landings.csv"
    )
    expect(bob.locator("#hc-context-dataset")).to_have_text("alice_landings.csv")
    expect(bob.locator("#intake-series-list")).to_contain_text("canary_alice_t")
    # and it stays in Bob's list next to his own upload
    bob_choices = dataset_choices(bob)
    assert any("alice_landings.csv" in t for t in bob_choices)
    assert any("bob_landings.csv" in t for t in bob_choices)

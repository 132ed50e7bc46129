"""The key page in a real browser (Debian's Chromium) against the 2-worker keyed server: the form,
then the whole dashboard working on the cookie alone, then forgetting the key."""

from __future__ import annotations

import pytest
from conftest import KEY

pytestmark = [pytest.mark.server, pytest.mark.browser]


def test_the_key_form_lets_a_browser_in_and_forgetting_locks_it_out(keyed_server, browser):
    base = f"http://127.0.0.1:{keyed_server.port}"
    context = browser.new_context()
    page = context.new_page()
    page.set_default_timeout(30_000)
    refused_after_login: list[str] = []
    errors: list[str] = []
    logged_in = [False]

    def on_response(response) -> None:
        if logged_in[0] and response.status == 401:
            refused_after_login.append(response.url)

    page.on("response", on_response)
    page.on("pageerror", lambda err: errors.append(str(err)))
    first = page.goto(base + "/intake")
    assert first.status == 401
    assert page.title() == "Access key \u00b7 Haulcast"
    page.fill("#key", "not-the-right-key-1")
    page.click("button[type=submit]")
    assert "not the access key" in page.inner_text("[role=alert]")
    page.fill("#key", KEY)
    logged_in[0] = True
    page.click("button[type=submit]")
    page.wait_for_url(base + "/intake")
    page.wait_for_selector("h1:has-text('Intake')")
    page.wait_for_selector("#intake-upload")
    page.wait_for_load_state("networkidle")
    assert not refused_after_login, refused_after_login
    assert not errors, errors
    cookie = next(c for c in context.cookies() if c["name"] == "haulcast_session")
    assert cookie["httpOnly"] is True and cookie["sameSite"] == "Lax"
    assert page.evaluate("document.cookie") == ""  # scripts cannot read it
    logged_in[0] = False
    page.click("text=Forget the access key")
    page.wait_for_url(base + "/key")
    assert page.goto(base + "/bench").status == 401
    context.close()

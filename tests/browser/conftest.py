"""Browser-test fixtures: one live Haulcast server per test session, driven by Debian's Chromium.

Dash keeps its page and callback registries process-wide, so the app is built ONCE per test
session (with a temporary DATA_DIR) and served by werkzeug on a thread on a free loopback
port. Each test gets fresh browser contexts (their own sessionStorage, i.e. their own
``hc-selection``); console errors and uncaught page errors fail the test.

Fixtures for every browser test module:

``app_url``       base URL of the live server, e.g. ``http://127.0.0.1:41234``
``live_app``      the Dash app behind it (``live_app.server.extensions["haulcast"]["store"]``)
``browser``       the Playwright Chromium browser (session-wide; in ``tests/conftest.py``)
``new_page``      factory: ``new_page(**context_kwargs) -> Page`` in a fresh context
``page``          one fresh page
``screenshot``    ``screenshot(page, name)`` saves ``test-artifacts/screens/NAME.png``
``open_page``     ``open_page(page, "/intake")``: go there, wait for the page title and (unless
                  ``settle=False``) for every callback to finish
``settle``        ``settle(page)``: wait until no Dash callback is in flight
``upload_file``   ``upload_file(page, name, data)``: drop a file on Intake's upload area

Never downloads a browser: Chromium must be installed (``make test`` installs Debian's
``chromium`` package when missing).
"""

from __future__ import annotations

import re
import threading
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest

ROOT = Path(__file__).resolve().parents[2]
SCREENS = ROOT / "test-artifacts" / "screens"
#: Milliseconds Playwright waits for a selector or an expectation.
TIMEOUT_MS = 20_000
PAGE_TITLES = {"/intake": "Intake", "/bench": "Model Bench", "/board": "Forecast Board"}


def _set_expect_timeout() -> None:
    """``expect(...)`` waits as long as locators do (its own default is 5 s: too short on a busy CI box)."""
    try:
        from playwright.sync_api import expect
    except ImportError:  # pragma: no cover - playwright is in the test extra
        return
    expect.set_options(timeout=TIMEOUT_MS)


_set_expect_timeout()


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    """Everything under tests/browser is marked ``browser`` (deselect with ``-m 'not browser'``)."""
    here = Path(__file__).parent
    for item in items:
        if here in Path(str(item.fspath)).parents:
            item.add_marker(pytest.mark.browser)


# ---------------------------------------------------------------------------------------------
# The live server
# ---------------------------------------------------------------------------------------------


@pytest.fixture(scope="session")
def live_app(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Any]:
    """The app, built once for the whole session, served on a thread."""
    from werkzeug.serving import WSGIRequestHandler, make_server

    from app import create_app

    class QuietHandler(WSGIRequestHandler):
        def log_request(self, *args: Any, **kwargs: Any) -> None:  # no access log in test output
            pass

    data_dir = tmp_path_factory.mktemp("haulcast-data")
    app = create_app({"DATA_DIR": str(data_dir)})
    server = make_server("127.0.0.1", 0, app.server, threaded=True, request_handler=QuietHandler)
    thread = threading.Thread(target=server.serve_forever, name="haulcast-test-server", daemon=True)
    thread.start()
    app.test_base_url = f"http://127.0.0.1:{server.server_port}"
    try:
        yield app
    finally:
        server.shutdown()
        thread.join(timeout=10)
        server.server_close()


@pytest.fixture(scope="session")
def app_url(live_app: Any) -> str:
    """Base URL of the live server (no trailing slash)."""
    return live_app.test_base_url


# ---------------------------------------------------------------------------------------------
# The browser
# ---------------------------------------------------------------------------------------------


class PageFactory:
    """Makes pages in fresh browser contexts and records their console errors."""

    def __init__(self, browser: Any) -> None:
        self.browser = browser
        self.contexts: list[Any] = []
        self.errors: list[str] = []
        self.allowed: list[re.Pattern[str]] = []

    def __call__(self, **context_kwargs: Any) -> Any:
        context_kwargs.setdefault("viewport", {"width": 1360, "height": 900})
        context_kwargs.setdefault("accept_downloads", True)
        context = self.browser.new_context(**context_kwargs)
        context.set_default_timeout(TIMEOUT_MS)
        self.contexts.append(context)
        page = context.new_page()
        page.on("console", self._on_console)
        page.on("pageerror", lambda exc: self.errors.append(f"page error: {exc}"))
        return page

    def allow_console(self, pattern: str) -> None:
        """Do not fail on console errors matching ``pattern`` (a regular expression)."""
        self.allowed.append(re.compile(pattern))

    def _on_console(self, message: Any) -> None:
        if message.type == "error":
            text = message.text
            if not any(p.search(text) for p in self.allowed):
                self.errors.append(f"console error: {text}")

    def close(self) -> None:
        for context in self.contexts:
            try:
                context.close()
            except Exception:  # noqa: BLE001 - closing a context that already went away
                pass


@pytest.fixture
def new_page(browser: Any) -> Iterator[PageFactory]:
    """``new_page()`` -> a Page in a fresh context; the test fails on any console error."""
    factory = PageFactory(browser)
    yield factory
    factory.close()
    assert not factory.errors, "browser console errors:\n" + "\n".join(factory.errors)


@pytest.fixture
def page(new_page: PageFactory) -> Any:
    """One fresh page (its own browser session)."""
    return new_page()


@pytest.fixture(scope="session")
def screenshot() -> Callable[..., Path]:
    """``screenshot(page, name)``: save a full-page PNG under test-artifacts/screens/."""
    SCREENS.mkdir(parents=True, exist_ok=True)

    def take(page: Any, name: str, *, full_page: bool = True) -> Path:
        safe = re.sub(r"[^A-Za-z0-9_.-]+", "_", name).strip("_") or "screen"
        path = SCREENS / f"{safe}.png"
        page.screenshot(path=str(path), full_page=full_page)
        return path

    return take


def wait_idle(page: Any) -> None:
    """Wait until Dash has no callback in flight (no ``_dash-loading`` marker, network idle)."""
    page.wait_for_load_state("networkidle")
    page.wait_for_function(
        "() => !document.querySelector('[data-dash-is-loading=\"true\"]')", timeout=TIMEOUT_MS
    )


@pytest.fixture(scope="session")
def open_page(app_url: str) -> Callable[..., Any]:
    """``open_page(page, "/intake")``: load a route and wait for its title and callbacks."""

    def go(page: Any, path: str, *, title: str | None = None, settle: bool = True) -> Any:
        page.goto(app_url + path)
        expected = title or PAGE_TITLES.get(path.split("?")[0])
        heading = page.locator("h1.hc-page__title")
        heading.wait_for()
        if expected:
            from playwright.sync_api import expect

            expect(heading).to_have_text(expected)
        if settle:
            wait_idle(page)
        return page

    return go


@pytest.fixture(scope="session")
def settle() -> Callable[[Any], None]:
    """``settle(page)``: wait until Dash has no callback in flight."""
    return wait_idle


@pytest.fixture(scope="session")
def upload_file() -> Callable[..., None]:
    """``upload_file(page, name, data)``: drop one file on Intake's upload area, wait for the
    upload message (on the Intake page)."""

    def drop(page: Any, name: str, data: bytes, mime: str = "text/csv") -> None:
        from playwright.sync_api import expect

        page.locator("#intake-upload input[type=file]").set_input_files(
            files=[{"name": name, "mimeType": mime, "buffer": data}]
        )
        expect(page.locator("#intake-upload-status [role=alert]")).to_be_visible()
        wait_idle(page)

    return drop

"""The access key, through Flask's test client: every route refuses without it, the Bearer
header and the key page's signed cookie let a request in, the cookie-signing secret is shared
through the data folder."""

from __future__ import annotations

import hmac
import multiprocessing
import re
import stat

import pytest

import forecasting_core as fc
from app import create_app
from app.access import KEY_PATH, LOGOUT_PATH, load_secret_key

KEY = "river-mouth-7Qx2-access"
AUTH = {"Authorization": f"Bearer {KEY}"}
BROWSER = {"Accept": "text/html,application/xhtml+xml,application/xml;q=0.9,*/*;q=0.8"}


def _app(tmp_path, **extra):
    return create_app(
        {
            "DATA_DIR": str(tmp_path / "data"),
            "CACHE_TYPE": "SimpleCache",
            "LOAD_SAMPLES": False,
            "ACCESS_KEY": KEY,
            "ACCESS_FAIL_DELAY": 0,
            **extra,
        }
    )


@pytest.fixture
def keyed(tmp_path):
    return _app(tmp_path)


@pytest.fixture
def client(keyed):
    return keyed.server.test_client()


_SAMPLE_ARGS = {
    "filename": "haulcast.css",
    "package_name": "dash",
    "fingerprinted_path": "dcc/dash_core_components.v1_0_0m1.js",
    "path": "intake",
    "analysis_id": "0" * 32,
}


def routes(app) -> list[tuple[str, str]]:
    """(method, concrete path) for every rule of the Flask url_map, plus Dash's pages."""
    out = []
    for rule in app.server.url_map.iter_rules():
        path = rule.rule
        for name in rule.arguments:
            value = _SAMPLE_ARGS.get(name, "x")
            path = re.sub(rf"<(?:[a-z]+(?:\([^)]*\))?:)?{name}>", value, path)
        assert "<" not in path, path
        for method in sorted(rule.methods - {"HEAD", "OPTIONS"}):
            out.append((method, path))
    extra = [
        ("GET", p)
        for p in ("/", "/intake", "/bench", "/board", "/board?analysis=" + "0" * 32, "/no-page")
    ] + [
        ("GET", "/_dash-component-suites/plotly/package_data/plotly.min.js"),
        ("GET", "/assets/haulcast.css"),
        ("GET", "/api/analyses"),
        ("GET", "/api/analyses/" + "0" * 32),
        ("POST", "/_dash-update-component"),
    ]
    return sorted(set(out + extra))


def test_the_route_list_covers_dash_internals(keyed):
    paths = {p for _m, p in routes(keyed)}
    for needed in (
        "/_dash-layout",
        "/_dash-dependencies",
        "/_dash-update-component",
        "/_reload-hash",
    ):
        assert needed in paths


def test_every_route_refuses_a_request_without_the_key(keyed, client):
    answered = {}
    for method, path in routes(keyed):
        if path in (KEY_PATH, LOGOUT_PATH):
            continue
        response = client.open(path, method=method, json={} if method == "POST" else None)
        answered[(method, path)] = response.status_code
        assert response.status_code == 401, (method, path, response.status_code)
        assert response.headers["WWW-Authenticate"].startswith("Bearer")
        body = response.get_data(as_text=True)
        assert "needs its access key" in body, (method, path)
    assert len(answered) >= 15


def test_every_route_lets_the_bearer_key_in(keyed, client):
    for method, path in routes(keyed):
        if path in (KEY_PATH, LOGOUT_PATH):
            continue
        response = client.open(
            path, method=method, headers=AUTH, json={} if method == "POST" else None
        )
        assert response.status_code != 401, (method, path)
        assert response.status_code < 500, (method, path, response.status_code)


@pytest.mark.parametrize(
    "path",
    ["/_dash-layout?key=" + KEY, "/_dash-layout?access_key=" + KEY, "/intake?token=" + KEY],
)
def test_the_key_in_the_address_is_not_accepted(client, path):
    assert client.get(path).status_code == 401


@pytest.mark.parametrize(
    ("headers", "fragment"),
    [
        ({"Authorization": "Bearer wrong-key-123456"}, "Authorization header is wrong"),
        ({"Authorization": f"Basic {KEY}"}, "needs its access key"),
        ({"Authorization": f"Bearer {KEY}x"}, "Authorization header is wrong"),
        ({"Authorization": f"Bearer {KEY[:-1]}"}, "Authorization header is wrong"),
        ({"Authorization": "Bearer"}, "needs its access key"),
        ({"X-Access-Key": KEY}, "needs its access key"),
    ],
)
def test_a_wrong_or_misplaced_key_is_refused_with_a_message(client, headers, fragment):
    response = client.get("/_dash-layout", headers=headers)
    assert response.status_code == 401
    assert fragment in response.json["error"]


def test_a_browser_asking_for_a_page_gets_the_key_form(client):
    response = client.get("/board?present=1", headers=BROWSER)
    assert response.status_code == 401
    body = response.get_data(as_text=True)
    assert '<form method="post" action="/key">' in body
    assert 'name="key" type="password"' in body
    assert 'name="next" value="/board?present=1"' in body
    assert response.headers["Cache-Control"] == "no-store"


def test_the_key_page_sets_a_signed_httponly_samesite_cookie_that_lets_the_browser_in(client):
    response = client.post(KEY_PATH, data={"key": KEY, "next": "/bench"}, headers=BROWSER)
    assert response.status_code == 303
    assert response.headers["Location"] == "/bench"
    cookie = response.headers["Set-Cookie"]
    assert cookie.startswith("haulcast_session=")
    assert "HttpOnly" in cookie and "SameSite=Lax" in cookie
    assert "Secure" not in cookie
    assert KEY not in cookie  # the cookie keeps a keyed hash, never the key
    assert client.get("/intake", headers=BROWSER).status_code == 200
    assert client.get("/_dash-layout").status_code == 200
    assert client.get("/_dash-dependencies").status_code == 200


def test_the_cookie_is_secure_when_configured(tmp_path):
    client = _app(tmp_path, ACCESS_COOKIE_SECURE=True).server.test_client()
    cookie = client.post(KEY_PATH, data={"key": KEY}).headers["Set-Cookie"]
    assert "Secure" in cookie


def test_a_forged_or_tampered_cookie_is_refused(client):
    client.set_cookie("haulcast_session", "eyJoY19hY2Nlc3MiOiJ4In0.Zz.bad")
    assert client.get("/_dash-layout").status_code == 401


@pytest.mark.parametrize(
    ("key", "fragment"), [("not-it-at-all-1", "not the access key"), ("", "Enter the access key")]
)
def test_a_wrong_key_on_the_key_page_says_so(client, key, fragment):
    response = client.post(KEY_PATH, data={"key": key}, headers=BROWSER)
    assert response.status_code == 401
    assert fragment in response.get_data(as_text=True)
    assert "Set-Cookie" not in response.headers or "hc_access" not in response.headers["Set-Cookie"]
    assert client.get("/_dash-layout").status_code == 401


@pytest.mark.parametrize(
    "target",
    ["//evil.example/x", "https://evil.example/", "/\\evil.example", "javascript:alert(1)", "/key"],
)
def test_the_key_page_only_sends_the_browser_to_this_server(client, target):
    response = client.post(KEY_PATH, data={"key": KEY, "next": target})
    assert response.status_code == 303
    assert response.headers["Location"] == "/"


def test_forgetting_the_key_logs_the_browser_out(client):
    client.post(KEY_PATH, data={"key": KEY})
    assert client.get("/_dash-layout").status_code == 200
    response = client.get(LOGOUT_PATH)
    assert response.status_code == 303 and response.headers["Location"] == KEY_PATH
    assert client.get("/_dash-layout").status_code == 401


def test_the_footer_has_a_forget_link_only_when_the_server_has_a_key(client, tmp_path):
    layout = client.get("/_dash-layout", headers=AUTH).json
    links = [
        c for c in _walk(layout) if c.get("type") == "A" and c["props"].get("href") == LOGOUT_PATH
    ]
    assert [c["props"]["children"] for c in links] == ["Forget the access key"]
    open_app = create_app(
        {"DATA_DIR": str(tmp_path / "open"), "CACHE_TYPE": "SimpleCache", "LOAD_SAMPLES": False}
    )
    layout = open_app.server.test_client().get("/_dash-layout").json
    assert not [c for c in _walk(layout) if c.get("props", {}).get("href") == LOGOUT_PATH]


def _walk(node):
    if isinstance(node, dict):
        yield node
        for value in node.values():
            yield from _walk(value)
    elif isinstance(node, list):
        for value in node:
            yield from _walk(value)


def test_changing_the_key_logs_every_browser_out(tmp_path):
    first = _app(tmp_path).server.test_client()
    first.post(KEY_PATH, data={"key": KEY})
    cookie = first.get_cookie("haulcast_session")
    second = _app(tmp_path, ACCESS_KEY="another-key-0987654321").server.test_client()
    second.set_cookie("haulcast_session", cookie.value)
    assert second.get("/_dash-layout").status_code == 401
    same = _app(tmp_path).server.test_client()  # same key, same data folder: still let in
    same.set_cookie("haulcast_session", cookie.value)
    assert same.get("/_dash-layout").status_code == 200


def test_wrong_keys_from_one_address_are_slowed_then_refused(tmp_path):
    client = _app(tmp_path, ACCESS_MAX_FAILURES=3).server.test_client()
    codes = [
        client.post(KEY_PATH, data={"key": f"wrong-key-{i:04d}"}).status_code for i in range(5)
    ]
    assert codes == [401, 401, 401, 429, 429]
    response = client.get("/_dash-layout", headers={"Authorization": "Bearer wrong-key-x1234"})
    assert response.status_code == 429
    assert response.headers["Retry-After"] == "60"
    assert "Too many wrong access keys" in response.json["error"]
    # while limited, not even the right key is compared (guessing gains nothing)
    assert client.post(KEY_PATH, data={"key": KEY}).status_code == 429
    assert client.get("/_dash-layout", headers=AUTH).status_code == 429
    assert client.get("/_dash-layout").status_code == 401  # no key sent: the plain refusal


def test_the_wrong_key_limit_forgets_after_a_minute(tmp_path, monkeypatch):
    import app.access as access

    now = [1000.0]
    monkeypatch.setattr(access.time, "monotonic", lambda: now[0])
    client = _app(tmp_path, ACCESS_MAX_FAILURES=1).server.test_client()
    assert [
        client.post(KEY_PATH, data={"key": f"wrong-key-{i:04d}"}).status_code for i in range(2)
    ] == [401, 429]
    assert client.post(KEY_PATH, data={"key": KEY}).status_code == 429
    now[0] += 61
    assert client.post(KEY_PATH, data={"key": KEY}).status_code == 303


def test_keys_are_compared_in_constant_time(client, monkeypatch):
    calls = []
    real = hmac.compare_digest

    def spy(a, b):
        calls.append((a, b))
        return real(a, b)

    monkeypatch.setattr("app.access.hmac.compare_digest", spy)
    assert client.get("/_dash-layout", headers=AUTH).status_code == 200
    assert calls and calls[0] == (KEY.encode(), KEY.encode())


@pytest.mark.parametrize(
    ("key", "fragment"),
    [
        ("short", "at least 12 characters"),
        ("has a space inside", "printable ASCII"),
        ("caf\u00e9" * 4, "printable ASCII"),
    ],
)
def test_an_unusable_key_stops_the_app_with_a_plain_message(tmp_path, key, fragment):
    with pytest.raises(fc.InputError, match=fragment):
        _app(tmp_path, ACCESS_KEY=key)


def test_an_app_without_a_key_is_open_and_has_no_key_page(tmp_path):
    app = create_app(
        {"DATA_DIR": str(tmp_path / "d"), "CACHE_TYPE": "SimpleCache", "LOAD_SAMPLES": False}
    )
    client = app.server.test_client()
    assert app.server.config["ACCESS_KEY"] is None
    assert client.get("/_dash-layout").status_code == 200
    assert "haulcast_key" not in app.server.view_functions


def test_the_secret_is_kept_private_in_the_data_folder_and_shared(tmp_path):
    first = _app(tmp_path)
    second = _app(tmp_path)
    path = tmp_path / "data" / "secret_key"
    assert stat.S_IMODE(path.stat().st_mode) == 0o600
    assert first.server.secret_key == second.server.secret_key == path.read_bytes().strip()
    assert len(first.server.secret_key) == 64


def test_a_secret_readable_by_others_is_made_private(tmp_path):
    load_secret_key(tmp_path)
    (tmp_path / "secret_key").chmod(0o644)
    load_secret_key(tmp_path)
    assert stat.S_IMODE((tmp_path / "secret_key").stat().st_mode) == 0o600


def _secret_in(folder: str) -> bytes:
    return load_secret_key(folder)


def test_processes_starting_at_once_agree_on_one_secret(tmp_path):
    with multiprocessing.get_context("fork").Pool(6) as pool:
        secrets_seen = pool.map(_secret_in, [str(tmp_path / "race")] * 24)
    assert len(set(secrets_seen)) == 1
    assert [p.name for p in (tmp_path / "race").iterdir()] == ["secret_key"]  # no temp files left


@pytest.mark.parametrize(
    ("host", "status"),
    [
        ("127.0.0.1:8050", 200),
        ("localhost:8050", 200),
        ("[::1]:8050", 200),
        ("LOCALHOST", 200),
        ("rebind.evil.example:8050", 400),
        ("127.0.0.1.evil.example", 400),
    ],
)
def test_an_open_loopback_server_answers_only_to_loopback_names(tmp_path, host, status):
    app = create_app(
        {
            "DATA_DIR": str(tmp_path / "d"),
            "CACHE_TYPE": "SimpleCache",
            "LOAD_SAMPLES": False,
            "ALLOWED_HOSTS": ("127.0.0.1", "localhost", "[::1]"),
        }
    )
    response = app.server.test_client().get("/_dash-layout", headers={"Host": host})
    assert response.status_code == status
    if status == 400:
        assert "This server answers only to 127.0.0.1, localhost, [::1]" in response.json["error"]


def test_every_answer_forbids_sniffing_framing_by_others_and_referrers(client):
    for response in (
        client.get("/_dash-layout"),
        client.get("/key"),
        client.get("/_dash-layout", headers=AUTH),
    ):
        assert response.headers["X-Content-Type-Options"] == "nosniff"
        assert response.headers["X-Frame-Options"] in ("SAMEORIGIN", "DENY")
        assert response.headers["Referrer-Policy"] == "same-origin"

"""Malformed requests get a 4xx with a plain message, never a 500 or a traceback (Flask's
test client; tests/server/test_hostile.py sends the same kinds of request to a real server)."""

from __future__ import annotations

import io
import json

import pytest

from app import create_app

CALLBACK = "/_dash-update-component"


@pytest.fixture(scope="module")
def app(tmp_path_factory):
    return create_app(
        {
            "DATA_DIR": str(tmp_path_factory.mktemp("errors") / "data"),
            "CACHE_TYPE": "SimpleCache",
            "LOAD_SAMPLES": False,
            "MAX_UPLOAD_BYTES": 50_000,
        }
    )


@pytest.fixture
def client(app):
    return app.server.test_client()


@pytest.fixture(scope="module")
def known_output(app):
    deps = app.server.test_client().get("/_dash-dependencies").json
    return next(d["output"] for d in deps if not d.get("clientside_function"))


def _no_traceback(body: str) -> None:
    assert "Traceback" not in body
    assert 'File "' not in body
    assert "site-packages" not in body


@pytest.mark.parametrize(
    ("method", "path", "body", "content_type", "status", "fragment"),
    [
        ("POST", CALLBACK, b"{not json", "application/json", 400, "not valid JSON"),
        ("POST", CALLBACK, b'{"output": "a.b"', "application/json", 400, "not valid JSON"),
        ("POST", CALLBACK, b"[1, 2]", "application/json", 400, "must be a JSON object. Got list"),
        ("POST", CALLBACK, b"{}", "application/json", 400, "'output' must be a string"),
        (
            "POST",
            CALLBACK,
            b'{"output": "x.y", "outputs": {}, "inputs": {}, "changedPropIds": []}',
            "application/json",
            400,
            "'inputs' must be a list",
        ),
        (
            "POST",
            CALLBACK,
            b'{"output": "nope.children", "outputs": {"id": "nope", "property": "children"},'
            b' "inputs": [], "changedPropIds": []}',
            "application/json",
            400,
            "No callback updates 'nope.children'",
        ),
        ("POST", CALLBACK, b"output=x", "application/x-www-form-urlencoded", 415, "must be JSON"),
        (
            "POST",
            CALLBACK,
            b'--zz\r\nContent-Disposition: form-data; name="file"; filename="a.csv"\r\n\r\nyear,',
            "multipart/form-data; boundary=zz",
            415,
            "must be JSON",
        ),
        ("GET", CALLBACK, None, None, 405, "does not accept GET; use POST"),
        ("PUT", CALLBACK, b"{}", "application/json", 405, "does not accept PUT; use POST"),
        ("POST", "/_dash-layout", b"{}", "application/json", 405, "does not accept POST"),
        ("DELETE", "/intake", None, None, 405, "does not accept DELETE"),
        ("GET", "/_dash-component-suites/nope/x.js", None, None, 404, "no such script"),
        ("GET", "/assets/../pyproject.toml", None, None, 404, "nothing at this address"),
    ],
)
def test_a_malformed_request_gets_a_4xx_with_a_message(
    client, method, path, body, content_type, status, fragment
):
    response = client.open(path, method=method, data=body, content_type=content_type)
    assert response.status_code == status
    assert response.json["status"] == status
    assert fragment in response.json["error"]
    _no_traceback(response.get_data(as_text=True))


@pytest.mark.parametrize(
    "broken",
    [
        {"inputs": [{"id": 3}]},
        {"inputs": [[{"id": "a"}]]},
        {"inputs": ["text"]},
        {"state": [None]},
        {"outputs": [1, 2, 3]},
        {"changedPropIds": [5]},
    ],
)
def test_a_callback_request_with_broken_parts_is_a_400(client, known_output, broken):
    body = {"output": known_output, "outputs": [], "inputs": [], "changedPropIds": [], **broken}
    response = client.post(CALLBACK, data=json.dumps(body), content_type="application/json")
    assert response.status_code == 400
    assert "malformed" in response.json["error"]
    _no_traceback(response.get_data(as_text=True))


def test_a_request_larger_than_the_cap_is_a_413_with_the_upload_limit(app, client):
    cap = app.server.config["MAX_CONTENT_LENGTH"]
    response = client.post(CALLBACK, data=b"x" * (cap + 1), content_type="application/json")
    assert response.status_code == 413
    assert response.json["error"] == (
        "The request is larger than this server accepts. Files of at most 49 kB can be uploaded."
    )


def test_a_body_shorter_than_its_content_length_is_a_400(client):
    body = b'{"output": "a.b", "inputs": [], "chan'
    response = client.post(
        CALLBACK,
        input_stream=io.BytesIO(body),
        headers={"Content-Type": "application/json", "Content-Length": str(len(body) + 500)},
    )
    assert response.status_code == 400
    assert "error" in response.json
    _no_traceback(response.get_data(as_text=True))


def test_an_error_inside_a_view_is_a_500_with_a_message_and_no_traceback(tmp_path, caplog):
    app = create_app(
        {"DATA_DIR": str(tmp_path), "CACHE_TYPE": "SimpleCache", "LOAD_SAMPLES": False}
    )
    client = app.server.test_client()

    def boom():
        raise RuntimeError("secret internals /srv/x.py line 3")

    app.server.add_url_rule("/_boom_for_test", "boom_for_test", boom)
    response = client.get("/_boom_for_test")
    assert response.status_code == 500
    assert "error was logged" in response.json["error"]
    assert "secret internals" not in response.get_data(as_text=True)
    assert "secret internals" in caplog.text  # the administrator sees it in the log


def test_no_module_of_the_app_unpickles_evaluates_or_renders_raw_html():
    """Nothing a user sends is unpickled, evaluated or rendered as HTML (the result cache
    pickles only what the server computed, inside flask-caching)."""
    import re
    from pathlib import Path

    root = Path(__file__).resolve().parents[2] / "app"
    banned = re.compile(
        r"pickle\.loads?\(|\beval\(|\bexec\(|marshal\.loads?\(|yaml\.load\(|"
        r"dangerously_allow_html\s*=\s*True|srcDoc\s*="
    )
    hits = [
        f"{path.relative_to(root)}:{n}: {line.strip()}"
        for path in sorted(root.rglob("*.py"))
        for n, line in enumerate(path.read_text(encoding="utf-8").splitlines(), 1)
        if banned.search(line)
    ]
    assert hits == []

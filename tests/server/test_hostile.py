"""A corpus of hostile and malformed inputs against a real 2-worker server, each with the exact
status and a fragment of the message it must get. Nothing here may produce a 500, a
traceback, a file outside the data folder, a running script or a spreadsheet formula; and the
server keeps serving afterwards."""

from __future__ import annotations

import base64
import json
import socket

import pytest
from conftest import KEY
from dash_client import DashClient, find_components
from flows import Session, canary_csv, error_texts, text_of

pytestmark = pytest.mark.server

AUTH = f"Authorization: Bearer {KEY}\r\n".encode()
CALLBACK = "/_dash-update-component"
# fc.MAX_FILE_BYTES (20 MB) x 1.4 (base64 inside JSON) + 1 MB: create_app's request cap
REQUEST_CAP = int(20 * 1048576 * 1.4) + 1_000_000


def _raw(server, data: bytes, *, shut: bool = False, limit: int = 8192) -> bytes:
    """Send bytes on a fresh connection; the answer's first bytes (b"" when it just closes)."""
    with socket.create_connection(("127.0.0.1", server.port), timeout=30) as conn:
        try:
            conn.sendall(data)
            if shut:
                conn.shutdown(socket.SHUT_WR)
        except (BrokenPipeError, ConnectionResetError):
            pass  # the server may answer and close before reading everything
        out = b""
        try:
            while len(out) < limit:
                chunk = conn.recv(65536)
                if not chunk:
                    break
                out += chunk
        except (ConnectionResetError, TimeoutError):
            pass
    return out


def _status(answer: bytes) -> int | None:
    if not answer.startswith(b"HTTP/"):
        return None
    return int(answer.split(b" ", 2)[1])


def _post(path: str, body: bytes, content_type: str, *, length: int | None = None) -> bytes:
    n = len(body) if length is None else length
    head = (
        f"POST {path} HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: {content_type}\r\n"
        f"Content-Length: {n}\r\nConnection: close\r\n"
    ).encode()
    return head + AUTH + b"\r\n" + body


_MULTIPART = (
    b'--zz\r\nContent-Disposition: form-data; name="file"; filename="landings.csv"\r\n'
    b"Content-Type: text/csv\r\n\r\nyear,hake_t\r\n1990,12"
)

# (name, bytes sent, close our side after sending, expected status, fragment of the answer)
WIRE = [
    (
        "request larger than the server's cap (headers only)",
        _post(CALLBACK, b"", "application/json", length=10**9),
        False,
        413,
        b"Request Entity Too Large",
    ),
    (
        "headers over 256 kB",
        b"GET /_dash-layout HTTP/1.1\r\nHost: x\r\n"
        + AUTH
        + b"X-Big: "
        + b"a" * 300_000
        + b"\r\n\r\n",
        False,
        431,
        b"Request Header Fields Too Large",
    ),
    (
        "address over 256 kB",
        b"GET /" + b"a" * 300_000 + b" HTTP/1.1\r\nHost: x\r\n" + AUTH + b"\r\n",
        False,
        431,
        b"Request Header Fields Too Large",
    ),
    (
        "not HTTP at all (a TLS hello)",
        b"\x16\x03\x01\x02\x00\x01\x00\x01\xfc\x03\x03garbage\r\n\r\n",
        False,
        400,
        b"Start line is invalid",
    ),
    (
        "truncated JSON callback body",
        _post(CALLBACK, b'{"output": "intake-dataset.options", "inpu', "application/json"),
        False,
        400,
        b"not valid JSON",
    ),
    (
        "truncated multipart body to the callback endpoint",
        _post(CALLBACK, _MULTIPART, "multipart/form-data; boundary=zz"),
        False,
        415,
        b"must be JSON",
    ),
    (
        "truncated multipart body to the key page",
        _post("/key", _MULTIPART, "multipart/form-data; boundary=zz"),
        False,
        401,
        b"Enter the access key",
    ),
    (
        "body shorter than its Content-Length, then the client hangs up",
        _post(CALLBACK, b'{"output": "a', "application/json", length=500),
        True,
        None,  # waitress never hands an incomplete request to the app: it just closes
        b"",
    ),
]


@pytest.mark.parametrize(
    ("name", "data", "shut", "status", "fragment"), WIRE, ids=[w[0] for w in WIRE]
)
def test_malformed_traffic_gets_a_plain_refusal(keyed_server, name, data, shut, status, fragment):
    answer = _raw(keyed_server, data, shut=shut)
    assert _status(answer) == status, answer[:300]
    assert fragment in answer
    assert b"Traceback" not in answer


def test_an_oversized_upload_is_a_413_naming_the_limit(keyed_server):
    body = b"x" * (REQUEST_CAP + 1000)
    answer = _raw(keyed_server, _post(CALLBACK, body, "application/json"))
    assert _status(answer) == 413
    payload = json.loads(answer.split(b"\r\n\r\n", 1)[1])
    assert payload == {
        "error": "The request is larger than this server accepts. "
        "Files of at most 20.0 MB can be uploaded.",
        "status": 413,
    }


# (name, method, path, headers, body, expected status, fragment of the message)
HTTP = [
    ("no key", "GET", "/_dash-layout", {}, None, 401, "needs its access key"),
    (
        "wrong key",
        "GET",
        "/_dash-layout",
        {"Authorization": "Bearer not-the-key-000000"},
        None,
        401,
        "Authorization header is wrong",
    ),
    (
        "key in the query string",
        "GET",
        f"/_dash-layout?key={KEY}",
        {},
        None,
        401,
        "needs its access key",
    ),
    (
        "key in the API's query string",
        "GET",
        f"/api/analyses?key={KEY}",
        {},
        None,
        401,
        "needs its access key",
    ),
    ("invalid JSON to a callback", "POST", CALLBACK, "json", b"{not json", 400, "not valid JSON"),
    (
        "a callback body that is a list",
        "POST",
        CALLBACK,
        "json",
        b"[]",
        400,
        "must be a JSON object",
    ),
    (
        "unknown callback output",
        "POST",
        CALLBACK,
        "json",
        b'{"output": "evil.children", "outputs": {"id": "evil", "property": "children"}, '
        b'"inputs": [], "changedPropIds": []}',
        400,
        "No callback updates 'evil.children'",
    ),
    ("wrong method on the callback endpoint", "GET", CALLBACK, "key", None, 405, "use POST"),
    (
        "wrong method on the layout",
        "POST",
        "/_dash-layout",
        "json",
        b"{}",
        405,
        "does not accept POST",
    ),
    ("invalid JSON to the API", "POST", "/api/analyses", "json", b"{bad", 405, "read-only"),
    (
        "malformed analysis id",
        "GET",
        "/api/analyses/" + "g" * 32,
        "key",
        None,
        400,
        "32 hexadecimal digits",
    ),
    ("unknown analysis id", "GET", "/api/analyses/" + "0" * 32, "key", None, 404, "was not found"),
    (
        "../ in an API address",
        "GET",
        "/api/analyses/..%2f..%2fetc%2fpasswd",
        "key",
        None,
        404,
        "no API address",
    ),
    ("bad API parameter", "GET", "/api/analyses?status=bogus", "key", None, 400, "status must be"),
    (
        "unknown script",
        "GET",
        "/_dash-component-suites/evil/x.js",
        "key",
        None,
        404,
        "no such script",
    ),
    (
        "../ in an asset address",
        "GET",
        "/assets/..%2f..%2fpyproject.toml",
        "key",
        None,
        404,
        "nothing at this address",
    ),
]


@pytest.mark.parametrize(
    ("name", "method", "path", "headers", "body", "status", "fragment"),
    HTTP,
    ids=[h[0] for h in HTTP],
)
def test_hostile_requests_get_the_expected_answer(
    keyed_server, name, method, path, headers, body, status, fragment
):
    use_key = headers in ("key", "json")
    extra = {"Content-Type": "application/json"} if headers == "json" else {}
    if isinstance(headers, dict):
        extra = headers
    transport = keyed_server.transport(key=use_key)
    reply = transport.request(method, path, body=body, headers=extra)
    assert reply.status == status, (reply.status, reply.text[:300])
    assert reply.json()["error"]
    assert fragment in reply.json()["error"]
    assert "Traceback" not in reply.text


# -- hostile content ------------------------------------------------------------------------


@pytest.fixture(scope="module")
def client(keyed_server, callbacks) -> DashClient:
    return DashClient(keyed_server.transport(), callbacks)


def _download(session: Session, which: str) -> dict:
    cb = session.c.find(f"board-{which}.data", inputs=[f"board-download-{which}.n_clicks"])
    reply, out = session.c.call(
        cb,
        {
            f"board-download-{which}.n_clicks": 1,
            "board-reference.value": None,
            "hc-selection.data": session.sel,
            "board-open.data": None,
        },
        changed=[f"board-download-{which}.n_clicks"],
    )
    assert reply.status == 200, reply.text[:300]
    assert not error_texts(out), error_texts(out)
    return out[f"board-{which}"]["data"]


def _no_html_rendering(answer) -> None:
    text = json.dumps(answer)
    assert '"dangerously_allow_html": true' not in text
    assert not list(find_components(answer, "Iframe"))


SCRIPT = "<script>alert(1)</script>"


def test_a_script_in_a_series_name_is_shown_as_text_and_escaped_in_the_report(client):
    session = Session(client)
    out = session.upload(canary_csv(SCRIPT, seed=11), "script.csv")
    assert [o["value"] for o in out["intake-series"]["options"]] == [SCRIPT]
    assert out["intake-series"]["options"][0]["label"].startswith(
        SCRIPT
    )  # a plain string: React shows it as text
    _no_html_rendering(out)
    _no_html_rendering(session.compare())
    board = session.forecast()
    _no_html_rendering(board)
    assert SCRIPT in text_of(board["board-summary"]["children"]) or SCRIPT in json.dumps(board)
    report = _download(session, "html")
    assert SCRIPT not in report["content"]
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in report["content"]
    assert "/" not in report["filename"] and "<" not in report["filename"]
    # saved with the script as its title too: the home page lists it as text
    session.save(SCRIPT + " title", author=SCRIPT)
    home = client.find("home-list.children", inputs=["home-search.value"])
    reply, out = client.call(
        home,
        {
            "home-search.value": "alert",
            "home-status.value": "all",
            "home-sort.value": "stock",
            "home-versions.value": [],
        },
    )
    assert reply.status == 200 and not error_texts(out)
    _no_html_rendering(out)
    assert SCRIPT + " title" in text_of(out["home-list"]["children"])


FORMULA = '=HYPERLINK("http://evil.example","x")'


@pytest.mark.parametrize("name", [FORMULA, "+cmd|' /C calc'!A0", "@SUM(1+1)*cmd|' /C calc'!A0"])
def test_a_formula_in_a_series_name_is_neutralised_in_the_csv_export(client, name):
    session = Session(client)
    session.upload(canary_csv(name, seed=12), "formula.csv")
    session.compare()
    session.forecast()
    export = _download(session, "csv")
    cells = [
        c.strip().strip('"') for line in export["content"].splitlines() for c in line.split(",")
    ]
    assert not [c for c in cells if c[:1] in ("=", "+", "@")], [c for c in cells if c[:1] in "=+@"][
        :3
    ]
    assert any(c.startswith("'" + name[:5]) or name[1:6] in c for c in cells)


def test_dot_dot_slash_in_a_file_name_never_becomes_a_path(keyed_server, client):
    data_dir = keyed_server.data_dir
    before = {p for p in data_dir.parent.rglob("*") if "passwd" in p.name}
    session = Session(client)
    out = session.upload(canary_csv("dots_t", seed=13), "../../../../etc/passwd.csv")
    labels = [o["label"] for o in out["intake-dataset"]["options"]]
    assert labels == ["passwd.csv \u00b7 your upload"]
    after = {p for p in data_dir.parent.rglob("*") if "passwd" in p.name}
    assert after == before  # no file named after the upload anywhere
    for entry in (data_dir / "datasets").iterdir():
        assert len(entry.name) == 64 or entry.name.startswith(".tmp-"), entry.name


@pytest.mark.parametrize(
    ("raw", "filename", "fragment"),
    [
        (
            b"\x80\x04\x95\x10\x00\x00\x00\x00\x00\x00\x00\x8c\x02os\x94.",
            "model.pkl",
            "binary file",
        ),
        (b"", "empty.csv", "the file is empty (0 bytes)"),
        (b"year,hake_t\n1990,=1+1\n1991,=cmd|' /C calc'!A0\n", "cells.csv", "0 usable"),
    ],
)
def test_files_that_are_not_tables_get_a_plain_message(client, raw, filename, fragment):
    session = Session(client)
    payload = {
        "contents": "data:text/csv;base64," + base64.b64encode(raw).decode(),
        "filename": filename,
        "t": 1,
    }
    reply, out = client.call(
        session._sync,
        {"intake-upload-payload.data": payload, "hc-selection.data": None},
        changed=["intake-upload-payload.data"],
    )
    assert reply.status == 200
    messages = error_texts(out) + [text_of(out.get("intake-upload-status", {}).get("children"))]
    assert "Traceback" not in json.dumps(out)
    if fragment:
        assert any(fragment in m for m in messages), messages


def test_an_upload_over_the_file_limit_inside_the_request_cap_gets_an_alert(client):
    session = Session(client)
    raw = b"year,big_t\n" + b"1990,1\n" * (20 * 1048576 // 7 + 10)  # just over 20 MB
    reply, out = client.call(
        session._sync,
        {
            "intake-upload-payload.data": {
                "contents": "data:text/csv;base64," + base64.b64encode(raw).decode(),
                "filename": "big.csv",
                "t": 1,
            },
            "hc-selection.data": None,
        },
        changed=["intake-upload-payload.data"],
    )
    assert reply.status == 200
    assert any("the file must be at most 20.0 MB" in m for m in error_texts(out)), error_texts(out)


def test_another_sessions_dataset_id_does_not_open_without_being_in_the_session(client):
    owner = Session(client)
    owner.upload(canary_csv("private_t", seed=14), "private.csv")
    stranger = Session(client)
    stranger.sel = {"dataset_id": owner.sel["dataset_id"], "series": "private_t", "uploads": []}
    out = stranger.intake()
    assert out["intake-dataset"]["value"] != owner.sel["dataset_id"]
    assert "private_t" not in json.dumps(out)


def test_the_server_still_serves_and_logged_no_traceback(keyed_server):
    reply = keyed_server.transport().request("GET", "/_dash-layout")
    assert reply.status == 200
    log = keyed_server.log_text()
    assert "Traceback" not in log, log[-3000:]
    assert keyed_server.alive()

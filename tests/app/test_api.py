"""The read-only JSON API: what it lists by default, the full record by id, and a JSON 4xx with
a plain message for every malformed request (never a 500, never an HTML page)."""

from __future__ import annotations

import json

import pytest

from app import create_app

CSV = b"year,cod_t,ling_t\n" + b"".join(
    f"{y},{100 + 3 * (y - 1990) + y % 4},{50 + (y % 7)}\n".encode() for y in range(1990, 2020)
)
FORECAST = {"forecast": [{"time": "2020", "step": 1, "mean": 0.1 + 0.2, "intervals": {}}]}


@pytest.fixture(scope="module")
def app(tmp_path_factory):
    folder = tmp_path_factory.mktemp("api")
    return create_app({"DATA_DIR": str(folder), "CACHE_TYPE": "SimpleCache", "LOAD_SAMPLES": False})


@pytest.fixture(scope="module")
def saved(app):
    store = app.server.extensions["haulcast"]["store"]
    dataset_id = store.save(CSV, "cod.csv")

    def save(**over):
        fields = {
            "dataset_id": dataset_id,
            "series": "cod_t",
            "settings": {"transform": "log", "horizon": 1},
            "model": "ARIMA(0,1,1)",
            "forecast": FORECAST,
            "author": "Ana",
        }
        return store.save_analysis(**{**fields, **over})

    cod = save(title="Cod 2020", season="2020")
    ling = save(series="ling_t", title="Ling <script>alert(1)</script>", season="2020")
    draft = save(title="Cod draft", author="Ben")
    store.publish(cod.id, author="Ana")
    store.publish(ling.id, author="Ana")
    store.add_signoff(cod.id, name="Dee", role="manager", note="ok")
    return {"cod": cod, "ling": ling, "draft": draft}


@pytest.fixture
def client(app):
    return app.server.test_client()


def _get(client, url, status=200):
    response = client.get(url)
    assert response.status_code == status, response.get_data(as_text=True)
    assert response.mimetype == "application/json"
    return response.get_json()


def test_the_list_shows_published_analyses_newest_first_without_forecasts(client, saved):
    body = _get(client, "/api/analyses")
    assert [a["id"] for a in body["analyses"]] == [saved["ling"].id, saved["cod"].id]
    assert body["count"] == 2 and body["status"] == "published"
    first = body["analyses"][1]
    assert "forecast" not in first and "settings" not in first
    assert first["signoff_count"] == 1 and first["signoffs"][0]["name"] == "Dee"
    assert first["url"] == f"/api/analyses/{saved['cod'].id}"


@pytest.mark.parametrize(
    ("query", "expected"),
    [
        ("?status=draft", ["draft"]),
        ("?status=all", ["draft", "ling", "cod"]),
        ("?status=ALL", ["draft", "ling", "cod"]),
        ("?status=", ["ling", "cod"]),  # empty means the default
        ("?q=cod", ["cod"]),
        ("?q=cod&status=all", ["draft", "cod"]),
        ("?q=ben&status=all", ["draft"]),
        ("?series=ling_t", ["ling"]),
        ("?series=no_such", []),
        ("?q=%3Cscript%3E", ["ling"]),
        ("?limit=1&status=all", ["draft"]),
        ("?unknown=1", ["ling", "cod"]),  # unknown parameters are ignored
    ],
)
def test_the_list_filters(client, saved, query, expected):
    body = _get(client, "/api/analyses" + query)
    assert [a["id"] for a in body["analyses"]] == [saved[k].id for k in expected]


def test_one_analysis_comes_in_full_with_forecast_settings_and_sign_offs(app, client, saved):
    body = _get(client, f"/api/analyses/{saved['cod'].id}")
    store = app.server.extensions["haulcast"]["store"]
    assert body == store.get_analysis(saved["cod"].id).to_dict()
    assert (body["status"], body["published_by"]) == ("published", "Ana")
    assert body["settings"] == {"transform": "log", "horizon": 1}
    assert body["forecast"] == FORECAST  # 0.1 + 0.2 comes back exactly
    assert body["forecast"]["forecast"][0]["mean"] == 0.30000000000000004
    assert [(s["name"], s["role"]) for s in body["signoffs"]] == [("Dee", "manager")]


def test_a_draft_opens_by_its_id(client, saved):
    assert _get(client, f"/api/analyses/{saved['draft'].id}")["status"] == "draft"


def test_script_in_a_title_is_plain_json_text(client, saved):
    response = client.get(f"/api/analyses/{saved['ling'].id}")
    assert response.mimetype == "application/json"
    assert response.headers["X-Content-Type-Options"] == "nosniff"
    assert json.loads(response.data)["title"] == "Ling <script>alert(1)</script>"


@pytest.mark.parametrize(
    ("url", "status", "message"),
    [
        ("/api/analyses/not-an-id", 400, "analysis id must be 32 hexadecimal digits"),
        ("/api/analyses/" + "A" * 32, 400, "analysis id must be 32 hexadecimal digits"),
        ("/api/analyses/..%2F..%2Fetc%2Fpasswd", 404, "there is no API address"),
        ("/api/analyses/" + "0" * 32, 404, f"analysis {'0' * 32} was not found on this server"),
        ("/api/analyses?status=final", 400, "status must be 'published', 'draft' or 'all'"),
        ("/api/analyses?limit=0", 400, "limit must be an integer from 1 to 1000. Got '0'"),
        ("/api/analyses?limit=abc", 400, "limit must be an integer from 1 to 1000"),
        ("/api/analyses?limit=1001", 400, "limit must be an integer from 1 to 1000"),
        ("/api/analyses?q=" + "x" * 201, 400, "query must be at most 200 characters"),
        ("/api/analyses?q=%00", 400, "query must not contain control characters"),
        ("/api/analyses?series=" + "s" * 201, 400, "series must be at most 200 characters"),
        ("/api/nothing", 404, "there is no API address /api/nothing"),
        ("/api", 404, "there is no API address"),
        ("/api/analyses/" + "0" * 32 + "/more", 404, "there is no API address"),
    ],
)
def test_malformed_requests_get_a_json_4xx_with_a_plain_message(
    client, saved, url, status, message
):
    body = _get(client, url, status)
    assert body["status"] == status
    assert message in body["error"]


@pytest.mark.parametrize("method", ["post", "put", "patch", "delete"])
@pytest.mark.parametrize("path", ["/api/analyses", "/api/analyses/" + "0" * 32])
def test_the_api_is_read_only(client, method, path):
    response = getattr(client, method)(path, data="{not json", content_type="application/json")
    assert response.status_code == 405
    assert response.get_json()["error"] == (
        f"the API is read-only: use GET. Got {method.upper()} instead."
    )
    assert response.headers["Allow"] == "GET, HEAD"


def test_answers_are_not_cached_by_browsers_or_proxies(client, saved):
    assert client.get("/api/analyses").headers["Cache-Control"] == "no-store"

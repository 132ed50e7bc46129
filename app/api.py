"""The read-only JSON API over saved analyses, for other tools and scripts.

``GET /api/analyses``
    Analyses newest first, each without its forecast (``{"analyses": [...], "count": n}``).
    Query parameters, all optional: ``q`` (words that must all appear in the title, series,
    season, author or model), ``status`` (``published``, the default; ``draft``; or ``all``),
    ``series`` (exact series name), ``limit`` (1 to 1000, default 200).
``GET /api/analyses/<id>``
    One analysis in full: settings, forecast and sign-offs (``Analysis.to_dict()``).

Only published analyses are listed unless ``status=draft`` or ``status=all`` is asked for: a
published forecast is what another tool should pick up, and a draft is work in progress that
may change by revision. A draft is still returned by its id (ids are unguessable and are only
known to someone who was shown the draft).

Every answer is JSON, errors included: ``{"error": "<plain message>", "status": 400}`` (the same
shape as the server's other JSON errors, e.g. the access check's 401) with
400 for a malformed parameter or id, 404 for an unknown id or address under ``/api/``, 405 for
a method other than GET or HEAD. Access control is not done here: the server's access check runs
in front of every route.
"""

from __future__ import annotations

import logging
from typing import Any

from flask import Blueprint, Response, jsonify, request
from werkzeug.exceptions import HTTPException

import forecasting_core as fc
from app.store import Analysis, check_analysis_id, get_store

__all__ = ["API_STATUSES", "api", "register_api", "summary"]

logger = logging.getLogger("haulcast.api")

api = Blueprint("haulcast_api", __name__, url_prefix="/api")

API_STATUSES = {"published": "published", "draft": "draft", "all": None}
DEFAULT_LIMIT = 200
MAX_LIMIT = 1000
_ALL_METHODS = ["GET", "HEAD", "POST", "PUT", "PATCH", "DELETE", "OPTIONS"]


def register_api(server: Any) -> None:
    """Register the blueprint on the Flask ``server`` (called by ``create_app``)."""
    server.register_blueprint(api)


def summary(analysis: Analysis) -> dict[str, Any]:
    """An analysis as listed: everything but settings and forecast, plus a sign-off count."""
    out = analysis.to_dict()
    out.pop("forecast")
    out.pop("settings")
    out["signoff_count"] = len(analysis.signoffs)
    out["url"] = f"/api/analyses/{analysis.id}"
    return out


# ---------------------------------------------------------------------------------------------
# Routes
# ---------------------------------------------------------------------------------------------


@api.route("/analyses", methods=["GET"])
def list_analyses() -> Response:
    args = request.args
    status_arg = _param("status", "published")
    if status_arg not in API_STATUSES:
        return _error(
            400, f"status must be 'published', 'draft' or 'all'. Got {status_arg[:40]!r} instead."
        )
    limit_arg = _param("limit", str(DEFAULT_LIMIT))
    if not limit_arg.isdigit() or not 1 <= int(limit_arg) <= MAX_LIMIT:
        return _error(
            400, f"limit must be an integer from 1 to {MAX_LIMIT}. Got {limit_arg[:40]!r} instead."
        )
    query = args.get("q")
    series = args.get("series")
    found = get_store().list_analyses(
        query=query or None,
        status=API_STATUSES[status_arg],
        series=series or None,
        limit=int(limit_arg),
    )
    return _json(
        {
            "analyses": [summary(a) for a in found],
            "count": len(found),
            "status": status_arg,
            "q": query or None,
            "series": series or None,
        }
    )


@api.route("/analyses/<analysis_id>", methods=["GET"])
def get_analysis(analysis_id: str) -> Response:
    check_analysis_id(analysis_id)  # 400 when malformed, before any lookup
    return _json(get_store().get_analysis(analysis_id).to_dict())


@api.route("", defaults={"rest": ""}, methods=_ALL_METHODS, strict_slashes=False)
@api.route("/<path:rest>", methods=_ALL_METHODS)
def not_here(rest: str) -> Response:
    """Any other address or method under /api: a JSON 404 or 405 instead of an HTML page."""
    known = rest.rstrip("/") == "analyses" or (
        rest.startswith("analyses/") and rest.count("/") == 1
    )
    if known and request.method not in ("GET", "HEAD"):
        response = _error(405, f"the API is read-only: use GET. Got {request.method} instead.")
        response.headers["Allow"] = "GET, HEAD"
        return response
    return _error(404, f"there is no API address /api/{rest[:80]}. Try /api/analyses.")


# ---------------------------------------------------------------------------------------------
# Errors and responses
# ---------------------------------------------------------------------------------------------


@api.errorhandler(fc.InputError)
def _input_error(err: fc.InputError) -> Response:
    message = str(err)
    return _error(404 if "was not found" in message else 400, message)


@api.errorhandler(HTTPException)
def _http_error(err: HTTPException) -> Response:
    return _error(int(err.code or 400), err.description or err.name)


@api.errorhandler(Exception)
def _unexpected(err: Exception) -> Response:  # pragma: no cover - a bug, not bad input
    logger.exception("API request %s failed", request.path)
    return _error(500, "the server could not answer this request. The error was logged.")


def _param(name: str, default: str) -> str:
    value = request.args.get(name)
    return default if value is None or value == "" else value.strip().lower()


def _json(payload: dict[str, Any], status: int = 200) -> Response:
    response = jsonify(payload)
    response.status_code = status
    response.headers["Cache-Control"] = "no-store"
    response.headers["X-Content-Type-Options"] = "nosniff"
    return response


def _error(status: int, message: str) -> Response:
    return _json({"error": message, "status": status}, status)

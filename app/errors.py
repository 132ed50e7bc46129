"""Plain answers for requests the server cannot use: 4xx with a message, never a traceback.

Flask's own error pages are replaced by a short JSON object (``{"error": ..., "status": ...}``)
for scripts and Dash's internal requests, or a small HTML page for a browser asking for a
page. Dash's callback endpoint is checked before Dash sees the request, so a body that is not
a callback request (not JSON, not an object, missing fields, an output no callback has) is a
400 that says what is wrong rather than an exception inside Dash. Anything that still goes
wrong is logged with its traceback on the server and answered with a message that names no
code.
"""

from __future__ import annotations

import logging
from typing import Any

import dash
from flask import Flask, Response, current_app, request
from markupsafe import escape
from werkzeug.exceptions import HTTPException

__all__ = ["error_response", "install_error_handlers", "wants_html"]

logger = logging.getLogger("haulcast.errors")

CALLBACK_PATH = "/_dash-update-component"

#: Messages for the statuses a visitor or a script can cause.
MESSAGES: dict[int, str] = {
    400: "The request could not be understood by this server.",
    401: "This Haulcast server needs its access key.",
    403: "This request is not allowed.",
    404: "There is nothing at this address.",
    405: "This address does not accept that method.",
    408: "The request took too long to arrive.",
    413: "The request is larger than this server accepts.",
    414: "The address is too long.",
    415: "The request body must be JSON (Content-Type: application/json).",
    429: "Too many attempts; wait a minute and try again.",
    431: "The request headers are too large.",
    500: "Something went wrong on the server; the error was logged for the administrator.",
}

# Exceptions Dash's dispatcher raises on a callback request it cannot use (a malformed body
# that passed the shape check below). Page callbacks are all ``guarded``, so an exception
# reaching Flask from the callback endpoint comes from the request, not from a page.
_MALFORMED_CALLBACK = (KeyError, TypeError, AttributeError, ValueError, IndexError)


def wants_html() -> bool:
    """Whether the current request is a browser asking for a page (not Dash, not a script)."""
    if request.method not in ("GET", "HEAD"):
        return False
    path = request.path
    if path.startswith(("/_dash-", "/_reload-hash", "/api/", "/assets/", "/_favicon")):
        return False
    best = request.accept_mimetypes.best_match(["application/json", "text/html"])
    return best == "text/html"


def error_response(status: int, message: str | None = None, **extra: Any) -> Response:
    """A response with ``status`` and a plain message, shaped for whoever asked.

    Parameters
    ----------
    status : int
        HTTP status code.
    message : str, optional
        What went wrong and what to do (default: a stock message for the status).
    **extra
        More JSON fields (JSON answers only).
    """
    text = message or MESSAGES.get(status, "The request could not be used.")
    if wants_html():
        body = _PAGE.format(status=status, message=escape(text))
        return Response(body, status=status, mimetype="text/html")
    best = request.accept_mimetypes.best_match(["application/json", "text/plain"])
    if best == "text/plain" and not request.path.startswith(("/_dash-", "/api/")):
        return Response(text + "\n", status=status, mimetype="text/plain")
    response = current_app.json.response({"error": text, "status": status, **extra})
    response.status_code = status
    return response


def install_error_handlers(app: dash.Dash) -> None:
    """Register the handlers and the callback-request check on ``app.server``."""
    server: Flask = app.server
    server.extensions.setdefault("haulcast", {})["dash_app"] = app
    server.register_error_handler(HTTPException, _http_error)
    server.register_error_handler(Exception, _unexpected)
    server.before_request(_check_callback_request)


def _http_error(err: HTTPException) -> Response:
    status = int(err.code or 500)
    if status == 413:
        limit = current_app.config.get("MAX_UPLOAD_BYTES")
        cap = f" Files of at most {_size(int(limit))} can be uploaded." if limit else ""
        return error_response(413, "The request is larger than this server accepts." + cap)
    if status == 405:
        allowed = ", ".join(sorted(getattr(err, "valid_methods", None) or ()))
        message = f"{request.path} does not accept {request.method}" + (
            f"; use {allowed}." if allowed else "."
        )
        response = error_response(405, message)
        if allowed:
            response.headers["Allow"] = allowed
        return response
    if status == 400 and request.path == CALLBACK_PATH:
        return error_response(400, "The callback request body is not valid JSON.")
    message = MESSAGES.get(status)
    if message is None:
        message = err.description if status < 500 else MESSAGES[500]
    return error_response(status, message)


def _size(n: int) -> str:
    """Bytes as file managers show them (1 MB = 1024 x 1024 bytes)."""
    return f"{n / 1048576:.1f} MB" if n >= 102_400 else f"{n / 1024:.0f} kB"


def _unexpected(err: Exception) -> Response:
    if isinstance(err, HTTPException):  # pragma: no cover - Flask routes these to _http_error
        return _http_error(err)
    if request.path.startswith("/_dash-component-suites/") and isinstance(
        err, dash.exceptions.DependencyException
    ):
        return error_response(404, "There is no such script on this server.")
    if request.path == CALLBACK_PATH and isinstance(
        err, (*_MALFORMED_CALLBACK, dash.exceptions.DashException)
    ):
        logger.warning("Refused a malformed callback request: %s: %s", type(err).__name__, err)
        return error_response(400, "The callback request could not be used: it is malformed.")
    logger.exception("Unexpected error on %s %s", request.method, request.path)
    return error_response(500)


def _check_callback_request() -> Response | None:
    """Refuse a callback request whose body is not the shape Dash expects (400, with why)."""
    if request.path != CALLBACK_PATH or request.method == "OPTIONS":
        return None
    if request.method != "POST":
        response = error_response(
            405, f"{CALLBACK_PATH} does not accept {request.method}; use POST."
        )
        response.headers["Allow"] = "POST"
        return response
    if not request.is_json:
        return error_response(415)
    body = request.get_json(silent=True)
    if body is None:
        return error_response(400, "The callback request body is not valid JSON.")
    if not isinstance(body, dict):
        return error_response(
            400, f"The callback request must be a JSON object. Got {type(body).__name__} instead."
        )
    problems = []
    if not isinstance(body.get("output"), str):
        problems.append("'output' must be a string")
    if not isinstance(body.get("outputs"), dict | list):
        problems.append("'outputs' must be an object or a list")
    for key in ("inputs", "changedPropIds"):
        if not isinstance(body.get(key), list):
            problems.append(f"'{key}' must be a list")
    if "state" in body and not isinstance(body["state"], list):
        problems.append("'state' must be a list")
    if problems:
        return error_response(
            400, "The callback request is malformed: " + "; ".join(problems) + "."
        )
    dash_app = _dash_app()
    if dash_app is not None and body["output"] not in dash_app.callback_map:
        return error_response(
            400, f"No callback updates {body['output'][:120]!r} on this server.", output=None
        )
    return None


def _dash_app() -> dash.Dash | None:
    return current_app.extensions.get("haulcast", {}).get("dash_app")


_PAGE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{status} \u00b7 Haulcast</title>
<style>body{{font:16px/1.5 system-ui,sans-serif;max-width:36rem;margin:4rem auto;padding:0 1rem;color:#1d2b36}}
a{{color:#0b5f7a}}</style></head>
<body><h1>Haulcast</h1><p>{message}</p><p><a href="/">Back to the start</a></p></body></html>
"""

"""The access key: one shared secret that every request to a team server must carry.

Configuration (keys of ``create_app(config)``):

``ACCESS_KEY``
    The key (a string of at least 12 characters), or None (the default) for an open server:
    right for ``127.0.0.1``, where only this machine can connect. ``python -m app`` sets it
    whenever it binds another address.
``ACCESS_COOKIE_SECURE``
    Mark the session cookie ``Secure`` (send it over HTTPS only). Turn it on behind a TLS
    reverse proxy. Default False.
``ACCESS_SESSION_HOURS``
    How long a browser stays let in after entering the key (default 336, two weeks).
``ACCESS_FAIL_DELAY``
    Seconds each wrong key waits before its answer (default 0.25).
``ACCESS_MAX_FAILURES``
    Wrong keys one address may send per minute, per server process, before it is told to
    wait (429); default 10.
``ALLOWED_HOSTS``
    Host names the server answers to (e.g. ``("127.0.0.1", "localhost", "[::1]")``); any other
    ``Host`` header gets 400. ``python -m app`` sets this for an open loopback server, so that a
    web page elsewhere cannot reach it through a name it points at 127.0.0.1 (DNS rebinding).
    Default None: no check.
``SECRET_KEY``
    Signs the session cookie. Default: a random key kept in ``DATA_DIR/secret_key``
    (mode 0600, created atomically), so that every worker process and every restart share it.

With a key set, every route (pages, Dash's ``/_dash-*`` endpoints, ``/_reload-hash``, assets,
component suites, downloads, ``/api/*``) answers without it either the key page (a browser
asking for a page, status 401) or 401 with a short JSON or plain-text message. A request
carries the key as ``Authorization: Bearer <key>`` (scripts) or as the signed session cookie
the key page sets (browsers). The key in the address (``?key=``) is never accepted: addresses
end up in logs and browser history. Keys are compared in constant time
(:func:`hmac.compare_digest`).
"""

from __future__ import annotations

import collections
import hashlib
import hmac
import logging
import os
import secrets
import threading
import time
from datetime import timedelta
from pathlib import Path
from urllib.parse import urlsplit

from flask import Flask, Response, current_app, redirect, request, session
from markupsafe import escape

from app.errors import error_response, wants_html

__all__ = [
    "KEY_PATH",
    "LOGOUT_PATH",
    "MIN_KEY_LENGTH",
    "generate_key",
    "install_access",
    "key_problem",
    "load_secret_key",
]

logger = logging.getLogger("haulcast.access")

KEY_PATH = "/key"
LOGOUT_PATH = "/key/forget"
MIN_KEY_LENGTH = 12
SECRET_FILE = "secret_key"
_SESSION_FIELD = "hc_access"


def generate_key() -> str:
    """A new random access key (32 URL-safe characters, 192 bits)."""
    return secrets.token_urlsafe(24)


def key_problem(key: str) -> str | None:
    """Why ``key`` cannot be an access key, or None when it can.

    >>> key_problem("short")
    'the access key must have at least 12 characters. Got 5 instead.'
    """
    if not isinstance(key, str):
        return f"the access key must be a string. Got {type(key).__name__} instead."
    if len(key) < MIN_KEY_LENGTH:
        return f"the access key must have at least {MIN_KEY_LENGTH} characters. Got {len(key)} instead."
    if key != key.strip() or any(ord(c) < 33 or ord(c) > 126 for c in key):
        return "the access key must be printable ASCII without spaces."
    return None


def load_secret_key(data_dir: str | os.PathLike[str]) -> bytes:
    """The server's cookie-signing secret, kept in ``data_dir/secret_key``.

    The first process to need it writes a random 32-byte key to a private temporary file
    (mode 0600) and links it into place; a process that loses that race reads the winner's
    key. So every worker process, and every restart, signs cookies with the same key.

    Parameters
    ----------
    data_dir : str or Path
        The data folder (created when missing).

    Returns
    -------
    bytes
        The secret (64 hex digits, as bytes).
    """
    folder = Path(data_dir)
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / SECRET_FILE
    if not path.exists():
        tmp = folder / f".{SECRET_FILE}.{os.getpid()}.{secrets.token_hex(4)}"
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        try:
            with os.fdopen(fd, "w", encoding="ascii") as handle:
                handle.write(secrets.token_hex(32))
                handle.flush()
                os.fsync(handle.fileno())
            try:
                os.link(tmp, path)  # fails when another process got there first
            except FileExistsError:
                pass
            except OSError:  # a file system without hard links: replace is atomic too
                if not path.exists():
                    os.replace(tmp, path)
        finally:
            tmp.unlink(missing_ok=True)
    mode = path.stat().st_mode & 0o777
    if mode & 0o077:
        logger.warning("%s was readable by others (mode %o); made it private (0600).", path, mode)
        path.chmod(0o600)
    secret = path.read_text(encoding="ascii").strip()
    if len(secret) < 32:
        raise OSError(f"{path} does not hold a usable secret; delete it to make a new one")
    return secret.encode("ascii")


def install_access(server: Flask) -> None:
    """Set up the signed session cookie and, when ``ACCESS_KEY`` is set, the key check.

    Call once from ``create_app`` after the Flask config is filled in. The key check runs
    before every other request hook (Dash's included), so nothing is served without the key.

    Raises
    ------
    forecasting_core.InputError
        When ``ACCESS_KEY`` is set but unusable (too short, spaces, not ASCII).
    """
    import forecasting_core as fc

    cfg = server.config
    if not cfg.get("SECRET_KEY"):
        cfg["SECRET_KEY"] = load_secret_key(cfg["DATA_DIR"])
    cfg["SESSION_COOKIE_NAME"] = "haulcast_session"
    cfg["SESSION_COOKIE_HTTPONLY"] = True
    cfg["SESSION_COOKIE_SAMESITE"] = "Lax"
    cfg["SESSION_COOKIE_SECURE"] = bool(cfg.get("ACCESS_COOKIE_SECURE", False))
    cfg["PERMANENT_SESSION_LIFETIME"] = timedelta(hours=float(cfg.get("ACCESS_SESSION_HOURS", 336)))
    server.after_request(_safety_headers)
    hosts = cfg.get("ALLOWED_HOSTS")
    if hosts:
        cfg["ALLOWED_HOSTS"] = tuple(str(h).lower() for h in hosts)
        server.before_request_funcs.setdefault(None, []).insert(0, _check_host)
    key = cfg.get("ACCESS_KEY")
    if key is None or key == "":
        cfg["ACCESS_KEY"] = None
        return
    problem = key_problem(key)
    if problem:
        raise fc.InputError(problem)
    server.extensions["haulcast_access_failures"] = _Failures(
        int(cfg.get("ACCESS_MAX_FAILURES", 10))
    )
    server.add_url_rule(KEY_PATH, "haulcast_key", _key_page, methods=["GET", "POST"])
    server.add_url_rule(LOGOUT_PATH, "haulcast_forget", _forget, methods=["GET", "POST"])
    # first of all request hooks, before Dash's own set-up and page routing
    server.before_request_funcs.setdefault(None, []).insert(0, _require_key)


def _safety_headers(response: Response) -> Response:
    """No MIME sniffing, no framing by other sites (a publish button under a decoy), no
    addresses (with analysis ids) sent to other sites as the referrer."""
    response.headers.setdefault("X-Content-Type-Options", "nosniff")
    response.headers.setdefault("X-Frame-Options", "SAMEORIGIN")
    response.headers.setdefault("Referrer-Policy", "same-origin")
    return response


def _check_host() -> Response | None:
    """Refuse a request whose Host header names another machine (DNS rebinding)."""
    host = (request.host or "").lower()
    name = host.rsplit(":", 1)[0] if not host.endswith("]") else host
    if name.startswith("[") and "]" in name:
        name = name[: name.index("]") + 1]
    if name in current_app.config["ALLOWED_HOSTS"]:
        return None
    return error_response(
        400,
        f"This server answers only to {', '.join(current_app.config['ALLOWED_HOSTS'])}. "
        f"Got Host {host[:80]!r} instead.",
    )


# ---------------------------------------------------------------------------------------------
# The check
# ---------------------------------------------------------------------------------------------


def _key() -> str:
    return str(current_app.config["ACCESS_KEY"])


def _fingerprint(key: str) -> str:
    """What the session cookie keeps: a keyed hash of the access key (never the key itself).

    Changing the key therefore logs every browser out.
    """
    secret = current_app.config["SECRET_KEY"]
    secret = secret if isinstance(secret, bytes) else str(secret).encode("utf-8")
    return hmac.new(
        secret, b"haulcast-access\x00" + key.encode("utf-8"), hashlib.sha256
    ).hexdigest()


def _matches(candidate: str) -> bool:
    return hmac.compare_digest(candidate.encode("utf-8"), _key().encode("utf-8"))


def _bearer() -> str | None:
    header = request.headers.get("Authorization", "")
    scheme, _, value = header.partition(" ")
    if scheme.lower() != "bearer" or not value.strip():
        return None
    return value.strip()


def _require_key() -> Response | None:
    if request.endpoint in ("haulcast_key", "haulcast_forget") or request.path in (
        KEY_PATH,
        LOGOUT_PATH,
    ):
        return None
    token = _bearer()
    if token is not None:
        if _limited():  # no key is even compared for an address that guessed too often
            return _too_many()
        if _matches(token):
            return None
        limited = _note_failure()
        if limited is not None:
            return limited
        return _refuse("The access key in the Authorization header is wrong.")
    stored = session.get(_SESSION_FIELD)
    if isinstance(stored, str) and hmac.compare_digest(
        stored.encode("ascii", "replace"), _fingerprint(_key()).encode("ascii")
    ):
        return None
    return _refuse(None)


def _refuse(message: str | None) -> Response:
    if wants_html():
        return _page(next_path=_local(request.full_path), status=401)
    response = error_response(
        401,
        message
        or "This Haulcast server needs its access key: send 'Authorization: Bearer <key>', "
        f"or open {KEY_PATH} in a browser.",
    )
    response.headers["WWW-Authenticate"] = 'Bearer realm="Haulcast"'
    return response


# ---------------------------------------------------------------------------------------------
# Wrong keys: a short wait each, and a per-address limit per minute
# ---------------------------------------------------------------------------------------------


class _Failures:
    """Wrong keys per client address in the last minute (this process only)."""

    def __init__(self, limit: int) -> None:
        self.limit = max(1, limit)
        self._lock = threading.Lock()
        self._seen: dict[str, collections.deque[float]] = {}

    def over(self, address: str) -> bool:
        """Whether the address already sent more wrong keys than allowed in the last minute."""
        now = time.monotonic()
        with self._lock:
            times = self._seen.get(address)
            while times and now - times[0] > 60:
                times.popleft()
            return bool(times) and len(times) > self.limit

    def add(self, address: str) -> bool:
        """Count one failure; True when the address is over the limit."""
        now = time.monotonic()
        with self._lock:
            times = self._seen.setdefault(address, collections.deque())
            while times and now - times[0] > 60:
                times.popleft()
            times.append(now)
            if len(self._seen) > 10_000:  # forget the oldest addresses, keep memory bounded
                for old in list(self._seen)[:5_000]:
                    self._seen.pop(old, None)
            return len(times) > self.limit


def _limited() -> bool:
    failures: _Failures = current_app.extensions["haulcast_access_failures"]
    return failures.over(request.remote_addr or "?")


def _too_many() -> Response:
    response = error_response(
        429, "Too many wrong access keys from this address; wait a minute and try again."
    )
    response.headers["Retry-After"] = "60"
    return response


def _note_failure() -> Response | None:
    failures: _Failures = current_app.extensions["haulcast_access_failures"]
    over = failures.add(request.remote_addr or "?")
    time.sleep(float(current_app.config.get("ACCESS_FAIL_DELAY", 0.25)))
    logger.warning("Wrong access key from %s", request.remote_addr)
    return _too_many() if over else None


# ---------------------------------------------------------------------------------------------
# The key page
# ---------------------------------------------------------------------------------------------


def _local(target: str | None) -> str:
    """``target`` if it is a path on this server, else ``/`` (no open redirects)."""
    target = (target or "").strip()
    if target.endswith("?"):
        target = target[:-1]
    parts = urlsplit(target)
    if (
        not target.startswith("/")
        or target.startswith(("//", "/\\"))
        or parts.scheme
        or parts.netloc
        or any(ord(c) < 32 for c in target)
        or target.startswith(KEY_PATH)
    ):
        return "/"
    return target


def _key_page() -> Response:
    if request.method == "GET":
        return _page(next_path=_local(request.args.get("next")), status=200)
    next_path = _local(request.form.get("next"))
    candidate = request.form.get("key", "")
    if candidate and _limited():
        return _too_many()
    if candidate and _matches(candidate):
        session.clear()
        session[_SESSION_FIELD] = _fingerprint(_key())
        session.permanent = True
        return redirect(next_path, code=303)
    limited = _note_failure() if candidate else None
    if limited is not None:
        return limited
    message = "That is not the access key of this server." if candidate else "Enter the access key."
    return _page(next_path=next_path, status=401, message=message)


def _forget() -> Response:
    session.clear()
    return redirect(KEY_PATH, code=303)


def _page(*, next_path: str, status: int, message: str | None = None) -> Response:
    body = _KEY_PAGE.format(
        action=escape(KEY_PATH),
        next=escape(next_path),
        message=(f'<p class="msg" role="alert">{escape(message)}</p>' if message else ""),
    )
    response = Response(body, status=status, mimetype="text/html")
    response.headers["Cache-Control"] = "no-store"
    response.headers["X-Frame-Options"] = "DENY"
    if status == 401:
        response.headers["WWW-Authenticate"] = 'Bearer realm="Haulcast"'
    return response


_KEY_PAGE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="robots" content="noindex"><link rel="icon" href="data:,">
<title>Access key \u00b7 Haulcast</title>
<style>
body{{font:16px/1.5 system-ui,-apple-system,"Segoe UI",sans-serif;background:#f3f6f7;color:#1d2b36;margin:0}}
main{{max-width:26rem;margin:12vh auto;padding:2rem;background:#fff;border:1px solid #d5dee2;border-radius:6px}}
h1{{font-size:1.35rem;margin:0 0 .25rem}} p{{margin:.5rem 0 1rem}}
label{{display:block;font-weight:600;margin-bottom:.25rem}}
input[type=password]{{box-sizing:border-box;width:100%;padding:.55rem;font:inherit;border:1px solid #8aa1ab;border-radius:4px}}
button{{margin-top:1rem;padding:.55rem 1.2rem;font:inherit;color:#fff;background:#0b5f7a;border:0;border-radius:4px;cursor:pointer}}
.msg{{color:#8a1c1c;background:#fbeaea;border-left:4px solid #b42318;padding:.5rem .75rem}}
.small{{font-size:.85rem;color:#53656f}}
</style></head>
<body><main>
<h1>Haulcast</h1>
<p>This team server asks for its access key. Ask the person who runs it.</p>
{message}
<form method="post" action="{action}">
<label for="key">Access key</label>
<input id="key" name="key" type="password" autocomplete="current-password" required autofocus>
<input type="hidden" name="next" value="{next}">
<button type="submit">Open Haulcast</button>
</form>
<p class="small">This browser remembers the key in a signed cookie until you forget it
(the link at the foot of every page) or the key changes.</p>
</main></body></html>
"""

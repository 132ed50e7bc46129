"""Start the dashboard: ``python -m app [--host 127.0.0.1] [--port 8050] [--data-dir DIR] [--workers N]``.

The server is waitress (pure Python). With ``--workers N`` above 1 (Linux only: elsewhere it
says so and serves with one process), the parent process binds the port, forks N worker processes that each build
their own app (their own SQLite connections) and serve the shared listening socket, and
supervises them: a worker that dies is replaced, SIGTERM or Ctrl+C stops them all.

Binding any address other than loopback needs an access key: ``$HAULCAST_ACCESS_KEY``, or else
one generated at start and printed once. When ``$HAULCAST_ACCESS_KEY`` is set, the key is
required on loopback too (a TLS reverse proxy on the same machine).
"""

from __future__ import annotations

import argparse
import ipaddress
import logging
import os
import signal
import socket
import sys
import time
from collections.abc import Sequence
from pathlib import Path
from typing import Any

logger = logging.getLogger("haulcast.server")

KEY_ENV = "HAULCAST_ACCESS_KEY"
LOOPBACK_HOSTS = ("127.0.0.1", "localhost", "[::1]")
MAX_WORKERS = 32
#: Workers that die this soon after starting count as failing to start.
_EARLY_DEATH_S = 10.0
_MAX_EARLY_DEATHS = 5


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="python -m app",
        description="Start the Haulcast dashboard (Intake, Model Bench, Forecast Board) with the demo data loaded.",
    )
    parser.add_argument(
        "--host",
        default="127.0.0.1",
        help="address to listen on (default 127.0.0.1: this machine only). Any other "
        f"address needs an access key: ${KEY_ENV}, or one generated and printed at start",
    )
    parser.add_argument("--port", type=int, default=8050, help="port to listen on (default 8050)")
    parser.add_argument(
        "--data-dir",
        default=None,
        help="folder for uploaded datasets and the result cache (default $HAULCAST_DATA_DIR or ~/.haulcast)",
    )
    parser.add_argument(
        "--redis-url",
        default=None,
        help="cache results in Redis at this URL instead of the data folder",
    )
    parser.add_argument(
        "--workers",
        type=int,
        default=1,
        help="server processes sharing the port (default 1; more than 1 on Linux only)",
    )
    parser.add_argument(
        "--threads", type=int, default=8, help="request threads per process (default 8)"
    )
    parser.add_argument(
        "--secure-cookie",
        action="store_true",
        help="mark the access cookie Secure (browsers send it over HTTPS only): set this "
        "behind a TLS reverse proxy",
    )
    parser.add_argument(
        "--trusted-proxy",
        default=None,
        metavar="ADDRESS",
        help="address of a reverse proxy whose X-Forwarded-For/-Proto/-Host headers are believed "
        "(e.g. 127.0.0.1); headers from anyone else are dropped",
    )
    parser.add_argument("--no-samples", action="store_true", help="do not load the demo datasets")
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    for name, value, low, high in (
        ("--port", args.port, 1, 65535),
        ("--workers", args.workers, 1, MAX_WORKERS),
        ("--threads", args.threads, 1, 256),
    ):
        if not low <= value <= high:
            print(
                f"error: {name} must be from {low} to {high}. Got {value} instead.", file=sys.stderr
            )
            return 2
    logging.basicConfig(
        level=logging.INFO, format="%(asctime)s %(levelname)s %(name)s: %(message)s"
    )
    from app.access import generate_key, key_problem, load_secret_key

    workers = args.workers
    if workers > 1 and not (sys.platform.startswith("linux") and hasattr(os, "fork")):
        # macOS has fork, but forking a process that has loaded system frameworks is unsafe there
        print(
            f"note: --workers {workers} is for Linux only; serving with 1 process "
            "(its threads still serve requests at once).",
            file=sys.stderr,
            flush=True,
        )
        workers = 1
    data_dir = Path(
        args.data_dir or os.environ.get("HAULCAST_DATA_DIR") or Path.home() / ".haulcast"
    ).expanduser()
    try:
        data_dir.mkdir(parents=True, exist_ok=True)
        load_secret_key(data_dir)  # one secret for every worker, made before any starts
    except OSError as err:
        print(f"error: cannot use the data folder {data_dir}: {err}", file=sys.stderr)
        return 2
    try:
        sock = bind(args.host, args.port)
    except OSError as err:  # e.g. the port is taken, or no such address here
        print(
            f"error: cannot listen on {args.host}:{args.port}: {err.strerror or err}",
            file=sys.stderr,
        )
        return 2

    key = os.environ.get(KEY_ENV) or None
    generated = False
    if key is not None:
        problem = key_problem(key)
        if problem:
            print(f"error: ${KEY_ENV}: {problem}", file=sys.stderr)
            return 2
    elif not is_loopback(sock):
        key, generated = generate_key(), True

    config: dict[str, Any] = {
        "LOAD_SAMPLES": not args.no_samples,
        "DATA_DIR": str(data_dir),
        "ACCESS_KEY": key,
        "ACCESS_COOKIE_SECURE": bool(args.secure_cookie),
        "TRUSTED_PROXY": args.trusted_proxy,
    }
    bound = sock.getsockname()[0]
    if key is None:  # open, loopback only: answer to loopback names only (DNS rebinding)
        config["ALLOWED_HOSTS"] = (*LOOPBACK_HOSTS, f"[{bound}]" if ":" in bound else bound)
    if args.redis_url:
        config["CACHE_REDIS_URL"] = args.redis_url
    host, port = sock.getsockname()[:2]
    shown = "127.0.0.1" if host in ("0.0.0.0", "::") else host
    shown = f"[{shown}]" if ":" in shown else shown
    lines = [f"Haulcast is running at http://{shown}:{port}/  (data in {data_dir})"]
    if workers > 1:
        lines.append(f"{workers} worker processes, {args.threads} threads each.")
    if generated:
        lines.append(f"Access key (generated for this run; set ${KEY_ENV} to choose one): {key}")
    elif key:
        lines.append(f"Access key: the one in ${KEY_ENV}.")
    else:
        lines.append("Open to this machine only (no access key).")
    lines.append("Press Ctrl+C to stop.")
    banner = "\n".join(lines)

    if workers == 1:
        return _serve_one(sock, config, args.threads, banner)
    return _supervise(sock, config, args.threads, workers, banner)


# ---------------------------------------------------------------------------------------------
# Sockets
# ---------------------------------------------------------------------------------------------


def bind(host: str, port: int) -> socket.socket:
    """A listening TCP socket on ``host:port`` (SO_REUSEADDR, backlog 1024)."""
    infos = socket.getaddrinfo(host or None, port, type=socket.SOCK_STREAM, flags=socket.AI_PASSIVE)
    family = infos[0][0]
    address = infos[0][4]
    sock = socket.create_server(address[:2], family=family, backlog=1024)
    sock.setblocking(False)
    return sock


def is_loopback(sock: socket.socket) -> bool:
    """Whether ``sock`` listens on a loopback address only (127.0.0.0/8 or ::1)."""
    host = sock.getsockname()[0]
    try:
        return ipaddress.ip_address(host.split("%")[0]).is_loopback
    except ValueError:
        return False


def _waitress(app: Any, sock: socket.socket, threads: int) -> Any:
    from waitress import create_server

    limit = int(app.server.config.get("MAX_CONTENT_LENGTH") or 0)
    proxy = app.server.config.get("TRUSTED_PROXY")
    extra: dict[str, Any] = {}
    if proxy:
        # the proxy's X-Forwarded-* headers say who the client is (the wrong-key limit counts
        # per client), which scheme and host it used (share links); from no one else
        extra = {
            "trusted_proxy": str(proxy),
            "trusted_proxy_count": 1,
            "trusted_proxy_headers": {
                "x-forwarded-for",
                "x-forwarded-proto",
                "x-forwarded-host",
                "x-forwarded-port",
            },
        }
    return create_server(
        app.server,
        sockets=[sock],
        threads=threads,
        ident="Haulcast",
        # waitress refuses a body far above Flask's limit itself; Flask answers the rest with
        # its own 413 message
        max_request_body_size=(limit + 1_048_576) if limit else 1_073_741_824,
        clear_untrusted_proxy_headers=True,
        **extra,
    )


def _build(config: dict[str, Any]) -> Any:
    from app import create_app

    return create_app(config)


def _warm_up_in_background(server: Any = None) -> None:
    import threading

    from app.warm import warm_start

    # compile the core's fast path; with a server, also fill the cache with the demo's answers
    threading.Thread(
        target=warm_start, args=(server,), name="haulcast-warm-up", daemon=True
    ).start()


# ---------------------------------------------------------------------------------------------
# One process
# ---------------------------------------------------------------------------------------------


def _serve_one(sock: socket.socket, config: dict[str, Any], threads: int, banner: str) -> int:
    import forecasting_core as fc

    try:
        app = _build(config)
    except OSError as err:
        print(f"error: cannot use the data folder: {err}", file=sys.stderr)
        return 2
    except fc.InputError as err:
        print(f"error: {err}", file=sys.stderr)
        return 2
    server = _waitress(app, sock, threads)
    logger.info("Worker %d serving.", os.getpid())
    print(banner, flush=True)
    # Compile the screening likelihood now, in the background, not on the first request.
    _warm_up_in_background(app.server)
    signal.signal(signal.SIGTERM, _exit_on_signal)
    try:
        server.run()
    except KeyboardInterrupt:  # pragma: no cover - waitress catches it
        pass
    print("Stopped.", flush=True)
    return 0


def _exit_on_signal(signum: int, _frame: Any) -> None:
    raise SystemExit(0)


# ---------------------------------------------------------------------------------------------
# Several processes: pre-fork
# ---------------------------------------------------------------------------------------------


class _Stop(Exception):
    pass


def _supervise(
    sock: socket.socket, config: dict[str, Any], threads: int, workers: int, banner: str
) -> int:
    """Fork ``workers`` children on ``sock`` and keep that many running until told to stop."""
    # Import the heavy modules (and compile the likelihood) once, before forking, so the
    # children share those pages of memory and start fast. No app is built here: each child
    # opens its own database connections after the fork.
    import app as _app_package  # noqa: F401
    import forecasting_core

    forecasting_core.warm_up()
    stopping: list[int] = []

    def on_signal(signum: int, _frame: Any) -> None:
        stopping.append(signum)

    signal.signal(signal.SIGTERM, on_signal)
    signal.signal(signal.SIGINT, on_signal)
    signal.signal(signal.SIGHUP, on_signal)
    parent = os.getpid()
    children: dict[int, float] = {}
    slots: dict[int, int] = {}
    early: list[float] = []

    def spawn(slot: int) -> None:
        pid = os.fork()
        if pid == 0:  # the child: never returns
            _child(sock, config, threads, parent, warm=slot == 0)
        children[pid] = time.monotonic()
        slots[pid] = slot

    print(banner, flush=True)
    for slot in range(workers):
        spawn(slot)
    status = 0
    try:
        while not stopping:
            time.sleep(0.2)
            for pid in list(children):
                done, code = _reap(pid)
                if not done:
                    continue
                started = children.pop(pid)
                slot = slots.pop(pid)
                if stopping:
                    break
                lived = time.monotonic() - started
                logger.warning(
                    "Worker %d stopped (%s) after %.0f s; starting another.",
                    pid,
                    _describe(code),
                    lived,
                )
                if lived < _EARLY_DEATH_S:
                    now = time.monotonic()
                    early[:] = [t for t in early if now - t < 60] + [now]
                    if len(early) >= _MAX_EARLY_DEATHS:
                        print(
                            "error: the worker processes keep stopping right after they start; "
                            "see the messages above. Giving up.",
                            file=sys.stderr,
                            flush=True,
                        )
                        status = 1
                        raise _Stop
                spawn(slot)
    except _Stop:
        pass
    finally:
        _stop_children(children)
        sock.close()
    print("Stopped.", flush=True)
    return status


def _reap(pid: int) -> tuple[bool, int]:
    try:
        done, code = os.waitpid(pid, os.WNOHANG)
    except ChildProcessError:
        return True, 0
    return done == pid, code


def _describe(code: int) -> str:
    if os.WIFSIGNALED(code):
        return f"signal {os.WTERMSIG(code)}"
    return f"exit code {os.WEXITSTATUS(code)}"


def _stop_children(children: dict[int, float], timeout: float = 10.0) -> None:
    """SIGTERM every child, wait up to ``timeout`` seconds, SIGKILL whoever is left."""
    for pid in children:
        try:
            os.kill(pid, signal.SIGTERM)
        except ProcessLookupError:
            pass
    deadline = time.monotonic() + timeout
    while children and time.monotonic() < deadline:
        for pid in list(children):
            if _reap(pid)[0]:
                children.pop(pid)
        time.sleep(0.05)
    for pid in list(children):
        logger.warning("Worker %d did not stop in %.0f s; killing it.", pid, timeout)
        try:
            os.kill(pid, signal.SIGKILL)
            os.waitpid(pid, 0)
        except (ProcessLookupError, ChildProcessError):
            pass
        children.pop(pid)


def _child(
    sock: socket.socket, config: dict[str, Any], threads: int, parent: int, *, warm: bool
) -> None:
    """One worker: build the app (after the fork), serve ``sock`` until SIGTERM, exit.

    The first worker (``warm``) also fills the shared result cache with the demo's answers;
    the others find them there.
    """
    code = 0
    try:
        signal.signal(signal.SIGTERM, _exit_on_signal)
        signal.signal(signal.SIGINT, _exit_on_signal)
        signal.signal(signal.SIGHUP, signal.SIG_DFL)
        _die_with_parent(parent)
        app = _build(config)
        server = _waitress(app, sock, threads)
        logger.info("Worker %d serving.", os.getpid())
        if warm:
            _warm_up_in_background(app.server)
        server.run()
    except SystemExit:
        pass
    except BaseException:  # noqa: BLE001 - a worker reports and exits; the parent restarts it
        logger.exception("Worker %d could not start", os.getpid())
        code = 3
    finally:
        logging.shutdown()
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(code)


def _die_with_parent(parent: int) -> None:
    """Ask Linux to SIGTERM this worker when the parent dies (even by SIGKILL)."""
    if sys.platform.startswith("linux"):
        try:
            import ctypes

            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(1, signal.SIGTERM)  # PR_SET_PDEATHSIG
        except (OSError, AttributeError):  # pragma: no cover - not glibc
            pass
    if os.getppid() != parent:  # the parent died before prctl took effect
        raise SystemExit(0)


if __name__ == "__main__":
    sys.exit(main())

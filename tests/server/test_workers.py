"""``python -m app``: the pre-fork supervisor replaces a worker that dies, and the start-up
decides about the access key from the address it is bound to."""

from __future__ import annotations

import os
import re
import signal
import socket
import time
from pathlib import Path

import pytest
from conftest import free_port

import app.__main__ as server_main

pytestmark = pytest.mark.server


def _worker_pids(server) -> list[int]:
    return [int(p) for p in re.findall(r"Worker (\d+) serving", server.log_text())]


def test_a_worker_that_dies_is_replaced_and_the_port_keeps_answering(keyed_server):
    pids = _worker_pids(keyed_server)
    victim = pids[-1]
    os.kill(victim, signal.SIGKILL)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and len(_worker_pids(keyed_server)) == len(pids):
        time.sleep(0.1)
    new = _worker_pids(keyed_server)
    assert len(new) == len(pids) + 1, keyed_server.log_text()[-2000:]
    assert new[-1] != victim
    assert f"Worker {victim} stopped (signal 9)" in keyed_server.log_text()
    assert keyed_server.alive()
    transport = keyed_server.transport()
    for _ in range(10):  # both workers answer (the kernel spreads connections between them)
        assert transport.request("GET", "/_dash-dependencies").status == 200
        transport.close()


def _args(tmp_path, *extra: str) -> list[str]:
    return ["--port", str(free_port()), "--data-dir", str(tmp_path), *extra]


@pytest.fixture
def captured(monkeypatch):
    """Run ``main`` up to serving: the config and banner it would serve with, no server."""
    seen: dict = {}

    def fake_serve(sock, config, threads, banner):
        seen.update(config=config, banner=banner, threads=threads, address=sock.getsockname())
        sock.close()
        return 0

    monkeypatch.setattr(server_main, "_serve_one", fake_serve)
    monkeypatch.delenv("HAULCAST_ACCESS_KEY", raising=False)
    return seen


def test_loopback_is_open_without_a_key(captured, tmp_path):
    assert server_main.main(_args(tmp_path)) == 0
    assert captured["config"]["ACCESS_KEY"] is None
    assert captured["config"]["ALLOWED_HOSTS"] == ("127.0.0.1", "localhost", "[::1]", "127.0.0.1")
    assert "Open to this machine only" in captured["banner"]


def test_any_other_address_gets_a_generated_key_printed_once(captured, tmp_path, monkeypatch):
    monkeypatch.setattr(server_main, "is_loopback", lambda sock: False)
    assert server_main.main(_args(tmp_path)) == 0
    key = captured["config"]["ACCESS_KEY"]
    assert key and len(key) >= 32
    assert captured["banner"].count(key) == 1
    assert "ALLOWED_HOSTS" not in captured["config"]  # a keyed server answers to any name
    assert "set $HAULCAST_ACCESS_KEY to choose one" in captured["banner"]


def test_the_key_from_the_environment_is_used_even_on_loopback(captured, tmp_path, monkeypatch):
    monkeypatch.setenv("HAULCAST_ACCESS_KEY", "team-shared-key-2026")
    assert server_main.main(_args(tmp_path)) == 0
    assert captured["config"]["ACCESS_KEY"] == "team-shared-key-2026"
    assert "team-shared-key-2026" not in captured["banner"]  # never echoed


@pytest.mark.parametrize(
    ("args", "env", "fragment"),
    [
        (["--workers", "0"], None, "--workers must be from 1 to 32. Got 0 instead."),
        (["--port", "70000"], None, "--port must be from 1 to 65535. Got 70000 instead."),
        (["--threads", "0"], None, "--threads must be from 1 to 256. Got 0 instead."),
        ([], "short", "at least 12 characters"),
    ],
)
def test_bad_start_options_are_a_plain_error(
    captured, tmp_path, monkeypatch, capsys, args, env, fragment
):
    if env:
        monkeypatch.setenv("HAULCAST_ACCESS_KEY", env)
    assert server_main.main(_args(tmp_path, *args)) == 2
    assert fragment in capsys.readouterr().err


def test_a_taken_port_is_a_plain_error(tmp_path, capsys):
    with socket.socket() as taken:
        taken.bind(("127.0.0.1", 0))
        taken.listen()
        port = taken.getsockname()[1]
        assert server_main.main(["--port", str(port), "--data-dir", str(tmp_path)]) == 2
    assert f"cannot listen on 127.0.0.1:{port}" in capsys.readouterr().err


@pytest.mark.parametrize("platform", ["darwin", "win32", "no-fork"])
def test_off_linux_several_workers_fall_back_to_one_with_a_note(
    captured, tmp_path, monkeypatch, capsys, platform
):
    if platform == "no-fork":
        monkeypatch.delattr(os, "fork")
    else:
        monkeypatch.setattr(server_main.sys, "platform", platform)
    assert server_main.main(_args(tmp_path, "--workers", "3")) == 0
    assert "is for Linux only; serving with 1 process" in capsys.readouterr().err
    assert "worker processes" not in captured["banner"]


def test_secure_cookie_is_passed_to_the_app(captured, tmp_path):
    assert server_main.main(_args(tmp_path, "--secure-cookie")) == 0
    assert captured["config"]["ACCESS_COOKIE_SECURE"] is True


def _hammer_cache(folder: str, writer: int, rounds: int) -> int:
    """Write ``rounds`` complete values under one shared key; count torn values read back."""
    import hashlib

    from cachelib import FileSystemCache

    from app.cache import cache_config

    cfg = cache_config({}, Path(folder))
    store = FileSystemCache(cfg["CACHE_DIR"], threshold=cfg["CACHE_THRESHOLD"])
    torn = 0
    for i in range(rounds):
        body = (f"{writer}-{i}-".encode() * 10_000)[:100_000]
        store.set("shared", (hashlib.sha256(body).hexdigest(), body))
        got = store.get("shared")
        if got is not None and hashlib.sha256(got[1]).hexdigest() != got[0]:
            torn += 1
    return torn


def test_the_result_cache_is_safe_with_writers_in_several_processes(tmp_path):
    """flask-caching's FileSystemCache (cachelib) writes a temporary file and renames it into
    place (os.replace, atomic on POSIX), so a reader in any process gets a whole value or none.
    Four processes write 100 kB values under one key while reading it back."""
    import multiprocessing

    with multiprocessing.get_context("fork").Pool(4) as pool:
        torn = pool.starmap(_hammer_cache, [(str(tmp_path), w, 30) for w in range(4)])
    assert torn == [0, 0, 0, 0]
    assert not [p for p in (tmp_path / "cache").iterdir() if p.name.endswith(".__wz_cache")]


@pytest.mark.parametrize("proxy", [None, "127.0.0.1"])
def test_forwarded_headers_are_believed_only_from_the_trusted_proxy(tmp_path, proxy):
    from app import create_app

    app = create_app(
        {
            "DATA_DIR": str(tmp_path),
            "CACHE_TYPE": "SimpleCache",
            "LOAD_SAMPLES": False,
            "TRUSTED_PROXY": proxy,
        }
    )
    sock = server_main.bind("127.0.0.1", free_port())
    try:
        server = server_main._waitress(app, sock, 2)
        assert server.adj.trusted_proxy == proxy
        assert server.adj.clear_untrusted_proxy_headers is True
        if proxy:
            assert "x-forwarded-for" in server.adj.trusted_proxy_headers
        server.close()
    finally:
        sock.close()

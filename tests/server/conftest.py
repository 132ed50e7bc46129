"""Real Haulcast servers on loopback for the reliability tests.

``python -m app --port <free> --data-dir <tmp> --workers 2`` runs as a subprocess in its own
process group (so a test can SIGKILL the parent and its workers at once); every start waits
until each worker has said it is serving, bounded in time, and every server is stopped in
teardown whatever the test did.
"""

from __future__ import annotations

import os
import re
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
from dash_client import DashClient, HttpTransport

ROOT = Path(__file__).resolve().parents[2]
KEY = "loopback-test-key-5b1f0c"
START_TIMEOUT_S = 90.0


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@dataclass
class Server:
    proc: subprocess.Popen
    port: int
    data_dir: Path
    log: Path
    key: str | None

    @property
    def auth(self) -> dict[str, str]:
        return {"Authorization": f"Bearer {self.key}"} if self.key else {}

    def transport(self, *, key: bool = True, timeout: float = 60) -> HttpTransport:
        return HttpTransport(
            "127.0.0.1", self.port, headers=self.auth if key else {}, timeout=timeout
        )

    def client(self, callbacks=None) -> DashClient:
        return DashClient(self.transport(), callbacks)

    def log_text(self) -> str:
        return self.log.read_text(encoding="utf-8", errors="replace")

    def serving_lines(self) -> int:
        return len(re.findall(r"Worker \d+ serving", self.log_text()))

    def alive(self) -> bool:
        return self.proc.poll() is None

    def kill(self) -> None:
        """SIGKILL the parent and every worker at once (no chance to clean up)."""
        try:
            os.killpg(self.proc.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        self.proc.wait(timeout=10)
        _wait_group_gone(self.proc.pid)

    def stop(self, timeout: float = 15) -> int | None:
        """SIGTERM the parent (it stops its workers); SIGKILL the group if that takes too long."""
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout=timeout)
            except subprocess.TimeoutExpired:
                pass
        code = self.proc.poll()
        try:
            os.killpg(self.proc.pid, signal.SIGKILL)  # stragglers, if any
        except ProcessLookupError:
            pass
        if self.proc.poll() is None:
            self.proc.wait(timeout=10)
        _wait_group_gone(self.proc.pid)
        return code


def _wait_group_gone(pgid: int, timeout: float = 10) -> None:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        try:
            os.killpg(pgid, 0)
        except ProcessLookupError:
            return
        time.sleep(0.05)


def start_server(
    data_dir: Path,
    *,
    workers: int = 2,
    key: str | None = KEY,
    samples: bool = False,
    threads: int = 8,
    log_name: str = "server.log",
) -> Server:
    """Start ``python -m app`` on a free loopback port and wait until every worker serves."""
    data_dir.mkdir(parents=True, exist_ok=True)
    port = free_port()
    env = {k: v for k, v in os.environ.items() if k != "HAULCAST_ACCESS_KEY"}
    env.update(OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1", PYTHONUNBUFFERED="1")
    if key:
        env["HAULCAST_ACCESS_KEY"] = key
    log = data_dir.parent / f"{data_dir.name}-{log_name}"
    args = [
        sys.executable,
        "-m",
        "app",
        "--port",
        str(port),
        "--data-dir",
        str(data_dir),
        "--workers",
        str(workers),
        "--threads",
        str(threads),
    ]
    if not samples:
        args.append("--no-samples")
    before = len(re.findall(r"Worker \d+ serving", log.read_text())) if log.exists() else 0
    with log.open("ab") as out:
        proc = subprocess.Popen(
            args, cwd=ROOT, env=env, stdout=out, stderr=subprocess.STDOUT, start_new_session=True
        )
    server = Server(proc, port, data_dir, log, key)
    deadline = time.monotonic() + START_TIMEOUT_S
    while time.monotonic() < deadline:
        if proc.poll() is not None:
            raise AssertionError(f"the server exited with {proc.returncode}:\n{server.log_text()}")
        if server.serving_lines() - before >= workers:
            break
        time.sleep(0.1)
    else:
        server.stop()
        raise AssertionError(
            f"the server did not start in {START_TIMEOUT_S} s:\n{server.log_text()}"
        )
    reply = server.transport().request("GET", "/_dash-dependencies")
    assert reply.status == 200, (reply.status, reply.text[:300])
    return server


@pytest.fixture(scope="session")
def keyed_server(tmp_path_factory) -> Iterator[Server]:
    """One 2-worker server with an access key, shared by the hostile, access and load tests."""
    server = start_server(tmp_path_factory.mktemp("keyed") / "data")
    yield server
    server.stop()
    print("\n--- server log (tail) ---\n" + "\n".join(server.log_text().splitlines()[-15:]))


@pytest.fixture(scope="session")
def callbacks(keyed_server):
    return keyed_server.client().callbacks

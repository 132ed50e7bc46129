"""How fast the dashboard answers in real Chromium (a measurement, not a test).

Starts ``python -m app`` on a free loopback port with a fresh data folder, waits for the
background warm-up, then drives Debian's Chromium with Playwright:

1. first Model Bench result for the demo series (48 annual values, default settings: every
   order up to p, q = 5 with and without drift, benchmarks, refit hindcast), from opening
   /bench to the candidates table;
2. pressing "Run comparison" with a new horizon (4 steps; every other setting the default, so
   nothing is cached) until its timing line changes;
3. switching pages with cached results (Bench -> Board -> Bench ...), time until the page's
   main content is drawn;
4. server memory (resident set size of the server process) with 10 browser sessions open.

Targets of the dashboard issue: 2 s, 300 ms, 400 MB. Run:
``.venv/bin/python benchmarks/app_speed.py [--repeats 5]``; medians are printed.
"""

from __future__ import annotations

import argparse
import socket
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path

from playwright.sync_api import sync_playwright

ROOT = Path(__file__).resolve().parents[1]
ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
    "--disable-quic",
]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _rss_mb(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024.0
    return float("nan")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=9, help="page switches to time (default 9)")
    args = parser.parse_args()
    port = _free_port()
    base = f"http://127.0.0.1:{port}"
    data = tempfile.mkdtemp(prefix="haulcast-bench-")
    server = subprocess.Popen(
        [sys.executable, "-m", "app", "--port", str(port), "--data-dir", data],
        cwd=ROOT,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    try:
        for _ in range(120):
            try:
                urllib.request.urlopen(base + "/intake", timeout=2).read()
                break
            except OSError:
                time.sleep(0.5)
        time.sleep(5)  # let the background warm-up of the compiled screen finish
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path="/usr/bin/chromium", args=ARGS)
            page = browser.new_page(viewport={"width": 1440, "height": 1000})
            started = time.perf_counter()
            page.goto(base + "/bench")
            page.locator("#bench-candidates tbody tr td.dash-cell").first.wait_for(timeout=120_000)
            first = time.perf_counter() - started

            for control, value in (("#bench-horizon", "4"),):
                page.locator(control).fill(value)
                page.locator(control).press("Tab")
            page.locator("#bench-timing").filter(has_text="Answered in").wait_for(timeout=120_000)
            before = page.locator("#bench-timing").inner_text()
            started = time.perf_counter()
            page.locator("#bench-run").click()
            page.wait_for_function(
                "b => { const t = document.querySelector('#bench-timing').innerText;"
                " return t !== b && t.startsWith('Answered in'); }",
                arg=before,
                timeout=120_000,
            )
            rerun = time.perf_counter() - started

            # visit the board once so both pages' results are cached before timing switches
            page.get_by_role("link", name="Forecast Board").first.click()
            page.locator("#board-table-rows").first.wait_for(timeout=120_000)
            page.get_by_role("link", name="Model Bench").first.click()
            page.locator("#bench-candidates tbody tr").first.wait_for(timeout=60_000)
            switches = []
            for i in range(args.repeats):
                target, ready = (("Forecast Board", "#board-table-rows"), ("Model Bench", "#bench-candidates tbody tr"))[i % 2]
                time.sleep(1.0)  # a user reads the page before switching; let its charts finish
                started = time.perf_counter()
                page.get_by_role("link", name=target).first.click()
                page.locator(ready).first.wait_for(timeout=60_000)
                switches.append(time.perf_counter() - started)

            contexts = [browser.new_context() for _ in range(10)]
            for ctx in contexts:
                ctx.new_page().goto(base + "/board")
            for ctx in contexts:
                ctx.pages[0].locator("#board-table-rows").first.wait_for(timeout=120_000)
            memory = _rss_mb(server.pid)
            browser.close()
    finally:
        server.terminate()
        server.wait(timeout=20)

    print(f"{'measure':44s} {'measured':>10s} {'target':>8s}")
    print(f"{'first Model Bench result (open /bench)':44s} {first:9.2f}s {'2.00s':>8s}")
    print(f"{'new comparison after Run (defaults, horizon 4)':44s} {rerun:9.2f}s {'2.00s':>8s}")
    label = f"page switch, cached (median of {len(switches)})"
    print(f"{label:44s} {1000 * statistics.median(switches):8.0f}ms {'300ms':>8s}")
    print(f"{'server memory, 10 sessions open':44s} {memory:8.0f}MB {'400MB':>8s}")


if __name__ == "__main__":
    main()

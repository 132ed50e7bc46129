"""How fast the dashboard answers in real Chromium (a measurement, not a test).

Starts ``python -m app`` on a free loopback port with a fresh data folder, waits for the
background warm-up (the server logs when it has compiled the core and prepared the demo's
default comparisons), then drives Debian's Chromium with Playwright:

1. first Model Bench answer for the demo series (48 annual values, default settings: every
   order up to p, q = 5 with and without drift, benchmarks, refit hindcast), from opening
   /bench in a new browser context (a new visitor) to the candidates table; the median over
   several visitors, with where the time went (page load, Dash callbacks, drawing);
2. pressing "Run comparison" with a new horizon (4 steps; every other setting the default, so
   the hindcast is not cached), after the first answer's charts are drawn, until its timing
   line changes;
3. switching pages with cached results (Bench -> Board -> Bench ...), time until the page's
   main content is drawn;
4. server memory (resident set size of the server process) with 10 browser sessions open.

Targets: 1 s for the first answer after warm-up (speed issue); 2 s, 300 ms, 400 MB (dashboard
issue). Run: ``.venv/bin/python benchmarks/app_speed.py [--repeats 5]``; medians are printed.
``--no-wait`` waits a fixed 8 s instead of for the server's log line (for servers without it).
"""

from __future__ import annotations

import argparse
import os
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
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


READY = "Prepared the demo's default comparisons"


def _follow(stream, lines: list[str]) -> None:
    for line in iter(stream.readline, ""):
        lines.append(line.rstrip())


#: Marks, in the page's own clock, when the first candidates row is in the document.
_SEEN = """
window.__hcSeen = null;
new MutationObserver(() => {
  if (!window.__hcSeen && document.querySelector('#bench-candidates tbody tr td.dash-cell'))
    window.__hcSeen = performance.now();
}).observe(document, {subtree: true, childList: true});
"""


def _first_answer(browser, base: str) -> dict[str, float]:
    """One new visitor opens /bench: seconds to the page's load event and to the candidates.

    ``answer`` is the page's own time from navigation start to the first candidates row in
    the document (what the visitor sees); ``wall`` the same seen from Playwright, which adds
    its polling and messaging (large on a loaded machine).
    """
    context = browser.new_context(viewport={"width": 1440, "height": 1000})
    context.add_init_script(_SEEN)
    page = context.new_page()
    callbacks: list[float] = []
    sent: dict[object, float] = {}

    def on_request(request) -> None:
        if "_dash-update-component" in request.url:
            sent[request] = time.perf_counter()

    def on_done(request) -> None:
        if request in sent:
            callbacks.append(time.perf_counter() - sent.pop(request))

    page.on("request", on_request)
    page.on("requestfinished", on_done)
    started = time.perf_counter()
    page.goto(base + "/bench", wait_until="load")
    loaded = time.perf_counter() - started
    page.locator("#bench-candidates tbody tr td.dash-cell").first.wait_for(timeout=120_000)
    wall = time.perf_counter() - started
    answer = page.evaluate("window.__hcSeen") / 1000.0
    n_callbacks = len(callbacks)
    context.close()
    return {
        "answer": answer,
        "wall": wall,
        "load": loaded,
        "callbacks": n_callbacks,
        "callback_s": sum(callbacks),
        "slowest_callback": max(callbacks, default=0.0),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=9, help="page switches to time (default 9)")
    parser.add_argument("--visitors", type=int, default=5, help="first answers to time (default 5)")
    parser.add_argument(
        "--no-wait", action="store_true", help="do not wait for the server's warm-up and demo preparation"
    )
    args = parser.parse_args()
    port = _free_port()
    base = f"http://127.0.0.1:{port}"
    data = tempfile.mkdtemp(prefix="haulcast-bench-")
    server = subprocess.Popen(
        [sys.executable, "-m", "app", "--port", str(port), "--data-dir", data],
        cwd=ROOT,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        text=True,
    )
    log: list[str] = []
    threading.Thread(target=_follow, args=(server.stderr, log), daemon=True).start()
    launched = time.perf_counter()
    try:
        for _ in range(120):
            try:
                urllib.request.urlopen(base + "/intake", timeout=2).read()
                break
            except OSError:
                time.sleep(0.5)
        serving = time.perf_counter() - launched
        warm = float("nan")
        if args.no_wait:
            time.sleep(8)  # about the core's warm-up (compiling the screen) on this machine
        else:
            deadline = time.perf_counter() + 300
            while not any(READY in line for line in log) and time.perf_counter() < deadline:
                time.sleep(0.2)
            warm = time.perf_counter() - launched
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path="/usr/bin/chromium", args=ARGS)
            # the very first visitor also pays Chromium's start-up (and, without the server's
            # preparation, the comparison itself); reported apart from the median
            opening = _first_answer(browser, base)
            visits = [_first_answer(browser, base) for _ in range(max(1, args.visitors))]
            first = statistics.median(v["answer"] for v in visits)
            page = browser.new_page(viewport={"width": 1440, "height": 1000})
            page.goto(base + "/bench")
            page.locator("#bench-candidates tbody tr td.dash-cell").first.wait_for(timeout=120_000)

            for control, value in (("#bench-horizon", "4"),):
                page.locator(control).fill(value)
                page.locator(control).press("Tab")
            page.locator("#bench-timing").filter(has_text="Answered in").wait_for(timeout=120_000)
            # a user reads the table first: let the picked model's charts finish drawing
            page.locator("#bench-resid-qq .main-svg").first.wait_for(timeout=120_000)
            time.sleep(1.0)
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

    print(f"server answering after {serving:.1f} s; warm-up and demo prepared after {warm:.1f} s")
    for key, what in (
        ("wall", "as Playwright sees it"),
        ("load", "page load event"),
        ("callback_s", "Dash callbacks, summed"),
        ("slowest_callback", "slowest callback"),
    ):
        values = ", ".join(f"{v[key]:.2f}" for v in visits)
        print(f"  first answer, {what:24s} median {statistics.median(v[key] for v in visits):.2f} s ({values})")
    print(f"  callbacks before the table: {', '.join(str(v['callbacks']) for v in visits)}")
    print(f"  the very first visitor: {opening['answer']:.2f} s in the page, {opening['wall']:.2f} s wall")
    print(f"load average (1 min) at the end: {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    print(f"{'measure':44s} {'measured':>10s} {'target':>8s}")
    label = f"first Model Bench answer (median of {len(visits)})"
    print(f"{label:44s} {first:9.2f}s {'1.00s':>8s}")
    print(f"{'new comparison after Run (defaults, horizon 4)':44s} {rerun:9.2f}s {'2.00s':>8s}")
    label = f"page switch, cached (median of {len(switches)})"
    print(f"{label:44s} {1000 * statistics.median(switches):8.0f}ms {'300ms':>8s}")
    print(f"{'server memory, 10 sessions open':44s} {memory:8.0f}MB {'400MB':>8s}")


if __name__ == "__main__":
    main()

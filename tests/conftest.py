"""Shared fixtures for the whole suite."""

from __future__ import annotations

import os

# Haulcast's fits multiply tiny matrices; a multi-threaded BLAS only spin-waits on them (we
# measured statsmodels fits 10-30x slower with two OpenBLAS threads on a loaded 2-core machine).
# Child processes (batch workers, served apps) inherit the environment variable.
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import shutil  # noqa: E402
from collections.abc import Iterator  # noqa: E402
from pathlib import Path  # noqa: E402
from typing import Any  # noqa: E402

import pytest  # noqa: E402
from threadpoolctl import threadpool_limits  # noqa: E402

_BLAS_LIMIT = threadpool_limits(limits=1, user_api="blas")

ROOT = Path(__file__).resolve().parents[1]
SAMPLE_DATA = ROOT / "sample_data"
TEST_DATA = Path(__file__).resolve().parent / "data"
CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
    "--disable-quic",
]


@pytest.fixture(scope="session")
def browser() -> Iterator[Any]:
    """Debian's Chromium driven by Playwright (never a downloaded browser).

    One Playwright instance per test session: its sync API refuses to start a second one
    while the first runs, so every browser test (tests/browser, tests/server) shares this.
    """
    executable = str(CHROMIUM) if CHROMIUM.exists() else shutil.which("chromium")
    if not executable:
        pytest.skip("Debian's chromium is not installed (sudo apt-get install -y chromium)")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        chromium = pw.chromium.launch(executable_path=executable, args=CHROMIUM_ARGS, headless=True)
        try:
            yield chromium
        finally:
            chromium.close()


@pytest.fixture(scope="session")
def sample_dir() -> Path:
    return SAMPLE_DATA


@pytest.fixture(scope="session")
def test_data_dir() -> Path:
    return TEST_DATA


@pytest.fixture(scope="session")
def nile():
    """Nile river annual flow at Aswan, 1871-1970 (open data shipped by statsmodels)."""
    import pandas as pd
    import statsmodels.api as sm

    data = sm.datasets.nile.load_pandas().data
    index = pd.period_range(str(int(data["year"].iloc[0])), periods=len(data), freq="Y")
    return pd.Series(data["volume"].to_numpy(float), index=index, name="nile")

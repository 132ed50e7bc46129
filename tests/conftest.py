"""Shared fixtures for the whole suite."""

from __future__ import annotations

import os

# Haulcast's fits multiply tiny matrices; a multi-threaded BLAS only spin-waits on them (we
# measured statsmodels fits 10-30x slower with two OpenBLAS threads on a loaded 2-core machine).
# Child processes (batch workers, served apps) inherit the environment variable.
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

from pathlib import Path  # noqa: E402

import pytest  # noqa: E402
from threadpoolctl import threadpool_limits  # noqa: E402

_BLAS_LIMIT = threadpool_limits(limits=1, user_api="blas")

ROOT = Path(__file__).resolve().parents[1]
SAMPLE_DATA = ROOT / "sample_data"
TEST_DATA = Path(__file__).resolve().parent / "data"


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

"""Shared fixtures for the whole suite."""

from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SAMPLE_DATA = ROOT / "sample_data"
TEST_DATA = Path(__file__).resolve().parent / "data"


@pytest.fixture(scope="session")
def sample_dir() -> Path:
    return SAMPLE_DATA


@pytest.fixture(scope="session")
def test_data_dir() -> Path:
    return TEST_DATA

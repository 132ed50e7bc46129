"""The on-page forecast table writes every number of a table with the same decimals."""

from __future__ import annotations

import re

import pytest

import forecasting_core as fc
from app import tables


@pytest.mark.parametrize(
    ("values", "decimals"),
    [([16771.0, 900.0], 0), ([38.2, 41.0], 1), ([1.2, 3.4], 2), ([0.31, -0.2], 3), ([], 3)],
)
def test_table_decimals_follow_the_typical_size(values, decimals):
    assert tables.table_decimals(values) == decimals


def test_forecast_rows_use_one_format(forecast: fc.Forecast):
    # Nile flow forecasts are in the hundreds: whole numbers throughout, no '779.4 - 915' mix.
    for row in tables.forecast_rows(forecast):
        for key in ("mean", "median", "r50", "r80", "r95"):
            assert not re.search(r"\d\.\d", row[key]), row

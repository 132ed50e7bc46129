"""Intake's plain words: the transform note and the Errors card's hint, on real core results.

Data: the Nile river flow series that statsmodels ships (statsmodels.datasets.nile, annual
volumes 1871-1970, 10^8 m^3), with one value set to 0 where a case needs a log to be impossible.
"""

from __future__ import annotations

import pandas as pd
import pytest

import forecasting_core as fc
from app.intake_views import error_hint, transform_note


def _text(parts) -> str:
    return "".join(p if isinstance(p, str) else str(p.children) for p in parts)


def test_transform_note_for_a_zero_reads_as_one_sentence(nile: pd.Series):
    y = nile.copy()
    y.iloc[22] = 0.0  # 1893
    spec = fc.choose_transform(y, "auto")
    assert spec.name == "none"
    text = _text(transform_note("auto", spec))
    # the core's reason "because the series has a value at or below 0 (...), so a log is
    # impossible" without its "because" ("Because X, so Y" is not a sentence)
    assert "Because" not in text, text
    assert "The series has a value at or below 0 (0.0 in 1893), so a log is impossible." in text


@pytest.mark.parametrize(
    ("n_err", "unusable", "expected"),
    [
        (0, 0, "none"),
        # trial: 12 errors (10 of them rows of a series that stays usable), 2 series stopped
        (12, 2, "2 series cannot be used"),
        (1, 1, "1 series cannot be used"),
        (3, 0, "no series stopped"),
    ],
)
def test_errors_card_counts_the_series_the_errors_stop(n_err, unusable, expected):
    assert error_hint(n_err, unusable) == expected

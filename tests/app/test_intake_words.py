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


def test_series_set_aside_as_monthly_is_listed_as_not_usable_and_counted(nile: pd.Series, tmp_path):
    # a long file: the Nile flow by year, then 24 rows of a series with monthly times (the
    # same flow values); one file holds one frequency, so the core sets the monthly one aside
    from app.intake_views import series_table_view, set_aside, summary_view

    rows = [("nile", str(p.year), v) for p, v in nile.items()]
    rows += [
        ("monthly_t", f"{1950 + i // 12}-{i % 12 + 1:02d}", v) for i, v in enumerate(nile[:24])
    ]
    path = tmp_path / "mixed.csv"
    pd.DataFrame(rows, columns=["series", "year", "value"]).to_csv(path, index=False)
    table = fc.read_table(path)
    assert "monthly_t" not in table.info
    reasons = set_aside(table)
    assert list(reasons) == ["monthly_t"] and "months" in reasons["monthly_t"]
    listed = str(series_table_view(table))
    assert "monthly_t" in listed and "Not read. " in listed
    cards = str(summary_view(table))
    # 1 usable of the 2 series in the file; the Errors card's count of stopped series agrees
    assert "1 of 2" in cards and "1 series cannot be used" in cards

    class _Store:  # the two store calls the upload message makes
        def meta(self, _id):
            return type("Meta", (), {"filename": "mixed.csv"})()

        def load_table(self, _id):
            return table

    from app.intake_views import upload_message

    assert "Read mixed.csv: 2 series, 1 usable; 1 error" in str(upload_message(_Store(), "x"))


def test_difference_cards_keep_d_and_D_apart_under_capitals(nile: pd.Series):
    # the card labels are shown in capitals (CSS text-transform): the letters d and D are put
    # in the values, whose case is kept, so "DIFFERENCES (D)" never sits beside "(D)"
    from app.intake_views import stationarity_stats

    report = fc.assess_stationarity(nile)
    labels = [c.children[0].children for c in stationarity_stats(report).children]
    values = [c.children[1].children for c in stationarity_stats(report).children]
    assert labels[0] == "Differences" and values[0] == f"d = {report.d}"
    assert all("(d)" not in lab and "(D)" not in lab for lab in labels)

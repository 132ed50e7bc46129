"""A series that is never negative: bands and medians below zero are shown as 0, with a note.

References: for any monotone non-decreasing g, the p-quantile of g(Y) is g(q_p) (the quantile
function commutes with monotone maps; e.g. Casella & Berger, Statistical Inference, 2nd ed.,
ch. 2, from memory), so the quantiles of max(Y, 0) are max(q_p, 0); for R > 0,
P(max(Y, 0) < R) = P(Y < R). The mean of a normal censored at 0 is checked against scipy's
numerical expectation (scipy.stats.norm.expect).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import forecasting_core as fc
from forecasting_core._forecast import predictive
from forecasting_core._search import fit_order

NONE = fc.TransformSpec("none")


def annual(values, start: int = 1986, name: str = "mullet_t") -> pd.Series:
    index = pd.period_range(str(start), periods=len(values), freq="Y")
    return pd.Series(np.asarray(values, dtype=float), index=index, name=name)


@pytest.fixture(scope="module")
def with_zeros() -> fc.Candidate:
    # A white-noise level near zero with some zero years (a series with zeros cannot be logged).
    rng = np.random.default_rng(41)
    y = np.maximum(0.0, 25.0 + 20.0 * rng.normal(size=40)).round(1)
    assert (y == 0).any()
    c = fit_order(annual(y), (0, 0, 0), None, True, NONE)
    assert c.ok
    return c


def test_bands_below_zero_are_zero_and_the_note_names_the_years(with_zeros):
    f = fc.make_forecast(with_zeros, horizon=3, levels=(50, 80, 95))
    cols = ["median", "lo50", "hi50", "lo80", "hi80", "lo95", "hi95"]
    assert (f.table[cols].to_numpy() >= 0).all()
    assert (f.table["lo95"] == 0).all()
    note = [w for w in f.warnings if "below zero" in w]
    assert len(note) == 1
    assert note[0].startswith(
        "The model's lower band went below zero in 2026\u20132028; shown as 0"
    )
    assert "cannot be negative" in note[0]


def test_clipped_band_ends_are_the_quantiles_of_max_y_0(with_zeros):
    mu, var = predictive(with_zeros, 3)
    sd = np.sqrt(var)
    f = fc.make_forecast(with_zeros, horizon=3, levels=(80, 95))
    for lv in (80, 95):
        lo = stats.norm.ppf(0.5 - lv / 200, mu, sd)
        hi = stats.norm.ppf(0.5 + lv / 200, mu, sd)
        np.testing.assert_allclose(f.table[f"lo{lv}"], np.maximum(lo, 0), rtol=1e-9, atol=1e-9)
        np.testing.assert_allclose(f.table[f"hi{lv}"], hi, rtol=1e-9)
    # the mean of the clipped quantity, E[max(Y, 0)], against scipy's numerical expectation
    expected = [
        stats.norm.expect(lambda x: max(x, 0.0), loc=m, scale=s)
        for m, s in zip(mu, sd, strict=True)
    ]
    np.testing.assert_allclose(f.table["mean"], expected, rtol=1e-6)


@pytest.mark.parametrize("reference", [5.0, 20.0])
def test_chance_below_a_positive_reference_is_unchanged(with_zeros, reference):
    mu, var = predictive(with_zeros, 3)
    f = fc.make_forecast(with_zeros, horizon=3, reference=reference)
    np.testing.assert_allclose(
        f.table["prob_below_reference"], stats.norm.cdf(reference, mu, np.sqrt(var)), rtol=1e-9
    )


def test_a_reference_at_zero_is_never_reached(with_zeros):
    f = fc.make_forecast(with_zeros, horizon=3, reference=0.0)
    assert (f.table["prob_below_reference"] == 0).all()
    assert any("its chance is 0" in w for w in f.warnings)


def test_a_series_with_negative_values_is_never_clipped():
    # An anomaly index (negative values on record) keeps its negative band ends.
    rng = np.random.default_rng(42)
    c = fit_order(annual(0.5 * rng.normal(size=40), name="anomaly"), (0, 0, 0), None, True, NONE)
    f = fc.make_forecast(c, horizon=3, levels=(95,))
    assert (f.table["lo95"] < 0).all()
    assert not any("below zero" in w for w in f.warnings)


def test_bands_well_above_zero_are_untouched():
    rng = np.random.default_rng(43)
    c = fit_order(annual(1000 + 20 * rng.normal(size=40)), (0, 0, 0), None, True, NONE)
    f = fc.make_forecast(c, horizon=3, levels=(95,))
    mu, var = predictive(c, 3)
    np.testing.assert_allclose(f.table["lo95"], stats.norm.ppf(0.025, mu, np.sqrt(var)), rtol=1e-9)
    np.testing.assert_allclose(f.table["mean"], mu, rtol=1e-12)
    assert not any("below zero" in w for w in f.warnings)


def test_the_note_reaches_the_batch_record():
    # The batch/CLI record carries the forecast's warnings (the same path the Board reads).
    from forecasting_core._batch import compute_one

    rng = np.random.default_rng(41)
    y = annual(np.maximum(0.0, 25.0 + 20.0 * rng.normal(size=40)).round(1))
    _, forecast, record = compute_one(y, 3, transform="none")
    assert (forecast.table["lo95"] >= 0).all()
    assert any("below zero" in w for w in record["warnings"])

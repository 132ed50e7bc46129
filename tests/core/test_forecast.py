"""Forecast bands against closed forms (Box, Jenkins, Reinsel & Ljung 2015, ch. 5) and scipy."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from scipy.signal import lfilter

import forecasting_core as fc
from forecasting_core._forecast import predictive
from forecasting_core._search import fit_order

NONE = fc.TransformSpec("none")
LOG = fc.TransformSpec("log")


def annual(values, start: int = 1950, name: str = "y") -> pd.Series:
    return pd.Series(np.asarray(values, dtype=float), index=pd.period_range(str(start), periods=len(values), freq="Y"), name=name)


@pytest.fixture(scope="module")
def random_walk() -> fc.Candidate:
    rng = np.random.default_rng(31)
    c = fit_order(annual(np.cumsum(rng.normal(size=80)) + 100), (0, 1, 0), None, False, NONE)
    assert c.ok
    return c


@pytest.fixture(scope="module")
def ar1() -> fc.Candidate:
    rng = np.random.default_rng(32)
    c = fit_order(annual(lfilter([1.0], [1.0, -0.7], rng.normal(size=100)) + 10), (1, 0, 0), None, True, NONE)
    assert c.ok
    return c


@pytest.mark.parametrize("h", [1, 2, 5, 10])
def test_random_walk_band_half_width_grows_with_the_square_root_of_h(random_walk, h):
    # Random walk: h-step forecast variance h sigma^2, so the 95% half-width is
    # 1.96 sigma sqrt(h) (Box, Jenkins, Reinsel & Ljung 2015, ch. 5).
    f = fc.make_forecast(random_walk, horizon=10, levels=(95,))
    row = f.table.iloc[h - 1]
    half = (row["hi95"] - row["lo95"]) / 2
    assert half == pytest.approx(1.96 * math.sqrt(random_walk.sigma2 * h), rel=0.01)
    assert row["median"] == pytest.approx(random_walk.series.iloc[-1])


@pytest.mark.parametrize("h", [1, 3, 8])
def test_ar1_variance_matches_the_closed_form(ar1, h):
    # AR(1): Var(e_h) = sigma^2 (1 - phi^(2h)) / (1 - phi^2) (Box, Jenkins, Reinsel & Ljung
    # 2015, ch. 5, psi weights phi^j).
    _, var = predictive(ar1, 8)
    phi, s2 = ar1.ar[0], ar1.sigma2
    assert var[h - 1] == pytest.approx(s2 * (1 - phi ** (2 * h)) / (1 - phi**2), rel=1e-6)


def test_ar1_mean_reverts_to_the_process_mean(ar1):
    mean, _ = predictive(ar1, 3)
    mu, phi = ar1.params["const"], ar1.ar[0]
    last = ar1.series.iloc[-1]
    assert mean[2] == pytest.approx(mu + phi**3 * (last - mu), rel=1e-6)


def test_log_model_bands_are_exact_back_transformed_quantiles():
    rng = np.random.default_rng(33)
    y = annual(np.exp(np.cumsum(rng.normal(scale=0.1, size=60)) + 5))
    c = fit_order(y, (0, 1, 0), None, False, LOG)
    mu, var = predictive(c, 4)
    f = fc.make_forecast(c, horizon=4, levels=(50, 80, 95), reference=float(y.iloc[-1]))
    t = f.table
    sd = np.sqrt(var)
    # lognormal quantiles and mean (scipy.stats.lognorm as the reference)
    for lv in (50, 80, 95):
        lo = stats.lognorm.ppf(0.5 - lv / 200, s=sd, scale=np.exp(mu))
        hi = stats.lognorm.ppf(0.5 + lv / 200, s=sd, scale=np.exp(mu))
        np.testing.assert_allclose(t[f"lo{lv}"], lo, rtol=1e-9)
        np.testing.assert_allclose(t[f"hi{lv}"], hi, rtol=1e-9)
    np.testing.assert_allclose(t["mean"], stats.lognorm.mean(s=sd, scale=np.exp(mu)), rtol=1e-9)
    np.testing.assert_allclose(t["median"], np.exp(mu), rtol=1e-12)
    assert (t["lo95"] > 0).all()
    assert ((t["hi95"] - t["median"]) > (t["median"] - t["lo95"])).all()  # skewed upwards
    np.testing.assert_allclose(
        t["prob_below_reference"], stats.norm.cdf((np.log(float(y.iloc[-1])) - mu) / sd), rtol=1e-9
    )


def test_reference_at_or_below_zero_under_log_has_probability_zero():
    y = annual(np.exp(np.linspace(3, 4, 30) + np.random.default_rng(1).normal(scale=0.05, size=30)))
    c = fit_order(y, (1, 1, 0), None, False, LOG)
    f = fc.make_forecast(c, horizon=3, reference=0.0)
    assert (f.table["prob_below_reference"] == 0).all()


def test_table_has_the_contract_columns_and_time_labels(random_walk):
    f = fc.make_forecast(random_walk, horizon=3)
    assert list(f.table.columns) == [
        "time", "step", "mean", "median", "lo50", "hi50", "lo80", "hi80", "lo95", "hi95", "prob_below_reference",
    ]
    last_year = random_walk.series.index[-1].year
    assert list(f.table["time"]) == [str(last_year + k) for k in (1, 2, 3)]
    assert f.rows()[0]["prob_below_reference"] is None


def test_monthly_forecast_is_labelled_by_month():
    rng = np.random.default_rng(2)
    y = pd.Series(rng.normal(size=48) + 10, index=pd.period_range("2020-01", periods=48, freq="M"))
    c = fit_order(y, (1, 0, 0), None, True, NONE)
    f = fc.make_forecast(c, horizon=2)
    assert list(f.table["time"]) == ["2024-01", "2024-02"]


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"horizon": 0}, "horizon must be an integer from 1 to 50. Got 0 instead."),
        ({"horizon": 2.5}, "horizon must be an integer from 1 to 50. Got 2.5 instead."),
        ({"levels": (95, 80)}, r"levels must be integers from 1 to 99 in increasing order. Got \(95, 80\) instead."),
        ({"levels": (80, 100)}, "levels must be integers from 1 to 99"),
        ({"reference": float("nan")}, "reference must be a finite number or None. Got nan instead."),
        ({"band_source": "past"}, "band_source must be one of 'model', 'hindcast errors'. Got 'past' instead."),
        ({"band_source": "hindcast errors"}, "hindcast must be given"),
    ],
)
def test_bad_forecast_arguments_get_a_plain_message(random_walk, kwargs, message):
    with pytest.raises(fc.InputError, match=message):
        fc.make_forecast(random_walk, **kwargs)


def test_rejected_candidate_cannot_be_forecast():
    c = fit_order(annual(np.arange(1, 61)), (1, 0, 0), None, False, NONE)
    assert not c.ok
    with pytest.raises(fc.InputError, match="must be an accepted candidate"):
        fc.make_forecast(c)


def test_hindcast_error_bands_use_empirical_quantiles_of_past_errors():
    rng = np.random.default_rng(40)
    y = annual(np.cumsum(rng.normal(size=60)) + 50)
    c = fit_order(y, (0, 1, 0), None, False, NONE)
    hind = fc.run_hindcast(y, [c], horizon=2, origins=6)
    f = fc.make_forecast(c, horizon=2, levels=(80,), band_source="hindcast errors", hindcast=hind, reference=50.0)
    rows = hind.errors[(hind.errors["model"] == c.label) & (hind.errors["step"] == 1)]
    e = rows["actual"].to_numpy() - rows["median"].to_numpy()
    mu, _ = predictive(c, 1)
    assert f.table["lo80"].iloc[0] == pytest.approx(mu[0] + np.quantile(e, 0.1))
    assert f.table["hi80"].iloc[0] == pytest.approx(mu[0] + np.quantile(e, 0.9))
    assert f.table["prob_below_reference"].iloc[0] == pytest.approx(np.mean(mu[0] + e < 50.0))
    assert f.band_source == "hindcast errors"
    assert any("fewer than 8" in w for w in f.warnings)  # six origins: at most six errors a step


@pytest.mark.parametrize(
    ("reference", "message"),
    [
        (-5.0, "at or below zero"),
        (0.0, "at or below zero"),
        (1e9, "more than ten times the largest value on record"),
    ],
)
def test_implausible_reference_levels_are_named(reference, message):
    rng = np.random.default_rng(4)
    y = pd.Series(
        np.exp(np.log(500.0) + 0.1 * rng.normal(size=40)),
        index=pd.period_range("1980", periods=40, freq="Y"),
        name="landings",
    )
    candidate = fc.fit_model(y, (0, 0, 0), constant=True, transform="log")
    forecast = fc.make_forecast(candidate, horizon=3, reference=reference)
    assert any(message in w for w in forecast.warnings)

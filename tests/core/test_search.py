"""Candidate fitting and order search, checked against published values and statsmodels."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy.signal import lfilter

import forecasting_core as fc
from forecasting_core._search import fit_order

NONE = fc.TransformSpec("none")


def annual(values, start: int = 1900, name: str = "y") -> pd.Series:
    return pd.Series(np.asarray(values, dtype=float), index=pd.period_range(str(start), periods=len(values), freq="Y"), name=name)


@pytest.fixture(scope="module")
def sunspots() -> pd.Series:
    data = sm.datasets.sunspots.load_pandas().data
    part = data[(data["YEAR"] >= 1770) & (data["YEAR"] <= 1869)]
    return annual(part["SUNACTIVITY"].to_numpy(), 1770, "sunspots")


def test_nile_ma_coefficient_matches_the_local_level_estimates(nile):
    # Durbin & Koopman (2012), Time Series Analysis by State Space Methods, 2nd ed., section
    # 2.10: local-level MLEs sigma_eps^2 = 15099, sigma_eta^2 = 1469.1. A local level is an
    # ARIMA(0,1,1) with theta = (sqrt(q^2 + 4q) - 2 - q) / 2, q the signal-to-noise ratio.
    q = 1469.1 / 15099
    theta = (math.sqrt(q * q + 4 * q) - 2 - q) / 2
    c = fit_order(nile, (0, 1, 1), None, False, NONE)
    assert c.ok, c.reason
    assert c.label == "ARIMA(0,1,1)"
    assert c.ma[0] == pytest.approx(theta, abs=0.02)
    assert c.ma[0] == pytest.approx(-0.73, abs=0.02)


def test_sunspots_ar2_matches_box_jenkins_series_e(sunspots):
    # Box & Jenkins series E (yearly sunspots 1770-1869): AR(2) with phi1 about 1.42 and
    # phi2 about -0.73 (from memory; tolerance 0.06).
    c = fit_order(sunspots, (2, 0, 0), None, True, NONE)
    assert c.ok, c.reason
    assert c.label == "ARIMA(2,0,0) with constant"
    assert c.ar[0] == pytest.approx(1.42, abs=0.06)
    assert c.ar[1] == pytest.approx(-0.73, abs=0.06)


@pytest.mark.parametrize(
    ("order", "constant", "trend"),
    [((2, 0, 0), True, "c"), ((1, 1, 1), True, "t"), ((0, 1, 1), False, "n"), ((1, 2, 1), False, "n")],
)
def test_aicc_is_aic_plus_the_small_sample_term_and_agrees_with_statsmodels(sunspots, order, constant, trend):
    # Hurvich & Tsai (1989): AICc = AIC + 2k(k+1)/(n-k-1), k counted as statsmodels counts
    # parameters (sigma2 included); reference: statsmodels' own results.aicc and llf.
    from statsmodels.tsa.arima.model import ARIMA

    c = fit_order(sunspots, order, None, constant, NONE)
    assert c.ok, c.reason
    k, n = c.n_params, c.nobs
    assert c.aicc == pytest.approx(c.aic + 2 * k * (k + 1) / (n - k - 1), rel=1e-12)
    assert c.aic == pytest.approx(-2 * c.loglik + 2 * k, rel=1e-12)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = ARIMA(sunspots.to_numpy(), order=order, trend=trend).fit()
    assert k == len(ref.params)
    assert c.loglik == pytest.approx(ref.llf, abs=0.01)
    assert c.aicc == pytest.approx(ref.aicc, abs=0.02)
    assert c.bic == pytest.approx(ref.bic, abs=0.02)


def test_drift_is_the_mean_step_of_a_random_walk_with_drift():
    # A random walk with drift 0.5: the drift estimate of ARIMA(0,1,0) with drift is the
    # mean of the differences (exact MLE of a Gaussian random walk with drift).
    rng = np.random.default_rng(11)
    y = annual(np.cumsum(0.5 + rng.normal(size=80)))
    c = fit_order(y, (0, 1, 0), None, True, NONE)
    assert c.label == "ARIMA(0,1,0) with drift"
    assert c.params["drift"] == pytest.approx(np.mean(np.diff(y.to_numpy())), abs=1e-3)


def test_missing_years_stay_in_the_likelihood():
    rng = np.random.default_rng(5)
    values = lfilter([1.0], [1.0, -0.6], rng.normal(size=60)) + 10
    values[[10, 30, 31]] = np.nan
    c = fit_order(annual(values), (1, 0, 0), None, True, NONE)
    assert c.ok
    assert c.nobs == 57  # observed values only
    assert c.ar[0] == pytest.approx(0.6, abs=0.2)


def over_differenced() -> pd.Series:
    # y_t = 0.5 t + e_t differenced once is 0.5 + e_t - e_{t-1}: an MA(1) with theta = -1.
    # The exact MLE of theta piles up on the unit circle in a large share of samples (the
    # MA unit-root "pile-up" effect, common practice); seed 1 is such a sample.
    t = np.arange(60)
    return annual(0.5 * t + np.random.default_rng(1).normal(size=60))


@pytest.mark.parametrize(
    ("y", "order", "constant", "word"),
    [
        (over_differenced(), (0, 1, 1), True, "non-invertible"),
        # a straight line fitted as an AR(1): phi runs to 1, the AR root to the unit circle
        (annual(np.arange(1, 61)), (1, 0, 0), False, "non-stationary"),
    ],
)
def test_a_root_on_the_unit_circle_is_rejected_with_the_reason(y, order, constant, word):
    c = fit_order(y, order, None, constant, NONE)
    assert not c.ok
    assert word in c.reason and "1.001" in c.reason
    assert math.isnan(c.delta_aicc)


def test_a_failed_fit_is_reported_not_raised():
    y = annual(np.arange(12, dtype=float))
    c = fit_order(y, (5, 0, 5), None, True, NONE)
    assert not c.ok
    assert "too few observations" in c.reason


def test_forced_non_invertible_order_is_reported_and_the_comparison_survives():
    comp = fc.compare_models(over_differenced(), transform="none", order=(0, 1, 1), constant=True)
    assert not comp.best.ok
    assert "non-invertible" in comp.best.reason
    assert comp.rejected and not comp.accepted
    assert any("rejected" in w for w in comp.warnings)


def test_exhaustive_search_ranks_by_aicc_with_weights():
    rng = np.random.default_rng(21)
    y = annual(lfilter([1.0, 0.4], [1.0, -0.5], rng.normal(size=70)) + 5)
    comp = fc.compare_models(y, transform="none", d=0, max_p=2, max_q=2, hindcast=False)
    ok = comp.accepted
    assert comp.best is ok[0]
    assert [c.aicc for c in ok] == sorted(c.aicc for c in ok)
    assert ok[0].delta_aicc == 0.0
    assert sum(c.weight for c in ok) == pytest.approx(1.0)
    # Akaike weights: w_i proportional to exp(-delta_i / 2) (Burnham & Anderson 2002, 2.9)
    assert ok[1].weight / ok[0].weight == pytest.approx(math.exp(-ok[1].delta_aicc / 2))
    assert len(comp.candidates) == 18  # 3 x 3 orders, with and without a constant
    # the search's best is the best of plain full fits over the same grid
    plain = [fit_order(y, (p, 0, q), None, c, NONE) for p in range(3) for q in range(3) for c in (False, True)]
    assert comp.best.aicc <= min(c.aicc for c in plain if c.ok) + 0.01


def test_results_do_not_depend_on_the_number_of_workers():
    rng = np.random.default_rng(8)
    y = annual(np.cumsum(lfilter([1.0], [1.0, -0.4], rng.normal(size=50))))
    one = fc.compare_models(y, transform="none", d=1, max_p=1, max_q=1, hindcast=False)
    two = fc.compare_models(y, transform="none", d=1, max_p=1, max_q=1, hindcast=False, workers=2)
    assert [c.label for c in one.candidates] == [c.label for c in two.candidates]
    assert [c.aicc for c in one.candidates if c.ok] == [c.aicc for c in two.candidates if c.ok]


def test_stepwise_search_reaches_the_generating_order():
    rng = np.random.default_rng(2)
    y = annual(lfilter([1.0], [1.0, -1.2, 0.5], rng.normal(size=120)) + 20)
    comp = fc.compare_models(y, transform="none", d=0, search="stepwise", hindcast=False)
    assert comp.settings["search_used"] == "stepwise"
    assert comp.best.order[0] >= 2
    assert len(comp.candidates) < 36


def test_comparison_records_settings_and_provenance():
    rng = np.random.default_rng(4)
    y = annual(np.cumsum(rng.normal(size=40)) + 50, name="hake_t")
    comp = fc.compare_models(y, transform="none", d=1, max_p=1, max_q=1, hindcast=False)
    assert comp.settings["d"] == 1 and comp.settings["max_p"] == 1
    assert len(comp.provenance["series_sha256"]) == 64
    assert set(comp.provenance["versions"]) >= {"numpy", "pandas", "scipy", "statsmodels", "haulcast"}
    assert comp.to_dict()["model"]["label"] == comp.best.label
    assert comp.diagnostics is not None


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"horizon": 0}, "horizon must be an integer from 1 to 30. Got 0 instead."),
        ({"max_p": 6}, "max_p must be an integer from 0 to 5. Got 6 instead."),
        ({"search": "fast"}, "search must be one of auto, exhaustive, stepwise. Got 'fast' instead."),
        ({"d": 3}, "d must be an integer from 0 to 2. Got 3 instead."),
        ({"order": (1, 1)}, r"order must be three integers \(p, d, q\). Got \(1, 1\) instead."),
        ({"seasonal": True}, "seasonal must be False or None for annual data. Got True instead."),
    ],
)
def test_bad_settings_get_a_plain_message(kwargs, message):
    y = annual(np.arange(30, dtype=float))
    with pytest.raises(fc.InputError, match=message):
        fc.compare_models(y, transform="none", hindcast=False, **kwargs)


def test_seasonal_label_and_drift_for_a_seasonal_difference():
    rng = np.random.default_rng(9)
    n = 96
    season = 3 * np.sin(2 * np.pi * np.arange(n) / 12)
    y = pd.Series(season + rng.normal(size=n) * 0.5 + 20, index=pd.period_range("2010-01", periods=n, freq="M"))
    c = fit_order(y, (1, 0, 0), (0, 1, 1, 12), False, NONE)
    assert c.label == "ARIMA(1,0,0)(0,1,1)[12]"
    assert c.ok, c.reason
    assert len(c.seasonal_ma) == 1


SAMPLE_PROCESSES = [
    # file, series, true (p, d, q), true seasonal order, constant  (sample_data/README.md)
    ("vellmouth_landings.csv", "hake_t", (1, 1, 0), None, True),
    ("vellmouth_landings.csv", "plaice_t", (1, 0, 0), None, True),
    ("vellmouth_landings.csv", "whiting_t", (0, 1, 1), None, False),
    ("vellmouth_survey_cpue.csv", "hake_kg_per_tow", (1, 0, 0), None, True),
    ("vellmouth_survey_cpue.csv", "plaice_kg_per_tow", (1, 0, 0), None, True),
    ("vellmouth_squid_monthly.csv", "squid", (1, 0, 0), (0, 1, 1, 12), False),
]


@pytest.mark.parametrize(("file", "name", "order", "seasonal_order", "constant"), SAMPLE_PROCESSES)
def test_sample_data_generating_order_is_found_or_beaten(sample_dir, file, name, order, seasonal_order, constant):
    # The invented sample series were generated by known log-scale processes; with the true
    # differencing the search must find that order or one with lower AICc.
    y = fc.read_table(sample_dir / file).series[name]
    log = fc.choose_transform(y, "log")
    true = fit_order(y, order, seasonal_order, constant, log)
    assert true.ok, true.reason
    d = order[1]
    if seasonal_order is None:
        comp = fc.compare_models(y, transform="log", d=d, max_p=2, max_q=2, hindcast=False)
    else:
        # a small stepwise search keeps the monthly test quick (each seasonal fit is costly)
        comp = fc.compare_models(
            y, transform="log", d=d, D=seasonal_order[1], max_p=1, max_q=1, max_P=1, max_Q=1, hindcast=False
        )
        assert comp.settings["search_used"] == "stepwise"
    # The compiled fit maximises the exact likelihood of the differenced series; statsmodels'
    # likelihood of a seasonally differenced model differs from it by a few 1e-4 (measured in
    # tests/core/test_fast_path.py), so its optimum can sit that much higher.
    slack = 1e-3 if seasonal_order is not None else 1e-6
    assert comp.best.aicc <= true.aicc + slack, (comp.best.label, true.label)


@pytest.mark.parametrize("extra", [0, 1])
def test_d_set_by_hand_against_the_tests_choice_gets_a_plain_warning(nile, extra):
    # The Nile flows (statsmodels' dataset); what the tests choose comes from the core's own
    # assess_stationarity, so only the comparison is checked here. Common practice: AICc values
    # of models with different d are not comparable (the likelihoods are of different data).
    auto = fc.assess_stationarity(nile).d
    mine = (auto + extra) % 3
    c = fc.compare_models(nile, horizon=3, transform="none", d=mine, max_p=1, max_q=1, hindcast=False)
    notes = [w for w in c.warnings if "set by hand" in w]
    if mine == auto:
        assert notes == []
    else:
        assert notes == [
            f"d = {mine} was set by hand; the stationarity tests chose d = {auto}. AICc is not "
            "comparable across different d, so judge the models on the hindcast."
        ]


@pytest.mark.parametrize(
    ("d", "big_d", "auto", "note"),
    [
        (None, 0, (0, 1), "D = 0 was set by hand; the stationarity tests chose D = 1. AICc is not "
                          "comparable across different D, so judge the models on the hindcast."),
        (2, 0, (0, 1), "d = 2 and D = 0 were set by hand; the stationarity tests chose d = 0 and "
                       "D = 1. AICc is not comparable across different d and D, so judge the models "
                       "on the hindcast."),
        (1, 1, (1, 1), None),
        (None, None, (2, 1), None),
    ],
)  # fmt: skip
def test_the_by_hand_note_names_only_the_differences_that_disagree(d, big_d, auto, note):
    from forecasting_core._search import _by_hand_note

    assert _by_hand_note(d, big_d, *auto) == ([note] if note else [])

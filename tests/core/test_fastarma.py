"""The screening likelihood against statsmodels' state-space ARIMA (the reference).

statsmodels' exact Gaussian MLE (``statsmodels.tsa.arima.model.ARIMA``) is the reference
implementation; the series are simulated with scipy.signal.lfilter, not by the code under test.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import statsmodels.api as sm
from scipy.signal import lfilter

from forecasting_core import _fastarma as fa


def _sm_fit(z, order, seasonal_order=(0, 0, 0, 0), trend="n"):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return sm.tsa.arima.ARIMA(z, order=order, seasonal_order=seasonal_order, trend=trend).fit()


def _simulate(rng, p, d, q, n, drift=0.0):
    e = rng.normal(size=n + 50)
    ar = [1.0] + [(-0.5, 0.2)[i] for i in range(p)]
    ma = [1.0] + [(0.4, -0.2)[j] for j in range(q)]
    x = lfilter(ma, ar, e)[50:]
    if d:
        x = np.cumsum(x + drift)
    return x + 10.0


CASES = [(p, d, q, mean) for p in (0, 1, 2) for q in (0, 1) for d in (0, 1) for mean in (True, False)]


@pytest.mark.parametrize("seed", range(100))
def test_screening_fit_matches_statsmodels_exact_mle(seed):
    rng = np.random.default_rng([2026, seed])
    p, d, q, mean = CASES[seed % len(CASES)]
    n = int(rng.integers(30, 121))
    z = _simulate(rng, p, d, q, n, drift=0.05 if mean else 0.0)
    if d == 0 and not mean:
        z = z - 10.0
    fast = fa.fit_arma(fa.difference(z, d), p, q, mean)
    trend = ("c" if d == 0 else "t") if mean else "n"
    ref = _sm_fit(z, (p, d, q), trend=trend)
    # The screening optimum is never worse than the reference's, and normally the same point.
    assert fast.loglik >= ref.llf - 1e-3
    if abs(fast.loglik - ref.llf) < 1e-4:
        coefs = np.r_[fast.ar, fast.ma]
        names = [f"ar.L{i}" for i in range(1, p + 1)] + [f"ma.L{j}" for j in range(1, q + 1)]
        ref_coefs = np.array([ref.params[ref.model.param_names.index(k)] for k in names])
        np.testing.assert_allclose(coefs, ref_coefs, atol=2e-3)
        # statsmodels counts n as the observations after differencing (nobs_effective).
        assert fast.aicc(len(z) - d) == pytest.approx(ref.aicc, abs=0.05)


def test_missing_values_enter_the_likelihood_for_stationary_models():
    rng = np.random.default_rng(7)
    z = _simulate(rng, 1, 0, 1, 80)
    z[[10, 11, 40]] = np.nan
    fast = fa.fit_arma(z, 1, 1, True)
    ref = _sm_fit(z, (1, 0, 1), trend="c")
    assert fast.nobs == 77
    assert fast.loglik == pytest.approx(ref.llf, abs=1e-3)


def test_seasonal_screening_matches_statsmodels():
    rng = np.random.default_rng(11)
    e = 0.1 * rng.normal(size=180)
    # (1 - 0.5B)(1 - B^12) z_t = (1 - 0.5 B^12) e_t, built with lfilter and a seasonal sum.
    w = lfilter(np.r_[1.0, np.zeros(11), -0.5], [1.0, -0.5], e)
    z = np.r_[np.zeros(12), w]
    for t in range(12, z.size):
        z[t] += z[t - 12]
    fast = fa.fit_arma(fa.difference(z, 0, 1, 12), 1, 0, False, P=0, Q=1, m=12)
    ref = _sm_fit(z, (1, 0, 0), seasonal_order=(0, 1, 1, 12))
    assert fast.loglik == pytest.approx(ref.llf, abs=1e-3)
    np.testing.assert_allclose([fast.ar[0], fast.seasonal_ma[0]], ref.params[:2], atol=2e-3)


def test_constrain_gives_stationary_polynomials_and_inverts():
    rng = np.random.default_rng(3)
    for _ in range(50):
        x = rng.normal(scale=2.0, size=4)
        phi = fa.constrain(x)
        roots = np.roots(np.r_[-phi[::-1], 1.0])  # 1 - phi_1 B - ... - phi_p B^p
        assert np.all(np.abs(roots) > 1.0)
        np.testing.assert_allclose(fa.unconstrain(phi), x, rtol=1e-6, atol=1e-6)


def test_pure_python_filter_gives_the_same_numbers_as_the_compiled_one():
    rng = np.random.default_rng(5)
    w = rng.normal(size=60)
    w[7] = np.nan
    phi, theta = np.array([0.4, -0.2]), np.array([0.3])
    compiled = fa._harvey_loglik(w, phi, theta)
    plain = fa._harvey_loglik_py(w, phi, theta)
    np.testing.assert_allclose(compiled[:2], plain[:2], rtol=1e-12)
    assert compiled[2] == plain[2] == 59


@pytest.mark.parametrize("gaps", [(), (300,), (150, 151, 390)])
def test_steady_state_filter_keeps_the_exact_likelihood_on_long_series(gaps):
    # After the covariance converges the filter only updates the state; a late gap must
    # restart the covariance recursion. Reference: statsmodels' loglike at the same parameters.
    rng = np.random.default_rng(13)
    z = lfilter([1.0, 0.5], [1.0, -0.6, 0.2], rng.normal(size=450))[50:]
    z[list(gaps)] = np.nan
    phi, theta, sigma2 = np.array([0.6, -0.2]), np.array([0.5]), 1.3
    ssq, sumlog, n = fa._harvey_loglik(z, phi, theta)
    ours = -0.5 * (n * np.log(2 * np.pi * sigma2) + sumlog + ssq / sigma2)
    model = sm.tsa.arima.ARIMA(z, order=(2, 0, 1), trend="n")
    assert ours == pytest.approx(model.loglike(np.r_[phi, theta, sigma2]), abs=1e-8)

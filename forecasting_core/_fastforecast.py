"""Compiled ARIMA refits and forecasts for the hindcast (no statsmodels objects).

A hindcast refits each model at every origin and forecasts a few steps. Here the refit is the
compiled exact-likelihood fit of ``_fastarma`` warm-started from the full-series estimate, and
the forecast is one pass of a compiled Kalman filter that carries the differencing in its
state, as statsmodels' ARIMA does: the first d + D m values fix the integrated part exactly
and the ARMA part starts at its stationary distribution, which gives the same means and
variances as statsmodels' ``filter(params).get_forecast(h)`` (the tests hold them to 1e-8).

Parameters travel as statsmodels names (``const`` or ``drift``, ``ar.L1``, ``ma.S.L12``,
``sigma2``), the same dictionaries as :attr:`Candidate.params`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from forecasting_core._fastarma import admissible, difference, fit_arma, to_params, to_start
from forecasting_core._fastfilter import _arima_filter
from forecasting_core._fastkernels import _expand

__all__ = ["arima_forecast", "refit_params"]

Order = tuple[int, int, int]
Seasonal = tuple[int, int, int, int] | None


def _parts(order: Order, seasonal: Seasonal) -> tuple[int, int, int, int, int, int, int]:
    p, d, q = order
    P, D, Q, m = seasonal if seasonal else (0, 0, 0, 1)  # noqa: N806 - the usual names
    return p, d, q, P, D, Q, m


def _polynomials(params: Mapping[str, float], order: Order, seasonal: Seasonal) -> tuple[np.ndarray, np.ndarray]:
    p, _, q, P, _, Q, m = _parts(order, seasonal)  # noqa: N806
    ar = np.array([params[f"ar.L{i}"] for i in range(1, p + 1)], dtype=float)
    ma = np.array([params[f"ma.L{j}"] for j in range(1, q + 1)], dtype=float)
    sar = np.array([params[f"ar.S.L{m * i}"] for i in range(1, P + 1)], dtype=float)
    sma = np.array([params[f"ma.S.L{m * j}"] for j in range(1, Q + 1)], dtype=float)
    if P or Q:
        return _expand(ar, sar, m, -1.0), _expand(ma, sma, m, 1.0)
    return ar, ma


def _delta(d: int, big_d: int, m: int) -> np.ndarray:
    """delta_i of (1 - B)^d (1 - B^m)^D = 1 - sum delta_i B^i."""
    poly = np.array([1.0])
    for _ in range(d):
        poly = np.convolve(poly, [1.0, -1.0])
    for _ in range(big_d):
        season = np.zeros(m + 1)
        season[0], season[m] = 1.0, -1.0
        poly = np.convolve(poly, season)
    return -poly[1:]


def _regression(params: Mapping[str, float], n: int, steps: int, constant: bool, total_d: int) -> np.ndarray:
    """The constant (d + D = 0) or the drift times t = 1, 2, ... (statsmodels' trend "t")."""
    if not constant:
        return np.zeros(n + steps)
    if total_d == 0:
        return np.full(n + steps, float(params["const"]))
    return float(params["drift"]) * np.arange(1, n + steps + 1, dtype=float)


def usable(z: np.ndarray, order: Order, seasonal: Seasonal) -> bool:
    """The compiled path applies: the first d + D m values are observed."""
    _, d, _, _, D, _, m = _parts(order, seasonal)  # noqa: N806
    return bool(np.isfinite(np.asarray(z[: d + D * m], dtype=float)).all())


def arima_forecast(
    z: np.ndarray,
    order: Order,
    seasonal: Seasonal,
    constant: bool,
    params: Mapping[str, float],
    steps: int,
) -> tuple[np.ndarray, np.ndarray]:
    """Forecast means and variances of ``z`` (transformed scale) for steps 1..``steps``.

    Parameters
    ----------
    z : numpy.ndarray
        The transformed series up to the origin (NaN for gaps; the first d + D m observed).
    order, seasonal, constant
        The model, as in :class:`Candidate`.
    params : Mapping[str, float]
        statsmodels-named parameters, e.g. ``Candidate.params``.
    steps : int
        Steps ahead at the series' frequency.
    """
    z = np.asarray(z, dtype=float)
    _, d, _, _, D, _, m = _parts(order, seasonal)  # noqa: N806
    phi, theta = _polynomials(params, order, seasonal)
    reg = _regression(params, len(z), steps, constant, d + D)
    u = np.ascontiguousarray(z - reg[: len(z)])
    _, _, _, mean, var = _arima_filter(u, phi, theta, _delta(d, D, m), int(steps))
    return mean + reg[len(z):], var * float(params["sigma2"])


def arima_loglik(z: np.ndarray, order: Order, seasonal: Seasonal, constant: bool, params: Mapping[str, float]) -> float:
    """Exact Gaussian log-likelihood of ``z`` at ``params`` (statsmodels' value, for the tests)."""
    z = np.asarray(z, dtype=float)
    _, d, _, _, D, _, m = _parts(order, seasonal)  # noqa: N806
    phi, theta = _polynomials(params, order, seasonal)
    u = np.ascontiguousarray(z - _regression(params, len(z), 0, constant, d + D))
    ssq, sumlog, n, _, _ = _arima_filter(u, phi, theta, _delta(d, D, m), 0)
    sigma2 = float(params["sigma2"])
    return -0.5 * (n * math.log(2.0 * math.pi * sigma2) + sumlog + ssq / sigma2)


def refit_params(
    z: np.ndarray,
    order: Order,
    seasonal: Seasonal,
    constant: bool,
    start: Mapping[str, float] | None,
    root_limit: float,
    warm: tuple[np.ndarray, np.ndarray | None] | None = None,
) -> tuple[dict[str, float] | None, str | None, tuple[np.ndarray, np.ndarray | None] | None]:
    """Refit one model on ``z`` by the compiled exact likelihood, warm-started.

    Parameters
    ----------
    z : numpy.ndarray
        Transformed values up to the origin.
    order, seasonal, constant
        The model.
    start : Mapping[str, float], optional
        statsmodels-named starting values (the full-series estimate).
    root_limit : float
        Reject an AR or MA root closer than this to the unit circle (as :func:`fit_order`).
    warm : tuple, optional
        ``(x, inverse Hessian)`` of the previous origin's fit (the third item returned);
        used instead of ``start`` when given.

    Returns
    -------
    (params, None, warm)
        statsmodels-named estimates and the warm start for the next origin.
    (None, reason, None)
        The refit is rejected as :func:`fit_order` would reject it (too few observations,
        no convergence, an AR or MA root within ``root_limit`` of the unit circle).
    (None, None, None)
        The compiled path does not apply (a gap hidden by differencing): use statsmodels.
    """
    p, d, q, P, D, Q, m = _parts(order, seasonal)  # noqa: N806
    z = np.asarray(z, dtype=float)
    w = difference(z, d, D, m)
    if d + D > 0 and not bool(np.isfinite(w).all()):
        return None, None, None
    nobs = int(np.isfinite(z).sum()) - d - D * m
    k = p + q + P + Q + int(constant) + 1
    if nobs - k - 1 <= 0:
        return None, f"too few observations ({nobs}) for {k} parameters", None
    if warm is not None:
        x0, hess = warm
    else:
        x0, hess = (to_start(dict(start), order, seasonal, constant) if start else None), None
    fit = fit_arma(w, p, q, constant, P=P, Q=Q, m=m, start=x0, hess_inv=hess)
    if not fit.converged:
        cold = fit_arma(w, p, q, constant, P=P, Q=Q, m=m)
        if cold.converged or cold.loglik > fit.loglik:
            fit = cold
    if not fit.converged:
        return None, "no convergence in the compiled refit", None
    params = to_params(fit, d, D)
    if admissible(fit.ar, fit.ma, fit.seasonal_ar, fit.seasonal_ma, m, root_limit):
        return params, None, (fit.x, fit.hess_inv)
    from forecasting_core._orders import _nearest_root

    worst = _nearest_root(tuple(fit.ar), tuple(fit.ma), tuple(fit.seasonal_ar), tuple(fit.seasonal_ma), m)
    kind, modulus = worst if worst is not None else ("AR", float("nan"))
    word = "non-stationary" if kind == "AR" else "non-invertible"
    return None, f"{word}: an {kind} root has modulus {modulus:.4f}, within {root_limit} of the unit circle", None

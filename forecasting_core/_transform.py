"""Transforms before modelling: none, log, Box-Cox; back-transforms and the bias-adjusted mean.

Box-Cox (Box & Cox 1964) with parameter ``lam``::

    z = (y**lam - 1) / lam      (lam != 0)
    z = log(y)                  (lam == 0)

``lam`` is chosen either by Guerrero's (1993) coefficient-of-variation method (the default
for ``"boxcox"``) or by maximum likelihood (offered for comparison). Both are bounded to
``[-1, 2]``.

Back-transforms map quantiles exactly (the transforms are monotone), so medians and band
limits computed on the transformed scale are exact on the original scale. The mean is not a
quantile: :func:`mean_back_transform` gives the bias-adjusted mean of a normal variable on
the transformed scale (exact lognormal mean for the log; the usual second-order Taylor
approximation for Box-Cox).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pandas as pd
from scipy.optimize import minimize_scalar

from forecasting_core._results import InputError, TransformSpec, period_length, time_label

#: Allowed Box-Cox lambdas (a power outside this range is never sensible for catch data).
LAMBDA_BOUNDS: tuple[float, float] = (-1.0, 2.0)
#: ``auto`` picks the log when Guerrero's lambda is below this value (see :func:`choose_transform`).
AUTO_LOG_BELOW: float = 0.5
#: Subseries length for Guerrero's method on annual data, in years.
ANNUAL_SUBSERIES: int = 2

METHODS: tuple[str, ...] = ("none", "log", "boxcox", "auto")

ArrayLike = pd.Series | np.ndarray


def _values(y: Any) -> np.ndarray:
    """Float values of a Series, array, list or scalar (NaN kept)."""
    if isinstance(y, pd.Series):
        return y.to_numpy(dtype=float, na_value=np.nan)
    return np.asarray(y, dtype=float)


def _like(template: Any, values: np.ndarray) -> Any:
    """Return ``values`` in the shape and type of ``template`` (Series, array or float)."""
    if isinstance(template, pd.Series):
        return pd.Series(values, index=template.index, name=template.name, dtype=float)
    if np.ndim(template) == 0:
        return float(values)
    return values


def _where(y: Any, position: int) -> str:
    """Name the position of a value for a message: the period when known, else the 1-based position."""
    if isinstance(y, pd.Series) and isinstance(y.index, pd.PeriodIndex):
        return f"in {time_label(y.index[position])}"
    if isinstance(y, pd.Series):
        return f"at {y.index[position]!r}"
    return f"at position {position + 1}"


def _require_positive(y: Any, what: str) -> None:
    """Raise InputError naming the first non-missing value at or below 0."""
    v = _values(y).ravel()
    bad = np.flatnonzero(~np.isnan(v) & (v <= 0))
    if bad.size:
        i = int(bad[0])
        raise InputError(
            f"{what} needs values above 0. Got {float(v[i])!r} {_where(y, i)} instead."
        )


def _check_lambda(lam: float | None) -> float:
    if lam is None or not np.isfinite(lam):
        raise InputError(f"Box-Cox lambda must be a number from -1 to 2. Got {lam!r} instead.")
    lo, hi = LAMBDA_BOUNDS
    if not lo - 1e-12 <= lam <= hi + 1e-12:
        raise InputError(f"Box-Cox lambda must be a number from -1 to 2. Got {lam!r} instead.")
    return float(lam)


def _boxcox(v: np.ndarray, lam: float) -> np.ndarray:
    if lam == 0.0:
        return np.log(v)
    return np.expm1(lam * np.log(v)) / lam


def _observed_positive(y: Any, what: str) -> np.ndarray:
    _require_positive(y, what)
    v = _values(y).ravel()
    return v[~np.isnan(v)]


# ---------------------------------------------------------------------------------------------
# Choosing lambda
# ---------------------------------------------------------------------------------------------


def guerrero_lambda(y: ArrayLike, period: int = 2) -> float:
    """Box-Cox lambda by Guerrero's (1993) coefficient-of-variation method.

    The series is cut into consecutive subseries of ``period`` values, ending at the last
    observation (a leading remainder is left out). For each subseries ``h`` with mean
    ``m_h`` and standard deviation ``s_h`` the ratio ``s_h / m_h**(1 - lam)`` is formed; the
    chosen ``lam`` minimises the coefficient of variation of these ratios over ``[-1, 2]``,
    i.e. the power for which spread no longer depends on level.

    Parameters
    ----------
    y : pandas.Series or numpy.ndarray
        Strictly positive values (NaN allowed; a subseries needs two observed values).
    period : int, default 2
        Subseries length in observations: the seasonal period (12 monthly, 4 quarterly) for
        seasonal data, a small block (2 years by default) for annual data.

    Returns
    -------
    float
        Lambda in ``[-1, 2]``.

    Raises
    ------
    InputError
        Values at or below 0, ``period`` below 2, or fewer than two usable subseries.
    """
    if isinstance(period, bool) or not isinstance(period, int | np.integer) or period < 2:
        raise InputError(f"period must be an integer of at least 2. Got {period!r} instead.")
    _require_positive(y, "Box-Cox transform")
    v = _values(y).ravel()
    groups = len(v) // period
    blocks = (
        v[len(v) - groups * period :].reshape(groups, period) if groups else np.empty((0, period))
    )
    means, sds = [], []
    for block in blocks:
        obs = block[~np.isnan(block)]
        if obs.size >= 2:
            means.append(obs.mean())
            sds.append(obs.std(ddof=1))
    means_a, sds_a = np.asarray(means), np.asarray(sds)
    if means_a.size < 2:
        raise InputError(
            f"Guerrero's method needs at least 2 subseries of {period} values with 2 or more "
            f"observations each. Got {means_a.size} instead."
        )
    if np.all(sds_a == 0):
        return 1.0

    def cv(lam: float) -> float:
        ratio = sds_a / means_a ** (1.0 - lam)
        return float(np.std(ratio, ddof=1) / np.mean(ratio))

    return _bounded_argmin(cv)


def _boxcox_profile_llf(lam: float, v: np.ndarray, log_sum: float) -> float:
    """Box-Cox profile log-likelihood (normal errors, mean and variance profiled out)."""
    z = _boxcox(v, lam)
    return (lam - 1.0) * log_sum - 0.5 * v.size * math.log(np.var(z))


def boxcox_mle_lambda(y: ArrayLike) -> float:
    """Box-Cox lambda by maximum likelihood, bounded to ``[-1, 2]``.

    Maximises the profile log-likelihood of Box & Cox (1964) for an i.i.d. normal sample on
    the transformed scale,
    ``llf(lam) = (lam - 1) * sum(log y) - n/2 * log(var(z(lam)))``,
    which is the criterion ``scipy.stats.boxcox`` maximises (they agree when the optimum lies
    inside the bounds). It ignores time order; it is offered to compare with Guerrero's value.

    Parameters
    ----------
    y : pandas.Series or numpy.ndarray
        Strictly positive values (NaN ignored).

    Returns
    -------
    float
        Lambda in ``[-1, 2]``.
    """
    v = _observed_positive(y, "Box-Cox transform")
    if v.size < 3 or np.ptp(v) == 0:
        raise InputError(
            f"maximum-likelihood lambda needs at least 3 observed values that are not all equal. "
            f"Got {v.size} value(s) instead."
        )
    log_sum = float(np.log(v).sum())
    return _bounded_argmin(lambda lam: -_boxcox_profile_llf(lam, v, log_sum))


def _bounded_argmin(fun) -> float:
    """Minimise a smooth function of lambda over LAMBDA_BOUNDS (grid, then Brent refinement)."""
    lo, hi = LAMBDA_BOUNDS
    grid = np.linspace(lo, hi, 61)
    values = np.array([fun(g) for g in grid])
    k = int(np.nanargmin(values))
    a, b = grid[max(k - 1, 0)], grid[min(k + 1, grid.size - 1)]
    res = minimize_scalar(fun, bounds=(a, b), method="bounded", options={"xatol": 1e-7})
    best = float(res.x) if res.fun <= values[k] else float(grid[k])
    return float(min(max(best, lo), hi))


# ---------------------------------------------------------------------------------------------
# Public transform API
# ---------------------------------------------------------------------------------------------


def _default_period(y: ArrayLike) -> int:
    if isinstance(y, pd.Series) and isinstance(y.index, pd.PeriodIndex):
        m = period_length(y)
        return m if m > 1 else ANNUAL_SUBSERIES
    return ANNUAL_SUBSERIES


def choose_transform(y: ArrayLike, method: str = "auto") -> TransformSpec:
    """Resolve ``"none" | "log" | "boxcox" | "auto"`` to a TransformSpec for this series.

    Rule for ``"auto"`` (documented in the spec's ``reason``):

    1. any observed value at or below 0 -> ``none`` (a log is impossible);
    2. otherwise compute Guerrero's lambda (subseries of one seasonal period for monthly and
       quarterly data, of 2 years for annual data); when it is below 0.5 the spread grows
       with the level, so -> ``log``; otherwise -> ``none``;
    3. too few values for Guerrero's method -> ``none``.

    ``"boxcox"`` uses Guerrero's lambda with the same subseries length.

    Parameters
    ----------
    y : pandas.Series or numpy.ndarray
        Original-scale values (NaN allowed).
    method : {"auto", "none", "log", "boxcox"}

    Returns
    -------
    TransformSpec
    """
    if method not in METHODS:
        raise InputError(
            f"transform must be one of {', '.join(map(repr, METHODS))}. Got {method!r} instead."
        )
    if method == "none":
        return TransformSpec("none", None, "chosen by the user")
    if method == "log":
        _require_positive(y, "log transform")
        return TransformSpec("log", None, "chosen by the user")
    period = _default_period(y)
    if method == "boxcox":
        lam = guerrero_lambda(y, period)
        return TransformSpec(
            "boxcox",
            lam,
            f"chosen by the user; lambda {lam:.3f} by Guerrero's method (subseries of {period})",
        )
    v = _values(y).ravel()
    bad = np.flatnonzero(~np.isnan(v) & (v <= 0))
    if bad.size:
        i = int(bad[0])
        return TransformSpec(
            "none",
            None,
            f"automatic: no transform, the series has a value at or below 0 "
            f"({float(v[i])!r} {_where(y, i)}), so a log is impossible",
        )
    try:
        lam = guerrero_lambda(y, period)
    except InputError:
        return TransformSpec(
            "none",
            None,
            "automatic: no transform, too few values to judge how the spread "
            "changes with the level",
        )
    if lam < AUTO_LOG_BELOW:
        return TransformSpec(
            "log",
            None,
            f"automatic: log, because all values are above 0 and the spread grows with the level "
            f"(Guerrero lambda {lam:.2f}, below {AUTO_LOG_BELOW})",
        )
    return TransformSpec(
        "none",
        None,
        f"automatic: no transform, because the spread does not grow with the level "
        f"(Guerrero lambda {lam:.2f}, at or above {AUTO_LOG_BELOW})",
    )


def transform_series(y: ArrayLike, spec: TransformSpec) -> ArrayLike:
    """Original scale -> transformed scale (NaN stays NaN).

    Parameters
    ----------
    y : pandas.Series or numpy.ndarray
        Original-scale values.
    spec : TransformSpec

    Returns
    -------
    Same type as ``y``: a Series keeps its index and name.

    Raises
    ------
    InputError
        log or Box-Cox of a value at or below 0 (naming the first such period).
    """
    v = _values(y)
    if spec.name == "none":
        return _like(y, v.copy())
    if spec.name == "log":
        _require_positive(y, "log transform")
        return _like(y, np.log(v))
    if spec.name == "boxcox":
        lam = _check_lambda(spec.lam)
        _require_positive(y, "Box-Cox transform")
        return _like(y, _boxcox(v, lam))
    raise InputError(
        f"transform must be one of 'none', 'log', 'boxcox'. Got {spec.name!r} instead."
    )


def back_transform(z: ArrayLike | float, spec: TransformSpec) -> ArrayLike | float:
    """Transformed scale -> original scale; maps quantiles exactly (used for median and bands).

    For Box-Cox with ``lam > 0`` values below ``-1/lam`` have no preimage and map to 0; with
    ``lam < 0`` values at or above ``-1/lam`` map to infinity (the band is unbounded).

    Parameters
    ----------
    z : pandas.Series, numpy.ndarray or float
        Values (e.g. quantiles) on the transformed scale.
    spec : TransformSpec

    Returns
    -------
    Same type as ``z``.
    """
    v = _values(z)
    if spec.name == "none":
        out = v.copy()
    elif spec.name == "log":
        out = np.exp(v)
    elif spec.name == "boxcox":
        lam = _check_lambda(spec.lam)
        if lam == 0.0:
            out = np.exp(v)
        else:
            lv = lam * v
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                # exp(log1p(lam z) / lam) = (lam z + 1)**(1/lam), accurate for lambda near 0
                inside = np.exp(np.log1p(np.where(lv > -1.0, lv, 0.0)) / lam)
                out = np.where(lv > -1.0, inside, 0.0 if lam > 0 else np.inf)
            out = np.where(np.isnan(v), np.nan, out)
    else:
        raise InputError(
            f"transform must be one of 'none', 'log', 'boxcox'. Got {spec.name!r} instead."
        )
    return _like(z, np.asarray(out, dtype=float))


def mean_back_transform(
    mu: ArrayLike | float, var: ArrayLike | float, spec: TransformSpec
) -> ArrayLike | float:
    """Bias-adjusted mean on the original scale of a normal(mu, var) on the transformed scale.

    - none: ``mu``;
    - log: the lognormal mean ``exp(mu + var / 2)``, exact;
    - Box-Cox (``lam != 0``): the usual second-order Taylor approximation
      ``(lam*mu + 1)**(1/lam) * (1 + var * (1 - lam) / (2 * (lam*mu + 1)**2))``
      (exact for ``lam = 1``; the exact mean does not exist for ``lam < 0`` because the
      normal puts mass beyond the pole). Where ``lam*mu + 1 <= 0`` the result is NaN.

    Parameters
    ----------
    mu : pandas.Series, numpy.ndarray or float
        Mean on the transformed scale.
    var : pandas.Series, numpy.ndarray or float
        Variance on the transformed scale (same shape as ``mu`` or scalar), >= 0.
    spec : TransformSpec

    Returns
    -------
    Same type as ``mu``.
    """
    m = _values(mu)
    s2 = _values(var)
    if np.any(s2[~np.isnan(s2)] < 0):
        raise InputError("var must be 0 or more. Got a negative variance instead.")
    if spec.name == "none":
        out = m + 0.0 * s2
    elif spec.name == "log" or (spec.name == "boxcox" and _check_lambda(spec.lam) == 0.0):
        out = np.exp(m + s2 / 2.0)
    elif spec.name == "boxcox":
        lam = float(spec.lam)  # type: ignore[arg-type]
        lm = lam * m
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            safe = np.where(lm > -1.0, lm, np.nan)
            median = np.exp(np.log1p(safe) / lam)
            out = median * (1.0 + s2 * (1.0 - lam) / (2.0 * (safe + 1.0) ** 2))
    else:
        raise InputError(
            f"transform must be one of 'none', 'log', 'boxcox'. Got {spec.name!r} instead."
        )
    return _like(mu, np.asarray(out, dtype=float))

"""Stationarity and invertibility of lag polynomials for the fast ARIMA path.

Split from ``_fastarma`` (which re-exports these): the Monahan (1984) / Jones (1980) map
between unconstrained reals and stationary AR coefficients, and the root checks that decide
whether a fit could be reported (no root within a limit of the unit circle), by Levinson
step-down in the compiled kernels of ``_fastkernels``.
"""

from __future__ import annotations

import numpy as np

from forecasting_core._fastkernels import _admissible, _constrain, _roots_ok

__all__ = ["admissible", "constrain", "roots_outside", "unconstrain"]


def constrain(x: np.ndarray) -> np.ndarray:
    """Unconstrained reals -> coefficients of a stationary AR polynomial (Monahan 1984).

    Each real maps to a partial autocorrelation in (-1, 1) by x / sqrt(1 + x^2); the
    Durbin-Levinson recursion turns those into AR coefficients.
    """
    return _constrain(np.ascontiguousarray(x, dtype=float))


def unconstrain(phi: np.ndarray) -> np.ndarray:
    """Inverse of :func:`constrain` for a stationary AR polynomial (Levinson step-down)."""
    n = phi.shape[0]
    cur = phi.astype(float).copy()
    r = np.zeros(n)
    for k in range(n - 1, -1, -1):
        rk = float(np.clip(cur[k], -0.9999, 0.9999))
        r[k] = rk
        if k:
            prev = (cur[:k] + rk * cur[:k][::-1]) / (1.0 - rk * rk)
            cur = prev
    return r / np.sqrt(1.0 - r * r)


_POWERS: dict[tuple[float, int], np.ndarray] = {}


def _powers(limit: float, n: int) -> np.ndarray:
    """``limit ** [1, ..., n]`` (numpy's power, computed once per limit and length)."""
    key = (limit, n)
    got = _POWERS.get(key)
    if got is None:
        got = _POWERS[key] = float(limit) ** np.arange(1, n + 1)
    return got


def _floats(coefs) -> np.ndarray:
    return np.ascontiguousarray(coefs, dtype=float)


def roots_outside(coefs, limit: float = 1.0) -> bool:
    """Every root of 1 - sum c_i z^i has modulus above ``limit`` (Levinson step-down, no roots).

    The roots of c(limit z) are those of c(z) divided by ``limit``, so the test is the
    stationarity of the coefficients c_i limit^i: every step-down partial autocorrelation
    strictly inside (-1, 1).
    """
    c = _floats(coefs)
    return bool(_roots_ok(c, _powers(limit, c.size), 1.0))


def admissible(ar, ma, sar, sma, m: int, limit: float) -> bool:
    """No AR or MA root (seasonal factors included) within ``limit`` of the unit circle."""
    ar, ma, sar, sma = _floats(ar), _floats(ma), _floats(sar), _floats(sma)
    season = limit**m
    return bool(
        _admissible(
            ar, ma, sar, sma,
            _powers(limit, ar.size), _powers(limit, ma.size),
            _powers(season, sar.size), _powers(season, sma.size),
        )
    )  # fmt: skip

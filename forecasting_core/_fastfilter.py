"""Compiled Kalman filter of a full ARIMA (differencing in the state) and its forecasts.

Split from ``_fastkernels`` (same conventions: plain Python/numpy ``*_py`` functions compiled
with numba when it is installed, ``cache=True``). Used by ``_fastforecast`` for hindcast
forecasts; the likelihood it returns is the exact (diffuse) ARIMA likelihood.
"""

from __future__ import annotations

import math

import numpy as np

from forecasting_core._fastkernels import _compile

__all__: list[str] = []


def _arima_filter_py(
    u: np.ndarray, phi: np.ndarray, theta: np.ndarray, delta: np.ndarray, steps: int
) -> tuple[float, float, int, np.ndarray, np.ndarray]:
    """Kalman filter of an ARIMA (differencing in the state) and its forecasts.

    ``u`` is the series with its regression part (constant or drift) removed; with
    ``K = len(delta)`` the differencing (1 - sum delta_i B^i) = (1 - B)^d (1 - B^m)^D, the
    first K values must be observed: they fix the integrated part of the state exactly and
    the ARMA part starts at its stationary distribution (the exact diffuse likelihood).
    Later values may be NaN. Unit innovation variance: multiply variances by sigma2.

    Returns (sum v^2 / F, sum log F, observations used, forecast means, forecast variances)
    for the ``steps`` periods after the end of ``u``.
    """
    p = phi.shape[0]
    q = theta.shape[0]
    r = max(p, q + 1)
    K = delta.shape[0]
    s = r + K
    ph = np.zeros(r)
    for i in range(p):
        ph[i] = phi[i]
    R = np.zeros(r)
    R[0] = 1.0
    for j in range(q):
        R[j + 1] = theta[j]
    P = np.zeros((s, s))
    P0 = _stationary_cov(ph, R)
    for i in range(r):
        for j in range(r):
            P[i, j] = P0[i, j]
    a = np.zeros(s)
    for i in range(K):
        a[r + i] = u[K - 1 - i]
    Z = np.zeros(s)
    Z[0] = 1.0
    for i in range(K):
        Z[r + i] = delta[i]
    PZ = np.empty(s)
    TP = np.empty((s, s))
    ssq = 0.0
    sumlog = 0.0
    nobs = 0
    n = u.shape[0]
    mean = np.empty(steps)
    var = np.empty(steps)
    for t in range(K, n + steps):
        for i in range(s):
            acc = 0.0
            for j in range(s):
                acc += P[i, j] * Z[j]
            PZ[i] = acc
        F = 0.0
        fc = 0.0
        for i in range(s):
            F += Z[i] * PZ[i]
            fc += Z[i] * a[i]
        if t >= n:
            mean[t - n] = fc
            var[t - n] = F
        elif not math.isnan(u[t]):
            if not F > 0.0:
                return math.inf, math.inf, 0, mean, var
            v = u[t] - fc
            for i in range(s):
                a[i] += PZ[i] * v / F
            for i in range(s):
                for j in range(s):
                    P[i, j] -= PZ[i] * PZ[j] / F
            ssq += v * v / F
            sumlog += math.log(F)
            nobs += 1
        # predict with the sparse transition: ARMA companion block, then u_t = Z s_t shifted in
        new0 = 0.0
        for j in range(s):
            new0 += Z[j] * a[j]
        a0 = a[0]
        for i in range(K - 1, 0, -1):
            a[r + i] = a[r + i - 1]
        if K > 0:
            a[r] = new0
        for i in range(r - 1):
            a[i] = ph[i] * a0 + a[i + 1]
        a[r - 1] = ph[r - 1] * a0
        _tmul_rows(P, TP, ph, Z, r, K)
        # P <- TP T' + R R' : the same row operation applied to the transpose
        for i in range(s):
            for j in range(s):
                P[j, i] = TP[i, j]
        _tmul_rows(P, TP, ph, Z, r, K)
        for i in range(s):
            for j in range(s):
                P[i, j] = TP[j, i]
        for i in range(r):
            for j in range(r):
                P[i, j] += R[i] * R[j]
    return ssq, sumlog, nobs, mean, var


def _tmul_rows_py(M: np.ndarray, out: np.ndarray, ph: np.ndarray, Z: np.ndarray, r: int, K: int) -> None:
    """out = T M for the ARIMA transition T (companion ARMA block, then the differencing rows)."""
    s = r + K
    for j in range(s):
        m0 = M[0, j]
        for i in range(r - 1):
            out[i, j] = ph[i] * m0 + M[i + 1, j]
        out[r - 1, j] = ph[r - 1] * m0
        if K > 0:
            acc = 0.0
            for c in range(s):
                acc += Z[c] * M[c, j]
            out[r, j] = acc
            for i in range(1, K):
                out[r + i, j] = M[r + i - 1, j]


def _stationary_cov_py(ph: np.ndarray, R: np.ndarray) -> np.ndarray:
    """Unconstrained state covariance P = T P T' + R R' of the companion form (doubling)."""
    r = ph.shape[0]
    P = np.empty((r, r))
    for i in range(r):
        for j in range(r):
            P[i, j] = R[i] * R[j]
    A = np.zeros((r, r))
    for i in range(r):
        A[i, 0] = ph[i]
        if i + 1 < r:
            A[i, i + 1] = 1.0
    for _ in range(64):
        AP = A @ P
        P += AP @ A.T
        A = A @ A
        if np.max(np.abs(A)) < 1e-13:
            break
    return P


_arima_filter = _compile(_arima_filter_py)
_tmul_rows = _compile(_tmul_rows_py)
_stationary_cov = _compile(_stationary_cov_py)

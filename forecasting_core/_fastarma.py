"""A lean exact-likelihood ARMA fit for screening the order grid.

statsmodels' state-space ARIMA is the reference implementation: every model Haulcast reports is
refitted there. This module only makes the search cheap. It evaluates the exact Gaussian
likelihood of an ARMA(p, q) with an optional mean on the (already differenced) series with a
small Kalman filter in Harvey's state-space form, concentrating the innovation variance out, and
maximises it over the stationary and invertible region through the Monahan (1984) / Jones (1980)
partial-autocorrelation reparametrisation. Missing values are skipped in the filter (their
prediction step still runs), so gaps enter the likelihood instead of being dropped.

The filter is compiled with numba when it is installed (cached on disk, so the compile cost is
paid once per machine) and runs as plain numpy otherwise; both give the same numbers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import optimize

try:  # numba is optional: the pure-numpy path gives the same results, only slower.
    import numba

    _HAVE_NUMBA = True
except ImportError:  # pragma: no cover - exercised by the fallback test through monkeypatching
    numba = None
    _HAVE_NUMBA = False

_LOG_2PI = math.log(2.0 * math.pi)


def _harvey_loglik_py(w: np.ndarray, phi: np.ndarray, theta: np.ndarray) -> tuple[float, float, int]:
    """Kalman filter of a zero-mean ARMA with unit innovation variance.

    Returns (sum of v_t^2 / F_t, sum of log F_t, number of observations used); the caller
    concentrates sigma2 out. ``phi``/``theta`` follow x_t = sum phi_i x_{t-i} + e_t + sum theta_j e_{t-j}.
    The transition matrix is the companion form (first column phi, ones above the diagonal), so
    every product with it is written out in O(r^2) loops without temporary arrays or BLAS calls:
    (T M)[i, j] = phi_i M[0, j] + M[i+1, j].
    """
    p = phi.shape[0]
    q = theta.shape[0]
    r = max(p, q + 1)
    ph = np.zeros(r)
    for i in range(p):
        ph[i] = phi[i]
    R = np.zeros(r)
    R[0] = 1.0
    for j in range(q):
        R[j + 1] = theta[j]
    # Unconditional state covariance P = T P T' + R R' by fixed-point iteration with doubling
    # of the horizon covered: P_{k+1} = P_k + A_k P_k A_k', A_{k+1} = A_k A_k, A_0 = T.
    P = np.empty((r, r))
    for i in range(r):
        for j in range(r):
            P[i, j] = R[i] * R[j]
    A = np.zeros((r, r))
    for i in range(r):
        A[i, 0] = ph[i]
        if i + 1 < r:
            A[i, i + 1] = 1.0
    AP = np.empty((r, r))
    AA = np.empty((r, r))
    for _ in range(64):
        for i in range(r):
            for j in range(r):
                acc = 0.0
                for k in range(r):
                    acc += A[i, k] * P[k, j]
                AP[i, j] = acc
        biggest = 0.0
        for i in range(r):
            for j in range(r):
                acc = 0.0
                for k in range(r):
                    acc += AP[i, k] * A[j, k]
                P[i, j] += acc
        for i in range(r):
            for j in range(r):
                acc = 0.0
                for k in range(r):
                    acc += A[i, k] * A[k, j]
                AA[i, j] = acc
                if abs(acc) > biggest:
                    biggest = abs(acc)
        for i in range(r):
            for j in range(r):
                A[i, j] = AA[i, j]
        if biggest < 1e-13:
            break
    a = np.zeros(r)
    K = np.empty(r)
    row0 = np.empty(r)
    TP = np.empty((r, r))
    ssq = 0.0
    sumlog = 0.0
    nobs = 0
    for t in range(w.shape[0]):
        y = w[t]
        if not math.isnan(y):
            F = P[0, 0]
            if not F > 0.0:
                return math.inf, math.inf, 0
            v = y - a[0]
            for i in range(r):
                K[i] = P[i, 0] / F
            for i in range(r):
                a[i] += K[i] * v
            for j in range(r):
                row0[j] = P[0, j]
            for i in range(r):
                for j in range(r):
                    P[i, j] -= K[i] * row0[j]
            ssq += v * v / F
            sumlog += math.log(F)
            nobs += 1
        # Predict: a <- T a, P <- T P T' + R R'.
        a0 = a[0]
        for i in range(r - 1):
            a[i] = ph[i] * a0 + a[i + 1]
        a[r - 1] = ph[r - 1] * a0
        for i in range(r):
            for j in range(r):
                TP[i, j] = ph[i] * P[0, j] + (P[i + 1, j] if i + 1 < r else 0.0)
        for i in range(r):
            for j in range(r):
                P[i, j] = TP[i, 0] * ph[j] + (TP[i, j + 1] if j + 1 < r else 0.0) + R[i] * R[j]
    return ssq, sumlog, nobs


def _constrain_py(x: np.ndarray) -> np.ndarray:
    n = x.shape[0]
    phi = np.zeros(n)
    prev = np.zeros(n)
    for k in range(n):
        rk = x[k] / math.sqrt(1.0 + x[k] * x[k])
        for j in range(k):
            prev[j] = phi[j]
        phi[k] = rk
        for j in range(k):
            phi[j] = prev[j] - rk * prev[k - 1 - j]
    return phi


def _expand_py(short: np.ndarray, seasonal: np.ndarray, m: int, sign: float) -> np.ndarray:
    """Lag coefficients of (1 + sign*sum a_i B^i)(1 + sign*sum A_j B^{mj}), times sign."""
    p = short.shape[0]
    big = seasonal.shape[0]
    out = np.zeros(p + m * big)
    for i in range(p):
        out[i] += short[i]
    for j in range(big):
        out[m * (j + 1) - 1] += seasonal[j]
        for i in range(p):
            out[m * (j + 1) + i] += sign * short[i] * seasonal[j]
    return out


def _negloglik_py(
    x: np.ndarray, ws: np.ndarray, p: int, q: int, P: int, Q: int, m: int, mean: bool
) -> float:
    """Concentrated negative log-likelihood at unconstrained parameters x (standardised scale)."""
    ar = _constrain(x[:p])
    ma = -_constrain(x[p : p + q])
    sar = _constrain(x[p + q : p + q + P])
    sma = -_constrain(x[p + q + P : p + q + P + Q])
    if P > 0 or Q > 0:
        phi = _expand(ar, sar, m, -1.0)
        theta = _expand(ma, sma, m, 1.0)
    else:
        phi = ar
        theta = ma
    mu = x[p + q + P + Q] if mean else 0.0
    ssq, sumlog, n = _harvey_loglik(ws - mu, phi, theta)
    if n == 0 or not (ssq > 0.0) or not math.isfinite(ssq):
        return 1e10
    return 0.5 * (n * (_LOG_2PI + math.log(ssq / n) + 1.0) + sumlog)


def _value_and_grad_py(
    x: np.ndarray, ws: np.ndarray, p: int, q: int, P: int, Q: int, m: int, mean: bool
) -> tuple[float, np.ndarray]:
    """Negative log-likelihood and its forward-difference gradient in one compiled call."""
    f0 = _negloglik(x, ws, p, q, P, Q, m, mean)
    k = x.shape[0]
    grad = np.zeros(k)
    xh = x.copy()
    for i in range(k):
        h = 1e-7 * max(1.0, abs(x[i]))
        xh[i] = x[i] + h
        grad[i] = (_negloglik(xh, ws, p, q, P, Q, m, mean) - f0) / h
        xh[i] = x[i]
    return f0, grad


if _HAVE_NUMBA:
    _harvey_loglik = numba.njit(cache=True)(_harvey_loglik_py)
    _constrain = numba.njit(cache=True)(_constrain_py)
    _expand = numba.njit(cache=True)(_expand_py)
    _negloglik = numba.njit(cache=True)(_negloglik_py)
    _value_and_grad = numba.njit(cache=True)(_value_and_grad_py)
else:  # pragma: no cover
    _harvey_loglik = _harvey_loglik_py
    _constrain = _constrain_py
    _expand = _expand_py
    _negloglik = _negloglik_py
    _value_and_grad = _value_and_grad_py


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


@dataclass(frozen=True)
class FastFit:
    """Screening fit of one (seasonal) ARMA on a differenced series.

    Parameters
    ----------
    p, q : int
        Non-seasonal AR and MA orders.
    P, Q, m : int
        Seasonal AR and MA orders and the season length (1 when non-seasonal).
    mean : bool
        A mean (constant for d = 0, drift for d = 1) was estimated.
    loglik : float
        Exact Gaussian log-likelihood with sigma2 concentrated out.
    nobs : int
        Observations that entered the likelihood (non-missing values of the differenced series).
    mu : float
        Mean of the differenced series (0 when ``mean`` is False).
    ar, ma, seasonal_ar, seasonal_ma : numpy.ndarray
        Coefficients, x_t = sum ar_i x_{t-i} + e_t + sum ma_j e_{t-j} (seasonal ones at lags m, 2m).
    sigma2 : float
        Innovation variance.
    x : numpy.ndarray
        The unconstrained optimum ``[ar, ma, seasonal_ar, seasonal_ma, mean]`` (for warm starts).
    converged : bool
    """

    p: int
    q: int
    P: int
    Q: int
    m: int
    mean: bool
    loglik: float
    nobs: int
    mu: float
    ar: np.ndarray
    ma: np.ndarray
    seasonal_ar: np.ndarray
    seasonal_ma: np.ndarray
    sigma2: float
    x: np.ndarray
    converged: bool

    @property
    def n_params(self) -> int:
        """Parameters as statsmodels counts them: AR, MA, seasonal AR and MA, mean and sigma2."""
        return self.p + self.q + self.P + self.Q + int(self.mean) + 1

    def aicc(self, nobs: int | None = None) -> float:
        """AICc = AIC + 2k(k+1)/(n-k-1) (Hurvich & Tsai 1989); ``nobs`` overrides n."""
        k = self.n_params
        n = self.nobs if nobs is None else nobs
        aic = -2.0 * self.loglik + 2.0 * k
        if n - k - 1 <= 0:
            return math.inf
        return aic + 2.0 * k * (k + 1) / (n - k - 1)


def _profile_loglik(w: np.ndarray, phi: np.ndarray, theta: np.ndarray) -> tuple[float, float, int]:
    ssq, sumlog, n = _harvey_loglik(w, phi, theta)
    if n == 0 or not math.isfinite(ssq) or ssq <= 0.0:
        return -math.inf, math.nan, n
    sigma2 = ssq / n
    return -0.5 * (n * (_LOG_2PI + math.log(sigma2) + 1.0) + sumlog), sigma2, n


def fit_arma(
    w: np.ndarray,
    p: int,
    q: int,
    mean: bool,
    *,
    P: int = 0,
    Q: int = 0,
    m: int = 1,
    start: np.ndarray | None = None,
    maxiter: int = 200,
) -> FastFit:
    """Maximum-likelihood (seasonal) ARMA with an optional mean on a stationary series.

    Parameters
    ----------
    w : numpy.ndarray
        The differenced, transformed series (NaN for missing values).
    p, q : int
        AR and MA orders.
    mean : bool
        Estimate a mean (the constant of a d = 0 model, the drift of a d = 1 model).
    P, Q : int
        Seasonal AR and MA orders.
    m : int
        Season length in periods (12 monthly, 4 quarterly; 1 when non-seasonal).
    start : numpy.ndarray, optional
        Unconstrained starting point ``[ar, ma, seasonal_ar, seasonal_ma, mean]`` (e.g. a
        neighbouring order's optimum padded with zeros).
    maxiter : int
        Iteration cap of the quasi-Newton optimiser.
    """
    w = np.ascontiguousarray(w, dtype=float)
    finite = w[np.isfinite(w)]
    scale = float(np.std(finite)) or 1.0
    centre = float(np.mean(finite)) if mean else 0.0
    # Work on a standardised series so one set of tolerances fits every unit (t, kg per tow, deg C).
    ws = (w - centre) / scale
    k = p + q + P + Q + int(mean)
    cuts = np.cumsum([p, q, P, Q])

    def unpack(x: np.ndarray) -> tuple[np.ndarray, ...]:
        ar = constrain(x[: cuts[0]])
        ma = -constrain(x[cuts[0] : cuts[1]])
        sar = constrain(x[cuts[1] : cuts[2]])
        sma = -constrain(x[cuts[2] : cuts[3]])
        mu = float(x[cuts[3]]) if mean else 0.0
        return ar, ma, sar, sma, mu

    def full(ar, ma, sar, sma) -> tuple[np.ndarray, np.ndarray]:
        if P or Q:
            return _expand(ar, sar, m, -1.0), _expand(ma, sma, m, 1.0)
        return ar, ma

    def objective(x: np.ndarray) -> tuple[float, np.ndarray]:
        return _value_and_grad(x, ws, p, q, P, Q, m, mean)

    x0 = np.zeros(k) if start is None else np.asarray(start, dtype=float).copy()
    if mean and start is not None:
        x0[-1] = (x0[-1] - centre) / scale
    converged = True
    if k:
        res = optimize.minimize(
            objective, x0, jac=True, method="L-BFGS-B", options={"maxiter": maxiter, "gtol": 1e-6}
        )
        x = res.x
        converged = bool(res.success) or res.status == 2  # 2: precision loss near the optimum
    else:
        x = x0
    ar, ma, sar, sma, mu = unpack(x)
    phi, theta = full(ar, ma, sar, sma)
    ll, sigma2s, n = _profile_loglik(ws - mu, phi, theta)
    # Back to the data's own scale: the likelihood shifts by -n log(scale).
    loglik = ll - n * math.log(scale)
    x_out = x.copy()
    if mean:
        x_out[-1] = centre + scale * mu
    return FastFit(
        p=p,
        q=q,
        P=P,
        Q=Q,
        m=m,
        mean=mean,
        loglik=float(loglik),
        nobs=int(n),
        mu=float(centre + scale * mu) if mean else 0.0,
        ar=ar,
        ma=ma,
        seasonal_ar=sar,
        seasonal_ma=sma,
        sigma2=float(sigma2s * scale * scale),
        x=x_out,
        converged=converged and math.isfinite(loglik),
    )


def difference(z: np.ndarray, d: int, D: int = 0, m: int = 1) -> np.ndarray:
    """Apply D seasonal (lag m) and d ordinary differences; NaN propagates."""
    w = np.asarray(z, dtype=float)
    for _ in range(D):
        w = w[m:] - w[:-m]
    for _ in range(d):
        w = w[1:] - w[:-1]
    return w


Spec = tuple[tuple[int, int, int], "tuple[int, int, int, int] | None", bool]


def _pad(prev: FastFit, p: int, q: int, P: int, Q: int) -> np.ndarray:
    """A neighbour's unconstrained optimum with zeros for the new lag terms."""
    blocks, at = [], 0
    for have, want in ((prev.p, p), (prev.q, q), (prev.P, P), (prev.Q, Q)):
        blocks.extend(list(prev.x[at : at + have]) + [0.0] * (want - have))
        at += have
    if prev.mean:
        blocks.append(prev.x[-1])
    return np.array(blocks)


def screen_specs(z: np.ndarray, specs: list[Spec]) -> dict[Spec, tuple[float, dict[str, float], bool]]:
    """Screen ARIMA specifications on a transformed series with the compiled likelihood.

    Parameters
    ----------
    z : numpy.ndarray
        The transformed series in time order (NaN for missing periods).
    specs : list of ((p, d, q), (P, D, Q, m) or None, constant)
        The orders to screen.

    Returns
    -------
    dict
        spec -> (AICc, start parameters by statsmodels name, converged). AICc counts k and n
        as statsmodels does (sigma2 included; n = observations after differencing). With
        d + D > 0 a missing value also hides its neighbours' differences, so the screening
        likelihood of a gappy differenced series is approximate: the exact refit decides.
    """
    with _one_blas_thread():
        return _screen_specs(z, specs)


def _one_blas_thread():
    """L-BFGS-B calls BLAS on vectors of a few numbers; extra BLAS threads only spin-wait."""
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1, user_api="blas")


def _screen_specs(z: np.ndarray, specs: list[Spec]) -> dict[Spec, tuple[float, dict[str, float], bool]]:
    out: dict[Spec, tuple[float, dict[str, float], bool]] = {}
    seen = int(np.isfinite(z).sum())
    fits: dict[tuple, FastFit] = {}

    def complexity(spec: Spec) -> tuple:
        (p, d, q), seas, const = spec
        P, D, Q, m = seas if seas else (0, 0, 0, 1)
        return (d, D, m, const, p + q + P + Q, p, P, Q)

    for spec in sorted(specs, key=complexity):
        (p, d, q), seas, const = spec
        P, D, Q, m = seas if seas else (0, 0, 0, 1)
        key = (d, D, m, const)
        w = difference(z, d, D, m)
        start = None
        for dp, dq, dP, dQ in ((1, 0, 0, 0), (0, 1, 0, 0), (0, 0, 1, 0), (0, 0, 0, 1)):
            prev = fits.get((*key, p - dp, q - dq, P - dP, Q - dQ))
            if prev is not None and prev.converged:
                start = _pad(prev, p, q, P, Q)
                break
        fit = fit_arma(w, p, q, const, P=P, Q=Q, m=m, start=start)
        fits[(*key, p, q, P, Q)] = fit
        params: dict[str, float] = {}
        if const:
            lag = m if (D and not d) else 1
            params["const" if d + D == 0 else "drift"] = fit.mu / lag
        params.update({f"ar.L{i + 1}": float(v) for i, v in enumerate(fit.ar)})
        params.update({f"ma.L{j + 1}": float(v) for j, v in enumerate(fit.ma)})
        params.update({f"ar.S.L{m * (i + 1)}": float(v) for i, v in enumerate(fit.seasonal_ar)})
        params.update({f"ma.S.L{m * (j + 1)}": float(v) for j, v in enumerate(fit.seasonal_ma)})
        params["sigma2"] = fit.sigma2
        out[spec] = (fit.aicc(seen - d - D * m), params, fit.converged)
    return out


def warm_up() -> None:
    """Compile (or load from numba's on-disk cache) the screening code.

    A server calls this at start so that no user request pays for the compile (about 13 s
    cold on a 2-core machine, well under a second from the cache). Safe to call twice.
    """
    w = np.array([0.1, -0.2, 0.3, np.nan, 0.05, -0.1, 0.2, 0.0])
    fit_arma(w, 1, 1, True)
    fit_arma(w, 1, 0, False, P=1, Q=1, m=2)

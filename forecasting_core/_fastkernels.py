"""Compiled kernels of the fast ARIMA path: Kalman filters, objectives and a BFGS optimiser.

Every function here is written once in plain Python/numpy (``*_py``) and compiled with numba
when it is installed (``cache=True``: compiled code is kept on disk, so the compile cost is
paid once per machine). Without numba the plain versions run and give the same numbers.
``_fastarma`` holds the Python-level API on top of these kernels.

Sign convention: x_t = sum phi_i x_{t-i} + e_t + sum theta_j e_{t-j}.
"""

from __future__ import annotations

import math

import numpy as np

try:  # numba is optional: the pure-numpy path gives the same results, only slower.
    import numba

    HAVE_NUMBA = True
except ImportError:  # pragma: no cover - exercised by the fallback test through monkeypatching
    numba = None
    HAVE_NUMBA = False

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
    Pold = P.copy()
    ssq = 0.0
    sumlog = 0.0
    nobs = 0
    # Once the predicted covariance stops changing (the Riccati recursion has converged, to
    # 1e-13 of F), F and the gain are constant: only the state is updated from then on, until
    # a missing value makes the covariance move again.
    steady = False
    Fs = 0.0
    logFs = 0.0
    for t in range(w.shape[0]):
        y = w[t]
        observed = not math.isnan(y)
        if steady and observed:
            v = y - a[0]
            for i in range(r):
                a[i] += K[i] * v
            ssq += v * v / Fs
            sumlog += logFs
            nobs += 1
            a0 = a[0]
            for i in range(r - 1):
                a[i] = ph[i] * a0 + a[i + 1]
            a[r - 1] = ph[r - 1] * a0
            continue
        steady = False
        if observed:
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
        # test for convergence every fourth step only (the comparison costs a third of a step)
        phase = t % 4
        if phase == 2:
            for i in range(r):
                for j in range(r):
                    Pold[i, j] = P[i, j]
            continue
        if phase != 3:
            continue
        change = math.inf if not observed else 0.0
        for i in range(r):
            for j in range(r):
                diff = abs(P[i, j] - Pold[i, j])
                if diff > change:
                    change = diff
        if observed and P[0, 0] > 0.0 and change <= 1e-13 * P[0, 0]:
            steady = True
            Fs = P[0, 0]
            logFs = math.log(Fs)
            for i in range(r):
                K[i] = P[i, 0] / Fs
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


def _css_py(x: np.ndarray, ws: np.ndarray, p: int, q: int, P: int, Q: int, m: int, mean: bool) -> float:
    """Concentrated conditional-sum-of-squares objective at unconstrained parameters x.

    Residuals e_t = w_t - mu - sum phi_i (w_{t-i} - mu) - sum theta_j e_{t-j} for t >= the AR
    span, with earlier residuals set to zero (Box & Jenkins' conditional likelihood);
    returns (n / 2) log(sum e_t^2 / n). ``ws`` must have no missing values.
    """
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
    n = ws.shape[0]
    lp = phi.shape[0]
    lq = theta.shape[0]
    e = np.zeros(n)
    ssq = 0.0
    count = 0
    for t in range(lp, n):
        v = ws[t] - mu
        for i in range(lp):
            v -= phi[i] * (ws[t - 1 - i] - mu)
        for j in range(lq):
            if t - 1 - j >= lp:
                v -= theta[j] * e[t - 1 - j]
        e[t] = v
        ssq += v * v
        count += 1
    if count == 0 or not (ssq > 0.0) or not math.isfinite(ssq):
        return 1e10
    return 0.5 * count * math.log(ssq / count)


def _objective_py(
    x: np.ndarray, ws: np.ndarray, p: int, q: int, P: int, Q: int, m: int, mean: bool, kind: int
) -> float:
    """kind 0: exact negative log-likelihood; kind 1: conditional sum of squares."""
    if kind == 1:
        return _css(x, ws, p, q, P, Q, m, mean)
    return _negloglik(x, ws, p, q, P, Q, m, mean)


def _gradient_py(
    x: np.ndarray, f0: float, ws: np.ndarray, p: int, q: int, P: int, Q: int, m: int, mean: bool,
    kind: int, central: bool, g: np.ndarray,
) -> None:
    """Forward (or central) finite-difference gradient written into ``g``."""
    xh = x.copy()
    for i in range(x.shape[0]):
        if central:
            h = 1e-5 * max(1.0, abs(x[i]))
            xh[i] = x[i] + h
            fp = _objective(xh, ws, p, q, P, Q, m, mean, kind)
            xh[i] = x[i] - h
            fm = _objective(xh, ws, p, q, P, Q, m, mean, kind)
            g[i] = (fp - fm) / (2.0 * h)
        else:
            h = 1e-7 * max(1.0, abs(x[i]))
            xh[i] = x[i] + h
            g[i] = (_objective(xh, ws, p, q, P, Q, m, mean, kind) - f0) / h
        xh[i] = x[i]


def _bfgs_py(
    x0: np.ndarray, H0: np.ndarray, ws: np.ndarray, p: int, q: int, P: int, Q: int, m: int, mean: bool,
    kind: int, maxiter: int, gtol: float, central: bool,
) -> tuple[np.ndarray, float, int, int, np.ndarray]:
    """Minimise the objective by BFGS with a backtracking (Armijo) line search.

    ``H0`` is a starting inverse Hessian (k x k, e.g. a neighbouring fit's final one, which
    cuts the iterations of a warm start several-fold) or an empty (0 x 0) array for the
    identity. Returns (x, f, status, iterations, inverse Hessian); status 0 converged (largest
    gradient component below ``gtol``, or no further decrease possible at a gradient below
    100 gtol), 1 iteration cap, 2 the line search failed away from an optimum.
    """
    k = x0.shape[0]
    x = x0.copy()
    f = _objective(x, ws, p, q, P, Q, m, mean, kind)
    g = np.empty(k)
    _gradient(x, f, ws, p, q, P, Q, m, mean, kind, central, g)
    fresh = True
    H = np.eye(k)
    if H0.shape[0] == k and k > 0:
        H = H0.copy()
        fresh = False
    gn = np.empty(k)
    status = 1
    it = 0
    while it < maxiter:
        gmax = 0.0
        for i in range(k):
            if abs(g[i]) > gmax:
                gmax = abs(g[i])
        if gmax < gtol:
            status = 0
            break
        d = -(H @ g)
        slope = 0.0
        for i in range(k):
            slope += d[i] * g[i]
        if not slope < 0.0:
            H = np.eye(k)
            fresh = True
            d = -g.copy()
            slope = -(g @ g)
        step = 1.0
        if fresh:
            dmax = 0.0
            for i in range(k):
                if abs(d[i]) > dmax:
                    dmax = abs(d[i])
            if dmax > 1.0:
                step = 1.0 / dmax
        ok = False
        fnew = f
        xnew = x.copy()
        for _ in range(40):
            for i in range(k):
                xnew[i] = x[i] + step * d[i]
            fnew = _objective(xnew, ws, p, q, P, Q, m, mean, kind)
            if fnew <= f + 1e-4 * step * slope:
                ok = True
                break
            # quadratic interpolation, kept within [0.1, 0.5] of the last step
            denom = 2.0 * (fnew - f - slope * step)
            trial = -slope * step * step / denom if denom > 0.0 and math.isfinite(denom) else 0.5 * step
            step = min(max(trial, 0.1 * step), 0.5 * step)
        if not ok:
            if fresh:
                status = 0 if gmax < 100.0 * gtol else 2
                break
            H = np.eye(k)
            fresh = True
            continue
        _gradient(xnew, fnew, ws, p, q, P, Q, m, mean, kind, central, gn)
        s = xnew - x
        yv = gn - g
        sy = s @ yv
        if sy > 1e-12:
            if fresh:
                H = np.eye(k) * (sy / (yv @ yv))
            Hy = H @ yv
            yHy = yv @ Hy
            for i in range(k):
                for j in range(k):
                    H[i, j] += ((sy + yHy) * s[i] * s[j]) / (sy * sy) - (Hy[i] * s[j] + s[i] * Hy[j]) / sy
            fresh = False
        small = abs(f - fnew) <= 1e-13 * max(1.0, abs(f))
        x = xnew
        f = fnew
        for i in range(k):
            g[i] = gn[i]
        it += 1
        if small:
            gmax = 0.0
            for i in range(k):
                if abs(g[i]) > gmax:
                    gmax = abs(g[i])
            status = 0 if gmax < 100.0 * gtol else 2
            break
    return x, f, status, it, H


def _finish_py(
    x: np.ndarray, ws: np.ndarray, p: int, q: int, P: int, Q: int, m: int, mean: bool
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, float, float, float, int]:
    """Coefficients and exact-likelihood terms at unconstrained ``x`` (standardised scale).

    Returns (ar, ma, seasonal ar, seasonal ma, mean, sum v^2 / F, sum log F, observations):
    what ``_fastarma`` reports for a fit, in one call instead of one per polynomial.
    """
    ar = _constrain(x[:p])
    ma = -_constrain(x[p : p + q])
    sar = _constrain(x[p + q : p + q + P])
    sma = -_constrain(x[p + q + P : p + q + P + Q])
    mu = x[p + q + P + Q] if mean else 0.0
    if P > 0 or Q > 0:
        phi = _expand(ar, sar, m, -1.0)
        theta = _expand(ma, sma, m, 1.0)
    else:
        phi = ar
        theta = ma
    ssq, sumlog, n = _harvey_loglik(ws - mu, phi, theta)
    return ar, ma, sar, sma, mu, ssq, sumlog, n


def _roots_ok_py(c: np.ndarray, powers: np.ndarray, sign: float) -> bool:
    """Every root of 1 - sum (sign c_i) z^i lies outside the circle the ``powers`` scale to.

    ``powers`` holds limit^1 .. limit^k: the roots of c(limit z) are those of c(z) divided
    by ``limit``, so the test is the stationarity of ``sign c_i limit^i`` (every Levinson
    step-down partial autocorrelation strictly inside (-1, 1)).
    """
    n = c.shape[0]
    cur = np.empty(n)
    for i in range(n):
        cur[i] = (sign * c[i]) * powers[i]
    for k in range(n - 1, -1, -1):
        rk = cur[k]
        if not abs(rk) < 1.0:
            return False
        if k:
            denom = 1.0 - rk * rk
            new = np.empty(k)
            for i in range(k):
                new[i] = (cur[i] + rk * cur[k - 1 - i]) / denom
            cur = new
    return True


def _admissible_py(
    ar: np.ndarray, ma: np.ndarray, sar: np.ndarray, sma: np.ndarray,
    p_ar: np.ndarray, p_ma: np.ndarray, p_sar: np.ndarray, p_sma: np.ndarray,
) -> bool:
    """:func:`_roots_ok` of the four polynomials (MA ones with the sign turned), in order."""
    return (
        _roots_ok(ar, p_ar, 1.0)
        and _roots_ok(ma, p_ma, -1.0)
        and _roots_ok(sar, p_sar, 1.0)
        and _roots_ok(sma, p_sma, -1.0)
    )


def _compile(f):
    return numba.njit(cache=True)(f) if HAVE_NUMBA else f


_harvey_loglik = _compile(_harvey_loglik_py)
_constrain = _compile(_constrain_py)
_expand = _compile(_expand_py)
_negloglik = _compile(_negloglik_py)
_css = _compile(_css_py)
_objective = _compile(_objective_py)
_gradient = _compile(_gradient_py)
_bfgs = _compile(_bfgs_py)
_finish = _compile(_finish_py)
_roots_ok = _compile(_roots_ok_py)
_admissible = _compile(_admissible_py)

"""A lean exact-likelihood ARMA fit for the order grid, the final fits and the hindcast.

statsmodels' state-space ARIMA is the reference implementation: every model Haulcast reports
in detail is handed to statsmodels (``filter(params)``: its own likelihood, AICc and roots at
these parameters). This module makes the work before that cheap. It evaluates the exact
Gaussian likelihood of an ARMA(p, q) with an optional mean on the (already differenced) series
with a small Kalman filter in Harvey's state-space form, concentrating the innovation variance
out, and maximises it over the stationary and invertible region through the Monahan (1984) /
Jones (1980) partial-autocorrelation reparametrisation, with a compiled BFGS optimiser (all
iterations inside one compiled call). Missing values are skipped in the filter (their
prediction step still runs), so gaps enter the likelihood instead of being dropped.

The grid is screened by conditional sum of squares (Box & Jenkins), the exact likelihood is
evaluated at each screened estimate (an upper bound of the order's best AICc), and the orders
near the best are then fitted to convergence on the exact likelihood.

The kernels live in ``_fastkernels`` (compiled with numba when it is installed, cached on
disk; plain numpy otherwise, with the same numbers).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from forecasting_core._fastkernels import HAVE_NUMBA, _bfgs, _harvey_loglik, _harvey_loglik_py
from forecasting_core._fastkernels import _finish as _finish_kernel
from forecasting_core._fastroots import admissible, constrain, roots_outside, unconstrain

__all__ = [
    "FastFit", "admissible", "constrain", "difference", "fit_arma", "roots_outside", "screen_specs",
    "standardise", "unconstrain", "warm_up",
]  # fmt: skip

_HAVE_NUMBA = HAVE_NUMBA
_LOG_2PI = math.log(2.0 * math.pi)
#: Exact-likelihood refinement of every screened order within this many AICc of the best screen.
SCREEN_MARGIN = 4.0
#: The best few after refinement are also fitted from a cold start (zeros); the higher optimum wins.
COLD_CHECK = 2
#: Convergence: largest gradient component of the negative log-likelihood (standardised series).
GTOL = 1e-4
#: Looser tolerance of a screening fit on the exact likelihood (series with gaps).
SCREEN_GTOL = 1e-2
#: Least-squares screen: loose, since it only ranks orders and starts the exact fit.
CSS_GTOL = 1e-2
CSS_MAXITER = 50
_KINDS = {"exact": 0, "css": 1}
_ = _harvey_loglik_py, _harvey_loglik  # re-exported for the tests of the filter


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
    hess_inv : numpy.ndarray or None
        The optimiser's final inverse Hessian in the standardised parametrisation (a warm
        start for a neighbouring fit, e.g. the next hindcast origin).
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
    hess_inv: np.ndarray | None = None

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
    gtol: float = GTOL,
    kind: str = "exact",
    hess_inv: np.ndarray | None = None,
    prepared: tuple[np.ndarray, float, float] | None = None,
) -> FastFit:
    """Maximum-likelihood (seasonal) ARMA with an optional mean on a stationary series.

    Parameters
    ----------
    w : numpy.ndarray
        The differenced, transformed series (NaN for missing values; none allowed with
        ``kind="css"``).
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
        neighbouring order's optimum padded with zeros), the mean on the data's scale.
    maxiter : int
        Iteration cap of the BFGS optimiser.
    gtol : float
        Convergence when every gradient component of the negative log-likelihood (of the
        standardised series) is below this.
    kind : {"exact", "css"}
        Maximise the exact likelihood, or minimise the conditional sum of squares (a cheap
        screen). Either way ``loglik`` is the exact likelihood at the estimate.
    hess_inv : numpy.ndarray, optional
        Starting inverse Hessian (a neighbouring fit's ``hess_inv``); identity otherwise.
    prepared : tuple, optional
        ``standardise(w, mean)``, when the caller has it already (same numbers).
    """
    ws, centre, scale = standardise(w, mean) if prepared is None else prepared
    k = p + q + P + Q + int(mean)
    x0 = np.zeros(k) if start is None else np.asarray(start, dtype=float).copy()
    if mean and start is not None:
        # a start without a mean (NaN) begins at the sample mean
        x0[-1] = 0.0 if math.isnan(x0[-1]) else (x0[-1] - centre) / scale
    if not np.all(np.isfinite(x0)):
        x0 = np.zeros(k)
    converged = True
    H = None
    if k:
        H0 = hess_inv if hess_inv is not None and hess_inv.shape == (k, k) else np.zeros((0, 0))
        x, _, status, _, H = _bfgs(x0, H0, ws, p, q, P, Q, m, bool(mean), _KINDS[kind], int(maxiter), float(gtol), False)
        converged = status == 0
    else:
        x = x0
    return _finish(x, ws, centre, scale, p, q, P, Q, m, mean, converged, H)


def standardise(w: np.ndarray, mean: bool) -> tuple[np.ndarray, float, float]:
    """``(ws, centre, scale)``: the series :func:`fit_arma` works on, its centre and scale.

    Work on a standardised series so one set of tolerances fits every unit (t, kg per tow,
    deg C): ``ws = (w - centre) / scale`` with the standard deviation of the observed values
    as scale and their mean as centre (0 without a mean). A caller fitting many orders to one
    series computes this once and passes it as ``prepared``.
    """
    w = np.ascontiguousarray(w, dtype=float)
    finite = w[np.isfinite(w)]
    scale = float(np.std(finite)) or 1.0
    centre = float(np.mean(finite)) if mean else 0.0
    return (w - centre) / scale, centre, scale


def _finish(x, ws, centre, scale, p, q, P, Q, m, mean, converged, H=None) -> FastFit:
    ar, ma, sar, sma, mu, ssq, sumlog, n = _finish_kernel(x, ws, p, q, P, Q, m, bool(mean))
    # sigma2 concentrated out
    if n == 0 or not math.isfinite(ssq) or ssq <= 0.0:
        ll, sigma2s = -math.inf, math.nan
    else:
        sigma2s = ssq / n
        ll = -0.5 * (n * (_LOG_2PI + math.log(sigma2s) + 1.0) + sumlog)
    mu = float(mu) if mean else 0.0
    # Back to the data's own scale: the likelihood shifts by -n log(scale).
    loglik = ll - n * math.log(scale)
    x_out = np.array(x, dtype=float)
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
        converged=bool(converged) and math.isfinite(loglik),
        hess_inv=H,
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


def to_params(fit: FastFit, d: int, D: int) -> dict[str, float]:
    """statsmodels-named parameters (``const``/``drift``, ``ar.L1`` ..., ``sigma2``) of a fit."""
    m = fit.m
    params: dict[str, float] = {}
    if fit.mean:
        lag = m if (D and not d) else 1
        params["const" if d + D == 0 else "drift"] = fit.mu / lag
    params.update({f"ar.L{i + 1}": float(v) for i, v in enumerate(fit.ar)})
    params.update({f"ma.L{j + 1}": float(v) for j, v in enumerate(fit.ma)})
    params.update({f"ar.S.L{m * (i + 1)}": float(v) for i, v in enumerate(fit.seasonal_ar)})
    params.update({f"ma.S.L{m * (j + 1)}": float(v) for j, v in enumerate(fit.seasonal_ma)})
    params["sigma2"] = fit.sigma2
    return params


def to_start(params: dict[str, float], order, seasonal, constant: bool) -> np.ndarray | None:
    """Unconstrained start ``[ar, ma, sar, sma, mean]`` from statsmodels-named parameters.

    Lag terms absent from ``params`` start at zero, an absent mean as NaN (``fit_arma``
    then starts it at the sample mean). None when a polynomial is not strictly
    stationary/invertible (no valid start).
    """
    p, d, q = order
    P, D, Q, m = seasonal if seasonal else (0, 0, 0, 1)
    blocks = []
    for names, sign in (
        ([f"ar.L{i}" for i in range(1, p + 1)], 1.0),
        ([f"ma.L{j}" for j in range(1, q + 1)], -1.0),
        ([f"ar.S.L{m * i}" for i in range(1, P + 1)], 1.0),
        ([f"ma.S.L{m * j}" for j in range(1, Q + 1)], -1.0),
    ):
        coefs = sign * np.array([params.get(n, 0.0) for n in names], dtype=float)
        if not roots_outside(coefs, 1.0):
            return None
        blocks.append(unconstrain(coefs))
    if constant:
        lag = m if (D and not d) else 1
        value = params.get("const" if d + D == 0 else "drift", math.nan)
        blocks.append(np.array([value * lag]))
    return np.concatenate(blocks) if blocks else np.zeros(0)


def screen_specs(
    z: np.ndarray,
    specs: list[Spec],
    *,
    margin: float = SCREEN_MARGIN,
    cold_check: int = COLD_CHECK,
    root_limit: float = 1.001,
) -> dict[Spec, tuple[float, dict[str, float], bool, bool]]:
    """Screen ARIMA specifications on a transformed series with the compiled likelihood.

    Parameters
    ----------
    z : numpy.ndarray
        The transformed series in time order (NaN for missing periods). Differencing must hide
        no gap (the caller checks): a series with gaps is screened only at d = D = 0.
    specs : list of ((p, d, q), (P, D, Q, m) or None, constant)
        The orders to screen.
    margin : float
        Orders whose screened AICc is within this of the best are fitted to convergence on
        the exact likelihood (AICc units).
    cold_check : int
        The best few after that are refitted from a cold start; the higher optimum is kept.
    root_limit : float
        Orders with an AR or MA root closer than this to the unit circle are out of the
        running; the best three others are always exact optima.

    Returns
    -------
    dict
        spec -> (AICc, parameters by statsmodels name, converged, exact). ``exact`` is True
        when the numbers are the exact-likelihood optimum; otherwise they are the exact
        likelihood at the least-squares (or loosely converged) estimate, so their AICc is an
        upper bound of the order's best. AICc counts k and n as statsmodels does (sigma2
        included; n = observations after differencing).
    """
    with _one_blas_thread():
        return _screen_specs(z, specs, margin, cold_check, root_limit)


def _one_blas_thread():
    """Tiny vectors and matrices: extra BLAS threads only spin-wait."""
    from forecasting_core._arima import one_blas_thread

    return one_blas_thread()


def _complexity(spec: Spec) -> tuple:
    (p, d, q), seas, const = spec
    P, D, Q, m = seas if seas else (0, 0, 0, 1)
    return (d, D, m, const, p + q + P + Q, p, P, Q)


def _screen_specs(z, specs, margin, cold_check, root_limit):
    seen = int(np.isfinite(z).sum())
    fits: dict[Spec, FastFit] = {}
    exact: dict[Spec, bool] = {}
    series: dict[tuple, np.ndarray] = {}
    by_key: dict[tuple, FastFit] = {}

    def parts(spec):
        (p, d, q), seas, const = spec
        P, D, Q, m = seas if seas else (0, 0, 0, 1)
        return p, d, q, P, D, Q, m, const

    def nobs(spec):
        p, d, q, P, D, Q, m, const = parts(spec)
        return seen - d - D * m

    prepared: dict[tuple, tuple[np.ndarray, float, float]] = {}

    def prep(d, D, m, const):
        """The standardised differenced series (once per difference and mean choice)."""
        key = (d, D, m, const)
        if key not in prepared:
            prepared[key] = standardise(series[(d, D, m)], const)
        return prepared[key]

    gaps: dict[tuple, bool] = {}
    for spec in sorted(specs, key=_complexity):
        p, d, q, P, D, Q, m, const = parts(spec)
        if (d, D, m) not in series:
            series[(d, D, m)] = difference(z, d, D, m)
            gaps[(d, D, m)] = not bool(np.isfinite(series[(d, D, m)]).all())
        w = series[(d, D, m)]
        gappy = gaps[(d, D, m)]
        start = None
        for dp, dq, dP, dQ in ((1, 0, 0, 0), (0, 1, 0, 0), (0, 0, 1, 0), (0, 0, 0, 1)):
            prev = by_key.get((d, D, m, const, p - dp, q - dq, P - dP, Q - dQ))
            if prev is not None and prev.converged:
                start = _pad(prev, p, q, P, Q)
                break
        ready = prep(d, D, m, const)
        if gappy:
            fit = fit_arma(w, p, q, const, P=P, Q=Q, m=m, start=start, gtol=SCREEN_GTOL, maxiter=60, prepared=ready)
        else:
            fit = fit_arma(w, p, q, const, P=P, Q=Q, m=m, start=start, gtol=CSS_GTOL, maxiter=CSS_MAXITER, kind="css", prepared=ready)
        by_key[(d, D, m, const, p, q, P, Q)] = fit
        fits[spec] = fit
        exact[spec] = False

    def aicc(spec):
        return fits[spec].aicc(nobs(spec))

    def refine(spec, start, hess_inv=None):
        p, d, q, P, D, Q, m, const = parts(spec)
        return fit_arma(series[(d, D, m)], p, q, const, P=P, Q=Q, m=m, start=start, hess_inv=hess_inv, prepared=prep(d, D, m, const))

    def usable(spec):
        """Finite and admissible (no root within ``root_limit``): could be reported as chosen."""
        fit = fits[spec]
        return math.isfinite(aicc(spec)) and admissible(fit.ar, fit.ma, fit.seasonal_ar, fit.seasonal_ma, fit.m, root_limit)

    def settle(spec, starts):
        """Exact fits from each start in turn (None = cold); keep the best converged one."""
        for start, hess in starts:
            fit = refine(spec, start, hess)
            if fit.converged and (not exact[spec] or fit.loglik > fits[spec].loglik + 1e-6):
                fits[spec] = fit
                exact[spec] = True
        return exact[spec]

    scores = {s: aicc(s) for s in fits}
    best = min((v for v in scores.values() if math.isfinite(v)), default=math.inf)
    for spec in [s for s in specs if scores[s] <= best + margin]:
        # the least-squares curvature is close to the likelihood's: a good first inverse
        # Hessian; without it (and then cold) when that start does not converge
        first = fits[spec]
        if not settle(spec, [(first.x, first.hess_inv)]):
            settle(spec, [(first.x, None), (None, None)])
    for spec in sorted((s for s in specs if exact[s]), key=aicc)[:cold_check]:
        settle(spec, [(None, None)])
    # The best few must be exact optima: refine any screened-only order that ranks among them
    # (e.g. one whose screen was far off), until the top is settled.
    failed: set = set()
    while True:
        top = []
        for s in sorted(specs, key=aicc):
            if len(top) == max(cold_check, 3):
                break
            if s not in failed and usable(s):
                top.append(s)
        todo = [s for s in top if not exact[s]]
        if not todo:
            break
        for spec in todo:
            if not settle(spec, [(fits[spec].x, None), (None, None)]):
                failed.add(spec)
    out = {}
    for spec in specs:
        p, d, q, P, D, Q, m, const = parts(spec)
        fit = fits[spec]
        out[spec] = (aicc(spec), to_params(fit, d, D), fit.converged and spec not in failed, exact[spec])
    return out


def warm_up() -> None:
    """Compile (or load from numba's on-disk cache) the fast path's code.

    A server calls this at start so that no user request pays for the compile (tens of
    seconds cold on a 2-core machine, well under a second from the cache). Safe to call twice.
    """
    from forecasting_core._fastforecast import arima_forecast

    w = np.array([0.1, -0.2, 0.3, np.nan, 0.05, -0.1, 0.2, 0.0, 0.15, -0.05])
    fit_arma(w, 1, 1, True)
    fit_arma(np.nan_to_num(w), 1, 1, True, kind="css")
    fit_arma(w, 1, 0, False, P=1, Q=1, m=2)
    admissible((0.5,), (0.2,), (), (), 2, 1.001)
    roots_outside(np.array([0.5]), 1.0)
    arima_forecast(np.cumsum(np.nan_to_num(w)), (1, 1, 1), None, True, {"drift": 0.0, "ar.L1": 0.2, "ma.L1": 0.1, "sigma2": 1.0}, 3)

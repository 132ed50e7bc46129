"""Fitting one ARIMA order by exact Gaussian maximum likelihood (statsmodels state space).

Everything statsmodels stays in this module (and in the filtering helper used by
``_forecast`` and ``_diagnostics``); callers receive :class:`Candidate` results only.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Mapping
from dataclasses import replace

import numpy as np
import pandas as pd

from forecasting_core._filter_cache import FILTER_CACHE_SIZE, _filter_key, _recall, _remember  # noqa: F401
from forecasting_core._results import Candidate, TransformSpec

#: A root of the AR or MA lag polynomial closer than this to the unit circle is rejected.
ROOT_LIMIT = 1.001
#: Iteration cap of a full fit (L-BFGS iterations).
FULL_MAXITER = 200
#: Iteration cap of a screening fit.
SCREEN_MAXITER = 25
#: L-BFGS relative-reduction tolerance factor of a screening fit (scipy's default is 1e7).
SCREEN_FACTR = 1e10


_CONTROLLER = None


def one_blas_thread():
    """Context manager limiting BLAS to one thread.

    The state-space filter multiplies tiny matrices; with a multi-threaded BLAS on a busy
    machine the threads contend and each likelihood evaluation became 50 to 100 times slower
    in our measurements (0.6 ms -> 55 ms on 2 shared cores). One thread is never slower here.

    It also imports statsmodels first: its import puts "always" filters for its own warnings
    in front of the filter list, which would overrule an "ignore" set earlier in the same
    ``warnings.catch_warnings()`` block (the first fit of a process then printed
    ConvergenceWarning and EstimationWarning lines). Used as
    ``with warnings.catch_warnings(), one_blas_thread(): warnings.simplefilter("ignore")``,
    the "ignore" comes after the import and wins.
    """
    import statsmodels.tools.sm_exceptions  # noqa: F401 - see above

    global _CONTROLLER
    if _CONTROLLER is None:
        from threadpoolctl import ThreadpoolController

        _CONTROLLER = ThreadpoolController()
    return _CONTROLLER.limit(limits=1, user_api="blas")


def transformed_values(y: pd.Series, spec: TransformSpec) -> np.ndarray:
    """Original-scale series -> float array on the transformed scale (NaN stays NaN)."""
    if spec.name == "none":
        return np.asarray(y, dtype=float).copy()
    from forecasting_core._results import InputError
    from forecasting_core._transform import transform_series

    try:  # on the values (no Series built and unpacked again): the same numbers
        return np.asarray(transform_series(np.asarray(y, dtype=float), spec), dtype=float)
    except InputError:  # the Series' own message names the period
        return np.asarray(transform_series(y, spec), dtype=float)


def trend_code(order: tuple[int, int, int], seasonal_order: tuple[int, int, int, int] | None, constant: bool) -> str:
    """statsmodels ``trend`` for a constant (d + D = 0) or a drift (d + D = 1).

    statsmodels' ARIMA is a regression with ARIMA errors: ``trend="t"`` regresses on time,
    and one (ordinary or seasonal) difference of ``beta * t`` leaves the drift ``beta`` per
    period (``m * beta`` per season for a seasonal difference).
    """
    if not constant:
        return "n"
    total = order[1] + (seasonal_order[1] if seasonal_order else 0)
    return "c" if total == 0 else "t"


def model_label(order: tuple[int, int, int], seasonal_order: tuple[int, int, int, int] | None, constant: bool) -> str:
    """``"ARIMA(1,1,0) with drift"``, ``"ARIMA(0,1,1)(0,1,1)[12]"`` ..."""
    text = "ARIMA({},{},{})".format(*order)
    if seasonal_order is not None:
        text += "({},{},{})[{}]".format(*seasonal_order)
    if constant:
        total = order[1] + (seasonal_order[1] if seasonal_order else 0)
        text += " with constant" if total == 0 else " with drift"
    return text


def _sm_names_to_ours(names: list[str]) -> list[str]:
    return ["drift" if n == "x1" else n for n in names]


def _names(model) -> list[str]:
    """Our names of a statsmodels model's parameters (statsmodels recomputes them per call)."""
    names = model.__dict__.get("_haulcast_names")
    if names is None:
        names = model.__dict__["_haulcast_names"] = _sm_names_to_ours(list(model.param_names))
    return list(names)


def build_model(
    z: np.ndarray,
    order: tuple[int, int, int],
    seasonal_order: tuple[int, int, int, int] | None,
    constant: bool,
    *,
    concentrate_scale: bool = False,
):
    """The statsmodels ARIMA state-space model for a transformed array ``z``."""
    from statsmodels.tsa.arima.model import ARIMA

    return ARIMA(
        z,
        order=order,
        seasonal_order=seasonal_order if seasonal_order is not None else (0, 0, 0, 0),
        trend=trend_code(order, seasonal_order, constant),
        concentrate_scale=concentrate_scale,
    )


def filter_candidate(candidate: Candidate, z: np.ndarray | None = None):
    """statsmodels results of the candidate's stored parameters applied to its series (no refit).

    ``z`` (transformed-scale values) defaults to the candidate's own series transformed. The
    last few results are kept (per thread), so filtering the same parameters on the same data
    again costs nothing.
    """
    if not candidate.ok:
        raise ValueError(f"{candidate.label} was rejected: {candidate.reason}")
    if z is None:
        z = transformed_values(candidate.series, candidate.transform)
    key = _filter_key(z, candidate.order, candidate.seasonal_order, candidate.constant, candidate.params)
    res = _recall(key)
    if res is not None:
        return res
    with warnings.catch_warnings(), one_blas_thread():
        warnings.simplefilter("ignore")
        model = build_model(z, candidate.order, candidate.seasonal_order, candidate.constant)
        names = _sm_names_to_ours(list(model.param_names))
        params = np.array([candidate.params[n] for n in names], dtype=float)
        res = model.filter(params, cov_type="none")
    _remember(key, res)
    return res


def _rejected(
    y: pd.Series,
    order: tuple[int, int, int],
    seasonal_order: tuple[int, int, int, int] | None,
    constant: bool,
    spec: TransformSpec,
    reason: str,
    n_params: int = 0,
    nobs: int = 0,
) -> Candidate:
    nan = math.nan
    return Candidate(
        order=tuple(order),
        seasonal_order=tuple(seasonal_order) if seasonal_order is not None else None,
        constant=constant,
        label=model_label(order, seasonal_order, constant),
        status="rejected",
        reason=reason,
        aicc=nan,
        aic=nan,
        bic=nan,
        loglik=nan,
        n_params=n_params,
        nobs=nobs,
        params={},
        ar=(),
        ma=(),
        seasonal_ar=(),
        seasonal_ma=(),
        sigma2=nan,
        transform=spec,
        series=y,
    )


def _start_vector(
    model, names: list[str], z: np.ndarray, start_params: Mapping[str, float], period: int
) -> np.ndarray:
    """Warm start in the model's parameter order: given values, zeros for new lag terms."""
    out = []
    for name in names:
        if name in start_params and np.isfinite(start_params[name]):
            out.append(float(start_params[name]))
        elif name == "const":
            out.append(float(np.nanmean(z)))
        elif name == "drift":
            lag = period if model.seasonal_order[1] and not model.order[1] else 1
            step = z[lag:] - z[:-lag]
            mean_step = float(np.nanmean(step)) if np.isfinite(step).any() else 0.0
            out.append(mean_step / lag)
        elif name == "sigma2":
            step = np.diff(z) if model.order[1] else z - np.nanmean(z)
            out.append(float(np.nanvar(step)) or 1.0)
        else:
            out.append(0.0)
    return np.array(out, dtype=float)


def _root_problem(res) -> str | None:
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")  # statsmodels' reciprocal of a zero root
        pairs = (("AR", res.arroots, "non-stationary"), ("MA", res.maroots, "non-invertible"))
    for kind, roots, word in pairs:
        roots = np.atleast_1d(roots)
        if roots.size and np.min(np.abs(roots)) < ROOT_LIMIT:
            return (
                f"{word}: an {kind} root has modulus {np.min(np.abs(roots)):.4f}, "
                f"within {ROOT_LIMIT} of the unit circle"
            )
    return None


def css_estimate(
    z: np.ndarray, order: tuple[int, int, int], constant: bool
) -> np.ndarray | None:
    """Conditional-sum-of-squares ARMA estimate of the differenced series (a screening start).

    Minimises sum e_t^2 over t > p with e = theta(B)^-1 phi(B) (w - mu), w the d-th difference
    of ``z`` and mu the constant (d = 0) or drift (d = 1), by scipy's least squares. Returns
    the parameters in statsmodels' order (const/drift, ar, ma; sigma2 concentrated out), or
    None when ``z`` has gaps or the estimate is not stationary and invertible.
    """
    from scipy.optimize import least_squares
    from scipy.signal import lfilter

    p, d, q = order
    if not np.all(np.isfinite(z)):
        return None
    w = np.diff(z, n=d) if d else np.asarray(z, dtype=float)
    if len(w) <= p + q + 3:
        return None
    mu0 = float(w.mean()) if constant else 0.0
    scale = float(np.std(w)) or 1.0

    k = 1 if constant else 0
    b = np.ones(p + 1)
    a = np.ones(q + 1)
    ws = w / scale

    def resid(theta: np.ndarray) -> np.ndarray:
        b[1:] = -theta[k : k + p]
        a[1:] = theta[k + p :]
        with np.errstate(all="ignore"):
            e = lfilter(b, a, ws - theta[0] if constant else ws)[p:]
        return np.where(np.isfinite(e), e, 1e6)

    x0 = np.r_[[mu0 / scale] if constant else [], np.zeros(p + q)]
    if x0.size == 0:
        return np.zeros(0)
    try:
        sol = least_squares(resid, x0, method="lm", max_nfev=8 * (x0.size + 1), ftol=1e-6, xtol=1e-6)
    except Exception:  # noqa: BLE001 - a failed screen falls back to the exact fit
        return None
    est = np.array(sol.x, dtype=float)
    if not np.all(np.isfinite(est)):
        return None
    est[k : k + p] = -_outside(-est[k : k + p])
    est[k + p :] = _outside(est[k + p :])
    if constant:
        est[0] *= scale
    return est


def _outside(coefs: np.ndarray, limit: float = 1.02) -> np.ndarray:
    """Lag-polynomial coefficients (1 + c1 z + ...) with every root moved to |z| >= limit.

    A root inside is reflected to 1 / conj(root) (same autocorrelations for an MA part)
    and pushed out to ``limit``; the screening start is then admissible for statsmodels.
    """
    if coefs.size == 0:
        return coefs
    roots = np.roots(np.r_[1.0, coefs][::-1])
    if roots.size == 0 or np.all(np.abs(roots) >= limit):
        return coefs
    mod = np.abs(roots)
    roots = np.where(mod < 1.0, 1.0 / np.conj(roots), roots)
    mod = np.abs(roots)
    roots = np.where(mod < limit, roots * (limit / mod), roots)
    poly = np.real(np.poly(1.0 / roots))  # prod(1 - z / r) up to scale, highest power first
    return np.asarray(poly[1:], dtype=float)


def fit_order(
    y: pd.Series,
    order: tuple[int, int, int],
    seasonal_order: tuple[int, int, int, int] | None,
    constant: bool,
    spec: TransformSpec,
    *,
    start_params: Mapping[str, float] | None = None,
    maxiter: int = FULL_MAXITER,
    factr: float | None = None,
    screen: bool = False,
) -> Candidate:
    """Fit one ARIMA order by exact Gaussian maximum likelihood; never raises for a fit problem.

    Parameters
    ----------
    y : pandas.Series
        Original-scale series with a PeriodIndex (annual, quarterly or monthly); NaN marks a
        missing period, handled in the state-space likelihood.
    order : tuple of int
        (p, d, q).
    seasonal_order : tuple of int or None
        (P, D, Q, m) with m the period length (4 or 12), or None.
    constant : bool
        Include a constant (d + D = 0) or a drift (d + D = 1). Rejected for d + D >= 2.
    spec : TransformSpec
        Transform applied to ``y`` before fitting.
    start_params : Mapping[str, float], optional
        Warm start by parameter name (e.g. a neighbouring order's ``params``); missing lag
        terms start at 0.
    maxiter : int
        L-BFGS iteration cap; a fit that stops at the cap is rejected ("no convergence").
    factr : float, optional
        L-BFGS tolerance factor (scipy's ``factr``); looser values are used for screening.
    screen : bool
        Screening only: estimate by conditional least squares (:func:`css_estimate`) and
        evaluate the exact likelihood there, without maximising it (the AICc is then an upper
        bound of the order's best). Falls back to a loose exact fit with missing values,
        seasonal terms, or a non-stationary or non-invertible least-squares estimate.

    Returns
    -------
    Candidate
        ``status="ok"`` with every field filled, or ``status="rejected"`` with the reason
        (failed fit, no convergence, AR or MA root within 1.001 of the unit circle).
    """
    order = tuple(int(v) for v in order)
    seasonal_order = tuple(int(v) for v in seasonal_order) if seasonal_order else None
    if seasonal_order is not None and seasonal_order[:3] == (0, 0, 0):
        seasonal_order = None
    constant = bool(constant)
    period = seasonal_order[3] if seasonal_order else 1
    burn = order[1] + (seasonal_order[1] * period if seasonal_order else 0)
    if constant and burn > 0 and order[1] + (seasonal_order[1] if seasonal_order else 0) >= 2:
        return _rejected(y, order, seasonal_order, constant, spec, "a constant is not allowed with two or more differences")
    try:
        z = transformed_values(y, spec)
    except Exception as exc:  # noqa: BLE001 - reported, never raised
        return _rejected(y, order, seasonal_order, constant, spec, f"transform failed: {exc}")
    seen = int(np.isfinite(z).sum())
    nobs = seen - burn
    try:
        with warnings.catch_warnings(), one_blas_thread():
            # "ignore", not "always" + record: recording makes every statsmodels likelihood
            # call several times slower. Convergence is read from the optimiser's own report.
            warnings.simplefilter("ignore")
            model = build_model(z, order, seasonal_order, constant, concentrate_scale=True)
            if not model.param_names:  # e.g. ARIMA(0,1,0): nothing left to optimise once sigma2 is concentrated out
                model = build_model(z, order, seasonal_order, constant)
            names = _sm_names_to_ours(list(model.param_names))
            k = len(names) + (0 if "sigma2" in names else 1)  # sigma2 counts, concentrated or not
            if nobs - k - 1 <= 0:
                return _rejected(
                    y, order, seasonal_order, constant, spec,
                    f"too few observations ({nobs}) for {k} parameters", k, nobs,
                )
            fit_kw: dict = {"maxiter": maxiter, "maxfun": 15 * maxiter, "disp": 0}
            if factr is not None:
                fit_kw["factr"] = factr
            start = None
            if start_params:
                start = _start_vector(model, names, z, start_params, period)
            css = css_estimate(z, order, constant) if screen and seasonal_order is None and "sigma2" not in names else None
            if css is not None:
                res = model.filter(css)  # exact likelihood at the least-squares estimate
            else:
                if screen:
                    fit_kw.update(maxiter=SCREEN_MAXITER, maxfun=15 * SCREEN_MAXITER, factr=SCREEN_FACTR)
                res = model.fit(start_params=start, cov_type="none", method_kwargs=fit_kw)
    except Exception as exc:  # noqa: BLE001 - any statsmodels/numpy failure becomes a reason
        return _rejected(y, order, seasonal_order, constant, spec, f"fit failed: {type(exc).__name__}: {exc}", nobs=nobs)
    llf = float(res.llf)
    if not math.isfinite(llf):
        return _rejected(y, order, seasonal_order, constant, spec, "fit failed: the likelihood is not finite", k, nobs)
    retvals = getattr(res, "mle_retvals", None) or {}
    converged = bool(retvals.get("converged", True))
    gopt = retvals.get("gopt")
    if not converged and gopt is not None and np.size(gopt) and np.max(np.abs(gopt)) < 1e-3:
        # L-BFGS reports a failed line search when started at (or stopped next to) the
        # optimum, e.g. a full fit resumed from an already converged screening fit; a
        # gradient this small (of the mean negative log-likelihood) is convergence.
        converged = True
    iterations = int(retvals.get("iterations", 0))
    values = dict(zip(names, (float(v) for v in res.params), strict=False))
    values["sigma2"] = float(res.params[-1]) if "sigma2" in names else float(res.scale)
    if not all(math.isfinite(v) for v in values.values()) or values["sigma2"] <= 0:
        return _rejected(y, order, seasonal_order, constant, spec, "fit failed: parameters not finite", k, nobs)
    aic = -2.0 * llf + 2.0 * k
    aicc = aic + 2.0 * k * (k + 1) / (nobs - k - 1)
    bic = -2.0 * llf + k * math.log(nobs)
    if not converged and not screen:
        # the last iterate is kept (params, likelihood) so that a longer fit can resume from it
        return replace(
            _rejected(y, order, seasonal_order, constant, spec, f"no convergence after {iterations} iterations", k, nobs),
            aicc=aicc, aic=aic, bic=bic, loglik=llf, params=values,
        )
    return _accepted(res, y, order, seasonal_order, constant, spec, values, llf, k, nobs, aicc, aic, bic)


def _accepted(res, y, order, seasonal_order, constant, spec, values, llf, k, nobs, aicc, aic, bic) -> Candidate:
    """An accepted Candidate from statsmodels results, or rejected when a root is too close."""
    problem = _root_problem(res)
    if problem:
        return _rejected(y, order, seasonal_order, constant, spec, problem, k, nobs)
    return Candidate(
        order=order,
        seasonal_order=seasonal_order,
        constant=constant,
        label=model_label(order, seasonal_order, constant),
        status="ok",
        reason=None,
        aicc=aicc,
        aic=aic,
        bic=bic,
        loglik=llf,
        n_params=k,
        nobs=nobs,
        params=values,
        ar=tuple(float(v) for v in np.atleast_1d(res.arparams)) if order[0] else (),
        ma=tuple(float(v) for v in np.atleast_1d(res.maparams)) if order[2] else (),
        seasonal_ar=tuple(float(v) for v in np.atleast_1d(res.seasonalarparams)) if seasonal_order and seasonal_order[0] else (),
        seasonal_ma=tuple(float(v) for v in np.atleast_1d(res.seasonalmaparams)) if seasonal_order and seasonal_order[2] else (),
        sigma2=values["sigma2"],
        transform=spec,
        series=y,
    )


def statsmodels_model(
    y: pd.Series,
    order: tuple[int, int, int],
    seasonal_order: tuple[int, int, int, int] | None,
    constant: bool,
    spec: TransformSpec,
):
    """The statsmodels model of a candidate (sigma2 not concentrated), or None when it fails."""
    try:
        z = transformed_values(y, spec)
        with warnings.catch_warnings(), one_blas_thread():
            warnings.simplefilter("ignore")
            return build_model(z, order, seasonal_order, constant)
    except Exception:  # noqa: BLE001 - reported by the caller as a failed fit
        return None


def statsmodels_start(model) -> dict[str, float] | None:
    """statsmodels' own default starting values by name (None when it cannot make them)."""
    if model is None:
        return None
    try:
        with warnings.catch_warnings(), one_blas_thread():
            warnings.simplefilter("ignore")
            start = np.asarray(model.start_params, dtype=float)
    except Exception:  # noqa: BLE001 - no start, no extra check
        return None
    names = _names(model)
    if not np.all(np.isfinite(start)):
        return None
    return dict(zip(names, (float(v) for v in start), strict=True))


def candidate_at(
    y: pd.Series,
    order: tuple[int, int, int],
    seasonal_order: tuple[int, int, int, int] | None,
    constant: bool,
    spec: TransformSpec,
    params: Mapping[str, float],
    model=None,
) -> Candidate:
    """The Candidate of given parameters, from one statsmodels ``filter(params)`` pass (no fit).

    The likelihood, AICc and the root check are statsmodels' own at ``params`` (e.g. the
    compiled fast path's converged estimate); ``model`` is a prepared
    :func:`statsmodels_model` to reuse. Never raises for a fit problem.
    """
    order = tuple(int(v) for v in order)
    seasonal_order = tuple(int(v) for v in seasonal_order) if seasonal_order else None
    period = seasonal_order[3] if seasonal_order else 1
    burn = order[1] + (seasonal_order[1] * period if seasonal_order else 0)
    try:
        z = transformed_values(y, spec)
        nobs = int(np.isfinite(z).sum()) - burn
        with warnings.catch_warnings(), one_blas_thread():
            warnings.simplefilter("ignore")
            if model is None:
                model = build_model(z, order, seasonal_order, constant)
            names = _names(model)
            res = model.filter(np.array([params[n] for n in names], dtype=float), cov_type="none")
    except Exception as exc:  # noqa: BLE001 - any statsmodels/numpy failure becomes a reason
        return _rejected(y, order, seasonal_order, constant, spec, f"fit failed: {type(exc).__name__}: {exc}")
    k = len(names)
    llf = float(res.llf)
    if not math.isfinite(llf) or nobs - k - 1 <= 0:
        return _rejected(y, order, seasonal_order, constant, spec, "fit failed: the likelihood is not finite", k, nobs)
    values = {n: float(params[n]) for n in names}
    _remember(_filter_key(z, order, seasonal_order, constant, values), res)
    aic = -2.0 * llf + 2.0 * k
    aicc = aic + 2.0 * k * (k + 1) / (nobs - k - 1)
    bic = -2.0 * llf + k * math.log(nobs)
    return _accepted(res, y, order, seasonal_order, constant, spec, values, llf, k, nobs, aicc, aic, bic)

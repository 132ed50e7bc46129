"""Candidate fitting and order search (exhaustive grid and stepwise).

The exhaustive search fits every order of the grid in two passes:

1. **Screening.** Every order is estimated by conditional least squares (fast, in scipy)
   and the exact Gaussian likelihood is evaluated at that estimate (one Kalman filter pass);
   that AICc is an upper bound of the order's best. With missing values or seasonal terms
   the screen is instead a loosely converged exact fit, warm-started along chains (one chain
   per constant choice, seasonal part and AR order ``p``, with ``q`` rising).
2. **Full fit.** Every screened order within ``REFINE_MARGIN`` AICc of the best screened one
   is fitted to full convergence (exact ML) from its screened estimate; the best few are
   also refitted from statsmodels' own starting values, keeping the higher likelihood, so
   that a poor start never traps the winner in a worse local optimum. Orders further behind
   keep their screening values (an exact likelihood at a non-optimal estimate: their AICc
   may be slightly too high, never too low).

Chains and full fits are independent tasks, so ``workers > 1`` spreads them over processes
and the result is identical whatever the number of workers.

With numba installed (``engine="auto"``) and no gap hidden by differencing, the same two
passes run in compiled code instead (``_fastarma.screen_specs``): a conditional-least-squares
screen with the exact likelihood evaluated at each estimate, exact-likelihood fits to
convergence of every order within 4 AICc of the best screen, cold restarts of the best two,
and exact fits of any screened-only order that reaches the best three. The best
``FAST_FINAL`` accepted orders are then also fitted from statsmodels' own default start
(the higher likelihood wins) and handed to statsmodels' ``filter(params)``, so the chosen
model's likelihood, AICc and roots are statsmodels' own at an optimum the tests hold to
statsmodels' exact MLE (coefficients 1e-3, AICc 0.05). The stepwise search fits each order
it visits the same way (compiled exact fit, statsmodels numbers for the best few).

The stepwise search follows Hyndman & Khandakar (2008, "Automatic time series forecasting",
Journal of Statistical Software 27(3), section 3.2): start from the best of four simple
models, then repeatedly move to the best neighbour (p, q, P, Q changed by one, p and q
together, P and Q together, the constant switched) while the AICc improves.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import replace

import numpy as np
import pandas as pd

from forecasting_core._arima import fit_order, model_label
from forecasting_core._results import Candidate, TransformSpec

__all__ = ["constant_allowed", "exhaustive_search", "grid", "rank", "stepwise_search"]

#: Screened orders within this many AICc units of the best screened one get a full fit.
REFINE_MARGIN = 6.0
#: The best few after the full fit are also refitted from statsmodels' default start.
COLD_CHECK = 3
#: With the compiled path: this many of the best orders are handed to statsmodels
#: (``filter(params)`` at the compiled optimum) for the reported numbers and root checks.
FAST_FINAL = 3

Spec = tuple[tuple[int, int, int], tuple[int, int, int, int] | None, bool]


# ---------------------------------------------------------------------------------------------
# Work units (top-level functions so that a 'spawn' process pool can run them)
# ---------------------------------------------------------------------------------------------


def _run_chain(task: tuple[pd.Series, TransformSpec, list[Spec]]) -> list[Candidate]:
    """Screen a chain of orders, each warm-started from the last accepted one."""
    y, spec, chain = task
    out: list[Candidate] = []
    start: Mapping[str, float] | None = None
    for order, seasonal, constant in chain:
        c = fit_order(y, order, seasonal, constant, spec, start_params=start, screen=True)
        if c.ok:
            start = c.params
        out.append(c)
    return out


def _run_full(task: tuple[pd.Series, TransformSpec, Spec, Mapping[str, float] | None]) -> Candidate:
    y, spec, (order, seasonal, constant), start = task
    return fit_order(y, order, seasonal, constant, spec, start_params=start)


def _mapper(workers: int) -> tuple[Callable[[Callable, Iterable], list], Callable[[], None]]:
    if workers <= 1:
        return (lambda f, xs: [f(x) for x in xs]), (lambda: None)
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    pool = ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("spawn"))
    return (lambda f, xs: list(pool.map(f, list(xs)))), pool.shutdown


def _better(a: Candidate, b: Candidate) -> Candidate:
    """The accepted fit with the higher likelihood (a on ties)."""
    if not b.ok:
        return a
    if not a.ok:
        return b
    return b if b.loglik > a.loglik + 1e-9 else a


# ---------------------------------------------------------------------------------------------
# Searches
# ---------------------------------------------------------------------------------------------


def constant_allowed(order: tuple[int, int, int], seasonal_order: tuple[int, int, int, int] | None) -> bool:
    """A constant (no difference) or drift (one difference) is allowed when d + D <= 1."""
    return order[1] + (seasonal_order[1] if seasonal_order else 0) <= 1


def grid(
    d: int, big_d: int, m: int, max_p: int, max_q: int, max_big_p: int, max_big_q: int, constants: Sequence[bool]
) -> list[list[Spec]]:
    """The exhaustive grid as warm-start chains (q rising within each chain)."""
    seasonal_parts: list[tuple[int, int, int, int] | None]
    if m > 1:
        seasonal_parts = [(bp, big_d, bq, m) for bp in range(max_big_p + 1) for bq in range(max_big_q + 1)]
    else:
        seasonal_parts = [None]
    chains = []
    for seasonal in seasonal_parts:
        s = seasonal if seasonal is None or seasonal[:3] != (0, 0, 0) else None
        for constant in constants:
            if constant and not constant_allowed((0, d, 0), s):
                continue
            for p in range(max_p + 1):
                chains.append([((p, d, q), s, constant) for q in range(max_q + 1)])
    return chains


def fast_screen_usable(y: pd.Series, spec: TransformSpec, chains: list[list[Spec]]) -> bool:
    """The compiled screen applies: numba is there, and differencing hides no gap.

    With d + D > 0 a missing value also hides its neighbours' differences, so the compiled
    likelihood of a gappy differenced series would rank orders on less data than the exact
    state-space likelihood uses; such series keep the statsmodels screen.
    """
    from forecasting_core import _fastarma

    if not _fastarma._HAVE_NUMBA or not chains or not chains[0]:
        return False
    (_, d, _), seasonal, _ = chains[0][0]
    big_d = seasonal[1] if seasonal else 0
    return d + big_d == 0 or bool(np.isfinite(np.asarray(y, dtype=float)).all())


def _fast_candidates(y: pd.Series, spec: TransformSpec, specs: list[Spec]) -> list[Candidate]:
    """Screening candidates from the compiled exact likelihood (statsmodels refits the best)."""
    from forecasting_core import _fastarma
    from forecasting_core._arima import ROOT_LIMIT, transformed_values

    z = transformed_values(y, spec)
    screened = _fastarma.screen_specs(z, specs, root_limit=ROOT_LIMIT)
    seen = int(np.isfinite(z).sum())
    out = []
    for s in specs:
        aicc, params, converged, _ = screened[s]
        out.append(_fast_candidate(y, spec, s, aicc, params, converged, seen, "the screening fit"))
    return out


def _fast_candidate(
    y: pd.Series, spec: TransformSpec, s: Spec, aicc: float, params: dict[str, float], converged: bool, seen: int, what: str
) -> Candidate:
    """A Candidate from compiled numbers (exact likelihood at ``params``), with the root check."""
    from forecasting_core import _fastarma
    from forecasting_core._arima import ROOT_LIMIT, _rejected

    order, seasonal, constant = s
    m = seasonal[3] if seasonal else 1
    nobs = seen - order[1] - (seasonal[1] * m if seasonal else 0)
    k = order[0] + order[2] + (seasonal[0] + seasonal[2] if seasonal else 0) + int(constant) + 1
    if not math.isfinite(aicc) or nobs - k - 1 <= 0:
        return _rejected(y, order, seasonal, constant, spec, f"too few observations ({nobs}) for {k} parameters", k, nobs)
    ar = tuple(params[f"ar.L{i}"] for i in range(1, order[0] + 1))
    ma = tuple(params[f"ma.L{j}"] for j in range(1, order[2] + 1))
    sar = tuple(params[f"ar.S.L{m * i}"] for i in range(1, (seasonal[0] if seasonal else 0) + 1))
    sma = tuple(params[f"ma.S.L{m * j}"] for j in range(1, (seasonal[2] if seasonal else 0) + 1))
    loglik = -0.5 * (aicc - 2.0 * k * (k + 1) / (nobs - k - 1) - 2.0 * k)
    reason = None
    worst = None if _fastarma.admissible(ar, ma, sar, sma, m, ROOT_LIMIT) else _nearest_root(ar, ma, sar, sma, m)
    if worst is not None and worst[1] < ROOT_LIMIT:
        kind, modulus = worst
        word = "non-stationary" if kind == "AR" else "non-invertible"
        reason = f"{word}: an {kind} root has modulus {modulus:.4f}, within {ROOT_LIMIT} of the unit circle"
    elif not converged:
        reason = f"no convergence in {what}"
    return Candidate(
        order=order,
        seasonal_order=seasonal,
        constant=constant,
        label=model_label(order, seasonal, constant),
        status="ok" if reason is None else "rejected",
        reason=reason,
        aicc=aicc,
        aic=-2.0 * loglik + 2.0 * k,
        bic=-2.0 * loglik + k * math.log(nobs),
        loglik=loglik,
        n_params=k,
        nobs=nobs,
        params=params,
        ar=ar,
        ma=ma,
        seasonal_ar=sar,
        seasonal_ma=sma,
        sigma2=params["sigma2"],
        transform=spec,
        series=y,
    )


def _fast_fit(y: pd.Series, spec: TransformSpec, s: Spec, start: Mapping[str, float] | None) -> Candidate:
    """One order fitted to convergence by the compiled exact likelihood (stepwise search)."""
    from forecasting_core import _fastarma
    from forecasting_core._arima import transformed_values

    (p, d, q), seasonal, constant = s
    big_p, big_d, big_q, m = seasonal if seasonal else (0, 0, 0, 1)
    z = transformed_values(y, spec)
    w = _fastarma.difference(z, d, big_d, m)
    x0 = _fastarma.to_start(dict(start), (p, d, q), seasonal, constant) if start else None
    if x0 is not None and x0.size != p + q + big_p + big_q + int(constant):
        x0 = None
    fit = _fastarma.fit_arma(w, p, q, constant, P=big_p, Q=big_q, m=m, start=x0)
    if not fit.converged:
        cold = _fastarma.fit_arma(w, p, q, constant, P=big_p, Q=big_q, m=m)
        if cold.converged or cold.loglik > fit.loglik:
            fit = cold
    seen = int(np.isfinite(z).sum())
    aicc = fit.aicc(seen - d - big_d * m)
    return _fast_candidate(y, spec, s, aicc, _fastarma.to_params(fit, d, big_d), fit.converged, seen, "the compiled fit")


def stepwise_fast_usable(y: pd.Series, d: int, big_d: int) -> bool:
    """The compiled stepwise fits apply: numba is there, and differencing hides no gap."""
    from forecasting_core import _fastarma

    return _fastarma._HAVE_NUMBA and (d + big_d == 0 or bool(np.isfinite(np.asarray(y, dtype=float)).all()))


def _min_modulus(coefs: np.ndarray) -> float:
    """Smallest root modulus of 1 + c_1 z + ... + c_k z^k (companion eigenvalues); inf for k = 0."""
    c = np.asarray(coefs, dtype=float)
    k = c.size
    while k and c[k - 1] == 0.0:  # trailing zeros do not change the roots
        k -= 1
    if k == 0:
        return math.inf
    # roots z of the polynomial are 1 / eigenvalues of the companion of z^k + c_1 z^{k-1} + ... + c_k
    companion = np.eye(k, k=-1)
    companion[0, :] = -c[:k]
    biggest = float(np.max(np.abs(np.linalg.eigvals(companion))))
    return math.inf if biggest == 0.0 else 1.0 / biggest


def _nearest_root(ar, ma, sar, sma, m: int) -> tuple[str, float] | None:
    """The lag-polynomial root nearest the unit circle, as (``"AR"`` or ``"MA"``, modulus).

    The ordinary and seasonal factors are solved separately: a root w of the seasonal factor
    in B^m gives roots of modulus |w|^(1/m) in B.
    """
    nearest = None
    for kind, short, seas, sign in (("AR", ar, sar, -1.0), ("MA", ma, sma, 1.0)):
        if not len(short) and not len(seas):
            continue
        modulus = min(
            _min_modulus(sign * np.asarray(short, dtype=float)),
            _min_modulus(sign * np.asarray(seas, dtype=float)) ** (1.0 / m) if len(seas) else math.inf,
        )
        if nearest is None or modulus < nearest[1]:
            nearest = (kind, modulus)
    return nearest


def _final(y: pd.Series, spec: TransformSpec, c: Candidate) -> Candidate:
    """statsmodels' numbers at the compiled optimum, also tried from statsmodels' own start.

    The likelihood of a mixed ARMA can have several local maxima; the compiled search starts
    from least squares and from zeros, statsmodels from its own default start. The compiled
    exact fit from that start is kept when statsmodels finds its likelihood higher.
    """
    from forecasting_core._arima import (
        ROOT_LIMIT,
        candidate_at,
        statsmodels_model,
        statsmodels_start,
        transformed_values,
    )
    from forecasting_core._fastforecast import refit_params

    model = statsmodels_model(y, c.order, c.seasonal_order, c.constant, spec)
    found = candidate_at(y, c.order, c.seasonal_order, c.constant, spec, c.params, model)
    start = statsmodels_start(model)
    if start is None:
        return found
    z = transformed_values(y, spec)
    params, _, _ = refit_params(z, c.order, c.seasonal_order, c.constant, start, ROOT_LIMIT)
    if params is None or all(abs(params[k] - c.params.get(k, math.inf)) < 1e-5 * (1 + abs(params[k])) for k in params):
        return found
    return _better(found, candidate_at(y, c.order, c.seasonal_order, c.constant, spec, params, model))


def _fast_search(y: pd.Series, spec: TransformSpec, specs: list[Spec]) -> list[Candidate]:
    """The compiled path: screen and refine in compiled code, statsmodels numbers for the best few.

    The best ``FAST_FINAL`` accepted orders (exact-likelihood optima) are handed to
    statsmodels' ``filter(params)``: their likelihood, AICc and root checks are statsmodels'
    own. The others keep the compiled numbers (exact likelihood at their estimate).
    """
    return _finalise(y, spec, _fast_candidates(y, spec, specs))


def _finalise(y: pd.Series, spec: TransformSpec, results: list[Candidate]) -> list[Candidate]:
    """Hand the best ``FAST_FINAL`` accepted compiled candidates to statsmodels (see _final)."""
    results = list(results)
    done: set[int] = set()
    while True:  # until the best FAST_FINAL accepted ones all carry statsmodels' numbers
        top = sorted((i for i, c in enumerate(results) if c.ok), key=lambda i: results[i].aicc)[:FAST_FINAL]
        todo = [i for i in top if i not in done]
        if not todo:
            return results
        for i in todo:
            results[i] = _final(y, spec, results[i])
            done.add(i)


def exhaustive_search(
    y: pd.Series,
    spec: TransformSpec,
    chains: list[list[Spec]],
    *,
    workers: int = 1,
    engine: str = "auto",
) -> list[Candidate]:
    """Screen every order of the grid, then fully fit the promising ones (see module notes).

    ``engine="auto"`` screens with the compiled exact likelihood where it applies
    (:func:`fast_screen_usable`), ``"statsmodels"`` always with statsmodels; the full fits and
    every number reported for them come from statsmodels either way.
    """
    if engine == "auto" and fast_screen_usable(y, spec, chains):
        return _fast_search(y, spec, [s for chain in chains for s in chain])
    mapper, close = _mapper(workers)
    try:
        margin, cold_check = REFINE_MARGIN, COLD_CHECK
        screened = [c for chain in mapper(_run_chain, [(y, spec, ch) for ch in chains]) for c in chain]
        score = [c.aicc if c.params else math.inf for c in screened]
        best = min(score, default=math.inf)
        # full fits: promising screens, including unconverged loose fits whose last iterate
        # is already promising
        todo = [i for i, c in enumerate(screened) if c.params and score[i] <= best + margin]
        tasks = [(y, spec, (screened[i].order, screened[i].seasonal_order, screened[i].constant), screened[i].params) for i in todo]
        full = mapper(_run_full, tasks)
        results = list(screened)
        for i, c in zip(todo, full, strict=True):
            results[i] = c
        top = sorted((i for i in todo if results[i].ok), key=lambda i: results[i].aicc)[:cold_check]
        cold = mapper(_run_full, [(y, spec, (results[i].order, results[i].seasonal_order, results[i].constant), None) for i in top])
        for i, c in zip(top, cold, strict=True):
            results[i] = _better(results[i], c)
    finally:
        close()
    return results


def stepwise_search(
    y: pd.Series,
    spec: TransformSpec,
    d: int,
    big_d: int,
    m: int,
    max_p: int,
    max_q: int,
    max_big_p: int,
    max_big_q: int,
    constants: Sequence[bool],
    *,
    workers: int = 1,
    max_models: int = 94,
    engine: str = "auto",
) -> list[Candidate]:
    """Hyndman & Khandakar (2008) stepwise search; returns every model it fitted.

    ``engine="auto"`` fits each visited order with the compiled exact likelihood where it
    applies (:func:`stepwise_fast_usable`) and hands the best few to statsmodels
    (``filter`` at the compiled optimum, as the exhaustive search does); ``"statsmodels"``
    fits every order with statsmodels.
    """
    seasonal = m > 1
    fitted: dict[Spec, Candidate] = {}

    def key(p: int, q: int, bp: int, bq: int, c: bool) -> Spec | None:
        if not (0 <= p <= max_p and 0 <= q <= max_q and 0 <= bp <= max_big_p and 0 <= bq <= max_big_q):
            return None
        s = (bp, big_d, bq, m) if seasonal and (bp, big_d, bq) != (0, 0, 0) else None
        if c and not constant_allowed((p, d, q), s):
            return None
        if c not in constants:
            return None
        return ((p, d, q), s, c)

    fast = engine == "auto" and stepwise_fast_usable(y, d, big_d)
    mapper, close = _mapper(1 if fast else workers)

    def fit_all(specs: list[Spec], start: Mapping[str, float] | None) -> None:
        new = [s for s in dict.fromkeys(specs) if s not in fitted][: max(0, max_models - len(fitted))]
        if fast:
            for s in new:
                fitted[s] = _fast_fit(y, spec, s, start)
            return
        for s, c in zip(new, mapper(_run_full, [(y, spec, s, start) for s in new]), strict=True):
            fitted[s] = c

    def coords(s: Spec) -> tuple[int, int, int, int, bool]:
        (p, _, q), so, c = s
        return p, q, (so[0] if so else 0), (so[2] if so else 0), c

    try:
        c0 = max(constants)  # with constant/drift when allowed (H&K: when d + D <= 1)
        starts = [(2, 2, 1, 1), (0, 0, 0, 0), (1, 0, 1, 0), (0, 1, 0, 1)]
        if not seasonal:
            starts = [(p, q, 0, 0) for p, q, _, _ in starts]
        specs = [k for p, q, bp, bq in starts if (k := key(min(p, max_p), min(q, max_q), min(bp, max_big_p), min(bq, max_big_q), c0)) or (k := key(min(p, max_p), min(q, max_q), min(bp, max_big_p), min(bq, max_big_q), False))]
        fit_all(specs, None)
        current = min((c for c in fitted.values() if c.ok), key=lambda c: c.aicc, default=None)
        while current is not None and len(fitted) < max_models:
            p, q, bp, bq, c = coords(((current.order), current.seasonal_order, current.constant))
            moves = [(1, 0, 0, 0), (-1, 0, 0, 0), (0, 1, 0, 0), (0, -1, 0, 0), (1, 1, 0, 0), (-1, -1, 0, 0)]
            if seasonal:
                moves += [(0, 0, 1, 0), (0, 0, -1, 0), (0, 0, 0, 1), (0, 0, 0, -1), (0, 0, 1, 1), (0, 0, -1, -1)]
            near = [key(p + a, q + b, bp + e, bq + f, c) for a, b, e, f in moves] + [key(p, q, bp, bq, not c)]
            fit_all([k for k in near if k is not None], current.params)
            better = min(
                (fitted[k] for k in near if k is not None and k in fitted and fitted[k].ok),
                key=lambda x: x.aicc,
                default=None,
            )
            if better is None or better.aicc >= current.aicc - 1e-9:
                break
            current = better
    finally:
        close()
    results = list(fitted.values())
    if fast:
        results = _finalise(y, spec, results)
    return results


def rank(candidates: Iterable[Candidate]) -> list[Candidate]:
    """Accepted candidates by AICc with delta AICc and Akaike weights, then the rejected ones."""
    candidates = list(candidates)
    ok = sorted((c for c in candidates if c.ok), key=lambda c: (c.aicc, c.label))
    bad = [c for c in candidates if not c.ok]
    if not ok:
        return bad
    best = ok[0].aicc
    raw = np.array([math.exp(-0.5 * (c.aicc - best)) for c in ok])
    weights = raw / raw.sum()
    ranked = [replace(c, delta_aicc=c.aicc - best, weight=float(w)) for c, w in zip(ok, weights, strict=True)]
    return ranked + bad


def label_of(spec_: Spec) -> str:
    return model_label(*spec_)

"""Model comparison for one series: transform, differencing, order search, benchmarks, hindcast.

:func:`compare_models` is the Model Bench's engine; :func:`fit_model` fits one (forced)
order; :func:`fit_order` (re-exported from ``_arima``) is the internal single-fit routine
the hindcast uses. The search algorithms themselves live in ``_orders``.
"""

from __future__ import annotations

import datetime as _dt
import functools
import hashlib
from collections.abc import Sequence
from importlib import metadata
from typing import Any

import numpy as np
import pandas as pd

from forecasting_core._arima import fit_order
from forecasting_core._orders import (
    REFINE_MARGIN,
    constant_allowed,
    exhaustive_search,
    grid,
    rank,
    stepwise_search,
)
from forecasting_core._results import (
    Candidate,
    Comparison,
    InputError,
    TransformSpec,
    frequency_of,
    period_length,
)

__all__ = ["compare_models", "fit_model", "fit_order"]

SEARCHES = ("auto", "exhaustive", "stepwise")
ENGINES = ("auto", "statsmodels")

def resolve_transform(y: pd.Series, transform: str | TransformSpec) -> TransformSpec:
    """A TransformSpec for ``transform`` (``"none"``, ``"log"``, ``"boxcox"``, ``"auto"``)."""
    if isinstance(transform, TransformSpec):
        return transform
    if transform not in ("none", "log", "boxcox", "auto"):
        raise InputError(f"transform must be one of none, log, boxcox, auto. Got {transform!r} instead.")
    from forecasting_core._transform import choose_transform

    try:
        return choose_transform(y, transform)
    except NotImplementedError:
        if transform == "none":
            return TransformSpec("none", None, "chosen by the user")
        raise


def _check_series(y: Any) -> pd.Series:
    if not isinstance(y, pd.Series):
        raise InputError(f"y must be a pandas Series with a PeriodIndex. Got {type(y).__name__} instead.")
    frequency_of(y)
    y = y.astype(float)
    n = int(np.isfinite(y.to_numpy()).sum())
    if n < 8:
        raise InputError(f"the series must have at least 8 observed values. Got {n} instead.")
    return y


def _int_in(name: str, value: Any, lo: int, hi: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int | np.integer) or not lo <= value <= hi:
        raise InputError(f"{name} must be an integer from {lo} to {hi}. Got {value!r} instead.")
    return int(value)


def check_order(order: Any, seasonal_order: Any = None) -> tuple[tuple[int, int, int], tuple[int, int, int, int] | None]:
    """Validate a forced (p, d, q) and (P, D, Q, m); raise InputError naming the problem."""
    if not isinstance(order, Sequence) or len(order) != 3:
        raise InputError(f"order must be three integers (p, d, q). Got {order!r} instead.")
    p = _int_in("p", order[0], 0, 10)
    d = _int_in("d", order[1], 0, 2)
    q = _int_in("q", order[2], 0, 10)
    if seasonal_order is None:
        return (p, d, q), None
    if not isinstance(seasonal_order, Sequence) or len(seasonal_order) != 4:
        raise InputError(f"seasonal_order must be four integers (P, D, Q, m). Got {seasonal_order!r} instead.")
    big_p = _int_in("P", seasonal_order[0], 0, 3)
    big_d = _int_in("D", seasonal_order[1], 0, 1)
    big_q = _int_in("Q", seasonal_order[2], 0, 3)
    m = seasonal_order[3]
    if m not in (4, 12):
        raise InputError(f"the seasonal period m must be 4 or 12. Got {m!r} instead.")
    if (big_p, big_d, big_q) == (0, 0, 0):
        return (p, d, q), None
    return (p, d, q), (big_p, big_d, big_q, int(m))


def fit_model(
    y: pd.Series,
    order: Sequence[int],
    seasonal_order: Sequence[int] | None = None,
    constant: bool | None = None,
    transform: str | TransformSpec = "none",
) -> Candidate:
    """Fit one ARIMA order (a forced order goes through the same checks as a searched one).

    Parameters
    ----------
    y : pandas.Series
        Original-scale values on an annual, quarterly or monthly PeriodIndex; gaps are NaN.
    order : sequence of int
        (p, d, q), d from 0 to 2.
    seasonal_order : sequence of int, optional
        (P, D, Q, m), m = 4 (quarterly) or 12 (monthly).
    constant : bool, optional
        Constant (d + D = 0) or drift (d + D = 1). None fits both (when allowed) and keeps
        the lower AICc.
    transform : {"none", "log", "boxcox", "auto"} or TransformSpec

    Returns
    -------
    Candidate
        Possibly ``status="rejected"`` with the reason; never raises for a fit problem.
    """
    y = _check_series(y)
    order_t, seasonal_t = check_order(order, seasonal_order)
    spec = resolve_transform(y, transform)
    if constant is None:
        options = [False, True] if constant_allowed(order_t, seasonal_t) else [False]
    else:
        options = [bool(constant)]
    fits = [fit_order(y, order_t, seasonal_t, c, spec) for c in options]
    ok = [c for c in fits if c.ok]
    return min(ok, key=lambda c: c.aicc) if ok else fits[-1]




@functools.cache
def _versions() -> dict[str, str | None]:
    """Installed versions of the packages behind a result (read once per process: ~5 ms each)."""
    versions = {}
    for pkg in ("numpy", "pandas", "scipy", "statsmodels", "haulcast"):
        try:
            versions[pkg] = metadata.version(pkg)
        except metadata.PackageNotFoundError:
            versions[pkg] = None
    return versions


def _provenance(y: pd.Series) -> dict[str, Any]:
    values = np.asarray(y, dtype=float)
    digest = hashlib.sha256()
    digest.update(str(y.name).encode("utf-8"))
    digest.update(b"\0")
    digest.update(",".join(str(p) for p in y.index).encode("utf-8"))
    digest.update(b"\0")
    digest.update(np.ascontiguousarray(values).tobytes())
    versions = dict(_versions())
    return {
        "series_sha256": digest.hexdigest(),
        "hashed": "series name, periods and float64 values",
        "versions": versions,
        "computed_utc": _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
    }


def _differencing(y: pd.Series, spec: TransformSpec, seasonal: bool) -> tuple[int, int, str]:
    from forecasting_core._stationarity import choose_differences

    d, big_d, verdict = choose_differences(y, transform=spec)
    return d, big_d if seasonal else 0, verdict


def _by_hand_note(d: int | None, big_d: int | None, auto_d: int, auto_big_d: int) -> list[str]:
    """A warning when d or D set by hand differs from what the stationarity tests chose.

    "d = 2 was set by hand; the stationarity tests chose d = 0. AICc is not comparable across
    different d, so judge the models on the hindcast." (D likewise; both in one sentence.)
    """
    pairs = [
        (name, mine, auto)
        for name, mine, auto in (("d", d, auto_d), ("D", big_d, auto_big_d))
        if mine is not None and int(mine) != int(auto)
    ]
    if not pairs:
        return []
    verb = "was" if len(pairs) == 1 else "were"
    mine = " and ".join(f"{n} = {v}" for n, v, _ in pairs)
    auto = " and ".join(f"{n} = {a}" for n, _, a in pairs)
    names = " and ".join(n for n, _, _ in pairs)
    return [
        f"{mine} {verb} set by hand; the stationarity tests chose {auto}. AICc is not "
        f"comparable across different {names}, so judge the models on the hindcast."
    ]


def compare_models(
    y: pd.Series,
    horizon: int = 5,
    transform: str | TransformSpec = "auto",
    *,
    search: str = "auto",
    max_p: int = 5,
    max_q: int = 5,
    seasonal: bool | None = None,
    max_P: int = 2,  # noqa: N803 - the usual name of the seasonal AR order
    max_Q: int = 2,  # noqa: N803
    d: int | None = None,
    D: int | None = None,  # noqa: N803
    constant: bool | None = None,
    order: Sequence[int] | None = None,
    seasonal_order: Sequence[int] | None = None,
    hindcast_origins: int | None = None,
    hindcast: bool = True,
    workers: int = 1,
    engine: str = "auto",
) -> Comparison:
    """Search ARIMA orders, fit the benchmarks, replay past years and check the residuals.

    Parameters
    ----------
    y : pandas.Series
        Original-scale values on an annual, quarterly or monthly PeriodIndex; gaps are NaN
        (handled in the state-space likelihood, never dropped).
    horizon : int
        Steps ahead at the series' frequency for the hindcast, 1 to 30.
    transform : {"auto", "none", "log", "boxcox"} or TransformSpec
    search : {"auto", "exhaustive", "stepwise"}
        ``"auto"``: exhaustive for annual data and for seasonal ARIMA switched off; stepwise
        (Hyndman & Khandakar 2008) when seasonal terms are searched, whose full grid is large.
    max_p, max_q : int
        Largest AR and MA orders, 0 to 5.
    seasonal : bool, optional
        Search seasonal terms; default: yes for monthly and quarterly data.
    max_P, max_Q : int
        Largest seasonal AR and MA orders, 0 to 2.
    d, D : int, optional
        Ordinary (0 to 2) and seasonal (0 or 1) differences; default from
        :func:`assess_stationarity` on the transformed series.
    constant : bool, optional
        Constant (no difference) or drift (one difference). None tries both where allowed
        (d + D <= 1); True or False forces it (True where allowed).
    order, seasonal_order : sequence of int, optional
        A forced (p, d, q) and (P, D, Q, m): only that model is fitted, with the same checks.
    hindcast_origins : int, optional
        Rolling origins; default ``min(10, n // 4)`` periods.
    hindcast : bool
        Run the hindcast (the best model, up to two runners-up and the benchmarks).
    workers : int
        Worker processes for the order search (1 = this process). Results do not depend on it.
    engine : {"auto", "statsmodels"}
        ``"auto"``: when numba is installed, the exhaustive grid is screened and fitted with the
        compiled exact likelihood (where differencing hides no gap) and the hindcast refits
        and forecasts run in compiled code; the best few orders are handed to statsmodels
        (``filter`` at the compiled optimum), so their likelihood, AICc and roots are
        statsmodels' own. ``"statsmodels"``: statsmodels fits throughout (the fallback).

    Returns
    -------
    Comparison
        Candidates ranked by AICc (delta AICc, Akaike weights), rejected ones with reasons.
        When every candidate is rejected, ``best`` is the (rejected) first one and a warning
        says so; no forecast can be made from it.
    """
    y = _check_series(y)
    freq = frequency_of(y)
    m = period_length(y)
    horizon = _int_in("horizon", horizon, 1, 30)
    if search not in SEARCHES:
        raise InputError(f"search must be one of {', '.join(SEARCHES)}. Got {search!r} instead.")
    max_p = _int_in("max_p", max_p, 0, 5)
    max_q = _int_in("max_q", max_q, 0, 5)
    max_P = _int_in("max_P", max_P, 0, 2)  # noqa: N806
    max_Q = _int_in("max_Q", max_Q, 0, 2)  # noqa: N806
    workers = _int_in("workers", workers, 1, 64)
    if engine not in ENGINES:
        raise InputError(f"engine must be one of {', '.join(ENGINES)}. Got {engine!r} instead.")
    if seasonal is None:
        seasonal = m > 1
    elif not isinstance(seasonal, bool | np.bool_):
        raise InputError(f"seasonal must be True, False or None. Got {seasonal!r} instead.")
    if seasonal and m == 1:
        raise InputError("seasonal must be False or None for annual data. Got True instead.")
    if d is not None:
        d = _int_in("d", d, 0, 2)
    if D is not None:
        D = _int_in("D", D, 0, 1)  # noqa: N806
        if D and not seasonal:
            raise InputError(f"D must be 0 without seasonal terms. Got {D} instead.")
    if constant is not None and not isinstance(constant, bool | np.bool_):
        raise InputError(f"constant must be True, False or None. Got {constant!r} instead.")
    if hindcast_origins is not None:
        hindcast_origins = _int_in("hindcast_origins", hindcast_origins, 1, 1000)
    forced = None
    if order is not None:
        forced = check_order(order, seasonal_order)
        if forced[1] is not None and forced[1][3] != m:
            raise InputError(
                f"the seasonal period m must be {m} for {freq} data. Got {forced[1][3]} instead."
            )
    elif seasonal_order is not None:
        raise InputError("seasonal_order needs order as well. Got seasonal_order only instead.")

    spec = resolve_transform(y, transform)
    warnings_: list[str] = []
    stationarity_note = None
    if forced is None and (d is None or (seasonal and D is None)):
        auto_d, auto_big_d, stationarity_note = _differencing(y, spec, bool(seasonal))
        warnings_.extend(_by_hand_note(d, D, auto_d, auto_big_d))
        d = auto_d if d is None else d
        D = auto_big_d if D is None else D  # noqa: N806
    elif forced is None:  # d and D both set by hand: the tests still say what they would choose
        auto_d, auto_big_d, _ = _differencing(y, spec, bool(seasonal))
        warnings_.extend(_by_hand_note(d, D, auto_d, auto_big_d))
    D = D or 0  # noqa: N806
    constants = [False, True] if constant is None else [bool(constant)]
    if search == "auto":
        search_used = "stepwise" if seasonal and forced is None else "exhaustive"
    else:
        search_used = search

    if forced is not None:
        f_order, f_seasonal = forced
        opts = constants if constant_allowed(f_order, f_seasonal) else [False]
        if constant and not constant_allowed(f_order, f_seasonal):
            warnings_.append("A constant is not allowed with two or more differences; fitted without.")
        fitted = [fit_order(y, f_order, f_seasonal, c, spec) for c in opts]
        d, D = f_order[1], (f_seasonal[1] if f_seasonal else 0)  # noqa: N806
    else:
        mm = m if seasonal else 1
        if search_used == "exhaustive":
            chains = grid(d, D, mm, max_p, max_q, max_P, max_Q, constants)
            fitted = exhaustive_search(y, spec, chains, workers=workers, engine=engine)
        else:
            fitted = stepwise_search(
                y, spec, d, D, mm, max_p, max_q, max_P, max_Q, constants, workers=workers, engine=engine
            )
    candidates = rank(fitted)
    accepted = [c for c in candidates if c.ok]
    if accepted:
        best = accepted[0]
    else:
        best = candidates[0]
        warnings_.append(
            f"Every candidate was rejected (for example {best.label}: {best.reason}); "
            "no ARIMA forecast can be made. Try other orders, differences or a transform."
        )

    benchmarks = _benchmarks(y, spec, warnings_)
    hind = None
    if hindcast:
        models = ([best] if best.ok else []) + accepted[1:3] + list(benchmarks)
        hind = _hindcast(y, models, horizon, hindcast_origins, warnings_, engine)
    diagnostics = None
    if best.ok:
        from forecasting_core._diagnostics import check_residuals

        diagnostics = check_residuals(best)

    settings = {
        "horizon": horizon,
        "transform": transform if isinstance(transform, str) else transform.name,
        "transform_used": spec.to_dict(),
        "search": search,
        "search_used": search_used,
        "max_p": max_p,
        "max_q": max_q,
        "seasonal": bool(seasonal),
        "max_P": max_P,
        "max_Q": max_Q,
        "d": d,
        "D": D,
        "constant": constant,
        "order": list(forced[0]) if forced else None,
        "seasonal_order": list(forced[1]) if forced and forced[1] else None,
        "hindcast": bool(hindcast),
        "hindcast_origins": hindcast_origins,
        "workers": workers,
        "engine": engine,
        "screening_margin_aicc": REFINE_MARGIN if search_used == "exhaustive" and not forced else None,
        "stationarity": stationarity_note,
    }
    return Comparison(
        series_name=str(y.name) if y.name is not None else "series",
        frequency=freq,
        observations=int(np.isfinite(y.to_numpy()).sum()),
        transform=spec,
        candidates=tuple(candidates),
        best=best,
        benchmarks=tuple(benchmarks),
        hindcast=hind,
        diagnostics=diagnostics,
        settings=settings,
        provenance=_provenance(y),
        warnings=tuple(warnings_),
    )


def _benchmarks(y: pd.Series, spec: TransformSpec, warnings_: list[str]) -> tuple:
    from forecasting_core._benchmarks import fit_benchmarks

    try:
        return tuple(fit_benchmarks(y, spec))
    except NotImplementedError:
        return ()
    except InputError as exc:
        warnings_.append(f"Benchmarks not fitted: {exc}")
        return ()


def _hindcast(y, models, horizon, origins, warnings_, engine="auto"):
    from forecasting_core._hindcast import run_hindcast

    if not models:
        return None
    try:
        return run_hindcast(y, models=models, horizon=horizon, origins=origins, engine=engine)
    except NotImplementedError:
        return None
    except InputError as exc:
        warnings_.append(f"Hindcast not run: {exc}")
        return None



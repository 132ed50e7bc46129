"""Stationarity: ADF, KPSS, the differencing order (d <= 2), seasonal differencing, ACF/PACF.

Rules (each stated in the verdict a report carries):

- d is chosen by a KPSS sequence: test a stable level (KPSS, constant only) on the series,
  its first and its second difference, and stop at the first that KPSS does not reject at
  ``alpha`` (5% by default). d is capped at 2 (more than two differences is almost never
  needed: common practice).
- ADF (constant only, lag length by AIC) runs the same sequence as a cross-check; when it
  would stop at another d the report says the tests disagree and what that usually means.
- For monthly and quarterly data the seasonal strength ``F_s = max(0, 1 - Var(R) / Var(S + R))``
  of an STL decomposition (Wang, Smith & Hyndman 2006) decides one seasonal difference
  (D = 1) when it exceeds 0.64 (common practice); it is taken before the ordinary ones.
- Gaps inside the series are filled by straight-line interpolation for the tests and the
  correlograms only; the differenced series returned keep them missing.
"""

from __future__ import annotations

import inspect
import warnings
from collections.abc import Callable
from functools import cache
from typing import Any

import numpy as np
import pandas as pd
from statsmodels.tools.sm_exceptions import InterpolationWarning
from statsmodels.tsa.seasonal import STL
from statsmodels.tsa.stattools import acf, kpss, pacf

from forecasting_core._adf import adf_aic
from forecasting_core._results import (
    Correlogram,
    InputError,
    StationarityReport,
    StationarityTest,
    TransformSpec,
    frequency_of,
    period_length,
    time_label,
)
from forecasting_core._transform import choose_transform, transform_series

#: Largest ordinary differencing order ever chosen.
MAX_D = 2
#: Seasonal strength above which one seasonal difference is taken (common practice).
SEASONAL_STRENGTH_THRESHOLD = 0.64
#: Fewest observed values accepted, by frequency.
MIN_OBSERVATIONS: dict[str, int] = {"annual": 15, "quarterly": 20, "monthly": 36}
#: Largest correlogram lag, by frequency (periods at the series' frequency).
MAX_LAG: dict[str, int] = {"annual": 10, "quarterly": 12, "monthly": 36}
_UNIT = {
    "annual": ("year", "years"),
    "quarterly": ("quarter", "quarters"),
    "monthly": ("month", "months"),
}
_REG = {"level": "c", "trend": "ct"}
_NULL = {
    ("ADF", "level"): "unit root (the series wanders)",
    ("ADF", "trend"): "unit root around a linear trend",
    ("KPSS", "level"): "stationary around a constant level",
    ("KPSS", "trend"): "stationary around a linear trend",
}


@cache
def _accepts_result_object(fn: Callable[..., Any]) -> bool:
    return "result_object" in inspect.signature(fn).parameters


def _plain(fn: Callable[..., Any], *args: Any, **kwargs: Any) -> Any:
    """Call a statsmodels test asking for its plain-tuple return (old and new versions)."""
    if _accepts_result_object(fn):
        kwargs["result_object"] = False
    return fn(*args, **kwargs)


def _failed(test: str, regression: str, d: int, sd: int) -> StationarityTest:
    return StationarityTest(
        test, regression, d, sd, np.nan, np.nan, 0, {}, _NULL[test, regression], False
    )


def _kpss(x: np.ndarray, regression: str, d: int, sd: int) -> StationarityTest:
    """KPSS test (Kwiatkowski et al. 1992), bandwidth by Hobijn et al. (1998)."""
    if x.size < 4 or _flat(x):
        return _failed("KPSS", regression, d, sd)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        stat, p, lags, crit = _plain(kpss, x, regression=_REG[regression], nlags="auto")
    bound = None
    if any(issubclass(w.category, InterpolationWarning) for w in caught):
        bound = "at most" if p <= 0.01 else "at least"
    return StationarityTest(
        "KPSS", regression, d, sd, float(stat), float(p), int(lags),
        {k: float(v) for k, v in crit.items()}, _NULL["KPSS", regression], bool(p < 0.05), bound,
    )  # fmt: skip


def _adf(x: np.ndarray, regression: str, d: int, sd: int) -> StationarityTest:
    """Augmented Dickey-Fuller test, lag length by AIC, MacKinnon p-values and critical values.

    Computed by :func:`forecasting_core._adf.adf_aic`, which gives statsmodels' ``adfuller``
    answer about 4x faster.
    """
    if x.size < 8 or _flat(x):
        return _failed("ADF", regression, d, sd)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            stat, p, lags, _nobs, crit = adf_aic(x, _REG[regression])
    except (ValueError, np.linalg.LinAlgError):
        return _failed("ADF", regression, d, sd)
    return StationarityTest(
        "ADF", regression, d, sd, float(stat), float(p), int(lags),
        {k: float(v) for k, v in crit.items()}, _NULL["ADF", regression], bool(p < 0.05),
    )  # fmt: skip


def _kpss_order(
    x: np.ndarray, alpha: float = 0.05, known: dict[bytes, StationarityTest] | None = None
) -> tuple[int, list[StationarityTest]]:
    """d by the KPSS level sequence: the first of 0, 1, 2 differences KPSS does not reject.

    ``x`` has no missing values (already interpolated, already seasonally differenced when
    D = 1). Returns d (capped at :data:`MAX_D`) and the KPSS level tests run on the way.
    ``known`` maps the bytes of a series already tested (KPSS level) to that test's result,
    reused when a difference of ``x`` is exactly that series.
    """
    tests = []
    z = np.asarray(x, dtype=float)
    for d in range(MAX_D + 1):
        t = (known or {}).get(z.tobytes())
        if t is None or t.differences != d or t.seasonal_differences != 0:
            t = _kpss(z, "level", d, 0)
        tests.append(t)
        if np.isnan(t.pvalue) or t.pvalue >= alpha:
            return d, tests
        z = np.diff(z)
    return MAX_D, tests


def _flat(x: np.ndarray) -> bool:
    """True when the values do not vary (no test statistic can be computed)."""
    return x.size == 0 or bool(np.ptp(x) <= 1e-12 * max(1.0, float(np.max(np.abs(x)))))


def _adf_order(
    tests: list[StationarityTest], alpha: float, flat: frozenset[int] = frozenset()
) -> int | None:
    """First d at which ADF (constant only) rejects a unit root, or at which the series is
    constant (``flat``: trivially stationary); None when neither happens."""
    for t in sorted(
        (t for t in tests if t.test == "ADF" and t.regression == "level"),
        key=lambda t: t.differences,
    ):
        if t.differences in flat or t.pvalue < alpha:
            return t.differences
    return None


def seasonal_strength(x: pd.Series | np.ndarray, period: int) -> float:
    """Seasonal strength ``max(0, 1 - Var(R) / Var(S + R))`` from an STL decomposition.

    Parameters
    ----------
    x : pandas.Series or numpy.ndarray
        Values without gaps, at least two full periods.
    period : int
        Observations per year (4 quarterly, 12 monthly).

    Returns
    -------
    float
        In [0, 1]; near 1 for a strong, regular seasonal cycle (Wang, Smith & Hyndman 2006).
    """
    v = np.asarray(x, dtype=float)
    fit = STL(v, period=period).fit()
    r, s = np.asarray(fit.resid), np.asarray(fit.seasonal)
    denom = np.var(s + r)
    return 0.0 if denom == 0 else float(max(0.0, 1.0 - np.var(r) / denom))


def _correlogram(x: np.ndarray, d: int, sd: int, freq: str) -> Correlogram:
    n = x.size
    nlags = max(1, min(MAX_LAG[freq], n // 2 - 1))
    if np.ptp(x) <= 0:
        zeros = (0.0,) * nlags
        return Correlogram(d, sd, tuple(range(1, nlags + 1)), zeros, zeros, 1.96 / np.sqrt(n))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        a = acf(x, nlags=nlags, fft=True)[1:]
        pa = pacf(x, nlags=nlags, method="ywm")[1:]
    return Correlogram(
        d,
        sd,
        tuple(range(1, nlags + 1)),
        tuple(map(float, a)),
        tuple(map(float, pa)),
        float(1.96 / np.sqrt(n)),
    )


def _resolve_transform(y: pd.Series, transform: str | TransformSpec) -> TransformSpec:
    if isinstance(transform, TransformSpec):
        return transform
    return choose_transform(y, transform)


def _validate(y: Any, alpha: float) -> pd.Series:
    if not isinstance(y, pd.Series):
        raise InputError(
            f"y must be a pandas Series with a PeriodIndex. Got {type(y).__name__} instead."
        )
    frequency_of(y)
    if isinstance(alpha, bool) or not isinstance(alpha, int | float) or not 0.01 <= alpha <= 0.10:
        raise InputError(f"alpha must be a number from 0.01 to 0.10. Got {alpha!r} instead.")
    if y.index.has_duplicates:
        raise InputError(
            f"y must have one value per period. Got {time_label(y.index[y.index.duplicated()][0])} twice instead."
        )
    y = y.sort_index().astype(float)
    full = pd.period_range(y.index[0], y.index[-1], freq=y.index.freq) if len(y) else y.index
    return y.reindex(full)


def choose_differences(
    y: pd.Series, *, transform: str | TransformSpec = "none", alpha: float = 0.05
) -> tuple[int, int, str]:
    """``(d, D, verdict)`` of :func:`assess_stationarity`, without the rest of its report.

    The same rules, tests and verdict text; the tests the verdict does not read (those around
    a linear trend) and the correlograms are left out. ``compare_models`` uses this.
    """
    report = _assess(y, transform, alpha, full=False)
    return int(report.d), int(report.seasonal_d), report.verdict


def assess_stationarity(
    y: pd.Series, *, transform: str | TransformSpec = "none", alpha: float = 0.05
) -> StationarityReport:
    """Choose d (KPSS sequence at 5%, ADF cross-check, d <= 2) and seasonal D (<= 1).

    Parameters
    ----------
    y : pandas.Series
        Values on a yearly, quarterly or monthly PeriodIndex (gaps as NaN or absent periods).
    transform : {"none", "log", "boxcox", "auto"} or TransformSpec, default "none"
        Applied before testing (resolved by :func:`choose_transform`).
    alpha : float, default 0.05
        Significance level of the KPSS sequence and the ADF cross-check, 0.01 to 0.10.
        ``StationarityTest.rejected`` always reports the 5% decision.

    Returns
    -------
    StationarityReport
        ADF and KPSS (level and trend) on 0, 1 and 2 ordinary differences (after the seasonal
        difference when D = 1), correlograms for each level, the differenced series (with
        their gaps) and a verdict paragraph.

    Raises
    ------
    InputError
        Not a Series with a PeriodIndex, too few observed values, or a transform the data
        do not allow (e.g. a log of a value at or below 0, naming the period).
    """
    return _assess(y, transform, alpha, full=True)


def _assess(y: pd.Series, transform: str | TransformSpec, alpha: float, full: bool) -> StationarityReport:
    """:func:`assess_stationarity`; ``full=False`` leaves out what the verdict does not read
    (tests around a trend, correlograms: empty in that report)."""
    y = _validate(y, alpha)
    freq = frequency_of(y)
    m = period_length(y)
    name = str(y.name) if y.name is not None else "the series"
    observed = y.dropna()
    need = MIN_OBSERVATIONS[freq]
    if len(observed) < need:
        raise InputError(
            f"stationarity tests need at least {need} observed values for {'an' if freq == 'annual' else 'a'} {freq} series. "
            f"Got {len(observed)} instead."
        )
    if _flat(observed.to_numpy(dtype=float)):
        raise InputError(
            f"stationarity tests need values that vary. Got {float(observed.iloc[0])!r} in every "
            f"observed period instead."
        )
    y = y.loc[observed.index[0] : observed.index[-1]]
    spec = _resolve_transform(y, transform)
    z = transform_series(y, spec)
    gaps = [time_label(p) for p in z.index[z.isna()]]
    filled = z.interpolate(method="linear")

    strength: float | None = None
    sd = 0
    if m > 1:
        strength = seasonal_strength(filled.to_numpy(), m)
        sd = int(strength > SEASONAL_STRENGTH_THRESHOLD)
    base, base_filled = (z.diff(m), filled.diff(m)) if sd else (z, filled)
    base, base_filled = base.iloc[m * sd :], base_filled.iloc[m * sd :]

    differenced: dict[int, pd.Series] = {}
    tests: list[StationarityTest] = []
    correlograms: list[Correlogram] = []
    flat: set[int] = set()
    current, current_filled = base, base_filled
    known: dict[bytes, StationarityTest] = {}  # KPSS level tests by the series tested
    regressions = ("level", "trend") if full else ("level",)
    for k in range(MAX_D + 1):
        if k:
            current, current_filled = current.diff().iloc[1:], current_filled.diff().iloc[1:]
        if full:
            differenced[k] = current.rename(y.name)
        x = current_filled.to_numpy(dtype=float)
        if _flat(x):
            flat.add(k)
        for test in ("ADF", "KPSS"):
            for reg in regressions:
                tests.append((_adf if test == "ADF" else _kpss)(x, reg, k, sd))
                if test == "KPSS" and reg == "level":
                    known[x.tobytes()] = tests[-1]
        if full:
            correlograms.append(_correlogram(x, k, sd, freq))

    d, sequence = _kpss_order(base_filled.to_numpy(dtype=float), alpha, known if sd == 0 else None)
    capped = d == MAX_D and sequence[-1].pvalue < alpha
    adf_d = _adf_order(tests, alpha, frozenset(flat))
    # ADF never rejecting (adf_d None) agrees with a capped KPSS sequence: both want more than 2.
    disagree = not (adf_d == d or (adf_d is None and capped))
    verdict = _verdict(
        name, freq, m, spec, d, adf_d, sd, strength, tests, gaps, alpha, min(flat, default=None)
    )
    return StationarityReport(
        series_name=name,
        frequency=freq,
        transform=spec.name,
        d=d,
        seasonal_d=sd,
        seasonal_strength=strength,
        tests=tuple(tests),
        correlograms=tuple(correlograms),
        differenced=differenced,
        verdict=verdict,
        tests_disagree=disagree,
    )


# ---------------------------------------------------------------------------------------------
# Verdict text
# ---------------------------------------------------------------------------------------------

_ORDINAL = {
    0: "no ordinary difference",
    1: "one ordinary difference",
    2: "two ordinary differences",
}
_AFTER = {0: "the series itself", 1: "the first difference", 2: "the second difference"}
_AFTER_SEASONAL = {
    0: "the seasonally differenced series",
    1: "the first difference of the seasonally differenced series",
    2: "the second difference of the seasonally differenced series",
}


def _p(t: StationarityTest) -> str:
    if np.isnan(t.pvalue):
        return "p not available"
    if t.pvalue_bound == "at most":
        return f"p below {t.pvalue:.2f}"
    if t.pvalue_bound == "at least":
        return f"p above {t.pvalue:.2f}"
    return f"p {t.pvalue:.3f}" if t.pvalue >= 0.001 else "p below 0.001"


def _find(tests: list[StationarityTest], test: str, reg: str, k: int) -> StationarityTest:
    return next(t for t in tests if t.test == test and t.regression == reg and t.differences == k)


def _verdict(
    name: str,
    freq: str,
    m: int,
    spec: TransformSpec,
    d: int,
    adf_d: int | None,
    sd: int,
    strength: float | None,
    tests: list[StationarityTest],
    gaps: list[str],
    alpha: float,
    first_flat: int | None = None,
) -> str:
    pct = f"{100 * alpha:g}%"
    after = _AFTER_SEASONAL if sd else _AFTER
    scale = "original scale" if spec.name == "none" else (
        "log scale" if spec.name == "log" else f"Box-Cox scale (lambda {spec.lam:.2f})"
    )  # fmt: skip
    parts: list[str] = []
    if strength is not None:
        if sd:
            parts.append(
                f"The seasonal cycle is strong (seasonal strength {strength:.2f}, above "
                f"{SEASONAL_STRENGTH_THRESHOLD}), so one seasonal difference (lag {m}) is taken first (D = 1)."
            )
        else:
            parts.append(
                f"The seasonal cycle is weak (seasonal strength {strength:.2f}, at most "
                f"{SEASONAL_STRENGTH_THRESHOLD}), so no seasonal difference is taken (D = 0)."
            )
    kp = [_find(tests, "KPSS", "level", k) for k in range(MAX_D + 1)]
    seq = "; ".join(
        f"{after[k]}: statistic {t.statistic:.3f}, {_p(t)}, {'rejects' if t.pvalue < alpha else 'keeps'} a stable level"
        for k, t in enumerate(kp[: d + 1])
        if not np.isnan(t.statistic)
    )
    capped = d == MAX_D and kp[MAX_D].pvalue < alpha
    head = f"On the {scale}, {name} needs {_ORDINAL[d]} (d = {d}) to look stationary"
    if capped:
        head = (
            f"On the {scale}, KPSS still rejects a stable level in {name} after two differences; "
            f"d is capped at 2 (more than two differences is almost never needed), so treat the "
            f"series with care: look for outliers, level shifts or changes in reporting"
        )
    parts.append(
        f"{head}. The KPSS test of a stable level, at {pct}, was run on {seq or 'too few values'}."
    )

    adf = [_find(tests, "ADF", "level", k) for k in range(MAX_D + 1)]
    if first_flat is not None and first_flat <= d:
        parts.append(
            f"After {first_flat} difference{'s' if first_flat != 1 else ''} the series is constant "
            f"(e.g. a straight line differenced once), so neither test can run there: a constant "
            f"needs no further difference."
        )
    elif adf_d == d:
        parts.append(f"ADF agrees: it rejects a unit root first on {after[d]} ({_p(adf[d])}).")
    elif adf_d is not None and adf_d < d:
        what = "level" if adf_d == 0 else "growth rate (the level of the differenced series)"
        parts.append(
            f"ADF and KPSS disagree: ADF already rejects a unit root on {after[adf_d]} "
            f"({_p(adf[adf_d])}), while KPSS asks for d = {d}. Both tests rejecting their null at once "
            f"is typical of a series that is stable around a level that shifted at some point (a regime "
            f"change; here the {what}): KPSS reads the step as wandering, ADF sees quick return to the "
            f"current level. Look at the plot for a step change. With d = {d} a model follows the new "
            f"level but its bands widen with the horizon; a model with d = {adf_d} fitted after the "
            f"change may suit better."
        )
    elif adf_d is None and capped:
        parts.append(
            "ADF does not reject a unit root even on the second difference either: both tests say "
            "two differences may not be enough."
        )
    else:
        where = f"until {after[adf_d]}" if adf_d is not None else "even on the second difference"
        other = d + 1 if d < MAX_D else d - 1
        parts.append(
            f"ADF and KPSS disagree: ADF does not reject a unit root {where}, while KPSS keeps a stable "
            f"level at d = {d}. ADF has little power on short or weakly persistent series, so the KPSS "
            f"choice stands, but d is uncertain: compare models with d = {min(d, other)} and "
            f"d = {max(d, other)} on the hindcast."
        )
    if gaps:
        unit = _UNIT[freq][0 if len(gaps) == 1 else 1]
        parts.append(
            f"The series has {len(gaps)} missing {unit} ({', '.join(gaps)}); "
            f"{'it was' if len(gaps) == 1 else 'they were'} filled by "
            f"straight-line interpolation for the tests and correlograms only, and stay missing in the "
            f"differenced series and the model."
        )
    return " ".join(parts)

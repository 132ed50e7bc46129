"""Speed of compare_models against a naive statsmodels baseline, side by side in one run.

Baseline ("naive"): on the same transformed series and the same d, every ARIMA(p, d, q) with
p, q <= 5 (with and without a constant/drift where d <= 1) fitted with statsmodels' default
fit options, one after the other; the same acceptance rule (no AR or MA root within 1.001 of
the unit circle); then a 10-origin hindcast of the top three, each refitted with defaults at
every origin and forecast 5 steps ahead.

Haulcast: ``compare_models(y)`` with default settings (exhaustive search, benchmarks,
10-origin hindcast of the best three and the benchmarks, residual checks), after
``fc.warm_up()`` (as the server does at start; the warm-up time is printed too).

Agreement: the share of series where Haulcast's chosen model has an AICc within 1 of the
naive grid's best (and, separately, no more than 1 above it: the naive default fits can
stop in a worse local optimum, which makes Haulcast's choice look better, not worse).

Then median milliseconds per series of ``compare_models`` alone for annual series of
lengths 30, 60 and 120 and for 15-year monthly seasonal series (seasonal ARIMA, stepwise).

Run: ``.venv/bin/python benchmarks/compare_speed.py [--series 20] [--length 60]
[--per-length 10] [--monthly 3] [--engine auto|statsmodels]``.
"""

from __future__ import annotations

import argparse
import os
import statistics
import time
import warnings

import numpy as np
import pandas as pd
from scipy.signal import lfilter

import forecasting_core as fc
from forecasting_core._arima import one_blas_thread, transformed_values

PROCESSES = [
    ((0.6,), (), 0),
    ((), (0.5,), 0),
    ((0.5,), (0.3,), 0),
    ((1.0, -0.5), (), 0),
    ((0.4,), (), 1),
    ((), (0.4,), 1),
    ((), (), 1),
]


def make_series(k: int, n: int) -> pd.Series:
    """Seeded annual series on the log scale around 500 (AR, MA, ARMA, AR(2), ARIMA(.,1,.))."""
    rng = np.random.default_rng([7, k])
    ar, ma, d = PROCESSES[k % len(PROCESSES)]
    e = rng.normal(scale=0.1, size=n + 100)
    x = lfilter(np.r_[1.0, ma], np.r_[1.0, -np.asarray(ar)], e)[100:]
    if d:
        x = np.cumsum(x)
    return pd.Series(np.exp(np.log(500.0) + x), index=pd.period_range("1960", periods=n, freq="Y"), name=f"s{k}")


def make_monthly(k: int, years: int = 15) -> pd.Series:
    """Seeded monthly series: (1 - 0.5B)(1 - B^12) log y = (1 - 0.6 B^12) e, sd 0.08."""
    rng = np.random.default_rng([11, k])
    n = 12 * years
    e = rng.normal(scale=0.08, size=n + 60)
    w = lfilter(np.r_[1.0, np.zeros(11), -0.6], [1.0, -0.5], e)[60:]
    season = 0.4 * np.sin(2 * np.pi * np.arange(12) / 12)
    z = np.r_[season, np.zeros(n - 12)]
    for t in range(12, n):
        z[t] = z[t - 12] + w[t]
    return pd.Series(np.exp(np.log(200.0) + z), index=pd.period_range("2011-01", periods=n, freq="M"), name=f"m{k}")


def _acceptable(res) -> bool:
    roots = [np.abs(np.atleast_1d(r)) for r in (res.arroots, res.maroots)]
    return all(r.size == 0 or r.min() >= 1.001 for r in roots) and np.isfinite(res.llf)


def naive(z: np.ndarray, d: int, horizon: int = 5, origins: int = 10) -> float:
    """The naive baseline; returns the best accepted AICc."""
    from statsmodels.tsa.arima.model import ARIMA

    fits = []
    trends = ["n", "c" if d == 0 else "t"] if d <= 1 else ["n"]
    for p in range(6):
        for q in range(6):
            for trend in trends:
                try:
                    res = ARIMA(z, order=(p, d, q), trend=trend).fit()
                except Exception:  # noqa: BLE001 - a failed fit is simply not a candidate
                    continue
                if _acceptable(res):
                    fits.append((res.aicc, p, q, trend))
    fits.sort()
    n = len(z)
    for _, p, q, trend in fits[:3]:
        for t in range(n - 1 - origins, n - 1):
            res = ARIMA(z[: t + 1], order=(p, d, q), trend=trend).fit()
            res.get_forecast(min(horizon, n - 1 - t)).summary_frame()
    return fits[0][0]


def _timed(y: pd.Series, engine: str) -> tuple[fc.Comparison, float]:
    t0 = time.perf_counter()
    comp = fc.compare_models(y, engine=engine)
    return comp, 1000 * (time.perf_counter() - t0)


def head_to_head(series: int, length: int, engine: str) -> None:
    ours_ms, naive_ms, within, not_worse = [], [], [], []
    print(f"{'series':8s} {'haulcast ms':>12s} {'naive ms':>10s}  haulcast best (AICc) / naive best AICc")
    for k in range(series):
        y = make_series(k, length)
        comp, ms = _timed(y, engine)
        t1 = time.perf_counter()
        z = transformed_values(y, comp.transform)
        with warnings.catch_warnings(), one_blas_thread():
            warnings.simplefilter("ignore")
            best_naive = naive(z, int(comp.settings["d"]))
        ours_ms.append(ms)
        naive_ms.append(1000 * (time.perf_counter() - t1))
        within.append(abs(comp.best.aicc - best_naive) <= 1.0)
        not_worse.append(comp.best.aicc <= best_naive + 1.0)
        print(
            f"{y.name:8s} {ours_ms[-1]:12.0f} {naive_ms[-1]:10.0f}  "
            f"{comp.best.label} ({comp.best.aicc:.2f}) / {best_naive:.2f}",
            flush=True,
        )
    med_ours, med_naive = statistics.median(ours_ms), statistics.median(naive_ms)
    print()
    print(f"{series} seeded annual series of length {length}, engine={engine!r}")
    print(f"{'':28s}{'median ms':>10s}{'total s':>9s}")
    print(f"{'naive baseline':28s}{med_naive:10.0f}{sum(naive_ms) / 1000:9.1f}")
    print(f"{'haulcast compare_models':28s}{med_ours:10.0f}{sum(ours_ms) / 1000:9.1f}")
    print(f"speed ratio naive / haulcast: {med_naive / med_ours:.1f}x on medians, {sum(naive_ms) / sum(ours_ms):.1f}x on totals")
    print(
        f"agreement: chosen AICc within 1 of the naive best in {100 * np.mean(within):.0f}% of series; "
        f"no more than 1 above it in {100 * np.mean(not_worse):.0f}%"
    )


def by_length(per_length: int, monthly: int, engine: str) -> None:
    print()
    print(f"compare_models alone, engine={engine!r}: median ms per series")
    rows = [(f"annual, {n} values", [make_series(k, n) for k in range(per_length)]) for n in (30, 60, 120)]
    rows.append(("monthly, 15 years (seasonal)", [make_monthly(k) for k in range(monthly)]))
    for name, ys in rows:
        times = []
        labels = []
        for y in ys:
            comp, ms = _timed(y, engine)
            times.append(ms)
            labels.append(comp.best.label)
        print(f"{name:30s} {statistics.median(times):8.0f} ms  (n={len(ys)}, min {min(times):.0f}, max {max(times):.0f})", flush=True)
        if name.startswith("monthly"):
            print(f"{'':30s} chosen: {', '.join(sorted(set(labels)))}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", type=int, default=20, help="series in the head-to-head (0 skips it)")
    parser.add_argument("--length", type=int, default=60)
    parser.add_argument("--per-length", type=int, default=10, help="series per annual length")
    parser.add_argument("--monthly", type=int, default=3, help="monthly seasonal series")
    parser.add_argument("--engine", default="auto", choices=["auto", "statsmodels"])
    args = parser.parse_args()
    print(f"machine: {os.cpu_count()} cores, load average at start {os.getloadavg()[0]:.1f} (shared with other work)")
    t0 = time.perf_counter()
    fc.warm_up()
    print(f"fc.warm_up(): {time.perf_counter() - t0:.2f} s (numba compile, or load from its on-disk cache)")
    fc.compare_models(make_series(0, 40), engine=args.engine)  # first-call imports off the clock
    if args.series:
        head_to_head(args.series, args.length, args.engine)
    by_length(args.per_length, args.monthly, args.engine)
    print(f"load average at end {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()

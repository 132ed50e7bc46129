"""Speed of compare_models against a naive statsmodels baseline, side by side in one run.

Baseline ("naive"): on the same transformed series and the same d, every ARIMA(p, d, q) with
p, q <= 5 (with and without a constant/drift where d <= 1) fitted with statsmodels' default
fit options, one after the other; the same acceptance rule (no AR or MA root within 1.001 of
the unit circle); then a 10-origin hindcast of the top three, each refitted with defaults at
every origin and forecast 5 steps ahead.

Haulcast: ``compare_models(y)`` with default settings (exhaustive search, benchmarks,
hindcast, residual checks).

Agreement: the share of series where Haulcast's chosen model has an AICc within 1 of the
naive grid's best (and, separately, no more than 1 above it).

Run: ``.venv/bin/python benchmarks/compare_speed.py [--series 20] [--length 60]``.
"""

from __future__ import annotations

import argparse
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
    rng = np.random.default_rng([7, k])
    ar, ma, d = PROCESSES[k % len(PROCESSES)]
    e = rng.normal(scale=0.1, size=n + 100)
    x = lfilter(np.r_[1.0, ma], np.r_[1.0, -np.asarray(ar)], e)[100:]
    if d:
        x = np.cumsum(x)
    return pd.Series(np.exp(np.log(500.0) + x), index=pd.period_range("1960", periods=n, freq="Y"), name=f"s{k}")


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


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", type=int, default=20)
    parser.add_argument("--length", type=int, default=60)
    args = parser.parse_args()
    ours_ms, naive_ms, within, not_worse = [], [], [], []
    print(f"{'series':8s} {'haulcast ms':>12s} {'naive ms':>10s}  haulcast best (AICc) / naive best AICc")
    for k in range(args.series):
        y = make_series(k, args.length)
        t0 = time.perf_counter()
        comp = fc.compare_models(y)
        t1 = time.perf_counter()
        z = transformed_values(y, comp.transform)
        with warnings.catch_warnings(), one_blas_thread():
            warnings.simplefilter("ignore")
            best_naive = naive(z, int(comp.settings["d"]))
        t2 = time.perf_counter()
        ours_ms.append(1000 * (t1 - t0))
        naive_ms.append(1000 * (t2 - t1))
        within.append(abs(comp.best.aicc - best_naive) <= 1.0)
        not_worse.append(comp.best.aicc <= best_naive + 1.0)
        print(
            f"{y.name:8s} {ours_ms[-1]:12.0f} {naive_ms[-1]:10.0f}  "
            f"{comp.best.label} ({comp.best.aicc:.2f}) / {best_naive:.2f}",
            flush=True,
        )
    ratio = sum(naive_ms) / sum(ours_ms)
    print()
    print(f"series: {args.series} of length {args.length} (annual, seeded)")
    print(f"haulcast compare_models: median {statistics.median(ours_ms):.0f} ms per series, total {sum(ours_ms) / 1000:.1f} s")
    print(f"naive baseline:          median {statistics.median(naive_ms):.0f} ms per series, total {sum(naive_ms) / 1000:.1f} s")
    print(f"speed ratio (naive / haulcast, totals): {ratio:.2f}x")
    print(f"agreement: |AICc difference| <= 1 in {100 * np.mean(within):.0f}% of series; "
          f"haulcast no more than 1 above naive in {100 * np.mean(not_worse):.0f}%")


if __name__ == "__main__":
    main()

"""Forecasts of quantities that cannot be negative: band ends and medians clipped at 0.

Catch, landings, abundance and CPUE are never below zero, but a model on the original scale
(transform ``none``) has a normal predictive distribution whose lower quantiles can be. When
the series itself has no negative value, the forecast shows the clipped quantity max(Y, 0):

* its quantiles are max(q, 0) for the quantiles q of Y (max(., 0) is monotone), so clipping
  the median and the band ends is exact, not an approximation;
* for a reference level R > 0, P(max(Y, 0) < R) = P(Y < R): the probability is unchanged;
  for R <= 0 it is 0;
* its mean is that of a normal censored at 0, E[max(Y, 0)] = mu Phi(mu/s) + s phi(mu/s)
  (mu, s the predictive mean and standard deviation), used at the steps that were clipped.

A series with negative values (an anomaly index, a temperature) is never clipped.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
from scipy.stats import norm

__all__ = ["clip_at_zero"]


def _when(labels: Sequence[str], idx: np.ndarray) -> str:
    """Time labels of the steps ``idx`` with runs written as ranges: ``2026–2028, 2030``."""
    parts: list[str] = []
    start = prev = int(idx[0])
    for i in [*map(int, idx[1:]), None]:
        if i is not None and i == prev + 1:
            prev = i
            continue
        parts.append(labels[start] if start == prev else f"{labels[start]}\u2013{labels[prev]}")
        if i is not None:
            start = prev = i
    return ", ".join(parts)


def clip_at_zero(
    table: dict[str, Any],
    levels: Sequence[int],
    observed: np.ndarray,
    mu: np.ndarray,
    sd: np.ndarray,
    transform: str,
    reference: float | None,
) -> str | None:
    """Clip a forecast table's median and band ends at 0 when the series cannot be negative.

    Parameters
    ----------
    table : dict
        Forecast columns being built (``time``, ``mean``, ``median``, ``lo<L>``/``hi<L>``,
        ``prob_below_reference``), one entry per step; changed in place.
    levels : sequence of int
        Band levels in percent.
    observed : numpy.ndarray
        The series' values on the original scale (NaN for gaps). Nothing is clipped when any
        value is negative or none is observed.
    mu, sd : numpy.ndarray
        Predictive mean and standard deviation per step on the transformed scale.
    transform : str
        The model's transform name; with ``"none"`` the mean of the clipped quantity is the
        censored-normal mean, otherwise the mean is only kept at or above 0.
    reference : float or None
        Reference level on the original scale.

    Returns
    -------
    str or None
        The caution to show with the forecast, or None when nothing went below zero.
    """
    values = np.asarray(observed, dtype=float)
    values = values[np.isfinite(values)]
    if values.size == 0 or values.min() < 0:
        return None
    lows = [np.asarray(table[f"lo{lv}"], dtype=float) for lv in levels]
    median = np.asarray(table["median"], dtype=float)
    below = np.zeros(median.shape, dtype=bool)
    for col in (median, *lows):
        below |= col < 0
    if not below.any():
        return None
    median_below = median < 0
    for key in ("median", *(f"{side}{lv}" for lv in levels for side in ("lo", "hi"))):
        table[key] = np.maximum(np.asarray(table[key], dtype=float), 0.0)  # NaN stays NaN
    mean = np.asarray(table["mean"], dtype=float)
    if transform == "none":
        mu = np.asarray(mu, dtype=float)
        s = np.asarray(sd, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = mu / s
            censored = np.where(s > 0, mu * norm.cdf(z) + s * norm.pdf(z), np.maximum(mu, 0.0))
        table["mean"] = np.where(below, censored, np.maximum(mean, 0.0))
    else:
        table["mean"] = np.maximum(mean, 0.0)
    labels = [str(t) for t in table["time"]]
    what = "The model's lower band"
    if median_below.any():
        what += f" (and its median in {_when(labels, np.flatnonzero(median_below))})"
    text = (
        f"{what} went below zero in {_when(labels, np.flatnonzero(below))}; shown as 0, since "
        "the series cannot be negative (catch, landings, abundance and CPUE never are). "
        "The chance of falling below a positive reference level is unchanged."
    )
    if reference is not None and reference <= 0:
        table["prob_below_reference"] = np.zeros(len(labels))
        text += f" A reference level of {reference:g} is never reached: its chance is 0."
    return text

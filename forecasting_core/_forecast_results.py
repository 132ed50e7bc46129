"""The frozen forecast result (bands ahead); re-exported by :mod:`forecasting_core._model_results`
and :mod:`forecasting_core._results`."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from forecasting_core._basics import CAUTIONS, _clean
from forecasting_core._model_results import TransformSpec


@dataclass(frozen=True)
class Forecast:
    """Forecast bands for the years (or months, quarters) ahead.

    Parameters
    ----------
    series_name : str
    model : str
        Label of the model (candidate or benchmark) that produced it.
    frequency : str
    horizon : int
        Steps ahead at the series' frequency.
    levels : tuple of int
        Band levels in percent, e.g. (50, 80, 95).
    reference : float or None
        Reference level on the original scale (e.g. a limit reference point).
    table : pandas.DataFrame
        One row per step: time, step, mean (bias-adjusted), median, lo50, hi50, lo80, hi80,
        lo95, hi95 (one pair per level), prob_below_reference (NaN without a reference).
    band_source : str
        ``"model"`` or ``"hindcast errors"`` (empirical quantiles of past h-step errors).
    transform : TransformSpec
    warnings : tuple of str
    cautions : tuple of str
    """

    series_name: str
    model: str
    frequency: str
    horizon: int
    levels: tuple[int, ...]
    reference: float | None
    table: pd.DataFrame = field(repr=False)
    band_source: str = "model"
    transform: TransformSpec = field(default_factory=lambda: TransformSpec("none"))
    warnings: tuple[str, ...] = ()
    cautions: tuple[str, ...] = CAUTIONS

    def to_frame(self) -> pd.DataFrame:
        return self.table.copy()

    def rows(self) -> list[dict[str, Any]]:
        """The ``forecast`` list of the JSON contract."""
        t = self.table
        cols = {c: t[c].tolist() for c in t.columns}  # plain Python values, one pass per column
        out = []
        for i in range(len(t)):
            out.append(
                _clean(
                    {
                        "time": cols["time"][i],
                        "step": int(cols["step"][i]),
                        "mean": cols["mean"][i],
                        "median": cols["median"][i],
                        "intervals": {
                            str(lv): [cols[f"lo{lv}"][i], cols[f"hi{lv}"][i]] for lv in self.levels
                        },
                        "prob_below_reference": cols["prob_below_reference"][i]
                        if self.reference is not None
                        else None,
                    }
                )
            )
        return out

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {
                "series": self.series_name,
                "model": self.model,
                "frequency": self.frequency,
                "horizon": self.horizon,
                "levels": list(self.levels),
                "reference": self.reference,
                "band_source": self.band_source,
                "transform": self.transform.to_dict(),
                "forecast": self.rows(),
                "warnings": list(self.warnings),
                "cautions": list(self.cautions),
            }
        )

    def summary(self) -> str:
        first = self.table.iloc[0]
        hi = max(self.levels)
        text = (
            f"{self.series_name}, {first['time']}: expected {first['mean']:.4g} "
            f"(median {first['median']:.4g}); {hi}% range {first[f'lo{hi}']:.4g} to {first[f'hi{hi}']:.4g}"
        )
        if 80 in self.levels:
            text += f"; 80% range {first['lo80']:.4g} to {first['hi80']:.4g}"
        if self.reference is not None:
            text += (
                f"; chance below {self.reference:.4g}: {100 * first['prob_below_reference']:.0f}%"
            )
        return text + f". Model: {self.model}."

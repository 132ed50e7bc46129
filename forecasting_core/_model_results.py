"""Frozen result types of the model steps: candidates, benchmarks, hindcast, residuals, forecasts.

Re-exported by :mod:`forecasting_core._results`; see there for the conventions.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from forecasting_core._basics import InputError, _clean

# ---------------------------------------------------------------------------------------------
# Models
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class TransformSpec:
    """The transform a model was fitted on.

    Parameters
    ----------
    name : {"none", "log", "boxcox"}
    lam : float or None
        Box-Cox lambda (None unless ``name`` is ``"boxcox"``).
    reason : str
        Why it was chosen (for ``auto``) or "chosen by the user".
    """

    name: str
    lam: float | None = None
    reason: str = ""

    def to_dict(self) -> dict[str, Any]:
        return _clean({"name": self.name, "lambda": self.lam})


@dataclass(frozen=True)
class Candidate:
    """One fitted (or rejected) ARIMA model.

    Coefficients use the sign convention
    ``x_t = c + sum(ar_i x_{t-i}) + e_t + sum(ma_j e_{t-j})`` on the differenced, transformed
    scale; ``sigma2`` is the innovation variance on that scale.

    Parameters
    ----------
    order : tuple of int
        (p, d, q).
    seasonal_order : tuple of int or None
        (P, D, Q, m), or None for a non-seasonal model.
    constant : bool
        Constant (d = 0) or drift (d = 1) included.
    label : str
        e.g. ``"ARIMA(1,1,0) with drift"``, ``"ARIMA(0,1,1)(0,1,1)[12]"``.
    status : {"ok", "rejected"}
    reason : str or None
        Why a candidate was rejected (failed fit, no convergence, root near the unit circle).
    aicc, aic, bic, loglik : float
        NaN when rejected before a likelihood was available.
    n_params : int
        Parameters counted as statsmodels counts them (including sigma2).
    nobs : int
        Observations that entered the likelihood.
    params : Mapping[str, float]
        Named parameters (``"const"``/``"drift"``, ``"ar.L1"``, ``"ma.L1"``, ``"sigma2"`` ...).
    ar, ma, seasonal_ar, seasonal_ma : tuple of float
    sigma2 : float
    delta_aicc, weight : float
        Against the best accepted candidate of its comparison; NaN for a lone fit.
    transform : TransformSpec
    series : pandas.Series
        The original-scale series the model was fitted to (kept for forecasting).
    """

    order: tuple[int, int, int]
    seasonal_order: tuple[int, int, int, int] | None
    constant: bool
    label: str
    status: str
    reason: str | None
    aicc: float
    aic: float
    bic: float
    loglik: float
    n_params: int
    nobs: int
    params: Mapping[str, float]
    ar: tuple[float, ...]
    ma: tuple[float, ...]
    seasonal_ar: tuple[float, ...]
    seasonal_ma: tuple[float, ...]
    sigma2: float
    transform: TransformSpec
    series: pd.Series = field(repr=False, compare=False)
    delta_aicc: float = math.nan
    weight: float = math.nan

    @property
    def ok(self) -> bool:
        return self.status == "ok"

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {
                "label": self.label,
                "order": list(self.order),
                "seasonal_order": list(self.seasonal_order) if self.seasonal_order else None,
                "constant": self.constant,
                "status": self.status,
                "reason": self.reason,
                "aicc": self.aicc,
                "aic": self.aic,
                "bic": self.bic,
                "loglik": self.loglik,
                "delta_aicc": self.delta_aicc,
                "weight": self.weight,
            }
        )

    def brief_dict(self) -> dict[str, Any]:
        """The entry of the JSON contract's ``candidates`` list (keys as in :meth:`to_dict`)."""
        return _clean(
            {
                "label": self.label,
                "order": list(self.order),
                "seasonal_order": list(self.seasonal_order) if self.seasonal_order else None,
                "aicc": self.aicc,
                "delta_aicc": self.delta_aicc,
                "weight": self.weight,
            }
        )

    def model_dict(self) -> dict[str, Any]:
        """The ``model`` object of the JSON contract."""
        return _clean(
            {
                "label": self.label,
                "order": list(self.order),
                "seasonal_order": list(self.seasonal_order) if self.seasonal_order else None,
                "constant": self.constant,
                "ar": list(self.ar),
                "ma": list(self.ma),
                "seasonal_ar": list(self.seasonal_ar),
                "seasonal_ma": list(self.seasonal_ma),
                "sigma2": self.sigma2,
                "aicc": self.aicc,
            }
        )

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame({"parameter": list(self.params), "value": list(self.params.values())})

    def summary(self) -> str:
        if not self.ok:
            return f"{self.label}: rejected - {self.reason}"
        coefs = ", ".join(f"{k} {v:.4g}" for k, v in self.params.items())
        return f"{self.label} on {self.transform.name} scale: AICc {self.aicc:.2f}; {coefs}"


@dataclass(frozen=True)
class Benchmark:
    """A simple benchmark method fitted to a series.

    Parameters
    ----------
    key : {"naive", "drift", "mean", "seasonal_naive"}
    label : str
        ``"last value"``, ``"last value + drift"``, ``"long-run mean"``,
        ``"same season last year"``.
    sigma2 : float
        Residual variance on the transformed scale.
    drift : float or None
        Mean step (drift method only), transformed scale per period.
    transform : TransformSpec
    series : pandas.Series
        The original-scale series.
    """

    key: str
    label: str
    sigma2: float
    drift: float | None
    transform: TransformSpec
    series: pd.Series = field(repr=False, compare=False)

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {"key": self.key, "label": self.label, "sigma2": self.sigma2, "drift": self.drift}
        )


@dataclass(frozen=True)
class SkillScore:
    """Hindcast skill of one model (ARIMA candidate or benchmark).

    Errors are on the original scale; MASE is scaled by the in-sample naive MAE
    (seasonal naive for seasonal data). Coverage is the share of realised values inside
    the band, in percent.
    """

    model: str
    kind: str  # "arima" or "benchmark"
    origins: int
    forecasts: int
    mae: float
    rmse: float
    mase: float
    coverage80: float
    coverage95: float
    interval_score80: float
    interval_score95: float

    def to_dict(self) -> dict[str, Any]:
        return _clean(self.__dict__)

    def coverage_warning(self, frequency: str = "annual") -> str | None:
        """A plain caution when the bands held the outcome far less often than stated.

        Our rule: the 80% band held fewer than 65% of the outcomes, or the 95% band fewer than
        85%, over at least 10 hindcast forecasts. Fewer forecasts say too little to warn on.
        ``frequency`` ("annual", "quarterly" or "monthly") names the periods: "On past years"
        (quarters, months).
        """
        if self.forecasts < 10 or math.isnan(self.coverage80) or math.isnan(self.coverage95):
            return None
        if self.coverage80 >= 65.0 and self.coverage95 >= 85.0:
            return None
        return (
            f"On past {dict(annual='years', quarterly='quarters', monthly='months').get(frequency, 'periods')} "
            f"the bands of {self.model} were too narrow: the 80% band held the "
            f"outcome {self.coverage80:.0f}% of the time and the 95% band {self.coverage95:.0f}% "
            f"({self.forecasts} hindcast forecasts). Read the ranges as optimistic."
        )


@dataclass(frozen=True)
class Hindcast:
    """Rolling-origin replay of past years.

    Parameters
    ----------
    origins : tuple of str
        Last period of data used at each origin.
    horizon : int
        Steps ahead at the series' frequency.
    scores : tuple of SkillScore
        One per model, chosen model first.
    errors : pandas.DataFrame
        One row per (model, origin, step): time, actual, mean, median, lo80, hi80, lo95, hi95.
    method : str
        ``"refit at every origin"`` or a labelled shortcut.
    verdict : str
        One sentence: whether and by how much the chosen model beats the last value.
    skipped : tuple of str
        Refits that were rejected (or could not forecast) at an origin, left out of the
        scores: one plain sentence each, naming the model and the origin.
    paired : tuple of tuple(SkillScore, SkillScore)
        One pair for every two models (in the order of ``scores``, the earlier first): their
        scores on the forecasts (origin and step) both made, so an origin where one refit
        failed is left out of both sides. Empty when not computed.
    """

    origins: tuple[str, ...]
    horizon: int
    scores: tuple[SkillScore, ...]
    errors: pd.DataFrame = field(repr=False)
    method: str = "refit at every origin"
    verdict: str = ""
    skipped: tuple[str, ...] = ()
    paired: tuple[tuple[SkillScore, SkillScore], ...] = ()

    def score(self, model: str) -> SkillScore | None:
        return next((s for s in self.scores if s.model == model), None)

    @property
    def chosen(self) -> str | None:
        """Label of the chosen model (the first scored; the verdict is about it)."""
        return self.scores[0].model if self.scores else None

    def versus(self, other: str, model: str | None = None) -> tuple[SkillScore, SkillScore] | None:
        """``model``'s and ``other``'s scores on the forecasts both made.

        Parameters
        ----------
        other : str
            Label of the model compared with, e.g. ``"last value"``.
        model : str, optional
            Label of the model compared; default the chosen one. With ``other`` = "last
            value" and the chosen model this is the pair the verdict compares.

        Returns
        -------
        tuple of SkillScore or None
            ``(model's score, other's score)``, each with ``origins`` = the number of common
            origins; None when the two are the same model or either was not replayed.
        """
        model = self.chosen if model is None else model
        for a, b in self.paired:
            if (a.model, b.model) == (model, other):
                return a, b
            if (a.model, b.model) == (other, model):
                return b, a
        return None

    def beside(self, model: str | None = None) -> tuple[SkillScore, ...]:
        """Scores for a table set beside ``model`` (default: the chosen one).

        ``model``'s own score, and every other model scored on the forecasts ``model`` also
        made, in the order of ``scores``. A model with no common forecast (or a hindcast
        without pairs) keeps its own score.
        """
        model = self.chosen if model is None else model
        out = []
        for s in self.scores:
            pair = None if s.model == model else self.versus(s.model, model)
            out.append(pair[1] if pair is not None and pair[1].forecasts else s)
        return tuple(out)

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame([s.to_dict() for s in self.scores])

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {
                "origins": list(self.origins),
                "horizon": self.horizon,
                "method": self.method,
                "scores": [s.to_dict() for s in self.scores],
                "verdict": self.verdict,
                "skipped": list(self.skipped),
            }
        )

    def summary(self) -> str:
        lines = [
            f"Hindcast over {len(self.origins)} origins ({self.method}), horizon {self.horizon}"
        ]
        for s in self.scores:
            lines.append(
                f"  {s.model:34s} MASE {s.mase:6.3f}  RMSE {s.rmse:10.4g}  "
                f"cover80 {s.coverage80:5.1f}%  cover95 {s.coverage95:5.1f}%"
            )
        lines.append("  " + self.verdict)
        return "\n".join(lines)


@dataclass(frozen=True)
class ResidualReport:
    """Residual checks of one fitted model.

    Parameters
    ----------
    model : str
        Candidate label.
    residuals : pandas.Series
        Standardized one-step residuals on the transformed scale, by period.
    ljung_box : pandas.DataFrame
        Columns lag, q, df, pvalue (df reduced by p + q + P + Q).
    jarque_bera : float
    jarque_bera_pvalue : float
    acf : tuple of float
        Residual ACF at lags 1..len(acf).
    limit : float
        Approximate 95% limit for the ACF.
    largest : tuple of tuple(str, float)
        The largest standardized residuals (period, value), largest first.
    verdict : str
    white_noise : bool
    """

    model: str
    residuals: pd.Series = field(repr=False)
    ljung_box: pd.DataFrame = field(repr=False)
    jarque_bera: float = math.nan
    jarque_bera_pvalue: float = math.nan
    acf: tuple[float, ...] = ()
    limit: float = math.nan
    largest: tuple[tuple[str, float], ...] = ()
    verdict: str = ""
    white_noise: bool = True

    def to_frame(self) -> pd.DataFrame:
        return self.ljung_box.copy()

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {
                "model": self.model,
                "ljung_box": self.ljung_box.to_dict(orient="records"),
                "jarque_bera": self.jarque_bera,
                "jarque_bera_pvalue": self.jarque_bera_pvalue,
                "largest": [list(x) for x in self.largest],
                "verdict": self.verdict,
                "white_noise": self.white_noise,
            }
        )

    def summary(self) -> str:
        return f"Residuals of {self.model}: {self.verdict}"


@dataclass(frozen=True)
class Comparison:
    """Result of :func:`compare_models` for one series.

    Parameters
    ----------
    series_name : str
    frequency : str
    observations : int
    transform : TransformSpec
    candidates : tuple of Candidate
        Accepted candidates by AICc, then rejected ones with their reasons.
    best : Candidate
        The AICc-best accepted candidate (or the forced order).
    benchmarks : tuple of Benchmark
    hindcast : Hindcast or None
    diagnostics : ResidualReport or None
        Residual checks of ``best``.
    settings : Mapping[str, Any]
        Every setting that produced this result (JSON-ready).
    provenance : Mapping[str, Any]
        Data hash, package versions, time of computation.
    warnings : tuple of str
    """

    series_name: str
    frequency: str
    observations: int
    transform: TransformSpec
    candidates: tuple[Candidate, ...]
    best: Candidate
    benchmarks: tuple[Benchmark, ...]
    hindcast: Hindcast | None
    diagnostics: ResidualReport | None
    settings: Mapping[str, Any]
    provenance: Mapping[str, Any]
    warnings: tuple[str, ...] = ()

    @property
    def accepted(self) -> tuple[Candidate, ...]:
        return tuple(c for c in self.candidates if c.ok)

    @property
    def rejected(self) -> tuple[Candidate, ...]:
        return tuple(c for c in self.candidates if not c.ok)

    def candidate(self, label: str) -> Candidate:
        """Return the candidate with this label; raise InputError when there is none."""
        for c in self.candidates:
            if c.label == label:
                return c
        raise InputError(f"candidate must be one of the compared models. Got {label!r} instead.")

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame([c.to_dict() for c in self.candidates])

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {
                "series": self.series_name,
                "observations": self.observations,
                "frequency": self.frequency,
                "transform": self.transform.to_dict(),
                "model": self.best.model_dict(),
                "candidates": [c.brief_dict() for c in self.accepted],
                "rejected": [{"label": c.label, "reason": c.reason} for c in self.rejected],
                "hindcast": self.hindcast.to_dict() if self.hindcast else None,
                "diagnostics": self.diagnostics.to_dict() if self.diagnostics else None,
                "settings": dict(self.settings),
                "provenance": dict(self.provenance),
                "warnings": list(self.warnings),
            }
        )

    def summary(self) -> str:
        lines = [
            f"{self.series_name}: {self.observations} {self.frequency} values, transform {self.transform.name}",
            f"Chosen model: {self.best.label} (AICc {self.best.aicc:.2f})",
            "Candidates (best 10 by AICc):",
        ]
        for c in self.accepted[:10]:
            lines.append(
                f"  {c.label:36s} AICc {c.aicc:9.2f}  dAICc {c.delta_aicc:6.2f}  weight {c.weight:5.3f}"
            )
        if self.rejected:
            lines.append(
                f"Rejected: {len(self.rejected)} (e.g. {self.rejected[0].label}: {self.rejected[0].reason})"
            )
        if self.hindcast:
            lines.append(self.hindcast.summary())
        if self.diagnostics:
            lines.append(self.diagnostics.summary())
        lines.extend(f"Warning: {w}" for w in self.warnings)
        return "\n".join(lines)


# Forecast lives in _forecast_results (split for size); re-exported here.
from forecasting_core._forecast_results import Forecast  # noqa: E402, F401

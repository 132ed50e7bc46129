"""none / log / Box-Cox (Guerrero lambda); back-transform, bias-adjusted mean. STUB."""

from __future__ import annotations

import numpy as np
import pandas as pd

from forecasting_core._results import TransformSpec


def choose_transform(y: pd.Series, method: str = "auto") -> TransformSpec:
    """Resolve ``"none" | "log" | "boxcox" | "auto"`` to a TransformSpec for this series."""
    raise NotImplementedError


def transform_series(y: pd.Series | np.ndarray, spec: TransformSpec) -> pd.Series | np.ndarray:
    """Original scale -> transformed scale (NaN stays NaN)."""
    raise NotImplementedError


def back_transform(z: pd.Series | np.ndarray | float, spec: TransformSpec):
    """Transformed scale -> original scale; maps quantiles exactly (used for median and bands)."""
    raise NotImplementedError


def mean_back_transform(mu, var, spec: TransformSpec):
    """Bias-adjusted mean on the original scale of a normal(mu, var) on the transformed scale."""
    raise NotImplementedError


def guerrero_lambda(y: pd.Series, period: int = 2) -> float:
    """Box-Cox lambda by Guerrero's (1993) coefficient-of-variation method."""
    raise NotImplementedError


def boxcox_mle_lambda(y: pd.Series) -> float:
    """Box-Cox lambda by maximum likelihood (agrees with scipy.stats.boxcox)."""
    raise NotImplementedError

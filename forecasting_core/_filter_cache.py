"""The last few statsmodels ``filter(params)`` results, kept per thread.

The chosen model is filtered when the search finds it (``_arima.candidate_at``), then again
for its forecast and its residual checks (``_arima.filter_candidate``): the same data, model
and parameters, so the same results object serves all three. Keys hold everything a result
depends on; each thread keeps its own few (no results object is shared between threads).
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Mapping
from typing import Any

import numpy as np

#: statsmodels results kept per thread (the chosen model is filtered when it is found, then
#: again for its forecast and its residual checks: the same numbers each time).
FILTER_CACHE_SIZE = 4
_FILTERED = threading.local()


def _filter_key(z: np.ndarray, order, seasonal_order, constant: bool, params: Mapping[str, float]) -> tuple:
    """Everything a ``filter(params)`` result depends on: data, model and parameters."""
    return (
        np.ascontiguousarray(z, dtype=float).tobytes(),
        tuple(order),
        tuple(seasonal_order) if seasonal_order else None,
        bool(constant),
        tuple(params.items()),
    )


def _recall(key: tuple) -> Any:
    cache = getattr(_FILTERED, "results", None)
    if cache is None or key not in cache:
        return None
    cache.move_to_end(key)
    return cache[key]


def _remember(key: tuple, res: Any) -> None:
    cache = getattr(_FILTERED, "results", None)
    if cache is None:
        cache = _FILTERED.results = OrderedDict()
    cache[key] = res
    cache.move_to_end(key)
    while len(cache) > FILTER_CACHE_SIZE:
        cache.popitem(last=False)

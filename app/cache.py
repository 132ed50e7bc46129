"""Result cache: flask-caching, on the filesystem by default, Redis when configured.

Results are memoized on (dataset content hash, series name, settings), so every browser
session that asks the same question shares one computation, and nothing about a session is
kept on the server. The forecasting core's version is part of every key, so upgrading it
never serves stale results.

Configuration (keys of ``create_app(config)``):

``CACHE_TYPE``
    Any flask-caching type. Default ``"FileSystemCache"`` under ``DATA_DIR/cache``;
    ``"SimpleCache"`` (in memory) or ``"NullCache"`` (off) are handy in tests.
``CACHE_REDIS_URL``
    e.g. ``redis://localhost:6379/0``; when set, the cache is Redis (``CACHE_TYPE`` ignored).
    Needs the ``redis`` Python package.
``CACHE_DEFAULT_TIMEOUT``
    Seconds; default 0 (keep until evicted).
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from flask import Flask
from flask_caching import Cache

import forecasting_core as fc
from app.store import get_store

#: The app-wide cache object; ``init_cache`` binds it to each Flask server (one object may
#: serve several apps, each with its own backend).
cache = Cache()

TRANSFORMS = ("auto", "none", "log", "boxcox")


def cache_config(config: Mapping[str, Any], data_dir: Path) -> dict[str, Any]:
    """The flask-caching configuration for these app settings."""
    out: dict[str, Any] = {
        "CACHE_DEFAULT_TIMEOUT": int(config.get("CACHE_DEFAULT_TIMEOUT", 0)),
        "CACHE_KEY_PREFIX": "haulcast_",
        "CACHE_THRESHOLD": int(config.get("CACHE_THRESHOLD", 2000)),
    }
    redis_url = config.get("CACHE_REDIS_URL")
    if redis_url:
        out["CACHE_TYPE"] = "RedisCache"
        out["CACHE_REDIS_URL"] = str(redis_url)
    else:
        out["CACHE_TYPE"] = str(config.get("CACHE_TYPE") or "FileSystemCache")
        if out["CACHE_TYPE"] in ("FileSystemCache", "filesystem"):
            cache_dir = Path(config.get("CACHE_DIR") or data_dir / "cache")
            cache_dir.mkdir(parents=True, exist_ok=True)
            out["CACHE_DIR"] = str(cache_dir)
    return out


def init_cache(server: Flask, config: Mapping[str, Any], data_dir: Path) -> None:
    """Bind :data:`cache` to ``server`` with the configured backend."""
    cache.init_app(server, config=cache_config(config, data_dir))


def settings_json(settings: Mapping[str, Any] | None) -> str:
    """Canonical JSON of a settings dict (sorted keys), the cache key's settings part.

    >>> settings_json({"horizon": 5, "transform": "auto"})
    '{"horizon":5,"transform":"auto"}'
    """
    return json.dumps(dict(settings or {}), sort_keys=True, separators=(",", ":"))


def _series(dataset_id: str, series: str):
    table = get_store().load_table(dataset_id)
    if series not in table.series:
        usable = ", ".join(repr(s) for s in table.series) or "none"
        raise fc.InputError(
            f"series must be one of the usable series of this dataset ({usable}). Got {series!r} instead."
        )
    return table.series[series]


# -- comparisons ------------------------------------------------------------------------------


def get_comparison(dataset_id: str, series: str, settings_json: str) -> fc.Comparison:
    """:func:`forecasting_core.compare_models` for one series, memoized.

    Parameters
    ----------
    dataset_id : str
        Content hash of the dataset (``hc-selection["dataset_id"]`` after ``resolve_selection``).
    series : str
        Series name in that dataset.
    settings_json : str
        JSON object whose keys are passed to ``compare_models`` as keyword arguments
        (e.g. ``{"horizon": 5, "transform": "auto"}``). Build it with :func:`settings_json`
        so the same settings always give the same key.

    Raises
    ------
    forecasting_core.InputError
        Unknown dataset or series, settings not a JSON object, or a setting the core refuses.
        Errors are not cached.
    """
    return _comparison(dataset_id, series, settings_json, fc.__version__)


@cache.memoize()
def _comparison(dataset_id: str, series: str, settings: str, core_version: str) -> fc.Comparison:
    kwargs = _parse_settings(settings)
    return fc.compare_models(_series(dataset_id, series), **kwargs)


# -- stationarity -----------------------------------------------------------------------------


def get_stationarity(
    dataset_id: str, series: str, transform: str = "auto"
) -> fc.StationarityReport:
    """:func:`forecasting_core.assess_stationarity` on the chosen transform, memoized.

    Parameters
    ----------
    dataset_id, series : str
        As for :func:`get_comparison`.
    transform : {"auto", "none", "log", "boxcox"}
        ``auto`` is resolved with :func:`forecasting_core.choose_transform` first.
    """
    if transform not in TRANSFORMS:
        raise fc.InputError(
            f"transform must be one of {', '.join(TRANSFORMS)}. Got {transform!r} instead."
        )
    return _stationarity(dataset_id, series, transform, fc.__version__)


@cache.memoize()
def _stationarity(
    dataset_id: str, series: str, transform: str, core_version: str
) -> fc.StationarityReport:
    y = _series(dataset_id, series)
    name = resolve_transform(y, transform).name
    return fc.assess_stationarity(y, transform=name)


def resolve_transform(y, transform: str) -> fc.TransformSpec:
    """The TransformSpec ``transform`` means for series ``y`` (``auto`` decided by the core)."""
    return fc.choose_transform(y, transform)


def _parse_settings(settings: str) -> dict[str, Any]:
    try:
        kwargs = json.loads(settings) if settings else {}
    except (TypeError, ValueError) as err:
        raise fc.InputError(
            f"settings must be a JSON object. Got {str(settings)[:80]!r} instead."
        ) from err
    if not isinstance(kwargs, dict):
        raise fc.InputError(f"settings must be a JSON object. Got {type(kwargs).__name__} instead.")
    return kwargs


def clear() -> None:
    """Empty the cache of the current app."""
    cache.clear()

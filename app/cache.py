"""Result cache: flask-caching, on the filesystem by default, Redis when configured.

Results are memoized on (dataset content hash, series name, settings), so every browser
session that asks the same question shares one computation, and nothing about a session is
kept on the server. The forecasting core's version is part of every key, so upgrading it
never serves stale results.

A comparison is kept in layers keyed only by what each depends on (see "comparisons, in
layers" below): the order search, the hindcast on top of it, and per picked model its
forecast and residual checks. A new horizon reruns only the hindcast; a new reference level
only ``make_forecast``. Within one server process, concurrent requests for the same entry
wait for the one computing it instead of computing it again.

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

import contextvars
import json
import threading
from collections.abc import Callable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import replace
from pathlib import Path
from typing import Any

from flask import Flask, Response, request
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
    """Bind :data:`cache` to ``server`` with the configured backend; let browsers keep assets."""
    cache.init_app(server, config=cache_config(config, data_dir))
    server.after_request(asset_cache_headers)


#: Seconds a browser may keep an asset without asking again: a year for fingerprinted ones
#: (Dash adds ``?m=<mtime>`` to stylesheets and scripts), an hour for the rest (the logo).
ASSET_MAX_AGE = {"fingerprinted": 365 * 24 * 3600, "plain": 3600}


def asset_cache_headers(response: Response) -> Response:
    """``Cache-Control`` for files under ``/assets/``, so a page switch never refetches them.

    ``private``: with an access key the assets are behind it, so no shared cache keeps them.
    """
    if request.path.startswith("/assets/") and response.status_code == 200:
        kind = "fingerprinted" if request.args.get("m") else "plain"
        response.headers["Cache-Control"] = f"private, max-age={ASSET_MAX_AGE[kind]}"
    return response


def settings_json(settings: Mapping[str, Any] | None) -> str:
    """Canonical JSON of a settings dict (sorted keys), the cache key's settings part.

    >>> settings_json({"horizon": 5, "transform": "auto"})
    '{"horizon":5,"transform":"auto"}'
    """
    return json.dumps(dict(settings or {}), sort_keys=True, separators=(",", ":"))


_json = settings_json


def _series(dataset_id: str, series: str):
    table = get_store().load_table(dataset_id)
    if series not in table.series:
        usable = ", ".join(repr(s) for s in table.series) or "none"
        raise fc.InputError(
            f"series must be one of the usable series of this dataset ({usable}). Got {series!r} instead."
        )
    return table.series[series]


# -- comparisons, in layers ---------------------------------------------------------------------
#
# A comparison is memoized in two layers, each keyed only by what it depends on:
#
# search layer   (dataset, series, every setting but the hindcast's)
#                compare_models(..., hindcast=False): transform, differences, order search,
#                benchmarks and the best model's residual checks;
# hindcast layer (the search layer's key + horizon + hindcast origins)
#                run_hindcast on the models compare_models replays (the best, up to two
#                runners-up, the benchmarks).
#
# get_comparison joins the two into the Comparison a plain compare_models call returns (a test
# holds them equal), so a new horizon or number of origins reruns only the hindcast. Forecasts
# (get_forecast) and residual checks (get_residuals) of one picked model sit on the search layer.

#: compare_models keywords only the hindcast depends on (the search layer never sees them).
HINDCAST_SETTINGS = ("horizon", "hindcast_origins", "hindcast")

_flight_guard = threading.Lock()
_flights: dict[tuple[Any, ...], list[Any]] = {}


@contextmanager
def _single_flight(key: tuple[Any, ...]) -> Iterator[None]:
    """Let one thread of this process compute ``key``; the others wait for it, then hit the cache."""
    with _flight_guard:
        entry = _flights.setdefault(key, [threading.Lock(), 0])
        entry[1] += 1
    try:
        with entry[0]:
            yield
    finally:
        with _flight_guard:
            entry[1] -= 1
            if entry[1] == 0:
                _flights.pop(key, None)


def split_settings(settings: Mapping[str, Any]) -> tuple[dict[str, Any], dict[str, Any]]:
    """Split ``compare_models`` keywords into the search layer's and the hindcast layer's.

    Returns
    -------
    (dict, dict)
        Every keyword but :data:`HINDCAST_SETTINGS`; and ``{"horizon", "hindcast_origins",
        "hindcast"}`` with ``compare_models``' defaults (5, None, True) filled in.

    Raises
    ------
    forecasting_core.InputError
        ``horizon`` or ``hindcast_origins`` out of the range ``compare_models`` accepts
        (checked here, with the core's wording, because the search layer never sees them).
    """
    search = {k: v for k, v in settings.items() if k not in HINDCAST_SETTINGS}
    hind = {
        "horizon": settings.get("horizon", 5),
        "hindcast_origins": settings.get("hindcast_origins"),
        "hindcast": settings.get("hindcast", True),
    }
    _check_int("horizon", hind["horizon"], 1, 30)
    if hind["hindcast_origins"] is not None:
        _check_int("hindcast_origins", hind["hindcast_origins"], 1, 1000)
    return search, hind


def _check_int(name: str, value: Any, lo: int, hi: int) -> None:
    if isinstance(value, bool) or not isinstance(value, int) or not lo <= value <= hi:
        raise fc.InputError(f"{name} must be an integer from {lo} to {hi}. Got {value!r} instead.")


def get_comparison(dataset_id: str, series: str, settings_json: str) -> fc.Comparison:
    """:func:`forecasting_core.compare_models` for one series, memoized in layers.

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

    Returns
    -------
    forecasting_core.Comparison
        Equal to ``compare_models(y, **settings)`` (its provenance time is the search's).
        Changing ``horizon`` or ``hindcast_origins`` reruns only the hindcast.

    Raises
    ------
    forecasting_core.InputError
        Unknown dataset or series, settings not a JSON object, or a setting the core refuses.
        Errors are not cached.
    """
    search, hind = split_settings(parse_settings(settings_json))
    key = _json(search)
    base = get_search(dataset_id, series, key)
    settings = {
        **base.settings,
        "horizon": hind["horizon"],
        "hindcast": bool(hind["hindcast"]),
        "hindcast_origins": hind["hindcast_origins"],
    }
    if not hind["hindcast"]:
        return replace(base, settings=settings)
    hindcast, warnings = _layer(
        _hindcast_layer, dataset_id, series, key, hind["horizon"], hind["hindcast_origins"]
    )
    return replace(base, hindcast=hindcast, settings=settings, warnings=base.warnings + warnings)


def get_search(dataset_id: str, series: str, search_json: str) -> fc.Comparison:
    """The search layer: ``compare_models(y, **search, hindcast=False)``, memoized.

    ``search_json`` is :func:`settings_json` of the settings without
    :data:`HINDCAST_SETTINGS` (see :func:`split_settings`).
    """
    return _layer(_search_layer, dataset_id, series, search_json)


def get_forecast(
    dataset_id: str,
    series: str,
    settings_json: str,
    label: str,
    horizon: int,
    levels: Sequence[int] = (50, 80, 95),
    reference: float | None = None,
) -> fc.Forecast:
    """:func:`forecasting_core.make_forecast` of one candidate of a comparison, memoized.

    Parameters
    ----------
    dataset_id, series, settings_json : str
        As for :func:`get_comparison`; only the search layer's part matters.
    label : str
        Candidate label (``Candidate.label``).
    horizon : int
        Steps ahead at the series' frequency.
    levels : sequence of int
        Band levels in percent.
    reference : float, optional
        Reference level on the original scale; changing it reruns only ``make_forecast``.
    """
    search, _hind = split_settings(parse_settings(settings_json))
    return _layer(
        _forecast_layer,
        dataset_id,
        series,
        _json(search),
        label,
        horizon,
        tuple(int(x) for x in levels),
        None if reference is None else float(reference),
    )


def get_residuals(dataset_id: str, series: str, settings_json: str, label: str) -> fc.ResidualReport:
    """:func:`forecasting_core.check_residuals` of one candidate (the search's own for the best)."""
    search, _hind = split_settings(parse_settings(settings_json))
    return _layer(_residuals_layer, dataset_id, series, _json(search), label)


class NotCached(LookupError):
    """Raised inside :func:`cached_only` when a result is not in the cache yet."""


#: Inside cached_only(): the results looked up so far in that block (each is read once).
_ONLY_CACHED: contextvars.ContextVar[dict[tuple[Any, ...], Any] | None] = contextvars.ContextVar(
    "only_cached", default=None
)


@contextmanager
def cached_only() -> Iterator[None]:
    """Within this block the memoized results are looked up, never computed.

    A result that is not in the cache raises :class:`NotCached` instead of running the
    core, so a page can build its first answer into its layout when (and only when) it is
    already known, and leave the rest to its callbacks::

        with cached_only():
            try:
                comparison = get_comparison(dataset_id, series, settings)
            except NotCached:
                comparison = None
    """
    token = _ONLY_CACHED.set({})
    try:
        yield
    finally:
        _ONLY_CACHED.reset(token)


def remembered(function: Callable[..., Any], *args: Any) -> Any:
    """``function(*args)`` of a ``cache.memoize``-d function; only a cache look-up inside
    :func:`cached_only` (raising :class:`NotCached` on a miss)."""
    seen = _ONLY_CACHED.get()
    if seen is None:
        return function(*args)
    key = (function.__qualname__, *args)
    if key not in seen:
        value = cache.get(function.make_cache_key(function.uncached, *args))
        if value is None:  # nothing memoized here returns None
            raise NotCached(function.__name__)
        seen[key] = value
    return seen[key]


def _layer(function: Callable[..., Any], *args: Any) -> Any:
    if _ONLY_CACHED.get() is not None:
        return remembered(function, *args, fc.__version__)
    with _single_flight((function.__name__, *args)):
        return function(*args, fc.__version__)


@cache.memoize()
def _search_layer(dataset_id: str, series: str, search: str, core_version: str) -> fc.Comparison:
    kwargs = parse_settings(search)
    return fc.compare_models(_series(dataset_id, series), **kwargs, hindcast=False)


@cache.memoize()
def _hindcast_layer(
    dataset_id: str,
    series: str,
    search: str,
    horizon: int,
    origins: int | None,
    core_version: str,
) -> tuple[fc.Hindcast | None, tuple[str, ...]]:
    # the models and the error handling of compare_models' own hindcast step
    base = get_search(dataset_id, series, search)
    models = ([base.best] if base.best.ok else []) + list(base.accepted[1:3]) + list(base.benchmarks)
    if not models:
        return None, ()
    try:
        hindcast = fc.run_hindcast(
            _series(dataset_id, series), models=models, horizon=horizon, origins=origins
        )
    except NotImplementedError:
        return None, ()
    except fc.InputError as exc:
        return None, (f"Hindcast not run: {exc}",)
    return hindcast, ()


@cache.memoize()
def _forecast_layer(
    dataset_id: str,
    series: str,
    search: str,
    label: str,
    horizon: int,
    levels: tuple[int, ...],
    reference: float | None,
    core_version: str,
) -> fc.Forecast:
    candidate = get_search(dataset_id, series, search).candidate(label)
    return fc.make_forecast(candidate, horizon=horizon, levels=levels, reference=reference)


@cache.memoize()
def _residuals_layer(
    dataset_id: str, series: str, search: str, label: str, core_version: str
) -> fc.ResidualReport:
    base = get_search(dataset_id, series, search)
    if base.diagnostics is not None and base.diagnostics.model == label:
        return base.diagnostics
    return fc.check_residuals(base.candidate(label))


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


def parse_settings(settings: str) -> dict[str, Any]:
    """The settings dict of a settings JSON string (InputError when it is not a JSON object)."""
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

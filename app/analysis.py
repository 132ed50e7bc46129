"""From a browser session's selection to core results: settings, comparison, forecast.

Shared by the Model Bench and the Forecast Board so that both ask the memoized comparison
(:func:`app.cache.get_comparison`) exactly the same question. Nothing here draws anything.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import forecasting_core as fc
from app.cache import (
    get_comparison,
    get_forecast,
    get_search,
    parse_settings,
    settings_json,
    split_settings,
)
from app.state import TRANSFORMS, resolve_selection, update_selection

#: Model Bench settings a new session starts from (kept in ``hc-selection["bench"]``).
DEFAULT_BENCH: dict[str, Any] = {
    "search": "auto",
    "max_p": 5,
    "max_q": 5,
    "seasonal": True,
    "constant": "auto",
    "origins": None,
    "horizon": 5,
    # None: from the stationarity tests (as Intake shows them); else fixed by the user
    "d": None,
    "D": None,
}
#: Choices of the number of differences d (0 to 2) and seasonal differences D (0 or 1);
#: None is "Automatic".
DIFFERENCES = {"d": (0, 1, 2), "D": (0, 1)}
#: Settings whose meaning depends on the series' frequency: when a series of another
#: frequency is chosen they go back to these defaults (see :func:`bench_for_frequency`).
FREQUENCY_SETTINGS = ("seasonal", "D", "horizon", "origins")
#: The key in ``hc-selection["bench"]`` naming the frequency the settings were chosen for
#: (written by the Model Bench's "Run"; not a setting, so :func:`bench_settings` drops it).
FREQUENCY_KEY = "frequency"
#: The key in ``hc-selection["bench"]`` naming the series the settings were chosen for, as
#: ``[dataset id, series name]`` (written with them: see :func:`stamp_bench`). A hand-set
#: d or D belongs to that series only (see :func:`bench_for_series`).
SERIES_KEY = "for_series"
#: Keys of ``hc-selection["bench"]`` that say what the settings were made for (no settings).
MARKER_KEYS = (FREQUENCY_KEY, SERIES_KEY)
_PERIOD_WORDS = {"annual": ("year", "years"), "quarterly": ("quarter", "quarters"), "monthly": ("month", "months")}
SEARCH_LABELS = {
    "auto": "Automatic (every order; stepwise with seasonal terms)",
    "exhaustive": "Every order (exhaustive)",
    "stepwise": "Stepwise (faster)",
}
CONSTANT_LABELS = {"auto": "Try both", "on": "Always", "off": "Never"}
#: Band levels (percent) everywhere on the bench and the board.
LEVELS = (50, 80, 95)


def _int_setting(
    name: str, value: Any, lo: int, hi: int, *, allow_none: bool = False
) -> int | None:
    if value is None or value == "":
        if allow_none:
            return None
        raise fc.InputError(
            f"{name} must be an integer from {lo} to {hi}. Got a blank or out-of-range value instead."
        )
    try:
        number = float(value)
    except (TypeError, ValueError):
        number = math.nan
    if not number.is_integer() or not lo <= number <= hi:
        raise fc.InputError(f"{name} must be an integer from {lo} to {hi}. Got {value!r} instead.")
    return int(number)


def bench_settings(raw: Mapping[str, Any] | None) -> dict[str, Any]:
    """The Model Bench settings with defaults filled in and every value checked.

    Parameters
    ----------
    raw : Mapping, optional
        ``hc-selection["bench"]`` (or the page's controls).

    Raises
    ------
    forecasting_core.InputError
        A value outside what the core accepts, named as the page labels it.
    """
    out = {**DEFAULT_BENCH, **{k: v for k, v in dict(raw or {}).items() if k in DEFAULT_BENCH}}
    if out["search"] not in SEARCH_LABELS:
        raise fc.InputError(
            f"search must be auto, exhaustive or stepwise. Got {out['search']!r} instead."
        )
    if out["constant"] not in CONSTANT_LABELS:
        raise fc.InputError(f"constant must be auto, on or off. Got {out['constant']!r} instead.")
    out["max_p"] = _int_setting("Largest AR order p", out["max_p"], 0, 5)
    out["max_q"] = _int_setting("Largest MA order q", out["max_q"], 0, 5)
    out["horizon"] = _int_setting("Horizon", out["horizon"], 1, 30)
    out["origins"] = _int_setting("Hindcast origins", out["origins"], 1, 40, allow_none=True)
    out["seasonal"] = bool(out["seasonal"])
    for key, label in (("d", "Differences d"), ("D", "Seasonal differences D")):
        value = None if out[key] == "auto" else out[key]
        out[key] = _int_setting(label, value, 0, max(DIFFERENCES[key]), allow_none=True)
    return out


def bench_for_frequency(
    bench: Mapping[str, Any] | None, frequency: str | None
) -> tuple[dict[str, Any] | None, str | None]:
    """The session's Model Bench settings for a series of ``frequency``, and a note when changed.

    Settings chosen for a series of another frequency (see :data:`FREQUENCY_KEY`) do not carry
    over where their meaning depends on it (:data:`FREQUENCY_SETTINGS`): "no seasonal terms"
    on annual data is no choice, and 6 years ahead are not 6 months ahead. Those go back to
    the defaults; the other settings are kept.

    Parameters
    ----------
    bench : Mapping, optional
        ``hc-selection["bench"]`` as stored (None: the defaults, nothing to change).
    frequency : {"annual", "quarterly", "monthly"}, optional
        The chosen series' frequency (None: unknown, nothing changed).

    Returns
    -------
    (dict or None, str or None)
        The settings (``bench`` itself when nothing changed) and a short note saying what was
        reset, e.g. "Horizon reset to 5 months (the default): the 6 years set for annual data
        do not carry over to monthly data." (None when nothing was reset).
    """
    if not isinstance(bench, Mapping) or frequency is None:
        return (dict(bench) if isinstance(bench, Mapping) else None), None
    was = bench.get(FREQUENCY_KEY)
    if was is None or was == frequency:
        return dict(bench), None
    out = {**bench, **{k: DEFAULT_BENCH[k] for k in FREQUENCY_SETTINGS}, FREQUENCY_KEY: frequency}
    old_words = _PERIOD_WORDS.get(str(was), ("period", "periods"))
    new_words = _PERIOD_WORDS.get(frequency, ("period", "periods"))
    parts = []
    try:
        old_h = _int_setting("Horizon", bench.get("horizon", DEFAULT_BENCH["horizon"]), 1, 30)
    except fc.InputError:
        old_h = None
    h = int(DEFAULT_BENCH["horizon"])
    parts.append(
        f"Horizon reset to {h} {new_words[h != 1]} (the default)"
        + (
            f": the {old_h} {old_words[old_h != 1]} set for {was} data do not carry over to "
            f"{frequency} data."
            if old_h is not None
            else "."
        )
    )
    if frequency != "annual" and (not bench.get("seasonal", True) or bench.get("D") is not None):
        parts.append("Seasonal terms are searched again (the default for monthly and quarterly data).")
    if bench.get("origins") is not None:
        parts.append("Hindcast origins back to automatic.")
    return out, " ".join(parts)


def series_frequency(dataset_id: Any, series: Any, store: Any | None = None) -> str | None:
    """The frequency of a stored series ("annual", "quarterly", "monthly"); None when unknown.

    Parameters
    ----------
    dataset_id, series : str
        The dataset (content hash, see :mod:`app.store`) and the series' name in it.
    store : DatasetStore, optional
        Defaults to the running app's store (inside a callback).
    """
    if not dataset_id or not series:
        return None
    try:
        if store is None:
            from app.store import get_store

            store = get_store()
        info = store.load_table(str(dataset_id)).info.get(str(series))
    except Exception:  # noqa: BLE001 - a dataset gone or unreadable: the frequency is unknown
        return None
    return info.frequency if info is not None else None


def stamp_bench(
    bench: Mapping[str, Any] | None,
    dataset_id: Any,
    series: Any,
    frequency: str | None = None,
    store: Any | None = None,
) -> dict[str, Any] | None:
    """``bench`` with the series (and its frequency) it is made for written beside it.

    Whatever writes Model Bench settings into the session (the Bench's "Run", a saved
    analysis opened) stamps them, so that :func:`bench_for_series` can tell when another
    series is chosen later.

    Parameters
    ----------
    bench : Mapping, optional
        Model Bench settings (None stays None: the defaults, made for any series).
    dataset_id, series : str
        The series the settings are made for.
    frequency : str, optional
        Its frequency; looked up in the store when not given.
    store : DatasetStore, optional
        Defaults to the running app's store.
    """
    if not isinstance(bench, Mapping):
        return None
    out = dict(bench)
    if dataset_id and series:
        out[SERIES_KEY] = [str(dataset_id), str(series)]
    if frequency is None:
        frequency = series_frequency(dataset_id, series, store)
    if frequency is not None:
        out[FREQUENCY_KEY] = frequency
    return out


def bench_for_series(
    bench: Mapping[str, Any] | None,
    dataset_id: Any,
    series: Any,
    frequency: str | None,
    store: Any | None = None,
) -> tuple[dict[str, Any] | None, str | None]:
    """The session's Model Bench settings for the chosen series, and a note when changed.

    Two things do not carry over from the series the settings were made for (see
    :data:`SERIES_KEY`) to another one: the settings tied to the frequency when the two
    frequencies differ (:func:`bench_for_frequency`), and a d or D set by hand (numbers of
    differences belong to one series; they go back to Automatic). Settings that do not say
    their frequency take it from the series they name; settings that name nothing are
    taken to be this series'. The result is stamped for the chosen series.

    Parameters
    ----------
    bench : Mapping, optional
        ``hc-selection["bench"]`` as stored (None: the defaults, nothing to change).
    dataset_id, series : str or None
        The chosen series.
    frequency : str, optional
        Its frequency (None: unknown).
    store : DatasetStore, optional
        For the frequency of the series the settings were made for, when they do not say it.

    Returns
    -------
    (dict or None, str or None)
        The settings and a note saying what was reset (None when nothing was).
    """
    if not isinstance(bench, Mapping):
        return None, None
    made_for = bench.get(SERIES_KEY)
    here = [str(dataset_id), str(series)] if dataset_id and series else None
    other = (
        isinstance(made_for, list | tuple)
        and len(made_for) == 2
        and here is not None
        and [str(x) for x in made_for] != here
    )
    out = dict(bench)
    if out.get(FREQUENCY_KEY) is None and other:
        # no frequency written beside the settings: the one of the series they were made for
        out[FREQUENCY_KEY] = series_frequency(made_for[0], made_for[1], store)
        if out[FREQUENCY_KEY] is None:
            del out[FREQUENCY_KEY]
    out, note = bench_for_frequency(out, frequency)
    notes = [note] if note else []
    hand = [k for k in ("d", "D") if out.get(k) not in (None, "auto")]
    if other and hand:
        out.update({k: None for k in hand})
        which = " and ".join(hand)
        notes.append(
            f"{which} {'were' if len(hand) > 1 else 'was'} set by hand for {made_for[1]}; "
            f"back to Automatic for {series}."
        )
    out = stamp_bench(out, dataset_id, series, frequency or out.get(FREQUENCY_KEY), store)
    return out, (" ".join(notes) or None)


def compare_kwargs(bench: Mapping[str, Any], transform: str) -> dict[str, Any]:
    """Keyword arguments of :func:`forecasting_core.compare_models` for these settings."""
    b = bench_settings(bench)
    out: dict[str, Any] = {
        "horizon": b["horizon"],
        "transform": transform if transform in TRANSFORMS else "auto",
        "search": b["search"],
        "max_p": b["max_p"],
        "max_q": b["max_q"],
        # on: the core's default (seasonal terms for monthly and quarterly data only)
        "seasonal": None if b["seasonal"] else False,
        "constant": {"auto": None, "on": True, "off": False}[b["constant"]],
        "hindcast_origins": b["origins"],
    }
    # a fixed number of differences (left out when automatic, so those keys stay as they were)
    if b["d"] is not None:
        out["d"] = b["d"]
    if b["D"] is not None and b["seasonal"]:
        out["D"] = b["D"]
    return out


def differences_words(
    settings: Mapping[str, Any], bench: Mapping[str, Any] | None, where: str = "on the Model Bench"
) -> str:
    """The differences a comparison used and where they came from.

    Parameters
    ----------
    settings : Mapping
        ``Comparison.settings`` (the ``d``, ``D`` and ``seasonal`` used).
    bench : Mapping, optional
        The Model Bench settings asked for (``d``, ``D``: None when automatic).
    where : str
        How a fixed value is described: "set {where}".

    Returns
    -------
    str
        e.g. "d = 1 (from the stationarity tests)", "d = 0 (set on the Model Bench)" or
        "d = 0, D = 1 (d set here, D from the stationarity tests)".
    """
    b = bench_settings(bench)
    text = f"d = {settings.get('d')}"
    seasonal = bool(settings.get("seasonal"))
    if seasonal:
        text += f", D = {settings.get('D') or 0}"
    fixed = [k for k in ("d", "D") if b[k] is not None and (k == "d" or seasonal)]
    if not fixed:
        return text + " (from the stationarity tests)"
    if len(fixed) == 2 or not seasonal:
        return text + f" (set {where})"
    other = "D" if fixed[0] == "d" else "d"
    return text + f" ({fixed[0]} set {where}, {other} from the stationarity tests)"


def comparison_key(sel: Mapping[str, Any]) -> tuple[str, str, str]:
    """(dataset id, series, settings JSON): what the memoized comparison is keyed on."""
    if not sel.get("dataset_id") or not sel.get("series"):
        raise fc.InputError(
            "a dataset with at least one usable series must be chosen on Intake first."
        )
    kwargs = compare_kwargs(sel.get("bench") or {}, sel.get("transform") or "auto")
    if kwargs["seasonal"] is False and _frequency(sel) == "annual":
        # annual data has no seasonal terms either way: one cache entry, not two (the Bench
        # shows the seasonal box unticked for annual data, a new session has it ticked)
        kwargs["seasonal"] = None
    if "D" in kwargs and _frequency(sel) == "annual":
        del kwargs["D"]  # no seasonal differences in annual data
    return str(sel["dataset_id"]), str(sel["series"]), settings_json(kwargs)


def _frequency(sel: Mapping[str, Any]) -> str | None:
    from app.store import get_store

    info = get_store().load_table(str(sel["dataset_id"])).info.get(str(sel["series"]))
    return info.frequency if info is not None else None


def comparison_for(sel: Mapping[str, Any]) -> fc.Comparison:
    """The memoized comparison for a resolved selection (see :func:`app.state.resolve_selection`)."""
    return get_comparison(*comparison_key(sel))


def search_for(sel: Mapping[str, Any]) -> fc.Comparison:
    """The search layer of :func:`comparison_for` (candidates and benchmarks, no hindcast).

    It answers as soon as the order search is done; ``comparison_for`` adds the hindcast.
    """
    dataset_id, series, key = comparison_key(sel)
    search, _hindcast = split_settings(parse_settings(key))
    return get_search(dataset_id, series, settings_json(search))


def chosen_candidate(comparison: fc.Comparison, label: str | None) -> fc.Candidate:
    """The picked candidate when it is an accepted one of this comparison, else the best."""
    if label:
        for c in comparison.accepted:
            if c.label == label:
                return c
    return comparison.best


def parse_reference(value: Any) -> float | None:
    """The reference level typed by the user (None when blank).

    Raises
    ------
    forecasting_core.InputError
        When it is not a finite number.
    """
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        number = math.nan
    if not math.isfinite(number):
        raise fc.InputError(f"the reference level must be a number. Got {value!r} instead.")
    return number


def board_state(data: Mapping[str, Any] | None, reference: Any) -> dict[str, Any]:
    """Everything the board shows, from the session's selection and the reference level.

    Returns
    -------
    dict
        ``selection``, ``comparison``, ``candidate``, ``forecast``, ``unit``,
        ``dataset_name`` and ``picked`` (True when the model was picked on the bench).
    """
    from app.store import get_store

    sel = resolve_selection(data)
    comparison = comparison_for(sel)
    candidate = chosen_candidate(comparison, sel.get("model"))
    if not candidate.ok:
        raise fc.InputError(
            f"every candidate model was rejected for {comparison.series_name}, so no forecast can be "
            "made. Change the settings on the Model Bench."
        )
    horizon = bench_settings(sel.get("bench"))["horizon"]
    forecast = get_forecast(
        *comparison_key(sel), candidate.label, horizon, LEVELS, parse_reference(reference)
    )
    store = get_store()
    info = store.load_table(sel["dataset_id"]).info.get(sel["series"])
    return {
        "selection": sel,
        "comparison": comparison,
        "candidate": candidate,
        "forecast": forecast,
        "unit": info.unit if info is not None else None,
        "dataset_name": store.meta(sel["dataset_id"]).filename,
        "picked": candidate.label != comparison.best.label,
    }


def changed_selection(data: Mapping[str, Any] | None, **changes: Any) -> dict[str, Any]:
    """The new ``hc-selection`` value with ``changes`` applied to the resolved selection.

    The demo dataset and series a new visitor sees are written in as well, so a model or a
    reference level chosen on them is kept (``resolve_selection`` drops a model that belongs
    to no series).
    """
    resolved = {k: v for k, v in resolve_selection(data).items() if k != "is_demo"}
    out = update_selection(resolved, **changes)
    if "bench" in changes and isinstance(out.get("bench"), Mapping):
        # the settings written are made for the series chosen now (see bench_for_series)
        same = (out["dataset_id"], out["series"]) == (resolved["dataset_id"], resolved["series"])
        given = changes["bench"].get(FREQUENCY_KEY) if same else None
        out["bench"] = stamp_bench(out["bench"], out["dataset_id"], out["series"], given)
    return out

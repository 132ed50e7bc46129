"""Plain-language sentences about a forecast, shared by the Forecast Board and the report.

The summary is written to be read aloud in a meeting: numbers rounded the way people say
them, the unit after each value, probabilities in whole percent.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from forecasting_core import Comparison, Forecast, SeriesInfo, SkillScore, better_by

#: The benchmark the chosen model is measured against in the summary.
LAST_VALUE = "last value"

#: Why a skill table can show RMSE below MAE: absolute error is scored on the median forecast
#: and squared error on the mean (each is the point forecast its loss is consistent for:
#: Gneiting 2011, "Making and evaluating point forecasts", JASA 106, 746-762).
MAE_RMSE_NOTE = (
    "MAE scores the median forecast, RMSE the mean; with a transform they differ, "
    "so RMSE can be below MAE."
)
#: Added after the core's note on band ends clipped at 0: there the mean ("Expected") is the
#: mean of max(Y, 0), so it can sit above the median.
CLIP_MEAN_NOTE = (
    "Expected values at those periods are the averages of the clipped distribution, so they "
    "can be above the median."
)


def is_clip_note(text: str) -> bool:
    """Whether a core warning is the note on band ends shown as 0 (below zero)."""
    return "went below zero" in text


def shown_warning(text: str) -> str:
    """A core warning as the app shows it: the clipping note gets :data:`CLIP_MEAN_NOTE`."""
    if is_clip_note(text) and CLIP_MEAN_NOTE not in text:
        return f"{text} {CLIP_MEAN_NOTE}"
    return text


MAE_TIP = "Mean absolute error of the median forecast (original scale)."
RMSE_TIP = "Root mean squared error of the mean forecast (original scale); it can be below MAE."


def fmt_value(x: float | None, unit: str | None = None) -> str:
    """Format a value for reading aloud: ``12,340 t``, ``45.6 t``, ``0.123``.

    Parameters
    ----------
    x : float or None
        Value on the original scale.
    unit : str, optional
        Appended after a space.
    """
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "n/a"
    a = abs(x)
    if a >= 1000:
        text = f"{x:,.0f}"
    elif a >= 100:
        text = f"{x:,.0f}"
    elif a >= 10:
        text = f"{x:,.1f}"
    else:
        text = f"{x:.3g}"
    return f"{text} {unit}" if unit else text


def fmt_chance(p: float | None) -> str:
    """Format a probability (0..1) as whole percent, with 'less than 1%' at the ends."""
    if p is None or (isinstance(p, float) and math.isnan(p)):
        return "n/a"
    pct = 100.0 * float(p)
    if pct < 1.0:
        return "less than 1%"
    if pct > 99.0:
        return "more than 99%"
    return f"{pct:.0f}%"


def _score(comparison: Comparison | None, model: str) -> SkillScore | None:
    if comparison is None or comparison.hindcast is None:
        return None
    return comparison.hindcast.score(model)


def band_caution(comparison: Comparison | None, model: str) -> str | None:
    """The core's caution when ``model``'s bands held far less often than stated on past years."""
    score = _score(comparison, model)
    if score is None:
        return None
    return score.coverage_warning(comparison.frequency)  # "On past months ..." when monthly


def hindcast_sentence(comparison: Comparison | None, model: str) -> str:
    """One sentence on how ``model`` did against the last value on the hindcast."""
    if comparison is None or comparison.hindcast is None:
        return "This model was not replayed on past years (no hindcast was run)."
    mine = _score(comparison, model)
    naive = _score(comparison, LAST_VALUE)
    n = len(comparison.hindcast.origins)
    if mine is None:
        return f"{model} was not among the models replayed on past years."
    # Compare on the origins both forecast (the Model Bench's verdict and card do the same).
    pair = comparison.hindcast.versus(LAST_VALUE, model)
    if pair is not None and pair[0].forecasts:
        mine, naive = pair
        n = mine.origins
    if naive is None or math.isnan(naive.mase) or math.isnan(mine.mase) or not naive.mase:
        text = (
            f"Replayed from {n} past origins, its forecasts missed by {mine.mae:,.3g} on average."
        )
        better = benchmark_sentence(comparison, model)
        return f"{text} {better}" if better else text
    # MASE ratio and rounding: the same as the hindcast verdict on the Model Bench (below 0.5%
    # it says "by less than 1%" or "equal within 1%", else the whole percent)
    change = 1.0 - mine.mase / naive.mase
    worse = mine.mase / naive.mase - 1.0
    period = {"quarterly": "quarter", "monthly": "month"}.get(comparison.frequency, "year")
    years = f"each of the last {n} {period}s" if n != 1 else f"the last {period}"
    did_not_beat = False
    if change > 0:
        size = f"{100 * change:.0f}%" if 100 * change >= 0.5 else "less than 1%"
        text = (
            f"Replayed from {years}, its errors were {size} smaller than simply "
            "repeating the last observed value."
        )
    elif 100 * worse < 0.5:
        text = (
            f"Replayed from {years}, it did about as well as simply repeating the last observed "
            "value (within 1%)."
        )
        did_not_beat = True
    else:
        text = (
            f"Replayed from {years}, its errors were {100 * worse:.0f}% larger than simply "
            "repeating the last observed value, so treat it with care."
        )
        did_not_beat = True
    better = benchmark_sentence(comparison, model, also=did_not_beat)
    return f"{text} {better}" if better else text


def better_benchmarks(comparison: Comparison | None, model: str) -> list[tuple[str, float, float]]:
    """Benchmarks other than the last value with a lower hindcast MASE than ``model``.

    Each is compared with ``model`` on the forecasts both made (``Hindcast.versus``; its own
    scores when the hindcast has no pairs). A benchmark counts by the core's one rule
    (:func:`forecasting_core.better_by`: its MASE lower by at least 0.5% of the model's, so
    the Benchmarks table shows the model as at least "1% worse"), as the Bench's verdict.

    Returns
    -------
    list of (str, float, float)
        ``(benchmark label, its MASE, model's MASE)``, the best benchmark first.
    """
    hc = comparison.hindcast if comparison is not None else None
    if hc is None or hc.score(model) is None:
        return []
    out = []
    for s in hc.scores:
        if s.kind != "benchmark" or s.model in (LAST_VALUE, model):
            continue
        pair = hc.versus(s.model, model)
        mine, theirs = pair if pair is not None and pair[0].forecasts else (hc.score(model), s)
        a, b = float(theirs.mase), float(mine.mase)
        if better_by(b, a) is not None:
            out.append((s.model, a, b))
    return sorted(out, key=lambda t: t[1])


def mase_pair(first: float, second: float) -> str:
    """``"0.95 vs 0.99"``; three decimals when two would show the same number (as the Bench)."""
    digits = 2 if f"{first:.2f}" != f"{second:.2f}" else 3
    return f"{first:.{digits}f} vs {second:.{digits}f}"


def benchmark_sentence(comparison: Comparison | None, model: str, also: bool = False) -> str:
    """The plain warning when a benchmark did better than ``model`` on the hindcast, else ``""``.

    E.g. "But on the same past forecasts the long-run mean benchmark did better than this
    model (errors 5% smaller, MASE 0.93 vs 0.98): consider using that benchmark's forecast, or
    check why the model does worse." With ``also`` (the model did not beat the last value
    either): "The long-run mean benchmark also did better (...)".
    """
    found = better_benchmarks(comparison, model)
    if not found:
        return ""

    def size(a: float, b: float) -> str:
        return f"{better_by(b, a)}%"

    parts = [
        f"the {label} benchmark (errors {size(a, b)} smaller, MASE {mase_pair(a, b)})"
        for label, a, b in found
    ]
    advice = (
        "consider using that benchmark's forecast, or check why the model does worse"
        if len(parts) == 1
        else "consider using one of those benchmarks' forecasts, or check why the model does worse"
    )
    listed = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " and " + parts[-1]
    if also:
        also_parts = [
            f"the {label} benchmark also did better (errors {size(a, b)} smaller, MASE "
            f"{mase_pair(a, b)})"
            for label, a, b in found
        ]
        joined = "; ".join(also_parts)
        return f"{joined[0].upper()}{joined[1:]}: {advice}."
    if len(parts) == 1:
        return f"But on the same past forecasts {parts[0]} did better than this model: {advice}."
    return (
        f"But on the same past forecasts {len(parts)} benchmarks did better than this model: "
        f"{listed}; {advice}."
    )


def reference_sentence(probs: list[float], times: list[str], ref: str) -> str:
    """The chance below the reference level: first and last period, and the highest-risk one.

    Parameters
    ----------
    probs : list of float
        Chance (0..1) of falling below the reference level, one per period ahead.
    times : list of str
        The periods' labels (same order).
    ref : str
        The reference level as written (value and unit).
    """
    text = (
        f"The chance of falling below the reference level of {ref} is {fmt_chance(probs[0])} "
        f"in {times[0]}"
    )
    if len(probs) > 1:
        top = max(range(len(probs)), key=lambda i: probs[i])  # the first of equal highs
        said = {fmt_chance(probs[0]), fmt_chance(probs[-1])}
        if 0 < top < len(probs) - 1 and fmt_chance(probs[top]) not in said:
            text += f", highest in {times[top]} ({fmt_chance(probs[top])}),"
        text += f" and {fmt_chance(probs[-1])} by {times[-1]}"
    return text + "."


def forecast_summary(
    forecast: Forecast,
    comparison: Comparison | None = None,
    *,
    unit: str | None = None,
) -> list[str]:
    """Sentences a manager can read aloud about a forecast.

    Parameters
    ----------
    forecast : Forecast
        From ``make_forecast``.
    comparison : Comparison, optional
        The comparison the model came from (for the hindcast sentence).
    unit : str, optional
        Unit of the values on the original scale.

    Returns
    -------
    list of str
        Expected value, 80% range, chance below the reference level (when one is set), the
        model and how it did on the hindcast.
    """
    table = forecast.table
    first = table.iloc[0]
    t1 = str(first["time"])
    name = forecast.series_name
    out = [
        f"For {t1}, the expected {name} is {fmt_value(float(first['mean']), unit)} "
        f"(median {fmt_value(float(first['median']), unit)})."
    ]
    if "lo80" in table.columns:
        out.append(
            f"There is an 80% chance that it falls between "
            f"{fmt_value(float(first['lo80']), unit)} and "
            f"{fmt_value(float(first['hi80']), unit)}."
        )
    if len(table) > 1:
        last = table.iloc[-1]
        out.append(
            f"By {last['time']} the expected value is {fmt_value(float(last['mean']), unit)}, "
            f"and the 80% range widens to {fmt_value(float(last['lo80']), unit)} to "
            f"{fmt_value(float(last['hi80']), unit)}."
            if "lo80" in table.columns
            else f"By {last['time']} the expected value is {fmt_value(float(last['mean']), unit)}."
        )
    if forecast.reference is not None:
        probs = [float(p) for p in table["prob_below_reference"]]
        ref = fmt_value(float(forecast.reference), unit)
        out.append(reference_sentence(probs, [str(t) for t in table["time"]], ref))
    out.append(
        f"The forecast comes from {forecast.model}. {hindcast_sentence(comparison, forecast.model)}"
    )
    caution = band_caution(comparison, forecast.model)
    if caution:
        out.append(caution)
    return out


def residual_report(comparison: Comparison, model: str):
    """Residual checks of ``model``: the comparison's own when it is the best, else computed."""
    import forecasting_core as fc

    diag = comparison.diagnostics
    if diag is not None and diag.model == model:
        return diag
    try:
        candidate = comparison.candidate(model)
    except fc.InputError:
        return None
    return fc.check_residuals(candidate) if candidate.ok else None


# ---------------------------------------------------------------------------------------------
# The forecast record (board panel and report)
# ---------------------------------------------------------------------------------------------

#: The record table's headings for the error columns, and what they mean (tooltip, footnote).
MISS = "Miss"
MISS_PCT = "Miss, % of realised"
MISS_TIP = "Realised value minus the median forecast (+: the outcome came out above the forecast)."
MISS_PCT_TIP = (
    "The miss as a percentage of the realised value: \u221225% means the forecast was too high "
    "by a quarter of what was realised, +25% too low by a quarter."
)
RECORD_FOOTNOTE = (
    "Miss = realised \u2212 median forecast. Miss, % of realised = the miss divided by the "
    "realised value (\u221225%: the forecast was too high by a quarter of what was realised)."
)
_CHANGE = {
    "annual": "year-to-year change",
    "quarterly": "change from the same quarter a year earlier",
    "monthly": "change from the same month a year earlier",
}


def mase_words(mase: float, frequency: str) -> str:
    """MASE in plain words, e.g. ``errors 9.9 times the typical year-to-year change``.

    MASE divides each absolute error by the mean absolute naive change of the data before the
    forecast (one period back for annual data, one year back for quarterly and monthly data;
    Hyndman and Koehler 2006, "Another look at measures of forecast accuracy"), so 1 means
    errors as large as that typical change.

    Parameters
    ----------
    mase : float
        The MASE (NaN gives ``""``).
    frequency : {"annual", "quarterly", "monthly"}
    """
    if mase is None or not math.isfinite(float(mase)):
        return ""
    change = _CHANGE.get(frequency, "one-period change")
    m = float(mase)
    if 0.95 <= m < 1.05:
        return f"errors about as large as the typical {change}"
    times = f"{m:.2f}" if m < 1 else f"{m:.1f}" if m < 10 else f"{m:.0f}"
    return f"errors {times} times the typical {change}"


_PERIOD = {"annual": "year", "quarterly": "quarter", "monthly": "month"}


def data_notes(info: SeriesInfo | None) -> list[str]:
    """What Intake found in this series' data (gaps, cells read as missing, zeros), in words.

    Parameters
    ----------
    info : SeriesInfo, optional
        ``Table.info[series]`` of the dataset the forecast was made from.

    Returns
    -------
    list of str
        The file check's message for each problem of this series; when there is none but
        periods are missing, one sentence counting them.
    """
    if info is None:
        return []
    out = [f"{info.name}: {p.message}" for p in info.problems]
    if not out and info.missing:
        one = _PERIOD.get(info.frequency, "period")
        word = one if info.missing == 1 else one + "s"
        out.append(
            f"{info.name} has {info.missing} missing {word} between {info.start} and "
            f"{info.end}; {'it stays' if info.missing == 1 else 'they stay'} missing in the "
            "model's data."
        )
    return out


def specific_notes(
    forecast: Forecast, comparison: Comparison | None, data: Sequence[str] = ()
) -> list[tuple[str, str]]:
    """The cautions the Forecast Board shows for this forecast, beyond the general ones.

    For exports that must carry what the board says (the CSV's ``#`` lines): how the model did
    on the hindcast (with any benchmark that did better), the "bands too narrow" caution, the
    residual checks and every warning of the forecast and the comparison (data gaps, an
    implausible reference level, ...).

    Parameters
    ----------
    forecast : Forecast
    comparison : Comparison, optional
        The comparison the model came from.
    data : sequence of str, optional
        Notes on the series' data (:func:`data_notes`).

    Returns
    -------
    list of (str, str)
        ``(kind, text)`` with kind ``"hindcast"``, ``"caution"``, ``"residuals"``,
        ``"warning"`` or ``"data"``, in the order the board shows them.
    """
    out: list[tuple[str, str]] = []
    model = forecast.model
    if comparison is not None:
        if comparison.hindcast is not None:
            out.append(("hindcast", f"{model}: {hindcast_sentence(comparison, model)}"))
        caution = band_caution(comparison, model)
        if caution:
            out.append(("caution", caution))
        diag = residual_report(comparison, model)
        if diag is not None and diag.verdict:
            out.append(("residuals", f"{diag.model}: {diag.verdict}"))
    seen: set[str] = set()
    for w in (*forecast.warnings, *(comparison.warnings if comparison is not None else ())):
        if w not in seen:
            seen.add(w)
            out.append(("warning", shown_warning(w)))
    out += [("data", text) for text in data]
    return out

"""The Model Bench's charts of one picked model, as plotly JSON, memoized in two halves.

The hindcast charts depend on every setting (horizon and origins included); the residual
charts only on the search's settings, so a new horizon redraws only the hindcast. Both sit
on the layered result cache of :mod:`app.cache`.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import forecasting_core as fc
from app import figures
from app.cache import (
    cache,
    get_comparison,
    get_residuals,
    parse_settings,
    remembered,
    settings_json,
    split_settings,
)


def panels(dataset_id: str, series: str, settings: str, label: str) -> dict[str, Any]:
    """Hindcast and residual figures (as JSON) for one accepted candidate.

    Parameters
    ----------
    dataset_id, series, settings : str
        The comparison's key (:func:`app.analysis.comparison_key`).
    label : str
        The picked candidate's label.

    Returns
    -------
    dict
        ``figures`` (five plotly JSON dicts, in the order of
        :data:`app.bench_views.GRAPHS`), ``verdict`` (the residual checks' sentence) and
        ``replayed`` (False when this model was not one of those replayed on the hindcast;
        the hindcast chart then shows the best model).
    """
    style = f"{fc.__version__}+{figures.STYLE}"
    search, _hind = split_settings(parse_settings(settings))
    # within app.cache.cached_only(): look-ups only (NotCached when not drawn yet)
    hindcast = remembered(_hindcast_panels, dataset_id, series, settings, label, style)
    residuals = remembered(_residual_panels, dataset_id, series, settings_json(search), label, style)
    return {
        "figures": [*hindcast["figures"], *residuals["figures"]],
        "verdict": residuals["verdict"],
        "replayed": hindcast["replayed"],
    }


@cache.memoize()
def _hindcast_panels(dataset_id: str, series: str, settings: str, label: str, style: str) -> dict:
    comparison = get_comparison(dataset_id, series, settings)
    candidate = comparison.candidate(label)
    unit = unit_of(dataset_id, series)
    replayed = comparison.hindcast is not None and comparison.hindcast.score(label) is not None
    if comparison.hindcast is not None:
        hc_fig = figures.hindcast_figure(
            comparison.hindcast,
            candidate.series,
            model=label if replayed else comparison.best.label,
            unit=unit,
            series_name=comparison.series_name,
        )
        # the benchmarks on the origins where the chosen model also forecast (as the verdict)
        beside = replace(comparison.hindcast, scores=comparison.hindcast.beside())
        skill_fig = figures.skill_figure(beside)
    else:
        hc_fig = skill_fig = figures.blank_figure(260)
    return {"figures": [hc_fig.to_plotly_json(), skill_fig.to_plotly_json()], "replayed": replayed}


@cache.memoize()
def _residual_panels(dataset_id: str, series: str, search: str, label: str, style: str) -> dict:
    report = get_residuals(dataset_id, series, search, label)
    figs = [
        figures.residuals_figure(report),
        figures.residual_acf_figure(report),
        figures.qq_figure(report),
    ]
    return {"figures": [f.to_plotly_json() for f in figs], "verdict": report.verdict}


def unit_of(dataset_id: str, series: str) -> str | None:
    """The series' unit as Intake read it (None when the file gave none)."""
    from app.store import get_store

    info = get_store().load_table(dataset_id).info.get(series)
    return info.unit if info is not None else None

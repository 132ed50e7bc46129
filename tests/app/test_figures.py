"""Figure builders draw what the core computed, on results from real core calls.

Data: the Nile river flow series that statsmodels ships (statsmodels.datasets.nile,
annual volumes 1871-1970, 10^8 m^3).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import forecasting_core as fc
from app import figures


def _names(fig) -> list[str]:
    return [t.name for t in fig.data]


def test_fan_chart_has_history_bands_median_and_mean(forecast, nile):
    fig = figures.fan_chart(forecast, nile, unit="10^8 m^3")
    names = _names(fig)
    assert names[0] == "Observed"
    assert [n for n in names if n.endswith("% band")] == ["95% band", "80% band", "50% band"]
    assert "Median forecast" in names and "Expected (mean)" in names
    assert fig.layout.yaxis.title.text == "nile (10^8 m^3)"


def test_fan_chart_bands_are_the_forecast_table_attached_to_the_last_year(forecast, nile):
    fig = figures.fan_chart(forecast, nile)
    upper = next(t for t in fig.data if t.name == "95% band")
    # first point: the last observation (1970), then the five forecast years
    assert list(upper.x) == [1970, 1971, 1972, 1973, 1974, 1975]
    assert upper.y[0] == nile.iloc[-1]
    np.testing.assert_allclose(upper.y[1:], forecast.table["hi95"].to_numpy(float))
    median = next(t for t in fig.data if t.name == "Median forecast")
    np.testing.assert_allclose(median.y[1:], forecast.table["median"].to_numpy(float))


def test_fan_chart_draws_the_reference_level(forecast, nile):
    fig = figures.fan_chart(forecast, nile)
    assert [s.y0 for s in fig.layout.shapes] == [800.0]
    assert "800" in fig.layout.annotations[0].text


def test_reference_label_sits_in_the_right_margin_not_over_the_data(forecast, nile):
    fig = figures.fan_chart(forecast, nile)
    label = next(a for a in fig.layout.annotations if "800" in a.text)
    # paper x = 1 with a left anchor: the label starts right of the plotting area, where no
    # observed value or band is drawn; level with the line (data y)
    assert (label.xref, label.x, label.xanchor) == ("paper", 1, "left")
    assert (label.yref, label.y) == ("y", 800.0)
    assert fig.layout.margin.r >= 60  # room for "reference level 800" on three short lines
    # without a reference level the margin stays narrow
    plain = figures.fan_chart(dataclasses.replace(forecast, reference=None), nile)
    assert not plain.layout.annotations and plain.layout.margin.r < 60


def test_fan_chart_keeps_gaps_in_history_as_gaps(forecast, nile):
    holed = nile.copy()
    holed.iloc[10:13] = np.nan
    fig = figures.fan_chart(forecast, holed)
    observed = fig.data[0]
    assert observed.connectgaps is False
    assert np.isnan(np.asarray(observed.y, float)[10:13]).all()


def test_prob_below_shows_percent_per_year(forecast):
    fig = figures.prob_below_figure(forecast)
    (bars,) = fig.data
    np.testing.assert_allclose(bars.y, 100 * forecast.table["prob_below_reference"].to_numpy(float))
    assert list(bars.x) == [str(t) for t in forecast.table["time"]]


def test_prob_below_without_reference_explains_what_to_do(comparison):
    fcst = fc.make_forecast(comparison.best, horizon=3)
    fig = figures.prob_below_figure(fcst)
    assert len(fig.data) == 0
    assert "No reference level" in fig.layout.annotations[0].text
    # the note is drawn below the row plotly's modebar takes on hover (about 30 px; it covered
    # the centred note of a 90 px figure)
    assert fig.layout.margin.t >= figures.MODEBAR_PX >= 30
    assert fig.layout.height - fig.layout.margin.t - fig.layout.margin.b >= 40


def test_hindcast_figure_has_one_path_per_origin(comparison, nile):
    hc = comparison.hindcast
    fig = figures.hindcast_figure(hc, nile, model=comparison.best.label)
    paths = [t for t in fig.data if t.legendgroup == f"hc-{comparison.best.label}"]
    assert len(paths) == len(hc.origins)
    bench = [t for t in fig.data if t.legendgroup == "hc-last value"]
    assert len(bench) == len(hc.origins)
    assert all(t.visible == "legendonly" for t in bench)


def test_skill_figure_has_every_model(comparison):
    fig = figures.skill_figure(comparison.hindcast)
    assert set(fig.data[0].y) == {s.model for s in comparison.hindcast.scores}


def test_residual_figures(comparison):
    report = comparison.diagnostics
    assert len(figures.residuals_figure(report).data[0].y) == len(report.residuals)
    acf = figures.residual_acf_figure(report)
    np.testing.assert_allclose(acf.data[0].y, report.acf)
    assert len(acf.layout.shapes) == 2  # the +-limit lines


def test_qq_figure_matches_scipy_probplot(comparison):
    report = comparison.diagnostics
    fig = figures.qq_figure(report)
    res = report.residuals.dropna().to_numpy(float)
    # Reference: scipy.stats.probplot (ordered residuals against normal order statistics).
    (theoretical, ordered), _ = stats.probplot(res, dist="norm")
    np.testing.assert_allclose(fig.data[0].x, theoretical)
    np.testing.assert_allclose(fig.data[0].y, ordered)


@pytest.mark.parametrize(
    ("value", "frequency", "expected"),
    [
        (pd.Period("2026", freq="Y"), "annual", 2026),
        ("2026", "annual", 2026),
        ("2026-Q3", "quarterly", "2026-07-01"),
        (pd.Period("2026Q3", freq="Q"), "quarterly", "2026-07-01"),
        ("2026-07", "monthly", "2026-07-01"),
        (pd.Period("2026-07", freq="M"), "monthly", "2026-07-01"),
    ],
)
def test_period_positions(value, frequency, expected):
    assert figures.period_x(value, frequency) == expected


def test_graph_config_offers_png_without_the_logo():
    config = figures.graph_config("fan chart: hake/2026")
    assert config["displaylogo"] is False
    assert config["toImageButtonOptions"] == {
        "format": "png",
        "filename": "fan_chart_hake_2026",
        "scale": 2,
    }


@pytest.mark.parametrize(
    ("name", "unit", "title"),
    [
        ("hake_t", "t", "hake_t (t)"),
        ("Landings (t)", "t", "Landings (t)"),
        ("Landings [t]", "t", "Landings [t]"),
        ("index", None, "index"),
    ],
)
def test_value_axis_title_names_the_unit_once(name, unit, title):
    assert figures.value_axis_title(name, unit) == title


# -- module layout: the bench's figures and views live in their own modules ----------------------


@pytest.mark.parametrize(
    ("name", "module"),
    [
        ("hindcast_figure", "app.bench_figures"),
        ("skill_figure", "app.bench_figures"),
        ("residuals_figure", "app.bench_figures"),
        ("residual_acf_figure", "app.bench_figures"),
        ("qq_figure", "app.bench_figures"),
        ("blank_figure", "app.figure_style"),
        ("graph_config", "app.figure_style"),
        ("value_axis_title", "app.figure_style"),
        ("period_x", "app.figure_style"),
        ("STYLE", "app.figure_style"),
        ("COLORS", "app.figure_style"),
    ],
)
def test_moved_figure_names_stay_importable_from_app_figures(name, module):
    import importlib

    assert getattr(figures, name) is getattr(importlib.import_module(module), name)


def _components(node):
    yield node
    children = getattr(node, "children", None)
    for child in children if isinstance(children, list | tuple) else [children]:
        if child is not None and not isinstance(child, str | int | float):
            yield from _components(child)


def test_the_first_bench_layout_holds_empty_boxes_for_its_charts():
    # the charts come with the picked model, so a first visit need not load plotly.js first
    from dash import dcc

    from app import bench_views

    parts = list(_components(bench_views.page()))
    assert not [p for p in parts if isinstance(p, dcc.Graph)]
    ids = {getattr(p, "id", None) for p in parts}
    assert {f"{g}-box" for g, _name, _height in bench_views.GRAPHS} <= ids
    graph = bench_views.graph("bench-hindcast-graph", figures.blank_figure(380).to_plotly_json())
    assert graph.id == "bench-hindcast-graph"
    assert graph.style == {"height": "380px"}


@pytest.mark.parametrize(
    ("name", "unit", "lines"),
    [
        # plotly never wraps an axis title (plotly.js draws it as one SVG text line unless it
        # holds <br>): a long one is broken after "_", "-" or a space
        (
            "northern_shelf_brillfin_commercial_landings_t",
            "t",
            ["northern_shelf_brillfin_", "commercial_landings_t (t)"],
        ),
        (
            "a very long name with spaces in it for the chart",
            "kg",
            ["a very long name with spaces", "in it for the chart (kg)"],
        ),
        ("hake_t", "t", ["hake_t (t)"]),
    ],
)
def test_long_axis_titles_are_broken_onto_lines(name, unit, lines):
    title = figures.value_axis_title(name, unit)
    assert title.split("<br>") == lines
    assert all(len(line) <= 30 for line in lines)


def test_chance_chart_without_a_reference_has_no_modebar_over_its_note(comparison):
    fc_ = __import__("forecasting_core")
    plain = fc_.make_forecast(comparison.best, horizon=5, levels=(50, 80, 95))
    fig = figures.prob_below_figure(plain)
    assert fig.layout.annotations[0].text == "No reference level set yet."
    # every button gone (plotly's layout.modebar.remove), so no button or its hover label
    # ("Zoom") sits over the note
    assert {"toImage", "zoom2d", "pan2d", "zoomIn2d", "resetScale2d"} <= set(
        fig.layout.modebar.remove
    )
    with_ref = figures.prob_below_figure(
        fc_.make_forecast(comparison.best, horizon=5, levels=(50, 80, 95), reference=800.0)
    )
    assert not with_ref.layout.modebar.remove


def test_long_transformed_axis_title_is_broken_onto_lines():
    # the Intake preview's title, e.g. log(northern_shelf_brillfin_commercial_landings_t)
    from app.intake_figures import transform_axis_title

    log = type("Spec", (), {"name": "log", "lam": None})()  # what the title reads of a spec
    title = transform_axis_title("northern_shelf_brillfin_commercial_landings_t", log)
    assert title == "log(northern_shelf_brillfin_<br>commercial_landings_t)"
    assert transform_axis_title("hake_t", log) == "log(hake_t)"

"""The board's forecast-record panel: finding past published forecasts, the panel, the figure.

Numbers are hand-worked in the comments (errors = realised - median; inside a band with its
ends included; MASE scale = mean absolute one-year change of the data up to the origin).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

import forecasting_core as fc
from app.record_figures import record_figure, record_x
from app.record_views import past_analyses, record_panel, record_section
from app.store import DatasetStore

# Two vintages of one invented stock "cod_t": data 2001-2015, and data 2001-2018.
# cod_t 2001-2015 is 10, 12, 11, 14, 13 three times over: one-year changes 2, 1, 3, 1 in each
# block and 3 between blocks, so the MASE scale is (3 * 7 + 2 * 3) / 14 = 27 / 14 = 1.928571.
OLD_CSV = "year,cod_t,ling_t\n" + "".join(
    f"{2001 + i},{v},{5 + i % 2}\n" for i, v in enumerate([10, 12, 11, 14, 13] * 3)
)
NEW_CSV = OLD_CSV + "2016,15,6\n2017,12,5\n2018,20,6\n"


def _forecast(series: str = "cod_t", frequency: str = "annual") -> dict[str, Any]:
    """A saved 3-year forecast from data to 2015 (the JSON a store keeps)."""
    rows = [
        ("2016", 13.0, {"50": [12.0, 14.0], "80": [11.0, 15.0], "95": [10.0, 16.0]}),
        ("2017", 13.5, {"50": [12.5, 14.5], "80": [11.5, 15.5], "95": [10.0, 17.0]}),
        ("2018", 14.0, {"50": [12.5, 15.5], "80": [11.0, 17.0], "95": [9.0, 19.0]}),
    ]
    return {
        "series": series,
        "model": "ARIMA(0,1,0)",
        "frequency": frequency,
        "horizon": 3,
        "levels": [50, 80, 95],
        "reference": None,
        "band_source": "model",
        "transform": {"name": "none", "lambda": None},
        "forecast": [
            {
                "time": t,
                "step": i,
                "mean": m,
                "median": m,
                "intervals": b,
                "prob_below_reference": None,
            }
            for i, (t, m, b) in enumerate(rows, start=1)
        ],
        "warnings": [],
        "cautions": list(fc.CAUTIONS),
    }


@pytest.fixture
def store(tmp_path: Path) -> DatasetStore:
    return DatasetStore(tmp_path / "data")


@pytest.fixture
def vintages(store: DatasetStore) -> tuple[str, str]:
    old = store.save(OLD_CSV.encode(), "cod_2015.csv")
    new = store.save(NEW_CSV.encode(), "cod_2018.csv")
    return old, new


def _publish(store: DatasetStore, dataset_id: str, **kw: Any) -> Any:
    draft = store.save_analysis(
        dataset_id=dataset_id,
        series=kw.pop("series", "cod_t"),
        settings={"transform": "none"},
        model="ARIMA(0,1,0)",
        forecast=kw.pop("forecast", _forecast()),
        author="A. Analyst",
        title=kw.pop("title", "Cod 2016-2018"),
        season="2016",
    )
    published = store.publish(draft.id, author="A. Analyst")
    return store.add_signoff(published.id, name="B. Manager", role="stock lead", note="ok")


def _text(component: Any) -> str:
    """Every string inside a Dash component tree, joined."""
    out: list[str] = []

    def walk(node: Any) -> None:
        if isinstance(node, str | int | float):
            out.append(str(node))
        elif isinstance(node, list | tuple):
            for n in node:
                walk(n)
        elif hasattr(node, "children"):
            walk(node.children)

    walk(component)
    return " ".join(out)


def _find(component: Any, component_id: str) -> Any:
    if getattr(component, "id", None) == component_id:
        return component
    children = getattr(component, "children", None)
    for child in children if isinstance(children, list | tuple) else [children]:
        if child is not None and not isinstance(child, str | int | float):
            hit = _find(child, component_id)
            if hit is not None:
                return hit
    return None


def test_section_shows_the_track_record_numbers(store, vintages):
    old, new = vintages
    analysis = _publish(store, old)
    section = record_section(store, new, "cod_t")
    assert section is not None and section.id == "record-panel"
    text = _text(section)
    # realised 15, 12, 20 against medians 13, 13.5, 14: inside the 80% band in 2016 (15 is the
    # upper end) and 2017, outside in 2018 -> 2 of 3
    assert "Of 3 past forecast years, 2 fell inside the 80% band (80% expected)" in text
    # MASE = (2 + 1.5 + 6) / 3 / (27 / 14) = 3.166667 / 1.928571 = 1.64
    assert "MASE 1.64" in text
    assert "3 years scored: too few to judge coverage" in text
    assert "2 of 3" in text  # the 80% and 95% cards
    # the table: errors +2.0, -1.5, +6.0; error % +13%, -12%, +30%
    table = _text(_find(section, "record-panel-table"))
    for cell in ("+2.0", "\u22121.5", "+6.0", "+13%", "\u221212%", "+30%", "inside", "outside"):
        assert cell in table, cell
    # who published and signed it off, and the link that opens it
    assert "signed off by B. Manager (stock lead)" in text
    assert f"/board?analysis={analysis.id}" in json.dumps(section.to_plotly_json(), default=str)


def test_section_figure_has_the_realised_values_against_the_bands(store, vintages):
    old, new = vintages
    _publish(store, old)
    graph = _find(record_section(store, new, "cod_t"), "record-panel-figure")
    names = [t.name for t in graph.figure.data]
    assert names == [
        "Observed",
        "95% band (lower)",
        "95% band",
        "80% band (lower)",
        "80% band",
        "Median forecast (data to 2015)",
        "Inside the 80% band",
        "Outside the 80% band",
    ]
    by_name = {t.name: t for t in graph.figure.data}
    assert list(by_name["Inside the 80% band"].x) == [2016, 2017]
    assert list(by_name["Inside the 80% band"].y) == [15.0, 12.0]
    assert list(by_name["Outside the 80% band"].x) == [2018]
    assert list(by_name["80% band"].y) == [15.0, 15.5, 17.0]


def test_no_section_without_a_past_forecast(store, vintages):
    old, new = vintages
    assert record_section(store, new, "cod_t") is None
    draft = store.save_analysis(
        dataset_id=old, series="cod_t", settings={}, model="m", forecast=_forecast(), author="A"
    )
    assert draft.status == "draft"
    assert record_section(store, new, "cod_t") is None  # drafts are not a record


def test_own_dataset_and_later_data_are_left_out(store, vintages, tmp_path):
    old, new = vintages
    _publish(store, new)  # made on this very dataset
    assert record_section(store, new, "cod_t") is None
    # on the older dataset (data to 2015) with nothing newer on the server, a forecast from
    # data to 2015 is not earlier than this dataset's data
    only_old = DatasetStore(tmp_path / "other")
    old2 = only_old.save(OLD_CSV.encode(), "cod_2015.csv")
    _publish(only_old, old2)
    assert record_section(only_old, old2, "cod_t") is None


def test_a_forecast_opened_on_older_data_is_scored_against_the_newest_on_the_server(
    store, vintages
):
    old, new = vintages
    # the newer dataset is known to the server through a published analysis made on it
    _publish(store, new, title="Cod from data to 2018", forecast=_forecast())
    analysis = _publish(store, old)
    section = record_section(store, old, "cod_t")  # the board of the link, data to 2015
    assert section is not None
    text = _text(section)
    # the same hand-worked numbers as on the newer dataset's own board (see above)
    assert "Of 3 past forecast years, 2 fell inside the 80% band (80% expected)" in text
    assert "MASE 1.64" in text
    # and it says which data it is scored against
    assert "newest data on the server for this series: cod_2018.csv (data to 2018)" in text
    assert f"/board?analysis={analysis.id}" in json.dumps(section.to_plotly_json(), default=str)


def test_the_session_uploads_count_as_newer_data(store, vintages):
    old, new = vintages
    _publish(store, old)
    # no published analysis and no sample names the newer file: only the session's uploads do
    assert record_section(store, old, "cod_t") is None
    section = record_section(store, old, "cod_t", extra=[new])
    assert section is not None and "cod_2018.csv (data to 2018)" in _text(section)


def test_other_series_and_unknown_inputs_give_none(store, vintages):
    old, new = vintages
    _publish(store, old)
    assert record_section(store, new, "ling_t") is None
    assert record_section(store, new, "no_such_series") is None
    assert record_section(store, "0" * 64, "cod_t") is None
    assert record_section(store, "not-an-id", "cod_t") is None
    assert past_analyses(store, new, "x" * 300, store.load_table(new).series["cod_t"]) == []


def test_another_frequency_is_left_out(store, vintages):
    old, new = vintages
    _publish(store, old, forecast=_forecast(frequency="monthly"))
    assert record_section(store, new, "cod_t") is None


def test_only_the_newest_published_revision_counts(store, vintages):
    old, new = vintages
    first = _publish(store, old, title="Cod first")
    revised = store.revise(first.id, author="A. Analyst", title="Cod revised")
    store.publish(revised.id, author="A. Analyst")
    (only,) = past_analyses(store, new, "cod_t", store.load_table(new).series["cod_t"])
    assert only.id == revised.id
    text = _text(record_section(store, new, "cod_t"))
    assert "Cod revised (v2)" in text and "Cod first" not in text


def test_two_past_forecasts_pool_and_are_named(store, vintages):
    old, new = vintages
    _publish(store, old, title="Cod A")
    _publish(store, old, title="Cod B")
    section = record_section(store, new, "cod_t")
    assert "Of 6 past forecast years, 4 fell inside the 80% band" in _text(section)
    names = [t.name for t in _find(section, "record-panel-figure").figure.data]
    assert "Cod A: 80% band" in names and "Cod B: median" in names


def test_a_broken_saved_forecast_is_left_out(store, vintages):
    old, new = vintages
    _publish(store, old, title="Good")
    bad = _forecast()
    bad["forecast"][0]["time"] = "2016-13"
    _publish(store, old, title="Broken", forecast=bad)
    text = _text(record_section(store, new, "cod_t"))
    assert "Good" in text and "Broken" not in text


def test_pending_periods_are_listed_in_the_table(store):
    old = store.save(OLD_CSV.encode(), "cod_2015.csv")
    newer = store.save((OLD_CSV + "2016,15,6\n").encode(), "cod_2016.csv")
    _publish(store, old)
    section = record_section(store, newer, "cod_t")
    table = _text(_find(section, "record-panel-table"))
    assert table.count("not yet realised") == 2
    assert "1 year scored: too few to judge coverage" in _text(section)


def test_panel_without_scored_periods_has_no_figure():
    y = fc.read_table(OLD_CSV.encode(), name="x.csv").series["cod_t"]
    record = fc.score_forecast_record(_forecast(), y)
    panel = record_panel(record, y)
    assert _find(panel, "record-panel-figure") is None
    assert "The past forecast has no realised year in this data yet." in _text(panel)


def test_record_x_places_periods():
    assert record_x("2024", "annual") == 2024
    assert record_x("2024-07", "monthly") == "2024-07-01"
    assert record_x("2024-Q3", "quarterly") == "2024-07-01"


def test_figure_draws_only_80_bands_for_many_forecasts():
    y = fc.read_table(NEW_CSV.encode(), name="x.csv").series["cod_t"]
    record = fc.score_forecast_record([_forecast()] * 4, y, labels=list("ABCD"))
    names = [t.name for t in record_figure(record, y).data]
    assert "A: 80% band" in names and not any("95%" in n for n in names)


def test_panel_names_the_miss_columns_plainly_and_glosses_the_mase(store, vintages):
    old, new = vintages
    _publish(store, old)
    section = record_section(store, new, "cod_t")
    table = _find(section, "record-panel-table")
    heads = table.children[0].children.children  # Thead > Tr > [Th]
    by_text = {_text(th).replace("\u2009*", "").strip(): th for th in heads}
    assert "Error %" not in by_text and "Miss, % of realised" in by_text
    tip = by_text["Miss, % of realised"].children.title
    assert tip.startswith("The miss as a percentage of the realised value")
    text = _text(section)
    assert "* Miss = realised \u2212 median forecast." in text
    # MASE (2 + 1.5 + 6) / 3 / (27 / 14) = 1.64: the card says it in words
    assert "errors 1.6 times the typical year-to-year change" in text

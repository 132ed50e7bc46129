"""The Forecast Board's callbacks on a live app: the CSV download carries the board's own
cautions, and a published forecast opened by its link shows how it did on the newest data.

Data: the Nile river flow series that statsmodels ships (statsmodels.datasets.nile, annual
volumes 1871-1970, 10^8 m^3) with two years left empty, and the invented demo (sample_data:
vellmouth_landings.csv to 2025 and its 2020 vintage with the demo's published forecasts).
The callback modules are imported after ``create_app`` (their registrations go to that app).
"""

from __future__ import annotations

import io
import json

import pandas as pd
import pytest

from app import create_app


@pytest.fixture(scope="module")
def app(tmp_path_factory):
    return create_app(
        {"DATA_DIR": str(tmp_path_factory.mktemp("data")), "CACHE_TYPE": "SimpleCache"}
    )


@pytest.fixture(scope="module")
def store(app):
    return app.server.extensions["haulcast"]["store"]


@pytest.fixture(scope="module")
def gappy_id(store, nile: pd.Series) -> str:
    lines = ["year,nile_t"] + [
        f"{p.year}," + ("" if p.year in (1913, 1914) else f"{v:g}") for p, v in nile.items()
    ]
    return store.save(("\n".join(lines) + "\n").encode(), "nile_gaps.csv")


def test_downloaded_csv_carries_the_boards_specific_cautions(app, gappy_id):
    from app import board_exports

    sel = {"dataset_id": gappy_id, "series": "nile_t", "uploads": [gappy_id]}
    with app.server.test_request_context():
        csv_file, alert = board_exports.download_csv(1, None, sel, None)
    assert alert is None
    lines = csv_file["content"].splitlines()
    kinds = {line.split(":", 1)[0] for line in lines if line.startswith("#")}
    # the general cautions and the board's own: hindcast sentence, residual checks, data gaps
    for kind in ("# caution", "# hindcast", "# residuals", "# data"):
        assert kind in kinds, kind
    hindcast = next(line for line in lines if line.startswith("# hindcast: "))
    assert "Replayed from" in hindcast
    data = [line for line in lines if line.startswith("# data: ")]
    assert any("1913" in line for line in data), data


def test_a_published_forecast_opened_by_its_link_is_scored_on_the_newest_data(app, store):
    from app import board_saved
    from app.pages import board

    hake = next(
        a
        for a in store.list_analyses(status="published", series="hake_t")
        if a.settings.get("demo_record")
    )
    assert store.meta(hake.dataset_id).filename == "vellmouth_landings_2020.csv"
    opened = board_saved.opened_store(hake)
    with app.server.test_request_context():
        section = board.show_record(True, opened, None)
    assert section is not None, "no record on the board of the link"
    text = json.dumps(section.to_plotly_json(), default=str)
    assert (
        "newest data on the server for this series: vellmouth_landings.csv (data to 2025)" in text
    )
    assert f"/board?analysis={hake.id}" in text


def test_csv_of_a_published_forecast_carries_its_record_as_the_report_does(app, store):
    # the demo's published hake forecast opened by its link: the HTML report has "How past
    # forecasts did"; the CSV says the same in '# record:' lines (headline, bands, MASE)
    from app import board_exports, board_saved
    from app.record_report import coverage_lines

    hake = next(
        a
        for a in store.list_analyses(status="published", series="hake_t")
        if a.settings.get("demo_record")
    )
    opened = board_saved.opened_store(hake)
    with app.server.test_request_context():
        csv_file, alert = board_exports.download_csv(1, None, None, opened)
        past = board_exports._record(opened["selection"])
    assert alert is None and past is not None
    lines = csv_file["content"].splitlines()
    record = [line[len("# record: ") :] for line in lines if line.startswith("# record: ")]
    assert record, "no record lines"
    assert record[1] == past.record.headline().replace('"', "'")
    assert any(line.startswith("Inside the 80% band: ") for line in record)
    assert any(line.startswith("MASE of past forecasts: ") for line in record)
    assert len([line for line in coverage_lines(past.record)]) <= len(record)
    # still read back as the forecast table
    back = pd.read_csv(io.StringIO(csv_file["content"]), comment="#")
    assert list(back.columns[:2]) == ["time", "step"]

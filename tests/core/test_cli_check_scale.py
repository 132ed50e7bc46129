"""check tests stationarity on the scale forecasts and the app's Automatic transform use.

The app's Intake resolves "auto" with choose_transform and passes its name to
assess_stationarity (app/cache.py, get_stationarity); check must reach the same statistics.
The data are the package's own invented sample landings (a positive series whose spread grows
with the level, where Automatic picks the log).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import forecasting_core as fc
from forecasting_core.__main__ import main

ROOT = Path(__file__).resolve().parents[2]
LANDINGS = ROOT / "sample_data" / "vellmouth_landings.csv"


def _check_json(capsys, *extra: str) -> dict:
    assert main(["check", str(LANDINGS), "--json", *extra]) == 0
    return json.loads(capsys.readouterr().out)


def test_check_json_uses_the_automatic_transform_like_the_app(capsys):
    out = _check_json(capsys)
    table = fc.read_table(LANDINGS)
    scales = set()
    for item in out["series"]:
        y = table.series[item["name"]]
        scale = fc.choose_transform(y, "auto").name
        expected = fc.assess_stationarity(y, transform=scale).to_dict()
        got = item["stationarity"]
        assert got["transform"] == scale
        assert (got["d"], got["seasonal_d"]) == (expected["d"], expected["seasonal_d"])
        assert [t["statistic"] for t in got["tests"]] == pytest.approx(
            [t["statistic"] for t in expected["tests"]]
        )
        scales.add(scale)
    assert "log" in scales  # the sample has a series where the scale matters


@pytest.mark.parametrize(
    ("option", "scale_word"), [((), "log scale"), (("--transform", "none"), "original scale")]
)
def test_check_text_says_which_scale(capsys, option, scale_word):
    assert main(["check", str(LANDINGS), *option]) == 0
    text = capsys.readouterr().out
    assert "Stationarity is tested" in text
    assert f"On the {scale_word}, hake_t" in text


def test_check_transform_none_keeps_the_original_scale(capsys):
    out = _check_json(capsys, "--transform", "none")
    assert {item["stationarity"]["transform"] for item in out["series"]} == {"none"}

"""The on-page forecast table writes every number of a table with the same decimals."""

from __future__ import annotations

import re
from dataclasses import replace

import pytest

import forecasting_core as fc
from app import tables


@pytest.mark.parametrize(
    ("values", "decimals"),
    [([16771.0, 900.0], 0), ([38.2, 41.0], 1), ([1.2, 3.4], 2), ([0.31, -0.2], 3), ([], 3)],
)
def test_table_decimals_follow_the_typical_size(values, decimals):
    assert tables.table_decimals(values) == decimals


def test_forecast_rows_use_one_format(forecast: fc.Forecast):
    # Nile flow forecasts are in the hundreds: whole numbers throughout, no '779.4 - 915' mix.
    for row in tables.forecast_rows(forecast):
        for key in ("mean", "median", "r50", "r80", "r95"):
            assert not re.search(r"\d\.\d", row[key]), row


@pytest.fixture
def failed_once(comparison: fc.Comparison, nile, monkeypatch) -> fc.Comparison:
    """The Nile comparison replayed again with the best model's refit failing at one origin.

    Both refit paths (compiled and statsmodels) are made to reject the refit on the data up
    to the second hindcast origin; every other fit runs as usual.
    """
    import forecasting_core._hindcast as hindcast_mod

    best = comparison.best.label
    labels = [fc.time_label(p) for p in nile.index]
    bad = labels.index(comparison.hindcast.origins[1]) + 1  # values up to that origin
    real_fast, real_refit = hindcast_mod._fast_step, hindcast_mod._refit

    def fast_step(model, z_train, steps, method, warm):
        if model.label == best and len(z_train) == bad:
            return "made to fail for this test"
        return real_fast(model, z_train, steps, method, warm)

    def refit(model, train, method="refit"):
        if model.label == best and len(train) == bad:
            return replace(model, status="rejected", reason="made to fail for this test")
        return real_refit(model, train, method)

    monkeypatch.setattr(hindcast_mod, "_fast_step", fast_step)
    monkeypatch.setattr(hindcast_mod, "_refit", refit)
    models = [comparison.best, *comparison.accepted[1:3], *comparison.benchmarks]
    hindcast = fc.run_hindcast(nile, models, horizon=5)
    return replace(comparison, hindcast=hindcast)


def test_benchmark_card_compares_on_the_origins_the_verdict_uses(failed_once: fc.Comparison):
    hc = failed_once.hindcast
    n = len(hc.origins)
    assert len(hc.skipped) == 1 and hc.score(failed_once.best.label).origins == n - 1
    # the verdict's pair: "... on MASE over 9 origins (0.93 vs 1.02 ...)"
    got = re.search(r"over (\d+) origins \((\d+\.\d\d) vs (\d+\.\d\d)", hc.verdict)
    assert got is not None, hc.verdict
    k, a, b = int(got[1]), float(got[2]), float(got[3])
    assert k == n - 1
    table, note = tables.benchmark_panel(failed_once)
    row = next(r for r in table_rows(table) if r[0] == "last value")
    # the card's last-value MASE is the verdict's (to its two decimals), not the all-origin one
    assert round(float(row[1]), 2) == b
    full = hc.score("last value").mase
    assert float(row[1]) != pytest.approx(full, abs=5e-4)
    pct = round(100 * abs(1 - a / b))
    assert abs(int(row[2].split("%")[0]) - pct) <= 1  # a and b were rounded for the sentence
    assert f"{k} of {n} hindcast origins" in note.children
    # the skill table beside the model: the same origins, the same score
    rows = {r["model"]: r for r in tables.skill_rows(failed_once)}
    assert rows["last value"]["origins"] == k
    assert round(rows["last value"]["mase"], 2) == b


def table_rows(table) -> list[list[str]]:
    """The body cells of an :func:`app.ui.html_table` as text, row by row."""
    body = table.children[1]
    return [[str(td.children) for td in tr.children] for tr in body.children]


def test_board_hindcast_sentence_compares_on_the_verdicts_origins(failed_once: fc.Comparison):
    from app.wording import hindcast_sentence

    hc = failed_once.hindcast
    n = len(hc.origins)
    got = re.search(r"over (\d+) origins \((\d+\.\d\d) vs (\d+\.\d\d)", hc.verdict)
    assert got is not None, hc.verdict
    k, a, b = int(got[1]), float(got[2]), float(got[3])
    sentence = hindcast_sentence(failed_once, failed_once.best.label)
    # the Board's sentence counts the origins the verdict compares and quotes its percentage
    assert f"each of the last {k} years" in sentence and k == n - 1, sentence
    pct = int(re.search(r"(\d+)% (smaller|larger)", sentence)[1])
    assert abs(pct - round(100 * abs(1 - a / b))) <= 1, sentence

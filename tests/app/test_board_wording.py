"""The Forecast Board's plain words and the CSV's cautions, on real core results.

Data: the Nile river flow series that statsmodels ships (statsmodels.datasets.nile, annual
volumes 1871-1970, 10^8 m^3). Where a case needs a benchmark that beat the model, the Nile
hindcast's long-run-mean score is set lower by hand (the numbers are given beside each check).
"""

from __future__ import annotations

import dataclasses
import io

import pandas as pd
import pytest

import forecasting_core as fc
from app.board_views import variance_label
from app.export import forecast_csv, report_html
from app.wording import (
    better_benchmarks,
    data_notes,
    forecast_summary,
    hindcast_sentence,
    reference_sentence,
    specific_notes,
)


def _with_mase(comparison: fc.Comparison, label: str, mase: float) -> fc.Comparison:
    """``comparison`` with ``label``'s hindcast MASE set to ``mase`` (its own and its pairs)."""
    hc = comparison.hindcast

    def fix(s: fc.SkillScore) -> fc.SkillScore:
        return dataclasses.replace(s, mase=mase) if s.model == label else s

    hc = dataclasses.replace(
        hc,
        scores=tuple(fix(s) for s in hc.scores),
        paired=tuple((fix(a), fix(b)) for a, b in hc.paired),
    )
    return dataclasses.replace(comparison, hindcast=hc)


@pytest.fixture(scope="module")
def beaten(comparison: fc.Comparison) -> fc.Comparison:
    """The Nile comparison with the long-run mean at MASE 0.50 on the hindcast."""
    return _with_mase(comparison, "long-run mean", 0.50)


# -- a benchmark that did better is named, with how much -------------------------------------


def test_real_nile_hindcast_names_no_better_benchmark(comparison):
    best = comparison.best.label
    mine = comparison.hindcast.score(best).mase
    # on the real hindcast every benchmark's MASE, to two decimals, is at least the model's
    for s in comparison.hindcast.beside(best):
        if s.kind == "benchmark":
            assert round(s.mase, 2) >= round(mine, 2) or s.model == "last value"
    assert better_benchmarks(comparison, best) == []
    assert "did better" not in hindcast_sentence(comparison, best)


def test_sentence_names_the_benchmark_that_did_better_and_by_how_much(beaten):
    best = beaten.best.label
    mine = beaten.hindcast.versus("long-run mean", best)[0].mase
    found = better_benchmarks(beaten, best)
    assert [f[0] for f in found] == ["long-run mean"]
    sentence = hindcast_sentence(beaten, best)
    # still the comparison with the last value first ...
    assert "than simply repeating the last observed value" in sentence
    # ... then the benchmark that did better: errors 1 - 0.50 / MASE smaller
    pct = round(100 * (1 - 0.50 / mine))
    assert (
        f"the long-run mean benchmark (errors {pct}% smaller, MASE 0.50 vs {mine:.2f}) "
        "did better than this model"
    ) in sentence, sentence


def test_two_better_benchmarks_are_both_named(comparison):
    both = _with_mase(_with_mase(comparison, "long-run mean", 0.50), "last value + drift", 0.60)
    sentence = hindcast_sentence(both, both.best.label)
    assert "2 benchmarks did better than this model" in sentence
    # the best first
    assert sentence.index("long-run mean") < sentence.index("last value + drift")


def test_board_summary_csv_and_report_all_say_it(beaten):
    best = beaten.best
    forecast = fc.make_forecast(best, horizon=5, levels=(50, 80, 95))
    said = "the long-run mean benchmark (errors"
    assert any(said in s for s in forecast_summary(forecast, beaten))
    csv_text = forecast_csv(forecast, beaten)
    assert any(line.startswith("# hindcast: ") and said in line for line in csv_text.splitlines())
    assert said in report_html(forecast, beaten)


# -- the CSV carries the board's specific cautions -------------------------------------------


def test_csv_carries_the_boards_specific_cautions_and_still_reads_back(comparison, forecast):
    lines = forecast_csv(forecast, comparison).splitlines()
    notes = specific_notes(forecast, comparison)
    kinds = [k for k, _ in notes]
    assert "hindcast" in kinds and "residuals" in kinds
    # every note the board shows is a '#' line of the CSV (commas kept; quotes made single)
    for kind, text in notes:
        assert any(line.startswith(f"# {kind}: ") for line in lines), kind
        assert any(text.replace('"', "'")[:60] in line for line in lines), text
    back = pd.read_csv(io.StringIO("\n".join(lines)), comment="#")
    assert len(back) == 5


def test_csv_names_bands_too_narrow_and_data_warnings(comparison, forecast):
    # the Nile hindcast's 80% band held well (no caution); made to hold 40% of 50 forecasts,
    # the core's own rule (SkillScore.coverage_warning: under 65%) says the bands were narrow
    best = comparison.best.label
    hc = comparison.hindcast

    def narrow(s: fc.SkillScore) -> fc.SkillScore:
        return dataclasses.replace(s, coverage80=40.0, forecasts=50) if s.model == best else s

    narrow_cmp = dataclasses.replace(
        comparison,
        hindcast=dataclasses.replace(hc, scores=tuple(narrow(s) for s in hc.scores)),
        warnings=("The series has 1 missing year (1913).",),
    )
    lines = forecast_csv(forecast, narrow_cmp).splitlines()
    assert any(line.startswith("# caution: On past years the bands of") for line in lines)
    assert "# warning: The series has 1 missing year (1913)." in lines


# -- the reference level: the highest-risk period is named ------------------------------------


@pytest.mark.parametrize(
    ("probs", "expected"),
    [
        # monthly, the peak inside the horizon (trial: 20% in January, 97% in March, 3% by December)
        (
            [0.20, 0.60, 0.97, 0.50, 0.03],
            "The chance of falling below the reference level of 750 t is 20% in 2026-01, highest "
            "in 2026-03 (97%), and 3% by 2026-05.",
        ),
        # rising to the end: first and last say it all
        (
            [0.01, 0.10, 0.28],
            "The chance of falling below the reference level of 750 t is 1% in 2026-01 and 28% "
            "by 2026-03.",
        ),
        # one period
        ([0.40], "The chance of falling below the reference level of 750 t is 40% in 2026-01."),
    ],
)
def test_reference_sentence_names_the_highest_risk_period(probs, expected):
    times = [f"2026-{i:02d}" for i in range(1, len(probs) + 1)]
    assert reference_sentence(probs, times, "750 t") == expected


# -- the model details name the scale the variance is on --------------------------------------


@pytest.mark.parametrize(
    ("name", "lam", "expected"),
    [
        ("none", None, "Innovation variance (original scale)"),
        ("log", None, "Innovation variance (log scale)"),
        ("boxcox", 0.5, "Innovation variance (Box-Cox scale)"),
    ],
)
def test_variance_label_names_the_scale(name, lam, expected):
    assert variance_label(fc.TransformSpec(name, lam, "")) == expected


# -- the series' data problems travel with the exports -----------------------------------------


def test_csv_and_report_name_the_gaps_the_file_check_found(nile, comparison, forecast, tmp_path):
    # the Nile file with 1913 and 1914 left empty: read back by the core's own file check
    lines = ["year,nile_t"] + [
        f"{p.year}," + ("" if p.year in (1913, 1914) else f"{v:g}") for p, v in nile.items()
    ]
    path = tmp_path / "nile.csv"
    path.write_text("\n".join(lines) + "\n")
    table = fc.read_table(path)
    info = table.info["nile_t"]
    assert info.missing == 2
    notes = data_notes(info)
    assert notes and all(n.startswith("nile_t: ") for n in notes)
    assert any("1913" in n for n in notes), notes
    text = forecast_csv(forecast, comparison, data=notes)
    assert any(line.startswith("# data: nile_t: ") and "1913" in line for line in text.splitlines())
    assert "<strong>Data:</strong> nile_t: " in report_html(forecast, comparison, data=notes)


def test_missing_periods_without_a_problem_are_counted_in_words():
    info = fc.SeriesInfo("cod_t", "monthly", 40, 1, "2020-01", "2023-05", True)
    assert data_notes(info) == [
        "cod_t has 1 missing month between 2020-01 and 2023-05; it stays missing in the "
        "model's data."
    ]
    assert data_notes(None) == []

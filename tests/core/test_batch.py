"""Batch runs: every usable series of a file, in worker processes, with provenance.

The data here are seeded random walks made for plumbing only (invented; no external source).
A forced ARIMA(0,1,1), two hindcast origins and horizon 2 keep the runs short.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

import forecasting_core._search as search_mod
from forecasting_core._batch import RECORD_KEYS, run_batch
from forecasting_core._results import CAUTIONS, InputError

SMALL = {"order": (0, 1, 1), "constant": False, "hindcast_origins": 2}


@pytest.fixture(scope="module")
def small_file(tmp_path_factory) -> Path:
    rng = np.random.default_rng(20261201)
    years = np.arange(1996, 2026)
    cod = 500 * np.exp(np.cumsum(rng.normal(0, 0.1, years.size)))
    ling = 80 + np.cumsum(rng.normal(0, 3, years.size))
    lines = ["year,cod_t,ling_t,skate_t"]
    for i, year in enumerate(years):
        skate = f"{40 + i:.1f}" if i >= years.size - 5 else ""  # only 5 values: too short
        lines.append(f"{year},{cod[i]:.1f},{ling[i]:.1f},{skate}")
    path = tmp_path_factory.mktemp("batch") / "small_landings.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def inline_run(small_file):
    calls = []
    records = run_batch(
        small_file, 2, transform="none", workers=1,
        progress=lambda d, t, n: calls.append((d, t, n)), **SMALL,
    )  # fmt: skip
    return records, calls


def test_one_record_per_series_in_file_order_with_the_contract_keys(inline_run):
    records, _ = inline_run
    assert [r["series"] for r in records] == ["cod_t", "ling_t", "skate_t"]
    for r in records[:2]:
        assert tuple(r) == RECORD_KEYS
        assert [f["step"] for f in r["forecast"]] == [1, 2]
        assert r["cautions"] == list(CAUTIONS)


def test_a_series_that_cannot_be_used_gets_an_error_and_the_others_run(inline_run):
    records, _ = inline_run
    skate = records[2]
    assert set(skate) == {"series", "error", "error_kind", "cautions", "provenance"}
    assert skate["error_kind"] == "data"
    # The file check's own reason, with its 1-based file row and year.
    assert skate["error"].startswith("series 'skate_t' cannot be used: row 27, 2021: ")


def test_progress_reports_every_series(inline_run):
    _, calls = inline_run
    assert [c[:2] for c in calls] == [(1, 3), (2, 3), (3, 3)]
    assert sorted(c[2] for c in calls) == ["cod_t", "ling_t", "skate_t"]


def test_provenance_records_data_hash_settings_and_versions(inline_run, small_file):
    import hashlib

    import statsmodels

    record = inline_run[0][0]
    prov = record["provenance"]
    assert prov["data_sha256"] == hashlib.sha256(small_file.read_bytes()).hexdigest()
    assert prov["source"] == "small_landings.csv"
    assert prov["settings"]["horizon"] == 2
    assert prov["settings"]["order"] == [0, 1, 1]
    assert prov["versions"]["statsmodels"] == statsmodels.__version__
    assert len(prov["series_sha256"]) == 64


def test_two_workers_give_identical_json_to_one(inline_run, small_file):
    records, _ = inline_run
    parallel = run_batch(small_file, 2, transform="none", workers=2, **SMALL)
    assert json.dumps(parallel, sort_keys=True) == json.dumps(records, sort_keys=True)


def test_an_unexpected_failure_stays_with_its_series(small_file, monkeypatch):
    real = search_mod.compare_models

    def flaky(y, *args, **kwargs):
        if y.name == "cod_t":
            raise RuntimeError("solver exploded")
        return real(y, *args, **kwargs)

    monkeypatch.setattr(search_mod, "compare_models", flaky)
    records = run_batch(small_file, 1, transform="none", workers=1, **SMALL)
    assert records[0]["error_kind"] == "internal"
    assert "RuntimeError: solver exploded" in records[0]["error"]
    assert "forecast" in records[1]


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"horizon": 0}, "horizon must be an integer from 1 to 30. Got 0 instead."),
        ({"workers": 0}, "workers must be a positive integer. Got 0 instead."),
    ],
)
def test_bad_batch_settings_say_what_is_allowed(small_file, kwargs, match):
    with pytest.raises(InputError, match=match):
        run_batch(small_file, **{"horizon": 2, **kwargs})


def test_a_benchmark_that_beats_the_chosen_model_is_a_warning():
    from types import SimpleNamespace

    import pandas as pd

    from forecasting_core._batch import _better_benchmarks
    from forecasting_core._benchmarks import fit_benchmark
    from forecasting_core._hindcast import run_hindcast

    # White noise around 100 (seeded): the long-run mean must beat last value + drift.
    rng = np.random.default_rng(3)
    y = pd.Series(100 + rng.normal(0, 5, 40), index=pd.period_range("1986", periods=40, freq="Y"))
    drift, mean = fit_benchmark(y, "drift"), fit_benchmark(y, "mean")
    h = run_hindcast(y, [drift, mean], horizon=3)
    notes = _better_benchmarks(SimpleNamespace(best=drift, hindcast=h))
    assert len(notes) == 1
    assert notes[0].startswith(
        "On the hindcast the long-run mean benchmark scored a lower MASE than last value + drift "
        "on the same forecasts ("
    )
    # the figures are the pair the Bench and the Board show (scored on the forecasts both made)
    a, b = h.versus("long-run mean", "last value + drift")
    assert f"({b.mase:.2f} vs {a.mase:.2f}, errors " in notes[0]


def test_records_come_back_in_file_order_with_a_bounded_window(small_file):
    from forecasting_core._batch import iter_batch

    finished: list[str] = []
    seen: list[str] = []
    for record in iter_batch(
        small_file, 2, transform="none", workers=2, window=2,
        on_result=lambda r: finished.append(r["series"]), **SMALL,
    ):  # fmt: skip
        seen.append(record["series"])
        # Never more than the window finished and not yet handed back (plus the unusable
        # series, known before any task runs).
        assert len(finished) - len(seen) <= 2 + 1
    assert seen == ["cod_t", "ling_t", "skate_t"]
    assert sorted(finished) == sorted(seen)


@pytest.mark.skipif(
    __import__("multiprocessing").get_start_method() != "fork",
    reason="needs fork-started workers, which inherit the monkeypatched compare_models",
)
def test_a_worker_process_that_dies_takes_only_its_own_series(small_file, monkeypatch):
    import os

    real = search_mod.compare_models

    def fatal(y, *args, **kwargs):
        if y.name == "ling_t":
            os._exit(3)  # the worker process stops dead, as on a crash or the OOM killer
        return real(y, *args, **kwargs)

    monkeypatch.setattr(search_mod, "compare_models", fatal)
    records = run_batch(small_file, 2, transform="none", workers=2, **SMALL)
    assert [r["series"] for r in records] == ["cod_t", "ling_t", "skate_t"]
    assert "forecast" in records[0]
    assert records[1]["error_kind"] == "internal"
    assert "worker process stopped" in records[1]["error"]
    assert records[2]["error_kind"] == "data"


@pytest.mark.parametrize("count", [0, 1, 3])
def test_streamed_json_list_is_byte_identical_to_json_dump(count):
    import io

    from forecasting_core._cli_models import JsonListWriter

    items = [
        {"series": f"s{i}", "forecast": [{"step": 1, "mean": 1.5 * i}], "x": None}
        for i in range(count)
    ]
    out = io.StringIO()
    writer = JsonListWriter(out)
    for item in items:
        writer.add(item)
    writer.close()
    # Reference: the standard library's own indent=2 output of the whole list.
    assert out.getvalue() == json.dumps(items, indent=2) + "\n"


def test_workers_and_scheduler_together_say_which_to_drop(small_file):
    with pytest.raises(InputError, match="workers applies to local runs only"):
        run_batch(small_file, 2, workers=2, scheduler="tcp://127.0.0.1:8786")


def test_scheduler_without_dask_installed_exits_2_and_names_the_extra(
    small_file, capsys, monkeypatch
):
    import argparse
    import sys

    from forecasting_core._cli_models import _cli_batch

    monkeypatch.setitem(sys.modules, "distributed", None)  # import distributed -> ImportError
    args = argparse.Namespace(
        file=str(small_file), horizon="2", transform="none", workers=None, json=True, out=None,
        scheduler="tcp://127.0.0.1:8786",
    )  # fmt: skip
    code = _cli_batch(args)
    err = capsys.readouterr().err
    assert code == 2
    assert "pip install 'haulcast[cluster]'" in err and "Traceback" not in err


@pytest.fixture(scope="module")
def messy_file(tmp_path_factory) -> Path:
    """A units row (row 2), an exact repeat of 2010 (row 20) and a gap in cod_t (2003, row 12).

    Seeded random walks, invented for plumbing only. File rows: header 1, units 2, 1994 = row 3.
    """
    rng = np.random.default_rng(20261203)
    years = np.arange(1994, 2026)
    cod = 500 * np.exp(np.cumsum(rng.normal(0, 0.1, years.size)))
    ling = 80 + np.cumsum(rng.normal(0, 3, years.size))
    lines = ["year,cod_t,ling_t", ",tonnes,tonnes"]
    for i, year in enumerate(years):
        lines.append(f"{year},{'' if year == 2003 else f'{cod[i]:.1f}'},{ling[i]:.1f}")
        if year == 2010:
            lines.append(lines[-1])
    path = tmp_path_factory.mktemp("messy") / "messy_landings.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def messy_inline(messy_file):
    return run_batch(messy_file, 2, transform="none", workers=1, **SMALL)


def test_batch_records_carry_the_file_checks_warnings_with_rows_and_years(messy_inline):
    cod, ling = messy_inline
    file_wide = [
        "File check: row 2: row 2 looks like a units row (cod_t: 'tonnes', ling_t: 'tonnes'); "
        "it was read as the units, not as data.",
        "File check: row 20: row 20 repeats row 19 exactly; it was kept once.",
    ]
    gap = "File check: row 12, 2003: empty or NA cells in row 12 (2003); kept as missing."
    assert cod["warnings"][:3] == [*file_wide, gap]
    assert ling["warnings"][:2] == file_wide
    assert gap not in ling["warnings"]  # a series' own problems stay with it
    assert tuple(cod) == RECORD_KEYS


def test_batch_warnings_hold_every_problem_the_check_command_reports(messy_inline, messy_file):
    from forecasting_core.__main__ import check_report
    from forecasting_core._table import read_table

    # What `python -m forecasting_core check --json` prints for the file.
    report = check_report(read_table(messy_file))
    for record, item in zip(messy_inline, report["series"], strict=True):
        assert record["series"] == item["name"]
        for p in [*report["problems"], *item["problems"]]:
            where = ", ".join(x for x in (p["row"] and f"row {p['row']}", p["time"]) if x)
            assert f"File check: {where}: {p['message']}" in record["warnings"]


def test_data_warnings_are_byte_identical_on_two_workers_and_a_cluster(messy_inline, messy_file):
    two = run_batch(messy_file, 2, transform="none", workers=2, **SMALL)
    assert json.dumps(two, indent=2) == json.dumps(messy_inline, indent=2)
    distributed = pytest.importorskip("distributed", reason="dask/distributed not installed")
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
    ) as cluster:
        on_cluster = run_batch(messy_file, 2, transform="none", scheduler=cluster, **SMALL)
    assert json.dumps(on_cluster, indent=2) == json.dumps(messy_inline, indent=2)


def test_a_file_without_problems_adds_no_data_warnings(inline_run):
    records, _ = inline_run
    for r in records[:2]:
        assert not any(w.startswith("File check:") for w in r["warnings"])


class _PairedHindcast:
    """A stand-in Hindcast: the chosen model and benchmarks with fixed MASEs on shared forecasts."""

    def __init__(self, model_mase: float, benchmarks: dict[str, float]) -> None:
        from forecasting_core._model_results import SkillScore

        nan = float("nan")

        def score(name: str, kind: str, mase: float) -> SkillScore:
            return SkillScore(name, kind, 10, 30, nan, nan, mase, nan, nan, nan, nan)

        self.scores = [score("ARIMA(1,0,0) with constant", "arima", model_mase)] + [
            score(n, "benchmark", m) for n, m in benchmarks.items()
        ]

    def score(self, name: str):
        return next((s for s in self.scores if s.model == name), None)

    def versus(self, other: str, model: str):
        return self.score(model), self.score(other)  # (model's score, other's), as Hindcast


@pytest.mark.parametrize(
    ("benchmarks", "named"),
    [
        # bank #4 scallop in the trial: drift 0.986 vs 0.994 shows as "1% worse" on the Bench
        ({"last value + drift": 0.986, "long-run mean": 0.95},
         ["(0.986 vs 0.994, errors 1% smaller)", "(0.95 vs 0.99, errors 4% smaller)"]),
        ({"last value + drift": 0.990}, []),  # 0.4% smaller: shows as 0%, not named
        ({"last value": 0.5}, []),  # the last value is the verdict's own comparison
    ],
)  # fmt: skip
def test_a_benchmark_is_named_when_its_mase_is_half_a_percent_lower(benchmarks, named):
    # Our rule, the same as the verdict's (forecasting_core._hindcast_scores.better_by).
    from types import SimpleNamespace

    from forecasting_core._batch import _better_benchmarks

    best = SimpleNamespace(label="ARIMA(1,0,0) with constant")
    h = _PairedHindcast(0.994, benchmarks)
    notes = _better_benchmarks(SimpleNamespace(best=best, hindcast=h))
    assert len(notes) == len(named)
    for note, figures in zip(notes, named, strict=True):
        assert note.endswith(f"on the same forecasts {figures}.")

"""Batch on a Dask distributed cluster: the same records as a local run, byte for byte.

A local Dask cluster (two worker processes, one thread each) is started in-process; its records
must equal those of the inline run and of two local worker processes exactly (the same JSON
text). The data are seeded random walks made for plumbing only (invented; no external source).
"""

from __future__ import annotations

import argparse
import json
import socket
from pathlib import Path

import numpy as np
import pytest

from forecasting_core._batch import run_batch
from forecasting_core._cli_models import _cli_batch

distributed = pytest.importorskip(
    "distributed", reason="dask/distributed not installed (pip install '.[cluster]')"
)

# Forced ARIMA(0,1,1) for most checks; a small exhaustive search (p, q <= 1) once, so that the
# search and screening code also runs on the cluster.
FORCED = {"order": (0, 1, 1), "constant": False, "hindcast_origins": 2}
SEARCH = {"max_p": 1, "max_q": 1, "hindcast_origins": 2}

pytestmark = [
    pytest.mark.timeout(120),
]


@pytest.fixture(scope="module")
def five_series(tmp_path_factory) -> Path:
    rng = np.random.default_rng(20261202)
    years = np.arange(1991, 2026)
    names = ["cod_t", "ling_t", "skate_t", "hake_t", "pollock_t"]
    cols = {n: 300 * np.exp(np.cumsum(rng.normal(0, 0.12, years.size))) for n in names}
    lines = ["year," + ",".join(names)]
    for i, year in enumerate(years):
        cells = [f"{cols[n][i]:.1f}" for n in names]
        if i < years.size - 4:
            cells[2] = ""  # skate_t: only 4 values, too short: an error record on every engine
        lines.append(f"{year}," + ",".join(cells))
    path = tmp_path_factory.mktemp("cluster") / "five_stocks.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
    ) as local:
        yield local


def text(records) -> str:
    return json.dumps(records, indent=2)


def test_cluster_inline_and_two_workers_give_byte_identical_json(five_series, cluster):
    inline = run_batch(five_series, 3, transform="none", workers=1, **FORCED)
    assert [("model" in r) for r in inline] == [True, True, False, True, True]
    two = run_batch(five_series, 3, transform="none", workers=2, **FORCED)
    on_cluster = run_batch(five_series, 3, transform="none", scheduler=cluster, **FORCED)
    assert text(two) == text(inline)
    assert text(on_cluster) == text(inline)


def test_cluster_search_gives_byte_identical_json_to_inline(five_series, cluster):
    inline = run_batch(five_series, 3, workers=1, **SEARCH)
    assert [("model" in r) for r in inline] == [True, True, False, True, True]
    on_cluster = run_batch(five_series, 3, scheduler=cluster, **SEARCH)
    assert text(on_cluster) == text(inline)


def test_cluster_accepts_a_client_and_reports_progress(five_series, cluster):
    calls = []
    with distributed.Client(cluster.scheduler_address, set_as_default=False) as client:
        records = run_batch(
            five_series, 2, transform="none", scheduler=client,
            progress=lambda d, t, n: calls.append((d, t, n)), **FORCED,
        )  # fmt: skip
        assert client.status == "running"  # a client passed in is left open for its owner
    assert [r["series"] for r in records] == ["cod_t", "ling_t", "skate_t", "hake_t", "pollock_t"]
    assert [c[:2] for c in calls] == [(i, 5) for i in range(1, 6)]


def test_batch_command_on_the_cluster_prints_the_local_commands_json(tmp_path, cluster, capsys):
    # The command's own default settings (full search): one usable series keeps it short.
    rng = np.random.default_rng(7)
    values = 900 * np.exp(np.cumsum(rng.normal(0, 0.1, 30)))
    lines = ["year,hake_t,skate_t"] + [
        f"{1996 + i},{v:.1f},{'' if i < 26 else 12.5}" for i, v in enumerate(values)
    ]
    src = tmp_path / "two_stocks.csv"
    src.write_text("\n".join(lines) + "\n", encoding="utf-8")
    assert _cli_batch(batch_args(file=str(src), workers="1")) == 0
    local_out = capsys.readouterr().out
    code = _cli_batch(batch_args(file=str(src), scheduler=cluster.scheduler_address))
    out, err = capsys.readouterr()
    assert code == 0, err
    assert out == local_out
    assert [r["series"] for r in json.loads(out)] == ["hake_t", "skate_t"]
    assert "[2/2]" in err and "Traceback" not in out + err


def test_workers_running_another_haulcast_version_are_refused(five_series, cluster, monkeypatch):
    import forecasting_core
    from forecasting_core._results import InputError

    # The workers are separate processes: they still report the installed version.
    monkeypatch.setattr(forecasting_core, "__version__", "0.0.0-other")
    with pytest.raises(InputError, match=r"every Dask worker needs haulcast 0\.0\.0-other"):
        run_batch(five_series, 2, scheduler=cluster, **FORCED)


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def batch_args(**kw) -> argparse.Namespace:
    base = dict(file="", horizon="2", transform="none", workers=None, json=True, out=None, scheduler=None)
    base.update(kw)
    return argparse.Namespace(**base)


def test_unreachable_scheduler_exits_2_with_a_plain_message(five_series, capsys, monkeypatch):
    import forecasting_core._batch_dask as dask_mod

    monkeypatch.setattr(dask_mod, "CONNECT_TIMEOUT", 1.0)
    address = f"tcp://127.0.0.1:{free_port()}"  # nothing listens there
    code = _cli_batch(batch_args(file=str(five_series), scheduler=address))
    err = capsys.readouterr().err
    assert code == 2
    assert err.startswith(f"error: could not reach the Dask scheduler at {address} (")
    assert "Traceback" not in err


@pytest.mark.parametrize(
    ("address", "match"),
    [
        ("nonsense", "scheduler must be an address such as tcp://host:8786. Got 'nonsense' instead"),
        ("tcp://host-without-port", "Got 'tcp://host-without-port' instead"),
        ("   ", "scheduler must be a Dask scheduler address such as tcp://host:8786"),
    ],
)
def test_malformed_scheduler_address_says_what_is_expected(five_series, address, match):
    from forecasting_core._results import InputError

    with pytest.raises(InputError, match=match):
        run_batch(five_series, 2, scheduler=address, **FORCED)

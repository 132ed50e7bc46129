"""The server killed with SIGKILL while analyses are being saved, then restarted on the same data
folder: every save the browser was told about is there, opens with the same numbers, and the
database passes SQLite's integrity check. And a data folder of the previous version (dataset
folders only, no database) starts and serves."""

from __future__ import annotations

import hashlib
import json
import sqlite3
import threading
import time
from pathlib import Path

import pytest
from conftest import start_server
from dash_client import DashClient, find_components
from flows import Session, canary_csv, error_texts, text_of

pytestmark = pytest.mark.server

SAVERS = 4
KILL_AFTER_SAVES = 24
KILL_AFTER_S = 20.0


def _integrity(db: Path) -> str:
    conn = sqlite3.connect(db)
    try:
        return conn.execute("PRAGMA integrity_check").fetchone()[0]
    finally:
        conn.close()


def _open_on_board(client: DashClient, analysis_id: str) -> dict:
    """What ``/board?analysis=<id>`` puts in the ``board-open`` store (via the page router)."""
    router = client.find("_pages_content.children", inputs=["_pages_location.search"])
    reply, out = client.call(
        router,
        {
            "_pages_location.pathname": "/board",
            "_pages_location.search": f"?analysis={analysis_id}",
        },
    )
    assert reply.status == 200, reply.text[:300]
    stores = [
        s["props"] for s in find_components(out, "Store") if s["props"].get("id") == "board-open"
    ]
    assert stores and stores[0].get("data"), f"{analysis_id} did not open: {str(out)[:300]}"
    return stores[0]["data"]


def test_every_confirmed_save_survives_a_sigkill_mid_save(tmp_path, record_property):
    data = tmp_path / "data"
    server = start_server(data, log_name="first.log")
    confirmed: list[str] = []
    failed_in_flight = []
    lock = threading.Lock()
    stop = threading.Event()
    try:
        callbacks = server.client().callbacks
        prep = Session(DashClient(server.transport(), callbacks))
        prep.upload(canary_csv("kill_t", seed=21), "kill.csv")
        prep.compare()
        prep.forecast()
        first = prep.save("before the kill")
        reference = server.transport().request("GET", f"/api/analyses/{first}").json()
        confirmed.append(first)

        def saver(n: int) -> None:
            session = Session(DashClient(server.transport(timeout=30), callbacks))
            session.sel = dict(prep.sel)
            i = 0
            while not stop.is_set():
                try:
                    analysis_id = session.save(f"kill {n}-{i}")
                except Exception as err:  # noqa: BLE001 - the server died under us (checked below)
                    with lock:
                        failed_in_flight.append((time.monotonic(), f"{type(err).__name__}: {err}"))
                    return
                with lock:
                    confirmed.append(analysis_id)
                i += 1

        threads = [threading.Thread(target=saver, args=(n,), daemon=True) for n in range(SAVERS)]
        for t in threads:
            t.start()
        deadline = time.monotonic() + KILL_AFTER_S
        while time.monotonic() < deadline and len(confirmed) < KILL_AFTER_SAVES:
            time.sleep(0.05)
        killed_at = time.monotonic()
        server.kill()  # SIGKILL to the parent and both workers, saves in flight
        stop.set()
        for t in threads:
            t.join(timeout=60)
    finally:
        stop.set()
        server.stop()
    assert len(confirmed) >= 5, "too few saves before the kill to mean anything"
    early = [why for at, why in failed_in_flight if at < killed_at]
    assert not early, f"saves failed before the kill: {early[:3]}"

    restarted = start_server(data, log_name="second.log")
    try:
        transport = restarted.transport()
        for analysis_id in confirmed:
            reply = transport.request("GET", f"/api/analyses/{analysis_id}")
            assert reply.status == 200, (analysis_id, reply.text[:200])
            got = reply.json()
            assert got["series"] == "kill_t"
            assert got["forecast"] == reference["forecast"]  # the same numbers, to the last digit
            assert got["settings"] == reference["settings"]
        listed = transport.request("GET", "/api/analyses?status=all&limit=1000").json()
        for item in listed["analyses"]:  # nothing half-written: whatever is listed opens whole
            full = transport.request("GET", f"/api/analyses/{item['id']}")
            assert full.status == 200 and full.json()["forecast"] == reference["forecast"]
        assert len(listed["analyses"]) >= len(confirmed)
        # and the board opens them, recomputing the same numbers as saved
        client = DashClient(restarted.transport())
        status_cb = client.find("board-saved-status.children", inputs=["board-open.data"])
        for analysis_id in (confirmed[0], confirmed[-1]):
            opened = _open_on_board(client, analysis_id)
            assert opened["id"] == analysis_id
            reply, out = client.call(
                status_cb,
                {
                    "board-table.children": "x",
                    "board-open.data": opened,
                    "board-reference.value": None,
                    "hc-selection.data": opened.get("selection"),
                },
            )
            assert reply.status == 200 and not error_texts(out)
            assert "the same numbers as" in text_of(out["board-saved-status"]["children"])
    finally:
        code = restarted.stop()
    assert code == 0  # SIGTERM stops the workers and the parent cleanly
    assert _integrity(data / "haulcast.sqlite3") == "ok"
    figures = (
        f"kill test: {len(confirmed)} saves confirmed before SIGKILL, "
        f"{len(failed_in_flight)} in flight lost their answer, {len(listed['analyses'])} in the "
        f"store after restart, all confirmed present and identical, integrity ok"
    )
    print("\n" + figures)
    record_property("kill_report", figures)


def test_a_previous_version_data_folder_starts_and_serves(tmp_path):
    """The previous version kept only ``datasets/<sha256>/{raw,meta.json}`` (no database)."""
    data = tmp_path / "old"
    raw = canary_csv("old_vintage_t", seed=31)
    digest = hashlib.sha256(raw).hexdigest()
    folder = data / "datasets" / digest
    folder.mkdir(parents=True)
    (folder / "raw").write_bytes(raw)
    meta = {
        "id": digest,
        "filename": "old.csv",
        "kind": "csv",
        "size": len(raw),
        "saved_at": "2025-11-02T09:14:00+00:00",
    }
    (folder / "meta.json").write_text(json.dumps(meta, indent=1), encoding="utf-8")
    assert not (data / "haulcast.sqlite3").exists()

    server = start_server(data)  # two workers open (and migrate) the same folder at once
    try:
        client = DashClient(server.transport())
        session = Session(client)
        session.sel = {"dataset_id": digest, "uploads": [digest]}  # the browser still lists it
        out = session.intake()
        assert out["intake-dataset"]["value"] == digest
        assert [o["label"] for o in out["intake-dataset"]["options"]] == [
            "old.csv \u00b7 your upload"
        ]
        assert out["intake-series"]["value"] == "old_vintage_t"
        session.sel = out.get("hc-selection", {}).get("data") or {
            **session.sel,
            "series": "old_vintage_t",
        }
        session.compare()
        session.forecast()
        analysis_id = session.save("saved after the upgrade")
        reply = server.transport().request("GET", f"/api/analyses/{analysis_id}")
        assert reply.status == 200 and reply.json()["dataset_id"] == digest
    finally:
        assert server.stop() == 0
    assert (folder / "raw").read_bytes() == raw  # the old folder is kept as it was
    assert _integrity(data / "haulcast.sqlite3") == "ok"

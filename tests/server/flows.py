"""What one browser session does, as Dash callback requests: upload -> compare -> forecast -> save.

Each step posts the callback the page would post, with the session's ``hc-selection`` (kept
here, as the browser keeps it in session storage) and returns the new selection. A step
fails loudly: any status other than 200/204, or an error alert inside the answer, raises
:class:`FlowError` naming the step.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from dash_client import DashClient, Reply, upload_contents

#: Small Model Bench settings: enough to exercise the whole path, cheap on a loaded machine.
BENCH = {
    "bench-search.value": "stepwise",
    "bench-max-p.value": 2,
    "bench-max-q.value": 1,
    "bench-seasonal.value": [],
    "bench-transform.value": "none",
    "bench-constant.value": "auto",
    "bench-origins.value": 3,
    "bench-horizon.value": 3,
}


class FlowError(AssertionError):
    pass


def canary_csv(name: str, seed: int, years: int = 24) -> bytes:
    """An annual series named ``name``: a seeded AR(1) around 500 (invented, for load only)."""
    rng = np.random.default_rng(seed)
    x = np.empty(years)
    x[0] = 0.0
    for t in range(1, years):
        x[t] = 0.6 * x[t - 1] + rng.normal(0, 40)
    rows = [f"{1990 + t},{500 + x[t]:.2f}" for t in range(years)]
    return ("year," + name + "\n" + "\n".join(rows) + "\n").encode("utf-8")


def text_of(node: Any) -> str:
    """The visible text of a component tree (its ``children`` strings, in order)."""
    if isinstance(node, str | int | float):
        return str(node)
    if isinstance(node, list):
        return "".join(text_of(n) for n in node)
    if isinstance(node, Mapping):
        props = node.get("props")
        if isinstance(props, Mapping):
            return text_of(props.get("children"))
    return ""


def error_texts(response: Mapping[str, Any]) -> list[str]:
    """Texts of every error alert (``hc-alert--error``) inside a callback answer."""
    out: list[str] = []

    def visit(node: Any) -> None:
        if isinstance(node, Mapping):
            props = node.get("props")
            if isinstance(props, Mapping) and "hc-alert--error" in str(props.get("className", "")):
                out.append(text_of(props.get("children")))
                return
            for v in node.values():
                visit(v)
        elif isinstance(node, list):
            for v in node:
                visit(v)

    visit(response)
    return out


def _check(step: str, reply: Reply, response: Mapping[str, Any]) -> None:
    if reply.status not in (200, 204):
        raise FlowError(f"{step}: HTTP {reply.status}: {reply.text[:300]}")
    errors = error_texts(response)
    if errors:
        raise FlowError(f"{step}: error alert: {errors[0][:300]}")


class Session:
    """One browser session against a server (its own connection and ``hc-selection``)."""

    def __init__(self, client: DashClient) -> None:
        self.c = client
        self.sel: dict[str, Any] | None = None
        self.opened: dict[str, Any] | None = None
        self._sync = client.find("intake-dataset.options", inputs=["intake-upload-payload.data"])
        self._run = client.find("bench-request.data", inputs=["bench-run.n_clicks"])
        self._render = client.find("bench-candidates.data", inputs=["bench-request.data"])
        self._board = client.find("board-fan.figure")
        try:
            self._save = client.find("board-open.data", inputs=["board-save.n_clicks"])
        except LookupError:
            self._save = None

    # -- steps --------------------------------------------------------------------------------

    def upload(self, raw: bytes, filename: str) -> dict[str, Any]:
        """Upload a file on Intake; returns the answer (dataset and series pickers included)."""
        payload = {"contents": upload_contents(raw), "filename": filename, "t": 1}
        reply, out = self.c.call(
            self._sync,
            {"intake-upload-payload.data": payload, "hc-selection.data": self.sel},
            changed=["intake-upload-payload.data"],
            label="upload",
        )
        _check("upload", reply, out)
        self.sel = out.get("hc-selection", {}).get("data", self.sel)
        return out

    def intake(self) -> dict[str, Any]:
        """Open Intake (the first render of its pickers) with the current selection."""
        reply, out = self.c.call(
            self._sync,
            {"hc-selection.data": self.sel, "intake-dataset.value": None},
            changed=[],
            label="intake",
        )
        _check("intake", reply, out)
        return out

    def compare(self) -> dict[str, Any]:
        """Press "Run comparison" on the Model Bench and get the candidates table."""
        reply, out = self.c.call(
            self._run,
            {"bench-run.n_clicks": 1, **BENCH, "hc-selection.data": self.sel},
            changed=["bench-run.n_clicks"],
            label="compare-settings",
        )
        _check("compare (settings)", reply, out)
        self.sel = out.get("hc-selection", {}).get("data", self.sel)
        request = out["bench-request"]["data"]
        reply, out = self.c.call(
            self._render,
            {
                "bench-request.data": request,
                "bench-mount.data": True,
                "hc-selection.data": self.sel,
            },
            changed=["bench-request.data"],
            label="compare",
        )
        _check("compare", reply, out)
        if not out.get("bench-candidates", {}).get("data"):
            raise FlowError("compare: no candidates in the answer")
        return out

    def forecast(self) -> dict[str, Any]:
        """Open the Forecast Board: the fan chart and the forecast table."""
        reply, out = self.c.call(
            self._board,
            {
                "board-reference.value": None,
                "board-present.data": False,
                "hc-selection.data": self.sel,
                "board-open.data": self.opened,
            },
            changed=["board-reference.value"],
            label="forecast",
        )
        _check("forecast", reply, out)
        if "board-fan" not in out:
            raise FlowError("forecast: no fan chart in the answer")
        return out

    def save(self, title: str, author: str = "Load tester") -> str:
        """Press "Save analysis" on the board; returns the new analysis id."""
        if self._save is None:
            raise FlowError("save: this server has no save callback")
        reply, out = self.c.call(
            self._save,
            {
                "board-save.n_clicks": 1,
                "board-save-title.value": title,
                "board-save-name.value": author,
                "board-save-season.value": None,
                "board-reference.value": None,
                "hc-selection.data": self.sel,
                "board-open.data": None,
            },
            changed=["board-save.n_clicks"],
            label="save",
        )
        _check("save", reply, out)
        opened = out.get("board-open", {}).get("data")
        if not isinstance(opened, Mapping) or not isinstance(opened.get("id"), str):
            raise FlowError(f"save: no analysis id in the answer: {str(out)[:300]}")
        return opened["id"]

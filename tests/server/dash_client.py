"""A small Dash client for tests: read the callback graph, post callback requests.

It speaks to Dash the way the browser's renderer does: ``GET /_dash-dependencies`` lists the
callbacks (their ``output`` key, inputs and states), and ``POST /_dash-update-component``
runs one with a JSON body ``{"output", "outputs", "inputs", "state", "changedPropIds"}``. The
answer is ``{"multi": true, "response": {component id: {property: value}}}`` (outputs left
as they were are missing) or 204 when the callback made no change.

Two transports: :class:`HttpTransport` (a real server on loopback, one keep-alive connection
per client, so give every thread its own) and :class:`FlaskTransport` (Flask's test client).
"""

from __future__ import annotations

import base64
import http.client
import json
import time
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any

CALLBACK = "/_dash-update-component"


@dataclass
class Reply:
    """One HTTP answer: status, headers (lower-case names), body bytes, seconds taken."""

    status: int
    headers: dict[str, str]
    body: bytes
    seconds: float = 0.0

    def json(self) -> Any:
        return json.loads(self.body.decode("utf-8"))

    @property
    def text(self) -> str:
        return self.body.decode("utf-8", "replace")


class HttpTransport:
    """HTTP/1.1 to ``host:port`` over one keep-alive connection (reconnects when dropped)."""

    def __init__(
        self, host: str, port: int, *, headers: Mapping[str, str] | None = None, timeout: float = 60
    ) -> None:
        self.host, self.port, self.timeout = host, port, timeout
        self.headers = dict(headers or {})
        self._conn: http.client.HTTPConnection | None = None

    def request(
        self,
        method: str,
        path: str,
        body: bytes | None = None,
        headers: Mapping[str, str] | None = None,
    ) -> Reply:
        all_headers = {**self.headers, **dict(headers or {})}
        for attempt in (0, 1):
            if self._conn is None:
                self._conn = http.client.HTTPConnection(self.host, self.port, timeout=self.timeout)
            started = time.perf_counter()
            try:
                self._conn.request(method, path, body=body, headers=all_headers)
                resp = self._conn.getresponse()
                data = resp.read()
            except (ConnectionError, http.client.RemoteDisconnected, http.client.BadStatusLine):
                self.close()
                if attempt:
                    raise
                continue
            reply = Reply(
                resp.status,
                {k.lower(): v for k, v in resp.getheaders()},
                data,
                time.perf_counter() - started,
            )
            if resp.getheader("Connection", "").lower() == "close":
                self.close()
            return reply
        raise AssertionError("unreachable")  # pragma: no cover

    def close(self) -> None:
        if self._conn is not None:
            self._conn.close()
            self._conn = None


class FlaskTransport:
    """The same interface over Flask's test client (no sockets)."""

    def __init__(self, client: Any, *, headers: Mapping[str, str] | None = None) -> None:
        self.client = client
        self.headers = dict(headers or {})

    def request(
        self,
        method: str,
        path: str,
        body: bytes | None = None,
        headers: Mapping[str, str] | None = None,
    ) -> Reply:
        started = time.perf_counter()
        resp = self.client.open(
            path, method=method, data=body, headers={**self.headers, **dict(headers or {})}
        )
        return Reply(
            resp.status_code,
            {k.lower(): v for k, v in resp.headers.items()},
            resp.get_data(),
            time.perf_counter() - started,
        )

    def close(self) -> None:
        pass


@dataclass
class Callback:
    """One entry of ``/_dash-dependencies``."""

    output: str
    outputs: list[tuple[str, str]]
    inputs: list[tuple[str, str]]
    state: list[tuple[str, str]]
    raw: dict[str, Any] = field(repr=False)


def _split_outputs(output: str) -> list[tuple[str, str]]:
    """``"..a.b...c.d.."`` or ``"a.b"`` -> [("a", "b"), ("c", "d")] (``@hash`` suffixes dropped)."""
    parts = output[2:-2].split("...") if output.startswith("..") else [output]
    out = []
    for part in parts:
        cid, _, prop = part.rpartition(".")
        out.append((cid, prop.split("@")[0]))
    return out


class DashClient:
    """Run a Dash app's callbacks over a transport, the way the browser does.

    Parameters
    ----------
    transport : HttpTransport or FlaskTransport
    """

    def __init__(self, transport: Any, callbacks: list[Callback] | None = None) -> None:
        self.t = transport
        self.callbacks = callbacks if callbacks is not None else self.load_callbacks()
        self.timings: list[tuple[str, float]] = []

    def load_callbacks(self) -> list[Callback]:
        reply = self.t.request("GET", "/_dash-dependencies")
        assert reply.status == 200, (reply.status, reply.text[:300])
        out = []
        for dep in reply.json():
            if dep.get("clientside_function"):
                continue
            out.append(
                Callback(
                    output=dep["output"],
                    outputs=_split_outputs(dep["output"]),
                    inputs=[(i["id"], i["property"]) for i in dep["inputs"]],
                    state=[(s["id"], s["property"]) for s in dep.get("state", [])],
                    raw=dep,
                )
            )
        return out

    def find(self, output: str, *, inputs: Iterable[str] = ()) -> Callback:
        """The server callback that writes ``output`` ("id.prop") and reads every of ``inputs``."""
        cid, _, prop = output.rpartition(".")
        want = set(inputs)
        hits = [
            cb
            for cb in self.callbacks
            if (cid, prop) in cb.outputs and want <= {f"{i}.{p}" for i, p in cb.inputs}
        ]
        if not hits:
            raise LookupError(f"no server callback writes {output} from {sorted(want)}")
        return hits[0]

    def call(
        self,
        cb: Callback,
        values: Mapping[str, Any],
        *,
        changed: Iterable[str] | None = None,
        label: str | None = None,
    ) -> tuple[Reply, dict[str, dict[str, Any]]]:
        """Post one callback request.

        Parameters
        ----------
        cb : Callback
        values : mapping "id.prop" -> value
            Values for its inputs and states (missing ones are sent as None).
        changed : iterable of "id.prop", optional
            The triggering inputs (default: every input given a value in ``values``).

        Returns
        -------
        (Reply, dict)
            The raw reply and ``{component id: {prop: value}}`` (empty for 204).
        """
        body = self.payload(cb, values, changed=changed)
        reply = self.t.request(
            "POST",
            CALLBACK,
            body=json.dumps(body).encode("utf-8"),
            headers={"Content-Type": "application/json"},
        )
        self.timings.append((label or cb.output, reply.seconds))
        if reply.status == 204:
            return reply, {}
        if reply.status != 200:
            return reply, {}
        return reply, reply.json().get("response", {})

    @staticmethod
    def payload(
        cb: Callback, values: Mapping[str, Any], *, changed: Iterable[str] | None = None
    ) -> dict[str, Any]:
        outputs = [{"id": i, "property": p} for i, p in cb.outputs]
        inputs = [{"id": i, "property": p, "value": values.get(f"{i}.{p}")} for i, p in cb.inputs]
        state = [{"id": i, "property": p, "value": values.get(f"{i}.{p}")} for i, p in cb.state]
        if changed is None:
            changed = [f"{i}.{p}" for i, p in cb.inputs if f"{i}.{p}" in values]
        return {
            "output": cb.output,
            "outputs": outputs if len(outputs) > 1 or cb.output.startswith("..") else outputs[0],
            "inputs": inputs,
            "state": state,
            "changedPropIds": list(changed),
        }


def upload_contents(raw: bytes, mime: str = "text/csv") -> str:
    """A ``dcc.Upload`` ``contents`` value: a base64 data URL."""
    return f"data:{mime};base64," + base64.b64encode(raw).decode("ascii")


def walk_strings(value: Any) -> Iterator[str]:
    """Every string inside a JSON value (component trees included)."""
    if isinstance(value, str):
        yield value
    elif isinstance(value, Mapping):
        for v in value.values():
            yield from walk_strings(v)
    elif isinstance(value, list | tuple):
        for v in value:
            yield from walk_strings(v)


def find_components(value: Any, type_name: str) -> Iterator[Mapping[str, Any]]:
    """Every serialised component of ``type_name`` (e.g. "Markdown") inside a JSON value."""
    if isinstance(value, Mapping):
        if value.get("type") == type_name and "props" in value:
            yield value
        for v in value.values():
            yield from find_components(v, type_name)
    elif isinstance(value, list | tuple):
        for v in value:
            yield from find_components(v, type_name)

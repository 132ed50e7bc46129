"""Batch tasks on a Dask distributed cluster (``run_batch(..., scheduler=...)``, ``batch --scheduler``).

Optional: needs ``dask`` and ``distributed`` (``pip install haulcast[cluster]``) here, and the
same haulcast version installed on every worker (tasks are the batch's own module-level
function, sent by reference). The engine submits at most the batch's window of series at a
time and drops each future as soon as its record is back, so neither the client nor the
scheduler holds the whole batch.
"""

from __future__ import annotations

from typing import Any

import pandas as pd

from forecasting_core._results import InputError

#: Seconds to wait for the scheduler to answer and for a first worker to join.
CONNECT_TIMEOUT = 10.0

_INSTALL = (
    "running a batch on a Dask cluster needs the dask and distributed packages: "
    "pip install 'haulcast[cluster]' (and the same haulcast version on every worker)."
)


def _distributed() -> Any:
    try:
        import distributed
    except ImportError as exc:
        raise InputError(f"{_INSTALL} Got {type(exc).__name__}: {exc} instead.") from None
    return distributed


def _address_of(scheduler: Any) -> str:
    if isinstance(scheduler, str):
        address = scheduler.strip()
        if address:
            return address
    elif isinstance(getattr(scheduler, "scheduler_address", None), str):
        return scheduler.scheduler_address
    raise InputError(
        "scheduler must be a Dask scheduler address such as tcp://host:8786, a distributed "
        f"Client or a cluster object. Got {scheduler!r} instead."
    )


def _reachable(address: str) -> None:
    """Fail fast, with a plain message, on a malformed address or a closed TCP port.

    (A Client that cannot connect waits for its whole timeout and then again when it is
    garbage-collected; a plain socket answers at once.)
    """
    import socket

    from distributed.comm.addressing import get_address_host_port, parse_address

    hint = "Check the address, or start a scheduler with: dask scheduler"
    try:
        scheme = parse_address(address)[0]
        host, port = get_address_host_port(address) if scheme in ("tcp", "tls") else (None, None)
    except ValueError as exc:
        raise InputError(
            f"scheduler must be an address such as tcp://host:8786. Got {address!r} instead ({exc})."
        ) from None
    if host is None:
        return
    try:
        socket.create_connection((host, port), timeout=CONNECT_TIMEOUT).close()
    except OSError as exc:
        raise InputError(
            f"could not reach the Dask scheduler at {address} ({type(exc).__name__}: {exc}). {hint}"
        ) from None


def _check_workers(client: Any, address: str) -> int:
    """Number of worker threads; InputError when no worker joins or one runs another haulcast."""
    from forecasting_core._batch_records import package_versions

    try:
        client.wait_for_workers(1, timeout=CONNECT_TIMEOUT)
    except TimeoutError:
        raise InputError(
            f"the Dask scheduler at {address} has no workers (waited {CONNECT_TIMEOUT:.0f} s). "
            f"Start some with: dask worker {address} --nthreads 1"
        ) from None
    mine = package_versions()["haulcast"]
    try:
        theirs = client.run(package_versions)
    except Exception as exc:
        raise InputError(
            f"the Dask workers of {address} could not run haulcast ({type(exc).__name__}: {exc}). "
            f"Install haulcast {mine} on every worker."
        ) from None
    wrong = sorted(w for w, v in theirs.items() if v.get("haulcast") != mine)
    if wrong:
        got = ", ".join(f"{w} has {theirs[w].get('haulcast')}" for w in wrong[:3])
        raise InputError(
            f"every Dask worker needs haulcast {mine}, the version running here. Got {got} instead."
        )
    return max(sum(client.nthreads().values()), 1)


class DaskEngine:
    """Batch engine on a Dask cluster (the interface of the local engines in ``_batch``)."""

    broken_error: type[BaseException] | None = None  # the scheduler reschedules lost tasks

    def __init__(self, scheduler: Any) -> None:
        distributed = _distributed()
        if isinstance(scheduler, distributed.Client):
            self._client, self._own = scheduler, False
            address = str(scheduler.scheduler.address if scheduler.scheduler else scheduler)
        else:
            address = _address_of(scheduler)
            _reachable(address)
            try:
                self._client = distributed.Client(
                    address, timeout=CONNECT_TIMEOUT, set_as_default=False
                )
            except (OSError, TimeoutError, ValueError, TypeError) as exc:
                raise InputError(
                    f"could not reach the Dask scheduler at {address} ({type(exc).__name__}: {exc}). "
                    "Check the address, or start a scheduler with: dask scheduler"
                ) from None
            self._own = True
        try:
            self.slots = _check_workers(self._client, address)
        except BaseException:
            self.close()
            raise
        self._done = distributed.as_completed(loop=self._client.loop)

    def submit(self, name: str, y: pd.Series, horizon: int, options: dict[str, Any]) -> Any:
        from forecasting_core._batch import _task

        future = self._client.submit(_task, name, y, horizon, options, pure=False)
        self._done.add(future)
        return future

    def wait_first(self, pending: set) -> set:
        """The next finished futures (all of ``pending``: the engine's only submitter)."""
        return {next(self._done), *self._done.next_batch(block=False)}

    def restart(self) -> None:  # pragma: no cover - broken_error is None: never called
        pass

    def close(self) -> None:
        if self._own:
            self._client.close()

"""Many series at once: in worker processes, or on a Dask cluster, with bounded memory.

Every usable series of a file goes through :func:`compare_models` and :func:`make_forecast`
in its own task (:func:`compute_one`, in :mod:`forecasting_core._batch_records`). Tasks run
inline (``workers=1``), in a :class:`concurrent.futures.ProcessPoolExecutor` (``workers``
processes), or on a Dask distributed cluster (``scheduler=``; see
:mod:`forecasting_core._batch_dask`).

Guarantees:

* Identical results whatever runs the tasks: each task computes from its own series and
  settings only, with one BLAS thread and the same warnings filter, and records carry no clock
  time, so 1 worker, N workers and a cluster give byte-identical JSON.
* Bounded memory: at most ``window`` series are submitted and not yet handed back; records come
  back in file order through :func:`iter_batch` as soon as they and all before them are done,
  so a caller that writes them out (the command line does) never holds the whole batch.
* A failure stays with its series: an error in the model code becomes that series' ``"error"``
  record; a worker process that dies takes no other series with it (the tasks that were
  running beside it are rerun one at a time to find the one that stops a worker).
"""

from __future__ import annotations

import os
import warnings
from collections import deque
from collections.abc import Callable, Iterator, Mapping
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from contextlib import AbstractContextManager
from pathlib import Path
from typing import Any

import pandas as pd

from forecasting_core._batch_records import (  # re-exported: the batch's record API
    LEVELS,
    RECORD_KEYS,
    _better_benchmarks,
    compute_one,
    data_warnings,
    error_record,
    forecast_record,
    hindcast_summary,
    package_versions,
    problem_text,
    provenance,
    series_sha256,
    unusable_message,
    with_data_warnings,
)
from forecasting_core._results import InputError, Table

__all__ = [
    "LEVELS", "RECORD_KEYS", "_better_benchmarks", "compute_one", "data_warnings", "error_record",
    "forecast_record", "hindcast_summary", "iter_batch", "package_versions", "problem_text",
    "provenance", "run_batch", "series_sha256", "unusable_message", "with_data_warnings",
]  # fmt: skip

#: Series submitted but not yet handed back, per worker (bounds memory and keeps workers busy).
WINDOW_PER_WORKER = 4

_BLAS: Any = None


def one_blas_thread() -> AbstractContextManager[Any]:
    """Context that limits BLAS to one thread in this process (cached controller, ~20 us).

    Every task runs under it, inline or in a worker, so results never depend on how many BLAS
    threads a process happens to have (and workers do not oversubscribe the cores).
    """
    global _BLAS
    if _BLAS is None:
        from threadpoolctl import ThreadpoolController

        import forecasting_core._search  # noqa: F401  (loads numpy's and scipy's BLAS first)

        _BLAS = ThreadpoolController()
    return _BLAS.limit(limits=1, user_api="blas")


def _settings_of(horizon: int, options: Mapping[str, Any]) -> dict[str, Any]:
    return {
        "horizon": horizon,
        **{k: v for k, v in options.items() if k not in ("source", "data_sha256")},
    }


def _task(name: str, y: pd.Series, horizon: int, options: dict[str, Any]) -> dict[str, Any]:
    """One batch task (module level, so worker processes and Dask workers can run it).

    Runs with one BLAS thread and warnings ignored (the core reports what matters as
    statuses and record warnings), so the record is the same in any process.
    """
    settings = _settings_of(horizon, options)
    where = {"source": options.get("source"), "data_sha256": options.get("data_sha256")}
    try:
        with one_blas_thread(), warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return compute_one(y.rename(name), horizon, **options)[2]
    except InputError as exc:
        return error_record(name, str(exc), settings, **where)
    except Exception as exc:  # a failing series never stops the others
        return error_record(
            name, f"could not be forecast ({type(exc).__name__}: {exc})", settings,
            kind="internal", **where,
        )  # fmt: skip


# ---------------------------------------------------------------------------------------------
# Engines: inline, local processes (Dask lives in _batch_dask). Each submits a task and waits
# for the first of several to finish; futures follow concurrent.futures' interface.
# ---------------------------------------------------------------------------------------------


class _InlineEngine:
    """Runs each task at once in this process."""

    slots = 1
    broken_error: type[BaseException] | None = None

    def submit(self, name: str, y: pd.Series, horizon: int, options: dict[str, Any]) -> Future:
        future: Future = Future()
        future.set_result(_task(name, y, horizon, options))
        return future

    def wait_first(self, pending: set) -> set:
        return set(pending)

    def restart(self) -> None:  # pragma: no cover - nothing to restart
        pass

    def close(self) -> None:
        pass


class _ProcessEngine:
    """A pool of ``workers`` processes; ``restart`` replaces a pool a dead worker broke."""

    broken_error: type[BaseException] | None = BrokenProcessPool

    def __init__(self, workers: int) -> None:
        self.slots = workers
        try:  # core modules and compiled code loaded here: forked workers inherit them
            from forecasting_core import warm_up

            warm_up()
        except Exception:  # a task that needs it reports the failure itself
            pass
        self._pool = ProcessPoolExecutor(max_workers=workers)

    def submit(self, name: str, y: pd.Series, horizon: int, options: dict[str, Any]) -> Future:
        return self._pool.submit(_task, name, y, horizon, options)

    def wait_first(self, pending: set) -> set:
        return wait(pending, return_when=FIRST_COMPLETED).done

    def restart(self) -> None:
        self._pool.shutdown(wait=True, cancel_futures=True)
        self._pool = ProcessPoolExecutor(max_workers=self.slots)

    def close(self) -> None:
        self._pool.shutdown(wait=True, cancel_futures=True)


def _default_workers() -> int:
    if hasattr(os, "sched_getaffinity"):
        return len(os.sched_getaffinity(0))
    return os.cpu_count() or 1


def iter_batch(
    path_or_table: str | Path | Table,
    horizon: int = 5,
    *,
    transform: str = "auto",
    workers: int | None = None,
    scheduler: Any = None,
    window: int | None = None,
    progress: Callable[[int, int, str], None] | None = None,
    on_result: Callable[[dict[str, Any]], None] | None = None,
    **compare_settings: Any,
) -> Iterator[dict[str, Any]]:
    """Compare and forecast every series of a file, yielding records in file order.

    Same parameters and records as :func:`run_batch`, which collects this into a list. Settings
    are checked (and a scheduler connected to) when this is called, not at the first record.
    Records are handed back as soon as they and every series before them are done; at most
    ``window`` series are in work or waiting to be handed back at any time. Iterate to the end
    or ``close()`` the iterator: that releases the worker processes or the cluster connection.

    Parameters
    ----------
    window : int, optional
        Bound on series submitted but not yet yielded; default four per worker (at least 8).
    """
    if isinstance(horizon, bool) or not isinstance(horizon, int) or not 1 <= horizon <= 30:
        raise InputError(f"horizon must be an integer from 1 to 30. Got {horizon!r} instead.")
    if scheduler is not None and workers is not None:
        raise InputError(
            "workers applies to local runs only; with a scheduler the cluster's workers run the "
            f"series. Got workers={workers!r} and a scheduler instead."
        )
    if workers is None and scheduler is None:
        workers = _default_workers()
    if workers is not None and (
        isinstance(workers, bool) or not isinstance(workers, int) or workers < 1
    ):
        raise InputError(f"workers must be a positive integer. Got {workers!r} instead.")
    if window is not None and (
        isinstance(window, bool) or not isinstance(window, int) or window < 1
    ):
        raise InputError(f"window must be a positive integer. Got {window!r} instead.")
    if isinstance(path_or_table, Table):
        table = path_or_table
    else:
        from forecasting_core._table import read_table

        table = read_table(path_or_table)
    options = {
        "transform": transform,
        "source": table.source,
        "data_sha256": table.sha256,
        **compare_settings,
    }
    names = list(table.info) or list(table.series)
    usable = [name for name in names if name in table.series]
    if scheduler is not None:
        from forecasting_core._batch_dask import DaskEngine

        engine: Any = DaskEngine(scheduler)
    elif workers == 1 or len(usable) <= 1:
        engine = _InlineEngine()
    else:
        engine = _ProcessEngine(min(workers, len(usable)))
    if window is None:
        window = max(WINDOW_PER_WORKER * engine.slots, 8) if engine.slots > 1 else 1
    return _run(table, names, horizon, options, engine, window, progress, on_result)


def _run(
    table: Table,
    names: list[str],
    horizon: int,
    options: dict[str, Any],
    engine: Any,
    window: int,
    progress: Callable[[int, int, str], None] | None,
    on_result: Callable[[dict[str, Any]], None] | None,
) -> Iterator[dict[str, Any]]:
    """The scheduling loop behind :func:`iter_batch` (a generator; closes ``engine``)."""
    total, done = len(names), 0
    ready: dict[int, dict[str, Any]] = {}

    def finish(i: int, record: dict[str, Any]) -> None:
        nonlocal done
        # The file check's findings are added here, in this process, whatever ran the task.
        record = with_data_warnings(record, data_warnings(table, names[i]))
        ready[i] = record
        done += 1
        if on_result is not None:
            on_result(record)
        if progress is not None:
            progress(done, total, names[i])

    def failed(i: int, why: str) -> dict[str, Any]:
        return error_record(
            names[i], f"could not be forecast ({why})", _settings_of(horizon, options),
            kind="internal", source=table.source, data_sha256=table.sha256,
        )  # fmt: skip

    # Series the file check marked unusable are known at once (small records; reported first).
    todo: deque[int] = deque()
    for i, name in enumerate(names):
        if name in table.series:
            todo.append(i)
        else:
            finish(i, error_record(name, unusable_message(table, name), _settings_of(horizon, options),
                                   source=table.source, data_sha256=table.sha256))  # fmt: skip
    pending: dict[Any, int] = {}  # future -> series index
    suspects: deque[int] = deque()  # were running when a worker died: rerun one at a time
    isolated = False
    next_out = 0
    try:
        while next_out < total:
            # Submit while the window allows; suspects run alone so a crash names its series.
            while True:
                if suspects:
                    if pending:
                        break
                    i, isolated = suspects.popleft(), True
                elif (
                    todo and not isolated and todo[0] - next_out < window and len(pending) < window
                ):
                    i = todo.popleft()
                else:
                    break
                try:
                    pending[engine.submit(names[i], table.series[names[i]], horizon, options)] = i
                except Exception as exc:  # the pool broke since the last wait
                    if engine.broken_error is None or not isinstance(exc, engine.broken_error):
                        raise
                    suspects.appendleft(i)
                    isolated = False
                    if not pending:  # else the broken futures below lead to the restart
                        engine.restart()
                    break
                if isolated:
                    break
            while next_out < total and next_out in ready:
                yield ready.pop(next_out)
                next_out += 1
            if not pending:
                continue
            restart = False
            for future in engine.wait_first(set(pending)):
                i = pending.pop(future)
                try:
                    record = future.result()
                except Exception as exc:
                    if engine.broken_error is not None and isinstance(exc, engine.broken_error):
                        restart = True
                        if not isolated:
                            suspects.append(i)
                            continue
                        record = failed(i, "its worker process stopped, e.g. out of memory")
                    else:
                        record = failed(i, f"worker stopped: {type(exc).__name__}")
                finish(i, record)
            if restart:
                # Every task that was in flight in the broken pool is suspect as well.
                suspects = deque(sorted([*suspects, *pending.values()]))
                pending.clear()
                engine.restart()
            if isolated and not pending:
                isolated = False
    finally:
        for future in pending:
            future.cancel()
        engine.close()


def run_batch(
    path_or_table: str | Path | Table,
    horizon: int = 5,
    *,
    transform: str = "auto",
    workers: int | None = None,
    scheduler: Any = None,
    progress: Callable[[int, int, str], None] | None = None,
    on_result: Callable[[dict[str, Any]], None] | None = None,
    **compare_settings: Any,
) -> list[dict[str, Any]]:
    """Compare and forecast every usable series of a file.

    Parameters
    ----------
    path_or_table : str, Path or Table
        A CSV/Excel file (read with :func:`read_table`) or a table already read.
    horizon : int
        Steps ahead at each series' frequency, 1 to 30.
    transform : {"auto", "none", "log", "boxcox"}
    workers : int, optional
        Local worker processes; default the number of cores available. 1 runs inline.
    scheduler : str or distributed.Client, optional
        Run the series on a Dask distributed cluster instead: the scheduler's address
        (``"tcp://host:8786"``), a connected ``Client``, or an object with a
        ``scheduler_address`` (e.g. a ``LocalCluster``). Needs ``pip install haulcast[cluster]``
        here and the same haulcast version on every worker. Not together with ``workers``.
    progress : callable, optional
        Called as ``progress(done, total, name)`` in this process each time a series
        finishes (in finishing order).
    on_result : callable, optional
        Called with each series' record as it finishes, just before ``progress``.
    **compare_settings
        Passed to :func:`compare_models` for every series; ``reference`` and ``levels`` go to
        :func:`make_forecast`.

    Returns
    -------
    list of dict
        One forecast object per series in file order (DESIGN.md contract plus ``cautions``
        and ``provenance``); a series that could not be used or failed has an ``"error"``
        message instead of the model and forecast keys. A record's ``warnings`` start with
        the file check's findings for its series (:func:`data_warnings`: file-wide ones, then
        its own, with file rows and years). The same whatever the number of
        workers or the cluster. For very large files use :func:`iter_batch` (same records,
        one at a time, bounded memory).

    Raises
    ------
    InputError
        The file cannot be read, a setting is out of range, dask is not installed or the
        scheduler cannot be reached.
    """
    return list(
        iter_batch(
            path_or_table,
            horizon,
            transform=transform,
            workers=workers,
            scheduler=scheduler,
            progress=progress,
            on_result=on_result,
            **compare_settings,
        )  # fmt: skip
    )

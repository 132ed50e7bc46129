"""The ``forecast`` and ``batch`` subcommands (called from ``__main__``).

Exit codes (DESIGN.md): 0 done (warnings allowed), 2 the data or the arguments cannot be used
(a plain message naming the rows, years, columns or series), 1 anything else. No traceback is
ever printed.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path
from typing import Any, TextIO

from forecasting_core._cli_args import (
    MAX_HORIZON,
    TRANSFORMS,
    _no_series,
    _opt,
    _pick_series,
    _read,
    check_csv_path,
    check_out_dir,
    parse_horizon,
    parse_ints,
    parse_reference,
    parse_transform,
    written,
)
from forecasting_core._cli_text import _batch_line, file_findings, forecast_text, hindcast_lines
from forecasting_core._cli_writers import (
    CSV_COLUMNS,
    JsonListWriter,
    _dump,
    _forecast_csv_head,
    comment_line,
    csv_line,
    csv_rows,
    safe_cell,
    write_forecast_csv,
    write_record,
)
from forecasting_core._results import CAUTIONS, InputError, frequency_of

# Re-exported: tests and benchmarks/batch_speed.py import these names from here.
__all__ = [
    "CSV_COLUMNS",
    "MAX_HORIZON",
    "TRANSFORMS",
    "JsonListWriter",
    "comment_line",
    "csv_line",
    "csv_rows",
    "forecast_text",
    "hindcast_lines",
    "parse_horizon",
    "parse_ints",
    "parse_reference",
    "parse_transform",
    "safe_cell",
    "write_forecast_csv",
]


def _guard(run, args: Any) -> int:
    try:
        # statsmodels' import adds "always" filters in front of the list: import it before
        # the "ignore" below, so that no statsmodels warning reaches the user.
        import statsmodels.tools.sm_exceptions  # noqa: F401

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return run(args)
    except InputError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("error: interrupted.", file=sys.stderr)
        return 1
    except Exception as exc:  # never a traceback
        print(f"error: the command failed ({type(exc).__name__}: {exc}).", file=sys.stderr)
        return 1


def _forecast(args: Any) -> int:
    from forecasting_core._batch import compute_one, data_warnings, with_data_warnings

    horizon = parse_horizon(_opt(args, "horizon"))
    order = parse_ints(_opt(args, "order"), 3, "--order", "1,1,0")
    seasonal = parse_ints(_opt(args, "seasonal"), 4, "--seasonal", "0,1,1,12")
    if seasonal is not None and order is None:
        raise InputError("--seasonal needs --order as well. Got --seasonal only instead.")
    transform = parse_transform(_opt(args, "transform"))
    reference = parse_reference(_opt(args, "reference"))
    csv_path = check_csv_path(_opt(args, "csv"))
    table = _read(_opt(args, "file"))
    y = _pick_series(table, _opt(args, "series"))
    settings: dict[str, Any] = {}
    freq = frequency_of(y)
    period = {"quarterly": 4, "monthly": 12}.get(freq)
    if seasonal is not None and any(seasonal[:3]) and seasonal[3] != period:
        need = f"m = {period}" if period else "no --seasonal (annual data have no season)"
        raise InputError(
            f"--seasonal {','.join(str(v) for v in seasonal)}: the series is {freq}, so it "
            f"needs {need}. Got m = {seasonal[3]} instead."
        )
    if order is not None:
        settings["order"] = order
        settings["seasonal_order"] = seasonal
    if _opt(args, "no_constant", False):
        settings["constant"] = False
    comparison, _, record = compute_one(
        y, horizon, transform=transform, reference=reference,
        data_sha256=table.sha256, source=table.source, **settings,
    )  # fmt: skip
    record = with_data_warnings(record, data_warnings(table, str(_opt(args, "series"))))
    if csv_path is not None:
        try:
            write_forecast_csv(csv_path, [record], source=table.source)
        except OSError as exc:
            raise written("--csv", csv_path, exc) from None
    if _opt(args, "json", False):
        _dump(record, sys.stdout)
    else:
        verdict = comparison.hindcast.verdict if comparison.hindcast else None
        unit = (
            table.info[str(_opt(args, "series"))].unit
            if str(_opt(args, "series")) in table.info
            else None
        )
        print(forecast_text(record, verdict, unit, comparison.hindcast))
        if csv_path is not None:
            print(f"\nForecast table written to {csv_path}")
    return 0


def _batch(args: Any) -> int:
    from forecasting_core._batch import iter_batch

    horizon = parse_horizon(_opt(args, "horizon"))
    transform = parse_transform(_opt(args, "transform"))
    workers = _opt(args, "workers")
    if workers is not None:
        try:
            workers = int(workers)
        except (TypeError, ValueError):
            workers = -1
        if workers < 1:
            raise InputError(
                f"--workers must be a positive integer. Got {_opt(args, 'workers')!r} instead."
            )
    scheduler = _opt(args, "scheduler")
    if scheduler is not None and workers is not None:
        raise InputError(
            "--workers applies to local runs only; with --scheduler the cluster's workers run "
            f"the series. Got --workers {workers} and --scheduler {scheduler} instead."
        )
    if scheduler is not None and not str(scheduler).strip():
        raise InputError("--scheduler needs an address such as tcp://host:8786. Got '' instead.")
    out_dir = check_out_dir(_opt(args, "out"))
    as_json = bool(_opt(args, "json", False))
    table = _read(_opt(args, "file"))
    if not table.info:
        raise _no_series(table)

    status: dict[str, str] = {}

    def on_result(record: dict[str, Any]) -> None:
        status[record["series"]] = "failed" if "error" in record else "done"

    def on_progress(done: int, total: int, name: str) -> None:
        print(f"[{done}/{total}] {name} {status.pop(name, 'done')}", file=sys.stderr, flush=True)

    # Records are written out as they come (file order) and not kept: only failures are.
    files: list[TextIO] = []
    models = rows = None
    partial = (
        [out_dir / "models.json.partial", out_dir / "forecasts.csv.partial"]
        if out_dir is not None
        else []
    )
    if out_dir is not None:
        try:
            out_dir.mkdir(parents=True, exist_ok=True)
            files.append(open(partial[0], "w", encoding="utf-8"))
            files.append(open(partial[1], "w", newline="", encoding="utf-8"))
        except OSError as exc:
            _close(files, partial)
            raise written("--out", out_dir, exc) from None
        models, rows = JsonListWriter(files[0]), files[1]
        _forecast_csv_head(rows, table.source)
    stdout_json = JsonListWriter(sys.stdout) if as_json else None
    shown: dict[str, None] = {} if as_json else dict.fromkeys(file_findings(table))  # once
    ok = 0
    failed: list[tuple[str, str, str]] = []
    try:
        records = iter_batch(
            table, horizon, transform=transform, workers=workers, scheduler=scheduler,
            progress=on_progress, on_result=on_result,
        )  # fmt: skip
        if not as_json:
            print(f"{table.source}: {len(table.info)} series, horizon {horizon}", flush=True)
            for line in shown:
                print(f"  {line}", flush=True)
        for r in records:
            if models is not None and rows is not None:
                models.add(r)
                write_record(rows, r)
            if stdout_json is not None:
                stdout_json.add(r)
            if "error" in r:
                failed.append((r["series"], r["error"], r.get("error_kind", "data")))
                continue
            ok += 1
            if not as_json:
                print("\n".join(_batch_line(r, shown)), flush=True)
        if models is not None:
            models.close()
        if stdout_json is not None:
            stdout_json.close()
    except BaseException:
        _close(files, partial)  # no half-written outputs left behind
        raise
    _close(files, [])
    if out_dir is not None:
        partial[0].replace(out_dir / "models.json")
        partial[1].replace(out_dir / "forecasts.csv")
    if not as_json:
        print(f"{ok} of {ok + len(failed)} series forecast.")
        if out_dir is not None:
            print(f"Written: {out_dir / 'forecasts.csv'} and {out_dir / 'models.json'}")
        print("Cautions:")
        for c in CAUTIONS:
            print(f"  - {c}")
    for name, message, _ in failed:
        print(f"failed: {name}: {message}", file=sys.stderr)
    if ok:
        return 0
    return 1 if any(kind == "internal" for *_, kind in failed) else 2


def _close(files: list[TextIO], remove: list[Path]) -> None:
    """Close the output files and delete ``remove`` (partial outputs of a failed run)."""
    for fh in files:
        fh.close()
    for path in remove:
        path.unlink(missing_ok=True)


def _cli_forecast(args: Any) -> int:
    """``forecast FILE --series NAME --horizon H ...``; returns the exit code."""
    return _guard(_forecast, args)


def _cli_batch(args: Any) -> int:
    """``batch FILE --horizon H ...``; returns the exit code."""
    return _guard(_batch, args)

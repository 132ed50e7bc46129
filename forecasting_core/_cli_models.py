"""The ``forecast`` and ``batch`` subcommands (called from ``__main__``).

Exit codes (DESIGN.md): 0 done (warnings allowed), 2 the data or the arguments cannot be used
(a plain message naming the rows, years, columns or series), 1 anything else. No traceback is
ever printed.
"""

from __future__ import annotations

import csv
import json
import math
import re
import sys
import textwrap
import warnings
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any, TextIO

from forecasting_core._results import CAUTIONS, InputError

TRANSFORMS = ("none", "log", "boxcox", "auto")
MAX_HORIZON = 30
#: Columns of the forecast CSV: the series and model, then the dashboard's order (time, step,
#: mean, median, bands, probability below the reference).
CSV_COLUMNS = (
    "series", "model", "time", "step", "mean", "median", "lo50", "hi50", "lo80", "hi80",
    "lo95", "hi95", "prob_below_reference",
)  # fmt: skip
#: A cell a spreadsheet would run as a formula starts with one of these.
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"^-?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")


# ---------------------------------------------------------------------------------------------
# Arguments
# ---------------------------------------------------------------------------------------------


def _opt(args: Any, name: str, default: Any = None) -> Any:
    return getattr(args, name, default)


def parse_horizon(value: Any) -> int:
    """``--horizon``: an integer from 1 to 30 (steps at the series' frequency)."""
    text = "" if value is None or isinstance(value, bool) else str(value).strip()
    if not re.fullmatch(r"\+?\d+", text) or not 1 <= int(text) <= MAX_HORIZON:
        shown = text if re.fullmatch(r"[+-]?\d+", text) else repr(value)
        raise InputError(
            f"--horizon must be an integer from 1 to {MAX_HORIZON}. Got {shown} instead."
        )
    return int(text)


def parse_ints(value: Any, count: int, option: str, example: str) -> tuple[int, ...] | None:
    """``--order p,d,q`` / ``--seasonal P,D,Q,m``: comma-separated non-negative integers."""
    if value is None:
        return None
    if isinstance(value, Sequence) and not isinstance(value, str):
        parts = [str(v) for v in value]
    else:
        parts = [p.strip() for p in str(value).split(",")]
    if len(parts) != count or not all(p.isdigit() for p in parts):
        raise InputError(
            f"{option} must be {count} non-negative integers separated by commas, such as "
            f"{example}. Got {value if isinstance(value, str) else ','.join(parts)!r} instead."
        )
    return tuple(int(p) for p in parts)


def parse_transform(value: Any) -> str:
    value = "auto" if value is None else str(value)
    if value not in TRANSFORMS:
        raise InputError(
            f"--transform must be one of {', '.join(TRANSFORMS)}. Got {value!r} instead."
        )
    return value


def parse_reference(value: Any) -> float | None:
    if value is None:
        return None
    try:
        ref = float(value)
    except (TypeError, ValueError):
        ref = math.nan
    if not math.isfinite(ref):
        raise InputError(
            f"--reference must be a number on the series' scale. Got {value!r} instead."
        )
    return ref


def _read(path: Any):
    from forecasting_core._table import read_table

    if path is None or not Path(str(path)).is_file():
        raise InputError(f"FILE must be an existing CSV or Excel file. Got {str(path)!r} instead.")
    return read_table(str(path))


def _no_series(table) -> InputError:
    from forecasting_core._batch import problem_text

    found = "; ".join(problem_text(p) for p in table.errors) or "no series columns were found."
    return InputError(f"the file {table.source!r} has no usable series: {found}")


def _pick_series(table, name: Any):
    if name is None:
        raise InputError("--series must name one series of the file.")
    name = str(name)
    if name in table.series:
        return table.series[name]
    if name in table.info:
        from forecasting_core._batch import unusable_message

        raise InputError(unusable_message(table, name))
    if not table.info:
        raise _no_series(table)
    names = ", ".join(table.info)
    raise InputError(f"--series must be one of {names}. Got {name!r} instead.")


# ---------------------------------------------------------------------------------------------
# Output
# ---------------------------------------------------------------------------------------------


def _decimals(values: Iterable[float]) -> int:
    finite = [abs(v) for v in values if v is not None and math.isfinite(v)]
    top = max(finite, default=1.0) or 1.0
    return int(min(4, max(0, 3 - math.floor(math.log10(top)))))


def _num(v: float | None, dec: int) -> str:
    return "-" if v is None or not math.isfinite(v) else f"{v:.{dec}f}"


def hindcast_lines(hindcast: Any) -> list[str]:
    """Score lines of a Hindcast (chosen model first), for the plain report."""
    if hindcast is None or not hindcast.scores:
        return []
    steps = f"1-{hindcast.horizon}" if hindcast.horizon > 1 else "1"
    lines = [
        f"Hindcast skill ({len(hindcast.origins)} origins, {steps} steps ahead; "
        "lower MASE is better; bands should hold about 80% and 95%):"
    ]
    width = max(len(sc.model) for sc in hindcast.scores)
    dec = _decimals(sc.rmse for sc in hindcast.scores)
    for sc in hindcast.scores:
        lines.append(
            f"  {sc.model.ljust(width)}  MASE {_num(sc.mase, 2):>6}  RMSE {_num(sc.rmse, dec):>9}"
            f"  80% band held {_num(sc.coverage80, 0):>3}%  95% band held {_num(sc.coverage95, 0):>3}%"
        )
    lines.extend(f"  (left out: {note})" for note in hindcast.skipped)
    return lines


def forecast_text(
    record: dict[str, Any],
    verdict: str | None = None,
    unit: str | None = None,
    hindcast: Any = None,
) -> str:
    """Readable report of one forecast object (``hindcast``: optional Hindcast for scores)."""
    lines = []
    unit_txt = f" ({unit})" if unit else ""
    tr = record["transform"]
    tr_txt = tr["name"] + (f", lambda {tr['lambda']:.3f}" if tr.get("lambda") is not None else "")
    lines.append(
        f"{record['series']}{unit_txt}: {record['observations']} {record['frequency']} values, "
        f"transform {tr_txt}"
    )
    model = record["model"]
    n_cand = len(record["candidates"])
    aicc = model.get("aicc")
    aicc_txt = f", AICc {aicc:.2f}" if aicc is not None else ""
    lines.append(
        f"Model: {model['label']}{aicc_txt}"
        + (f" (best of {n_cand} accepted candidates)" if n_cand > 1 else "")
    )
    if verdict:
        lines.append(f"Hindcast: {verdict}")
        lines.extend(hindcast_lines(hindcast))
    elif record.get("hindcast"):
        hc = record["hindcast"]
        lines.append(f"Hindcast over {hc['origins']} origins: MASE {_num(hc['mase'], 2)}")
    lines.append("")
    rows = record["forecast"]
    levels = sorted(rows[0]["intervals"], key=int) if rows else []
    dec = _decimals(v for r in rows for v in (r["median"], r["mean"]))
    ref = record.get("provenance", {}).get("settings", {}).get("reference")
    head = ["time", "median", "mean", *[f"{lv}% range" for lv in levels]]
    if ref is not None:
        head.append(f"P(below {ref:g})")
    table = [head]
    for r in rows:
        cells = [str(r["time"]), _num(r["median"], dec), _num(r["mean"], dec)]
        for lv in levels:
            lo, hi = r["intervals"][lv]
            cells.append(f"{_num(lo, dec)} to {_num(hi, dec)}")
        if ref is not None:
            p = r["prob_below_reference"]
            cells.append("-" if p is None else f"{100 * p:.0f}%")
        table.append(cells)
    widths = [max(len(row[i]) for row in table) for i in range(len(head))]
    for k, row in enumerate(table):
        lines.append(
            "  ".join(
                c.rjust(w) if i else c.ljust(w)
                for i, (c, w) in enumerate(zip(row, widths, strict=True))
            )
        )
        if k == 0:
            lines.append("  ".join("-" * w for w in widths))
    lines.append("")
    if record["warnings"]:
        lines.append("Warnings:")
        lines.extend(f"  - {w}" for w in record["warnings"])
    lines.append("Cautions:")
    lines.extend(f"  - {c}" for c in record.get("cautions", CAUTIONS))
    return "\n".join(lines)


def safe_cell(value: Any) -> str:
    """A CSV cell a spreadsheet will not run as a formula.

    Text starting with ``= + - @`` (or a tab or carriage return) gets a leading single
    quote, except plain numbers such as ``-0.45``, which stay numbers (common practice for
    CSV injection; OWASP "CSV Injection").
    """
    if value is None:
        return ""
    if isinstance(value, float):
        return "" if not math.isfinite(value) else repr(value)
    text = str(value)
    if text.startswith(_FORMULA_START) and not _PLAIN_NUMBER.match(text):
        return "'" + text
    return text


def csv_rows(record: dict[str, Any]) -> list[list[str]]:
    """Forecast rows of one record in :data:`CSV_COLUMNS` order."""
    out = []
    for r in record.get("forecast", []):
        row = {
            "series": record["series"],
            "model": record["model"]["label"],
            "time": r["time"],
            "step": r["step"],
            "median": r["median"],
            "mean": r["mean"],
            "prob_below_reference": r["prob_below_reference"],
        }
        for lv, (lo, hi) in r["intervals"].items():
            row[f"lo{lv}"], row[f"hi{lv}"] = lo, hi
        out.append([safe_cell(row.get(c)) for c in CSV_COLUMNS])
    return out


def comment_line(text: str) -> str:
    """``# text`` as one physical CSV line, never quoted, that no spreadsheet runs as a formula.

    ``pandas.read_csv(path, comment="#")`` skips the whole line, commas included (a quoted
    line would not start with ``#`` and would be read as data). Whitespace runs (line breaks
    too) become one space and double quotes single ones, so no quoted field can open; a
    spreadsheet may split the line at its commas, so every piece after a comma that would
    start a formula gets a single quote, as :func:`safe_cell` does for data cells.
    """
    pieces = re.sub(r"\s+", " ", str(text)).strip().replace('"', "'").split(",")
    safe = [pieces[0]] + [
        " '" + p.lstrip()
        if p.lstrip().startswith(_FORMULA_START) and not _PLAIN_NUMBER.match(p.strip())
        else p
        for p in pieces[1:]
    ]
    return "# " + ",".join(safe)


def _forecast_csv_head(fh: TextIO, source: str | None) -> None:
    """The comment lines (source, cautions) and column names of a forecast CSV.

    ``fh`` is a text file opened with ``newline=""``; lines end in ``\\r\\n`` like the csv
    module's rows.
    """
    fh.write(comment_line(f"Haulcast forecasts{' from ' + source if source else ''}") + "\r\n")
    for c in CAUTIONS:
        fh.write(comment_line(f"Caution: {c}") + "\r\n")
    csv.writer(fh).writerow(list(CSV_COLUMNS))


def write_forecast_csv(
    path: Path | str, records: Sequence[dict[str, Any]], source: str | None = None
) -> None:
    """Write forecast rows after comment lines holding the source and the cautions.

    ``pandas.read_csv(path, comment="#")`` reads the table (:data:`CSV_COLUMNS`).
    """
    with open(path, "w", newline="", encoding="utf-8") as fh:
        _forecast_csv_head(fh, source)
        w = csv.writer(fh)
        for record in records:
            w.writerows(csv_rows(record))


def _dump(obj: Any, out: TextIO) -> None:
    json.dump(obj, out, indent=2, allow_nan=False)
    out.write("\n")


# ---------------------------------------------------------------------------------------------
# Subcommands
# ---------------------------------------------------------------------------------------------


def _guard(run, args: Any) -> int:
    try:
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
    table = _read(_opt(args, "file"))
    y = _pick_series(table, _opt(args, "series"))
    settings: dict[str, Any] = {}
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
    csv_path = _opt(args, "csv")
    if csv_path:
        write_forecast_csv(csv_path, [record], source=table.source)
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
        if csv_path:
            print(f"\nForecast table written to {csv_path}")
    return 0


class JsonListWriter:
    """Write a JSON list one object at a time, byte-identical to ``json.dump(items, indent=2)``.

    The batch streams its records through this, so a batch of thousands of series never holds
    all of them in memory.
    """

    def __init__(self, out: TextIO) -> None:
        self._out, self.count = out, 0

    def add(self, obj: Any) -> None:
        text = json.dumps(obj, indent=2, allow_nan=False)
        self._out.write(("[\n" if self.count == 0 else ",\n") + textwrap.indent(text, "  "))
        self.count += 1

    def close(self) -> None:
        self._out.write("\n]\n" if self.count else "[]\n")


def _batch_line(r: dict[str, Any]) -> list[str]:
    """Readable lines of one forecast record in the batch summary."""
    first = r["forecast"][0]
    dec = _decimals([first["median"]])
    lo, hi = first["intervals"].get("80", [None, None])
    hc = r.get("hindcast") or {}
    mase = f", hindcast MASE {hc['mase']:.2f}" if hc.get("mase") is not None else ""
    lines = [
        f"  {r['series']}: {r['model']['label']}; {first['time']} median "
        f"{_num(first['median'], dec)} (80% {_num(lo, dec)} to {_num(hi, dec)}){mase}"
    ]
    lines.extend(f"      warning: {w}" for w in r["warnings"])
    return lines


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
    out_dir = _opt(args, "out")
    as_json = bool(_opt(args, "json", False))
    table = _read(_opt(args, "file"))
    if not table.info:
        raise _no_series(table)

    status: dict[str, str] = {}

    def on_result(record: dict[str, Any]) -> None:
        status[record["series"]] = "failed" if "error" in record else "done"

    def on_progress(done: int, total: int, name: str) -> None:
        print(f"[{done}/{total}] {name} {status.pop(name, 'done')}", file=sys.stderr, flush=True)

    records = iter_batch(
        table, horizon, transform=transform, workers=workers, scheduler=scheduler,
        progress=on_progress, on_result=on_result,
    )  # fmt: skip
    # Records are written out as they come (file order) and not kept: only failures are.
    files: list[TextIO] = []
    models = rows = None
    if out_dir:
        out = Path(str(out_dir))
        out.mkdir(parents=True, exist_ok=True)
        models_fh = open(out / "models.json.partial", "w", encoding="utf-8")
        files.append(models_fh)
        rows_fh = open(out / "forecasts.csv.partial", "w", newline="", encoding="utf-8")
        files.append(rows_fh)
        models, rows = JsonListWriter(models_fh), csv.writer(rows_fh)
        _forecast_csv_head(rows_fh, table.source)
    stdout_json = JsonListWriter(sys.stdout) if as_json else None
    ok = 0
    failed: list[tuple[str, str, str]] = []
    try:
        if not as_json:
            print(f"{table.source}: {len(table.info)} series, horizon {horizon}", flush=True)
        for r in records:
            if models is not None and rows is not None:
                models.add(r)
                rows.writerows(csv_rows(r) if "error" not in r else [])
            if stdout_json is not None:
                stdout_json.add(r)
            if "error" in r:
                failed.append((r["series"], r["error"], r.get("error_kind", "data")))
                continue
            ok += 1
            if not as_json:
                print("\n".join(_batch_line(r)), flush=True)
        if models is not None:
            models.close()
        if stdout_json is not None:
            stdout_json.close()
    finally:
        for fh in files:
            fh.close()
    if out_dir:
        out = Path(str(out_dir))
        (out / "models.json.partial").replace(out / "models.json")
        (out / "forecasts.csv.partial").replace(out / "forecasts.csv")
    if not as_json:
        print(f"{ok} of {ok + len(failed)} series forecast.")
        if out_dir:
            print(
                f"Written: {Path(str(out_dir)) / 'forecasts.csv'} and {Path(str(out_dir)) / 'models.json'}"
            )
        print("Cautions:")
        for c in CAUTIONS:
            print(f"  - {c}")
    for name, message, _ in failed:
        print(f"failed: {name}: {message}", file=sys.stderr)
    if ok:
        return 0
    return 1 if any(kind == "internal" for *_, kind in failed) else 2


def _cli_forecast(args: Any) -> int:
    """``forecast FILE --series NAME --horizon H ...``; returns the exit code."""
    return _guard(_forecast, args)


def _cli_batch(args: Any) -> int:
    """``batch FILE --horizon H ...``; returns the exit code."""
    return _guard(_batch, args)

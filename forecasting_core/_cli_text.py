"""Readable (plain text) reports of the ``forecast`` and ``batch`` subcommands."""

from __future__ import annotations

import math
from collections.abc import Collection, Iterable
from typing import Any

from forecasting_core._results import CAUTIONS


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
    name = str(record["series"]).rstrip()
    # The unit once: not again after a name that already ends with it (``Dorsch (t)``).
    shown = unit and not name.endswith((f"({unit})", f"[{unit}]"))
    unit_txt = f" ({unit})" if shown else ""
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


def file_findings(table: Any) -> list[str]:
    """The file check's file-wide findings as record warnings write them ("File check: ...").

    These are the problems without a series column (rows, the time column, columns that are
    not series); every batch record carries them, so the readable summary prints them once.
    """
    from forecasting_core._batch import problem_text

    return [
        f"File check: {problem_text(p)}"
        for p in table.problems
        if p.column is None or p.column not in table.info
    ]


def _batch_line(r: dict[str, Any], shown: Collection[str] = ()) -> list[str]:
    """Readable lines of one forecast record in the batch summary (without ``shown`` warnings)."""
    first = r["forecast"][0]
    lo, hi = first["intervals"].get("80", [None, None])
    dec = _decimals([first["median"], lo, hi])
    hc = r.get("hindcast") or {}
    mase = f", hindcast MASE {hc['mase']:.2f}" if hc.get("mase") is not None else ""
    lines = [
        f"  {r['series']}: {r['model']['label']}; {first['time']} median "
        f"{_num(first['median'], dec)} (80% {_num(lo, dec)} to {_num(hi, dec)}){mase}"
    ]
    lines.extend(f"      warning: {w}" for w in r["warnings"] if w not in shown)
    return lines

"""Command line: ``python -m forecasting_core check | forecast | batch``.

Exit codes: 0 done (warnings allowed), 2 the data or the arguments cannot be used (a plain
message, never a traceback), 1 anything unexpected (a one-line message asking for a report).
"""

from __future__ import annotations

import argparse
import json
import sys
import textwrap
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from forecasting_core._results import Table

# The core (pandas, scipy, statsmodels, numba) loads only once a command runs, so --help and
# argument errors answer at once.

EXIT_OK, EXIT_UNEXPECTED, EXIT_UNUSABLE = 0, 1, 2


class _Parser(argparse.ArgumentParser):
    """argparse that reports errors as one plain line plus usage and exits 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        self.exit(EXIT_UNUSABLE, f"{self.prog}: error: {message}\n")


TRANSFORMS = ("none", "log", "boxcox", "auto")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser (subcommands ``check``, ``forecast``, ``batch``).

    Values of ``forecast``/``batch`` options stay strings: ``_cli_models`` validates them and
    raises InputError with the allowed range.
    """
    parser = _Parser(
        prog="python -m forecasting_core",
        description="Haulcast core: check catch and abundance files, forecast one series or many.",
    )
    sub = parser.add_subparsers(
        dest="command", metavar="{check,forecast,batch}", parser_class=_Parser
    )
    sub.required = True

    check = sub.add_parser(
        "check", help="read a file and report its series, problems and stationarity"
    )
    check.add_argument("file", metavar="FILE", help="CSV, TSV or .xlsx file (wide or long layout)")
    check.add_argument("--json", action="store_true", help="print the report as JSON")
    check.add_argument(
        "--transform",
        choices=TRANSFORMS,
        default="auto",
        help="scale of the stationarity tests (default auto, the scale forecasts and the app use)",
    )

    fc = sub.add_parser("forecast", help="compare models for one series and forecast it")
    fc.add_argument("file", metavar="FILE", help="CSV, TSV or .xlsx file (wide or long layout)")
    fc.add_argument("--series", required=True, metavar="NAME", help="series (column or stock) name")
    fc.add_argument(
        "--horizon", required=True, metavar="H", help="steps ahead at the series' frequency (1-30)"
    )
    fc.add_argument("--order", metavar="p,d,q", help="fit this ARIMA order instead of searching")
    fc.add_argument("--seasonal", metavar="P,D,Q,m", help="seasonal order")
    fc.add_argument(
        "--transform",
        choices=TRANSFORMS,
        default="auto",
        help="transform before fitting (default auto)",
    )
    fc.add_argument("--no-constant", action="store_true", help="fit without constant/drift")
    fc.add_argument("--reference", metavar="X", help="reference level: report P(below X) per step")
    fc.add_argument("--json", action="store_true", help="print the result as JSON")
    fc.add_argument("--csv", metavar="OUT", help="also write the forecast table to this CSV file")

    batch = sub.add_parser(
        "batch", help="compare models and forecast every usable series of a file"
    )
    batch.add_argument("file", metavar="FILE", help="CSV, TSV or .xlsx file (wide or long layout)")
    batch.add_argument(
        "--horizon", required=True, metavar="H", help="steps ahead at each series' frequency (1-30)"
    )
    batch.add_argument(
        "--transform",
        choices=TRANSFORMS,
        default="auto",
        help="transform before fitting (default auto)",
    )
    batch.add_argument(
        "--workers", metavar="N", help="worker processes (default: the number of cores)"
    )
    batch.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="run on a Dask cluster instead, e.g. tcp://host:8786 (needs haulcast[cluster])",
    )
    batch.add_argument(
        "--json", action="store_true", help="print a JSON list, one object per series"
    )
    batch.add_argument("--out", metavar="DIR", help="write forecasts.csv and models.json into DIR")
    return parser


# ---------------------------------------------------------------------------------------------
# check
# ---------------------------------------------------------------------------------------------


def _stationarity(table: Table, transform: str = "auto") -> dict[str, tuple[Any, str | None]]:
    """Series name -> (StationarityReport or None, note when it could not be assessed).

    The tests run on the scale ``transform`` gives; ``auto`` is resolved per series with
    ``choose_transform`` first and its name passed on, as the app's Intake does, so ``check``
    and the app reach the same d and D.
    """
    from forecasting_core._results import InputError
    from forecasting_core._stationarity import assess_stationarity
    from forecasting_core._transform import choose_transform

    out: dict[str, tuple[Any, str | None]] = {}
    for name, series in table.series.items():
        try:
            scale = choose_transform(series, transform).name if transform == "auto" else transform
            out[name] = (assess_stationarity(series, transform=scale), None)
        except NotImplementedError:
            out[name] = (None, "stationarity checks are not available in this version")
        except InputError as exc:
            out[name] = (None, str(exc))
    return out


def check_report(table: Table, transform: str = "auto") -> dict[str, Any]:
    """The ``check --json`` object of the design contract (stationarity on ``transform``'s scale)."""
    reports = _stationarity(table, transform)
    body = table.to_dict()
    for item in body["series"]:
        report, note = reports.get(item["name"], (None, None))
        item["stationarity"] = report.to_dict() if report is not None else None
        if note and item["name"] in table.series:
            item["stationarity_note"] = note
    return body


def check_text(table: Table, transform: str = "auto") -> str:
    """The readable ``check`` report (stationarity on ``transform``'s scale)."""
    lines = [table.summary()]
    reports = _stationarity(table, transform)
    if table.series:
        lines.append("")
        lines.append(
            "Stationarity is tested on the scale forecasts use (log when every value is positive "
            "and the spread grows with the level; the app's Automatic transform)."
            if transform == "auto"
            else f"Stationarity is tested with transform {transform} (--transform {transform})."
        )
    for name in table.series:
        report, note = reports.get(name, (None, "not run"))
        lines.append("")
        if report is None:
            lines.append(f"Stationarity of {name}: not assessed ({note}).")
            continue
        head = f"Stationarity of {name}: d = {report.d}, D = {report.seasonal_d}. "
        lines.extend(textwrap.wrap(head + report.verdict, width=100, subsequent_indent="  "))
    usable, total = len(table.series), len(table.info)
    lines.append("")
    if usable:
        lines.append(f"{usable} of {total} series can be used.")
    else:
        lines.append(
            f"No series can be used ({total} found): fix the errors listed above and check again."
            if total
            else "No series was found: fix the errors listed above and check again."
        )
    return "\n".join(lines)


def _cli_check(args: argparse.Namespace) -> int:
    from forecasting_core._table import read_table

    table = read_table(args.file)
    if args.json:
        print(
            json.dumps(
                check_report(table, args.transform), indent=2, ensure_ascii=False, allow_nan=False
            )
        )
    else:
        print(check_text(table, args.transform))
    return EXIT_OK if table.series else EXIT_UNUSABLE


# ---------------------------------------------------------------------------------------------
# entry point
# ---------------------------------------------------------------------------------------------


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit code (never raises, never prints a traceback)."""
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.reconfigure(errors="replace")  # type: ignore[union-attr]
        except (AttributeError, ValueError):
            pass
    try:
        args = build_parser().parse_args(argv)
    except SystemExit as exc:  # --help (0) or a usage error (2)
        return int(exc.code) if isinstance(exc.code, int) else EXIT_UNUSABLE
    from forecasting_core._results import InputError

    try:
        if args.command == "check":
            return _cli_check(args)
        from forecasting_core import _cli_models

        if args.command == "forecast":
            return int(_cli_models._cli_forecast(args))
        return int(_cli_models._cli_batch(args))
    except InputError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_UNUSABLE
    except NotImplementedError:
        print(
            f"error: the {args.command!r} command is not available in this version yet.",
            file=sys.stderr,
        )
        return EXIT_UNEXPECTED
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return EXIT_OK
    except Exception as exc:  # the last line of defence: one line, no traceback
        print(
            f"unexpected error ({type(exc).__name__}: {exc}); please report it with the command and file used.",
            file=sys.stderr,
        )
        return EXIT_UNEXPECTED


if __name__ == "__main__":
    sys.exit(main())

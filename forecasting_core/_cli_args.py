"""Arguments of the ``forecast`` and ``batch`` subcommands, and reading their FILE.

Every check raises :class:`~forecasting_core._results.InputError` with the allowed values and
what was given (exit code 2 in ``_cli_models``).
"""

from __future__ import annotations

import math
import os
import re
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from forecasting_core._results import InputError

TRANSFORMS = ("none", "log", "boxcox", "auto")
MAX_HORIZON = 30


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


# The ranges forecasting_core._search.check_order allows (a test checks they agree), per option:
# (name of each number, its allowed values).
ORDER_RANGES: dict[str, tuple[tuple[str, range | tuple[int, ...]], ...]] = {
    "--order": (("p", range(0, 11)), ("d", range(0, 3)), ("q", range(0, 11))),
    "--seasonal": (("P", range(0, 4)), ("D", range(0, 2)), ("Q", range(0, 4)), ("m", (4, 12))),
}
_ORDINALS = ("first", "second", "third", "fourth")


def _allowed(values: range | tuple[int, ...]) -> str:
    if isinstance(values, range):
        return f"an integer from {values.start} to {values.stop - 1}"
    return " or ".join(str(v) for v in values) + " (4 for quarterly, 12 for monthly data)"


def parse_ints(value: Any, count: int, option: str, example: str) -> tuple[int, ...] | None:
    """``--order p,d,q`` / ``--seasonal P,D,Q,m``: comma-separated non-negative integers.

    Each number is checked against :data:`ORDER_RANGES`; the message names the option, the
    number and what was given ("--order 9,3,9: d, the second number, must be ..."); every
    number out of range is named in the one message.
    """
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
    numbers = tuple(int(p) for p in parts)
    bad = [
        (f"{name}, the {_ORDINALS[k]} number, must be {_allowed(values)}", str(v))
        for k, ((name, values), v) in enumerate(
            zip(ORDER_RANGES.get(option, ()), numbers, strict=False)
        )
        if v not in values
    ]
    if bad:  # every bad number is named, not only the first
        got = [v for _, v in bad]
        given = got[0] if len(got) == 1 else ", ".join(got[:-1]) + " and " + got[-1]
        raise InputError(
            f"{option} {','.join(parts)}: {'; '.join(rule for rule, _ in bad)}. "
            f"Got {given} instead."
        )
    return numbers


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


def _nearest_folder(path: Path) -> Path:
    """The closest existing ancestor of ``path`` (``.`` for a bare name)."""
    for parent in path.absolute().parents:
        if parent.exists():
            return parent
    return Path(".")


def check_csv_path(value: Any) -> Path | None:
    """``--csv OUT``: a file to write in an existing, writable folder (checked before the run)."""
    if value is None:
        return None
    text = str(value)
    if not text.strip():
        raise InputError("--csv must name a file such as forecast.csv. Got '' instead.")
    path = Path(text)
    if path.is_dir():
        raise InputError(f"--csv must name a file, not a folder. Got {text!r} (a folder) instead.")
    folder = path.absolute().parent
    if not folder.is_dir():
        raise InputError(
            f"--csv must name a file in an existing folder. Got {text!r} instead; the folder "
            f"{str(folder)!r} does not exist."
        )
    if not os.access(folder, os.W_OK) or (path.exists() and not os.access(path, os.W_OK)):
        raise InputError(
            f"--csv must name a file you may write. Got {text!r} instead (no permission)."
        )
    return path


def check_out_dir(value: Any) -> Path | None:
    """``--out DIR``: a folder (created when missing) that can be written (checked before the run)."""
    if value is None:
        return None
    text = str(value)
    if not text.strip():
        raise InputError("--out must name a folder such as results. Got '' instead.")
    path = Path(text)
    if path.exists() and not path.is_dir():
        raise InputError(f"--out must name a folder. Got {text!r} instead, which is a file.")
    folder = path if path.is_dir() else _nearest_folder(path)
    if not folder.is_dir():
        raise InputError(
            f"--out must name a folder that can be created. Got {text!r} instead; "
            f"{str(folder)!r} is not a folder."
        )
    if not os.access(folder, os.W_OK):
        raise InputError(
            f"--out must name a folder you may write. Got {text!r} instead (no permission)."
        )
    return path


def written(option: str, path: Any, exc: OSError) -> InputError:
    """The plain message for an output file that could not be written after all."""
    return InputError(
        f"{option} {str(path)!r} cannot be written: {exc.strerror or exc}. Choose another path."
    )


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
    set_aside = [p for p in table.problems if p.column == name and p.severity == "error"]
    if set_aside:  # e.g. a column whose rows have another frequency (_table_mixed)
        from dataclasses import replace

        from forecasting_core._batch import problem_text

        detail = "; ".join(problem_text(replace(p, column=None)) for p in set_aside)
        raise InputError(f"--series {name!r} was set aside when the file was read: {detail}")
    if not table.info:
        raise _no_series(table)
    names = ", ".join(table.info)
    raise InputError(f"--series must be one of {names}. Got {name!r} instead.")

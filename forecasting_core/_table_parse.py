"""Low-level reading for :mod:`forecasting_core._table`: bytes -> grid of cells, cells -> values.

Decoding, delimiter and decimal-separator detection, ``.xlsx`` reading, and the parsers for
one number cell and one time cell. Everything here is pure and never raises anything but
:class:`~forecasting_core._results.InputError`.
"""

from __future__ import annotations

import codecs
import csv
import io
import math
import re
from collections import Counter
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date, datetime
from typing import Any

from forecasting_core._results import InputError, Problem

#: A cell as read: text from a CSV; text, number or date from a spreadsheet; None when empty.
Cell = Any

#: Cell texts read as missing values (compared lower-case, after stripping).
NA_TOKENS = frozenset(
    [""]
    + "na n/a n.a. nan null none - -- --- . .. ... #n/a missing ? nd n.d. s/d #value! #div/0!".split()
)

#: Unit words accepted as a header suffix (``hake_t``, ``cpue index``), compared lower-case.
KNOWN_UNITS = frozenset(
    "t kg g mt kt tonnes tonne tons ton lb lbs pounds n no nr number count counts fish individuals thousands millions 1000t 1000s pct percent % degc °c celsius km m nm usd eur nok gbp cad hours days trips index kgperhour kg/h t/h".split()
)

_MAGIC = (
    (b"%PDF", "a PDF document"),
    (b"\x89PNG", "a PNG image"),
    (b"GIF8", "a GIF image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"\x1f\x8b", "a gzip archive"),
    (b"\xd0\xcf\x11\xe0", "an old Excel .xls (or other Office 97-2003) file"),
    (b"7z\xbc\xaf", "a 7-Zip archive"),
    (b"Rar!", "a RAR archive"),
)


@dataclass
class Grid:
    """Cells of one sheet. ``rows[i]`` is file row ``i + 1`` (as a spreadsheet numbers it)."""

    rows: list[list[Cell]]
    delimiter: str | None = None
    notes: list[Problem] = field(default_factory=list)
    #: Indexes into ``rows`` of comment lines: the line starts with ``#`` (see
    #: :func:`is_comment_cell`); in a CSV the ``#`` must not be inside quotes.
    comment_rows: set[int] = field(default_factory=set)


#: Spreadsheet error values (``#N/A``, ``#DIV/0!``, ``#VALUE!``, ``#NAME?``): cells, not comments.
_SHEET_ERROR = re.compile(r"#(?:N/A|[A-Za-z][A-Za-z0-9/_.]*[!?])")


def is_comment_cell(cell: Cell) -> bool:
    """True when a row's first cell makes it a comment line: text starting with ``#``.

    This is how ``pandas.read_csv(path, comment="#")`` and Haulcast's own exports mark such
    lines (common practice in data files); spreadsheet error values such as ``#N/A`` are cells.
    """
    if not isinstance(cell, str):
        return False
    text = cell.strip()
    return text.startswith("#") and not _SHEET_ERROR.fullmatch(text)


# ---------------------------------------------------------------------------------------------
# bytes -> text -> grid
# ---------------------------------------------------------------------------------------------


def check_not_binary(data: bytes) -> None:
    """Raise InputError when the bytes are plainly not a text table."""
    for magic, what in _MAGIC:
        if data.startswith(magic):
            hint = " Save it as .xlsx or CSV." if "xls" in what else ""
            raise InputError(
                f"the file must be a CSV/text table or an .xlsx workbook. Got {what} instead.{hint}"
            )
    if data.startswith(b"PK\x03\x04"):
        raise InputError(
            "the file must be a CSV/text table or an .xlsx workbook. Got a ZIP archive that is "
            "not a readable workbook instead."
        )


def decode(data: bytes) -> tuple[str, list[Problem]]:
    """Decode bytes: UTF-8 (with or without BOM), UTF-16 with BOM, else cp1252 / latin-1."""
    notes: list[Problem] = []
    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            text = data.decode("utf-16")
        except UnicodeDecodeError as exc:
            raise InputError(
                f"the file starts like UTF-16 text but byte {exc.start + 1} cannot be decoded. "
                "Save it as UTF-8 CSV."
            ) from None
    else:
        if b"\x00" in data[:65536]:
            raise InputError(
                "the file must be a CSV/text table or an .xlsx workbook. Got a binary file "
                "(it contains NUL bytes) instead."
            )
        raw = data[3:] if data.startswith(codecs.BOM_UTF8) else data
        try:
            text = raw.decode("utf-8")
        except UnicodeDecodeError as exc:
            bad = raw[exc.start : exc.start + 1]
            try:
                text, used = raw.decode("cp1252"), "Windows-1252 (cp1252)"
            except UnicodeDecodeError:
                text, used = raw.decode("latin-1"), "Latin-1 (ISO-8859-1)"
            line = raw[: exc.start].count(b"\n") + 1
            notes.append(
                Problem(
                    "warning",
                    f"the file is not UTF-8 (byte 0x{bad.hex()} on line {line}); it was read as "
                    f"{used}. Check that accented names look right; saving as 'CSV UTF-8' avoids this.",
                    row=line,
                )
            )
    control = sum(1 for ch in text[:65536] if ord(ch) < 32 and ch not in "\t\r\n\f\v")
    if control > max(2, 0.01 * min(len(text), 65536)):
        raise InputError(
            "the file must be a CSV/text table or an .xlsx workbook. Got a binary or "
            f"undecodable file ({control} control characters in the first 64 KB) instead."
        )
    return text, notes


def sniff_delimiter(text: str) -> str:
    """Pick the delimiter (tab, semicolon, comma or bar) that splits the lines most consistently.

    Lines starting with ``#`` (comment lines) are left out of the count.
    """
    lines = [
        line
        for line in text.splitlines()[:200]
        if line.strip() and not line.lstrip(" ").startswith("#")  # comment lines do not count
    ][:60]
    best: tuple[float, int, int] = (-1.0, 0, 0)
    choice = ","
    for pref, delim in enumerate(("\t", ";", ",", "|")):
        counts = [len(next(csv.reader([line], delimiter=delim), [])) for line in lines]
        if not counts:
            continue
        mode, _ = Counter(counts).most_common(1)[0]
        share = sum(c == mode for c in counts) / len(counts) if mode > 1 else 0.0
        if counts[0] == mode:
            share += 0.5  # the header agrees with the data
        score = (share, mode, -pref)
        if score > best:
            best, choice = score, delim
    return choice


def text_grid(text: str) -> Grid:
    """Split decoded text into rows of stripped cells (CRLF, CR and LF line ends).

    A first line ``sep=;`` (a spreadsheet's delimiter hint) sets the delimiter. Lines that start
    with an unquoted ``#`` are marked in ``Grid.comment_rows`` (a ``#`` inside a cell is text).
    """
    first = text[:8].lower()
    delim = (
        text[4]
        if first.startswith("sep=") and len(text) > 4 and text[4] not in "\r\n"
        else sniff_delimiter(text)
    )
    csv.field_size_limit(max(csv.field_size_limit(), 64 * 1024 * 1024))
    lines = io.StringIO(text, newline="")
    pulled: list[str] = []  # physical lines of the record being read (only when '#' occurs)

    def pull():
        for line in lines:
            pulled.append(line)
            yield line

    has_hash = "#" in text
    reader = csv.reader(pull() if has_hash else lines, delimiter=delim)
    rows: list[list[Cell]] = []
    notes: list[Problem] = []
    comments: set[int] = set()
    try:
        for record in reader:
            if has_hash:
                # A comment line starts with an unquoted '#': pandas' C parser keeps a quoted one.
                if pulled and pulled[0].lstrip(" ").startswith("#") and is_comment_cell(record[0]):
                    comments.add(len(rows))
                pulled.clear()
            rows.append([cell.strip() for cell in record])
            if any("\n" in c or "\r" in c for c in record):
                notes.append(
                    Problem(
                        "warning",
                        'a quoted cell spans several lines; check that a quote mark (") is not missing.',
                        row=len(rows),
                    )
                )
    except csv.Error as exc:
        raise InputError(f"row {len(rows) + 1} cannot be read as CSV: {exc}.") from None
    return Grid(rows=rows, delimiter=delim, notes=notes, comment_rows=comments)


# ---------------------------------------------------------------------------------------------
# cells
# ---------------------------------------------------------------------------------------------


def cell_text(cell: Cell) -> str:
    """The cell as an analyst would see it in the file."""
    if cell is None:
        return ""
    if isinstance(cell, float) and cell.is_integer():
        return str(int(cell))
    if isinstance(cell, datetime):
        return cell.date().isoformat() if cell.time() == datetime.min.time() else cell.isoformat()
    return str(cell)


def is_empty(cell: Cell) -> bool:
    """True for a blank cell (grid cells are already stripped)."""
    return cell is None or cell == ""


_GROUP_SPACE = re.compile(r"(?<=\d)[\s\u00a0\u202f\u2009'](?=\d{3}(?!\d))")
_SIMPLE = re.compile(r"-?\d{1,15}(?:\.\d{0,15})?")
_PLAIN = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_THOUSANDS = {
    ".": re.compile(r"[+-]?\d{1,3}(?:,\d{3})+(?:\.\d*)?"),
    ",": re.compile(r"[+-]?\d{1,3}(?:\.\d{3})+(?:,\d*)?"),
}


def parse_number(cell: Cell, decimal: str) -> tuple[str, float]:
    """Return ``("num", value)``, ``("na", nan)`` or ``("text", nan)``.

    ``decimal`` is ``"."`` or ``","``; the other mark is accepted only as a thousands separator in
    proper groups of three digits (``1,234.5`` or ``1.234,5``); spaces and apostrophes between
    digit groups are dropped as well (``1 234,5``).
    """
    if type(cell) is str:
        if decimal == "." and _SIMPLE.fullmatch(cell):  # fast path: most cells are plain numbers
            return "num", float(cell)
    elif cell is None:
        return "na", math.nan
    elif isinstance(cell, bool) or isinstance(cell, datetime | date):
        return "text", math.nan
    elif isinstance(cell, int | float):
        value = float(cell)
        if math.isnan(value):
            return "na", math.nan
        return ("num", value) if math.isfinite(value) else ("text", math.nan)
    s = str(cell).strip()
    if s.lower() in NA_TOKENS:
        return "na", math.nan
    s = _GROUP_SPACE.sub("", s).replace("\u2212", "-")
    if _THOUSANDS[decimal].fullmatch(s):
        s = s.replace("," if decimal == "." else ".", "")
    if decimal == ",":
        if "." in s:
            return "text", math.nan
        s = s.replace(",", ".")
    if not _PLAIN.fullmatch(s):
        return "text", math.nan
    try:
        value = float(s)
    except (ValueError, OverflowError):
        return "text", math.nan
    return ("num", value) if math.isfinite(value) else ("text", math.nan)


_POINT_EVIDENCE = re.compile(
    r"[+-]?(?:\d+\.\d{1,2}|\d+\.\d{4,}|\d{1,3}(?:,\d{3})+\.\d+|0\.\d+|\d{4,}\.\d+)"
)
_COMMA_EVIDENCE = re.compile(
    r"[+-]?(?:\d+,\d{1,2}|\d+,\d{4,}|\d{1,3}(?:\.\d{3})+,\d+|0,\d+|\d{4,},\d+)"
)
_AMBIGUOUS = re.compile(r"[+-]?\d{1,3}[.,]\d{3}")


def detect_decimal(cells: Iterable[Cell], delimiter: str | None) -> tuple[str, Problem | None]:
    """Choose the decimal mark from unambiguous cells (``12.5`` vs ``12,5``)."""
    point = comma = 0
    ambiguous: list[str] = []
    seen = 0
    for cell in cells:
        if not isinstance(cell, str) or not cell:
            continue
        seen += 1
        if seen > 50_000:
            break
        s = _GROUP_SPACE.sub("", cell.strip())
        if _POINT_EVIDENCE.fullmatch(s):
            point += 1
        elif _COMMA_EVIDENCE.fullmatch(s):
            comma += 1
        elif _AMBIGUOUS.fullmatch(s) and len(ambiguous) < 3:
            ambiguous.append(s)
    if point or comma:
        return ("," if comma > point else "."), None
    mark = "," if delimiter == ";" else "."
    if not ambiguous:
        return mark, None
    example = ambiguous[0]
    reading = parse_number(example, mark)[1]
    why = "the file is semicolon-separated" if mark == "," else "no cell shows a decimal comma"
    char = "," if "," in example else "."
    role = "the decimal mark" if char == mark else "a thousands separator"
    return mark, Problem(
        "warning",
        f"values such as {example!r} could mean {example.replace(',', '').replace('.', '')} or "
        f"{example.replace(',', '.')}; the {char!r} was read as {role} ({example!r} = {reading:g}) "
        f"because {why}. Check the values; writing decimals or removing thousands separators "
        "removes the doubt.",
    )


# ---------------------------------------------------------------------------------------------
# time cells
# ---------------------------------------------------------------------------------------------

YEAR_MIN, YEAR_MAX = 1800, 2100

_MONTH_NAMES = {
    m: i + 1
    for i, names in enumerate(
        [
            ("jan", "january"),
            ("feb", "february"),
            ("mar", "march"),
            ("apr", "april"),
            ("may",),
            ("jun", "june"),
            ("jul", "july"),
            ("aug", "august"),
            ("sep", "sept", "september"),
            ("oct", "october"),
            ("nov", "november"),
            ("dec", "december"),
        ]
    )
    for m in names
}
_RE_INT = re.compile(r"[+-]?\d{1,7}(?:\.0+)?")
_RE_MONTH = re.compile(r"(\d{4})\s*(?:-|/|\.|M|m|_)\s*(\d{1,2})")
_RE_QUARTER = re.compile(r"(\d{4})\s*[-/_ ]?\s*[Qq]([1-4])|[Qq]([1-4])\s*[-/_ ]?\s*(\d{4})")
_RE_DATE = re.compile(
    r"(\d{4})[-/](\d{1,2})[-/](\d{1,2})(?:[T ]\d{1,2}:\d{2}(?::\d{2}(?:\.\d+)?)?)?"
)
_RE_DMY = re.compile(r"(\d{1,2})([./-])(\d{1,2})\2(\d{4})")
_RE_NAMED_MONTH = re.compile(r"([A-Za-z]{3,9})\.?[\s-]+(\d{4})|(\d{4})[\s-]+([A-Za-z]{3,9})\.?")


def parse_time(cell: Cell) -> tuple[str, tuple[int, ...]]:
    """Classify one time cell.

    Returns ``(kind, parts)`` with kind ``"Y"`` (year,), ``"Q"`` (year, quarter), ``"M"`` (year,
    month), ``"D"`` (year, month, day), ``"range"`` (a year outside 1800-2100), ``"empty"``,
    ``"words"`` (text without digits, e.g. ``Total``) or ``"bad"`` (digits that are no time).
    """
    if type(cell) is str and len(cell) == 4 and cell.isdigit():  # fast path: a plain year
        return _year_checked("Y", (int(cell),))
    if is_empty(cell):
        return "empty", ()
    if isinstance(cell, datetime | date):
        return _year_checked("D", (cell.year, cell.month, cell.day))
    if isinstance(cell, bool):
        return "bad", ()
    if isinstance(cell, int | float):
        if isinstance(cell, float) and (not math.isfinite(cell) or not cell.is_integer()):
            return "bad", ()
        return _year_checked("Y", (int(cell),))
    s = str(cell).strip()
    if not any(ch.isdigit() for ch in s):
        return "words", ()
    if _RE_INT.fullmatch(s):
        return _year_checked("Y", (int(float(s)),))
    m = _RE_QUARTER.fullmatch(s)
    if m:
        year, q = (m.group(1), m.group(2)) if m.group(1) else (m.group(4), m.group(3))
        return _year_checked("Q", (int(year), int(q)))
    m = _RE_DATE.fullmatch(s)
    if m:
        y, mo, d = (int(g) for g in m.groups())
        try:
            date(y, mo, d)
        except ValueError:
            return "bad", ()
        return _year_checked("D", (y, mo, d))
    m = _RE_MONTH.fullmatch(s)
    if m:
        y, mo = int(m.group(1)), int(m.group(2))
        return _year_checked("M", (y, mo)) if 1 <= mo <= 12 else ("bad", ())
    m = _RE_NAMED_MONTH.fullmatch(s)
    if m:
        name, year = (m.group(1), m.group(2)) if m.group(1) else (m.group(4), m.group(3))
        mo = _MONTH_NAMES.get(name.lower())
        if mo:
            return _year_checked("M", (int(year), mo))
    m = _RE_DMY.fullmatch(s)
    if m:
        a, sep, b, y = int(m.group(1)), m.group(2), int(m.group(3)), int(m.group(4))
        if max(a, b) > 31 or min(a, b) < 1 or min(a, b) > 12:
            return "bad", ()
        return _year_checked("DX", (y, a, b, 1 if sep == "." else 0))
    return "bad", ()


def resolve_day_month(cells: Iterable[Cell]) -> tuple[bool, str | None]:
    """Decide whether ``a/b/yyyy`` dates of one column are day first.

    Dots (``01.03.2000``) are day first. Otherwise a first part above 12 means day first, a
    second part above 12 month first; if neither, the part that stays constant is the day
    (monthly data keep the day fixed). Returns (day_first, reason when it was a guess).
    """
    parts = [p for kind, p in (parse_time(c) for c in cells) if kind in ("DX",)]
    if not parts:
        return True, None
    if any(p[3] for p in parts) or any(p[1] > 12 for p in parts):
        return True, None
    if any(p[2] > 12 for p in parts):
        return False, None
    firsts, seconds = {p[1] for p in parts}, {p[2] for p in parts}
    if len(firsts) == 1 and len(seconds) > 1:
        return True, None
    if len(seconds) == 1 and len(firsts) > 1:
        return False, None
    return True, "no date shows whether the day or the month comes first"


def day_month_date(parts: Sequence[int], day_first: bool) -> tuple[str, tuple[int, ...]]:
    """Turn ``("DX", (y, a, b, dot))`` parts into a checked ``("D", (y, m, d))``."""
    y, a, b = parts[0], parts[1], parts[2]
    month, day = (b, a) if day_first else (a, b)
    try:
        date(y, month, day)
    except ValueError:
        return "bad", ()
    return "D", (y, month, day)


def _year_checked(kind: str, parts: tuple[int, ...]) -> tuple[str, tuple[int, ...]]:
    return (kind, parts) if YEAR_MIN <= parts[0] <= YEAR_MAX else ("range", parts)


def parse_month(cell: Cell, limit: int) -> int | None:
    """A month (limit 12) or quarter (limit 4) number from ``3``, ``03``, ``Mar`` or ``Q3``."""
    if isinstance(cell, int | float) and not isinstance(cell, bool):
        v = float(cell)
        return int(v) if v.is_integer() and 1 <= v <= limit else None
    s = cell_text(cell).strip().lower().rstrip(".")
    if limit == 4 and s.startswith("q"):
        s = s[1:]
    if s.isdigit():
        v = int(s)
        return v if 1 <= v <= limit else None
    return _MONTH_NAMES.get(s) if limit == 12 else None


def month_ordinal(kind: str, parts: Sequence[int]) -> int:
    """Months since year 0 (used to infer the spacing of dates)."""
    return parts[0] * 12 + (parts[1] - 1 if len(parts) > 1 else 0)


def compact(values: Sequence[int], fmt=str, sep: str = "-", limit: int = 12) -> str:
    """Write sorted integers compactly as ranges: ``1984, 1990-1992`` (at most ``limit`` parts)."""
    out: list[str] = []
    vals = sorted(set(values))
    i = 0
    while i < len(vals):
        j = i
        while j + 1 < len(vals) and vals[j + 1] == vals[j] + 1:
            j += 1
        if j == i:
            out.append(fmt(vals[i]))
        elif j == i + 1:
            out.extend([fmt(vals[i]), fmt(vals[j])])
        else:
            out.append(f"{fmt(vals[i])}{sep}{fmt(vals[j])}")
        i = j + 1
    if len(out) > limit:
        return ", ".join(out[:limit]) + f", ... ({len(vals)} in all)"
    return ", ".join(out)

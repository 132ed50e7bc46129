"""Rows -> series for :mod:`forecasting_core._table`: times, frequency, order, layouts.

``RowsMixin`` is the second half of the reader: it turns the data rows (after the header,
time column and units row are known) into wide or long series with their problems.
"""

from __future__ import annotations

import re
from collections import Counter, defaultdict

import pandas as pd

from forecasting_core._results import Problem, SeriesInfo, Table
from forecasting_core._table_mixed import mixed_frequency_problems
from forecasting_core._table_parse import (
    KNOWN_UNITS,
    cell_text,
    compact,
    day_month_date,
    is_empty,
    month_ordinal,
    parse_month,
    parse_number,
    parse_time,
    resolve_day_month,
)
from forecasting_core._table_series import Obs, build_series, label, rows_text

TIME_WORDS = set(
    "year years yr yrs date dates time period periode periodo season jahr ano año anio annee année anno jaar år aar ar vuosi rok fecha datum data zeit tid tijd fy".split()
)
MONTH_WORDS = {"month", "mes", "monat", "mois", "maand", "mese", "mnd", "maaned", "måned", "kk"}
QUARTER_WORDS = {"quarter", "qtr", "trimestre", "quartal", "kwartaal", "kvartal"}
_NAME_WORDS = set(
    "series serie stock stocks species especie especies espece espèce art arten name nombre nom navn variable item indicator bestand population run key".split()
)
_UNIT_WORDS = set(
    "unit units unidad unidades unidade einheit unite unité enhet eenheid uom".split()
)
_FREQ_OF_KIND = {"Y": "annual", "Q": "quarterly", "M": "monthly"}


def tokens(header: str) -> set[str]:
    return {t for t in re.split(r"[^0-9a-zà-öø-ÿ]+", header.lower()) if t}


def header_unit(header: str) -> str | None:
    """Unit in a header: ``landings (t)`` / ``landings [t]`` -> ``t``; ``hake_t`` -> ``t``."""
    m = re.fullmatch(r".*?[\(\[]\s*([^\)\]]+?)\s*[\)\]]\s*", header)
    if m:
        return m.group(1)
    m = re.fullmatch(r".*?[_ ]([A-Za-z0-9]+)[_ ]per[_ ]([A-Za-z0-9]+)\s*", header)
    if m and m.group(1).lower() in KNOWN_UNITS:
        return f"{m.group(1)}/{m.group(2)}"
    for sep in ("_", " "):
        if sep in header.strip():
            last = header.strip().rsplit(sep, 1)[1]
            if last.lower() in KNOWN_UNITS:
                return last
    return None


def short(text: str, limit: int = 40) -> str:
    """A cell text cut to ``limit`` characters for messages."""
    text = " ".join(text.split())
    return text if len(text) <= limit else text[: limit - 3] + "..."


class RowsMixin:
    """Row and layout steps of the reader (see :class:`forecasting_core._table._Reader`)."""

    # Set by the reader before these steps run.
    decimal: str
    raw_header: list[str]
    partner_limit: int
    file_problems: list[Problem]

    # -- rows ----------------------------------------------------------------------------
    def _read_rows(self, names, value_cols, tcol, partner, data, units_row) -> Table:
        tname = names[tcol]
        self.tcol = tcol
        misaligned = getattr(self, "misaligned", set())
        parsed: list[tuple[int, str, tuple[int, ...], list]] = []
        lost: dict[int, str] = {}  # row -> why its values cannot be placed in time
        capped = 0
        day_first, guess = resolve_day_month(cells[tcol] for _, cells in data)
        if guess:
            example = next(cell_text(c[tcol]) for _, c in data if parse_time(c[tcol])[0] == "DX")
            self.note(
                "warning",
                f"dates such as {example!r} were read day first (day/month/year) because {guess}; "
                "write dates as YYYY-MM-DD to remove the doubt.",
                column=tname,
            )
        for row, cells in data:
            kind, parts = parse_time(cells[tcol])
            raw = cell_text(cells[tcol])
            if kind == "DX":
                kind, parts = day_month_date(parts, day_first)
            if partner is not None and kind == "Y":
                sub = parse_month(cells[partner], self.partner_limit)
                if sub is None:
                    kind = "bad"
                    raw = f"{raw} {cell_text(cells[partner])}".strip()
                else:
                    kind, parts = ("M" if self.partner_limit == 12 else "Q"), (parts[0], sub)
            has_values = any(not is_empty(cells[j]) for j in value_cols)
            if row in misaligned:
                lost[row] = "it has more cells than the header"
                continue
            if kind in ("Y", "Q", "M", "D"):
                parsed.append((row, kind, parts, cells))
                continue
            if kind == "words" or (not has_values and kind in ("empty", "bad", "range")):
                # Nothing is lost: the row has no values (a note such as 'Source: ... 2018').
                what = f"{short(raw)!r} is not a time" if raw else "it has no time"
                self.note(
                    "warning",
                    f"row {row} was skipped: {what} (a total, note or footer row?).",
                    row=row,
                    column=tname,
                )
                continue
            if kind == "range":
                why = f"year {parts[0]} is outside 1800-2100"
            elif kind == "empty":
                why = "the time cell is empty"
            else:
                why = f"{short(raw)!r} is not a year, month, quarter or date"
            lost[row] = why
            if capped < 10:
                self.note(
                    "error",
                    f"row {row}: {why}; write the time as 1998, 1998-07, 1998-Q3 or 1998-07-01. The row's values were not used.",
                    row=row,
                    column=tname,
                )
            capped += 1
        if capped > 10:
            rows = [r for r in lost if r not in misaligned]
            self.note(
                "error",
                f"{capped - 10} more rows have times that cannot be read ({rows_text(rows[10:])}).",
                row=rows[10],
                column=tname,
            )

        freq, ordinals = self._frequency(parsed, tname)
        lost.update(self.mixed)
        if not freq:
            return self.table("wide", {}, {})
        n_main = sum(1 for row, k, _, _ in parsed if k == self.main_kind)
        decimal = self.decimal
        rows_ok = [
            (row, ordinals[row], cells, {j: parse_number(cells[j], decimal) for j in value_cols})
            for row, _, _, cells in parsed
            if row in ordinals
        ]
        long = self._long_roles(names, value_cols, tcol, rows_ok)
        if long is not None:
            keys = long[0]
            cells_by_row = dict(data)
            owner = {
                r: " ".join(
                    cell_text(cells_by_row[r][j]) for j in keys if not is_empty(cells_by_row[r][j])
                ).strip()
                for r in self.mixed_rows
            }
            named = {
                " ".join(cell_text(c[j]) for j in keys if not is_empty(c[j])).strip()
                for _, _, c, _ in rows_ok
            }
            self._mixed_notes(tname, n_main, owner, named)
            return self._build_long(names, long, freq, rows_ok, data, lost, tname)
        self._mixed_notes(tname, n_main)
        return self._build_wide(names, value_cols, freq, rows_ok, data, lost, units_row)

    def _mixed_notes(
        self,
        tname: str,
        n_main: int,
        owner: dict[int, str] | None = None,
        named: set[str] | None = None,
    ) -> None:
        """Report rows of another frequency than most rows (see :func:`mixed_frequency_problems`)."""
        for p in mixed_frequency_problems(
            self.mixed_rows, self.main_kind, n_main, tname, owner, named
        ):
            self.file_problems.append(p)

    def _frequency(self, parsed, tname) -> tuple[str, dict[int, int]]:
        self.mixed: dict[int, str] = {}
        if not parsed:
            self.note(
                "error",
                f"no row has a time that can be read in column {tname!r}; write times as 1998, 1998-07, 1998-Q3 or 1998-07-01.",
                column=tname,
            )
            return "", {}
        kinds = Counter(k for _, k, _, _ in parsed)
        main = kinds.most_common(1)[0][0]
        odd = [(row, k, cells) for row, k, _, cells in parsed if k != main]
        names = {"Y": "a year", "Q": "a quarter", "M": "a month", "D": "a date"}
        # Reported by _mixed_notes once the layout is known (one problem per series or file).
        self.mixed_rows = {row: (k, short(cell_text(cells[self.tcol]))) for row, k, cells in odd}
        self.main_kind = main
        self.mixed = {
            row: f"its time {short(cell_text(cells[self.tcol]))!r} is {names[k]} while most rows have {names[main]}"
            for row, k, cells in odd
        }
        good = [(row, parts) for row, k, parts, _ in parsed if k == main]
        if main == "D":
            months = sorted({month_ordinal("D", p) for _, p in good})
            steps = [b - a for a, b in zip(months, months[1:], strict=False)]
            freq = (
                "annual"
                if all(s % 12 == 0 for s in steps)
                else "quarterly"
                if all(s % 3 == 0 for s in steps)
                else "monthly"
            )
            by_month: dict[int, list[int]] = defaultdict(list)
            for row, p in good:
                by_month[month_ordinal("D", p)].append(row)
            close = [
                (m, rows)
                for m, rows in by_month.items()
                if len({tuple(p) for r, p in good if r in rows}) > 1
            ]
            if close:
                m, rows = min(close)
                self.note(
                    "error",
                    f"dates closer than one month (rows {compact(rows)} fall in {m // 12}-{m % 12 + 1:02d}); "
                    "the file must hold annual, quarterly or monthly values: add them up to months first.",
                    row=rows[0],
                    column=tname,
                )
        else:
            freq = _FREQ_OF_KIND[main]
        ordinals: dict[int, int] = {}
        for row, p in good:
            y = p[0]
            if freq == "annual":
                ordinals[row] = y
            elif freq == "quarterly":
                ordinals[row] = y * 4 + ((p[1] - 1) // 3 if main == "D" else p[1] - 1)
            else:
                ordinals[row] = y * 12 + p[1] - 1
        return freq, ordinals

    def _order_warning(self, freq: str, seq: list[tuple[int, int]], column: str | None) -> None:
        """Warn once when rows are not in time order (they are sorted)."""
        ords = [o for _, o in seq]
        if all(a <= b for a, b in zip(ords, ords[1:], strict=False)):
            return
        if all(a > b for a, b in zip(ords, ords[1:], strict=False)):
            msg = "rows run from the newest to the oldest period; they were sorted oldest first."
            self.note("warning", msg, row=seq[0][0], time=label(freq, seq[0][1]), column=column)
            return
        k = next(i for i in range(1, len(ords)) if ords[i] < ords[i - 1])
        what = f" in series {column!r}" if column else ""
        self.note(
            "warning",
            f"rows are not in time order{what}: row {seq[k][0]} ({label(freq, ords[k])}) comes after "
            f"{label(freq, ords[k - 1])}; they were sorted.",
            row=seq[k][0],
            time=label(freq, ords[k]),
            column=column,
        )

    def _exact_duplicates(self, rows_ok, key) -> list:
        seen: dict[tuple, int] = {}
        out = []
        dups: list[tuple[int, int]] = []
        for item in rows_ok:
            k = key(item)
            if k in seen:
                dups.append((item[0], seen[k]))
                continue
            seen[k] = item[0]
            out.append(item)
        for row, first in dups[:10]:
            self.note(
                "warning", f"row {row} repeats row {first} exactly; it was kept once.", row=row
            )
        if len(dups) > 10:
            self.note(
                "warning",
                f"{len(dups) - 10} more exact repeats ({rows_text([r for r, _ in dups[10:]])}) were kept once.",
                row=dups[10][0],
            )
        return out

    def _lost_problems(
        self, row_values: dict[str, list[int]], lost: dict[int, str]
    ) -> dict[str, list[Problem]]:
        out: dict[str, list[Problem]] = {}
        for name, rows in row_values.items():
            if rows:
                out[name] = [
                    Problem(
                        "error",
                        f"{rows_text(rows)} {'has a value' if len(rows) == 1 else 'have values'} for this series "
                        f"that could not be used ({lost[rows[0]]}); "
                        + (
                            "one file holds one frequency: split the file by frequency and load each part."
                            if rows[0] in self.mixed
                            else f"correct {'that row' if len(rows) == 1 else 'those rows'} so no value is lost."
                        ),
                        row=rows[0],
                        column=name,
                    )
                ]
        return out

    # -- layouts -------------------------------------------------------------------------
    @staticmethod
    def _classify(parsed: list[tuple[str, float]]) -> str:
        """``num``, ``text`` or ``empty`` for a column from its parsed cells."""
        kinds = Counter(kind for kind, _ in parsed)
        if kinds["num"] + kinds["text"] == 0:
            return "empty"
        return "num" if kinds["num"] >= 0.5 * (kinds["num"] + kinds["text"]) else "text"

    def _long_roles(self, names, value_cols, tcol, rows_ok):
        roles = {j: self._classify([p[j] for _, _, _, p in rows_ok]) for j in value_cols}
        texts = [j for j in value_cols if roles[j] == "text"]
        nums = [j for j in value_cols if roles[j] == "num"]
        if not texts or not nums:
            return None
        unit_cols = [j for j in texts if tokens(names[j]) & _UNIT_WORDS]
        if not unit_cols:
            unit_cols = [
                j
                for j in texts
                if all(
                    cell_text(cells[j]).lower() in KNOWN_UNITS
                    for _, _, cells, _ in rows_ok
                    if not is_empty(cells[j])
                )
            ]
        keys = [j for j in texts if j not in unit_cols]
        # Long when the times repeat (several series share them) and a text column repeats its
        # names; or a name-like header (``series``, ``stock``) over repeated times or one name.
        n = len(rows_ok)
        times_repeat = len({o for _, o, _, _ in rows_ok}) <= 0.75 * n
        distinct = {
            j: len({cell_text(c[j]) for _, _, c, _ in rows_ok if not is_empty(c[j])}) for j in keys
        }
        repeated = [j for j in keys if distinct[j] <= n / 2]
        named = [
            j for j in keys if tokens(names[j]) & _NAME_WORDS and (times_repeat or distinct[j] == 1)
        ]
        if named:
            return named, unit_cols[:1], nums
        if times_repeat and repeated:
            return repeated, unit_cols[:1], nums
        return None

    def _build_wide(self, names, value_cols, freq, rows_ok, data, lost, units_row) -> Table:
        rows_ok = self._exact_duplicates(
            rows_ok, key=lambda it: (it[1], tuple(it[2][j] for j in value_cols))
        )
        self._order_warning(freq, [(r, o) for r, o, _, _ in rows_ok], None)
        infos: dict[str, SeriesInfo] = {}
        series: dict[str, pd.Series] = {}
        cells_by_row = dict(data)
        file_unit = None
        for j in value_cols:
            if self._classify([p[j] for _, _, _, p in rows_ok]) != "text":
                continue
            found = {cell_text(c[j]) for _, _, c, _ in rows_ok if not is_empty(c[j])}
            if tokens(names[j]) & _UNIT_WORDS and len(found) == 1:
                file_unit = found.pop()
                self.note(
                    "warning",
                    f"column {names[j]!r} holds one unit ({file_unit!r}) for every row; it was used as "
                    "the unit of the series whose header names none.",
                    column=names[j],
                )
                value_cols = [k for k in value_cols if k != j]
                break
        for j in value_cols:
            if self._classify([p[j] for _, _, _, p in rows_ok]) == "text":
                example = next((r, cell_text(c[j])) for r, _, c, p in rows_ok if p[j][0] == "text")
                self.note(
                    "warning",
                    f"column {names[j]!r} holds text, not numbers (e.g. {short(example[1])!r} in row {example[0]}); it was not read as a series. "
                    "If it is one, write only numbers in it.",
                    row=example[0],
                    column=names[j],
                )
                continue
            obs = []
            for row, ordinal, cells, p in rows_ok:
                kind, value = p[j]
                obs.append(Obs(row, ordinal, kind, value, cell_text(cells[j])))
            lost_rows = [r for r in lost if not is_empty(cells_by_row[r][j])]
            pre = self._lost_problems({names[j]: lost_rows}, lost).get(names[j], [])
            unit = (
                units_row[1].get(j)
                if units_row and j in units_row[1]
                else header_unit(self.raw_header[j]) or file_unit
            )
            info, s = build_series(
                names[j], obs, freq, unit=unit, decimal=self.decimal, problems=pre
            )
            infos[names[j]] = info
            if s is not None:
                series[names[j]] = s
        if not infos:
            self.note(
                "error", "the file has a time column but no column of numbers to read as a series."
            )
        return self.table("wide", infos, series)

    def _build_long(self, names, roles, freq, rows_ok, data, lost, tname) -> Table:
        keys, unit_cols, nums = roles
        ucol = unit_cols[0] if unit_cols else None
        rows_ok = self._exact_duplicates(
            rows_ok, key=lambda it: (it[1], tuple(it[2][j] for j in keys + unit_cols + nums))
        )
        column_of: dict[str, int] = {}
        obs_by: dict[str, list[Obs]] = {}
        for row, ordinal, cells, p in rows_ok:
            key = " ".join(cell_text(cells[j]) for j in keys if not is_empty(cells[j])).strip()
            if not key:
                if any(not is_empty(cells[j]) for j in nums):
                    self.note(
                        "warning",
                        f"row {row} has a value but no series name ({names[keys[0]]!r} is empty); the row was skipped.",
                        row=row,
                        time=label(freq, ordinal),
                    )
                continue
            for j in nums:
                name = key if len(nums) == 1 else f"{key} {names[j]}"
                column_of.setdefault(name, j)
                kind, value = p[j]
                unit = (
                    cell_text(cells[ucol])
                    if ucol is not None and not is_empty(cells[ucol])
                    else None
                )
                obs_by.setdefault(name, []).append(
                    Obs(row, ordinal, kind, value, cell_text(cells[j]), unit)
                )
        cells_by_row = dict(data)
        lost_by: dict[str, list[int]] = defaultdict(list)
        for r in lost:
            cells = cells_by_row[r]
            key = " ".join(cell_text(cells[j]) for j in keys if not is_empty(cells[j])).strip()
            for j in nums:
                if key and not is_empty(cells[j]):
                    lost_by[key if len(nums) == 1 else f"{key} {names[j]}"].append(r)
        pre = self._lost_problems(lost_by, lost)
        infos: dict[str, SeriesInfo] = {}
        series: dict[str, pd.Series] = {}
        for name, obs in obs_by.items():
            self._order_warning(freq, [(o.row, o.ordinal) for o in obs], name)
            default_unit = header_unit(self.raw_header[column_of[name]])
            info, s = build_series(
                name, obs, freq, unit=default_unit, decimal=self.decimal, problems=pre.get(name)
            )
            infos[name] = info
            if s is not None:
                series[name] = s
        used = f"series names from {', '.join(repr(names[j]) for j in keys)}, values from {', '.join(repr(names[j]) for j in nums)}"
        if ucol is not None:
            used += f", units from {names[ucol]!r}"
        if not infos:
            self.note(
                "error", f"long layout ({used}) but no row has both a series name and a time."
            )
        return self.table("long", infos, series)

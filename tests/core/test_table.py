"""read_table: the malformed-file corpus, layouts, delimiters, decimals, encodings, xlsx.

The corpus in tests/data/bad/ holds small invented files, one defect each. Row numbers are
1-based file rows as a spreadsheet shows them (header = row 1), the convention of the issue.
Expected values of well-formed cells are written into the files by hand, so each check is
against the file content itself.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import forecasting_core as fc
from forecasting_core._table import MAX_FILE_BYTES, header_unit
from forecasting_core._table_series import MIN_OBSERVATIONS

BAD = Path(__file__).resolve().parents[1] / "data" / "bad"


@dataclass(frozen=True)
class Case:
    """One corpus file: it raises (``raises`` regex) or reads with exactly ``usable`` series."""

    file: str
    usable: tuple[str, ...] = ()
    unusable: tuple[str, ...] = ()
    # (severity, row, time, column, message regex); each must match one problem exactly.
    must: tuple[tuple[str, int | None, str | None, str | None, str], ...] = ()
    raises: str | None = None
    layout: str = "wide"
    extra: dict = field(default_factory=dict)


CASES = [
    Case(
        "duplicate_year_different_values.csv",
        ("cod_t",),
        ("hake_t",),
        (
            (
                "error",
                8,
                "1995",
                "hake_t",
                r"1995 appears in rows 7, 8 with different values: 1154\.6 \(row 7\) and 1204\.6 \(row 8\)",
            ),
            ("warning", 8, "1995", "cod_t", r"same value \(401\); it was kept once"),
        ),
    ),
    Case(
        "exact_duplicate_row.csv",
        ("hake_t", "cod_t"),
        (),
        (("warning", 8, None, None, r"row 8 repeats row 7 exactly; it was kept once"),),
    ),
    Case(
        "text_about.csv",
        ("hake_t", "cod_t"),
        (),
        (
            (
                "warning",
                8,
                "1996",
                "hake_t",
                r"'about 900' is not a number; the cell was read as missing\. If 900 is meant",
            ),
        ),
    ),
    Case(
        "text_with_unit.csv",
        ("hake_t", "cod_t"),
        (),
        (("warning", 5, "1993", "hake_t", r"'12\.5t' is not a number.*If 12\.5 is meant"),),
    ),
    Case(
        "blank_and_na.csv",
        ("hake_t", "cod_t"),
        (),
        (
            (
                "warning",
                6,
                "1994",
                "hake_t",
                r"empty or NA cells in rows 6, 11 \(1994, 1999\); kept as missing",
            ),
        ),
    ),
    Case(
        "missing_years.csv",
        ("hake_t", "cod_t"),
        (),
        (
            (
                "warning",
                None,
                "1990",
                "hake_t",
                r"4 years inside 1985-2009 have no usable row in the file: 1990, 1995-1997; kept as missing",
            ),
        ),
    ),
    Case(
        "negative_value.csv",
        ("hake_t", "cod_t"),
        (),
        (("warning", 13, "2001", "hake_t", r"1 negative value: 2001 \(row 13: -35\)"),),
    ),
    Case(
        "zero_values.csv",
        ("hake_t", "cod_t"),
        (),
        (
            (
                "warning",
                4,
                "1992",
                "hake_t",
                r"2 of 20 values are zero: 1992 \(row 4: 0\), 1993 \(row 5: 0\); zeros block the log",
            ),
        ),
    ),
    Case(
        "constant_series.csv",
        ("cod_t",),
        ("hake_t",),
        (("error", 2, "1990", "hake_t", r"all 20 values are 500; a constant series"),),
    ),
    Case(
        "too_few_annual.csv",
        (),
        ("hake_t", "cod_t"),
        (
            (
                "error",
                2,
                "2001",
                "hake_t",
                r"has 9 non-missing values \(2001-2009\); an annual series needs at least 15",
            ),
        ),
    ),
    Case(
        "too_few_monthly.csv",
        (),
        ("squid_t",),
        (
            (
                "error",
                2,
                "2020-01",
                "squid_t",
                r"has 24 non-missing values.*a monthly series needs at least 36",
            ),
        ),
    ),
    Case(
        "no_time_column.csv",
        raises=r"must have a time column .* Got columns 'stock', 'hake_t', 'cod_t' instead",
    ),
    Case("empty.csv", raises=r"the file is empty"),
    Case("blank_lines_only.csv", raises=r"the file is empty \(no cell has a value\)"),
    Case(
        "header_only.csv",
        (),
        (),
        (("error", 1, None, None, r"has a header \(row 1\) but no data rows"),),
    ),
    Case("binary_noise.csv", raises=r"Got a binary file"),
    Case("pdf_renamed.csv", raises=r"Got a PDF document instead"),
    Case("old_excel.xls", raises=r"old Excel \.xls .* Save it as \.xlsx or CSV"),
    Case(
        "cp1252_accents.csv",
        ("merluza_t", "bacalao_t"),
        (),
        (("warning", 1, None, None, r"not UTF-8 .* read as Windows-1252"),),
    ),
    Case(
        "mixed_frequency.csv",
        (),
        ("hake_t", "cod_t"),
        (
            (
                "error",
                15,
                None,
                "year",
                r"row 15: the time '2003-06' is a month but most rows have a year",
            ),
            (
                "error",
                15,
                None,
                "hake_t",
                r"row 15 has a value for this series that could not be used \(its time .2003-06. is a month",
            ),
        ),
    ),
    Case(
        "bad_time_text.csv",
        (),
        ("hake_t", "cod_t"),
        (("error", 10, None, "year", r"row 10: '199O' is not a year, month, quarter or date"),),
    ),
    Case(
        "year_out_of_range.csv",
        (),
        ("hake_t", "cod_t"),
        (("error", 17, None, "year", r"row 17: year 20055 is outside 1800-2100"),),
    ),
    Case(
        "time_cell_empty.csv",
        (),
        ("hake_t", "cod_t"),
        (("error", 12, None, "year", r"row 12: the time cell is empty"),),
    ),
    Case(
        "empty_series_column.csv",
        ("hake_t", "cod_t"),
        ("whiting_t",),
        (("error", 2, None, "whiting_t", r"has a header but no values"),),
    ),
    Case(
        "duplicate_column_names.csv",
        ("hake_t", "hake_t (column 3)"),
        (),
        (
            (
                "warning",
                1,
                None,
                "hake_t (column 3)",
                r"column 3 has the same header 'hake_t' as column 2",
            ),
        ),
    ),
    Case(
        "thousands_quoted.csv",
        ("hake_t",),
        (),
        (
            (
                "warning",
                None,
                None,
                None,
                r"'1,000' could mean 1000 or 1\.000; the ',' was read as a thousands separator",
            ),
        ),
        extra={"value": ("hake_t", "1990", 1000.0)},
    ),
    Case(
        "trailing_empty.csv",
        ("hake_t", "cod_t"),
        (),
        (
            ("warning", 1, None, None, r"empty columns 4, 5 \(no header, no values\) ignored"),
            ("warning", 22, None, None, r"empty rows were skipped: 3 at the end"),
        ),
    ),
    Case(
        "units_row.csv",
        ("hake", "cod"),
        (),
        (("warning", 2, None, None, r"row 2 looks like a units row \(hake: 't', cod: 'kg'\)"),),
        extra={"unit": ("cod", "kg")},
    ),
    Case(
        "unsorted_rows.csv",
        ("hake_t", "cod_t"),
        (),
        (
            (
                "warning",
                7,
                "1995",
                None,
                r"not in time order: row 7 \(1995\) comes after 2000; they were sorted",
            ),
        ),
    ),
    Case(
        "newest_first.csv",
        ("hake_t", "cod_t"),
        (),
        (("warning", 2, "2009", None, r"from the newest to the oldest"),),
    ),
    Case(
        "total_row.csv",
        ("hake_t", "cod_t"),
        (),
        (("warning", 22, None, "year", r"row 22 was skipped: 'Total' is not a time"),),
    ),
    Case(
        "title_lines.csv",
        ("hake_t", "cod_t"),
        (),
        (
            (
                "warning",
                1,
                None,
                None,
                r"row 1 above the header \(row 3\) was skipped as a title line",
            ),
        ),
        extra={"value": ("hake_t", "1990", 1000.0)},
    ),
    Case(
        "unquoted_decimal_comma.csv",
        (),
        ("hake_t", "cod_t"),
        (
            (
                "error",
                9,
                None,
                None,
                r"row 9 has more cells than the header's 3 \(a decimal comma in a comma-separated file\?",
            ),
        ),
    ),
    Case(
        "long_duplicate_record.csv",
        ("hake",),
        ("cod",),
        (("error", 14, "1995", "cod", r"1995 appears in rows 13, 14 with different values"),),
        layout="long",
    ),
    Case(
        "long_unit_change.csv",
        ("hake",),
        ("cod",),
        (("error", 33, "2005", "cod", r"unit changes from 't' \(row 3\) to 'kg' in row 33"),),
        layout="long",
    ),
    Case(
        "daily_dates.csv",
        (),
        ("squid_t",),
        (("error", 2, None, "date", r"dates closer than one month \(rows 2-5 fall in 2020-01\)"),),
    ),
    Case(
        "notes_column.csv",
        ("hake_t",),
        (),
        (("warning", 2, None, "remarks", r"column 'remarks' holds text, not numbers"),),
    ),
    Case(
        "series_all_text.csv",
        ("hake_t",),
        (),
        (("warning", 2, None, "cod_t", r"holds text, not numbers \(e\.g\. 'n/k' in row 2\)"),),
    ),
    Case("utf16_tab.txt", ("hake_t", "cod_t"), (), (), extra={"value": ("cod_t", "1990", 430.0)}),
    Case(
        "gappy_series.csv",
        ("hake_t",),
        (),
        (("warning", 2, "1980", "hake_t", r"17 of 39 years are missing"),),
    ),
    Case(
        "semicolon_ambiguous.csv",
        ("hake_t",),
        (),
        (
            (
                "warning",
                None,
                None,
                None,
                r"'1,100' could mean 1100 or 1\.100; the ',' was read as the decimal mark",
            ),
        ),
        extra={"value": ("hake_t", "1990", 1.1)},
    ),
    Case(
        "unclosed_quote.csv",
        (),
        ("hake_t", "cod_t"),
        (("warning", 16, None, None, r"a quoted cell spans several lines"),),
    ),
]


def _matches(problem: fc.Problem, severity, row, time, column, pattern) -> bool:
    import re

    return (
        problem.severity == severity
        and problem.row == row
        and problem.time == time
        and problem.column == column
        and re.search(pattern, problem.message) is not None
    )


def test_corpus_has_at_least_25_files_and_every_file_has_a_case():
    files = {p.name for p in BAD.iterdir() if p.is_file() and p.name != "EXPECTED.md"}
    assert len(files) >= 25
    assert files == {c.file for c in CASES}


@pytest.mark.parametrize("case", CASES, ids=[c.file for c in CASES])
def test_malformed_file_gives_the_exact_verdict(case: Case):
    path = BAD / case.file
    if case.raises:
        with pytest.raises(fc.InputError, match=case.raises):
            fc.read_table(path)
        return
    table = fc.read_table(path)
    assert table.layout == case.layout
    assert set(table.series) == set(case.usable)
    assert {n for n, i in table.info.items() if not i.usable} == set(case.unusable)
    for name in case.usable:
        assert table.info[name].usable and not any(
            p.severity == "error" for p in table.info[name].problems
        )
    for expected in case.must:
        assert any(_matches(p, *expected) for p in table.problems), (
            expected,
            [p.summary() for p in table.problems],
        )
    if "value" in case.extra:
        name, time, value = case.extra["value"]
        assert table.series[name][
            pd.Period(time, freq=table.series[name].index.freq)
        ] == pytest.approx(value)
    if "unit" in case.extra:
        name, unit = case.extra["unit"]
        assert table.info[name].unit == unit


@pytest.mark.parametrize(
    "case", [c for c in CASES if not c.raises], ids=[c.file for c in CASES if not c.raises]
)
def test_every_problem_has_a_severity_and_the_series_problems_name_their_series(case: Case):
    table = fc.read_table(BAD / case.file)
    for p in table.problems:
        assert p.severity in ("error", "warning")
        assert p.row is None or p.row >= 1
    for name, info in table.info.items():
        assert all(p.column == name for p in info.problems)


def test_the_same_bytes_read_the_same_as_the_path():
    path = BAD / "duplicate_year_different_values.csv"
    a = fc.read_table(path)
    b = fc.read_table(path.read_bytes(), name=path.name)
    assert a.sha256 == b.sha256
    assert a.problems == b.problems
    assert a.source == b.source == path.name


# ---------------------------------------------------------------------------------------------
# layouts, delimiters, decimals, encodings
# ---------------------------------------------------------------------------------------------


def _years(n: int = 20, start: int = 1990) -> list[int]:
    return list(range(start, start + n))


def _wide_text(sep=",", dec=".", nl="\n", header=("year", "hake_t", "cod_t")) -> str:
    lines = [sep.join(header)]
    for k, y in enumerate(_years()):
        lines.append(
            sep.join([str(y), f"{1000 + 10.5 * k:.1f}".replace(".", dec), f"{200 + k}{dec}25"])
        )
    return nl.join(lines) + nl


MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]
EXPECTED_HAKE = np.array([1000 + 10.5 * k for k in range(20)])


@pytest.mark.parametrize(
    ("text", "encoding"),
    [
        (_wide_text(), "utf-8"),
        (_wide_text(nl="\r\n"), "utf-8"),
        ("\ufeff" + _wide_text(), "utf-8"),
        (_wide_text(sep=";", dec=","), "utf-8"),
        ("\ufeff" + _wide_text(sep=";", dec=",", nl="\r\n"), "utf-8"),
        (_wide_text(sep="\t"), "utf-8"),
        (_wide_text(sep="\t", dec=","), "cp1252"),
        ("\ufeff" + _wide_text(sep="\t", nl="\r\n"), "utf-16-le"),
    ],
    ids=[
        "comma",
        "crlf",
        "bom",
        "semicolon-decimal-comma",
        "bom-crlf-semicolon",
        "tab",
        "tab-decimal-comma",
        "utf16",
    ],
)
def test_delimiters_decimals_and_encodings_read_the_same_values(text, encoding):
    table = fc.read_table(text.encode(encoding), name="x.csv")
    assert set(table.series) == {"hake_t", "cod_t"}
    assert not table.errors
    np.testing.assert_allclose(table.series["hake_t"].to_numpy(), EXPECTED_HAKE)
    assert table.series["cod_t"].iloc[0] == pytest.approx(200.25)
    assert table.info["hake_t"].unit == "t"


def test_series_is_float_on_a_complete_period_index_with_gaps_as_nan():
    text = "year,hake_t\n" + "".join(
        f"{y},{100 + y - 1990}\n" for y in _years() if y not in (1995, 1996)
    )
    table = fc.read_table(text.encode(), name="gaps.csv")
    s = table.series["hake_t"]
    assert isinstance(s.index, pd.PeriodIndex) and s.index.freqstr.upper().startswith("Y")
    assert s.dtype == np.float64 and s.name == "hake_t"
    assert len(s) == 20 and s.isna().sum() == 2
    assert math.isnan(s[pd.Period("1995", freq="Y")])
    info = table.info["hake_t"]
    assert (info.observations, info.missing, info.start, info.end) == (18, 2, "1990", "2009")


@pytest.mark.parametrize(
    ("cells", "frequency", "freqstr", "start"),
    [
        ([f"{2000 + k // 4}-Q{k % 4 + 1}" for k in range(24)], "quarterly", "Q-DEC", "2000-Q1"),
        ([f"{2000 + k // 4}Q{k % 4 + 1}" for k in range(24)], "quarterly", "Q-DEC", "2000-Q1"),
        ([f"{2000 + k // 12}-{k % 12 + 1:02d}" for k in range(40)], "monthly", "M", "2000-01"),
        ([f"{2000 + k // 12}-{k % 12 + 1:02d}-01" for k in range(40)], "monthly", "M", "2000-01"),
        (
            [f"{2000 + k // 4}-{3 * (k % 4) + 1:02d}-01" for k in range(24)],
            "quarterly",
            "Q-DEC",
            "2000-Q1",
        ),
        ([f"{1990 + k}-06-30" for k in range(20)], "annual", "Y-DEC", "1990"),
        ([str(1990 + k) for k in range(20)], "annual", "Y-DEC", "1990"),
        ([f"01.{k % 12 + 1:02d}.{2000 + k // 12}" for k in range(40)], "monthly", "M", "2000-01"),
        ([f"01/{k % 12 + 1:02d}/{2000 + k // 12}" for k in range(40)], "monthly", "M", "2000-01"),
        ([f"{k % 12 + 1:02d}/15/{2000 + k // 12}" for k in range(40)], "monthly", "M", "2000-01"),
        ([f"31/12/{1990 + k}" for k in range(20)], "annual", "Y-DEC", "1990"),
        ([f"{2000 + k // 12}-{MONTHS[k % 12]}" for k in range(40)], "monthly", "M", "2000-01"),
    ],
    ids=[
        "YYYY-Qn",
        "YYYYQn",
        "YYYY-MM",
        "monthly-dates",
        "quarterly-dates",
        "annual-dates",
        "years",
        "DD.MM.YYYY",
        "DD/MM/YYYY",
        "MM/DD/YYYY",
        "31/12/YYYY",
        "YYYY-Mon",
    ],
)
def test_time_formats_give_the_frequency(cells, frequency, freqstr, start):
    text = "period,value_t\n" + "".join(f"{c},{10 + (k * 7) % 13}\n" for k, c in enumerate(cells))
    table = fc.read_table(text.encode(), name="t.csv")
    info = table.info["value_t"]
    assert info.frequency == frequency and info.start == start and info.usable
    assert table.series["value_t"].index.freqstr == freqstr


def test_year_and_month_columns_combine_into_a_monthly_series():
    text = "year,month,squid_t\n" + "".join(
        f"{2000 + k // 12},{k % 12 + 1},{50 + (k * 5) % 17}\n" for k in range(40)
    )
    table = fc.read_table(text.encode(), name="ym.csv")
    assert table.info["squid_t"].frequency == "monthly"
    assert table.info["squid_t"].end == "2003-04"


def test_long_layout_with_unit_column_and_unsorted_records():
    rows = ["species;year;value;unit"]
    for y in reversed(_years()):
        rows.append(f"hake;{y};{1000 + y - 1990},5;t")
        rows.append(f"plaice;{y};{300 + 2 * (y - 1990)};kg")
    table = fc.read_table(("\n".join(rows) + "\n").encode(), name="long.csv")
    assert table.layout == "long"
    assert set(table.series) == {"hake", "plaice"}
    assert table.info["hake"].unit == "t" and table.info["plaice"].unit == "kg"
    assert table.series["hake"]["1990"] == pytest.approx(1000.5)
    assert any("newest" in p.message for p in table.warnings)


def test_long_layout_is_found_without_known_header_words():
    # A text column with repeated names, a time column with repeated times, one numeric column.
    rows = ["grp,when,tonn"] + [
        f"{s},{y},{k + (7 if s == 'sei' else 1) * (y - 1990) % 11}"
        for k, s in enumerate(("sei", "lyr"))
        for y in _years()
    ]
    table = fc.read_table(("\n".join(rows) + "\n").encode(), name="long2.csv")
    assert table.layout == "long"
    assert set(table.info) == {"sei", "lyr"}


@pytest.mark.parametrize(
    ("header", "unit"),
    [
        ("hake_t", "t"),
        ("hake (tonnes)", "tonnes"),
        ("cod [kg]", "kg"),
        ("hake_kg_per_tow", "kg/tow"),
        ("cpue_index", "index"),
        ("sea_temp_anomaly_degC", "degC"),
        ("hake", None),
        ("hake_north", None),
    ],
)
def test_header_unit_rule(header, unit):
    assert header_unit(header) == unit


def test_minimums_are_documented_per_frequency():
    assert MIN_OBSERVATIONS == {"annual": 15, "quarterly": 20, "monthly": 36}


def test_exactly_fifteen_annual_values_are_enough():
    text = "year,hake_t\n" + "".join(f"{2000 + k},{10 + k % 4}\n" for k in range(15))
    assert "hake_t" in fc.read_table(text.encode(), name="n15.csv").series
    text14 = "year,hake_t\n" + "".join(f"{2000 + k},{10 + k % 4}\n" for k in range(14))
    table = fc.read_table(text14.encode(), name="n14.csv")
    assert "hake_t" not in table.series
    assert any(
        "has 14 non-missing values" in p.message and "at least 15" in p.message
        for p in table.errors
    )


# ---------------------------------------------------------------------------------------------
# file-level limits
# ---------------------------------------------------------------------------------------------


def test_file_over_the_size_cap_raises_with_the_cap(tmp_path):
    big = tmp_path / "big.csv"
    with big.open("wb") as fh:
        fh.truncate(MAX_FILE_BYTES + 1)
    with pytest.raises(fc.InputError, match=r"at most 20 MB\. Got 20\.0 MB instead"):
        fc.read_table(big)
    with pytest.raises(fc.InputError, match=r"at most 20 MB"):
        fc.read_table(b"0" * (MAX_FILE_BYTES + 1), name="big.csv")


def test_missing_file_raises_input_error(tmp_path):
    with pytest.raises(fc.InputError, match=r"does not exist"):
        fc.read_table(tmp_path / "nope.csv")


# ---------------------------------------------------------------------------------------------
# xlsx
# ---------------------------------------------------------------------------------------------


def _workbook(path: Path, sheets: dict[str, list[list]]) -> Path:
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.Workbook()
    book.remove(book.active)
    for title, rows in sheets.items():
        sheet = book.create_sheet(title)
        for row in rows:
            sheet.append(row)
    book.save(path)
    return path


def test_xlsx_first_sheet_is_read_and_the_report_says_which(tmp_path):
    rows = [["year", "hake_t", "cod_t"]] + [
        [1990 + k, 1000 + 10.5 * k, None if k == 3 else 200 + k] for k in range(20)
    ]
    path = _workbook(tmp_path / "landings.xlsx", {"Landings": rows, "Notes": [["made by hand"]]})
    table = fc.read_table(path)
    np.testing.assert_allclose(table.series["hake_t"].to_numpy(), EXPECTED_HAKE)
    assert table.info["cod_t"].missing == 1
    assert any(p.row == 5 and p.time == "1993" for p in table.info["cod_t"].problems)
    assert any("only the first, 'Landings', was read" in p.message for p in table.warnings)


def test_xlsx_dates_and_bytes_upload(tmp_path):
    from datetime import datetime

    rows = [["date", "squid_t"]] + [
        [datetime(2000 + k // 12, k % 12 + 1, 1), 50.0 + (k * 7) % 19] for k in range(40)
    ]
    path = _workbook(tmp_path / "squid.xlsx", {"Sheet1": rows})
    table = fc.read_table(path.read_bytes(), name="squid.xlsx")
    assert table.info["squid_t"].frequency == "monthly" and table.info["squid_t"].usable


def test_damaged_xlsx_raises_input_error():
    with pytest.raises(fc.InputError, match=r"readable \.xlsx workbook"):
        fc.read_table(b"PK\x03\x04 not really a workbook", name="broken.xlsx")


# ---------------------------------------------------------------------------------------------
# a realistic spreadsheet export, layout detection limits
# ---------------------------------------------------------------------------------------------


def _german_export() -> bytes:
    # Invented figures; the shape is that of a cp1252 semicolon export with a title line, a
    # units row, thousands dots, decimal commas, a remarks column, a total row and CRLF.
    lines = [
        "Anlandungen Nordküste – vorläufige Zahlen;;;;",
        ";;;;",
        "Jahr;Seehecht;Kabeljau;Bemerkung;",
        ";t;t;;",
    ]
    for k in range(24):
        hake = f"{1200 + 37.25 * k:,.2f}".replace(",", "X").replace(".", ",").replace("X", ".")
        cod = "" if k == 7 else f"{300 + k},5"
        lines.append(f"{2001 + k};{hake};{cod};{'vorl.' if k > 20 else ''};")
    lines += ["Summe;99.999,00;7.777,0;;", ";;;;"]
    return ("\r\n".join(lines) + "\r\n").encode("cp1252")


def test_a_messy_spreadsheet_export_reads_with_warnings_only():
    table = fc.read_table(_german_export(), name="anlandungen.csv")
    assert not table.errors
    assert set(table.series) == {"Seehecht", "Kabeljau"}
    np.testing.assert_allclose(
        table.series["Seehecht"].to_numpy(), [1200 + 37.25 * k for k in range(24)]
    )
    assert table.info["Kabeljau"].unit == "t" and table.info["Kabeljau"].missing == 1
    messages = " | ".join(p.summary() for p in table.problems)
    for needle in (
        "Windows-1252",
        "row 1 above the header (row 3) was skipped",
        "row 4 looks like a units row",
        "row 29 was skipped: 'Summe' is not a time",
        "column 'Bemerkung' holds text",
        "row 12, 2008, column 'Kabeljau': empty or NA cells in row 12 (2008)",
    ):
        assert needle in messages


def test_a_wide_file_with_a_status_column_and_a_duplicated_year_stays_wide():
    rows = ["year,stock_status,hake_t"] + [
        f"{1990 + k},{'ok' if k % 3 else 'low'},{100 + k}" for k in range(20)
    ]
    rows.insert(6, "1994,ok,150")
    table = fc.read_table(("\n".join(rows) + "\n").encode(), name="status.csv")
    assert table.layout == "wide"
    assert any(
        p.severity == "error" and p.time == "1994" and p.column == "hake_t" for p in table.problems
    )


def test_the_time_column_is_found_without_a_time_header():
    rows = ["station,when,hake_t"] + [f"north,{1990 + k},{100 + (k * 7) % 11}" for k in range(20)]
    table = fc.read_table(("\n".join(rows) + "\n").encode(), name="nohdr.csv")
    assert table.info["hake_t"].start == "1990" and "hake_t" in table.series


def test_year_and_quarter_columns_combine_into_a_quarterly_series():
    text = "year,quarter,cpue\n" + "".join(
        f"{2000 + k // 4},Q{k % 4 + 1},{5 + (k * 3) % 7}\n" for k in range(24)
    )
    table = fc.read_table(text.encode(), name="yq.csv")
    assert table.info["cpue"].frequency == "quarterly" and table.info["cpue"].end == "2005-Q4"


def test_text_and_missing_cells_never_disappear_from_the_report():
    # Nothing is dropped silently: 20 rows in, 20 periods accounted for.
    text = "year,hake_t\n" + "".join(
        f"{1990 + k},{'about 900' if k == 4 else 'NA' if k == 9 else 100 + k}\n" for k in range(20)
    )
    table = fc.read_table(text.encode(), name="acc.csv")
    info = table.info["hake_t"]
    assert info.observations + info.missing == 20
    rows = {p.row for p in info.problems}
    assert {6, 11} <= rows


def test_ambiguous_day_month_dates_are_read_day_first_with_a_warning():
    cells = ["01/02/2000", "02/03/2000", "03/04/2000", "04/05/2000"]
    text = "date,squid_t\n" + "".join(f"{c},{k + 1}\n" for k, c in enumerate(cells))
    table = fc.read_table(text.encode(), name="amb.csv")
    assert any(
        "read day first" in p.message and "'01/02/2000'" in p.message for p in table.warnings
    )
    assert table.info["squid_t"].start == "2000-02"


def test_a_delimiter_hint_line_sets_the_delimiter():
    text = "sep=;\nyear;hake_t\n" + "".join(f"{1990 + k};{k % 5 + 1},5\n" for k in range(16))
    table = fc.read_table(text.encode(), name="hint.csv")
    assert table.series["hake_t"].iloc[0] == pytest.approx(1.5)


def test_a_transposed_table_is_refused_with_advice_to_transpose():
    text = "stock," + ",".join(str(1990 + k) for k in range(20)) + "\n"
    text += "hake," + ",".join(str(100 + k) for k in range(20)) + "\n"
    with pytest.raises(
        fc.InputError, match=r"times run across the header \('1990' ... '2009'\): transpose"
    ):
        fc.read_table(text.encode(), name="across.csv")


def test_xlsx_formulas_without_saved_results_are_explained(tmp_path):
    # openpyxl writes formulas without cached results, as a script-made workbook would.
    rows = [["year", "hake_t", "cod_t", "total_t"]]
    rows += [[1990 + k, 1000 + k, 400 + k, f"=B{k + 2}+C{k + 2}"] for k in range(20)]
    table = fc.read_table(_workbook(tmp_path / "f.xlsx", {"Sheet1": rows}))
    assert set(table.series) == {"hake_t", "cod_t"}
    assert any(
        p.row == 2
        and "20 cells hold formulas without saved results" in p.message
        and "'=B2+C2'" in p.message
        for p in table.warnings
    )


def test_one_xlsx_formula_without_a_saved_result_is_worded_in_the_singular(tmp_path):
    rows = [["year", "hake_t", "total_t"]]
    rows += [[1990 + k, 1000 + k, 1000 + k] for k in range(20)]
    rows[5][2] = "=B6*1"
    table = fc.read_table(_workbook(tmp_path / "one.xlsx", {"Sheet1": rows}))
    messages = [p.message for p in table.warnings if "without saved results" in p.message]
    assert messages and messages[0].startswith("1 cell holds a formula without saved results")


def test_long_layout_with_two_value_columns_gives_one_series_per_name_and_column():
    rows = ["stock,year,landings_t,effort_days"]
    rows += [
        f"{s},{1990 + k},{100 + k * (2 if s == 'a' else 3)},{50 + k % 7}"
        for s in "ab"
        for k in range(20)
    ]
    table = fc.read_table(("\n".join(rows) + "\n").encode(), name="two.csv")
    assert table.layout == "long"
    assert list(table.info) == ["a landings_t", "a effort_days", "b landings_t", "b effort_days"]
    assert table.info["b effort_days"].unit == "days"
    assert table.series["b landings_t"]["2009"] == 157


def test_a_csv_named_xlsx_is_read_as_text_with_a_warning():
    text = "year,hake_t\n" + "".join(f"{1990 + k},{100 + k % 6}\n" for k in range(20))
    table = fc.read_table(text.encode(), name="renamed.xlsx")
    assert "hake_t" in table.series
    assert any("named like a workbook but holds text" in p.message for p in table.warnings)


def test_the_time_column_with_readable_times_wins_over_another_time_like_header():
    rows = ["years_closed,year,hake_t"] + [
        f"{k % 3},{1990 + k},{100 + (k * 7) % 11}" for k in range(20)
    ]
    table = fc.read_table(("\n".join(rows) + "\n").encode(), name="two_time.csv")
    assert table.info["hake_t"].start == "1990"


def test_a_wide_unit_column_with_one_value_sets_the_unit():
    rows = ["year,landings,unit"] + [f"{1990 + k},{100 + (k * 7) % 11},tonnes" for k in range(20)]
    table = fc.read_table(("\n".join(rows) + "\n").encode(), name="unitcol.csv")
    assert table.layout == "wide" and list(table.series) == ["landings"]
    assert table.info["landings"].unit == "tonnes"
    assert any("holds one unit ('tonnes')" in p.message for p in table.warnings)

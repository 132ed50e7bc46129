"""Property tests: whatever the bytes, read_table returns a Table or raises InputError only."""

from __future__ import annotations

import string

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import forecasting_core as fc
from forecasting_core._results import Table

FUZZ = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _read(data: bytes, name: str) -> None:
    try:
        table = fc.read_table(data, name=name)
    except fc.InputError as exc:
        assert str(exc)  # a message for the analyst, never empty
        return
    assert isinstance(table, Table)
    assert set(table.series) <= set(table.info)
    for name_, series in table.series.items():
        assert series.dtype == "float64" and series.name == name_
        assert series.index.is_monotonic_increasing and series.index.is_unique
    for problem in table.problems:
        assert problem.severity in ("error", "warning") and problem.message


@FUZZ
@given(st.binary(max_size=600))
def test_random_bytes_never_raise_anything_but_input_error(data):
    _read(data, "random.csv")


@FUZZ
@given(st.binary(max_size=300))
def test_random_bytes_named_xlsx_never_raise_anything_but_input_error(data):
    _read(b"PK\x03\x04" + data, "random.xlsx")


_CELL = st.one_of(
    st.integers(min_value=-5, max_value=2200).map(str),
    st.floats(allow_nan=True, allow_infinity=True, width=32).map(lambda v: f"{v:.3g}"),
    st.sampled_from(
        [
            "",
            "NA",
            "-",
            "about 900",
            "12,5",
            "1.234,5",
            '"1,234"',
            "12.5t",
            "Total",
            "1999-13",
            "2001-Q3",
            "2001-07",
            "2001-07-15",
            "Q2 2001",
            "é",
            "\ufeff",
            "year",
            "stock",
            "unit",
            "t",
        ]
    ),
    st.text(alphabet=string.ascii_letters + string.digits + " .,;-/\t\"'", max_size=8),
)
_SEP = st.sampled_from([",", ";", "\t", "|"])
_NL = st.sampled_from(["\n", "\r\n", "\r"])


@st.composite
def csv_like(draw) -> str:
    sep, nl = draw(_SEP), draw(_NL)
    width = draw(st.integers(min_value=1, max_value=5))
    header = draw(
        st.lists(
            st.sampled_from(
                ["year", "date", "month", "hake_t", "cod (kg)", "series", "value", "unit", "", "x"]
            ),
            min_size=width,
            max_size=width,
        )
    )
    n = draw(st.integers(min_value=0, max_value=40))
    rows = [sep.join(header)]
    year0 = draw(st.integers(min_value=1790, max_value=2090))
    for k in range(n):
        cells = draw(st.lists(_CELL, min_size=0, max_size=width + 1))
        if draw(st.booleans()):
            cells = [str(year0 + k)] + cells[1:]
        rows.append(sep.join(cells))
    return nl.join(rows) + draw(st.sampled_from(["", nl]))


@FUZZ
@given(csv_like(), st.sampled_from(["utf-8", "utf-8-sig", "cp1252", "utf-16"]))
def test_random_csv_like_text_never_raises_anything_but_input_error(text, encoding):
    _read(text.encode(encoding, errors="replace"), "fuzz.csv")


@pytest.mark.parametrize("years", [20, 60])
def test_well_formed_generated_files_always_read_without_errors(years):
    # A sanity anchor for the property tests: clean files stay clean.
    text = "year,hake_t\n" + "".join(f"{1950 + k},{100 + (k * 37) % 23}\n" for k in range(years))
    table = fc.read_table(text.encode(), name="ok.csv")
    assert not table.errors and "hake_t" in table.series


@st.composite
def wide_file(draw):
    """A clean wide table written with a random delimiter, decimal mark, encoding and line end."""
    n_years = draw(st.integers(min_value=15, max_value=40))
    start = draw(st.integers(min_value=1850, max_value=2050 - n_years))
    n_series = draw(st.integers(min_value=1, max_value=4))
    values = draw(
        st.lists(
            st.lists(
                st.integers(min_value=-(10**6), max_value=10**7),
                min_size=n_series,
                max_size=n_series,
            ),
            min_size=n_years,
            max_size=n_years,
        )
    )
    sep, dec = draw(st.sampled_from([(",", "."), (";", ","), (";", "."), ("\t", "."), ("\t", ",")]))
    nl = draw(_NL)
    names = [f"stock{j}_t" for j in range(n_series)]
    lines = [sep.join(["year", *names])]
    for k, row in enumerate(values):
        cells = [f"{v / 100:.2f}".replace(".", dec) for v in row]
        lines.append(sep.join([str(start + k), *cells]))
    return nl.join(lines) + nl, start, names, values


@FUZZ
@given(wide_file(), st.sampled_from(["utf-8", "utf-8-sig", "cp1252", "utf-16"]))
def test_clean_wide_files_round_trip_exactly(spec, encoding):
    text, start, names, values = spec
    table = fc.read_table(text.encode(encoding), name="round.csv")
    for j, name in enumerate(names):
        info = table.info[name]
        assert info.start == str(start) and info.missing == 0
        got = table.series[name].to_numpy() if name in table.series else None
        column = [row[j] / 100 for row in values]
        if len(set(column)) > 1:
            assert got is not None
            assert list(got) == pytest.approx(column, abs=1e-9)

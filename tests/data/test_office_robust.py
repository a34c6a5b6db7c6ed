"""Whatever the bytes, the reader answers with a table or a DataError, never a crash."""

from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st

from explorer.data.model import DataError
from explorer.data.office import read_office_table

PIECES = [
    "District",
    "2001",
    "2002 (p)",
    "Y2003",
    "Total",
    "Ashvale 3/",
    "12,345",
    "12.345,6",
    "..",
    "(D)",
    "x",
    "-",
    "",
    "Source: Valdoria",
    "gini (%)",
    "year",
    "region",
    "\u00a0",
    '"',
    "Ørnby",
    "1)",
    "0.5",
    "-3",
    "inc2001",
    "pop2001",
]


@settings(max_examples=150, deadline=None)
@given(
    st.lists(st.lists(st.sampled_from(PIECES), max_size=6), max_size=8),
    st.sampled_from([",", ";", "\t", "|"]),
    st.one_of(st.none(), st.integers(1900, 2100)),
)
def test_office_like_noise_never_crashes(rows, delimiter, year) -> None:
    blob = "\n".join(delimiter.join(r) for r in rows).encode("utf-8")
    try:
        reading = read_office_table(blob, "noise.csv", year=year)
    except DataError as error:
        assert error.problems and all(p.message for p in error.problems)
        return
    assert list(reading.table.columns[:2]) == ["region", "year"]
    assert reading.table["year"].dtype == "int64"


@settings(max_examples=80, deadline=None)
@given(st.binary(max_size=400))
def test_random_bytes_never_crash(blob: bytes) -> None:
    try:
        read_office_table(blob, "random.csv", year=2001)
    except DataError:
        pass

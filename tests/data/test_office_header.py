"""Where the table starts and ends inside an office download."""

from __future__ import annotations

import pytest

from explorer.data.model import DataError
from explorer.data.office import read_office_table

TABLE = (
    "Table 2. Population by district\n"
    "Valdoria Province, 2001-2002\n"
    "\n"
    "District,2001,2002\n"
    "Ashvale,100,110\n"
    "Eastern districts:\n"
    "Northland,200,210\n"
    "\n"
    "Source: Valdoria Board of Statistics.\n"
    "1/ Revised.\n"
)


def test_title_rows_are_skipped_and_named() -> None:
    reading = read_office_table(TABLE.encode(), "pop.csv")
    assert reading.header_row == 4
    above = [(line, words) for _, line, words, where in reading.skipped if where == "above"]
    assert above == [(1, "Table 2. Population by district"), (2, "Valdoria Province 2001-2002")]
    assert any("2 line(s) above the header" in p.message for p in reading.notes)


def test_footnote_lines_below_are_counted_with_their_first_words() -> None:
    reading = read_office_table(TABLE.encode(), "pop.csv")
    note = next(p.message for p in reading.notes if "below the data" in p.message)
    assert note.startswith("2 line(s)")
    assert "'Source: Valdoria Board of Statistics.'" in note and "'1/ Revised.'" in note


def test_heading_line_among_the_data_is_set_aside() -> None:
    reading = read_office_table(TABLE.encode(), "pop.csv")
    among = [(line, words) for _, line, words, where in reading.skipped if where == "among"]
    assert among == [(6, "Eastern districts:")]
    assert sorted(reading.table["region"].unique()) == ["Ashvale", "Northland"]


def test_title_ending_in_a_year_is_not_data() -> None:
    text = "Income by district, 2003\nDistrict,Mean income\nAshvale,100\nNorthland,120\n"
    reading = read_office_table(text.encode(), "t.csv", year=2003)
    assert reading.header_row == 2
    assert reading.table["mean_income"].tolist() == [100.0, 120.0]


def test_header_row_can_be_overridden() -> None:
    text = "District,Code\nDistrict,2001,2002\nAshvale,1,2\nNorthland,3,4\n"
    detected = read_office_table(text.encode(), "t.csv")
    assert detected.header_row == 2
    forced = read_office_table(text.encode(), "t.csv", header_row=2)
    assert forced.table.equals(detected.table)
    with pytest.raises(DataError, match="cannot be the header"):
        read_office_table(text.encode(), "t.csv", header_row=40)


def test_no_numbers_at_all_is_a_clear_error() -> None:
    with pytest.raises(DataError, match="no data to read"):
        read_office_table(b"District,Name\nAshvale,North\n", "words.csv")

"""Raw grid of office tables: delimiters, encodings, bounds."""

from __future__ import annotations

import io

import openpyxl
import pytest

from explorer.data.model import DataError
from explorer.data.office.grid import MAX_COLUMNS, read_grids


@pytest.mark.parametrize("delimiter", [",", ";", "\t", "|"])
def test_each_delimiter_is_sniffed(delimiter: str) -> None:
    text = delimiter.join(["District", "2001", "2002"]) + "\n"
    text += delimiter.join(["Ashvale", "15", "2.5"]) + "\n"
    _, [grid] = read_grids(text.encode(), "t.txt")
    assert grid.delimiter == delimiter
    assert grid.lines[1][1][0] == "Ashvale"
    assert len(grid.lines[1][1]) == 3


def test_bom_is_dropped_and_latin1_is_the_fallback() -> None:
    _, [utf] = read_grids("\ufeffDistrict,2001\nÅsby,3\n".encode(), "a.csv")
    assert utf.encoding == "utf-8" and utf.lines[0][1][0] == "District"
    _, [latin] = read_grids("District;2001\nÅsby;3\n".encode("latin-1"), "b.csv")
    assert latin.encoding == "latin-1" and latin.lines[1][1][0] == "Åsby"


def test_utf16_text_export_is_read() -> None:
    _, [grid] = read_grids("District\t2001\nÅsby\t3\n".encode("utf-16"), "u.txt")
    assert grid.encoding == "utf-16" and grid.delimiter == "\t"
    assert grid.lines[1][1] == ("Åsby", "3")


def test_blank_lines_are_left_out_but_line_numbers_kept() -> None:
    _, [grid] = read_grids(b"Title\n\n\nDistrict,2001\nAshvale,3\n", "c.csv")
    assert [n for n, _ in grid.lines] == [1, 4, 5]


def test_too_wide_text_is_refused() -> None:
    wide = ",".join(["x"] * (MAX_COLUMNS + 1)) + "\n"
    with pytest.raises(DataError, match="columns wide"):
        read_grids(wide.encode(), "wide.csv")


def _xlsx(cells: dict[str, object]) -> bytes:
    book = openpyxl.Workbook()
    for ref, value in cells.items():
        book.active[ref] = value
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def test_far_away_cell_does_not_become_blank_rows() -> None:
    data = _xlsx({"A1": "District", "B1": 2001, "A2": "Ashvale", "B2": 3, "A200000": "note"})
    _, [grid] = read_grids(data, "far.xlsx")
    assert [n for n, _ in grid.lines] == [1, 2, 200000]
    assert grid.lines[0][1] == ("District", "2001")


def test_too_wide_sheet_is_refused_before_rows_are_built() -> None:
    book = openpyxl.Workbook()
    book.active.cell(row=1, column=MAX_COLUMNS + 5, value=1)
    buffer = io.BytesIO()
    book.save(buffer)
    with pytest.raises(DataError, match="columns wide"):
        read_grids(buffer.getvalue(), "wide.xlsx")


def test_damaged_workbook_is_a_clear_error() -> None:
    with pytest.raises(DataError, match="cannot be opened"):
        read_grids(b"PK\x03\x04 not really a zip", "broken.xlsx")

"""The non-blank rows of one worksheet, read within a bounded amount of memory.

A workbook states each sheet's used range (its ``dimension``), and openpyxl pads every row
it yields to that range: one stray cell at ``XFD1048576`` next to a table of two rows would
make it build 17 billion cells. Both table readers (:mod:`explorer.data.tables` and
:mod:`explorer.data.office.grid`) read sheets through :func:`sheet_lines`, which

- refuses a sheet whose stated used range is wider than :data:`MAX_COLUMNS` or larger than
  :data:`MAX_CELLS`, naming the sheet and the far cell, before any row is read;
- then reads with the stated range set aside (some writers state none, or a wrong one), so
  rows are never padded, keeps only rows with a non-blank cell, and applies the same bounds
  to what the rows really hold, naming the first cell past them.
"""

from __future__ import annotations

from typing import Any

from openpyxl.utils import get_column_letter

from explorer.data.model import DataError, fail

__all__ = ["MAX_CELLS", "MAX_COLUMNS", "SheetLine", "sheet_lines", "used_range_error"]

MAX_COLUMNS = 1_000  # far more than any panel or published table needs
MAX_CELLS = 2_000_000  # used range, rows x columns; larger tables belong in CSV or Parquet

#: One non-blank row of a sheet: its 1-based row number and its cells up to the last filled one.
SheetLine = tuple[int, tuple[Any, ...]]


def _blank(value: Any) -> bool:
    return value is None or (isinstance(value, str) and not value.strip())


def _cell(column: int, row: int) -> str:
    return f"{get_column_letter(min(column, 16_384))}{row}"


def used_range_error(file: str, sheet: str, columns: int, rows: int, far: str) -> DataError:
    """The problem of a sheet whose used range reaches cell ``far``: too wide or too large."""
    if columns > MAX_COLUMNS:
        why = f"{columns:,} columns wide; at most {MAX_COLUMNS:,} are read"
    else:
        why = (
            f"{rows:,} rows by {columns:,} columns, more than the {MAX_CELLS:,} cells "
            "a table of districts needs"
        )
    return fail(
        f"the used range of the sheet {sheet!r} reaches cell {far}: it is {why}",
        f"delete the rows and columns after the table (a stray value or format at {far}, "
        "say) or copy the table alone into a new sheet, save, and read it again; a larger "
        "table reads as CSV or Parquet",
        file=file,
    )


def _beyond(columns: int, rows: int) -> bool:
    return columns > MAX_COLUMNS or columns * rows > MAX_CELLS


def sheet_lines(
    sheet: Any, file: str, *, max_lines: int | None = None, last_row: int | None = None
) -> list[SheetLine]:
    """The rows of a read-only openpyxl worksheet that hold at least one non-blank cell.

    Parameters
    ----------
    sheet : openpyxl ReadOnlyWorksheet
        A sheet of a workbook opened with ``read_only=True``.
    file : str
        File name as the planner knows it, for messages.
    max_lines : int, optional
        Stop after this many non-blank rows (a look at the header only).
    last_row : int, optional
        Read no row past this one.

    Returns
    -------
    list of SheetLine
        ``(row number, values)``, trailing blank cells removed; blank rows left out.

    Raises
    ------
    DataError
        When the stated or the real used range is wider than :data:`MAX_COLUMNS` or holds
        more than :data:`MAX_CELLS` cells; the message names the sheet and the far cell.
    """
    title = sheet.title
    stated_rows, stated_columns = sheet.max_row or 0, sheet.max_column or 0
    if _beyond(stated_columns, stated_rows):
        far = _cell(stated_columns, stated_rows)
        raise used_range_error(file, title, stated_columns, stated_rows, far)
    sheet.reset_dimensions()  # rows as the file holds them, never padded to a stated range
    lines: list[SheetLine] = []
    width = 0
    for number, row in enumerate(sheet.iter_rows(max_row=last_row, values_only=True), 1):
        end = len(row)
        while end and _blank(row[end - 1]):
            end -= 1
        if not end:
            continue  # a blank row costs the loop only, never a stored row
        wider = max(width, end)
        if _beyond(wider, number):
            raise used_range_error(file, title, wider, number, _far(row, end, number))
        width = wider
        lines.append((number, tuple(row[:end])))
        if max_lines is not None and len(lines) >= max_lines:
            break
    return lines


def _far(row: tuple[Any, ...], end: int, number: int) -> str:
    """The cell of ``row`` that takes the used range past the bounds: the first filled one
    past :data:`MAX_COLUMNS` in a row too wide, else the row's first filled cell."""
    start = MAX_COLUMNS if end > MAX_COLUMNS else 0
    column = next(c for c in range(start, end) if not _blank(row[c]))
    return _cell(column + 1, number)

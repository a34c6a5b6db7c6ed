"""Where the table is inside a published grid: note and title rows above the header, the
header itself, the data lines, and the source and footnote lines below them.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from explorer.data.model import fail
from explorer.data.office.cells import is_numberlike
from explorer.data.office.grid import Grid, Line
from explorer.data.office.measures import column_role, header_year

__all__ = ["Frame", "find_frame", "first_words"]

_FOOTER_START = re.compile(
    r"^\s*(?:source|sources|note|notes|footnote|symbols?|legend|prepared|compiled|released"
    r"|\d{1,2}/|\(\w\)|[*†‡§¹²³])",
    re.IGNORECASE,
)


@dataclass(frozen=True)
class Frame:
    """The parts of one grid.

    Attributes
    ----------
    header : Line
        The header line.
    body : tuple of Line
        The data lines, in file order.
    above : tuple of Line
        Note and title lines above the header (the line just above it, when it labels blocks
        of years, is ``spanning`` instead).
    spanning : Line or None
        A line just above the header that names blocks of year columns, or that holds the
        years over a header of measures.
    between : tuple of Line
        Lines among the data that hold no values (section headings), set aside.
    below : tuple of Line
        Source and footnote lines after the last data line.
    """

    header: Line
    body: tuple[Line, ...]
    above: tuple[Line, ...]
    spanning: Line | None
    between: tuple[Line, ...]
    below: tuple[Line, ...]


def first_words(cells: tuple[str, ...], limit: int = 6) -> str:
    """The first words of a line, for a note (``"Source: Office of …"``)."""
    words = " ".join(c for c in cells if c.strip()).split()
    return " ".join(words[:limit]) + (" …" if len(words) > limit else "")


def _filled(cells: tuple[str, ...]) -> list[str]:
    return [c for c in cells if c.strip()]


def _is_year_header(cells: tuple[str, ...]) -> bool:
    """Years across (two or more), or a lone year under a column named like a district."""
    rest = _filled(cells[1:])
    years = sum(header_year(c) is not None for c in rest)
    if years == 1 and len(rest) == 1:
        return column_role(cells[0]) == "region"
    return years >= 2 and years * 2 >= len(rest)


def _is_data(cells: tuple[str, ...], decimal: str) -> bool:
    rest = _filled(cells[1:])
    if len(_filled(cells)) < 2 or not rest or _is_year_header(cells):
        return False
    numbers = sum(is_numberlike(c, decimal) for c in rest)
    return numbers >= 1 and numbers * 2 >= len(rest) and not _FOOTER_START.match(cells[0])


def _spanning(above: list[Line], header: Line) -> Line | None:
    if not above:
        return None
    number, cells = above[-1]
    labels = _filled(cells[1:])
    header_years = [header_year(c) for c in header[1][1:] if c.strip()]
    repeated = len({y[1] for y in header_years if y}) < sum(y is not None for y in header_years)
    # years above and measures in the header: ",2001,,2002" over "District,Income,Pop,…"
    years_above = sum(header_year(c) is not None for c in labels)
    years_over_measures = years_above >= 2 and years_above == len(labels) and not any(header_years)
    if (
        labels
        and (repeated or years_over_measures)
        and len(labels) < len(_filled(header[1]))
        and number == header[0] - 1
    ):
        return above[-1]
    return None


def find_frame(grid: Grid, decimal: str, header_row: int | None, file: str) -> Frame:
    """Split ``grid`` into notes, header, data and footnotes.

    Parameters
    ----------
    grid : Grid
    decimal : {".", ","}
        The file's decimal mark, to tell data cells from words.
    header_row : int, optional
        1-based line number of the header, to override the detection.
    file : str
        For messages.

    Raises
    ------
    DataError
        When no data line or no header can be found, or ``header_row`` is not a line.
    """
    lines = list(grid.lines)
    where = {number: i for i, (number, _) in enumerate(lines)}
    if header_row is not None:
        if header_row not in where:
            raise fail(
                f"line {header_row} is blank or beyond the end; it cannot be the header.",
                "Give the line number of the row that names the columns.",
                file=file,
            )
        h = where[header_row]
        start = next((i for i in range(h + 1, len(lines)) if _is_data(lines[i][1], decimal)), None)
    else:
        data = [_is_data(c, decimal) for _, c in lines]
        # a title such as "Income by district, 2003" splits into a name and a number: data
        # starts where two data lines follow each other (or at the only one there is)
        start = next((i for i in range(len(lines) - 1) if data[i] and data[i + 1]), None)
        if start is None:
            start = next((i for i in range(len(lines)) if data[i]), None)
        h = None
        if start is not None:
            h = next((i for i in range(start - 1, -1, -1) if len(_filled(lines[i][1])) >= 2), None)
    if start is None:
        raise fail(
            "no line of the table holds numbers next to a name; there is no data to read.",
            "Check that this is the table of districts, and that numbers are not stored as words.",
            file=file,
        )
    if h is None:
        raise fail(
            "no header line was found above the data.",
            "Add a line naming the columns (district, years or measures), or give the header line.",
            file=file,
            row=lines[start][0],
        )
    end = max(i for i in range(start, len(lines)) if _is_data(lines[i][1], decimal))
    body = [lines[i] for i in range(start, end + 1) if _is_data(lines[i][1], decimal)]
    between = [
        lines[i] for i in range(h + 1, end + 1) if i < start or not _is_data(lines[i][1], decimal)
    ]
    above = lines[:h]
    spanning = _spanning(above, lines[h])
    if spanning is not None:
        above = above[:-1]
    return Frame(
        lines[h], tuple(body), tuple(above), spanning, tuple(between), tuple(lines[end + 1 :])
    )

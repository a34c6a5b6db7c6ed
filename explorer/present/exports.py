"""Tables written for other programs: CSV (safe to open in a spreadsheet) and Parquet.

A spreadsheet that opens a CSV file treats a cell beginning with ``=``, ``+``, ``-`` or ``@``
(and, in some programs, a tab or carriage return) as a formula, so a district name taken from
a user's file could run as one on a colleague's machine. Every CSV written by Rift, in the app
or by the command line, therefore prefixes such text cells with a single quote, which
spreadsheets show as plain text. Numbers are left as they are (a negative number stays a
number), and Parquet keeps the raw strings: it is read by programs, not evaluated.

References
----------
.. [1] OWASP Foundation (2023). "CSV Injection". OWASP community pages,
   https://owasp.org/www-community/attacks/CSV_Injection (the characters and the single-quote
   prefix used here).
"""

from __future__ import annotations

import csv
import io
from typing import IO

import pandas as pd

__all__ = ["FORMULA_LEADS", "csv_bytes", "neutralise", "parquet_bytes", "safe_text", "write_csv"]

#: First characters that make a spreadsheet read a cell as a formula [1]_.
FORMULA_LEADS = ("=", "+", "-", "@", "\t", "\r")


def safe_text(value: object) -> object:
    """``value`` with a leading single quote when it is text that a spreadsheet would run.

    Anything that is not a string (numbers, missing values, dates) is returned unchanged.
    """
    if isinstance(value, str) and value.startswith(FORMULA_LEADS):
        return "'" + value
    return value


def _is_text(column: pd.Series) -> bool:
    return (
        pd.api.types.is_object_dtype(column)
        or pd.api.types.is_string_dtype(column)
        or isinstance(column.dtype, pd.CategoricalDtype)
    )


def neutralise(table: pd.DataFrame) -> pd.DataFrame:
    """A copy of ``table`` whose text cells and column names are safe to open in a spreadsheet.

    Only text columns are touched (numeric columns keep their dtype and values); in a column
    of mixed content only the strings are changed. The input is never modified.
    """
    safe = table.copy(deep=False)
    safe.attrs = {}
    for position in range(table.shape[1]):
        column = table.iloc[:, position]
        if not _is_text(column):
            continue
        # As plain objects: renamed categories could collide ("=a" beside "'=a").
        safe.isetitem(position, column.astype(object).map(safe_text, na_action="ignore"))
    safe.columns = [safe_text(name) if isinstance(name, str) else name for name in safe.columns]
    return safe


def write_csv(table: pd.DataFrame, target: str | IO[str]) -> None:
    """Write ``table`` as CSV (no index) to a path or an open text stream, neutralised.

    Every text cell is also put in double quotes, as the guidance recommends [1]_, so that a
    carriage return inside a cell cannot start a new row; numbers stay unquoted.
    """
    neutralise(table).to_csv(target, index=False, quoting=csv.QUOTE_NONNUMERIC)


def csv_bytes(table: pd.DataFrame) -> bytes:
    """``table`` as neutralised UTF-8 CSV bytes, for a download button."""
    buffer = io.StringIO()
    write_csv(table, buffer)
    return buffer.getvalue().encode("utf-8")


def parquet_bytes(table: pd.DataFrame) -> bytes:
    """``table`` as Parquet bytes with its strings exactly as they are."""
    plain = table.copy(deep=False)
    plain.attrs = {}
    buffer = io.BytesIO()
    plain.to_parquet(buffer, index=False)
    return buffer.getvalue()

"""Table readers: CSV (delimiter, decimal comma and encoding detected), Parquet and Excel .xlsx
into a DataFrame as the file has it, with the limits that keep memory bounded.

Nothing here checks content (that is :func:`explorer.data.validate.validate`); a cell is
typed only when its whole column reads as numbers, so text is left for validation to name.
"""

from __future__ import annotations

import csv
import io as _io
import re
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.files import at_the_edge, check_file, check_zip, label
from explorer.data.model import DataError, fail
from explorer.data.sheets import sheet_lines

__all__ = ["HEAD_LINES", "MAX_COLUMNS", "read_head", "read_table"]

MAX_COLUMNS = 1_000  # far more than any panel needs; wider files are refused early
HEAD_LINES = 20  # lines :func:`read_head` reads: the header and a few rows to type them
HEAD_BYTES = 1_000_000  # the most of a text file :func:`read_head` reads
HEAD_ROWS = 1_000  # the last row of a sheet :func:`read_head` reads, blank rows included
_DELIMITERS = (",", ";", "\t", "|")
# what statistical tables print for "no value"
_MISSING = {"", "na", "n/a", "nan", "null", "none", ".", "..", "...", ":", "-", "–"}
_COMMA_DECIMAL = re.compile(r"^[+-]?\d*,\d+$")
_POINT_DECIMAL = re.compile(r"^[+-]?\d*\.\d+$")
_THOUSANDS_POINT = re.compile(r"^[+-]?\d{1,3}(\.\d{3})+(,\d+)?$")
_LEADING_ZERO = re.compile(r"^0\d")


def _sniff(head: bytes) -> str:
    """What the first bytes say a file is, whatever its name says."""
    if head.startswith(b"PAR1"):
        return "parquet"
    if head.startswith(b"PK\x03\x04"):
        return "excel"
    return "csv"


def read_table(
    path: str | Path, *, sheet: str | int | None = None, file_label: str | None = None
) -> pd.DataFrame:
    """Read a CSV, Parquet or Excel (.xlsx) table as it is, with no checks of content.

    CSV: UTF-8 (with or without a byte-order mark), else latin-1; the delimiter among
    ``, ; tab |`` and a decimal comma are detected. Columns whose cells are all numbers
    (or empty) become numbers unless they look like codes with leading zeros; cells of
    a column that mixes numbers and text keep the text, for ``validate`` to name.
    Excel: the named ``sheet`` (name or 0-based position), else the first. Column names
    are stripped; duplicated names are kept as they are. The index is the file line
    minus 2 (the header is line 1).

    Raises
    ------
    DataError
        For a missing, oversized, empty, binary or unreadable file, or a missing sheet;
        never another exception.
    """
    return _at_the_edge(path, sheet, file_label, None)


def read_head(
    path: str | Path, *, sheet: str | int | None = None, file_label: str | None = None
) -> pd.DataFrame:
    """The header and first few rows of a table, read as :func:`read_table` reads it all.

    At most :data:`HEAD_LINES` non-blank lines are read (of a text file, at most
    :data:`HEAD_BYTES`; of a sheet, no row past :data:`HEAD_ROWS`; of Parquet, the first
    batch), so listing a large file's columns
    costs a bounded amount of memory.

    Raises
    ------
    DataError
        As :func:`read_table`.
    """
    return _at_the_edge(path, sheet, file_label, HEAD_LINES)


def _at_the_edge(path, sheet, file_label, head: int | None) -> pd.DataFrame:
    try:
        return _read_table(path, sheet=sheet, file_label=file_label, head=head)
    except DataError:
        raise
    except Exception as exc:  # noqa: BLE001 - the edge: nothing else may escape
        raise at_the_edge(file_label or Path(path).name, "table", exc) from None


def _read_table(
    path: str | Path,
    *,
    sheet: str | int | None = None,
    file_label: str | None = None,
    head: int | None = None,
) -> pd.DataFrame:
    """The reader behind :func:`read_table` (``head`` None) and :func:`read_head`."""
    p = Path(path)
    file = label(p, file_label)
    p = check_file(p, file)
    suffix = p.suffix.lower()
    kind = {".parquet": "parquet", ".pq": "parquet", ".xlsx": "excel", ".xlsm": "excel"}.get(
        suffix, "csv"
    )
    if suffix == ".xls":
        raise fail(
            "old-style .xls workbooks are not read", "save the sheet as .xlsx or .csv", file=file
        )
    try:
        with open(p, "rb") as handle:
            signature = handle.read(8)
    except OSError as exc:
        raise fail(
            f"the file cannot be opened ({exc})", "check the path and permissions", file=file
        ) from None
    if not signature:
        raise fail(
            "the file is empty: it has no header and no rows", "export the table again", file=file
        )
    sniffed = _sniff(signature)
    if kind == "excel" and sniffed != "excel":
        looks = "text (perhaps a CSV file)" if _is_text(p) else "not an Excel workbook"
        raise fail(
            f"this is not an Excel .xlsx workbook: its content is {looks}",
            "open it in a spreadsheet and save as .xlsx, or rename it to .csv if it is CSV",
            file=file,
        )
    if kind == "parquet" and sniffed != "parquet":
        raise fail(
            "this is not a Parquet file (it lacks the Parquet signature)",
            "export the table again as Parquet or CSV",
            file=file,
        )
    kind = sniffed
    if kind == "parquet":
        frame = _read_parquet(p, file, head)
    elif kind == "excel":
        frame = _read_excel(p, file, sheet, head)
    else:
        frame = _read_csv(p, file, head)
    frame.columns = [str(c).strip() for c in frame.columns]
    return frame


def _is_text(path: Path) -> bool:
    with open(path, "rb") as handle:
        chunk = handle.read(4096)
    return b"\x00" not in chunk and not chunk.startswith(b"PK")


def _decode(raw: bytes, file: str) -> str:
    if b"\x00" in raw[:65536]:
        raise fail(
            "this is not a text table: the file holds binary data",
            "export the table as CSV (comma- or semicolon-separated text), Excel .xlsx or Parquet",
            file=file,
        )
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        # latin-1 maps every byte, so this cannot fail; older office exports use it
        return raw.decode("latin-1")


def _pick_delimiter(lines: list[str]) -> str:
    best, best_score = ",", (-1, -1)
    for d in _DELIMITERS:
        try:
            counts = [len(row) for row in csv.reader(lines, delimiter=d)]
        except csv.Error:
            continue
        if not counts or counts[0] < 2:
            continue
        consistent = sum(c == counts[0] for c in counts)
        score = (consistent, counts[0])
        if score > best_score:
            best, best_score = d, score
    return best


def _decimal_style(cells: pd.DataFrame, delimiter: str) -> tuple[str, str | None]:
    """('.', None) or (',', '.' or None) from the number-like cells."""
    if delimiter == ",":
        return ".", None
    flat = pd.Series(cells.to_numpy().ravel()).astype(str).str.strip()
    comma = flat.str.match(_COMMA_DECIMAL).sum()
    point = flat.str.match(_POINT_DECIMAL).sum()
    if comma > point:
        thousands = "." if flat.str.match(_THOUSANDS_POINT).any() else None
        return ",", thousands
    return ".", None


def _type_column(values: pd.Series, decimal: str, thousands: str | None) -> pd.Series:
    """Numbers where every filled cell is a number; otherwise floats next to text.

    A column that mixes numbers and text keeps the text cells as they are, so that
    ``validate`` can name the line and the value.
    """
    text = values.astype("str").str.strip()
    missing = text.isna() | text.str.lower().isin(_MISSING)
    filled = text[~missing]
    if filled.empty:
        return pd.Series(np.nan, index=values.index, dtype=float)
    if filled.str.match(_LEADING_ZERO).any():
        return pd.Series(text.where(~missing), dtype=object)  # codes such as 0042 stay text
    norm = filled
    if thousands:
        norm = norm.str.replace(thousands, "", regex=False)
    if decimal == ",":
        norm = norm.str.replace(",", ".", regex=False)
    parsed = pd.to_numeric(norm, errors="coerce")
    ok = parsed.notna().to_numpy()
    if ok.all():
        if not missing.any():
            return pd.Series(parsed.to_numpy(), index=values.index)
        out = pd.Series(np.nan, index=values.index, dtype=float)
        out[filled.index] = parsed.to_numpy(dtype=float)
        return out
    out = pd.Series(text.where(~missing).to_numpy(dtype=object), index=values.index, dtype=object)
    if ok.any():
        out[filled.index[ok]] = parsed.to_numpy(dtype=float)[ok]
    return out


def _frame_from_rows(
    rows: pd.DataFrame,
    file: str,
    decimal: str = ".",
    thousands: str | None = None,
    numbers: np.ndarray | None = None,
) -> pd.DataFrame:
    """First row = header; later rows typed; index = file line - 2; empty lines dropped.

    ``numbers`` gives each row's line in the file when blank lines were never kept (a
    worksheet); without it the rows are the file's lines in order.
    """
    if rows.shape[0] == 0:
        raise fail(
            "the file is empty: it has no header and no rows", "export the table again", file=file
        )
    header = [
        ("" if h is None or (isinstance(h, float) and np.isnan(h)) else str(h)).strip()
        for h in rows.iloc[0].tolist()
    ]
    if len(header) > MAX_COLUMNS:
        raise fail(
            f"the table has {len(header):,} columns, more than the {MAX_COLUMNS:,} a panel "
            "can have (is this really a table? a boundary file given as the panel, say)",
            "give the panel as a table of region, year and a few value columns",
            file=file,
        )
    # One object array, sliced per column: per-column access on a wide frame of text
    # columns costs time in the square of the column count.
    cells = rows.iloc[1:].to_numpy(dtype=object)
    text = np.where(pd.isna(cells), "", cells).astype(str)
    filled = np.char.strip(text) != ""
    keep = filled.any(axis=1)
    positions = np.arange(len(text)) if numbers is None else np.asarray(numbers[1:]) - 2
    lines = positions[keep]  # line - 2
    # trailing columns that are empty and unnamed (a stray delimiter) are noise
    while header and header[-1] == "" and not filled[:, len(header) - 1].any():
        header.pop()
    text = text[keep]
    cols = {
        i: _type_column(pd.Series(text[:, i], index=lines, dtype=object), decimal, thousands)
        for i in range(len(header))
    }
    frame = pd.DataFrame(cols, index=lines)
    frame.columns = [h or f"unnamed_{i + 1}" for i, h in enumerate(header)]
    return frame


#: Text files at least this large are first tried as a plain table (one header line, then
#: rows): streamed typed into compact columns (:mod:`explorer.data.csv_stream`), without
#: holding every cell as text.
PLAIN_READ_BYTES = 4_000_000
_DECIMAL_ROWS = 199  # rows the careful reader looks at to tell a decimal comma


def _plain_csv(path: Path, file: str) -> pd.DataFrame | None:
    """A large CSV streamed typed, or None when it is not a plain table.

    Holding every cell of a large unit-record file as text first costs dozens of times the
    file's size; a plain table (UTF-8, a full header on line 1, numbers with a decimal
    point or a decimal comma and no thousands separator) is streamed into numbers and
    categorical text instead (:func:`explorer.data.csv_stream.read_planned`), giving what
    the careful reader gives. A file the stream cannot read exactly so (a text cell in a
    number column, a quoted line break) makes this return None, and the careful reader,
    which names each such line, reads the file.
    """
    from explorer.data.csv_stream import Plan, read_planned

    with path.open("rb") as handle:
        start = handle.read(HEAD_BYTES)
    if len(start) == HEAD_BYTES and b"\n" in start:
        start = start[: start.rindex(b"\n") + 1]
    try:
        text = start.decode("utf-8-sig")
    except UnicodeDecodeError:
        return None
    lines = text.splitlines()
    if len(lines) < 3 or not lines[0].strip():
        return None
    delimiter = _pick_delimiter([ln for ln in lines[:50] if ln.strip()])
    sample = list(csv.reader(lines[: min(len(lines), 2000)], delimiter=delimiter))
    header = [h.strip() for h in sample[0]]
    if len(header) < 2 or len(header) > MAX_COLUMNS or any(not h for h in header):
        return None
    if len(set(h.lower() for h in header)) < len(header):
        return None
    body = [row for row in sample[1:] if any(c.strip() for c in row)]
    if not body or any(len(row) != len(header) for row in body):
        return None
    frame_sample = pd.DataFrame(body, columns=header)
    decimal, thousands = _decimal_style(
        pd.DataFrame([r for r in sample[1 : _DECIMAL_ROWS + 1] if len(r) == len(header)]),
        delimiter,
    )
    if thousands is not None:
        return None  # thousands separators: the stream parses plain numbers only
    numeric = []
    for name in header:
        typed = _type_column(frame_sample[name], decimal, None)
        if pd.api.types.is_numeric_dtype(typed.dtype) and typed.notna().any():
            numeric.append(name)
    missing = sorted(_MISSING | {m.upper() for m in _MISSING} | {m.title() for m in _MISSING})
    plan = Plan(
        header=tuple(header),
        delimiter=delimiter,
        decimal=decimal,
        numeric=frozenset(numeric),
        missing=tuple(missing),
        type_text=lambda cells: _type_column(cells, decimal, None),
        line_bytes=len(start) / max(len(lines), 1),
    )
    return read_planned(path, file, plan)


def _read_csv(path: Path, file: str, head: int | None = None) -> pd.DataFrame:
    if head is None:
        try:
            large = path.stat().st_size >= PLAIN_READ_BYTES
        except OSError:
            large = False
        plain = _plain_csv(path, file) if large else None
        if plain is not None:
            return plain
    try:
        if head is None:
            raw = path.read_bytes()
        else:
            with path.open("rb") as handle:
                raw = handle.read(HEAD_BYTES)
            if len(raw) == HEAD_BYTES and b"\n" in raw:
                raw = raw[: raw.rindex(b"\n") + 1]  # no line cut in two
    except OSError as exc:
        raise fail(
            f"the file cannot be read ({exc})", "check the path and permissions", file=file
        ) from None
    text = _decode(raw, file)
    if not text.strip():
        raise fail(
            "the file is empty: it has no header and no rows", "export the table again", file=file
        )
    if head is not None:
        text = "\n".join(text.splitlines()[: head + 1]) + "\n"
    lines = [ln for ln in text.splitlines()[:50] if ln.strip()]
    delimiter = _pick_delimiter(lines)
    try:
        rows = pd.read_csv(
            _io.StringIO(text),
            sep=delimiter,
            header=None,
            dtype=str,
            keep_default_na=False,
            na_filter=False,
            skip_blank_lines=False,
            engine="c",
        )
    except pd.errors.EmptyDataError:
        raise fail(
            "the file is empty: it has no header and no rows", "export the table again", file=file
        ) from None
    except (pd.errors.ParserError, ValueError, csv.Error) as exc:
        m = re.search(r"line (\d+), saw (\d+)", str(exc))
        row = int(m.group(1)) if m else None
        detail = f"line {row} has {m.group(2)} fields, more than the header" if m else str(exc)
        raise fail(
            f"the table cannot be parsed: {detail}",
            "every line needs the same number of fields as the header; quote text that contains the delimiter",
            file=file,
            row=row,
        ) from None
    # the header row decides the width; pandas pads short lines with empty cells
    sample = rows.iloc[1:200]
    decimal, thousands = _decimal_style(sample, delimiter)
    return _frame_from_rows(rows, file, decimal, thousands)


def _read_parquet(path: Path, file: str, head: int | None = None) -> pd.DataFrame:
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        if head is None:
            table = pq.read_table(path)
        else:
            parquet = pq.ParquetFile(path)
            batch = next(parquet.iter_batches(batch_size=head), None)
            table = parquet.schema_arrow.empty_table() if batch is None else pa.table(batch)
        frame = table.to_pandas(ignore_metadata=True)  # no pandas metadata is trusted
    except (pa.ArrowException, OSError, ValueError, TypeError) as exc:
        raise fail(
            f"the Parquet file cannot be read ({exc})",
            "export the table again as Parquet or CSV",
            file=file,
        ) from None
    frame = frame.reset_index(drop=True)
    for c in frame.columns:
        if frame[c].dtype == object or pd.api.types.is_string_dtype(frame[c].dtype):
            frame[c] = _type_column(frame[c], ".", None)
    return frame


def _cell_text(v: Any) -> str | None:
    if v is None or isinstance(v, str):
        return v
    if isinstance(v, float):
        return repr(v)
    return str(v)


def _read_excel(
    path: Path, file: str, sheet: str | int | None, max_lines: int | None = None
) -> pd.DataFrame:
    import openpyxl

    check_zip(path, file)
    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many types for damaged workbooks
        raise fail(
            f"the Excel workbook cannot be read ({type(exc).__name__}: {exc})",
            "open it in a spreadsheet and save it again as .xlsx",
            file=file,
        ) from None
    try:
        names = book.sheetnames
        if sheet is None:
            chosen = names[0]
        elif isinstance(sheet, int) or (
            isinstance(sheet, str) and sheet.isdigit() and sheet not in names
        ):
            i = int(sheet)
            if not 0 <= i < len(names):
                raise fail(
                    f"the workbook has no sheet number {i}; its sheets are: {', '.join(names)}",
                    "choose one of these sheets",
                    file=file,
                )
            chosen = names[i]
        elif sheet in names:
            chosen = sheet
        else:
            raise fail(
                f"the workbook has no sheet {sheet!r}; its sheets are: {', '.join(names)}",
                "choose one of these sheets",
                file=file,
            )
        try:
            last_row = None if max_lines is None else HEAD_ROWS
            lines = sheet_lines(book[chosen], file, max_lines=max_lines, last_row=last_row)
        except DataError:
            raise
        except Exception as exc:
            raise fail(
                f"the sheet {chosen!r} cannot be read ({type(exc).__name__}: {exc})",
                "save the workbook again as .xlsx",
                file=file,
            ) from None
    finally:
        book.close()
    if not lines:
        raise fail(
            f"the sheet {chosen!r} is empty: it has no header and no rows",
            "choose the sheet that holds the table",
            file=file,
        )
    if lines[0][0] != 1:
        lines.insert(0, (1, ()))  # the header is line 1, even when that line is blank
    width = max(len(cells) for _, cells in lines)
    grid = pd.DataFrame(
        [list(cells) + [None] * (width - len(cells)) for _, cells in lines], dtype=object
    )
    # cells as text, so one typing rule serves CSV and Excel alike
    grid = grid.map(_cell_text)
    return _frame_from_rows(grid, file, numbers=np.array([n for n, _ in lines]))

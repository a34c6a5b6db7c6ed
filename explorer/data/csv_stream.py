"""A large delimited text table read batch by batch into compact columns.

The careful reader (:func:`explorer.data.tables.read_table`) holds every cell as text
before it types a column, which for a file of millions of unit records costs dozens of
times the file's size. Here the file is streamed (``pyarrow.csv.open_csv``) with each
column's type fixed beforehand from a sample (:class:`Plan`): numbers are parsed
straight into floats and kept, batch by batch, in the smallest type that holds them
exactly (whole numbers as 8-, 16- or 32-bit integers), text into categorical codes. The
text of the table is never held: peak memory is about the size of the typed columns.

The result is the careful reader's frame, value for value (index = file line - 2, blank
lines dropped, short lines padded, text stripped, missing-value words as missing), only
in compact types. Whatever this reader cannot give exactly as the careful one would (a
text cell in a number column, a quoted line break, many odd lines) makes it return None,
and the careful reader, which names each such line, reads the file instead.
"""

from __future__ import annotations

import csv
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from explorer.data.model import fail

__all__ = ["BLOCK_BYTES", "ODD_LINES", "Plan", "read_planned"]

BLOCK_BYTES = 256 << 10  # text parsed at a time: the only part of the file held as text
ODD_LINES = 1_000  # short or blank-with-spaces lines taken care of before giving up
_SCAN_BYTES = 8 << 20  # chunk of the file read when looking up the text of a few lines
_INTS = (np.int8, np.int16, np.int32)


@dataclass(frozen=True)
class Plan:
    """How to read a table, decided from its first lines.

    Attributes
    ----------
    header : tuple of str
        Column names (stripped, unique), from line 1.
    delimiter, decimal : str
        The field delimiter, and ``.`` or ``,`` as the decimal mark.
    numeric : frozenset of str
        Columns read as numbers; the others are read as text.
    missing : tuple of str
        Cells that mean "no value" (every spelling to match exactly).
    type_text : callable
        The careful reader's rule typing a column of text (stripped, missing words
        removed): numbers when all its cells are numbers, text when none is.
    line_bytes : float
        Mean bytes per line of the sample, to size the columns for the whole file.
    """

    header: tuple[str, ...]
    delimiter: str
    decimal: str
    numeric: frozenset[str]
    missing: tuple[str, ...]
    type_text: Callable[[pd.Series], pd.Series]
    line_bytes: float = 64.0


class _GiveUp(Exception):
    """The careful reader must read this file."""


def read_planned(path: Path, file: str, plan: Plan) -> pd.DataFrame | None:
    """The table at ``path`` read as ``plan`` says, or None when the careful reader must.

    Raises
    ------
    DataError
        For a line with more fields than the header, as the careful reader does.
    """
    try:
        return _read(path, file, plan)
    except _GiveUp:
        return None


def _read(path: Path, file: str, plan: Plan) -> pd.DataFrame:
    import pyarrow as pa
    import pyarrow.csv as pacsv

    odd: list[tuple[int, int, str]] = []  # (line, fields, text) of lines of another width

    def on_odd(row) -> str:
        odd.append((row.number, row.actual_columns, row.text))
        return "skip" if len(odd) <= ODD_LINES and row.number is not None else "error"

    names = list(plan.header)
    types = {
        n: pa.float64() if n in plan.numeric else pa.dictionary(pa.int32(), pa.string())
        for n in names
    }
    rows = _expected_rows(path, plan)
    columns = {n: _Numbers(rows) if n in plan.numeric else _Text(rows) for n in names}
    n = 0
    try:
        reader = pacsv.open_csv(
            path,
            read_options=pacsv.ReadOptions(
                skip_rows=1, column_names=names, block_size=BLOCK_BYTES, use_threads=False
            ),
            parse_options=pacsv.ParseOptions(
                delimiter=plan.delimiter,
                newlines_in_values=False,  # a quoted line break shows as odd lines: careful way
                ignore_empty_lines=False,  # an empty line stays a row, so lines keep count
                invalid_row_handler=on_odd,
            ),
            convert_options=pacsv.ConvertOptions(
                column_types=types,
                null_values=list(plan.missing),
                strings_can_be_null=True,
                quoted_strings_can_be_null=True,
                decimal_point=plan.decimal,
            ),
        )
        with reader:
            for batch in reader:
                n += batch.num_rows
                for name, column in zip(names, batch.columns, strict=True):
                    columns[name].add(column)
    except (pa.ArrowException, UnicodeDecodeError, OSError, ValueError) as exc:
        raise _GiveUp from exc
    finally:
        pa.default_memory_pool().release_unused()  # the parse buffers, back to the system
    lines, short = _odd_lines(odd, n, len(names), plan, file)
    frame = {name: columns.pop(name).finish(plan) for name in names}
    if short:
        lines = _with_short_lines(frame, lines, short, plan)
    index = pd.RangeIndex(n) if lines is None else pd.Index(lines - 2)
    blank = _blank_rows(frame, lines, path, plan.delimiter)
    if blank is not None:
        keep = ~blank
        index = index[keep]
        for name in names:  # one column at a time: one column's copy at most
            frame[name] = frame[name][keep]
    return pd.DataFrame(frame, index=index, copy=False)


def _expected_rows(path: Path, plan: Plan) -> int:
    """Rows the file should hold, from its size and the sample's bytes per line."""
    size = path.stat().st_size
    return int(size / max(plan.line_bytes, 1.0) * 1.05) + 1024


def _smallest_int(low, high):
    """The smallest integer type holding ``low..high``, or None."""
    return next((k for k in _INTS if np.iinfo(k).min <= low and high <= np.iinfo(k).max), None)


class _Buffer:
    """A column filled batch by batch into one array sized for the whole file up front.

    Many small batch arrays freed at the end leave the heap full of holes the process
    does not give back, doubling its peak; one array per column, widened or grown only
    when the file asks for it, costs the column and nothing more.
    """

    def __init__(self, rows: int) -> None:
        self.values = np.empty(rows, dtype=np.int8)  # untouched pages cost nothing yet
        self.n = 0

    def __len__(self) -> int:
        return self.n

    def put(self, part: np.ndarray) -> None:
        kind = np.result_type(self.values.dtype, part.dtype)
        end = self.n + len(part)
        if kind != self.values.dtype or end > len(self.values):
            # the file held more rows than its sample foretold, or wider values
            size = len(self.values) if end <= len(self.values) else int(end * 1.25) + 1024
            grown = np.empty(size, dtype=kind)
            grown[: self.n] = self.values[: self.n]
            self.values = grown
        self.values[self.n : end] = part
        self.n = end

    def filled(self) -> np.ndarray:
        out, self.values = self.values[: self.n], np.empty(0, dtype=np.int8)
        return out


class _Numbers(_Buffer):
    """One number column, in the smallest type that holds every value exactly (whole
    numbers as 8-, 16- or 32-bit integers, others as float64)."""

    def add(self, array) -> None:
        values = array.to_numpy(zero_copy_only=False)
        if array.null_count == 0 and len(values):
            low, high = values.min(), values.max()
            if np.isfinite(low) and np.isfinite(high) and not np.any(np.mod(values, 1)):
                kind = _smallest_int(low, high)
                values = values if kind is None else values.astype(kind)
        self.put(values)

    def finish(self, plan: Plan) -> np.ndarray:
        return self.filled()


class _Text(_Buffer):
    """One text column as codes into one growing list of distinct values.

    Each batch arrives dictionary-encoded; only its (small) dictionary is looked up in
    the values seen so far, so the rows themselves are never held as text.
    """

    def __init__(self, rows: int) -> None:
        import pyarrow as pa

        super().__init__(rows)
        self.seen = pa.array([], type=pa.string())

    def add(self, array) -> None:
        import pyarrow as pa
        import pyarrow.compute as pc

        words = array.dictionary
        found = pc.index_in(words, value_set=self.seen).to_numpy(zero_copy_only=False)
        new = np.isnan(found)
        lookup = np.where(new, 0, found).astype(np.int64)
        if new.any():
            lookup[new] = len(self.seen) + np.arange(int(new.sum()))
            self.seen = pa.concat_arrays([self.seen, words.filter(pa.array(new))])
        lookup = np.append(lookup, -1)  # a missing cell's index -1 picks this last entry
        indices = array.indices.fill_null(-1).to_numpy(zero_copy_only=False)
        self.put(lookup.astype(_smallest_int(-1, len(self.seen)))[indices])

    def finish(self, plan: Plan):
        codes = self.filled()
        categories = pd.Index(self.seen.to_pandas(), dtype=str)
        values = pd.Categorical.from_codes(codes, categories=categories)
        return _as_careful_text(values, plan)


def _as_careful_text(values: pd.Categorical, plan: Plan):
    """Text as the careful reader gives it: stripped, missing words as missing; a column
    whose every cell turns out to be a number as numbers."""
    categories = pd.Series(values.categories.to_numpy(dtype=object), dtype=object)
    typed = plan.type_text(categories)
    if pd.api.types.is_numeric_dtype(typed.dtype) and not pd.api.types.is_bool_dtype(typed.dtype):
        # numbers written where the sample had none: floats, as the careful reader types them
        lookup = np.append(typed.to_numpy(dtype=float), np.nan)
        codes = values.codes
        return lookup[np.where(codes < 0, len(lookup) - 1, codes)]
    if any(isinstance(v, float) and not np.isnan(v) for v in typed):
        raise _GiveUp  # numbers next to text: the careful reader keeps each as it is
    clean = typed.to_numpy(dtype=object)  # stripped; missing words as NaN
    if np.array_equal(clean, categories.to_numpy(dtype=object)):
        return values
    code_of, uniques = pd.factorize(clean, sort=True)  # NaN -> -1; merged when equal
    lookup = np.append(code_of, -1)
    codes = values.codes
    new = lookup[np.where(codes < 0, len(lookup) - 1, codes)]
    return pd.Categorical.from_codes(new, categories=pd.Index(uniques, dtype=str))


def _odd_lines(odd, n: int, width: int, plan: Plan, file: str):
    """File lines of the rows read (None when they are simply 2, 3, ...) and the short
    lines, padded, that the careful reader keeps as rows."""
    if not odd:
        return None, []
    odd.sort()
    for number, fields, _ in odd:
        if fields > width:
            raise fail(
                f"the table cannot be parsed: line {number} has {fields} fields, more than the header",
                "every line needs the same number of fields as the header; quote text that contains the delimiter",
                file=file,
                row=number,
            )
    if any('"' in text for _, _, text in odd):
        raise _GiveUp  # perhaps a quoted line break: the careful reader joins the lines
    taken = np.array([number for number, _, _ in odd], dtype=np.int64)
    # rows read before each odd line: row i sits after every odd line with fewer before it
    before = taken - np.arange(len(taken)) - 2
    positions = np.arange(n, dtype=np.int64)
    lines = positions + 2 + np.searchsorted(before, positions, side="right")
    short = [
        (number, next(csv.reader([text], delimiter=plan.delimiter)))
        for number, _, text in odd
        if text.strip()
    ]
    return lines, short


def _with_short_lines(frame: dict, lines: np.ndarray, short, plan: Plan) -> np.ndarray:
    """The short lines put in place as rows, padded with missing cells."""
    width = len(plan.header)
    cells = [row + [""] * (width - len(row)) for _, row in short]
    at = np.searchsorted(lines, [number for number, _ in short])
    for i, name in enumerate(plan.header):
        part = plan.type_text(pd.Series([c[i] for c in cells], dtype=object))
        numbers = pd.api.types.is_numeric_dtype(part.dtype)
        column = frame[name]
        if isinstance(column, pd.Categorical):
            if numbers and part.notna().any() or any(isinstance(v, float) and v == v for v in part):
                raise _GiveUp  # a number in a text column: the careful reader mixes them
            text = [None if v is None or v != v else v for v in part.tolist()]
            new = sorted({t for t in text if t is not None} - set(column.categories))
            if new:
                column = column.add_categories(new)
            codes = np.array([-1 if t is None else column.categories.get_loc(t) for t in text])
            merged = np.insert(column.codes, at, codes.astype(column.codes.dtype))
            frame[name] = pd.Categorical.from_codes(merged, dtype=column.dtype)
            continue
        if not numbers:
            raise _GiveUp  # text in a number column: the careful reader names it
        values = part.to_numpy(dtype=float)
        kind = column.dtype
        if np.issubdtype(kind, np.integer):
            whole = np.isfinite(values).all() and not np.any(np.mod(values, 1))
            info = np.iinfo(kind)
            fits = whole and info.min <= values.min() and values.max() <= info.max
            kind = kind if fits else np.dtype(np.float64)
        frame[name] = np.insert(column.astype(kind, copy=False), at, values.astype(kind))
    return np.insert(lines, at, [number for number, _ in short])


def _missing_mask(column) -> np.ndarray:
    if isinstance(column, pd.Categorical):
        return column.codes < 0
    if np.issubdtype(column.dtype, np.floating):
        return np.isnan(column)
    return np.zeros(len(column), dtype=bool)


def _blank_rows(frame: dict, lines, path: Path, delimiter: str) -> np.ndarray | None:
    """Rows whose line holds nothing but delimiters, blanks and quotes (None if none).

    A row read as all missing is blank when its line is empty, ``,,,`` or ``" ",""``; the
    careful reader drops those and keeps a line of missing-value words ("NA;NA") as a row.
    """
    empty = None
    for column in frame.values():
        mask = _missing_mask(column)
        empty = mask if empty is None else empty & mask
        if not empty.any():
            return None
    rows = np.flatnonzero(empty)
    numbers = rows + 2 if lines is None else lines[rows]
    texts = _line_texts(path, numbers)
    blank = np.zeros(len(empty), dtype=bool)
    for row, number in zip(rows, numbers, strict=True):
        text = texts.get(int(number), "")
        blank[row] = not text.replace(delimiter, "").replace('"', "").strip()
    return blank if blank.any() else None


def _line_texts(path: Path, numbers: np.ndarray) -> dict[int, str]:
    """The text of the given file lines (1-based), reading the file a chunk at a time."""
    wanted = np.unique(numbers)
    out: dict[int, str] = {}
    line, carry = 1, b""  # the line that ``carry`` starts
    with path.open("rb") as handle:
        while len(out) < len(wanted):
            chunk = handle.read(_SCAN_BYTES)
            if not chunk:
                if carry and line in set(wanted.tolist()):
                    out[line] = carry.decode("utf-8", "replace")
                break
            data = carry + chunk
            ends = np.flatnonzero(np.frombuffer(data, dtype=np.uint8) == 10)
            here = wanted[(wanted >= line) & (wanted < line + len(ends))]
            starts = np.r_[0, ends[:-1] + 1] if len(ends) else np.array([], dtype=np.int64)
            for number in here.tolist():
                k = number - line
                out[number] = data[starts[k] : ends[k]].decode("utf-8", "replace")
            carry = data[ends[-1] + 1 :] if len(ends) else data
            line += len(ends)
    return out

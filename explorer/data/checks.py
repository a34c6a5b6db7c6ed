"""The collectors and small contexts the validation steps pass each other.

:class:`Log` gathers problems in the order found; :class:`Failures` gathers, per
district-year, the reasons to set it aside (the first reason found wins); :class:`Rows` is
the table after the key step, sorted once by district, year and line so every later
step is a segment operation; :class:`Cells` is one value column as numbers with its masks.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.ids import missing_cells
from explorer.data.model import DataError, Problem, _listing

__all__ = [
    "Cells",
    "Failures",
    "Findings",
    "Layout",
    "Log",
    "Rows",
    "Taken",
    "numbers",
    "value_list",
]


class Log:
    """Problems in the order found, with the file they belong to."""

    def __init__(self, file: str, inherited: Iterable[Problem]) -> None:
        self.file = file
        self.items: list[Problem] = list(inherited)

    def add(
        self,
        message: str,
        fix: str = "",
        *,
        row: Any = None,
        column: str | None = None,
        severity: str = "error",
        file: str | None = None,
    ) -> None:
        """Record one problem; ``file`` defaults to the panel's file."""
        self.items.append(
            Problem(
                message,
                fix,
                file=self.file if file is None else file,
                row=None if row is None else int(row),
                column=column,
                severity=severity,
            )
        )

    @property
    def failed(self) -> bool:
        """Whether any error (not only warnings) was recorded."""
        return any(p.severity == "error" for p in self.items)

    def raise_if_failed(self) -> None:
        """Raise every problem so far as one :class:`DataError` if any is an error."""
        if self.failed:
            raise DataError(self.items)


class Failures:
    """Per district-year reasons for leaving it out; the first reason found wins."""

    def __init__(self) -> None:
        self.parts: list[pd.DataFrame] = []

    def rows(self, mask, gid, line, column, template, values, priority=0) -> None:
        """Row-level reasons: ``template`` formatted with each failing row's value."""
        m = np.asarray(mask, dtype=bool)
        if not m.any():
            return
        col = np.asarray(column, dtype=object)
        self.parts.append(
            pd.DataFrame(
                {
                    "gid": gid[m],
                    "line": line[m],
                    "column": col[m] if col.ndim else str(column),
                    "template": template,
                    "value": np.asarray(values, dtype=object)[m],
                    "priority": priority,
                }
            )
        )

    def groups(self, gids, lines, column, messages, priority=5) -> None:
        """District-year reasons, one message per district-year."""
        if len(gids) == 0:
            return
        self.parts.append(
            pd.DataFrame(
                {
                    "gid": np.asarray(gids),
                    "line": np.asarray(lines),
                    "column": column,
                    "template": "{value}",
                    "value": np.asarray(messages, dtype=object),
                    "priority": priority,
                }
            )
        )

    def failing(self) -> np.ndarray:
        """The district-years with at least one reason so far."""
        if not self.parts:
            return np.array([], dtype=np.int64)
        return np.unique(np.concatenate([p["gid"].to_numpy() for p in self.parts]))

    def first(self) -> pd.DataFrame:
        """One reason per failing district-year: gid, line, column, message."""
        if not self.parts:
            return pd.DataFrame(columns=["gid", "line", "column", "message"])
        allp = pd.concat(self.parts, ignore_index=True)
        allp = allp.sort_values(["gid", "priority", "line"], kind="stable")
        allp = allp.drop_duplicates("gid").reset_index(drop=True)
        allp["message"] = [
            t.format(value=v) for t, v in zip(allp["template"], allp["value"], strict=True)
        ]
        return allp[["gid", "line", "column", "message"]]


@dataclass(frozen=True)
class Layout:
    """What the columns say: the kind, and for brackets whether they run across columns."""

    kind: str
    columns: tuple[str, ...]
    wide: bool = False
    share_cols: tuple[str, ...] = ()


class Taken:
    """The rows of a table in a given order, each column taken only when it is read.

    Sorting a table of millions of unit records copies every column at once; taken one
    column at a time, only the column in use is held twice. Offers what the validation
    steps read of a frame: ``columns``, ``len``, ``[column]`` (a Series with a fresh
    index), ``[[columns]]`` and ``iloc[positions]``.
    """

    def __init__(self, frame: pd.DataFrame, positions: np.ndarray) -> None:
        self._frame, self._positions = frame, positions

    @property
    def columns(self) -> pd.Index:
        """The table's column names."""
        return self._frame.columns

    def __len__(self) -> int:
        return len(self._positions)

    def __getitem__(self, column):
        if isinstance(column, list):
            return Taken(self._frame[column], self._positions)
        return pd.Series(self._frame[column].array.take(self._positions), name=column)

    @property
    def iloc(self) -> _TakenRows:
        """Positional selection of rows, as ``DataFrame.iloc[positions]``."""
        return _TakenRows(self)


class _TakenRows:
    def __init__(self, taken: Taken) -> None:
        self._taken = taken

    def __getitem__(self, positions) -> Taken:
        return Taken(self._taken._frame, self._taken._positions[positions])


@dataclass(frozen=True)
class Rows:
    """Rows with a valid district and year, sorted by district, year and file line."""

    table: Taken  # the table's rows in this order, read a column at a time
    code: np.ndarray  # district of each row, as an index into ``names``
    names: np.ndarray  # district ids, sorted
    year: np.ndarray  # whole year of each row
    line: np.ndarray  # file line of each row (header = 1)
    gid: np.ndarray  # district-year of each row, 0..n_groups-1 in (district, year) order
    starts: np.ndarray  # first row of each district-year

    @property
    def n_groups(self) -> int:
        """How many district-years there are."""
        return len(self.starts)

    @property
    def first_line(self) -> np.ndarray:
        """The file line of each district-year's first row."""
        return self.line[self.starts]

    @property
    def group_region(self) -> np.ndarray:
        """The district of each district-year."""
        return self.names[self.code[self.starts]]

    @property
    def group_year(self) -> np.ndarray:
        """The year of each district-year."""
        return self.year[self.starts]


@dataclass(frozen=True)
class Findings:
    """What the steps found: the problem log, reasons to set district-years aside, and
    notes summed over district-years (``(message, column)``, shown as warnings)."""

    log: Log
    fails: Failures = field(default_factory=Failures)
    notes: list[tuple[str, str]] = field(default_factory=list)


@dataclass(frozen=True)
class Cells:
    """One value column (or several stacked) as numbers, with where each value came from."""

    values: np.ndarray
    missing: np.ndarray
    text: np.ndarray
    raw: np.ndarray
    gid: np.ndarray
    line: np.ndarray
    column: Any  # a column name, or one per cell for stacked columns

    @classmethod
    def of(cls, table: pd.DataFrame, column: str, rows: Rows) -> Cells:
        """The cells of ``column`` on every row."""
        series = table[column]
        values, miss, text = numbers(series)
        # a column read as numbers holds no text: its cells as written are the numbers
        # (an object copy of millions of unit records would cost more than the data)
        numeric = pd.api.types.is_numeric_dtype(series.dtype) and not pd.api.types.is_bool_dtype(
            series.dtype
        )
        raw = values if numeric else series.to_numpy(dtype=object)
        return cls(values, miss, text, raw, rows.gid, rows.line, column)

    def check(
        self, fails: Failures, *, positive: bool = False, signed: bool = False, name: str = ""
    ) -> None:
        """Row checks shared by every numeric value column: text, missing, infinite,
        negative (unless ``signed``), zero (when ``positive``)."""
        label = f"{name} " if name else "the value "
        what = f"{name} holds text" if name else "text"
        fails.rows(
            self.text,
            self.gid,
            self.line,
            self.column,
            what + " {value!r} where a number is expected",
            self.raw,
        )
        if not name:
            fails.rows(
                self.missing, self.gid, self.line, self.column, "a value is missing", self.raw
            )
        finite = np.isfinite(self.values)
        fails.rows(
            ~self.missing & ~self.text & ~finite,
            self.gid,
            self.line,
            self.column,
            "the value {value} is not a finite number",
            self.values,
        )
        if not signed:
            negative = (
                f"{name} is negative ({{value!r}})" if name else "the value {value!r} is negative"
            )
            fails.rows(
                finite & (self.values < 0), self.gid, self.line, self.column, negative, self.values
            )
        if positive:
            fails.rows(
                finite & (self.values == 0),
                self.gid,
                self.line,
                self.column,
                f"{label}is zero but must be positive",
                self.values,
            )


def numbers(raw: pd.Series) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Values as float, and masks of missing cells and of text that is not a number."""
    miss = missing_cells(raw)
    if pd.api.types.is_bool_dtype(raw.dtype):
        values = np.full(len(raw), np.nan)
        return values, miss, ~miss
    # one fresh array (written to below), not a conversion and then a copy of it
    values = pd.to_numeric(raw, errors="coerce").to_numpy(dtype=float, na_value=np.nan, copy=True)
    text = ~miss & np.isnan(values)
    values[miss] = np.nan
    return values, miss, text


def value_list(lines: np.ndarray, values: Sequence[Any]) -> str:
    """``line 3 ('x'), line 7 ('y')`` for a message, shortened after a few."""
    values = [v.item() if isinstance(v, np.generic) else v for v in values]
    pairs = [f"line {ln} ({v!r})" for ln, v in zip(lines, values, strict=False)]
    return _listing(pairs)

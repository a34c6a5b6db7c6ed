"""From the framed grid of a published table to one tidy long table: ``region``, ``year``
and one column per measure, whatever way round the office laid it out.

Layouts (``key``: in words):

- ``long``: one line per district and year, a year column;
- ``years_across``: one line per district, one column per year, for one measure or for
  several measures side by side (blocks named by a spanning line or by header prefixes);
- ``one_year``: one line per district, measures across, no year (the caller gives it).
"""

from __future__ import annotations

import math
import re
from collections import Counter, defaultdict
from dataclasses import dataclass

import pandas as pd

from explorer.data.model import KIND_COLUMNS, Problem, fail
from explorer.data.office.cells import is_numberlike, parse_number, strip_marker
from explorer.data.office.header import Frame
from explorer.data.office.measures import column_role, header_year, measure_key

__all__ = ["LAYOUTS", "Tidy", "tidy_frame"]

LAYOUTS = {
    "long": "one line per district and year",
    "years_across": "one line per district, years across the columns",
    "one_year": "one line per district for a single year, measures across",
}
LISTED = 5
RESERVED = {"line", "region", "year"}
#: A header naming the population group of a line (a quintile, decile, bracket).
_BRACKET_HEADER = re.compile(
    r"\b(?:quintile|decile|quartile|ventile|bracket|group|tenth|fifth|quantile|class)s?\b",
    re.IGNORECASE,
)
#: A group's number as offices write it: ``3``, ``Q3``, ``D10``, ``3rd``, ``group 3``.
_BRACKET_VALUE = re.compile(
    r"^\s*(?:(?:q|d|s|g|group|bracket|quintile|decile|quartile)\s*)?(\d{1,2})"
    r"(?:st|nd|rd|th)?(?:\s*(?:quintile|decile|quartile|group|bracket|tenth|fifth))?\s*$",
    re.IGNORECASE,
)
#: Column names of the panel contract, which a long table keeps as they are.
CONTRACT = {c for columns in KIND_COLUMNS.values() for c in columns} - {
    "region",
    "year",
    # the published kind's long columns are made by validation, never read from a file
    "measure",
    "value",
    "scale",
}


@dataclass(frozen=True)
class Tidy:
    """A tidy table with what was understood on the way (see :func:`tidy_frame`)."""

    table: pd.DataFrame
    layout: str
    measures: tuple[str, ...]
    notes: tuple[Problem, ...]
    percent: tuple[str, ...]
    headers: dict[str, str]


class _Notes:
    """Counts of what was cleaned, turned into one warning each at the end."""

    def __init__(self, file: str) -> None:
        self.file = file
        self.codes: Counter[tuple[str, str]] = Counter()
        # counts, and the first few examples only: memory stays bounded on a large table
        self.markers: dict[str, list[str]] = defaultdict(list)
        self.words: dict[str, list[str]] = defaultdict(list)
        self.counts: Counter[tuple[str, str]] = Counter()
        self.percent: set[str] = set()
        self.extra: list[Problem] = []

    def cell(self, text: str, column: str, line: int, decimal: str, key: str = "") -> float:
        value, code, percent = parse_number(text, decimal)
        if percent:
            self.percent.add(key or column)
        if code == "text":
            self.example("words", column, f"line {line} '{text}'")
        elif code and code.startswith("flag:"):
            self.example("markers", "values", text)
        elif code:
            self.codes[(code, column)] += 1
        return value

    def example(self, kind: str, key: str, text: str) -> None:
        """Count one cleaned cell of ``kind`` ("markers" or "words") and keep a few."""
        self.counts[(kind, key)] += 1
        kept = (self.markers if kind == "markers" else self.words)[key]
        if len(kept) < LISTED:
            kept.append(text)

    def warn(self, message: str, fix: str = "", column: str | None = None) -> None:
        self.extra.append(Problem(message, fix, file=self.file, column=column, severity="warning"))

    def problems(self) -> tuple[Problem, ...]:
        out = list(self.extra)
        by_code: Counter[str] = Counter()
        for (code, _), count in self.codes.items():
            by_code[code] += count
        for code, count in sorted(by_code.items()):
            columns = sorted({c for (k, c) in self.codes if k == code})
            out.append(
                Problem(
                    f"{count} cell(s) hold the code '{code}' (withheld or not available) and are "
                    f"read as missing (columns: {', '.join(columns[:LISTED])}).",
                    file=self.file,
                    severity="warning",
                )
            )
        for kind, removed in self.markers.items():
            shown = ", ".join(f"'{r}'" for r in removed[:LISTED])
            out.append(
                Problem(
                    f"footnote markers removed from {self.counts[('markers', kind)]} {kind} "
                    f"(e.g. {shown}).",
                    file=self.file,
                    severity="warning",
                )
            )
        for column, cells in self.words.items():
            out.append(
                Problem(
                    f"{self.counts[('words', column)]} cell(s) are not numbers and are read as "
                    "missing: "
                    f"{', '.join(cells[:LISTED])}.",
                    "Correct those cells if they should hold values.",
                    file=self.file,
                    column=column,
                    severity="warning",
                )
            )
        return tuple(out)


def _clean_header(cells: tuple[str, ...], width: int, notes: _Notes) -> list[str]:
    out = []
    for cell in list(cells) + [""] * (width - len(cells)):
        clean, marker = strip_marker(cell)
        year = header_year(cell)
        if (marker and year is None) or (year and not year[0] and cell.strip() != str(year[1])):
            notes.example("markers", "headers", cell)
        out.append(clean)
    return out


def _label_columns(header: list[str], body: list[tuple[str, ...]], decimal: str) -> list[int]:
    """Columns that name the district: the first, and the next ones while they hold words
    or are headed like a code or name (codes such as ``01`` look like numbers)."""
    labels = [0]
    for j in range(1, len(header)):
        values = [cells[j] for cells in body if j < len(cells) and cells[j].strip()]
        wordy = _wordy(values, decimal)
        if (
            header_year(header[j]) is None
            and column_role(header[j]) != "year"
            and ((column_role(header[j]) == "region" and measure_key(header[j]) is None) or wordy)
        ):
            labels.append(j)
        else:
            break
    return labels


def _body_column(frame: Frame, j: int) -> list[str]:
    """The non-blank cells of column ``j`` of the data lines."""
    return [cells[j] for _, cells in frame.body if j < len(cells) and cells[j].strip()]


def _wordy(values: list[str], decimal: str) -> bool:
    return sum(not is_numberlike(v, decimal) for v in values) * 2 > len(values)


def _region_columns(header: list[str], labels: list[int]) -> tuple[int, list[int]]:
    coded = [j for j in labels if any(w in header[j].lower() for w in ("code", "id", "geo"))]
    region = coded[0] if coded else labels[0]
    return region, [j for j in labels if j != region]


def _regions(frame: Frame, region: int, notes: _Notes) -> list[str]:
    names = []
    for _, cells in frame.body:
        clean, marker = strip_marker(cells[region] if region < len(cells) else "")
        if marker:
            notes.example("markers", "district names", cells[region])
        names.append(clean)
    return names


Block = tuple[str, list[tuple[int, int]]]  # measure label, (column, year) pairs


def _blocks(header: list[str], spanning: tuple[str, ...] | None, labels: list[int]) -> list[Block]:
    """Year columns grouped into measures: by header prefix, by spanning label, by restarts
    of the years, or, with the years in the spanning line, by the measure under each."""
    span: list[str] = []
    current = ""
    for j in range(len(header)):
        if spanning is not None and j < len(spanning) and spanning[j].strip():
            current = strip_marker(spanning[j])[0]
        span.append(current)
    blocks: list[Block] = []
    if not any(header_year(header[j]) for j in range(len(header)) if j not in labels):
        by_measure: dict[str, list[tuple[int, int]]] = {}
        for j, cell in enumerate(header):
            year = header_year(span[j]) if j not in labels and cell else None
            if year is not None and not year[0]:
                by_measure.setdefault(cell, []).append((j, year[1]))
        return list(by_measure.items())
    last_year = None
    for j, cell in enumerate(header):
        found = header_year(cell) if j not in labels else None
        if found is None:
            continue
        label = found[0] or span[j]
        restart = last_year is not None and found[1] <= last_year
        if not blocks or blocks[-1][0] != label or (restart and not label):
            blocks.append((label, []))
        blocks[-1][1].append((j, found[1]))
        last_year = found[1]
    return blocks


def _measure_names(
    labels: list[str],
    measure: str | tuple[str, ...] | None,
    titles: list[str],
    notes: _Notes,
    fallback: str | None,
) -> list[str]:
    if measure is not None:
        given = (measure,) if isinstance(measure, str) else tuple(measure)
        if len(given) != len(labels):
            raise fail(
                f"{len(given)} measure name(s) were given for {len(labels)} block(s) of years.",
                "Give one measure name per block of year columns, in order.",
                file=notes.file,
            )
        return list(given)
    names = []
    for i, label in enumerate(labels):
        key = measure_key(label) if label else None
        if key is None and not label and len(labels) == 1 and fallback:
            key = measure_key(fallback)
        if key is None and not label and len(labels) == 1:
            key = next((measure_key(t) for t in titles if measure_key(t)), None)
        if key is None:
            key = "value" if len(labels) == 1 else f"measure_{i + 1}"
            notes.warn(
                f"could not tell which measure the year columns hold{f' ({label!r})' if label else ''}; "
                f"they are called '{key}'.",
                "Say which measure they are (measure=...).",
            )
        names.append(key)
    return names


def _bracket_column(
    header: list[str], body: list[tuple[str, ...]], labels: list[int]
) -> int | None:
    """The column numbering each line's population group, when lines are district × group:
    headed like a group (``Quintile``) and every cell a group number (``3``, ``Q3``)."""
    for j in [*labels[1:], max(labels) + 1]:
        if j >= len(header) or not _BRACKET_HEADER.search(header[j]) or header_year(header[j]):
            continue
        values = [cells[j] for cells in body if j < len(cells) and cells[j].strip()]
        if values and all(_BRACKET_VALUE.match(v) for v in values):
            return j
    return None


def _shares_by_group(table: pd.DataFrame, key: str, file: str) -> pd.DataFrame:
    """One line per district and year with ``share_1 … share_k`` from one line per group."""
    groups = table["bracket"].map(lambda v: int(_BRACKET_VALUE.match(v).group(1)))
    doubled = table.assign(group=groups).duplicated(["region", "year", "group"])
    if doubled.any():
        first = table[doubled].iloc[0]
        raise fail(
            f"district '{first['region']}' has group {first['bracket']} twice for {first['year']}.",
            "Give each district one line per population group.",
            file=file,
            row=int(first["line"]),
        )
    wide = table.assign(group=groups).pivot_table(
        index=["region", "year"], columns="group", values=key, aggfunc="first", dropna=False
    )
    wide.columns = [f"share_{int(g)}" for g in wide.columns]
    lines = table.groupby(["region", "year"])["line"].min()
    return wide.join(lines).reset_index()


def _years_across(
    frame: Frame,
    header: list[str],
    labels: list[int],
    notes: _Notes,
    decimal: str,
    measure,
    fallback: str | None,
    bracket: int | None = None,
) -> tuple[pd.DataFrame, list[str], dict[str, str]]:
    region, others = _region_columns(header, [j for j in labels if j != bracket])
    names = _regions(frame, region, notes)
    blocks = _blocks(header, frame.spanning[1] if frame.spanning else None, labels)
    titles = [" ".join(c) for _, c in frame.above]
    measures = _measure_names([b[0] for b in blocks], measure, titles, notes, fallback)
    _unique([_slug(header[k]) for k in others] + measures, notes.file)
    used = set(labels) | {j for _, columns in blocks for j, _ in columns}
    unread = [
        header[j] or f"column {j + 1}"
        for j in range(len(header))
        if j not in used and (header[j] or _body_column(frame, j))
    ]
    if unread:
        notes.warn(
            f"{len(unread)} column(s) are neither a district label nor a year and were "
            f"not read: {', '.join(unread[:LISTED])}.",
            "Read them as a table of their own if they are needed.",
        )
    if bracket is not None:
        if len(blocks) > 1:
            raise fail(
                "lines by district and population group hold one block of years here, "
                f"but {len(blocks)} blocks were found.",
                "Read one measure at a time (one block of year columns per table).",
                file=notes.file,
            )
        measures = ["income_share"]
    records: dict[tuple[int, int], dict[str, object]] = {}
    for (_, columns), key in zip(blocks, measures, strict=True):
        for i, (line, cells) in enumerate(frame.body):
            for j, year in columns:
                text = cells[j] if j < len(cells) else ""
                record = records.setdefault(
                    (i, year), {"line": line, "region": names[i], "year": year}
                )
                record[key] = notes.cell(text, header[j] or key, line, decimal, key)
                if bracket is not None:
                    record["bracket"] = cells[bracket].strip() if bracket < len(cells) else ""
                for k in others:
                    record[_slug(header[k])] = strip_marker(cells[k] if k < len(cells) else "")[0]
    titles_used = {m: (b[0] or " ".join(titles)) for m, b in zip(measures, blocks, strict=True)}
    table = pd.DataFrame.from_records(list(records.values()))
    if bracket is None:
        return table, measures, titles_used
    wide = _shares_by_group(table, "income_share", notes.file)
    notes.warn(
        f"one line per district and {header[bracket].lower() or 'group'}: the values under "
        f"each year were read as the income shares of the groups 1 to "
        f"{wide.filter(like='share_').shape[1]}, lowest first.",
        "Check that group 1 is the poorest; if the file numbers the groups from the top, "
        "number them from the bottom before reading it.",
    )
    shares = [c for c in wide.columns if c.startswith("share_")]
    return wide, shares, {c: titles_used["income_share"] for c in shares}


def _unique(names: list[str], file: str) -> None:
    """Refuse two output columns of one name, or one named like a key column."""
    doubled = [n for n, count in Counter(names).items() if count > 1 or n in RESERVED]
    if doubled:
        raise fail(
            f"two columns of the table would both be called '{doubled[0]}'.",
            "Give each column its own header (one year column, one column per measure).",
            file=file,
        )


def _slug(label: str) -> str:
    return "_".join(label.lower().split()) or "label"


def _by_columns(
    frame: Frame,
    header: list[str],
    labels: list[int],
    notes: _Notes,
    decimal: str,
    year: int | None,
) -> tuple[pd.DataFrame, list[str], dict[str, str], str]:
    region, others = _region_columns(header, labels)
    names = _regions(frame, region, notes)
    year_col = next(
        (j for j, h in enumerate(header) if column_role(h) == "year" and j not in labels), None
    )
    if year_col is None and year is None:
        raise fail(
            "the table has no year column and no years across its columns.",
            "Say which year the table is for: it is never guessed.",
            file=notes.file,
        )
    values = [j for j in range(len(header)) if j not in labels and j != year_col]
    wordy = {j for j in values if _wordy(_body_column(frame, j), decimal)}
    others = others + sorted(wordy)
    values = [j for j in values if j not in wordy]
    keys = [
        _slug(header[j])
        if _slug(header[j]) in CONTRACT
        else (measure_key(header[j]) or _slug(header[j]))
        for j in values
    ]
    _unique([_slug(header[k]) for k in others] + keys, notes.file)
    rows = []
    for i, (line, cells) in enumerate(frame.body):
        row: dict[str, object] = {"line": line, "region": names[i]}
        if year_col is not None:
            value = notes.cell(
                cells[year_col] if year_col < len(cells) else "", header[year_col], line, decimal
            )
            if math.isnan(value) or not float(value).is_integer():
                raise fail(
                    f"the year '{cells[year_col] if year_col < len(cells) else ''}' is not a year.",
                    "Write years as whole numbers such as 2001.",
                    file=notes.file,
                    row=line,
                    column=header[year_col],
                )
            row["year"] = int(value)
        else:
            row["year"] = int(year)  # type: ignore[arg-type]
        for k in others:
            row[_slug(header[k])] = strip_marker(cells[k] if k < len(cells) else "")[0]
        for j, key in zip(values, keys, strict=True):
            row[key] = notes.cell(cells[j] if j < len(cells) else "", header[j], line, decimal, key)
        rows.append(row)
    headers = {k: header[j] for j, k in zip(values, keys, strict=True)}
    return pd.DataFrame(rows), keys, headers, "long" if year_col is not None else "one_year"


def tidy_frame(
    frame: Frame,
    decimal: str,
    file: str,
    *,
    year: int | None = None,
    measure: str | tuple[str, ...] | None = None,
    fallback: str | None = None,
) -> Tidy:
    """The tidy long table of one framed grid.

    Parameters
    ----------
    frame : Frame
        From :func:`explorer.data.office.header.find_frame`.
    decimal : {".", ","}
    file : str
        For messages.
    year : int, optional
        The year of a table without years (never guessed: without it such a table is refused).
    measure : str or tuple of str, optional
        Which measure the year columns hold (one name per block), overriding the detection.
    fallback : str, optional
        A name that tells the measure when the headers do not (a sheet name), before titles.

    Returns
    -------
    Tidy
        ``table`` has ``line`` (file line of the district), ``region`` (text as written, zeros
        kept, markers removed), ``year`` (int) and one float column per measure.
    """
    notes = _Notes(file)
    width = max([len(frame.header[1])] + [len(c) for _, c in frame.body])
    header = _clean_header(frame.header[1], width, notes)
    body = [cells for _, cells in frame.body]
    labels = _label_columns(header, body, decimal)
    spanning = frame.spanning[1] if frame.spanning else None
    bracket = _bracket_column(header, body, labels)
    if bracket is not None and bracket not in labels:
        labels = [*labels, bracket]
    year_columns = sum(len(c) for _, c in _blocks(header, spanning, labels))
    has_year = any(column_role(h) == "year" for j, h in enumerate(header) if j not in labels)
    if year_columns >= 2 or (year_columns == 1 and not has_year):
        table, measures, headers = _years_across(
            frame, header, labels, notes, decimal, measure, fallback, bracket
        )
        layout = "years_across"
    else:
        table, measures, headers, layout = _by_columns(frame, header, labels, notes, decimal, year)
    if year is not None and layout != "one_year":
        notes.warn(f"the year {year} was given, but the table has its own years; it was not used.")
    table["region"] = table["region"].astype(str)
    table["year"] = table["year"].astype("int64")
    nameless = table["region"].str.strip() == ""
    if nameless.any():
        lines = sorted(set(table.loc[nameless, "line"]))
        notes.warn(
            f"{len(lines)} line(s) hold values but no district name and were not read "
            f"(lines {', '.join(map(str, lines[:LISTED]))}).",
            "Write the district's name or code in the first column.",
        )
        table = table[~nameless].reset_index(drop=True)
    percent = tuple(sorted(notes.percent & set(measures)))
    return Tidy(table, layout, tuple(measures), notes.problems(), percent, headers)

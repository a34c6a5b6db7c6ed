"""Validation: a raw table (and boundaries) in, a :class:`~explorer.data.model.Panel` out, or
a :class:`~explorer.data.model.DataError` naming every problem. The one place input is checked.

Readers (:mod:`explorer.data.tables`, :mod:`explorer.data.boundaries`) turn files into
DataFrames; everything downstream trusts a :class:`Panel`. Readers may leave warnings of
their own in ``frame.attrs["problems"]`` (and ``boundaries.attrs["problems"]``); ``validate``
carries them into ``Panel.warnings``.

The steps, in order, each a function of its own: the frame's shape
(:func:`_shape`), the kind and its required columns (:func:`detect_layout`), district ids
and years (:func:`_keys`, then one sort: :func:`_district_years`), the values of the kind
(:mod:`explorer.data.values`), the district-years set aside (:func:`_set_aside`), coverage
of years, income concept, then boundaries (:mod:`explorer.data.matching`) and levels
(:func:`_hierarchy`).
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.checks import Findings, Layout, Log, Rows, Taken, numbers, value_list
from explorer.data.ids import IdMatch, id_codes
from explorer.data.levels import LevelChoice, district_values, propose, read_choice
from explorer.data.matching import attach_boundaries, boundary_ids, report_clashes
from explorer.data.model import (
    KIND_COLUMNS,
    KINDS,
    LISTED,
    PUBLISHED_MEASURES,
    PUBLISHED_SIGNS,
    DataError,
    Panel,
    Problem,
    _listing,
    fingerprint,
)
from explorer.data.values import (
    CONVEX_TOL,
    SHARE_EXACT,
    SHARE_RESCALE,
    bracket_values,
    mean_values,
    published_values,
    unit_values,
)

__all__ = ["CONVEX_TOL", "SHARE_EXACT", "SHARE_RESCALE", "detect_kind", "detect_layout", "validate"]

_SHARE_COLUMN = re.compile(r"^share_(\d+)$")
_KEPT = "(unassigned)"


def detect_kind(columns: Iterable[str]) -> str | None:
    """The panel kind its columns imply, or None.

    brackets: ``pop_share`` + ``income_share`` (long) or ``share_1 … share_k`` (wide);
    published figures: a published index (``gini``, ``poverty_rate``, ``median_income``,
    ``top10_share``) without shares; units: ``income``; means: ``mean_income`` without
    brackets (the data model's rule).
    """
    cols = set(columns)
    if {"pop_share", "income_share"} <= cols or any(_SHARE_COLUMN.match(c) for c in cols):
        return "brackets"
    if cols & set(PUBLISHED_SIGNS):
        return "published"
    if "income" in cols:
        return "units"
    if "mean_income" in cols:
        return "means"
    return None


def _shape(frame: pd.DataFrame, log: Log) -> tuple[str, ...]:
    """The stripped column names, after refusing empty files and repeated names."""
    columns = tuple(str(c).strip() for c in frame.columns)
    if frame.shape[1] == 0:
        log.add(
            "the file is empty: it has no header and no rows",
            "export the table again with a header line",
        )
        log.raise_if_failed()
    seen: dict[str, list[int]] = {}
    for pos, c in enumerate(columns):
        seen.setdefault(c, []).append(pos + 1)
    for c, where in seen.items():
        if len(where) > 1:
            log.add(
                f"duplicated column name: '{c}' appears {len(where)} times (positions {_listing(where)})",
                "give every column its own name, or delete the repeated column",
                row=1,
                column=c,
            )
    if len(frame) == 0:
        log.add(
            "the file has a header but no data rows", "export the table again with its rows", row=1
        )
    log.raise_if_failed()
    return columns


def detect_layout(columns: Sequence[str], kind: str | None, log: Log) -> Layout:
    """The kind (given or detected) and, for brackets, long or wide; required columns checked."""
    kind = kind or detect_kind(columns)
    if kind is None:
        log.add(
            f"cannot tell what kind of panel this is from its columns ({_listing(list(columns))})",
            "brackets need pop_share and income_share (or share_1 … share_k), unit records "
            "need income, district means need mean_income, published figures one of "
            + ", ".join(PUBLISHED_SIGNS)
            + "; rename columns with a column map",
            row=1,
        )
        log.raise_if_failed()
    share_cols = tuple(
        sorted((c for c in columns if _SHARE_COLUMN.match(c)), key=lambda c: int(c.split("_")[1]))
    )
    wide = kind == "brackets" and not {"pop_share", "income_share"} <= set(columns)
    wide = wide and bool(share_cols)
    required = ["region", "year"] + {
        "brackets": [] if wide else ["pop_share", "income_share"],
        "units": ["income"],
        "means": ["mean_income"],
    }.get(kind, [])
    if kind == "published" and not set(columns) & set(PUBLISHED_MEASURES):
        log.add(
            "published figures need at least one column of figures (columns present: "
            f"{_listing(list(columns), 20)})",
            "name a column " + ", ".join(PUBLISHED_MEASURES) + " or give a column map",
            row=1,
        )
    if wide:
        numbers_ = [int(c.split("_")[1]) for c in share_cols]
        gaps = sorted(set(range(1, max(numbers_) + 1)) - set(numbers_))
        if gaps:
            log.add(
                f"share columns must run share_1 … share_{max(numbers_)} without gaps; missing: "
                + _listing([f"share_{g}" for g in gaps]),
                "add the missing share columns or rename them",
                row=1,
            )
    for c in required:
        if c not in columns:
            log.add(
                f"required column '{c}' is missing (columns present: {_listing(list(columns), 20)})",
                f"rename your column to '{c}' or give a column map such as {c}=YourColumn",
                row=1,
                column=c,
            )
    log.raise_if_failed()
    return Layout(str(kind), tuple(columns), wide, share_cols if wide else ())


def _file_lines(frame: pd.DataFrame) -> np.ndarray:
    """File line of each row: the reader's index (line - 2) when it is a unique integer one."""
    idx = frame.index
    if isinstance(idx, pd.RangeIndex) and idx.step == 1:
        small = idx.stop + 2 < 2**31
        return np.arange(idx.start + 2, idx.stop + 2, dtype=np.int32 if small else np.int64)
    if pd.api.types.is_integer_dtype(idx.dtype) and idx.is_unique:
        return idx.to_numpy(dtype=np.int64) + 2
    return np.arange(len(frame), dtype=np.int64) + 2


def _keys(
    table: pd.DataFrame, line: np.ndarray, log: Log
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """District ids as codes into their texts, and years as numbers; rows without both are
    named and dropped. Returns ``(codes, names, year)``: code -1 and year NaN mark them."""
    codes, names = id_codes(table["region"])
    bad_region = codes < 0
    if bad_region.any():
        log.add(
            f"the district id is missing on {bad_region.sum()} line(s): {_listing(line[bad_region].tolist())}",
            "fill in the region of every row",
            row=line[bad_region][0],
            column="region",
        )
    year, year_miss, year_text = numbers(table["year"])
    column = table["year"]
    for mask, what in (
        (year_miss, "the year is missing"),
        (year_text, "the year is text, not a number"),
        (~year_miss & ~year_text & ~np.isfinite(year), "the year is not a finite number"),
        (np.isfinite(year) & (year != np.round(year)), "the year is a fraction, not a whole year"),
    ):
        if mask.any():
            log.add(
                # the offending cells only: the whole column as objects would cost a lot
                f"{what}, on {mask.sum()} line(s): "
                f"{value_list(line[mask], column[mask].to_numpy(dtype=object))}",
                "write years as whole numbers such as 2019 (for a fiscal year 2019/20 use its first year)",
                row=line[mask][0],
                column="year",
            )
    key_ok = ~bad_region & np.isfinite(year) & (year == np.round(year))
    if not key_ok.any():
        log.add(
            "no row has both a district id and a valid year", "check the region and year columns"
        )
        log.raise_if_failed()
    year[~key_ok] = np.nan  # ``numbers`` gave a fresh array: no copy needed
    return codes, names, year


def _needed_columns(table: pd.DataFrame, layout: Layout, choice: LevelChoice | None) -> list:
    """The columns later steps read: the kind's, text columns (levels may come from them),
    the chosen levels. A household number or a person number is left behind rather than
    copied with millions of sorted rows."""
    wanted = {
        *KIND_COLUMNS.get(layout.kind, ()),
        *layout.share_cols,
        *PUBLISHED_MEASURES,
        "income_concept",
        *(choice.columns if choice is not None else ()),
    }
    return [
        c
        for c in table.columns
        if c in wanted
        or not pd.api.types.is_numeric_dtype(table[c].dtype)
        or pd.api.types.is_bool_dtype(table[c].dtype)
    ]


def _part(a: np.ndarray, positions: np.ndarray | None) -> np.ndarray:
    """``a`` at ``positions``; ``a`` itself (no copy) when every row is kept (None)."""
    return a if positions is None else a[positions]


def _district_years(table: pd.DataFrame, codes, names, year, line) -> Rows:
    """Rows with valid keys, sorted once by (district, year, line) into district-years."""
    ok = np.isfinite(year)
    keep = None if ok.all() else np.flatnonzero(ok)
    del ok

    # districts numbered in the order of their sorted ids, so codes sort as the ids do
    by_name = np.argsort(names, kind="stable")
    rank = np.empty(len(names), dtype=np.int32)
    rank[by_name] = np.arange(len(names), dtype=np.int32)
    code = rank[_part(codes, keep)]
    year_i = _part(year, keep).astype(np.int32)
    # rows read in file order stay in line order within a district-year (a stable sort)
    lines = _part(line, keep)
    in_order = bool(np.all(lines[1:] > lines[:-1]))
    order = np.lexsort((year_i, code) if in_order else (lines, year_i, code))
    del lines
    code, year_i = code[order], year_i[order]
    new_group = np.r_[True, (code[1:] != code[:-1]) | (year_i[1:] != year_i[:-1])]
    rows = order if keep is None else keep[order]
    del keep, order
    if len(rows) < 2**31:
        rows = rows.astype(np.int32)  # positions held to the end of validation
    line = line[rows]
    return Rows(
        table=Taken(table, rows),  # each column sorted when read, never the whole table
        code=code,
        names=np.asarray(names, dtype=object)[by_name],
        year=year_i,
        line=line.astype(np.int32) if len(line) and line.max() < 2**31 else line,
        gid=np.cumsum(new_group, dtype=np.int32) - 1,
        starts=np.flatnonzero(new_group),
    )


def _set_aside(rows: Rows, layout: Layout, found: Findings) -> pd.DataFrame:
    """The district-years that failed a value rule, logged one by one: region, year, reason.

    They are warnings while some district-year remains, errors when none does.
    """
    reasons = found.fails.first()
    bad = reasons["gid"].to_numpy(dtype=np.int64)
    all_out = len(bad) == rows.n_groups
    # A wide file has no income_share column: name its own share columns instead.
    own = f"{layout.share_cols[0]}…{layout.share_cols[-1]}" if layout.wide else None
    messages = [
        m.replace("the income_share values", "the shares") if own else m
        for m in reasons["message"].to_numpy(dtype=object)
    ]
    g_region, g_year = rows.group_region, rows.group_year
    for g, ln, col, msg in zip(bad, reasons["line"], reasons["column"], messages, strict=True):
        found.log.add(
            f"district {g_region[g]}, year {g_year[g]} left out: {msg}",
            "correct this district-year in the file; the rest of the panel is used without it",
            row=ln,
            column=own if own and col == "income_share" else col,
            severity="error" if all_out else "warning",
        )
    if all_out:
        found.log.add(
            "no district-year passed the checks, so there is nothing to analyse",
            "correct the values listed above",
        )
    for message, column in found.notes:
        found.log.add(message, "", column=column, severity="warning")
    found.log.raise_if_failed()
    return pd.DataFrame(
        {
            "region": pd.Series(g_region[bad], dtype=str),
            "year": pd.Series(g_year[bad], dtype="int64"),
            "reason": pd.Series(messages, dtype=str),
        }
    )


def _tidy(values: pd.DataFrame, rows: Rows, kind: str, good: np.ndarray) -> pd.DataFrame:
    """The contract's long table: kept district-years, sorted by region, year, then within.

    Empties ``values`` of its value columns as it goes (the caller is done with them).
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    gid = values["_gid"].to_numpy()
    kept = None if good.all() else np.flatnonzero(good[gid])

    # group ids already run in (region, year) order: one sort gives the contract's order
    within = {"brackets": "bracket", "units": "income", "published": "_order"}.get(kind)
    if within:
        order = np.lexsort((_part(values[within].to_numpy(), kept), _part(gid, kept)))
    else:
        order = np.argsort(_part(gid, kept), kind="stable")
    if kept is not None:
        order = kept[order]
    del kept
    if len(order) < 2**31:
        order = order.astype(np.int32)
    # the district-year of each output row gives its district and year: no row index needed
    group = gid[order]
    columns: dict[str, Any] = {}
    names = pa.array(rows.names.tolist(), type=pa.large_string())
    # ids as text straight from their codes (no string object per row)
    columns["region"] = pc.take(names, pa.array(rows.code[rows.starts][group])).to_pandas()
    columns["year"] = rows.year[rows.starts].astype(np.int64)[group]
    del group
    for c in list(values.columns):
        if c not in ("_gid", "_src", "_order"):
            # taken out of ``values`` as it is copied in order: one column held twice at most
            column = values.pop(c)
            columns[c] = column.array.take(order)
            del column
    return pd.DataFrame(columns, copy=False)


def _without_values(rows: Rows, layout: Layout) -> Rows:
    """``rows`` without the value columns, which are in the tidy table now: later steps
    read levels and the income concept only, and the sorted copies can go."""
    from dataclasses import replace

    values = {*KIND_COLUMNS.get(layout.kind, ()), *layout.share_cols, *PUBLISHED_MEASURES}
    values -= {"region", "year"}
    return replace(rows, table=rows.table[[c for c in rows.table.columns if c not in values]])


def _coverage(rows: Rows, good: np.ndarray, log: Log) -> None:
    """Warn about districts that lack some of the panel's years."""
    pairs = pd.DataFrame({"region": rows.group_region[good], "year": rows.group_year[good]})
    rc, districts = pd.factorize(pairs["region"], sort=True)
    yc, years = pd.factorize(pairs["year"], sort=True)
    present = np.zeros((len(districts), len(years)), dtype=bool)
    present[rc, yc] = True
    gaps = np.flatnonzero(~present.all(axis=1))
    if len(gaps) == 0:
        return
    items = [
        f"{districts[r]} ({_listing([int(y) for y in years[~present[r]]], 5)})"
        for r in gaps[:LISTED]
    ]
    more = f" and {len(gaps) - LISTED} more" if len(gaps) > LISTED else ""
    log.add(
        f"{len(gaps)} of {len(districts)} district(s) lack some years: {', '.join(items)}{more}",
        "comparisons over time for these districts use fewer years",
        column="year",
        severity="warning",
    )


def _income_concept(table: pd.DataFrame, rows_ok: np.ndarray, log: Log) -> str:
    if "income_concept" not in table.columns:
        return ""
    values = table["income_concept"].iloc[np.flatnonzero(rows_ok)].dropna().astype(str).str.strip()
    concepts = sorted(set(values) - {""})
    if len(concepts) > 1:
        log.add(
            f"the panel mixes income concepts ({_listing(concepts)}); districts are comparable "
            "only on one concept and unit",
            "split the panel by income concept, or harmonise it first",
            column="income_concept",
            severity="warning",
        )
    return "; ".join(concepts)


def _level_sources(rows: Rows, good_rows: np.ndarray, bounds: Any):
    """(table, district per row) for the panel's kept rows and the matched boundaries."""
    ok = np.flatnonzero(good_rows)
    part = rows.table if len(ok) == len(rows.table) else rows.table.iloc[ok]
    # the district of each row as codes into the sorted ids: no string per row
    districts = pd.Categorical.from_codes(
        rows.code[ok], categories=pd.Index(rows.names, dtype=object)
    )
    sources = [(part, districts, "")]
    if bounds is not None:
        regions = set(rows.names[np.unique(rows.code[ok])])
        inside = bounds[bounds["region"].isin(regions)]
        attrs = inside.drop(columns=["region", "name", "geometry"], errors="ignore")
        sources.append((attrs, inside["region"].to_numpy(), "boundaries"))
    return sources


def _agree(column: str, ours: pd.Series, theirs: pd.Series, boundary_file: str, log: Log) -> None:
    """A column in both files must agree; the panel's values win."""
    other = theirs.reindex(ours.index)
    clash = other.ne(ours) & other.notna()
    if clash.any():
        log.add(
            f"the boundary file's '{column}' differs from the panel's for {clash.sum()} district(s) "
            f"({_listing(list(clash.index[clash]))}); the panel's values are used",
            "make the two files agree",
            file=boundary_file,
            column=column,
            severity="warning",
        )


def _proposed(sources, n: int, boundary_file: str, log: Log) -> dict[str, pd.Series]:
    """Levels detected without the planner: see :func:`explorer.data.levels.propose_levels`."""
    found: dict[str, tuple[int, pd.Series]] = {}
    for table, regions, source in sources:
        for column, (candidate, mapping) in propose(table, regions, n, source or "panel").items():
            if column in found:
                _agree(column, found[column][1], mapping, boundary_file, log)
                continue
            found[column] = (candidate.groups, mapping)
    order = sorted(found, key=lambda c: (found[c][0], c))
    return {c: found[c][1] for c in order}


def _chosen(
    sources, choice: LevelChoice, n: int, boundary_file: str, log: Log
) -> dict[str, pd.Series]:
    """The planner's levels in their order, under their display names, each checked."""
    out: dict[str, pd.Series] = {}
    for column, name in zip(choice.columns, choice.names, strict=True):
        values = [district_values(t, r, column) for t, r, _ in sources if column in t.columns]
        if not values:
            log.add(
                f"the level '{column}' is not a column of the panel or the boundary file",
                "name an existing column",
                column=column,
            )
            continue
        mapping = values[0]
        if mapping is None or not 1 < mapping.nunique() < n:
            log.add(
                f"'{column}' cannot be a level: it must have one value per district and make "
                f"more than one and fewer than {n} groups",
                "check that every district has a single value in this column",
                column=column,
            )
            continue
        if len(values) > 1 and values[1] is not None:
            _agree(column, mapping, values[1], boundary_file, log)
        if name in out or name == "region":
            log.add(
                f"the level name '{name}' is used twice (or is 'region')",
                "give every level its own name",
                column=column,
            )
            continue
        out[name] = mapping
    return out


def _hierarchy(rows: Rows, good_rows, regions, bounds, choice, boundary_file: str, log: Log):
    """The hierarchy table (region + one column per level), the level names, and the
    boundaries cut to region, name, levels and geometry."""
    sources = _level_sources(rows, good_rows, bounds)
    n = len(regions)
    if choice is None:
        levels = _proposed(sources, n, boundary_file, log)
    else:
        levels = _chosen(sources, choice, n, boundary_file, log)
    hierarchy = pd.DataFrame({"region": pd.Series(regions, dtype=str)})
    for name, mapping in levels.items():
        values = mapping.reindex(regions)
        if values.isna().any():
            missing = list(values.index[values.isna()])
            log.add(
                f"level '{name}' is unknown for {len(missing)} district(s) ({_listing(missing)}); they are put in '{_KEPT}'",
                "give every district its higher-level unit",
                column=name,
                severity="warning",
            )
            values = values.fillna(_KEPT)
        hierarchy[name] = pd.Series(values.to_numpy(), dtype=str)
    if bounds is not None:
        names = dict(zip(choice.columns, choice.names, strict=True)) if choice else {}
        from_file = {names.get(c, c): c for c in bounds.columns if names.get(c, c) in levels}
        keep = ["region", *(["name"] if "name" in bounds.columns else [])]
        bounds = bounds[[*keep, *from_file.values(), "geometry"]].rename(
            columns={c: name for name, c in from_file.items()}
        )
    return hierarchy, tuple(levels), bounds


def _start(frame: Any, file: str, boundaries: Any, kind: str | None) -> Log:
    """The problem log, holding the readers' own warnings; a non-table is refused."""
    if not isinstance(frame, pd.DataFrame):
        raise DataError(Problem("expected a table of rows and columns", file=file))
    inherited = list(frame.attrs.get("problems", ()))
    if boundaries is not None:
        inherited += list(getattr(boundaries, "attrs", {}).get("problems", ()))
    log = Log(file, inherited)
    if kind is not None and kind not in KINDS:
        log.add(f"unknown kind {kind!r}", f"use one of {', '.join(KINDS)}")
    return log


def _attach_ids(
    codes: np.ndarray, names: np.ndarray, boundaries: Any, boundary_file: str, log: Log
):
    """Match the boundary ids to the panel's (padding numeric ids where that makes every id
    match); returns the panel's id codes and names to use and the match, or None without
    boundaries."""
    if boundaries is None:
        return codes, names, None
    found = boundary_ids(boundaries, set(names), boundary_file, log)
    if found is not None and found.panel_ids:
        padded = np.array([found.panel_ids.get(r, r) for r in names], dtype=object)
        merged, names = pd.factorize(padded)  # two ids padded alike are one district
        codes = np.where(codes < 0, -1, merged[np.maximum(codes, 0)]).astype(np.int32)
        names = np.asarray(names, dtype=object)
    return codes, names, found


def validate(
    frame: pd.DataFrame,
    *,
    kind: str | None = None,
    file: str = "",
    boundaries: Any = None,
    boundary_file: str = "",
    levels: Sequence[str] | Mapping[str, str] | None = None,
    allow_negative: bool = False,
) -> Panel:
    """Check a table (and optionally its boundaries) and return a :class:`Panel`.

    Every problem is collected before anything is raised. A value problem confined to one
    district-year (shares that do not sum to 1, a negative or missing value, brackets out
    of order) leaves that district-year out (``Panel.excluded``) with a warning; problems
    with the file as a whole raise :class:`DataError`.

    Parameters
    ----------
    frame : DataFrame
        As read; never modified. Its integer index, when unique, is taken as file line
        minus 2 (header = line 1), which is what :func:`explorer.data.tables.read_table`
        returns.
    kind : {"brackets", "units", "means"}, optional
        Overrides detection from the columns.
    file, boundary_file : str
        Names used in problems.
    boundaries : GeoDataFrame, optional
        In EPSG:4326. With a ``region`` column, or the attribute best matching the
        panel's ids is used (numeric ids are matched to zero-padded codes when that makes
        every id match, with a warning saying so).
    levels : sequence of str, or mapping column -> display name, optional
        The higher levels the planner chose, outermost first; ``Panel.levels`` and the
        hierarchy's columns take the display names. By default the text columns that
        nest the districts into 2 to n/2 groups
        (:func:`explorer.data.levels.propose_levels`), fewest groups first.
    allow_negative : bool
        Accept negative unit incomes (losses); zero incomes are always accepted.

    Returns
    -------
    Panel

    Raises
    ------
    DataError
        Listing every problem (errors and warnings), each with file, line and column.

    References
    ----------
    Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index. *Review
    of Economics and Statistics* 54: 306-316 (a Lorenz curve from bracket shares must be
    convex: bracket mean incomes non-decreasing from bottom to top).
    """
    log = _start(frame, file, boundaries, kind)
    choice = read_choice(levels)
    columns = _shape(frame, log)
    layout = detect_layout(columns, kind, log)
    table = frame.copy(deep=False)
    table.columns = list(columns)
    line = _file_lines(frame)
    codes, names, year = _keys(table, line, log)
    report_clashes(names, file, "region", log)
    codes, names, id_match = _attach_ids(codes, names, boundaries, boundary_file, log)
    table = table[_needed_columns(table, layout, choice)]
    rows = _district_years(table, codes, names, year, line)
    del table, codes, year, line

    found = Findings(log)
    values = _values(rows, layout, found, allow_negative, frame.attrs.get("scales"))
    excluded = _set_aside(rows, layout, found)
    good = np.ones(rows.n_groups, dtype=bool)
    good[found.fails.first()["gid"].to_numpy(dtype=np.int64)] = False
    data = _tidy(values, rows, layout.kind, good)
    del values
    rows = _without_values(rows, layout)

    _coverage(rows, good, log)
    income_concept = _income_concept(rows.table, good[rows.gid], log)
    # the kept districts, from their codes (sorted ids, as in the tidy table)
    kept_codes = np.unique(rows.code[rows.starts][good])
    regions = pd.unique(pd.Series(rows.names[kept_codes], dtype=str))
    bounds = _matched(boundaries, regions, id_match, boundary_file, log)
    hierarchy, level_names, bounds = _hierarchy(
        rows, good[rows.gid], regions, bounds, choice, boundary_file, log
    )
    log.raise_if_failed()
    return Panel(
        kind=layout.kind,
        data=data,
        levels=level_names,
        hierarchy=hierarchy,
        boundaries=bounds,
        warnings=tuple(log.items),
        fingerprint=fingerprint(layout.kind, data, hierarchy, bounds),
        name=Path(file).stem if file else "",
        income_concept=income_concept,
        excluded=excluded,
    )


def _values(
    rows: Rows, layout: Layout, found: Findings, allow_negative: bool, scales=None
) -> pd.DataFrame:
    if layout.kind == "brackets":
        return bracket_values(rows, layout, found)
    if layout.kind == "units":
        return unit_values(rows, found, allow_negative)
    if layout.kind == "published":
        return published_values(rows, found, scales)
    return mean_values(rows, found)


def _matched(boundaries: Any, regions, id_match: IdMatch | None, boundary_file: str, log: Log):
    if boundaries is None or id_match is None:
        return None
    return attach_boundaries(boundaries, regions, id_match, boundary_file, log)

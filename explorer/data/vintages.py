"""Boundary vintages and the change table that links them.

A *vintage* is a boundary file valid from a year (``FILE@YEAR``; a plain ``FILE`` is valid
from the panel's first year). A *change table* says, for each year a new vintage starts,
which districts of the vintage before it went where: one row per piece, with the columns
``year, from, to, weight`` and optionally ``weight_kind`` (``population``, ``area``,
``dwellings``, ``households`` or ``stated``, the default). ``weight`` is the share of the
``from`` district (of its population, area, dwellings ...) that went to ``to``; a district
that keeps part of itself has a row to itself. Districts not named in ``from`` that year
carry on unchanged.

Every check reports a :class:`~explorer.data.model.Problem` through
:func:`~explorer.data.model.fail` / :class:`~explorer.data.model.DataError`, with the file,
its line, the column, what is wrong and how to fix it; all problems are listed at once.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.ids import id_strings, match_ids
from explorer.data.model import DataError, Problem, _listing, fail

__all__ = [
    "SUM_TOLERANCE",
    "WEIGHT_KINDS",
    "ChangeTable",
    "Vintage",
    "carry_edges",
    "check_panel_ids",
    "changes_from_frame",
    "order_vintages",
    "parse_spec",
    "read_changes",
    "read_vintage",
]

SUM_TOLERANCE = 1e-6  # how far a source's weights in one year may sum from 1
WEIGHT_KINDS = ("population", "area", "dwellings", "households", "stated")
_SPEC = re.compile(r"^(?P<file>.+)@(?P<year>\d{4})$")
_COLUMNS = ("year", "from", "to", "weight")


# --------------------------------------------------------------------------- vintages


@dataclass(frozen=True)
class Vintage:
    """One boundary file and the year from which it is valid.

    Attributes
    ----------
    file : str
        The file's name as the user gave it.
    year : int or None
        First year the boundaries are valid; None until :func:`order_vintages` sets it to
        the panel's first year (a plain ``FILE``).
    ids : tuple of str
        District ids of the file.
    geometry : GeoDataFrame or None
        ``region``, ``geometry`` in EPSG:4326 (None for a vintage given by ids only).
    """

    file: str
    year: int | None
    ids: tuple[str, ...]
    geometry: Any = None


def parse_spec(text: str) -> tuple[str, int | None]:
    """``FILE@YEAR`` as (FILE, YEAR); a plain ``FILE`` as (FILE, None).

    Only a four-digit year after the last ``@`` counts, so a path with an ``@`` elsewhere
    stays a path.
    """
    found = _SPEC.match(str(text).strip())
    if found:
        return found["file"], int(found["year"])
    return str(text).strip(), None


def read_vintage(
    spec: str,
    *,
    boundary_id: str | None = None,
    layer: str | None = None,
    crs: str | None = None,
    ids_hint: Iterable[str] = (),
) -> Vintage:
    """Read one boundary vintage given as ``FILE@YEAR`` or ``FILE``.

    The id attribute is ``boundary_id`` when given, else an attribute called ``region``,
    else the attribute that matches most of ``ids_hint`` (the change table's and the
    panel's ids).

    Raises
    ------
    DataError
        When the file cannot be read or no attribute holds the ids.
    """
    from explorer.data.boundaries import read_boundaries

    path, year = parse_spec(spec)
    file = Path(path).name
    frame = read_boundaries(path, layer=layer, crs=crs, file_label=file)
    attrs = [c for c in frame.columns if c != frame.geometry.name]
    if boundary_id is not None:
        if boundary_id not in attrs:
            raise fail(
                f"the boundary file has no attribute {boundary_id!r}; its attributes are: "
                f"{', '.join(attrs)}",
                "choose one of these attributes with --boundary-id",
                file=file,
            )
        column = boundary_id
    else:
        found = match_ids(set(ids_hint), {str(c): id_strings(frame[c]) for c in attrs})
        column = found.column if found.column is not None else None
        if column is None or (found.matched == 0 and column != "region"):
            raise fail(
                f"no attribute of the boundary file holds the district ids (attributes: "
                f"{_listing(attrs, 20)})",
                "name the id attribute with --boundary-id, or call it 'region'",
                file=file,
            )
    ids = id_strings(frame[column])
    if any(i is None for i in ids):
        raise fail(
            f"{sum(i is None for i in ids)} feature(s) have no district id",
            "give every feature an id",
            file=file,
            column=column,
        )
    geometry = frame[[frame.geometry.name]].assign(region=ids)
    geometry = geometry.dissolve(by="region", as_index=False)[["region", "geometry"]]
    return Vintage(file, year, tuple(sorted(set(ids))), geometry)


def order_vintages(vintages: Sequence[Vintage], first_year: int) -> tuple[Vintage, ...]:
    """The vintages by year, a plain ``FILE`` valid from ``first_year``.

    Raises
    ------
    DataError
        When two vintages start in the same year (two plain files, for instance).
    """
    dated = [
        v if v.year is not None else Vintage(v.file, first_year, v.ids, v.geometry)
        for v in vintages
    ]
    dated.sort(key=lambda v: v.year)
    problems = []
    for before, after in zip(dated, dated[1:], strict=False):
        if before.year == after.year:
            problems.append(
                Problem(
                    f"two boundary vintages start in {after.year}: {before.file} and {after.file}",
                    "give each file the year it starts as FILE@YEAR (a plain FILE starts in "
                    "the panel's first year)",
                    file=after.file,
                )
            )
    if problems:
        raise DataError(problems)
    return tuple(dated)


def _valid_in(vintages: Sequence[Vintage], year: int) -> Vintage | None:
    """The vintage in force in ``year``: the latest starting in or before it."""
    before = [v for v in vintages if v.year is not None and v.year <= year]
    return before[-1] if before else None


# --------------------------------------------------------------------------- change table


@dataclass(frozen=True)
class ChangeTable:
    """Checked boundary changes.

    Attributes
    ----------
    file : str
        Where the changes came from (a file name, or what derived them).
    table : DataFrame
        ``year`` (int, the first year of the new boundaries), ``source``, ``target``
        (str), ``weight`` (float in [0, 1], summing to 1 per source and year),
        ``weight_kind`` (str), ``line`` (the file line, header = 1; 0 when derived).
    warnings : tuple of Problem
    """

    file: str
    table: pd.DataFrame
    warnings: tuple[Problem, ...] = field(default=())

    @property
    def years(self) -> tuple[int, ...]:
        """Years in which boundaries changed, sorted."""
        return tuple(int(y) for y in np.unique(self.table["year"].to_numpy()))


def read_changes(
    path: str | Path, *, vintages: Sequence[Vintage] = (), file_label: str | None = None
) -> ChangeTable:
    """Read and check a change table (CSV, Parquet or Excel, read like every other table).

    Parameters
    ----------
    path : path
        The table: ``year, from, to, weight`` and optionally ``weight_kind``.
    vintages : sequence of Vintage, optional
        Dated vintages (:func:`order_vintages`); with them, ids are checked against the
        vintage before and after each change, and every new district must have a source.
    file_label : str, optional
        The name problems give the file.

    Raises
    ------
    DataError
        Every problem found (see :func:`changes_from_frame`).
    """
    from explorer.data.tables import read_table

    file = file_label or Path(path).name
    return changes_from_frame(read_table(path, file_label=file), file, vintages)


def changes_from_frame(
    frame: pd.DataFrame, file: str, vintages: Sequence[Vintage] = ()
) -> ChangeTable:
    """Check a change table already read (index = file line - 2, as the readers give it).

    Checks, each reported with its line and column: the columns are there; years, ids and
    weights are given and readable; weights lie in [0, 1]; no piece is listed twice; each
    source's weights sum to 1 in its year (within :data:`SUM_TOLERANCE`); with vintages,
    each ``from`` id is in the vintage before the change and each ``to`` id in the vintage
    it starts, a vintage starts in each change year, every district of the new vintage has
    a source and no district of the old one is lost; no district comes back to itself
    through the changes (a cycle).

    Raises
    ------
    DataError
        Listing every problem.
    """
    frame = frame.copy(deep=False)
    frame.columns = [str(c).strip().lower() for c in frame.columns]
    missing = [c for c in _COLUMNS if c not in frame.columns]
    if missing:
        raise fail(
            f"the change table lacks the column(s) {', '.join(missing)} (it has "
            f"{_listing(list(frame.columns), 12)})",
            "give the columns year, from, to, weight (and optionally weight_kind)",
            file=file,
        )
    if frame.empty:
        raise fail("the change table has no rows", "list one row per piece of district", file=file)
    problems: list[Problem] = []
    table = _typed(frame, file, problems)
    if problems:
        raise DataError(problems)
    _check_weights(table, file, problems)
    if vintages:
        _check_ids(table, file, vintages, problems)
    _check_cycles(table, file, problems)
    if problems:
        raise DataError(problems)
    return ChangeTable(file, table.reset_index(drop=True))


def _typed(frame: pd.DataFrame, file: str, problems: list[Problem]) -> pd.DataFrame:
    line = np.asarray(frame.index, dtype=np.int64) + 2
    year = pd.to_numeric(frame["year"], errors="coerce").to_numpy(dtype=float)
    weight = pd.to_numeric(frame["weight"], errors="coerce").to_numpy(dtype=float)
    source = id_strings(frame["from"])
    target = id_strings(frame["to"])
    if "weight_kind" in frame.columns:
        kind = frame["weight_kind"].astype("string").str.strip().str.lower().fillna("")
        kind = kind.replace("", "stated").to_numpy(dtype=object)
    else:
        kind = np.full(len(frame), "stated", dtype=object)
    checks = (
        (
            "year",
            ~np.isfinite(year) | (year != np.round(year)),
            "the year is missing or not a whole number",
            "write the first year of the new boundaries, e.g. 2011",
        ),
        (
            "from",
            np.array([s is None for s in source]),
            "the 'from' district is missing",
            "give the id of the district the piece came from",
        ),
        (
            "to",
            np.array([t is None for t in target]),
            "the 'to' district is missing",
            "give the id of the district the piece went to",
        ),
        (
            "weight",
            ~np.isfinite(weight),
            "the weight is missing or not a number",
            "give the share of the 'from' district that went to 'to', between 0 and 1",
        ),
    )
    for column, bad, message, fix in checks:
        for i in np.flatnonzero(bad):
            problems.append(Problem(message, fix, file=file, row=int(line[i]), column=column))
    out_of_range = np.isfinite(weight) & ((weight < 0) | (weight > 1))
    for i in np.flatnonzero(out_of_range):
        problems.append(
            Problem(
                f"the weight {weight[i]:g} is outside [0, 1]",
                "a weight is the share of the 'from' district that went to 'to': write it "
                "between 0 and 1 (a percentage divided by 100)",
                file=file,
                row=int(line[i]),
                column="weight",
            )
        )
    unknown_kind = ~np.isin(kind, WEIGHT_KINDS)
    for i in np.flatnonzero(unknown_kind):
        problems.append(
            Problem(
                f"the weight kind {kind[i]!r} is not known",
                f"write one of {', '.join(WEIGHT_KINDS)}",
                file=file,
                row=int(line[i]),
                column="weight_kind",
            )
        )
    return pd.DataFrame(
        {
            "year": np.where(np.isfinite(year), year, 0).astype(np.int64),
            "source": pd.Series(source, dtype=object),
            "target": pd.Series(target, dtype=object),
            "weight": weight,
            "weight_kind": pd.Series(kind, dtype=object),
            "line": line,
        }
    )


def _check_weights(table: pd.DataFrame, file: str, problems: list[Problem]) -> None:
    twice = table.duplicated(["year", "source", "target"], keep="first")
    for row in table[twice].itertuples():
        problems.append(
            Problem(
                f"the piece from {row.source} to {row.target} in {row.year} is listed twice",
                "keep one row per piece (add the weights together)",
                file=file,
                row=int(row.line),
                column="to",
            )
        )
    sums = table.groupby(["year", "source"], sort=True).agg(
        total=("weight", "sum"), line=("line", "min"), lines=("line", list)
    )
    off = sums[(sums["total"] - 1).abs() > SUM_TOLERANCE]
    for (year, source), row in off.iterrows():
        problems.append(
            Problem(
                f"the weights of district {source} in {year} sum to {row['total']:.6g}, not 1 "
                f"(lines {_listing(row['lines'])})",
                f"make the shares of {source} add up to 1 (within {SUM_TOLERANCE:g}); a part "
                "it keeps needs a row to itself",
                file=file,
                row=int(row["line"]),
                column="weight",
            )
        )


def _check_ids(
    table: pd.DataFrame, file: str, vintages: Sequence[Vintage], problems: list[Problem]
) -> None:
    starts = {v.year: v for v in vintages}
    for year, rows in table.groupby("year", sort=True):
        after = starts.get(int(year))
        before = _valid_in(vintages, int(year) - 1)
        if after is None:
            problems.append(
                Problem(
                    f"no boundary vintage starts in {year}, the year of this change",
                    "give the new boundaries as FILE@YEAR, or correct the year",
                    file=file,
                    row=int(rows["line"].min()),
                    column="year",
                )
            )
            continue
        if before is None:
            problems.append(
                Problem(
                    f"no boundary vintage is valid before {year}, so the districts changed "
                    "then are unknown",
                    "give the earlier boundaries as FILE@YEAR (or a plain FILE)",
                    file=file,
                    row=int(rows["line"].min()),
                    column="year",
                )
            )
            continue
        old, new = set(before.ids), set(after.ids)
        for column, side, vintage, known in (
            ("from", "source", before, old),
            ("to", "target", after, new),
        ):
            for row in rows[~rows[side].isin(known)].itertuples():
                problems.append(
                    Problem(
                        f"district {getattr(row, side)} is not in the boundaries of "
                        f"{vintage.file} (valid from {vintage.year})",
                        f"use an id of {vintage.file}, or give the boundary file that has it",
                        file=file,
                        row=int(row.line),
                        column=column,
                    )
                )
        sources, targets = set(rows["source"]), set(rows["target"])
        orphans = sorted(t for t in new if t not in targets and (t not in old or t in sources))
        for target in orphans:
            problems.append(
                Problem(
                    f"district {target} of {after.file} (valid from {year}) has no source: "
                    f"no row of {year} has it in 'to', and it did not exist before",
                    f"add rows '{year},<old district>,{target},<weight>' for the districts it "
                    "was made from",
                    file=file,
                    column="to",
                )
            )
        lost = sorted(s for s in old if s not in sources and s not in new)
        for source in lost:
            problems.append(
                Problem(
                    f"district {source} of {before.file} is not in {after.file} (valid from "
                    f"{year}) and no row of {year} says where it went",
                    f"add rows '{year},{source},<new district>,<weight>'",
                    file=file,
                    column="from",
                )
            )


def _check_cycles(table: pd.DataFrame, file: str, problems: list[Problem]) -> None:
    """A district that ends (keeps no part of itself) and comes back through the changes."""
    keeps = set(
        zip(
            *table.loc[
                (table["source"] == table["target"]) & (table["weight"] > 0), ["year", "source"]
            ]
            .to_numpy()
            .T,
            strict=False,
        )
    )
    moves = table[(table["source"] != table["target"]) & (table["weight"] > 0)]
    graph: dict[str, list[tuple[str, int, int]]] = {}
    for row in moves.itertuples():
        if (row.year, row.source) not in keeps:
            graph.setdefault(row.source, []).append((row.target, int(row.year), int(row.line)))
    seen_cycles: set[frozenset] = set()
    state: dict[str, int] = {}  # 1: on the current path, 2: done
    for start in sorted(graph):
        if state.get(start):
            continue
        path: list[tuple[str, int, int]] = []  # (node, year, line) edges taken
        stack = [(start, iter(graph.get(start, ())))]
        state[start] = 1
        nodes = [start]
        while stack:
            node, edges = stack[-1]
            step = next(edges, None)
            if step is None:
                state[node] = 2
                stack.pop()
                nodes.pop()
                if path:
                    path.pop()
                continue
            target, year, line = step
            if state.get(target) == 1:
                first = nodes.index(target)
                loop = [*path[first:], step]
                key = frozenset(n for n, _, _ in loop)
                if key not in seen_cycles:
                    seen_cycles.add(key)
                    route = " → ".join([target] + [f"{n} ({y}, line {ln})" for n, y, ln in loop])
                    problems.append(
                        Problem(
                            f"district {target} comes back to itself through the changes: {route}",
                            "a district that ends cannot come back under its old id: give the "
                            "later district a new id, or correct the rows",
                            file=file,
                            row=min(ln for _, _, ln in loop),
                            column="to",
                        )
                    )
            elif not state.get(target):
                state[target] = 1
                path.append(step)
                nodes.append(target)
                stack.append((target, iter(graph.get(target, ()))))


# --------------------------------------------------------------------------- carrying


def carry_edges(keys: pd.DataFrame, changes: ChangeTable, to_vintage: int) -> pd.DataFrame:
    """For each district-year, the districts of ``to_vintage`` it goes to and with what weight.

    Data of year Y are on the boundaries in force in Y, so every change of a year C with
    Y < C <= ``to_vintage`` applies to them, in order; chained changes multiply their
    weights. A district not named in a change carries on unchanged.

    Parameters
    ----------
    keys : DataFrame
        ``region, year`` (one row per district-year).
    changes : ChangeTable
    to_vintage : int
        The year whose boundaries the result is on.

    Returns
    -------
    DataFrame
        ``region, year, target, weight, weight_kind, present, epoch``, one row per piece,
        for every district known in the year; ``present`` is False where the district has
        no data that year (its targets cannot be rebuilt whole); ``epoch`` numbers the
        groups of years the same changes apply to (their pieces are the same).

    Raises
    ------
    DataError
        When some data are on boundaries later than ``to_vintage`` (carrying back would
        need the reverse change table).
    """
    years = np.unique(keys["year"].to_numpy(dtype=np.int64))
    change_years = np.asarray(changes.years, dtype=np.int64)
    later = change_years[(change_years > to_vintage) & (change_years <= years.max())]
    if later.size:
        raise fail(
            f"the data of {years[years >= later.min()].min()} on are on the boundaries of "
            f"{later.max()}, later than the target vintage {to_vintage}; carrying them back "
            "would need the reverse changes",
            f"choose a target vintage of {later.max()} or later",
            file=changes.file,
            column="year",
        )
    table = changes.table
    pieces = []
    for number, (epoch_years, epoch) in enumerate(_epochs(years, change_years, to_vintage)):
        # Every district known to exist in these years: those with data, and those the
        # first change names as sources (so a source with no data is seen as missing).
        ids = pd.concat(
            [
                keys.loc[keys["year"].isin(epoch_years), "region"],
                table.loc[table["year"] == epoch[0], "source"]
                if epoch
                else pd.Series([], dtype=object),
            ]
        ).drop_duplicates()
        edges = pd.DataFrame(
            {
                "region": ids.to_numpy(dtype=object),
                "target": ids.to_numpy(dtype=object),
                "weight": 1.0,
                "weight_kind": "as published",
            }
        )
        for change in epoch:
            rows = table.loc[table["year"] == change, ["source", "target", "weight", "weight_kind"]]
            moved = edges["target"].isin(set(rows["source"]))
            stepped = edges[moved].merge(
                rows.rename(columns={"target": "next", "weight": "w", "weight_kind": "k"}),
                left_on="target",
                right_on="source",
            )
            stepped = stepped.assign(
                target=stepped["next"],
                weight=stepped["weight"] * stepped["w"],
                weight_kind=np.where(
                    (stepped["weight_kind"] == "as published")
                    | (stepped["weight_kind"] == stepped["k"]),
                    stepped["k"].astype(object),
                    (stepped["weight_kind"] + "+" + stepped["k"]).astype(object),
                ),
            )[["region", "target", "weight", "weight_kind"]]
            edges = pd.concat([edges[~moved], stepped], ignore_index=True)
            edges = edges.groupby(["region", "target"], as_index=False, sort=False).agg(
                weight=("weight", "sum"), weight_kind=("weight_kind", "first")
            )
        every = (
            pd.DataFrame({"year": np.asarray(epoch_years, dtype=np.int64)})
            .merge(edges, how="cross")
            .assign(epoch=number)
        )
        pieces.append(every)
    out = pd.concat(pieces, ignore_index=True)
    out = out[out["weight"] > 0]
    present = keys[["region", "year"]].drop_duplicates().assign(present=True)
    out = out.merge(present, on=["region", "year"], how="left")
    out["present"] = out["present"].fillna(False).astype(bool)
    return out.sort_values(["year", "target", "region"], ignore_index=True)[
        ["region", "year", "target", "weight", "weight_kind", "present", "epoch"]
    ]


def _epochs(years: np.ndarray, change_years: np.ndarray, to_vintage: int):
    """Data years grouped by the changes that apply to them (those after Y, up to the target)."""
    applies = [tuple(int(c) for c in change_years if y < c <= to_vintage) for y in years]
    groups: dict[tuple[int, ...], list[int]] = {}
    for year, epoch in zip(years.tolist(), applies, strict=True):
        groups.setdefault(epoch, []).append(year)
    return [(ys, epoch) for epoch, ys in groups.items()]


def check_panel_ids(keys: pd.DataFrame, vintages: Sequence[Vintage], file: str) -> list[Problem]:
    """Panel districts missing from the vintage in force in their year, one problem each.

    Parameters
    ----------
    keys : DataFrame
        ``region, year`` of the panel.
    vintages : sequence of Vintage
        Dated (:func:`order_vintages`).
    file : str
        The panel's file name.
    """
    problems: list[Problem] = []
    if not vintages:
        return problems
    pairs = keys[["region", "year"]].drop_duplicates()
    for vintage, after in zip(vintages, [*vintages[1:], None], strict=True):
        inside = pairs["year"] >= vintage.year
        if after is not None:
            inside &= pairs["year"] < after.year
        rows = pairs[inside & ~pairs["region"].isin(set(vintage.ids))]
        for region, years in rows.groupby("region", sort=True)["year"]:
            problems.append(
                Problem(
                    f"district {region} has data in {_listing(sorted(years.tolist()), 4)} but is "
                    f"not in {vintage.file}, the boundaries in force then (from {vintage.year})",
                    "give the year each boundary file starts as FILE@YEAR, or correct the id",
                    file=file,
                    column="region",
                )
            )
    return problems

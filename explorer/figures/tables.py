"""The tidy tables behind every page and the report: names, map values, rankings, splits.

Streamlit-free; pandas in, pandas out. The words that label these tables live in
:mod:`explorer.present.vocabulary`.
"""

from __future__ import annotations

import weakref
from typing import Any

import numpy as np
import pandas as pd

from explorer.present.vocabulary import WIDE_SHARE

__all__ = [
    "county_level",
    "district_means",
    "lorenz_band",
    "lorenz_points",
    "map_values",
    "names",
    "per_level",
    "ranking",
    "ranks",
    "share_table",
    "why_missing",
    "wide",
]


def county_level(panel: Any) -> str | None:
    """The innermost level above districts (e.g. county), or None."""
    return panel.levels[-1] if panel.levels else None


#: names() of each panel while it lives: pages ask for them several times a rerun.
_NAMES: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def names(panel: Any) -> pd.DataFrame:
    """region, name, county for every district (names from the boundary file if any)."""
    try:
        known = _NAMES.get(panel)
    except TypeError:  # a stand-in that cannot be weakly referenced: no keeping
        return _names(panel)
    if known is None:
        known = _names(panel)
        _NAMES[panel] = known
    return known.copy()


def _names(panel: Any) -> pd.DataFrame:
    out = pd.DataFrame({"region": [str(r) for r in panel.regions]})
    level = county_level(panel)
    if level is not None:
        hierarchy = panel.hierarchy[["region", level]].rename(columns={level: "county"})
        hierarchy = hierarchy.assign(region=hierarchy["region"].astype(str))
        out = out.merge(hierarchy.drop_duplicates("region"), on="region", how="left")
    else:
        out["county"] = ""
    if panel.boundaries is not None and "name" in panel.boundaries.columns:
        named = pd.DataFrame(
            {
                "region": panel.boundaries["region"].astype(str).to_numpy(),
                "name": panel.boundaries["name"].astype(str).to_numpy(),
            }
        ).drop_duplicates("region")
        out = out.merge(named, on="region", how="left")
    else:
        out["name"] = out["region"]
    out["name"] = out["name"].fillna(out["region"])
    out["county"] = out["county"].fillna("").astype(str)
    return out


def wide(table: pd.DataFrame) -> pd.Series:
    """True where a value's bounds or interval are wide (or unbounded)."""
    width = table["upper"] - table["lower"]
    unbounded = np.isinf(table["upper"]) | np.isinf(table["lower"])
    return (unbounded | (width > WIDE_SHARE * table["value"].abs())).fillna(False).astype(bool)


def why_missing(table: pd.DataFrame) -> str:
    """A sentence on districts without a finite figure and the most common reason."""
    finite = np.isfinite(table["value"].to_numpy(dtype=float))
    if finite.all():
        return ""
    notes = table.loc[~finite, "note"] if "note" in table.columns else pd.Series(dtype=str)
    notes = notes[notes.astype(str).str.len() > 0]
    reason = f" Reason: {notes.mode().iloc[0]}" if len(notes) else ""
    count = int((~finite).sum())
    return (
        f"{count} of {len(table)} districts have no finite figure and are drawn grey."
        f"{reason} Another index or Lorenz method may give one."
    )


def ranking(table: pd.DataFrame) -> pd.DataFrame:
    """Districts by value, highest first, with a rank (ties share a rank) and the ranks
    their bounds allow (``rank_range``, e.g. ``3–11``; blank where no district has bounds).

    A district's best rank puts it at its lower bound and every other at its upper bound,
    its worst rank the reverse (:func:`explorer.stats.ranks.from_bounds`), so the range
    covers its true rank whenever the bounds hold.
    """
    from explorer.stats.ranks import from_bounds

    ranked = table[np.isfinite(table["value"])].sort_values("value", ascending=False)
    ranked = ranked.assign(rank=ranked["value"].rank(ascending=False, method="min").astype(int))
    ranked = ranked.reset_index(drop=True)
    words = [""] * len(ranked)
    best = worst = np.full(len(ranked), np.nan)
    if {"lower", "upper"} <= set(ranked.columns) and len(ranked):
        lower = ranked["lower"].to_numpy(dtype=float)
        upper = ranked["upper"].to_numpy(dtype=float)
        if np.isfinite(lower).any() or np.isfinite(upper).any():
            found = from_bounds(ranked["value"], lower, upper, descending=True)
            best, worst = found.best, found.worst
            words = [
                f"{int(b)}" if b == w else f"{int(b)}–{int(w)}"
                for b, w in zip(found.best, found.worst, strict=True)
            ]
    return ranked.assign(rank_range=words, best=best, worst=worst)


def rank_moves(now: pd.DataFrame, then: pd.DataFrame, year_from: int) -> pd.DataFrame:
    """The ranking ``now`` with each district's rank in ``year_from`` and its move, in words.

    A move is "clear" when the ranges of ranks the bounds allow in the two years do not
    let the district stay where it was (:func:`explorer.stats.ranks.rank_change`); ranks
    without bounds move by their point ranks alone, and the words say nothing of clarity.
    """
    from explorer.stats.ranks import RankIntervals, rank_change

    earlier = then.set_index(then["region"].astype(str))
    rows = now.assign(region=now["region"].astype(str))
    prior = earlier.reindex(rows["region"])
    first = RankIntervals(
        prior["rank"].to_numpy(float), prior["best"].to_numpy(float), prior["worst"].to_numpy(float)
    )
    second = RankIntervals(
        rows["rank"].to_numpy(float), rows["best"].to_numpy(float), rows["worst"].to_numpy(float)
    )
    change, _, _, clear = rank_change(first, second)
    bounded = np.isfinite(first.best) & np.isfinite(second.best)
    words = []
    for step, sure, has in zip(change, clear, bounded, strict=True):
        if np.isnan(step):
            words.append(f"not ranked in {year_from}")
            continue
        places = abs(int(step))
        text = (
            "same place"
            if places == 0
            else f"{places} place{'s' if places > 1 else ''} "
            + ("nearer rank 1" if step < 0 else "further from rank 1")
        )
        if has:
            text += " (clear)" if sure else " (within the ranges)"
        words.append(text)
    return rows.assign(rank_then=prior["rank"].to_numpy(float), move=words)


def share_table(parts: pd.DataFrame, year: Any) -> pd.DataFrame:
    """The province-wide parts of one year (level, component, value, share)."""
    rows = parts[
        (parts["year"] == year)
        & (parts["group"] == "(all)")
        & parts["component"].isin(("within", "between", "overlap"))
        & (parts["level"] != "total")
    ]
    rows = rows.assign(level=rows["level"].replace({"region": "district"}))
    return rows[["level", "component", "value", "share"]].reset_index(drop=True)


def lorenz_points(panel: Any, region: str, year: int) -> pd.DataFrame:
    """p, L: a district-year's Lorenz points (bracket limits, or every unit for unit data)."""
    data = panel.data
    rows = data[(data["region"].astype(str) == region) & (data["year"] == year)]
    if panel.kind == "brackets":
        p = np.concatenate([[0.0], np.cumsum(rows["pop_share"].to_numpy(dtype=float))])
        lorenz = np.concatenate([[0.0], np.cumsum(rows["income_share"].to_numpy(dtype=float))])
    else:
        order = np.argsort(rows["income"].to_numpy(dtype=float), kind="stable")
        income = rows["income"].to_numpy(dtype=float)[order]
        weight = rows["weight"].to_numpy(dtype=float)[order]
        p = np.concatenate([[0.0], np.cumsum(weight) / weight.sum()])
        lorenz = np.concatenate([[0.0], np.cumsum(income * weight) / (income * weight).sum()])
    return pd.DataFrame({"p": p, "L": lorenz})


def ranks(table: pd.DataFrame, index: str, panel: Any) -> pd.DataFrame:
    """region, year, rank, value, name: districts ranked by an index within each year."""
    rows = table[table["index"] == index][["region", "year", "value"]]
    rows = rows[np.isfinite(rows["value"])]
    rows = rows.assign(
        region=rows["region"].astype(str),
        rank=rows.groupby("year")["value"].rank(ascending=False, method="min").astype(int),
    )
    return rows.merge(names(panel)[["region", "name"]], on="region", how="left")


def lorenz_band(curves: pd.DataFrame) -> pd.DataFrame | None:
    """p, lower, upper: the area between the straight-line and the steepest convex curve."""
    lower = curves[curves["method"] == "linear"][["p", "L"]].rename(columns={"L": "lower"})
    upper = curves[curves["method"] == "upper"][["p", "L"]].rename(columns={"L": "upper"})
    if lower.empty or upper.empty:
        return None
    return lower.merge(upper, on="p", how="inner")


def per_level(parts: pd.DataFrame) -> pd.DataFrame:
    """The nested decomposition re-read level by level, for the bars and the shares.

    For the GE family the table splits the total into between-county, between-district-
    within-county and within-district parts. A planner asks, for each level, "how much is
    between groups of this level and how much inside them": between(level) is the sum of
    the between parts down to that level and within(level) = total - between(level), so
    every level's bar adds up to the province's total. Tables that already give within and
    between at a level (the Gini's, with its overlap) pass through unchanged.
    """
    rows = parts[parts["group"] == "(all)"]
    totals = rows[rows["component"] == "total"].drop_duplicates("year").set_index("year")["value"]
    levels = [lv for lv in dict.fromkeys(rows["level"]) if lv != "total"]
    nested = rows[rows["level"].isin(levels)]
    has_within_each = all(
        {"within", "between"} <= set(nested.loc[nested["level"] == lv, "component"])
        for lv in levels
    )
    if has_within_each or not levels:
        out = nested[nested["component"].isin(("within", "between", "overlap"))]
        return out[["year", "level", "group", "component", "value", "share"]].reset_index(drop=True)
    between = (
        nested[nested["component"] == "between"]
        .pivot_table(index="year", columns="level", values="value", aggfunc="sum")
        .reindex(columns=levels)
        .fillna(0.0)
        .cumsum(axis=1)
    )
    pieces = []
    for level in levels:
        b = between[level]
        total = totals.reindex(b.index)
        for component, value in (("between", b), ("within", total - b)):
            pieces.append(
                pd.DataFrame(
                    {
                        "year": b.index,
                        "level": "district" if level == "region" else level,
                        "group": "(all)",
                        "component": component,
                        "value": value.to_numpy(),
                        "share": (value / total).to_numpy(),
                    }
                )
            )
    return pd.concat(pieces, ignore_index=True)


def district_means(panel) -> pd.DataFrame:
    """region, year, mean_income, population per district-year (for convergence)."""
    data = panel.data
    if panel.kind == "units":
        weighted = data.assign(wy=data["income"] * data["weight"])
        grouped = weighted.groupby(["region", "year"], sort=True, observed=True)
        out = grouped[["wy", "weight"]].sum().reset_index()
        out["mean_income"] = out["wy"] / out["weight"]
        return out.rename(columns={"weight": "population"})[
            ["region", "year", "mean_income", "population"]
        ]
    columns = [c for c in ("region", "year", "mean_income", "population") if c in data.columns]
    return data[columns].drop_duplicates(["region", "year"]).reset_index(drop=True)


def map_values(panel: Any, table: pd.DataFrame | None, year: int, index: str) -> pd.DataFrame:
    """One row per district for the map: region, name, county, value, lower, upper, wide.

    ``table`` holds the figures of every district-year (the index table, or the rows of
    :func:`explorer.figures.series.values`); without one, the district mean income.
    """
    if table is None:
        means = district_means(panel)
        rows = means[means["year"] == year].rename(columns={"mean_income": "value"})
        rows = rows.assign(lower=np.nan, upper=np.nan, note="")
    else:
        rows = table[(table["year"] == year) & (table["index"] == index)]
    rows = rows[["region", "value", "lower", "upper"] + (["note"] if "note" in rows else [])]
    rows = rows.assign(region=rows["region"].astype(str))
    out = names(panel).merge(rows, on="region", how="inner")
    out["wide"] = wide(out)
    return out.reset_index(drop=True)

"""Carry a panel across boundary changes to the districts of one vintage.

Each district-year goes to the districts of the target vintage with the change weights of
:func:`explorer.data.vintages.carry_edges`; how depends on the panel's kind:

- **means**: population carried = sum of weight x source population; mean = the
  population-weighted mean of the sources' means;
- **brackets**: a target with one source has the source's distribution (its shares are
  kept, its population scaled); a target with several has the population-weighted mixture
  of the sources' distributions rebuilt on the pooled decompositions' quantile grid
  (:func:`explorer.stats.decomposition.pseudo_units.pseudo_units`), whose Lorenz curve is
  read at the bracket boundaries of its largest source;
- **units**: each record goes to every target of its district, its weight times the change
  weight;
- **published**: carried only where a target comes whole from one source (weight 1, sole
  source); elsewhere the district-year is set aside as not comparable, never averaged.

The result says, per district-year, whether it was carried and how ("as published",
"split from X (weight 0.4)", "merged from A, B", "rebuilt from A (0.9), B (0.1)").

References
----------
Goodchild, M. F. & Lam, N. S.-N. (1980). Areal interpolation: a variant of the traditional
spatial problem. *Geo-Processing* 1: 297-312 (weights by area assume an even spread within
each source district; the same assumption is made of its income distribution here).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import Panel, Problem, _listing, fail, fingerprint
from explorer.data.vintages import ChangeTable, carry_edges
from explorer.stats.decomposition.pseudo_units import pseudo_units

__all__ = ["BRACKET_NOTE", "WAYS", "Harmonised", "harmonise", "way"]

WHOLE = 1 - 1e-9  # a weight this close to 1 is a whole district
#: How a district-year was carried, as the first words of its ``how``.
WAYS = ("as published", "renamed", "split", "merged", "rebuilt", "not comparable", "not carried")
BRACKET_NOTE = (
    "District-years rebuilt from several earlier districts are approximations: each source's "
    "distribution is rebuilt from its Lorenz fit on a quantile grid, the pieces are mixed by "
    "population weight, and the mixture's shares are read at the largest source's bracket "
    "boundaries. The change weights assume each piece has its district's distribution."
)


@dataclass(frozen=True)
class Harmonised:
    """A panel carried to one boundary vintage.

    Attributes
    ----------
    panel : Panel
        On the target vintage's districts (its boundaries when given).
    carried : DataFrame
        ``region, year, carried, how, weight_kind``: one row per target district-year;
        ``carried`` is False where it was set aside (``how`` then says why).
    to_vintage : int
    notes : tuple of str
        The approximations made, said once.
    """

    panel: Panel
    carried: pd.DataFrame
    to_vintage: int
    notes: tuple[str, ...] = ()


def harmonise(
    panel: Panel,
    changes: ChangeTable,
    to_vintage: int,
    *,
    boundaries: Any = None,
    method: str = "auto",
) -> Harmonised:
    """Carry ``panel`` to the districts of the vintage starting in ``to_vintage``.

    Parameters
    ----------
    panel : Panel
        Data of each year on the boundaries in force that year.
    changes : ChangeTable
        Checked changes (:func:`explorer.data.vintages.read_changes`, or derived by
        :mod:`explorer.data.overlay`).
    to_vintage : int
        The first year of the target boundaries.
    boundaries : GeoDataFrame, optional
        The target vintage's ``region, geometry`` (EPSG:4326), kept on the result.
    method : str
        Lorenz method for rebuilding grouped data (``auto`` by default).

    Returns
    -------
    Harmonised

    Raises
    ------
    DataError
        When data are on boundaries later than ``to_vintage``, or an unknown kind.
    """
    keys = panel.data[["region", "year"]].drop_duplicates()
    edges = carry_edges(keys, changes, int(to_vintage))
    edges = _with_population(edges, panel)
    story = _describe(edges)
    live = story[story["carried"]]
    use = edges.merge(live[["year", "target"]], on=["year", "target"])
    notes: list[str] = []
    if panel.kind == "means":
        data = _means(panel, use, notes)
    elif panel.kind == "units":
        data = _units(panel, use)
    elif panel.kind == "published":
        data, story = _published(panel, use, story)
    elif panel.kind == "brackets":
        data, lost = _brackets(panel, use, method, notes)
        if len(lost):
            story = story.merge(lost, on=["year", "target"], how="left")
            failed = story["reason"].notna()
            story.loc[failed, "how"] = "not carried: " + story.loc[failed, "reason"]
            story.loc[failed, "carried"] = False
            story = story.drop(columns="reason")
    else:
        raise fail(f"unknown panel kind '{panel.kind}'", "load the panel with load_panel")
    carried = story.rename(columns={"target": "region"})[
        ["region", "year", "carried", "how", "weight_kind"]
    ].sort_values(["region", "year"], ignore_index=True)
    out = _panel(panel, data, carried, boundaries, edges, int(to_vintage))
    return Harmonised(out, carried, int(to_vintage), tuple(notes))


# --------------------------------------------------------------------------- the pieces


def way(how: pd.Series) -> pd.Series:
    """The kind of carrying a ``how`` sentence names: one of :data:`WAYS`."""
    pattern = "^(" + "|".join(WAYS) + ")"
    return how.astype(str).str.extract(pattern, expand=False).fillna("")


def _with_population(edges: pd.DataFrame, panel: Panel) -> pd.DataFrame:
    """Each edge's source population (NaN when unknown) and weight x population."""
    data = panel.data
    if panel.kind in ("means", "brackets"):
        pop = data.drop_duplicates(["region", "year"])[["region", "year", "population"]]
    elif panel.kind == "units":
        pop = data.groupby(["region", "year"], as_index=False, sort=False)["weight"].sum()
        pop = pop.rename(columns={"weight": "population"})
    else:
        rows = data[data["measure"] == "population"]
        pop = rows[["region", "year"]].assign(
            population=pd.to_numeric(rows["value"], errors="coerce")
        )
    edges = edges.merge(pop, on=["region", "year"], how="left")
    edges["mass"] = edges["weight"] * edges["population"].fillna(1.0)
    return edges


def _fmt(weight: pd.Series) -> pd.Series:
    return weight.map(lambda w: f"{w:.3g}")


def _describe(edges: pd.DataFrame) -> pd.DataFrame:
    """Per target district-year: carried (all sources have data) and how, in words.

    The words depend only on the pieces, which are the same in every year of an epoch, so
    they are built once per epoch and target; only whether each source has data is per year.
    """
    pieces = edges.drop_duplicates(["epoch", "target", "region"]).sort_values(
        ["epoch", "target", "weight", "region"], ascending=[True, True, False, True]
    )
    grouped = pieces.groupby(["epoch", "target"], sort=False)
    words = grouped.agg(
        n=("region", "size"),
        first=("region", "first"),
        weight=("weight", "first"),
        lightest=("weight", "min"),
        weight_kind=("weight_kind", "first"),
    )
    words["names"] = grouped["region"].agg(", ".join)
    words["pieces"] = (
        (pieces["region"] + " (" + _fmt(pieces["weight"]) + ")")
        .groupby([pieces["epoch"], pieces["target"]], sort=False)
        .agg(", ".join)
    )
    words = words.reset_index()
    n = words["n"].to_numpy()
    w = words["weight"].to_numpy()
    same = words["first"].to_numpy() == words["target"].to_numpy()
    first = words["first"].astype(str)
    words["how"] = np.select(
        [
            (n == 1) & (w >= WHOLE) & same,
            (n == 1) & (w >= WHOLE),
            n == 1,
            words["lightest"].to_numpy() >= WHOLE,
        ],
        [
            "as published",
            "renamed from " + first,
            "split from " + first + " (weight " + _fmt(words["weight"]) + ")",
            "merged from " + words["names"].astype(str),
        ],
        default="rebuilt from " + words["pieces"].astype(str),
    )
    words["whole"] = (n == 1) & (w >= WHOLE)
    words.loc[words["how"] == "as published", "weight_kind"] = "as published"
    yearly = edges.groupby(["year", "target", "epoch"], as_index=False, sort=False).agg(
        any_present=("present", "any"), all_present=("present", "all")
    )
    summary = yearly[yearly["any_present"]].merge(
        words[["epoch", "target", "how", "weight_kind", "whole"]], on=["epoch", "target"]
    )
    summary["carried"] = summary["all_present"]
    gap = ~summary["carried"].to_numpy()
    if gap.any():
        absent = (
            edges[~edges["present"]]
            .groupby(["year", "target"], sort=False)["region"]
            .agg(", ".join)
            .rename("absent")
            .reset_index()
        )
        summary = summary.merge(absent, on=["year", "target"], how="left")
        summary.loc[gap, "how"] = (
            "not carried: "
            + summary.loc[gap, "how"].astype(str)
            + ", but "
            + summary.loc[gap, "absent"].astype(str)
            + " has no data this year"
        )
    return summary[["year", "target", "carried", "how", "weight_kind", "whole"]]


def _means(panel: Panel, use: pd.DataFrame, notes: list[str]) -> pd.DataFrame:
    rows = use.merge(panel.data[["region", "year", "mean_income"]], on=["region", "year"])
    known = panel.data["population"].notna().all()
    if not known:
        # some populations missing: weigh every source by its change weight alone, as a
        # panel without populations counts each district equally
        rows = rows.assign(mass=rows["weight"])
        notes.append(
            "Without populations for every district the change weights alone weigh the "
            "sources' means, and carried districts have no population."
        )
    rows = rows.assign(total=rows["mass"] * rows["mean_income"])
    out = rows.groupby(["target", "year"], as_index=False).agg(
        total=("total", "sum"), mass=("mass", "sum")
    )
    return pd.DataFrame(
        {
            "region": out["target"].astype(object),
            "year": out["year"].astype(np.int64),
            "mean_income": out["total"] / out["mass"],
            "population": out["mass"] if known else np.nan,
        }
    )


def _units(panel: Panel, use: pd.DataFrame) -> pd.DataFrame:
    rows = panel.data.merge(
        use[["region", "year", "target", "weight"]].rename(columns={"weight": "w"}),
        on=["region", "year"],
    )
    return pd.DataFrame(
        {
            "region": rows["target"].astype(object),
            "year": rows["year"].astype(np.int64),
            "income": rows["income"].to_numpy(dtype=float),
            "weight": (rows["weight"] * rows["w"]).to_numpy(dtype=float),
        }
    )


def _published(panel: Panel, use: pd.DataFrame, story: pd.DataFrame):
    whole = story[story["carried"] & story["whole"]]
    mixed = story["carried"] & ~story["whole"]
    story = story.copy()
    story.loc[mixed, "how"] = (
        "not comparable: " + story.loc[mixed, "how"] + ("; published figures are never averaged")
    )
    story.loc[mixed, "carried"] = False
    sole = use.merge(whole[["year", "target"]], on=["year", "target"])
    rows = panel.data.merge(sole[["region", "year", "target"]], on=["region", "year"])
    data = rows.assign(region=rows["target"].astype(object)).drop(columns="target")
    return data, story


def _brackets(panel: Panel, use: pd.DataFrame, method: str, notes: list[str]):
    data = panel.data
    counts = use.groupby(["year", "target"])["region"].transform("size")
    single = use[counts == 1]
    mixed = use[counts > 1]
    # one source: its shares are the target's; only its population is scaled
    rows = data.merge(single[["region", "year", "target", "weight"]], on=["region", "year"])
    one = rows.assign(
        region=rows["target"].astype(object), population=rows["population"] * rows["weight"]
    )
    one = one.drop(columns=["target", "weight"])
    lost = pd.DataFrame(
        {
            "year": pd.Series(dtype=np.int64),
            "target": pd.Series(dtype=object),
            "reason": pd.Series(dtype=object),
        }
    )
    if mixed.empty:
        return one, lost
    notes.append(BRACKET_NOTE)
    mixed_data, lost = _mixtures(panel, mixed, method)
    return pd.concat([one, mixed_data], ignore_index=True), lost


def _mixtures(panel: Panel, mixed: pd.DataFrame, method: str):
    """Targets with several sources: pooled pseudo-units, Lorenz curve at bracket boundaries."""
    from explorer.stats import lorenz

    data = panel.data
    sources = mixed[["region", "year"]].drop_duplicates()
    sub = data.merge(sources, on=["region", "year"]).sort_values(
        ["region", "year", "bracket"], ignore_index=True
    )
    fits = lorenz.fit_panel(replace(panel, data=sub), method)
    per_row = sub.drop_duplicates(["region", "year"]).set_index(["region", "year"])
    index = pd.MultiIndex.from_frame(fits.keys[["region", "year"]])
    population = per_row["population"].reindex(index).to_numpy(dtype=float)
    mean = per_row["mean_income"].reindex(index).to_numpy(dtype=float)
    units = pseudo_units(fits, population, mean)
    row_of = pd.Series(
        np.arange(len(units.keys)), index=pd.MultiIndex.from_frame(units.keys[["region", "year"]])
    )
    rows = mixed.assign(
        row=row_of.reindex(pd.MultiIndex.from_frame(mixed[["region", "year"]])).to_numpy()
    )
    bad = rows[rows["row"].isna()]
    reasons = units.dropped.rename(columns={"reason": "why"})
    bad = bad.merge(reasons, on=["region", "year"], how="left")
    bad["why"] = bad["why"].fillna("no fit")
    bad_targets = (
        (bad["region"] + ": " + bad["why"]).groupby([bad["year"], bad["target"]]).agg("; ".join)
    )
    lost = bad_targets.rename("reason").reset_index()
    lost["reason"] = "a source cannot be rebuilt (" + lost["reason"] + ")"
    rows = rows.merge(lost[["year", "target"]].assign(_x=1), on=["year", "target"], how="left")
    rows = rows[rows["_x"].isna()].drop(columns="_x")
    if rows.empty:
        return data.iloc[:0], lost
    rows = rows.sort_values(
        ["target", "year", "mass"], ascending=[True, True, False], ignore_index=True
    )
    gid, groups = pd.factorize(pd.MultiIndex.from_frame(rows[["target", "year"]]), sort=False)
    src = rows["row"].to_numpy(dtype=np.int64)
    w = rows["weight"].to_numpy(dtype=float)
    m = units.grid.size - 1
    income = units.income[src].ravel()
    weight = (units.weight[src] * w[:, None]).ravel()
    group = np.repeat(gid, m)
    curve_p, curve_l = _pooled_curve(group, income, weight, len(groups))
    # bracket boundaries: the largest source's (first after sorting by mass)
    lead = rows.groupby(gid, sort=True).head(1)
    bounds = data.merge(lead[["region", "year"]].assign(g=gid[lead.index]), on=["region", "year"])
    bounds = bounds.sort_values(["g", "bracket"], ignore_index=True)
    g = bounds["g"].to_numpy(dtype=np.int64)
    upper = bounds.groupby("g")["pop_share"].cumsum().to_numpy()
    upper = np.where(
        bounds.groupby("g")["bracket"].transform("max").to_numpy() == bounds["bracket"].to_numpy(),
        1.0,
        upper,
    )
    at_upper = _curve_at(curve_p, curve_l, g, upper)
    shares = np.diff(np.concatenate([[0.0], at_upper]))
    first = np.r_[True, g[1:] != g[:-1]]
    shares = np.where(first, at_upper, shares)
    totals_w = np.bincount(group, weights=weight, minlength=len(groups))
    totals_x = np.bincount(group, weights=weight * income, minlength=len(groups))
    known = np.bincount(
        gid, weights=np.isfinite(rows["population"].to_numpy(dtype=float)), minlength=len(groups)
    ) == np.bincount(gid, minlength=len(groups))
    population = np.where(known, totals_w, np.nan)
    target = groups.get_level_values(0).to_numpy(dtype=object)
    year = groups.get_level_values(1).to_numpy(dtype=np.int64)
    out = pd.DataFrame(
        {
            "region": target[g],
            "year": year[g],
            "bracket": bounds["bracket"].to_numpy(),
            "pop_share": bounds["pop_share"].to_numpy(dtype=float),
            "income_share": shares,
            "population": population[g],
            "mean_income": (totals_x / totals_w)[g],
        }
    )
    return out, lost


def _pooled_curve(group: np.ndarray, income: np.ndarray, weight: np.ndarray, n: int):
    """Each group's Lorenz curve of weighted units: (P, L) at each unit, sorted within groups."""
    order = np.lexsort((income, group))
    g, x, v = group[order], income[order], weight[order]
    wsum = np.bincount(g, weights=v, minlength=n)
    xsum = np.bincount(g, weights=v * x, minlength=n)
    cw = np.cumsum(v)
    cx = np.cumsum(v * x)
    start = np.r_[0, np.flatnonzero(g[1:] != g[:-1]) + 1]
    base_w = np.repeat(cw[start] - v[start], np.diff(np.r_[start, g.size]))
    base_x = np.repeat(cx[start] - (v * x)[start], np.diff(np.r_[start, g.size]))
    p = (cw - base_w) / wsum[g]
    lor = (cx - base_x) / xsum[g]
    return (g, p), lor


def _curve_at(curve_p, curve_l: np.ndarray, g: np.ndarray, p: np.ndarray) -> np.ndarray:
    """L(p) of group g by linear interpolation between its units (exact within a cell)."""
    cg, cp = curve_p
    key = cg * 2.0 + cp
    query = g * 2.0 + p
    j = np.searchsorted(key, query - 1e-15, side="left")
    j = np.minimum(j, key.size - 1)
    prev = j - 1
    first = (prev < 0) | (cg[np.maximum(prev, 0)] != g)
    p0 = np.where(first, 0.0, cp[np.maximum(prev, 0)])
    l0 = np.where(first, 0.0, curve_l[np.maximum(prev, 0)])
    p1, l1 = cp[j], curve_l[j]
    span = p1 - p0
    t = np.where(span > 0, (p - p0) / np.where(span > 0, span, 1.0), 1.0)
    return l0 + np.clip(t, 0.0, 1.0) * (l1 - l0)


def _hierarchy(panel: Panel, edges: pd.DataFrame, regions: np.ndarray):
    """Each target's higher levels: its sources' when they agree, else its largest source's."""
    if not panel.levels:
        return pd.DataFrame({"region": regions}), []
    lookup = panel.hierarchy.set_index("region")
    edges = edges[edges["present"]]
    best = edges.sort_values("mass", ascending=False).drop_duplicates("target")
    out = pd.DataFrame({"region": regions})
    problems = []
    for level in panel.levels:
        groups = lookup[level].reindex(edges["region"]).to_numpy(dtype=object)
        split = pd.Series(groups).groupby(edges["target"].to_numpy()).nunique()
        split = sorted(split[split > 1].index)
        chosen = lookup[level].reindex(best["region"]).to_numpy(dtype=object)
        out[level] = pd.Series(chosen, index=best["target"].to_numpy()).reindex(regions).to_numpy()
        if split:
            problems.append(
                Problem(
                    f"{len(split)} district(s) of the target vintage draw on more than one "
                    f"{level} ({_listing(split)}); each is put in its largest source's {level}",
                    f"check the {level} of these districts",
                    column=level,
                    severity="warning",
                )
            )
    return out, problems


def _panel(panel, data, carried, boundaries, edges, to_vintage) -> Panel:
    """The carried data as a Panel: sorted as the contract says, levels and set-asides."""
    from explorer.data.model import KIND_COLUMNS

    inner = {"brackets": ["bracket"], "units": ["income"], "published": ["measure"]}
    sort = ["region", "year", *inner.get(panel.kind, [])]
    data = data[list(KIND_COLUMNS[panel.kind])].sort_values(sort, ignore_index=True)
    data["region"] = data["region"].astype(str).astype(object)
    data["year"] = data["year"].astype(np.int64)
    regions = pd.unique(data["region"])
    hierarchy, problems = _hierarchy(panel, edges, regions)
    aside = carried[~carried["carried"]][["region", "year", "how"]].rename(
        columns={"how": "reason"}
    )
    excluded = pd.concat(
        [
            panel.excluded.assign(reason="before carrying: " + panel.excluded["reason"].astype(str))
            if len(panel.excluded)
            else panel.excluded.iloc[:0],
            aside,
        ],
        ignore_index=True,
    )
    bounds = boundaries
    # the panel's own notes are about its districts as read, before carrying
    before = tuple(
        replace(w, message=f"in the panel as read (before carrying): {w.message}")
        for w in panel.warnings
    )
    warnings = (*before, *problems)
    return Panel(
        kind=panel.kind,
        data=data,
        levels=panel.levels,
        hierarchy=hierarchy,
        boundaries=bounds,
        warnings=warnings,
        fingerprint=fingerprint(panel.kind, data, hierarchy, bounds),
        name=f"{panel.name} on the {to_vintage} boundaries" if panel.name else "",
        income_concept=panel.income_concept,
        excluded=excluded.reset_index(drop=True),
    )

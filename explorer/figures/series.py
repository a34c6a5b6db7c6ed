"""One series of values per district-year, whatever the kind of data: what the Map, the
Timelines and the District sheet draw.

Grouped shares and unit records give an index per district-year (the index table). District
means give three money figures: the mean itself, its ratio to the province's mean, and its
growth since a first year. Published figures are shown as the office gave them.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import PUBLISHED_MEASURES, Panel
from explorer.figures.tables import district_means

__all__ = [
    "ADDITIVE_POVERTY",
    "GROWTH_FIGURES",
    "MEANS_FIGURES",
    "WELFARE_FIGURES",
    "growth_figure",
    "POVERTY_FIGURES",
    "figure_keys",
    "is_money",
    "means_figure",
    "province",
    "province_mean",
    "values",
]

#: What a means-only panel can show per district-year.
MEANS_FIGURES = ("mean_income", "mean_ratio", "mean_growth")
#: Poverty measures against the view's line (grouped shares and unit records only).
POVERTY_FIGURES = ("fgt_0", "fgt_1", "fgt_2", "watts", "sen_poverty")
#: Welfare in money where means are known (Sen 1976; Atkinson 1970).
WELFARE_FIGURES = ("sen_welfare", "ede_0.5", "ede_1", "ede_2")
#: Growth from the view's first year ("Growth since") to its year, % a year (Ravallion &
#: Chen 2003): the mean, the bottom 40 %, those poor in the first year, bottom 40 % − mean.
GROWTH_FIGURES = ("growth_gap_bottom40", "growth_bottom40", "growth_mean", "growth_pro_poor")
#: Figures that are amounts (money, people): whole units with thousands separators.
_MONEY = ("mean_income", "median_income", "population")


def figure_keys(panel: Panel) -> tuple[str, ...]:
    """The figures a panel can show per district-year, in the order the sidebar lists them."""
    from explorer.present.vocabulary import INDEX_LABELS

    if panel.kind == "means":
        return MEANS_FIGURES
    if panel.kind == "published":
        held = set(panel.data["measure"])
        return tuple(m for m in PUBLISHED_MEASURES if m in held)
    if panel.kind == "brackets" and "mean_income" in panel.data.columns:
        # poverty needs the district mean beside the shares: without it no line is met
        if panel.data["mean_income"].notna().all():
            return (*INDEX_LABELS, *POVERTY_FIGURES, *WELFARE_FIGURES, *_growth_keys(panel))
        return tuple(INDEX_LABELS)
    if panel.kind == "units":
        return (*INDEX_LABELS, *POVERTY_FIGURES, *WELFARE_FIGURES, *_growth_keys(panel))
    return tuple(INDEX_LABELS)


def _growth_keys(panel: Panel) -> tuple[str, ...]:
    """Growth needs two years."""
    return GROWTH_FIGURES if len(panel.years) > 1 else ()


def is_money(panel: Panel, key: str) -> bool:
    """Whether ``key`` is an amount (money, people) on this panel: whole units, separators."""
    if key in WELFARE_FIGURES:
        return True
    return key in _MONEY and panel.kind in ("means", "published")


def growth_figure(panel: Panel, compute: Any, key: str, view: Any) -> pd.DataFrame:
    """The index table's rows of a growth figure: from the view's first year to every later
    year, as compound rates in % a year (bottom 40 % − mean in points a year).

    References
    ----------
    Ravallion, M. and Chen, S. (2003). Measuring pro-poor growth. *Economics Letters* 78:
    93–99 (growth incidence and the rate of pro-poor growth).
    """
    from explorer.stats.growth import annualise

    first = int(getattr(view, "year_from", None) or min(panel.years))
    later = [int(y) for y in panel.years if int(y) > first]
    if not later:
        return pd.DataFrame(
            columns=["region", "year", "index", "value", "lower", "upper", "method", "note"]
        )
    summary, _ = compute.growth(
        first,
        getattr(view, "method", "auto"),
        getattr(view, "poverty_line", "60%median"),
        getattr(view, "relative_to", "province"),
    )
    span = (summary["year"] - first).to_numpy(dtype=float)
    rows = summary.assign(
        **{
            column: 100.0 * annualise(summary[column].to_numpy(float), span)
            for column in ("value", "lower", "upper")
        }
    )
    if key != "growth_gap_bottom40":
        return rows[rows["index"] == key].reset_index(drop=True)
    bottom = rows[rows["index"] == "growth_bottom40"].set_index(["region", "year"])
    mean = rows[rows["index"] == "growth_mean"].set_index(["region", "year"])["value"]
    shift = mean.reindex(bottom.index)  # the growth of the mean is exact: bounds move with it
    gap = bottom.assign(
        index=key,
        value=bottom["value"] - shift,
        lower=bottom["lower"] - shift,
        upper=bottom["upper"] - shift,
    )
    return gap.reset_index()[list(summary.columns)]


def province_mean(means: pd.DataFrame) -> pd.DataFrame:
    """year, value, weighted: the province's mean income each year.

    Weighted by population where every district of the year has one, else the plain mean of
    the district means (each district counts equally), which ``weighted`` says.
    """
    rows = means[np.isfinite(means["mean_income"])]
    pop = rows["population"].to_numpy(dtype=float) if "population" in rows else None
    out = []
    for year, group in rows.groupby("year", sort=True):
        mean = group["mean_income"].to_numpy(dtype=float)
        weights = None if pop is None else group["population"].to_numpy(dtype=float)
        weighted = weights is not None and bool(np.all(np.isfinite(weights) & (weights > 0)))
        value = float(np.average(mean, weights=weights if weighted else None))
        out.append({"year": int(year), "value": value, "weighted": weighted})
    return pd.DataFrame(out, columns=["year", "value", "weighted"])


def means_figure(panel: Panel, key: str, since: int | None = None) -> pd.DataFrame:
    """region, year, value, lower, upper, note of a means figure for every district-year.

    ``mean_income``: the district mean. ``mean_ratio``: the district mean over the
    province's mean of the same year (:func:`province_mean`). ``mean_growth``: the average
    yearly growth of the district mean since ``since`` (default: the first year), in percent,
    compounded: 100 · ((m_t / m_since)^(1 / (t − since)) − 1) (common practice); blank for
    ``since`` itself and earlier years.
    """
    means = district_means(panel)
    means = means.assign(region=means["region"].astype(str))
    value = means["mean_income"].to_numpy(dtype=float)
    note = np.full(len(means), "", dtype=object)
    if key == "mean_ratio":
        province = province_mean(means).set_index("year")["value"]
        value = value / means["year"].map(province).to_numpy(dtype=float)
    elif key == "mean_growth":
        first = int(min(panel.years)) if since is None else int(since)
        base = means[means["year"] == first].set_index("region")["mean_income"]
        start = means["region"].map(base).to_numpy(dtype=float)
        span = (means["year"] - first).to_numpy(dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            value = np.where(span > 0, 100.0 * ((value / start) ** (1.0 / span) - 1.0), np.nan)
        note = np.where(
            span <= 0,
            f"growth is measured from {first} on",
            np.where(np.isnan(start), f"no mean income in {first}", ""),
        ).astype(object)
    elif key != "mean_income":
        raise KeyError(f"{key!r} is not a figure of district means; use one of {MEANS_FIGURES}")
    nan = np.full(len(means), np.nan)
    return pd.DataFrame(
        {
            "region": means["region"].to_numpy(),
            "year": means["year"].to_numpy(),
            "index": key,
            "value": value,
            "lower": nan,
            "upper": nan,
            "method": "means",
            "note": note,
        }
    )


#: Poverty measures that add up over districts, weighted by population (Foster, Greer &
#: Thorbecke 1984, *Econometrica* 52: 761-766, on the FGT family; the Watts index likewise).
ADDITIVE_POVERTY = ("fgt_0", "fgt_1", "fgt_2", "watts")


def _province_poverty(panel: Panel, key: str, compute: Any, view: Any) -> pd.DataFrame | None:
    """The province's poverty measure: the population-weighted mean of its districts'."""
    rows = values(panel, compute, key, getattr(view, "method", "auto"), view=view)
    rows = rows[np.isfinite(rows["value"].to_numpy(dtype=float))]
    people = district_means(panel)[["region", "year", "population"]]
    rows = rows.assign(region=rows["region"].astype(str)).merge(
        people.assign(region=people["region"].astype(str)), on=["region", "year"], how="left"
    )
    out = []
    for year, group in rows.groupby("year", sort=True):
        weights = group["population"].to_numpy(dtype=float)
        if not np.all(np.isfinite(weights) & (weights > 0)):
            return None  # without every population the province is not a sum of districts
        out.append({"year": int(year), "value": float(np.average(group["value"], weights=weights))})
    return pd.DataFrame(out, columns=["year", "value"]) if out else None


def province(
    panel: Panel, key: str, since: int | None = None, compute: Any = None, view: Any = None
) -> pd.DataFrame | None:
    """year, value of the province for a figure of district means or an additive poverty
    measure; None otherwise.

    The province's mean income (:func:`province_mean`); its ratio to itself, 1; its yearly
    growth since ``since``; its poverty (:data:`ADDITIVE_POVERTY`, with every district's
    population). Published figures have no province line: the office's own province figure
    is not among them, and it is not recomputed from districts.
    """
    if key in ADDITIVE_POVERTY and compute is not None and panel.kind in ("brackets", "units"):
        return _province_poverty(panel, key, compute, view)
    if panel.kind != "means" or key not in MEANS_FIGURES:
        return None
    line = province_mean(district_means(panel))[["year", "value"]]
    if key == "mean_ratio":
        return line.assign(value=1.0)
    if key == "mean_growth":
        first = int(min(panel.years)) if since is None else int(since)
        base = line.loc[line["year"] == first, "value"]
        if base.empty:
            return None
        span = (line["year"] - first).to_numpy(dtype=float)
        ratio = line["value"].to_numpy(dtype=float) / float(base.iloc[0])
        with np.errstate(divide="ignore", invalid="ignore"):
            grown = np.where(span > 0, 100.0 * (ratio ** (1.0 / span) - 1.0), np.nan)
        return line.assign(value=grown).dropna().reset_index(drop=True)
    return line


def values(
    panel: Panel,
    compute: Any,
    key: str,
    method: str,
    since: int | None = None,
    view: Any = None,
):
    """The index table's rows of ``key`` for every district-year (see the module docstring).

    ``compute`` is the page's :class:`~explorer.figures.compute.Compute`; for district means
    the figures come straight from the panel; poverty measures are taken against the
    ``view``'s poverty line.
    """
    if panel.kind == "means":
        return means_figure(panel, key, since)
    if key in GROWTH_FIGURES:
        return growth_figure(panel, compute, key, view)
    if key in WELFARE_FIGURES:
        table = compute.welfare(method)
        return table[table["index"] == key].reset_index(drop=True)
    if key in POVERTY_FIGURES:
        line = getattr(view, "poverty_line", "60%median")
        table = compute.poverty(line, getattr(view, "relative_to", "province"), method)
        return table[table["index"] == key].reset_index(drop=True)
    table = compute.indices(method)
    return table[table["index"] == key].reset_index(drop=True)

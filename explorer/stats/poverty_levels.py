"""FGT poverty split additively by level: each district's and each county's share of the province's.

FGT(alpha) of a population is the population-weighted mean of its parts' FGT(alpha) at the
same line (Foster, Greer & Thorbecke 1984), so every district, and every group of districts
at a higher level, contributes ``population share x FGT`` to the province's poverty, and the
contributions add up to it exactly. The province here is all districts of the panel in a
year. The split needs one line for everyone: an absolute line or a line relative to the
province; a line relative to each district's own median or mean is refused, since the parts
would then be measured against different lines.

References
----------
Foster, J., Greer, J. and Thorbecke, E. (1984). A class of decomposable poverty measures.
*Econometrica* 52: 761–766.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats import poverty

__all__ = ["LEVEL_COLUMNS", "DECOMPOSABLE", "by_level"]

DECOMPOSABLE = ("fgt_0", "fgt_1", "fgt_2", "watts")
"""The additively decomposable poverty keys (the Sen index is not)."""
LEVEL_COLUMNS = ("year", "level", "group", "population_share", "value", "contribution", "percent")


def _populations(panel) -> pd.Series:
    data = panel.data
    if panel.kind == "units":
        return data.groupby(["region", "year"])["weight"].sum()
    return data.groupby(["region", "year"])["population"].first()


def by_level(table: pd.DataFrame, panel, index: str = "fgt_0", method: str | None = None):
    """Contributions of every district and every higher-level group to the province.

    Parameters
    ----------
    table : DataFrame
        A poverty table (:func:`explorer.stats.poverty_table.compute`).
    panel : explorer.data.model.Panel
        The panel it came from (populations and the hierarchy).
    index : str
        One of :data:`DECOMPOSABLE`.
    method : str, optional
        The Lorenz method's rows to use (bracket panels with several methods).

    Returns
    -------
    DataFrame
        Columns :data:`LEVEL_COLUMNS`: one row per year and group at each level
        (``"district"``, then each of ``panel.levels``), and a ``"province"`` row holding
        the total; within a year and level the contributions sum to the province's value.

    Raises
    ------
    explorer.data.model.DataError
        For a non-decomposable index, a district-relative line or missing populations.
    """
    if index not in DECOMPOSABLE:
        raise fail(
            f"{index} is not additively decomposable",
            f"split one of {', '.join(DECOMPOSABLE)} (the Sen index does not add up by group)",
            column="index",
        )
    if "each district's own" in str(table.attrs.get("line", "")):
        raise fail(
            "a line relative to each district's own median or mean measures the districts "
            "against different lines, so their poverty does not add up to the province's",
            "use an absolute line or one relative to the province",
            column="poverty_line",
        )
    rows = table[table["index"] == index]
    if method is not None:
        rows = rows[rows["method"] == method]
    if rows.duplicated(["region", "year"]).any():
        raise fail("the table holds several methods", "choose one method", column="method")
    pop = _populations(panel).reindex(pd.MultiIndex.from_frame(rows[["region", "year"]]))
    population = pop.to_numpy(float)
    year = rows["year"].to_numpy().astype(np.int64)
    years, parent = np.unique(year, return_inverse=True)
    split = poverty.decompose(rows["value"].to_numpy(float), population, parent)
    lookup = panel.hierarchy.set_index("region")
    frames = [
        pd.DataFrame(
            {
                "year": years,
                "level": "province",
                "group": "(all)",
                "population_share": 1.0,
                "value": split.total,
                "contribution": split.total,
                "percent": 100.0,
            }
        )
    ]
    base = pd.DataFrame(
        {
            "year": year,
            "region": rows["region"].to_numpy(),
            "share": split.share,
            "contribution": split.contribution,
        }
    )
    for level in ("district", *panel.levels):
        key = base["region"] if level == "district" else base["region"].map(lookup[level])
        grouped = base.assign(group=key.to_numpy()).groupby(["year", "group"], sort=True)
        sums = grouped[["share", "contribution"]].sum().reset_index()
        total = split.total[np.searchsorted(years, sums["year"].to_numpy())]
        with np.errstate(divide="ignore", invalid="ignore"):
            frames.append(
                pd.DataFrame(
                    {
                        "year": sums["year"].to_numpy(),
                        "level": level,
                        "group": sums["group"].to_numpy(),
                        "population_share": sums["share"].to_numpy(),
                        "value": sums["contribution"].to_numpy() / sums["share"].to_numpy(),
                        "contribution": sums["contribution"].to_numpy(),
                        "percent": 100.0 * sums["contribution"].to_numpy() / total,
                    }
                )
            )
    return pd.concat(frames, ignore_index=True)

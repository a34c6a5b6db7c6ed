"""District-years carried across boundary changes, in words: the District sheet's note and
the report's table (the Timelines marks are in :mod:`explorer.figures.timelines`).

A panel carried to one boundary vintage holds its account
(:func:`explorer.data.carrying.carrying_of`); a panel that was not carried has none, and
these figures are then None.
"""

from __future__ import annotations

import pandas as pd

from explorer.data.carrying import carried_years, carrying_of
from explorer.data.model import Panel
from explorer.present import vocabulary
from explorer.present.report import ReportTable

__all__ = ["carried_groups", "district_note", "report_table", "year_spans"]


def year_spans(years: list[int]) -> str:
    """Years as runs: ``[2005, 2006, 2007, 2010]`` -> ``2005–2007, 2010``."""
    years = sorted({int(y) for y in years})
    runs: list[list[int]] = []
    for year in years:
        if runs and year == runs[-1][-1] + 1:
            runs[-1].append(year)
        else:
            runs.append([year])
    return ", ".join(f"{r[0]}–{r[-1]}" if len(r) > 1 else str(r[0]) for r in runs)


def carried_groups(panel: Panel, regions: list[str] | None = None) -> pd.DataFrame:
    """Carried district-years grouped by district and way: ``region, years, how, count``.

    Each carried district-year is in exactly one group (``count`` says how many it holds).
    """
    rows = carried_years(panel, regions)
    if rows.empty:
        return pd.DataFrame(columns=["region", "years", "how", "count"])
    grouped = rows.groupby(["region", "how"], sort=True)["year"].agg(list).reset_index()
    grouped["first"] = grouped["year"].map(min)
    grouped["count"] = grouped["year"].map(len)
    grouped["years"] = grouped["year"].map(year_spans)
    grouped = grouped.sort_values(["region", "first"], ignore_index=True)
    return grouped[["region", "years", "how", "count"]]


def district_note(panel: Panel, region: str) -> str | None:
    """The District sheet's short note: the years carried for this district and how."""
    carrying = carrying_of(panel)
    groups = carried_groups(panel, [region])
    if carrying is None or groups.empty:
        return None
    parts = "; ".join(f"{row.years}: {row.how}" for row in groups.itertuples())
    title = vocabulary.CARRIED_NOTE_TITLE.format(year=carrying.to_vintage)
    return f"{title} (weights {carrying.weights_said()}): {parts}."


def report_table(panel: Panel, names: dict[str, str]) -> ReportTable | None:
    """Every carried district-year once, grouped by district and way, with the intro."""
    carrying = carrying_of(panel)
    groups = carried_groups(panel)
    if carrying is None or groups.empty:
        return None
    data = groups.assign(name=groups["region"].map(lambda r: names.get(r, r)))
    data = data[["name", "region", "years", "how", "count"]]
    shown = pd.DataFrame(
        {
            vocabulary.CARRIED_COLUMNS["region"]: data["name"].astype(str),
            "Id": data["region"].astype(str),
            vocabulary.CARRIED_COLUMNS["years"]: data["years"],
            vocabulary.CARRIED_COLUMNS["how"]: data["how"].astype(str),
        }
    )
    intro = vocabulary.CARRIED_REPORT_INTRO.format(
        year=carrying.to_vintage, weights=carrying.weights_said()
    )
    return ReportTable(data.reset_index(drop=True), shown, (intro, *carrying.notes))

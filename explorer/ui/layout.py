"""Small helpers the pages share: captions, the map's value layer, rankings, page paths."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import streamlit as st

from explorer import frames
from explorer.frames import (  # noqa: F401 — re-exported for the pages
    BREAKDOWN_FIELD,
    CLASS_LABELS,
    COLUMN_LABELS,
    WIDE_SHARE,
    caption,
    county_level,
    dataset_name,
    lorenz_band,
    lorenz_points,
    names,
    per_level,
    ranking,
    ranks,
    share_table,
    value_label,
    why_missing,
    wide,
)
from explorer.ui.state import Here

PAGES = Path(__file__).resolve().parent.parent.parent / "pages"
# view name -> (script, title, icon); the first one is served at "/".
PAGE_FILES = {
    "atlas": ("atlas.py", "Atlas", ":material/map:"),
    "timelines": ("timelines.py", "Timelines", ":material/timeline:"),
    "breakdown": ("breakdown.py", "Breakdown", ":material/stacked_bar_chart:"),
    "district": ("district.py", "District sheet", ":material/description:"),
    "intake": ("intake.py", "Intake", ":material/upload_file:"),
}
# The view's field for "mark wide intervals"; one name for every page.
INTERVAL_FIELD = "show_intervals"


def page_path(page: str) -> Path:
    """Absolute path of a page script by its view name."""
    return PAGES / PAGE_FILES[page][0]


def describe_view(view: Any, panel: Any) -> str:
    """One line: dataset, index, year."""
    return f"{dataset_name(view, panel)} · {value_label(view, panel)} · {view.year}"


def map_values(here: Here, view: Any) -> pd.DataFrame:
    """One row per district for the map: region, name, county, value, lower, upper, wide."""
    table = None if here.panel.kind == "means" else here.indices()
    return frames.map_values(here.panel, table, view.year, view.index)


def picked_region(event: Any) -> str | None:
    """The district id clicked on a map, from the chart's selection event."""
    try:
        chosen = event.selection.get("pick") or []
    except AttributeError:
        return None
    for item in chosen:
        for key in ("region", "properties\\.region", "properties.region"):
            if isinstance(item, dict) and item.get(key):
                return str(item[key])
    return None


def with_property(features: list[dict], table: pd.DataFrame, column: str) -> list[dict]:
    """Copies of the features with one more property taken from ``table`` (by region)."""
    lookup = dict(zip(table["region"].astype(str), table[column], strict=True))
    return [
        {
            **feature,
            "properties": {
                **feature["properties"],
                column: lookup.get(str(feature["properties"]["region"])),
            },
        }
        for feature in features
    ]


def moran_summary(overall: Any) -> None:
    """The global Moran's I with its permutation p-value, as metrics."""
    left, middle, right = st.columns(3)
    moran = float(getattr(overall, "moran_i", np.nan))
    expected = float(getattr(overall, "expected", np.nan))
    p_value = float(getattr(overall, "p_value", np.nan))
    left.metric(
        "Global Moran's I",
        f"{moran:.3f}",
        help="Above its no-clustering value means similar districts sit next to each other.",
    )
    middle.metric("Value without clustering", f"{expected:.3f}")
    right.metric("p-value (permutations)", f"{p_value:.3f}")
    islands = getattr(overall, "islands", ())
    if islands is not None and len(islands):
        st.caption(
            f"{len(islands)} district(s) touch no other and were linked to their nearest neighbour."
        )


def fit_facets(chart: Any, *, panels: int, room: int = 820) -> Any:
    """Narrow a faceted chart's panels so the whole chart fits the page's width.

    Works on a copy; the builder's chart is left as it is.
    """
    inner = getattr(chart, "spec", None)
    width = getattr(inner, "width", None)
    if inner is None or not isinstance(width, int | float):
        return chart
    fitted = chart.copy(deep=True)
    fitted.spec.width = int(min(width, max(160, room / max(panels, 1) - 70)))
    return fitted

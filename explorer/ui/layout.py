"""Small helpers the pages share: captions, the map's value layer, rankings, page paths."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import streamlit as st

from explorer import resources
from explorer.present import frames
from explorer.present.frames import (  # noqa: F401 — re-exported for the pages
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

PAGES = resources.pages_dir()
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


# --- words for the tables and charts a planner reads ----------------------------------------

# Chart captions longer than a chart is wide are cut off by Vega; wrapped lines are not.
CAPTION_CHARS = 115


def wrap(text: str, width: int = CAPTION_CHARS) -> list[str]:
    """A caption as lines short enough for the chart (Vega draws each as a subtitle line)."""
    import textwrap

    return textwrap.wrap(str(text), width=width) or [""]


def groups_word(level: str, *, plural: bool = True) -> str:
    """A level key in planner words: ``region`` is a district, ``total`` the province."""
    if level in ("region", "district", "districts"):
        return "districts" if plural else "district"
    if level == "total":
        return "whole province"
    level = str(level)
    if not plural or level.endswith("s"):
        return level
    if level.endswith("y") and level[-2:-1] not in tuple("aeiou"):
        return f"{level[:-1]}ies"
    return f"{level}s"


def part_label(component: str, level: str = "") -> str:
    """A decomposition part (or change term) in planner words, naming its groups."""
    groups = groups_word(level) if level and level != "total" else "groups"
    words = {
        "total": "Total",
        "between": f"Between {groups}",
        "within": f"Within {groups}",
        "overlap": f"Overlap of {groups} (Gini)",
        "population_within": f"Population shifts within {groups}",
        "population_between": f"Population shifts between {groups}",
        "relative_income": f"Changes in {groups}' relative incomes",
        "residual": "Approximation residual",
    }
    return words.get(str(component), str(component).replace("_", " "))


CHANGE_TERM_HELP = {
    "within": "inequality inside the groups changed",
    "population_within": "people moved between groups with different inside inequality",
    "population_between": "people moved between richer and poorer groups",
    "relative_income": "groups' mean incomes moved apart or together",
    "residual": "what the approximation of the change leaves over",
    "total": "the change of the index between the two years",
}


def tidy_zero(values: pd.Series, tolerance: float = 1e-12) -> pd.Series:
    """Rounding noise shown as 0, so a table never reads -0.0000 or 5e-16."""
    numbers = pd.to_numeric(values, errors="coerce")
    return numbers.where(~(numbers.abs() < tolerance), 0.0)


def planner_table(
    frame: pd.DataFrame,
    titles: dict[str, str],
    *,
    words: dict[str, Any] | None = None,
    formats: dict[str, str] | None = None,
) -> tuple[pd.DataFrame, dict[str, Any]]:
    """A table shown with planner words while its data keep their keys.

    ``titles`` names the columns to show (in order) and their headings; a column in
    ``words`` is shown through a text column made by that function (row -> text), so the
    data (and every test or download built on them) keep the short keys. Returns the frame
    and the keyword arguments for ``ui.table``.
    """
    words = words or {}
    formats = formats or {}
    out = frame.reset_index(drop=True).copy()
    config: dict[str, Any] = {}
    order: list[str] = []
    for column, title in titles.items():
        if column in words:
            shown = f"{column} (shown)"
            out[shown] = [str(words[column](row)) for row in out.to_dict("records")]
            config[shown] = st.column_config.TextColumn(title)
            order.append(shown)
        elif column in out.columns:
            if pd.api.types.is_float_dtype(out[column]):
                config[column] = st.column_config.NumberColumn(
                    title, format=formats.get(column, "%.4f")
                )
            else:
                config[column] = st.column_config.Column(title)
            order.append(column)
    return out, {"column_config": config, "column_order": order}


def bound_text(value: Any, digits: int = 4) -> str:
    """A bound for display: blank when there is none, words when it is infinite."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        return ""
    if np.isnan(number):
        return ""
    if np.isinf(number):
        return "no finite bound"
    return f"{number:.{digits}f}"


def figure(value: Any, *, money: bool = False, digits: int = 3) -> str:
    """One number for a metric: a dash when missing, whole currency units for incomes."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        return "—"
    if not np.isfinite(number):
        return "—" if np.isnan(number) else ("∞" if number > 0 else "−∞")
    if money:
        return f"{number:,.0f}"
    if abs(number) < 0.5 * 10.0**-digits:
        number = 0.0
    return f"{number:.{digits}f}"


def relabel_chart(chart: Any, column: str, labels: dict[str, str]) -> Any:
    """A copy of an Altair chart whose inline data show ``labels`` instead of keys.

    Sort lists and colour domains that name the keys are renamed too, so the chart's
    colours and order stay the builder's. Returns the chart unchanged if its shape is not
    the expected one (the chart is still right, only in the builder's words).
    """
    try:
        fitted = chart.copy(deep=True)
        data = getattr(fitted, "data", None)
        if not isinstance(data, pd.DataFrame) or column not in data.columns:
            return chart
        fitted.data = data.assign(
            **{column: data[column].map(lambda key: labels.get(str(key), key))}
        )
        spec = fitted.spec if hasattr(fitted, "spec") and fitted.spec is not None else fitted
        encoding = getattr(spec, "encoding", None)
        for channel in ("x", "y", "color", "row", "column"):
            encoded = getattr(encoding, channel, None) if encoding is not None else None
            _rename_lists(encoded, column, labels)
        facet = getattr(fitted, "facet", None)
        for channel in ("row", "column"):
            _rename_lists(getattr(facet, channel, None), column, labels)
        return fitted
    except Exception:  # a display nicety: never a reason to lose the chart
        return chart


def _rename_lists(encoded: Any, column: str, labels: dict[str, str]) -> None:
    settings = getattr(encoded, "_kwds", None)
    if not isinstance(settings, dict):
        return
    field = settings.get("field")
    field = field if isinstance(field, str) else settings.get("shorthand")
    if not isinstance(field, str) or field.split(":")[0] != column:
        return
    sort = settings.get("sort")
    if isinstance(sort, list):
        encoded.sort = [labels.get(str(key), key) for key in sort]
    scale = settings.get("scale")
    domain = getattr(scale, "_kwds", {}).get("domain") if scale is not None else None
    if isinstance(domain, list):
        scale.domain = [labels.get(str(key), key) for key in domain]

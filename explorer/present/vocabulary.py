"""The planner's words: every label, name and number format the app, report and CLI show.

Keys (index keys, Lorenz method keys, decomposition components, page keys) come from the
modules that compute with them; this module only says what each key is called on screen.
Every other module imports its words from here, so a label is defined once.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.demo import DEMO_IDS
from explorer.stats import decompose, indices, lorenz

__all__ = [
    "APP_ICON",
    "AXIS_LABELS",
    "BREAKDOWN_FIELD",
    "CAPTION_CHARS",
    "CHANGE_COLUMNS",
    "CHANGE_TERM_HELP",
    "CLASS_HELP",
    "CLASS_LABELS",
    "COLUMN_LABELS",
    "DECOMPOSABLE",
    "DEMO_DATASETS",
    "FACT_LABELS",
    "FIND_HELP",
    "FIGURE_LABELS",
    "FIT_COLUMNS",
    "INDEX_COLUMNS",
    "INDEX_LABELS",
    "INTERVAL_FIELD",
    "KIND_LABELS",
    "KIND_NOTES",
    "LAYER_HELP",
    "LAYER_LABELS",
    "LORENZ_METHODS",
    "MEANS_COLUMNS",
    "METHOD_LABELS",
    "PAGES",
    "PART_COLUMNS",
    "POVERTY_HELP",
    "SCALE_NAMES",
    "SCALE_WORDS",
    "PART_TEXT",
    "PART_WORDS",
    "WIDE_SHARE",
    "WELFARE_CAPTION",
    "COMPARE_MODES",
    "SCENARIO_COLUMNS",
    "WHAT_IF_CAUTION",
    "WHAT_IF_RECEIVERS",
    "POVERTY_SPLIT_COLUMNS",
    "COMPARE_HELP",
    "WELFARE_COLUMNS",
    "GROWTH_WELFARE_HELP",
    "Page",
    "axis_label",
    "bound_text",
    "caption",
    "dataset_name",
    "describe_view",
    "digits_of",
    "figure",
    "figure_label",
    "filter_text",
    "groups_word",
    "index_label",
    "method_label",
    "money",
    "no_bound_text",
    "part_label",
    "percent",
    "poverty_line_words",
    "published_scale",
    "ranking_caution",
    "ranking_title",
    "table_format",
    "tidy_zero",
    "value_label",
    "wrap",
]

# --- indices ---------------------------------------------------------------------------------

_INDEX_WORDS = {
    "gini": "Gini coefficient",
    "theil_t": "Theil T",
    "mld": "Mean log deviation (Theil L)",
    "ge_2": "Generalised entropy GE(2)",
    "atkinson_0.5": "Atkinson (ε = 0.5)",
    "atkinson_1": "Atkinson (ε = 1)",
    "atkinson_2": "Atkinson (ε = 2)",
    "cv": "Coefficient of variation",
    "palma": "Palma ratio (top 10 % / bottom 40 %)",
    "s80_s20": "S80/S20 quintile share ratio",
    "top10_share": "Income share of the top 10 %",
    "bottom40_share": "Income share of the bottom 40 %",
}
#: Index key -> planner's name, in the order the index table computes them. A new index in
#: ``explorer.stats.indices.DEFAULT_INDICES`` without a name here fails at import.
INDEX_LABELS: dict[str, str] = {key: _INDEX_WORDS[key] for key in indices.DEFAULT_INDICES}

#: Figures other than computed indices: those of district means and published figures.
FIGURE_LABELS: dict[str, str] = {
    "mean_income": "Mean income",
    "mean_ratio": "Mean income ÷ province mean",
    "mean_growth": "Growth of mean income (% a year)",
    "poverty_rate": "Poverty rate",
    "median_income": "Median income",
    "population": "Population",
    "fgt_0": "Poverty headcount ratio FGT(0)",
    "fgt_1": "Poverty gap FGT(1)",
    "fgt_2": "Squared poverty gap FGT(2)",
    "watts": "Watts poverty index",
    "sen_poverty": "Sen poverty index",
    "sen_welfare": "Sen's welfare μ(1 − Gini)",
    "ede_0.5": "Equally distributed equivalent income (ε = 0.5)",
    "ede_1": "Equally distributed equivalent income (ε = 1)",
    "ede_2": "Equally distributed equivalent income (ε = 2)",
    "mean": "Mean income",
    "median": "Median income",
    "growth_mean": "Growth of the mean (% a year)",
    "growth_bottom40": "Growth at the bottom 40 % (% a year)",
    "growth_pro_poor": "Rate of pro-poor growth (% a year)",
    "growth_gap_bottom40": "Growth at the bottom 40 % minus growth of the mean (points a year)",
}
#: What each welfare and growth figure says, for help texts (Sen 1976; Atkinson 1970;
#: Ravallion & Chen 2003).
GROWTH_WELFARE_HELP = {
    "sen_welfare": "the mean income discounted by the Gini: what the district's income is "
    "worth to a society that dislikes inequality as much as the Gini says (Sen 1976)",
    "ede_0.5": "the income that, given to everyone, would be as good as the actual spread "
    "for a society with inequality aversion 0.5 (Atkinson 1970)",
    "ede_1": "as above with inequality aversion 1: the geometric mean income (Atkinson 1970)",
    "ede_2": "as above with inequality aversion 2: weighs the poorest most (Atkinson 1970)",
    "growth_mean": "the average yearly growth of the district's mean income",
    "growth_bottom40": "the average yearly growth of the incomes of the poorest 40 %, "
    "percentile by percentile (Ravallion & Chen 2003)",
    "growth_pro_poor": "the average yearly growth of the incomes of those who were poor in "
    "the first year (Ravallion & Chen 2003)",
    "growth_gap_bottom40": "positive: the poorest 40 % gained faster than the mean; "
    "negative: growth passed them by",
}
#: The What-if page's words.
WHAT_IF_CAUTION = (
    "A scenario is an arithmetic of incomes, not a prediction: no behavioural responses, no "
    "take-up rates, no price effects. Local rules and the office's own models decide policy."
)
WHAT_IF_RECEIVERS = {
    "deciles": "The bottom deciles of the province",
    "median": "Everyone below a share of the province median",
}
SCENARIO_COLUMNS = {
    "figure": "Figure",
    "before": "Before",
    "after": "After",
    "change": "Change",
}
#: The Compare page's two ways of choosing what is set side by side.
COMPARE_MODES = {
    "districts": "Districts in one year",
    "years": "One district over the years",
}
COMPARE_HELP = (
    "Two to six districts in the year chosen in the sidebar, or one district in two to six "
    "years. Their Lorenz curves are overlaid, every figure is set side by side, and each "
    "pair gets a verdict in words."
)
#: The Breakdown's table of poverty split over groups.
POVERTY_SPLIT_COLUMNS = {
    "level": "Level",
    "group": "Group",
    "population_share": "Share of the population",
    "value": "The group's own measure",
    "contribution": "Contribution (population share × measure)",
    "percent": "Share of the province's poverty",
}
#: The District sheet's table of welfare in money.
WELFARE_COLUMNS = {
    "figure": "Figure",
    "value": "Value (currency units)",
    "lower": "Lower bound",
    "upper": "Upper bound",
    "note": "Note",
}
WELFARE_CAPTION = (
    "What the district's income is worth once its inequality is counted: Sen's welfare "
    "discounts the mean by the Gini (Sen 1976); the equally distributed equivalent is the "
    "income that, given to everyone, would be as good as the actual spread for a society "
    "with inequality aversion ε (Atkinson 1970). In the data's currency and price base."
)
#: What each poverty measure says, for help texts (Foster, Greer & Thorbecke 1984; Watts
#: 1968; Sen 1976).
POVERTY_HELP = {
    "fgt_0": "the share of people below the line",
    "fgt_1": "the average shortfall from the line, as a share of the line, counting the "
    "non-poor as zero",
    "fgt_2": "as the gap, with larger shortfalls weighing more (the severity of poverty)",
    "watts": "the average log shortfall of the poor: sensitive to the poorest",
    "sen_poverty": "headcount, gap and the inequality among the poor in one number",
}
#: How a published figure's scale is said in a label.
SCALE_WORDS = {
    "percent": "%",
    "proportion": "0–1",
    "level": "",
    "unknown": "scale as written",
}

#: A published figure's scale in a table.
SCALE_NAMES = {
    "percent": "percent",
    "proportion": "proportion (0–1)",
    "level": "amount",
    "unknown": "as written (scale not told)",
}

#: Axis titles with the units a chart's reader needs.
AXIS_LABELS: dict[str, str] = {
    "gini": "Gini coefficient (0 = equal, 1 = one holds all)",
    "theil_t": "Theil T (0 = equal)",
    "mld": "Mean log deviation, Theil L (0 = equal)",
    "cv": "Coefficient of variation (ratio)",
    "palma": "Palma ratio (top 10 % ÷ bottom 40 %)",
    "s80_s20": "S80/S20 ratio (top 20 % ÷ bottom 20 %)",
    "top10_share": "Income share of the top 10 % (0–1)",
    "bottom40_share": "Income share of the bottom 40 % (0–1)",
    "mean_income": "Mean income (currency units)",
    "mean_ratio": "Mean income ÷ province mean (1 = the province)",
    "mean_growth": "Average growth of mean income (% a year)",
    "poverty_rate": "Poverty rate",
    "median_income": "Median income (currency units)",
    "population": "Population (people)",
    "fgt_0": "Share of people below the poverty line (0–1)",
    "fgt_1": "Poverty gap (share of the line, 0–1)",
    "fgt_2": "Squared poverty gap (0–1)",
    "watts": "Watts index (0 = no poverty)",
    "sen_poverty": "Sen poverty index (0–1)",
    "sen_welfare": "Sen's welfare μ(1 − Gini) (currency units)",
    "ede_0.5": "Equally distributed equivalent income, ε = 0.5 (currency units)",
    "ede_1": "Equally distributed equivalent income, ε = 1 (currency units)",
    "ede_2": "Equally distributed equivalent income, ε = 2 (currency units)",
    "growth_mean": "Growth of the mean (% a year)",
    "growth_bottom40": "Growth at the bottom 40 % (% a year)",
    "growth_pro_poor": "Rate of pro-poor growth (% a year)",
    "growth_gap_bottom40": "Bottom 40 % minus mean (percentage points a year)",
}

#: Indices that split exactly into within and between parts (the Gini with its overlap).
DECOMPOSABLE: tuple[str, ...] = tuple(decompose.DECOMPOSABLE)


def _family_label(key: str, named: dict[str, str], ge_unit: str = "", atk_unit: str = "") -> str:
    """A named key's label, or one built for any member of the GE or Atkinson family."""
    if key in named:
        return named[key]
    if key.startswith("ge_"):
        return f"Generalised entropy GE({key[3:]}){ge_unit}"
    if key.startswith("atkinson_"):
        return f"Atkinson (ε = {key[9:]}){atk_unit}"
    return key


def index_label(key: str) -> str:
    """A planner's name for an index key (or a figure of district means or published)."""
    return _family_label(key, {**FIGURE_LABELS, **INDEX_LABELS})


def figure_label(key: str, panel: Any) -> str:
    """A figure's name on this panel: published figures say so (``Gini coefficient, as
    published``), the others are named as the index table names them."""
    name = index_label(key)
    return f"{name}, as published" if getattr(panel, "kind", "") == "published" else name


def published_scale(panel: Any, key: str) -> str:
    """The scale of a published figure (``percent``, ``proportion``, ``level``), or ""."""
    if getattr(panel, "kind", "") != "published":
        return ""
    rows = panel.data.loc[panel.data["measure"] == key, "scale"]
    return str(rows.iloc[0]) if len(rows) else ""


def axis_label(key: str) -> str:
    """Plain-language axis title, with units, for an index key (``gini``, ``ge_2``, ...)."""
    return _family_label(key, AXIS_LABELS, " (0 = equal)", " (0–1)")


# --- Lorenz methods --------------------------------------------------------------------------

#: The Lorenz methods, as ``explorer.stats.lorenz`` knows them (the one list).
LORENZ_METHODS: tuple[str, ...] = tuple(lorenz.METHODS)
_METHOD_WORDS = {
    "auto": "Best fitting curve (automatic)",
    "linear": "Straight lines between points (lower bound)",
    "upper": "Steepest convex curve (upper bound)",
    "pchip": "Smooth monotone interpolation",
    "gq": "General quadratic curve",
    "beta": "Beta curve",
    "quadratic": "Simple quadratic curve",
    "lognormal": "Lognormal curve",
}
#: Method key -> planner's name; the automatic choice first, as the sidebar offers it.
METHOD_LABELS: dict[str, str] = {
    key: _METHOD_WORDS[key]
    for key in ("auto", *(m for m in LORENZ_METHODS if m != "auto"))
    if key in LORENZ_METHODS
}


def method_label(key: str) -> str:
    """A planner's name for a Lorenz method key."""
    return METHOD_LABELS.get(key, key)


# --- pages, datasets, view fields ------------------------------------------------------------


@dataclass(frozen=True)
class Page:
    """One page of the app: its title, its icon and its script in ``pages/``."""

    title: str
    icon: str
    script: str


#: The browser tab's icon. An emoji: Streamlit 1.67 draws it as an SVG data address in the
#: page, whereas a ``:material/...:`` icon as favicon is fetched from fonts.gstatic.com.
#: It is set before the navigation, so no page's material icon becomes the favicon (the
#: pages' icons in the sidebar come from the font Streamlit serves itself).
APP_ICON = "⛰️"

#: Page key -> page; the first one is served at "/".
PAGES: dict[str, Page] = {
    # "map" was called "atlas" before; views.py still reads the old key from links and files.
    "map": Page("Map", ":material/map:", "atlas.py"),
    "timelines": Page("Timelines", ":material/timeline:", "timelines.py"),
    "breakdown": Page("Breakdown", ":material/stacked_bar_chart:", "breakdown.py"),
    "district": Page("District sheet", ":material/description:", "district.py"),
    "compare": Page("Compare", ":material/compare_arrows:", "compare.py"),
    "what_if": Page("What if", ":material/science:", "what_if.py"),
    "briefing": Page("Briefing", ":material/summarize:", "briefing.py"),
    "intake": Page("Intake", ":material/upload_file:", "intake.py"),
}

#: Briefing paragraph key -> its title (explorer.figures.brief).
BRIEFING_PARAGRAPHS = {
    "level": "The province",
    "districts": "The districts at either end",
    "split": "Within and between groups",
    "clusters": "Where similar districts sit together",
    "poverty": "Poverty",
    "data": "The data and the cautions",
}
#: Table a briefing sentence cites -> its name where the sources are listed.
BRIEFING_TABLES = {
    "province": "Province figure by year (Timelines)",
    "districts": "Chosen districts by year (Timelines)",
    "ranking": "District ranking (Map)",
    "split": "Split of the province's index (Breakdown)",
    "change": "Change terms (Breakdown)",
    "clusters": "Global Moran's I (Map, local clusters)",
    "cluster counts": "Districts in each kind of cluster (Map, local clusters)",
    "poverty province": "Province headcount ratio by year (Timelines)",
    "poverty ranking": "District ranking by headcount ratio (Map)",
    "view": "The view's settings",
    "facts": "The dataset's facts",
    "set aside": "District-years set aside",
    "cautions": "Cautions",
    "rules": "The briefing's rules (rise or fall without bounds; clustering level)",
}
#: Column titles of the table listing where each briefing sentence comes from.
BRIEFING_SOURCE_COLUMNS = {
    "paragraph": "Paragraph",
    "sentence": "Sentence",
    "table": "Table",
    "rows": "Rows",
    "columns": "Columns",
}

#: Built-in dataset id -> (name in the dataset list, kind of demo data).
_DEMO_NAMES = {
    "demo": "Demo: decile shares",
    "demo-households": "Demo: household sample",
    "demo-means": "Demo: district means",
    "demo-published": "Demo: published figures",
}
DEMO_DATASETS: dict[str, tuple[str, str]] = {
    dataset: (_DEMO_NAMES[dataset], kind) for dataset, kind in DEMO_IDS.items()
}

#: Kind of data -> what it is, in the words of the Intake page.
KIND_LABELS = {
    "brackets": "Income shares by population group",
    "units": "Household or person records",
    "means": "One mean income per district",
    "published": "Figures the source published (a Gini, a poverty rate, a median income)",
}

#: Dataset fact -> its name in the report's list of what the data are.
FACT_LABELS = {
    "name": "Dataset",
    "fingerprint": "Content fingerprint",
    "kind": "Kind of data",
    "income_concept": "Income concept",
    "unit": "Unit",
    "currency": "Currency",
    "price_base": "Prices",
    "source": "Source",
    "districts": "Districts",
    "years": "Years",
}

#: The view's field for the index the Breakdown page splits.
BREAKDOWN_FIELD = "decomposition_index"
#: The view's field for "mark wide intervals".
INTERVAL_FIELD = "show_intervals"

# --- maps and tables -------------------------------------------------------------------------

CLASS_LABELS = {
    "quantiles": "Equal counts (quantiles)",
    "equal": "Equal widths",
    "breaks": "Natural breaks",
}

CLASS_HELP = (
    "How districts are put into colour classes. Equal counts: the same number of districts "
    "in each class. Equal widths: classes of the same width between the lowest and highest "
    "value. Natural breaks (Jenks 1967): the boundaries are placed where they keep the "
    "values inside each class as close together as possible, so gaps in the data become "
    "class boundaries."
)

FIND_HELP = "Type part of a district's name or its code to find it in the list."

LAYER_LABELS = {"index": "Index", "clusters": "Local clusters"}
LAYER_HELP = (
    "Index: each district coloured by the chosen index. Local clusters (local Moran, "
    "Anselin 1995): districts that resemble or differ from their neighbours beyond chance. "
    "High-high: a high value among high neighbours. Low-low: a low value among low "
    "neighbours. High-low: a high value among low neighbours. Low-high: a low value among "
    "high neighbours. Other districts show no significant local pattern."
)

#: An interval wider than this share of its value is called wide (a display choice).
WIDE_SHARE = 0.15

COLUMN_LABELS = {
    "rank": "Rank",
    "rank_range": "Possible ranks",
    "rank_then": "Rank in the first year",
    "move": "Move since the first year",
    "name": "District",
    "region": "Id",
    "county": "County",
    "value": "Value",
    "lower": "Lower bound",
    "upper": "Upper bound",
    "klass": "Class",
    "note": "Note",
    "year": "Year",
    "index": "Index",
    "method": "Method",
}


#: Column titles of a district's mean incomes by year (District sheet and report).
MEANS_COLUMNS = {
    "year": "Year",
    "mean_income": "Mean income",
    "population": "Population",
    "ratio": "Ratio to the province mean",
    "rank": "Rank (1 = highest mean)",
    "growth": "Growth since the year before (% a year)",
}


#: Column titles of the Lorenz fit diagnostics on the District sheet.
FIT_COLUMNS = {
    "method": "Curve asked for",
    "used": "Curve used",
    "valid": "Usable",
    "max_error": "Largest gap to a published point",
    "sse": "Sum of squared gaps",
    "reason": "Why not usable",
}

#: Column titles of the index table on the District sheet (after ``COLUMN_LABELS``).
INDEX_COLUMNS = {
    "Index": "Index",
    "Value": "Value",
    "Lower bound": "Lower bound",
    "Upper bound": "Upper bound",
    "Method": "Curve or data",
    "Note": "Note",
}


def ranking_title(kind: str, key: str = "") -> str:
    """The heading of a district ranking: what rank 1 means for this kind of data."""
    if key in POVERTY_HELP:
        return f"Districts ranked (1 = highest {index_label(key).split(' FGT')[0].lower()})"
    if key.startswith("growth_"):
        return (
            "Districts ranked (1 = fastest growth at the bottom relative to the mean)"
            if (key == "growth_gap_bottom40")
            else "Districts ranked (1 = fastest growth)"
        )
    if key in GROWTH_WELFARE_HELP:
        return "Districts ranked (1 = highest welfare)"
    if kind == "published":
        return (
            f"Districts ranked (1 = highest {index_label(key).lower() or 'figure'}, as published)"
        )
    if kind == "means":
        return {
            "mean_ratio": "Districts ranked (1 = furthest above the province mean)",
            "mean_growth": "Districts ranked (1 = fastest growth)",
        }.get(key, "Districts ranked (1 = highest mean income)")
    return "Districts ranked (1 = most unequal)"


def ranking_caution(kind: str) -> str:
    """The sentence under a ranking: read a rank with its figures, not as a verdict."""
    if kind == "published":
        return (
            "Figures as the source published them, without bounds: neighbouring ranks may "
            "differ by less than the source's own margin of error. Read a rank with the "
            "figures beside it and the source's notes, not as a verdict."
        )
    if kind == "means":
        return (
            "Neighbouring ranks often differ by little: read a rank with the figures beside "
            "it, not as a verdict."
        )
    return (
        "Neighbouring ranks often differ by less than the bounds: read a rank with its "
        "bounds, not as a verdict. Possible ranks: every rank a district could hold if each "
        "district's true value lay anywhere within its bounds or interval (Goldstein & "
        "Spiegelhalter 1996)."
    )


# --- decomposition parts ---------------------------------------------------------------------

#: The parts of a within/between split, for a chart whose groups are named elsewhere.
PART_WORDS = {
    "within": "Within groups",
    "between": "Between groups",
    "overlap": "Overlap of groups (Gini)",
}

#: Column titles of a decomposition table (the change table renames three of them).
PART_COLUMNS = {
    "year": "Year",
    "level": "Groups",
    "group": "Group",
    "component": "Part",
    "value": "Value",
    "share": "Share of the total",
}
CHANGE_COLUMNS = {
    **PART_COLUMNS,
    "year": "Years",
    "component": "Term",
    "share": "Share of the change",
}

#: Column -> the words a decomposition table shows for a row (its data keep the keys).
PART_TEXT = {
    "level": lambda row: groups_word(row["level"]).capitalize(),
    "group": lambda row: "All" if row["group"] == "(all)" else row["group"],
    "component": lambda row: part_label(row["component"], row["level"]),
}

CHANGE_TERM_HELP = {
    "within": "inequality inside the groups changed",
    "population_within": "people moved between groups with different inside inequality",
    "population_between": "people moved between richer and poorer groups",
    "relative_income": "groups' mean incomes moved apart or together",
    "residual": "what the approximation of the change leaves over",
    "total": "the change of the index between the two years",
}


def groups_word(level: str, *, plural: bool = True) -> str:
    """A level key in planner words: ``region`` is a district, ``total`` the province."""
    if level in ("region", "district", "districts"):
        return "districts" if plural else "district"
    if level == "total":
        return "whole province"
    # A column name as the file spells it ("SUB_REGION") is not a word: "sub region".
    level = " ".join(str(level).replace("_", " ").split())
    if level.isupper() or level[:1].isupper():
        level = level.lower()
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


# --- captions --------------------------------------------------------------------------------

# Chart captions longer than a chart is wide are cut off by Vega; wrapped lines are not.
CAPTION_CHARS = 115


def wrap(text: str, width: int = CAPTION_CHARS) -> list[str]:
    """A caption as lines short enough for the chart (Vega draws each as a subtitle line)."""
    return textwrap.wrap(str(text), width=width) or [""]


def value_label(view: Any, panel: Any) -> str:
    """What the map's colour means, with its units."""
    if panel.kind == "means":
        if view.index == "mean_growth":
            return f"Average growth of mean income since {view.year_from} (% a year)"
        return AXIS_LABELS.get(view.index, AXIS_LABELS["mean_income"])
    if view.index in POVERTY_HELP:
        return f"{index_label(view.index)}, line {poverty_line_words(view)}"
    if view.index.startswith("growth_"):
        return f"{AXIS_LABELS[view.index]}, {view.year_from} to {view.year}"
    if view.index in GROWTH_WELFARE_HELP:
        return AXIS_LABELS[view.index]
    if panel.kind == "published":
        unit = SCALE_WORDS.get(published_scale(panel, view.index), "")
        if view.index == "median_income" or view.index == "mean_income":
            unit = "currency units"
        label = figure_label(view.index, panel)
        return f"{label} ({unit})" if unit else label
    full = index_label(view.index)
    label = full.split(" (")[0]
    if view.index.endswith("_share"):
        return f"{label} (share)"
    if view.index in ("palma", "s80_s20"):
        return full  # the name already says what is divided by what
    if view.index.startswith("atkinson_"):  # its ε belongs to the name
        return f"{full[:-1]}; 0 = equal)"
    return f"{label} (0 = equal)"


def poverty_line_words(view: Any) -> str:
    """The view's poverty line in words: ``60% of the province median``, ``12,000 a year``."""
    from explorer.stats.poverty_lines import parse_line

    line = parse_line(getattr(view, "poverty_line", "60%median"))
    if not line.relative:
        return f"{line.amount:,.0f} per person a year"
    whose = (
        "each district's own" if getattr(view, "relative_to", "") == "district" else "the province"
    )
    return f"{100 * line.fraction:g}% of {whose} {line.base}"


def dataset_name(view: Any, panel: Any) -> str:
    """The dataset's name as the sidebar lists it."""
    if view.dataset in DEMO_DATASETS:
        return DEMO_DATASETS[view.dataset][0]
    return panel.name or view.dataset


def caption(view: Any, panel: Any, *, every_year: bool = False) -> str:
    """A caption naming the data, the year (unless ``every_year``) and the method."""
    name = dataset_name(view, panel)
    if panel.kind == "brackets":
        how = f"Lorenz curves rebuilt from income shares: {method_label(view.method).lower()}"
    elif panel.kind == "units":
        how = "computed from weighted unit records"
    elif panel.kind == "published":
        how = "figures as the source published them, not recomputed or bounded"
    else:
        how = "district mean incomes"
        if getattr(view, "index", "") in ("mean_ratio", "mean_growth"):
            how += "; the province mean weights districts by population"
    from explorer.data.dataset_store import facts_of  # the dataset's facts, as saved

    given = facts_of(panel).caption().rstrip(".")
    concept = f" Income: {given}." if given else ""
    when = "" if every_year else f", {view.year}"
    return f"Data: {name}{filter_text(view, panel)}{when}; {how}.{concept}"


def filter_text(view: Any, panel: Any) -> str:
    """ ", only the districts of A and B" when the view's group filter is on, else ""."""
    chosen = tuple(getattr(view, "counties", ()) or ())
    if not chosen:
        return ""
    levels = tuple(getattr(panel, "levels", ()) or ())
    word = groups_word(levels[-1], plural=len(chosen) > 1) if levels else "groups"
    names = ", ".join(chosen[:-1]) + (" and " if len(chosen) > 1 else "") + chosen[-1]
    return f", only the districts of the {word} {names}"


def briefing_heading(view: Any, panel: Any) -> str:
    """The title of a briefing: which data and which year."""
    return f"Briefing: {dataset_name(view, panel)}{filter_text(view, panel)}, {view.year}"


def describe_view(view: Any, panel: Any) -> str:
    """One line: dataset (and its filter, when on), index, year."""
    shown = dataset_name(view, panel) + filter_text(view, panel)
    return f"{shown} · {value_label(view, panel)} · {view.year}"


# --- numbers ---------------------------------------------------------------------------------


def tidy_zero(values: pd.Series, tolerance: float = 1e-12) -> pd.Series:
    """Rounding noise shown as 0, so a table never reads -0.0000 or 5e-16."""
    numbers = pd.to_numeric(values, errors="coerce")
    return numbers.where(~(numbers.abs() < tolerance), 0.0)


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


def digits_of(panel: Any, key: str) -> int:
    """Decimals a figure is shown with: whole units for money and people, one decimal for
    percents (as offices print them), two for yearly growth, three otherwise."""
    if key in ("mean_income", "median_income", "population", "mean", "median"):
        return 0
    if key in GROWTH_WELFARE_HELP:
        return 2 if key.startswith("growth_") else 0
    if key == "mean_growth" or published_scale(panel, key) == "percent":
        return 1 if key != "mean_growth" else 2
    return 3


def table_format(panel: Any, key: str) -> str:
    """The column format of a figure in a table (as :func:`digits_of` says)."""
    digits = digits_of(panel, key)
    return "%,.0f" if digits == 0 else f"%.{digits if digits != 3 else 4}f"


#: Said once at the top of the Map for data that are not grouped shares or unit records.
KIND_NOTES = {
    "means": "This dataset has one mean income per district, so there is no inequality "
    "inside districts to map. The map shows district mean incomes, their ratio to the "
    "province's mean or their growth; the Breakdown page splits the inequality between "
    "districts into their groups.",
    "published": "These are figures as the source published them, one per district and "
    "year: they are mapped, ranked and followed over time as given, never recomputed, "
    "bounded or split into parts.",
}


def percent(value: Any, digits: int = 1) -> str:
    """A share as a percentage (``0.3202`` -> ``32.0%``); a dash when missing.

    Rounding noise reads 0.0%, never -0.0% or 6e-16.
    """
    try:
        number = float(value)
    except (TypeError, ValueError):
        return "—"
    if not np.isfinite(number):
        return "—"
    if abs(number) * 100 < 0.5 * 10.0**-digits:
        number = 0.0
    return f"{number:.{digits}%}"


def no_bound_text(kind: str) -> str:
    """Why a figure has no bounds or interval, for this kind of data."""
    if kind == "units":
        return (
            "No intervals in this view: turn on 'Sampling intervals' in the sidebar to see "
            "how far each figure could move with another sample."
        )
    if kind == "means":
        return "District means only: no bounds."
    return "No bound for this index."


def money(low: float, high: float) -> str:
    """A class of incomes in whole currency units with thousands separators."""
    return f"{low:,.0f} – {high:,.0f}"


# --------------------------------------------------------------------------- boundary changes

#: The Intake page's "Boundary changes" part.
VINTAGE_WORDS = {
    "part": "Boundary changes (optional): districts that split, merge or move",
    "intro": (
        "When districts changed during the panel's years, give each year's figures on the "
        "boundaries in force that year, add the later boundary file(s) with the year each "
        "is valid from, and say where the change weights come from. Every year is then "
        "carried to the districts of one set of boundaries, and each page says which "
        "years were carried and how."
    ),
    "first_year": "The boundary file above is valid from (0: the panel's first year)",
    "ordinal": {1: "second", 2: "third"},
    "later_file": "A {n} boundary file (one file: GeoJSON, GeoPackage, zipped Shapefile, "
    "GeoParquet)",
    "later_year": "Valid from year",
    "weights": "The change weights come from",
    "weights_from": {
        "table": "A change table (year, from, to, weight)",
        "area": "The overlay of the boundary files (shares of area)",
        "finer": "A finer layer of population (points or small areas)",
    },
    "table_file": "Change table: one row per piece (year, from, to, weight[, weight_kind])",
    "finer_file": "Finer layer (points or small areas with a population count)",
    "finer_column": "The finer layer's count to weigh by",
    "target": "Carry every year to the boundaries valid from",
    "latest": "the latest",
    "none_yet": "No later boundary file: the panel is read on the one set of boundaries.",
    "no_table": (
        "the change weights are to come from a change table, but none was uploaded",
        "upload the change table, or choose the overlay of the boundary files",
    ),
    "no_finer": (
        "the change weights are to come from a finer layer, but none was uploaded",
        "upload the finer layer, or choose the overlay of the boundary files",
    ),
    "first_file": (
        "carrying across boundary changes needs the first boundaries as one file",
        "upload the first boundaries as one file above (zip a Shapefile's parts together)",
    ),
    "no_year": (
        "the {n} boundary file {file} has no year",
        "give the year from which its boundaries are valid",
    ),
}


def carried_label(to_vintage: int, how: str) -> str:
    """The legend and caption words of a carried district-year."""
    return f"carried to the {to_vintage} boundaries: {how}"


CARRIED_MARK = "carried"  # the marks' series name in charts
CARRIED_CAPTION = (
    "Hollow points on the chosen districts' lines are district-years carried to the {year} "
    "boundaries from earlier "
    "districts (weights {weights}); each point's tooltip says how. Carried figures assume "
    "each piece has its district's distribution: read them as estimates, and prefer "
    "years kept as published before ranking districts for funds."
)
CARRIED_NOTE_TITLE = "Years carried to the {year} boundaries"
CARRIED_REPORT_TITLE = "District-years carried across boundary changes"
CARRIED_REPORT_INTRO = (
    "Every year was carried to the districts of the {year} boundaries (weights {weights}). "
    "The district-years below are not as published: each was made from earlier districts "
    "as said. Read them as estimates before ranking districts for funds."
)
CARRIED_COLUMNS = {"region": "District", "years": "Years", "how": "How it was carried"}

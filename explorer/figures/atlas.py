"""The Map page's figures: the map layer, its classes, the ranking and the headline."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import Panel
from explorer.figures import series
from explorer.figures.compute import Compute
from explorer.figures.spatial import ClusterLayer, cluster_layer
from explorer.figures.tables import map_values, rank_moves, ranking, why_missing, wide
from explorer.present import charts, vocabulary
from explorer.present.district_map import DistrictMap
from explorer.views import ViewState

__all__ = ["LAYERS", "RANK_COLUMNS", "AtlasFigures", "atlas"]

#: Map layers: the index itself, or its local clusters.
LAYERS = ("index", "clusters")
_MAP_COLUMNS = ["region", "value", "lower", "upper", "klass", "wide"]
#: The ranking table as the page shows it (the download keeps every column).
RANK_COLUMNS = [
    "rank",
    "rank_range",
    "name",
    "region",
    "county",
    "value",
    "lower",
    "upper",
    "rank_then",
    "move",
    "klass",
]


@dataclass(frozen=True)
class AtlasFigures:
    """Everything the Map page shows for one view (``layer`` empty: nothing to show).

    ``notices`` are warnings the page shows above the map (districts without a figure, or
    without a value for the cluster layer, by name).
    """

    layer: pd.DataFrame
    classification: charts.Classification | None
    value_label: str
    money: bool
    notices: tuple[str, ...]
    chart: Any
    features: list[dict[str, Any]] | None
    clusters: ClusterLayer | None
    ranking: pd.DataFrame
    ranking_title: str
    ranking_caution: str
    headline: tuple[tuple[str, str], ...]
    wide_count: int
    #: Said in passing (not a warning): e.g. districts listed because there is no map.
    remark: str = ""
    #: The first year ranks are compared with (None: the view's year is the first).
    moved_since: int | None = None
    #: Districts left off the map and ranking because their rank is not clear.
    unclear: int = 0
    #: Whether any district has both bounds finite (else no "wide bounds" outline).
    finite_bounds: bool = False

    @property
    def empty(self) -> bool:
        return self.layer.empty


def _classes(values: pd.Series, view: ViewState, money: bool) -> charts.Classification:
    classification = charts.classify(values, view.classes, view.k)
    if money:
        # Incomes read best in whole currency units with thousands separators.
        edges = classification.edges
        labels = tuple(
            vocabulary.money(lo, hi) for lo, hi in zip(edges[:-1], edges[1:], strict=True)
        )
        if len(set(labels)) == len(labels) == classification.k:
            classification = dataclasses.replace(classification, labels=labels)
    return classification


def _headline(ranked: pd.DataFrame, money: bool, digits: int) -> tuple[tuple[str, str], ...]:
    if ranked.empty:
        return ()

    def shown(value):
        return vocabulary.figure(value, money=money, digits=digits)

    return (
        (f"Highest: {ranked['name'].iloc[0]}", shown(ranked["value"].iloc[0])),
        (f"Lowest: {ranked['name'].iloc[-1]}", shown(ranked["value"].iloc[-1])),
        ("Median of districts", shown(ranked["value"].median())),
    )


def _cluster_chart(panel, view, layer, features, compute):
    found = cluster_layer(panel, layer.set_index("region")["value"], compute)
    lookup = dict(zip(found.districts["region"], found.districts["cluster"], strict=True))
    shown = [
        {
            **f,
            "properties": {
                **f["properties"],
                "cluster": lookup.get(str(f["properties"]["region"])),
            },
        }
        for f in features
    ]
    chart = charts.clusters_map(
        shown,
        title=f"Local clusters of {vocabulary.value_label(view, panel)}, {view.year}",
        caption=vocabulary.wrap(
            vocabulary.caption(view, panel)
            + " Local Moran (Anselin 1995), queen contiguity, 499 permutations, 5 % level."
            " High-high: a high value among high neighbours; low-low: low among low; "
            "high-low and low-high: a district unlike its neighbours."
            + (f" White: no value ({len(found.left_out)})." if found.left_out else "")
        ),
        selected=view.districts,
    )
    return chart, found


def _index_chart(panel, view, layer, classification, mark_wide, outlines):
    note = (
        " Dashed outline: bounds wider than "
        f"{vocabulary.WIDE_SHARE:.0%} of the value (the figure is uncertain there)."
        if mark_wide
        else ""
    )
    label = vocabulary.value_label(view, panel)
    return DistrictMap(
        outlines,
        layer[_MAP_COLUMNS],
        value_label=label,
        classes=list(classification.labels),
        title=f"{label}, {view.year}",
        caption=vocabulary.wrap(vocabulary.caption(view, panel) + note),
        selected=tuple(view.districts),
    )


def atlas(
    panel: Panel,
    view: ViewState,
    compute: Compute,
    *,
    layer: str | None = None,
    mark_wide: bool | None = None,
) -> AtlasFigures:
    """The Atlas figures of ``view``: the ``index`` layer or its local ``clusters``.

    ``layer`` and ``mark_wide`` default to the view's own ``layer`` and ``show_intervals``.
    """
    layer = view.layer if layer is None else layer
    money = series.is_money(panel, view.index)
    bounded = panel.kind in ("brackets", "units")
    mark_wide = bool(view.show_intervals if mark_wide is None else mark_wide) and bounded
    table = series.values(panel, compute, view.index, view.method, view.year_from, view)
    values = map_values(panel, table, view.year, view.index)
    # an index with no finite bound anywhere (Theil T's upper) would be outlined everywhere
    finite_bounds = bool(
        len(values)
        and np.isfinite(values[["lower", "upper"]].to_numpy(dtype=float)).all(axis=1).any()
    )
    mark_wide = mark_wide and finite_bounds
    label = vocabulary.value_label(view, panel)
    ranked = ranking(values)
    since = _first_year(panel, view, table)
    unclear = 0
    full = values
    if view.clear_ranks and bounded and ranked["best"].notna().any():
        keep = set(ranked.loc[ranked["best"] == ranked["worst"], "region"].astype(str))
        unclear = len(ranked) - len(keep)
        values = values.assign(value=values["value"].where(values["region"].astype(str).isin(keep)))
    common = dict(
        value_label=label,
        money=money,
        ranking_title=vocabulary.ranking_title(panel.kind, view.index),
        ranking_caution=vocabulary.ranking_caution(panel.kind),
        wide_count=int(wide(values).sum()) if len(values) else 0,
    )
    if values.empty:
        notice = "No figures for this year and index. Choose another year or index."
        return AtlasFigures(
            values,
            None,
            notices=(notice,),
            chart=None,
            features=None,
            clusters=None,
            ranking=ranked,
            headline=(),
            **common,
        )
    notices = [n for n in (why_missing(full),) if n]
    classification = _classes(values["value"], view, money)
    values = values.assign(klass=classification.assign(values["value"]))
    if not mark_wide:
        values = values.assign(wide=False)
    chart = features = found = None
    remark = ""
    if panel.boundaries is None:
        remark = "This dataset has no boundary file, so the districts are listed instead of mapped."
    else:
        # the outlines once per boundary file (cached in the app); the values on them
        outlines = compute.map_outlines()
        features = charts.join_values(outlines, values[_MAP_COLUMNS])
        if layer == "clusters":
            chart, found = _cluster_chart(panel, view, values, features, compute)
            notices.extend(n for n in (found.notice,) if n)
        else:
            chart = _index_chart(panel, view, values, classification, mark_wide, outlines)
    ranked = _with_moves(panel, view, table, ranking(values), since)
    if unclear:
        notices.append(
            f"Shown: only the districts whose rank is clear ({len(ranked)}; their bounds allow "
            f"one rank only). Greyed out: {unclear} whose bounds overlap their neighbours', "
            "so their rank is not clear. Turn off 'Only clear ranks' to see them all."
        )
    return AtlasFigures(
        values,
        classification,
        notices=tuple(notices),
        chart=chart,
        features=features,
        clusters=found,
        ranking=ranked,
        headline=_headline(ranked, money, vocabulary.digits_of(panel, view.index)),
        remark=remark,
        moved_since=since,
        unclear=unclear,
        finite_bounds=finite_bounds,
        **common,
    )


def _first_year(panel: Panel, view: ViewState, table: pd.DataFrame) -> int | None:
    """The year ranks are compared with: the view's first year, when it is earlier and the
    figure is a level (growth figures already compare two years)."""
    first = view.year_from
    if first is None or first >= view.year or view.index.startswith(("growth_", "mean_growth")):
        return None
    return int(first) if (table["year"] == first).any() else None


def _with_moves(panel, view, table, ranked, since):
    if since is None or ranked.empty:
        return ranked.assign(rank_then=float("nan"), move="")
    then = ranking(map_values(panel, table, since, view.index))
    return rank_moves(ranked, then, since)

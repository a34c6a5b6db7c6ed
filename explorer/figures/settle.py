"""A view made consistent with the panel it is shown on."""

from __future__ import annotations

import dataclasses
import hashlib
from typing import Any

from explorer.data.model import Panel
from explorer.figures.series import figure_keys
from explorer.views import ViewState

__all__ = ["narrow", "settle"]


def settle(view: ViewState, panel: Panel) -> ViewState:
    """The view with its choices made valid for ``panel``.

    Empty or unknown years become the panel's latest year (``year``, ``year_to``) and its
    first year (``year_from``); districts and compared years the panel does not hold are dropped; a Lorenz
    method other than ``auto`` is reset for data that are not grouped shares; a grouping
    level the panel lacks is cleared; an index the panel cannot show becomes one it can
    (:func:`explorer.figures.series.figure_keys`).
    """
    years = [int(y) for y in panel.years]
    changes: dict[str, Any] = {}
    if view.year not in years:
        changes["year"] = years[-1]
    if view.year_from not in years:
        changes["year_from"] = years[0]
    if view.year_to not in years:
        changes["year_to"] = years[-1]
    regions = set(map(str, panel.regions))
    kept = tuple(d for d in view.districts if d in regions)
    if kept != tuple(view.districts):
        changes["districts"] = kept
    compared = tuple(y for y in view.compare_years if y in years)
    if compared != tuple(view.compare_years):
        changes["compare_years"] = compared
    if panel.kind != "brackets" and view.method != "auto":
        changes["method"] = "auto"
    if view.level is not None and view.level not in panel.levels:
        changes["level"] = None
    offered = figure_keys(panel)
    if offered and view.index not in offered:
        # gini stays where the panel has it (published Ginis); else the first figure offered
        changes["index"] = "gini" if "gini" in offered else offered[0]
    return view.replace(**changes) if changes else view


def narrow(panel: Panel, counties: tuple[str, ...] | list[str]) -> Panel:
    """The panel cut down to the districts of the chosen groups of its innermost level.

    Every page then works on those districts only: the map shows (and zooms to) them, the
    rankings, timelines and the breakdown cover them alone. Groups the panel does not have
    are ignored; with none left, or no level, the panel is returned as it is. The cut panel
    has its own fingerprint, so cached figures of the whole panel are never reused for it.
    """
    if not counties or not panel.levels:
        return panel
    level = panel.levels[-1]
    keep = panel.hierarchy[panel.hierarchy[level].astype(str).isin(set(map(str, counties)))]
    regions = set(keep["region"].astype(str))
    if not regions:
        return panel
    boundaries = panel.boundaries
    if boundaries is not None:
        boundaries = boundaries[boundaries["region"].astype(str).isin(regions)]
    excluded = panel.excluded
    if excluded is not None and len(excluded):
        excluded = excluded[excluded["region"].astype(str).isin(regions)]
    stamp = "\n".join([panel.fingerprint, level, *sorted(map(str, counties))]).encode()
    return dataclasses.replace(
        panel,
        data=panel.data[panel.data["region"].astype(str).isin(regions)].reset_index(drop=True),
        hierarchy=keep.reset_index(drop=True),
        boundaries=boundaries,
        excluded=excluded,
        fingerprint=hashlib.sha256(stamp).hexdigest()[:16],
    )

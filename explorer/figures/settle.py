"""A view made consistent with the panel it is shown on."""

from __future__ import annotations

from typing import Any

from explorer.data.model import Panel
from explorer.views import ViewState

__all__ = ["settle"]


def settle(view: ViewState, panel: Panel) -> ViewState:
    """The view with its choices made valid for ``panel``.

    Empty or unknown years become the panel's latest year (``year``, ``year_to``) and its
    first year (``year_from``); districts the panel does not hold are dropped; a Lorenz
    method other than ``auto`` is reset for data that are not grouped shares; a grouping
    level the panel lacks is cleared.
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
    if panel.kind != "brackets" and view.method != "auto":
        changes["method"] = "auto"
    if view.level is not None and view.level not in panel.levels:
        changes["level"] = None
    return view.replace(**changes) if changes else view

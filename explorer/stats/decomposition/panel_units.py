"""A panel of any kind as weighted units with their district, year and higher levels."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats.decomposition.checks import _codes
from explorer.stats.decomposition.pseudo_units import pseudo_units

__all__: list[str] = []


@dataclass(frozen=True)
class _Units:
    year: np.ndarray  # int, per unit
    region: np.ndarray  # str, per unit
    income: np.ndarray
    weight: np.ndarray
    has_within: bool  # False for means panels: a district is one unit
    dropped: pd.DataFrame


def _panel_units(panel: Any, method: str) -> _Units:
    data = panel.data
    empty = pd.DataFrame({"region": [], "year": [], "reason": []})
    if panel.kind == "units":
        return _Units(
            data["year"].to_numpy(dtype=np.int64),
            data["region"].to_numpy(dtype=object),
            data["income"].to_numpy(dtype=float),
            data["weight"].to_numpy(dtype=float),
            True,
            empty,
        )
    if panel.kind == "means":
        pop = data["population"].to_numpy(dtype=float)
        missing = np.isnan(pop)
        if missing.any() and not missing.all():
            first = data.loc[missing, ["region", "year"]].iloc[0]
            raise fail(
                f"population is given for some districts but not for {first['region']} in "
                f"{first['year']} (and {int(missing.sum()) - 1} more).",
                "Give every district-year a population, or none (then districts count equally).",
                column="population",
            )
        return _Units(
            data["year"].to_numpy(dtype=np.int64),
            data["region"].to_numpy(dtype=object),
            data["mean_income"].to_numpy(dtype=float),
            np.ones(len(data)) if missing.all() else pop,
            False,
            empty,
        )
    if panel.kind == "brackets":
        from explorer.stats import lorenz  # grouped data only; keeps unit panels free of fitting

        fits = lorenz.fit_panel(panel, method)
        per_row = data.drop_duplicates(["region", "year"]).set_index(["region", "year"])
        index = pd.MultiIndex.from_frame(fits.keys[["region", "year"]])
        population = per_row["population"].reindex(index).to_numpy(dtype=float)
        mean = per_row["mean_income"].reindex(index).to_numpy(dtype=float)
        if np.all(np.isnan(mean)):
            raise fail(
                "a decomposition of grouped data needs each district's mean income, and none "
                "is given.",
                "Add a mean_income column (one value per district and year).",
                column="mean_income",
            )
        units = pseudo_units(fits, population, mean)
        m = units.grid.size - 1
        return _Units(
            np.repeat(units.keys["year"].to_numpy(dtype=np.int64), m),
            np.repeat(units.keys["region"].to_numpy(dtype=object), m),
            units.income.ravel(),
            units.weight.ravel(),
            True,
            units.dropped,
        )
    raise fail(
        f"unknown panel kind '{panel.kind}'.", "Load the panel with explorer.data.load_panel."
    )


def _level_labels(panel: Any, by: Sequence[str], regions: np.ndarray) -> list[np.ndarray]:
    hierarchy = panel.hierarchy
    missing = [b for b in by if b not in hierarchy.columns or b == "region"]
    if missing:
        options = [c for c in hierarchy.columns if c != "region"]
        raise fail(
            f"there is no level called {', '.join(repr(m) for m in missing)}.",
            f"Choose from: {', '.join(options) if options else '(no higher levels in this panel)'}.",
            column=missing[0],
        )
    lookup = hierarchy.set_index("region")
    out = []
    for level in by:
        mapped = lookup[level].reindex(regions).to_numpy(dtype=object)
        absent = pd.isna(mapped)
        if absent.any():
            raise fail(
                f"district {regions[absent][0]} has no {level}.",
                f"Give every district a {level} in the hierarchy.",
                column=level,
            )
        out.append(mapped.astype(str))
    return out


def _years(units: _Units) -> tuple[np.ndarray, np.ndarray]:
    codes, years = _codes(units.year)
    return years, codes

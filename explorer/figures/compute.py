"""What the figures layer asks of a panel, and the plain (uncached) way to answer it.

A page's figures are built from a handful of expensive computations (the index table, the
Lorenz fits, the within/between split, the change split, Lorenz curves on a grid, local
clusters). :class:`Compute` names them; :class:`PlainCompute` computes them directly and is
what the report and the command line use; the app passes an implementation with the same
methods that caches each result by the panel's fingerprint (``explorer.ui.cache``).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
import pandas as pd

from explorer.data.model import Panel

__all__ = ["Compute", "PlainCompute", "lorenz_curves", "one_district", "tidy"]

#: Permutations of the local-cluster layer on the map (the CLI's default is larger).
MAP_PERMUTATIONS = 499


class Compute(Protocol):
    """The computations a page's figures are built from, bound to one panel."""

    panel: Panel

    def indices(self, method: str, ci: str | None = None) -> pd.DataFrame: ...

    def fits(self, methods: Sequence[str]) -> pd.DataFrame: ...

    def breakdown(self, by: Sequence[str], index: str, method: str) -> pd.DataFrame: ...

    def change(
        self, by: Sequence[str], index: str, year_from: int, year_to: int
    ) -> pd.DataFrame: ...

    def lorenz_curves(self, region: str, year: int, methods: Sequence[str]) -> pd.DataFrame: ...

    def poverty(self, line: str, relative_to: str, method: str) -> pd.DataFrame: ...

    def welfare(self, method: str) -> pd.DataFrame: ...

    def growth(
        self,
        year_from: int,
        method: str,
        line: str,
        relative_to: str,
        to: int | None = None,
        region: str | None = None,
    ) -> tuple[pd.DataFrame, pd.DataFrame]: ...

    def district_fits(self, region: str, year: int, methods: Sequence[str]) -> pd.DataFrame: ...

    def district_welfare(self, region: str, year: int, method: str) -> pd.DataFrame: ...

    def scenario(self, scenario: str, year: int, line: str, method: str) -> Any: ...

    def clusters(
        self, values: pd.Series, permutations: int = MAP_PERMUTATIONS
    ) -> tuple[pd.DataFrame, Any]: ...

    def map_outlines(self) -> Any: ...

    def map_features(self, values: pd.DataFrame) -> list[dict[str, Any]]: ...

    def choropleth(self, values: pd.DataFrame, **labels: Any) -> Any: ...


def tidy(table: pd.DataFrame) -> pd.DataFrame:
    """A plain table: fresh index, no attached metadata (keeps cached copies small)."""
    out = table.reset_index(drop=True)
    out.attrs = {}
    return out


def one_district(panel: Panel, region: str, year: int | None = None) -> Panel:
    """The panel cut to one district (and one year): what depends on that district alone
    is computed on its own rows, not on the whole panel."""
    import dataclasses

    data = panel.data
    keep = data["region"].astype(str) == str(region)
    if year is not None:
        keep &= data["year"] == int(year)
    return dataclasses.replace(panel, data=data[keep].reset_index(drop=True))


def lorenz_curves(panel: Panel, region: str, year: int, methods: Sequence[str]) -> pd.DataFrame:
    """Every method's Lorenz curve for one district-year on a shared grid of 101 points."""
    from explorer.stats import lorenz

    grid = np.linspace(0.0, 1.0, 101)
    # each curve is fitted to its own district-year only: the fits do not depend on others
    panel = one_district(panel, region, year)
    region = str(region)
    rows = []
    every = lorenz.fit_panel_methods(panel, tuple(methods)) if len(panel.data) else {}
    for method in methods:
        if method not in every:
            continue
        fitted = every[method]
        keys = tidy(fitted.keys)
        hit = np.flatnonzero(
            (keys["region"].astype(str) == region).to_numpy() & (keys["year"] == year)
        )
        if hit.size == 0:
            continue
        values = fitted.evaluate(grid)[hit[0]]
        ok = bool(np.asarray(fitted.valid)[hit[0]])
        rows.append(pd.DataFrame({"p": grid, "L": values, "method": method, "valid": ok}))
    return pd.concat(rows, ignore_index=True) if rows else pd.DataFrame(columns=["p", "L"])


def clusters(
    panel: Panel,
    values: pd.Series,
    permutations: int,
    *,
    seed: int = 0,
    graph: str = "queen",
    k: int = 4,
    alpha: float = 0.05,
) -> tuple[pd.DataFrame, Any]:
    """Local Moran clusters and global statistics of finite ``values`` (indexed by region).

    The neighbour graph is built on the boundaries of exactly these districts, so a district
    without a value is never a neighbour of anyone.

    References
    ----------
    Anselin, L. (1995). Local indicators of spatial association — LISA. *Geographical
    Analysis* 27: 93–115.
    """
    from explorer.stats import spatial

    values = values.set_axis(values.index.astype(str))
    shapes = panel.boundaries[panel.boundaries["region"].astype(str).isin(values.index)]
    neighbours = spatial.neighbours(shapes, kind=graph, k=k)
    ordered = values.reindex(neighbours.ids.astype(str))
    local = spatial.district_table(
        ordered, neighbours, permutations=permutations, seed=seed, alpha=alpha
    )
    overall = spatial.global_stats(ordered, neighbours, permutations=permutations, seed=seed)
    return tidy(local), overall


@dataclass(frozen=True)
class PlainCompute:
    """Every computation done directly on the panel, without a cache."""

    panel: Panel

    def indices(self, method: str, ci: str | None = None) -> pd.DataFrame:
        from explorer.stats import indices

        if ci == "bootstrap":
            return indices.compute(self.panel, methods=("auto",), ci=ci, reps=199, seed=0)
        method = method if self.panel.kind == "brackets" else "auto"
        return indices.compute(self.panel, methods=(method,))

    def fits(self, methods: Sequence[str]) -> pd.DataFrame:
        from explorer.stats import indices

        return indices.fits(self.panel, tuple(methods))

    def breakdown(self, by: Sequence[str], index: str, method: str) -> pd.DataFrame:
        from explorer.stats import decompose

        return decompose.table(self.panel, by=tuple(by), index=index, method=method)

    def change(self, by: Sequence[str], index: str, year_from: int, year_to: int) -> pd.DataFrame:
        from explorer.stats import decompose

        return decompose.change(
            self.panel, by=tuple(by), index=index, year_from=year_from, year_to=year_to
        )

    def lorenz_curves(self, region: str, year: int, methods: Sequence[str]) -> pd.DataFrame:
        return lorenz_curves(self.panel, region, int(year), tuple(methods))

    def poverty(self, line: str, relative_to: str, method: str) -> pd.DataFrame:
        """The poverty table against ``line`` (:func:`explorer.stats.poverty_table.compute`)."""
        from explorer.stats import poverty_lines, poverty_table

        method = method if self.panel.kind == "brackets" else "auto"
        parsed = poverty_lines.parse_line(line, scope=relative_to)
        return poverty_table.compute(self.panel, parsed, methods=(method,))

    def welfare(self, method: str) -> pd.DataFrame:
        """Welfare in money per district-year (:func:`explorer.stats.welfare.compute`)."""
        from explorer.stats import welfare

        method = method if self.panel.kind == "brackets" else "auto"
        return welfare.compute(self.panel, methods=(method,))

    def growth(
        self,
        year_from: int,
        method: str,
        line: str,
        relative_to: str,
        to: int | None = None,
        region: str | None = None,
    ) -> tuple[pd.DataFrame, pd.DataFrame]:
        """Growth incidence from ``year_from`` to every later year, or to ``to`` alone, of
        every district or of ``region`` alone (:func:`explorer.stats.growth.since`), the
        poorest H % set by ``line``."""
        import dataclasses

        from explorer.stats import growth, poverty_lines

        method = method if self.panel.kind == "brackets" else "auto"
        parsed = poverty_lines.parse_line(line, scope=relative_to)
        panel = self.panel
        head = None
        if region is not None:
            # the first year's headcount from every district of that year: a line relative
            # to the province's median or mean is set by all of them
            from explorer.stats import poverty_table

            first = panel.data["year"] == int(year_from)
            year_panel = dataclasses.replace(panel, data=panel.data[first].reset_index(drop=True))
            # the line from every district of the year; the headcount of this one only
            table = poverty_table.compute(
                year_panel, parsed, methods=(method,), regions=(str(region),)
            )
            rows = table[table["index"] == "fgt_0"]
            head = rows.assign(region=rows["region"].astype(str)).set_index("region")["value"]
        if to is not None or region is not None:
            # only the two years (and the one district) are fitted
            keep = panel.data["year"].isin([int(year_from), int(to)]) if to is not None else True
            if region is not None:
                keep = keep & (panel.data["region"].astype(str) == str(region))
            panel = dataclasses.replace(panel, data=panel.data[keep].reset_index(drop=True))
        later = None if to is None else (int(to),)
        return growth.since(panel, int(year_from), method, parsed, later=later, headcount=head)

    def scenario(self, scenario: str, year: int, line: str, method: str) -> Any:
        """A scenario's before and after tables (:func:`explorer.stats.scenario.apply`)."""
        from explorer.stats.scenario import Scenario, apply

        method = method if self.panel.kind == "brackets" else "auto"
        found = Scenario.from_json(scenario)
        return apply(self.panel, found, int(year), line=line, method=method)

    def district_fits(self, region: str, year: int, methods: Sequence[str]) -> pd.DataFrame:
        """Fit diagnostics of one district-year (the District sheet's table)."""
        from explorer.stats import indices

        return indices.fits(one_district(self.panel, region, year), tuple(methods))

    def district_welfare(self, region: str, year: int, method: str) -> pd.DataFrame:
        """Welfare in money of one district-year (the District sheet's table); each
        district-year's welfare depends on its own shares and mean alone."""
        from explorer.stats import welfare

        method = method if self.panel.kind == "brackets" else "auto"
        return welfare.compute(one_district(self.panel, region, year), methods=(method,))

    def clusters(
        self, values: pd.Series, permutations: int = MAP_PERMUTATIONS
    ) -> tuple[pd.DataFrame, Any]:
        return clusters(self.panel, values, permutations)

    def map_outlines(self) -> Any:
        """The districts' outlines for maps (:func:`charts.map_outlines`)."""
        from explorer.present import charts

        return charts.map_outlines(self.panel.boundaries)

    def map_features(self, values: pd.DataFrame) -> list[dict[str, Any]]:
        from explorer.present import charts

        return charts.join_values(self.map_outlines(), values)

    def choropleth(self, values: pd.DataFrame, **labels: Any) -> Any:
        """The map of ``values`` (:class:`explorer.present.district_map.DistrictMap`);
        ``labels`` are :func:`charts.choropleth`'s keywords."""
        from explorer.present.district_map import DistrictMap

        return DistrictMap(self.map_outlines(), values, **labels)

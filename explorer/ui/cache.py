"""The figures layer's computations, cached by content for the app.

Every computation is keyed by the panel's fingerprint (hashed) plus a scope (the session's own
id for uploads, so even identical uploads in two sessions never share an entry) and its
arguments; the panel itself travels as ``_panel`` and is not hashed. :class:`CachedCompute`
offers these under the names of :class:`explorer.figures.Compute`, so a page hands it to the
same figure functions the report and the command line call with a plain implementation.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd
import streamlit as st

from explorer.figures import compute as plain
from explorer.figures.compute import MAP_PERMUTATIONS, tidy

__all__ = ["BOOTSTRAP_KEY", "CachedCompute", "page_figure"]

#: Session key of the sidebar's "Sampling intervals (bootstrap)" toggle (the view's
#: ``bootstrap`` field, bound by ``explorer.ui.state.control``).
BOOTSTRAP_KEY = "ctl_bootstrap"


# cache_resource, not cache_data: the table of every district-year and index is read on
# every redraw, and unpickling a copy of hundreds of thousands of rows each time costs more
# than the rest of the redraw. The scope in the key keeps an upload's table to its session;
# every reader filters it into a new frame and none changes it.
@st.cache_resource(
    show_spinner="Computing the indices for every district and year…", max_entries=16
)
def _indices(_panel, fingerprint: str, scope: str, method: str):
    return tidy(plain.PlainCompute(_panel).indices(method))


@st.cache_data(
    show_spinner="Resampling the households 199 times for every district and year…",
    max_entries=16,
)
def _bootstrapped(_panel, fingerprint: str, scope: str):
    return tidy(plain.PlainCompute(_panel).indices("auto", ci="bootstrap"))


@st.cache_data(show_spinner="Checking the Lorenz fits…", max_entries=32)
def _fits(_panel, fingerprint: str, scope: str, methods: tuple[str, ...]):
    return tidy(plain.PlainCompute(_panel).fits(methods))


@st.cache_data(show_spinner="Splitting inequality within and between groups…", max_entries=64)
def _breakdown(_panel, fingerprint: str, scope: str, by: tuple[str, ...], index: str, method: str):
    return tidy(plain.PlainCompute(_panel).breakdown(by, index, method))


@st.cache_data(show_spinner="Decomposing the change…", max_entries=64)
def _change(_panel, fingerprint: str, scope: str, by: tuple[str, ...], index: str, start, end):
    return tidy(plain.PlainCompute(_panel).change(by, index, start, end))


@st.cache_data(show_spinner=False, max_entries=128)
def _lorenz_curves(_panel, fingerprint: str, scope: str, region: str, year: int, methods):
    return plain.lorenz_curves(_panel, region, year, methods)


@st.cache_data(show_spinner="Measuring poverty in every district and year…", max_entries=32)
def _poverty(_panel, fingerprint: str, scope: str, line: str, relative_to: str, method: str):
    return tidy(plain.PlainCompute(_panel).poverty(line, relative_to, method))


@st.cache_data(show_spinner="Measuring welfare in every district and year…", max_entries=32)
def _welfare(_panel, fingerprint: str, scope: str, method: str):
    return tidy(plain.PlainCompute(_panel).welfare(method))


@st.cache_data(show_spinner="Measuring growth at every percentile…", max_entries=32)
def _growth(
    _panel, fingerprint: str, scope: str, year_from: int, method, line, relative_to, to, region
):
    summary, curves = plain.PlainCompute(_panel).growth(
        year_from, method, line, relative_to, to, region
    )
    left_out = summary.attrs.get("left_out", [])
    summary = tidy(summary)
    summary.attrs["left_out"] = left_out  # named on the page, so it must survive the cache
    return summary, tidy(curves)


@st.cache_data(show_spinner="Applying the scenario…", max_entries=32)
def _scenario(_panel, fingerprint: str, scope: str, scenario: str, year: int, line, method):
    return plain.PlainCompute(_panel).scenario(scenario, year, line, method)


@st.cache_data(show_spinner=False, max_entries=256)
def _district_fits(_panel, fingerprint: str, scope: str, region: str, year: int, methods):
    return tidy(plain.PlainCompute(_panel).district_fits(region, year, methods))


@st.cache_data(show_spinner=False, max_entries=256)
def _district_welfare(_panel, fingerprint: str, scope: str, region: str, year: int, method: str):
    return tidy(plain.PlainCompute(_panel).district_welfare(region, year, method))


# cache_data, not cache_resource: an upload's clusters are user data, and cache_resource would
# hand one shared object to every session.
@st.cache_data(show_spinner="Testing for spatial clustering (permutations)…", max_entries=32)
def _clusters(_panel, fingerprint: str, scope: str, values: pd.Series, permutations: int):
    return plain.clusters(_panel, values, permutations)


# cache_resource: the outlines of thousands of districts are read on every redraw of a map,
# and a copy per read (cache_data) costs more than the redraw. The key holds the scope, so
# an upload's outlines are never handed to another session; nothing changes them.
@st.cache_resource(show_spinner="Simplifying the district boundaries…", max_entries=8)
def _map_outlines(_panel, fingerprint: str, scope: str):
    return plain.PlainCompute(_panel).map_outlines()


@dataclass(frozen=True)
class CachedCompute:
    """The figures layer's :class:`~explorer.figures.Compute`, cached by content."""

    panel: Any
    scope: str

    @property
    def fingerprint(self) -> str:
        return self.panel.fingerprint

    def _key(self) -> tuple[Any, str, str]:
        return self.panel, self.fingerprint, self.scope

    def indices(self, method: str, ci: str | None = None) -> pd.DataFrame:
        if ci is None and self.panel.kind == "units" and st.session_state.get(BOOTSTRAP_KEY):
            ci = "bootstrap"
        if ci == "bootstrap":
            return _bootstrapped(*self._key())
        method = method if self.panel.kind == "brackets" else "auto"
        return _indices(*self._key(), method)

    def fits(self, methods: Sequence[str]) -> pd.DataFrame:
        return _fits(*self._key(), tuple(methods))

    def breakdown(self, by: Sequence[str], index: str, method: str) -> pd.DataFrame:
        return _breakdown(*self._key(), tuple(by), index, method)

    def change(self, by: Sequence[str], index: str, year_from: int, year_to: int) -> pd.DataFrame:
        return _change(*self._key(), tuple(by), index, year_from, year_to)

    def lorenz_curves(self, region: str, year: int, methods: Sequence[str]) -> pd.DataFrame:
        return _lorenz_curves(*self._key(), region, int(year), tuple(methods))

    def clusters(self, values: pd.Series, permutations: int = MAP_PERMUTATIONS):
        return _clusters(*self._key(), values, permutations)

    def poverty(self, line: str, relative_to: str, method: str) -> pd.DataFrame:
        method = method if self.panel.kind == "brackets" else "auto"
        return _poverty(*self._key(), line, relative_to, method)

    def welfare(self, method: str) -> pd.DataFrame:
        method = method if self.panel.kind == "brackets" else "auto"
        return _welfare(*self._key(), method)

    def growth(
        self, year_from: int, method: str, line: str, relative_to: str, to=None, region=None
    ):
        method = method if self.panel.kind == "brackets" else "auto"
        to = None if to is None else int(to)
        region = None if region is None else str(region)
        return _growth(*self._key(), int(year_from), method, line, relative_to, to, region)

    def scenario(self, scenario: str, year: int, line: str, method: str):
        method = method if self.panel.kind == "brackets" else "auto"
        return _scenario(*self._key(), scenario, int(year), line, method)

    def district_fits(self, region: str, year: int, methods: Sequence[str]) -> pd.DataFrame:
        return _district_fits(*self._key(), str(region), int(year), tuple(methods))

    def district_welfare(self, region: str, year: int, method: str) -> pd.DataFrame:
        method = method if self.panel.kind == "brackets" else "auto"
        return _district_welfare(*self._key(), str(region), int(year), method)

    def map_outlines(self) -> Any:
        return _map_outlines(*self._key())

    def map_features(self, values: pd.DataFrame) -> list[dict[str, Any]]:
        from explorer.present import charts

        return charts.join_values(self.map_outlines(), values)

    def choropleth(self, values: pd.DataFrame, **labels: Any) -> Any:
        # nothing to cache: the outlines are cached, the rest is a few small tables
        from explorer.present.district_map import DistrictMap

        return DistrictMap(self.map_outlines(), values, **labels)


# cache_resource: one object for every session showing the same view of the same data
# (scope keeps an upload's figures to its own session). The page only reads what it gets;
# the charts in it are converted to specs once (explorer.ui.draw) and reused on every run.
@st.cache_resource(show_spinner=False, max_entries=48)
def _page_figure(
    name: str, fingerprint: str, scope: str, view_key: str, extra_key: str,
    _build, _panel, _view, _compute, _extra,
):  # fmt: skip
    return _build(_panel, _view, _compute, *_extra)


def _panel_key(panel: Any) -> str:
    """The panel's content and everything else about it a figure may print.

    The fingerprint covers the data, hierarchy and boundaries; the name, facts (saved
    separately and changeable), warnings and set-aside rows are words on the figures.
    """
    import hashlib

    from explorer.data.dataset_store import facts_of

    excluded = getattr(panel, "excluded", None)
    told = (
        panel.name,
        panel.income_concept,
        tuple(panel.levels),
        repr(facts_of(panel)),
        repr(panel.warnings),
        "" if excluded is None else excluded.to_csv(index=False),
    )
    digest = hashlib.sha256(repr(told).encode("utf-8")).hexdigest()[:16]
    return f"{panel.fingerprint}-{digest}"


def page_figure(build: Any, panel: Any, view: Any, compute: CachedCompute, *extra: Any) -> Any:
    """A page's figures, built once per view of the data and shared by every session.

    Parameters
    ----------
    build : callable
        A figures-layer function ``build(panel, view, compute, *extra)``, such as
        :func:`explorer.figures.atlas`.
    panel, view, compute
        What the page opened (:func:`explorer.ui.open_view`).
    *extra
        Further arguments of ``build`` (plain values, part of the key by their ``repr``).

    Returns
    -------
    Any
        What ``build`` returns; shared, so it must not be changed by the page.
    """
    import json

    view_key = json.dumps(view.to_query(), sort_keys=True)
    return _page_figure(
        f"{build.__module__}.{build.__qualname__}",
        _panel_key(panel),
        compute.scope,
        view_key,
        repr(extra),
        build,
        panel,
        view,
        compute,
        extra,
    )

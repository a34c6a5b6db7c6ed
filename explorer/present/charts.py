"""Altair chart builders: tidy tables in, ``alt.Chart`` out, nothing else.

Every builder is a pure function of its arguments. Each chart carries a title, a caption
(the title's subtitle, naming the data and the method), units in its axis and legend
titles, and tooltips. Colours are colour-blind safe: a sequential scheme for magnitudes
(reversed ``viridis``, darker = more unequal), a two-colour diverging pair for change
(blue lowers, orange raises inequality) and the Okabe–Ito palette for categories.

The map helpers prepare GeoJSON for Vega: Vega draws geoshapes with d3-geo on the sphere,
where an exterior ring must wind clockwise (the opposite of GeoJSON's right-hand rule),
or the polygon fills the whole frame instead of the district.
"""

from __future__ import annotations

import json
import math
import warnings
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import altair as alt
import mapclassify
import numpy as np
import pandas as pd
import shapely
import vl_convert as vlc

from explorer.present.vocabulary import axis_label as index_label

__all__ = [
    "CLUSTER_COLOURS",
    "DIVERGING",
    "OKABE_ITO",
    "SEQUENTIAL_SCHEME",
    "Classification",
    "change_bars",
    "choropleth",
    "classify",
    "clusters_map",
    "components",
    "convergence",
    "Outlines",
    "district_values",
    "features_for_display",
    "join_values",
    "map_outlines",
    "index_label",
    "interval_strip",
    "lorenz_pair",
    "lorenz_profile",
    "payload_kb",
    "fit_facets",
    "mean_income_over_time",
    "rank_over_time",
    "relabel_chart",
    "to_png",
    "to_svg",
    "trajectories",
]

#: Sequential scheme for magnitudes (Vega's viridis, reversed so darker = more unequal).
SEQUENTIAL_SCHEME = "viridis"
#: Diverging pair for change: (lowers inequality, raises inequality), ColorBrewer PuOr ends.
DIVERGING = ("#2166ac", "#b35806")
#: Okabe & Ito (2008) colour-universal-design palette, black last.
OKABE_ITO = (
    "#0072B2",
    "#E69F00",
    "#009E73",
    "#CC79A7",
    "#56B4E9",
    "#D55E00",
    "#F0E442",
    "#000000",
)
#: Local Moran cluster labels and their colours (Okabe–Ito, grey for no cluster).
CLUSTER_COLOURS = {
    "high-high": "#D55E00",
    "low-low": "#0072B2",
    "high-low": "#E69F00",
    "low-high": "#56B4E9",
    "not significant": "#DDDDDD",
    # Districts without a finite value this year: left out of the neighbour graph.
    "no value": "#FFFFFF",
}
NO_DATA_COLOUR = "#D9D9D9"
_VL_VERSION = "6.4"
_COMPONENT_ORDER = ("within", "between", "overlap")
_YEAR_X = alt.X("year:O", title="Year", axis=alt.Axis(labelAngle=0))


def _title(title: str, caption: str) -> alt.TitleParams:
    return alt.TitleParams(text=title, subtitle=caption, anchor="start", subtitleColor="#444")


def _records(frame: pd.DataFrame) -> pd.DataFrame:
    """A copy safe for Vega: plain object/float columns, NaN kept as missing."""
    out = frame.copy()
    for column in out.columns:
        if pd.api.types.is_string_dtype(out[column]) and not pd.api.types.is_object_dtype(
            out[column]
        ):
            out[column] = out[column].astype(object)
    return out


# --------------------------------------------------------------------------- classes


@dataclass(frozen=True)
class Classification:
    """Class breaks for a choropleth.

    Attributes
    ----------
    scheme : str
        ``"quantiles"``, ``"equal"`` or ``"breaks"``.
    edges : tuple of float
        ``k + 1`` edges, lowest first; class ``i`` holds ``edges[i] < x <= edges[i + 1]``
        (the lowest class also holds its lower edge).
    labels : tuple of str
        One label per class, lowest first.
    """

    scheme: str
    edges: tuple[float, ...]
    labels: tuple[str, ...]

    @property
    def k(self) -> int:
        """Number of classes actually formed (fewer than asked when values tie)."""
        return len(self.labels)

    def assign(self, values: Iterable[float]) -> np.ndarray:
        """Class label of each value (``None`` where the value is missing).

        Parameters
        ----------
        values : array_like of float

        Returns
        -------
        ndarray of object
        """
        x = np.asarray(values, dtype=float)
        out = np.full(x.shape, None, dtype=object)
        if not self.labels:
            return out
        finite = np.isfinite(x)
        upper = np.asarray(self.edges[1:], dtype=float)
        position = np.clip(np.searchsorted(upper, x[finite], side="left"), 0, self.k - 1)
        out[finite] = np.asarray(self.labels, dtype=object)[position]
        return out


def _labels(edges: np.ndarray) -> tuple[str, ...]:
    """Range labels with the fewest decimals that keep them distinct."""
    for digits in range(2, 8):
        labels = tuple(
            f"{lo:.{digits}f} – {hi:.{digits}f}"
            for lo, hi in zip(edges[:-1], edges[1:], strict=True)
        )
        if len(set(labels)) == len(labels):
            return labels
    return labels


def classify(values: Iterable[float], scheme: str = "quantiles", k: int = 5) -> Classification:
    """Class breaks for a choropleth by quantiles, equal intervals or natural breaks.

    Missing values are ignored; when ties leave fewer distinct breaks than ``k``, fewer
    classes are formed.

    Parameters
    ----------
    values : array_like of float
        The mapped values, one per district.
    scheme : {"quantiles", "equal", "breaks"}
        ``breaks`` is Fisher's optimal (natural breaks) partition, via mapclassify.
    k : int
        Number of classes wanted (at least 1).

    Returns
    -------
    Classification

    References
    ----------
    Fisher, W. D. (1958). On grouping for maximum homogeneity. *Journal of the American
    Statistical Association* 53: 789–798.
    Jenks, G. F. (1977). *Optimal data classification for choropleth maps*. University
    of Kansas, Department of Geography, Occasional Paper 2.
    """
    makers = {
        "quantiles": mapclassify.Quantiles,
        "equal": mapclassify.EqualInterval,
        "breaks": mapclassify.FisherJenks,
    }
    if scheme not in makers:
        raise ValueError(f"unknown classification {scheme!r}; use one of {sorted(makers)}")
    if int(k) < 1:
        raise ValueError(f"number of classes must be at least 1, got {k}")
    x = np.asarray(list(values) if not isinstance(values, np.ndarray) else values, dtype=float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return Classification(scheme, (), ())
    distinct = np.unique(x)
    if distinct.size == 1:
        v = float(distinct[0])
        return Classification(scheme, (v, v), (_labels(np.array([v, v]))[0],))
    k = min(int(k), int(distinct.size))
    with warnings.catch_warnings():
        # mapclassify warns when ties collapse classes; we report it through ``k``.
        warnings.simplefilter("ignore")
        bins = np.unique(np.asarray(makers[scheme](x, k=k).bins, dtype=float))
    edges = np.concatenate([[x.min()], bins])
    return Classification(scheme, tuple(float(e) for e in edges), _labels(edges))


# --------------------------------------------------------------------------- map data


def _plain(value: Any) -> Any:
    """A JSON-safe Python scalar: NaN and NA become None."""
    if value is None or value is pd.NA or value is pd.NaT:
        return None
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


@dataclass(frozen=True)
class Outlines:
    """District outlines ready for a Vega geoshape, made once per boundary file.

    ``features`` are GeoJSON features whose only property is ``region`` (what a map joins
    its values on); ``table`` holds ``region`` and, as the boundary file gives them,
    ``name`` and ``county``, with ``label_x, label_y``: a point inside each district.
    """

    features: list[dict]
    table: pd.DataFrame


def map_outlines(gdf, *, tolerance: float | None = None, digits: int = 5) -> Outlines:
    """Simplified, rounded, clockwise outlines of every district (see
    :func:`features_for_display`, which adds the values to them)."""
    frame = gdf
    if frame.crs is not None and not frame.crs.equals("EPSG:4326"):
        frame = frame.to_crs("EPSG:4326")
    geoms = np.asarray(frame.geometry.values, dtype=object)
    present = ~shapely.is_missing(geoms) & ~shapely.is_empty(geoms)
    if tolerance is None:
        x0, y0, x1, y1 = shapely.total_bounds(geoms[present]) if present.any() else (0, 0, 0, 0)
        tolerance = max(x1 - x0, y1 - y0) / 1000.0
    simplified = geoms.copy()
    if present.any() and tolerance > 0:
        valid_parts = geoms[present]
        if bool(shapely.coverage_is_valid(valid_parts)) and shapely.is_valid(valid_parts).all():
            simplified[present] = shapely.coverage_simplify(valid_parts, tolerance)
        else:
            simplified[present] = shapely.simplify(valid_parts, tolerance, preserve_topology=True)
    # Snapping to a grid (rather than rounding coordinates) keeps rings valid: slivers
    # that collapse are removed instead of left as zero-area rings of no winding.
    grid = 10.0**-digits
    rounded = shapely.set_precision(simplified, grid)
    lost = present & shapely.is_empty(rounded)
    if lost.any():  # a district too small for the tolerance keeps its own outline
        rounded[lost] = shapely.set_precision(geoms[lost], grid)
    oriented = shapely.orient_polygons(rounded, exterior_cw=True)
    geometry_json = shapely.to_geojson(oriented)
    # where a district's name goes on the map: a point surely inside it (a centroid can
    # fall outside a crescent-shaped district)
    inside = np.full((len(geoms), 2), np.nan)
    if present.any():
        points = shapely.point_on_surface(geoms[present])
        inside[present] = np.round(shapely.get_coordinates(points), digits)

    table = pd.DataFrame({"region": frame["region"].astype(str).to_numpy()})
    for column in ("name", "county"):
        if column in frame.columns:
            table[column] = frame[column].to_numpy()
    table["label_x"], table["label_y"] = inside[:, 0], inside[:, 1]
    features = [
        {
            "type": "Feature",
            "geometry": None if geometry is None else json.loads(geometry),
            "properties": {"region": region},
        }
        for geometry, region in zip(geometry_json, table["region"], strict=True)
    ]
    return Outlines(features, table)


def district_values(outlines: Outlines, values: pd.DataFrame | None = None) -> pd.DataFrame:
    """One row per outline, in their order: ``region, name, county, value, lower, upper,
    klass, wide`` (the boundary file's names unless ``values`` gives others; missing
    values where a district has none)."""
    table = outlines.table.drop(columns=["label_x", "label_y"])
    if values is not None:
        extra = values.copy()
        extra["region"] = extra["region"].astype(str)
        extra = extra.drop_duplicates("region", keep="first")  # one feature per district
        overlap = [c for c in extra.columns if c in table.columns and c != "region"]
        table = table.drop(columns=overlap).merge(extra, on="region", how="left")
    for column in ("value", "lower", "upper"):
        if column not in table.columns:
            table[column] = np.nan
    if "name" not in table.columns:
        table["name"] = table["region"]
    table["name"] = table["name"].where(table["name"].notna(), table["region"])
    if "county" not in table.columns:
        table["county"] = ""
    if "klass" not in table.columns:
        table["klass"] = None
    if "wide" not in table.columns:
        table["wide"] = False
    table["wide"] = table["wide"].fillna(False).astype(bool)
    return table


def join_values(outlines: Outlines, values: pd.DataFrame | None = None) -> list[dict]:
    """The outlines as GeoJSON features carrying their district's values (new dicts; the
    outlines' geometry is shared, not copied). See :func:`features_for_display`."""
    table = district_values(outlines, values)
    keys = ("region", "name", "county", "value", "lower", "upper", "klass", "wide")
    columns = [_plain_column(table[key]) for key in keys]
    columns += [_plain_column(outlines.table[key]) for key in ("label_x", "label_y")]
    names = (*keys, "label_x", "label_y")
    return [
        {
            "type": "Feature",
            "geometry": outline["geometry"],
            "properties": dict(zip(names, row, strict=True)),
        }
        for outline, row in zip(outlines.features, zip(*columns, strict=True), strict=True)
    ]


def _plain_column(column: pd.Series) -> list:
    """:func:`_plain` of every value of a column (numbers and flags without a call each)."""
    if pd.api.types.is_float_dtype(column.dtype):
        x = column.to_numpy(dtype=float, na_value=np.nan)
        return [
            v if ok else None for v, ok in zip(x.tolist(), np.isfinite(x).tolist(), strict=True)
        ]
    if pd.api.types.is_bool_dtype(column.dtype):
        return column.to_numpy(dtype=bool).tolist()
    return [_plain(v) for v in column.to_numpy(dtype=object)]


def features_for_display(
    gdf,
    values: pd.DataFrame | None = None,
    *,
    tolerance: float | None = None,
    digits: int = 5,
) -> list[dict]:
    """GeoJSON features ready for a Vega geoshape: simplified, rounded, wound clockwise.

    Parameters
    ----------
    gdf : geopandas.GeoDataFrame
        District boundaries with a ``region`` column (and optionally ``name``, ``county``);
        reprojected to EPSG:4326 when it has another CRS. Not modified.
    values : DataFrame, optional
        One row per district: ``region`` plus any of ``value, lower, upper, klass, wide``
        (``name``/``county`` here override the boundary file's). Districts with no row get
        missing values and are drawn grey.
    tolerance : float, optional
        Simplification tolerance in degrees. Default: the larger side of the map's
        bounding box / 1000, about half a pixel on a 500-pixel map.
    digits : int
        Decimals kept in coordinates (5 decimals of a degree is about 1 m).

    Returns
    -------
    list of dict
        GeoJSON Feature dicts with properties ``region, name, county, value, lower,
        upper, klass, wide``.

    Notes
    -----
    When the districts form a valid coverage (shared borders match), they are simplified
    together with ``shapely.coverage_simplify`` so neighbours keep a common border;
    otherwise each outline is simplified with topology preserved. Exterior rings are
    then oriented clockwise, as ``shapely.geometry.polygon.orient(p, sign=-1.0)`` does.
    The outlines alone are :func:`map_outlines`; :func:`join_values` puts values on them.
    """
    return join_values(map_outlines(gdf, tolerance=tolerance, digits=digits), values)


def payload_kb(features: Sequence[dict]) -> float:
    """Size of the features as compact JSON, in kilobytes (what the browser receives)."""
    return len(json.dumps(features, separators=(",", ":")).encode()) / 1024.0


def _with_picked(features: Sequence[dict], selected: Iterable[str]) -> list[dict]:
    """Copies of the features with a ``picked`` flag; the inputs are left as they are."""
    chosen = {str(s) for s in selected}
    out = []
    for feature in features:
        properties = dict(feature.get("properties") or {})
        properties["picked"] = str(properties.get("region")) in chosen
        out.append({**feature, "properties": properties})
    return out


_LIFTED = ("region", "name", "county", "value", "lower", "upper", "klass", "wide", "picked")


#: Name of the districts' dataset in a map's spec (see :class:`GeoChart`).
GEO_DATA = "districts"


class GeoChart:
    """A map whose districts travel as a named dataset of the spec.

    Handing thousands of GeoJSON features to Altair as inline values costs seconds of
    schema checks on every build; the features are plain JSON already, so the chart names
    its data and the features are put under that name when the spec is made. Everything
    else is the Altair chart's (``to_dict`` is what drawing, caching and export use).
    """

    def __init__(self, chart: Any, features: list[dict]) -> None:
        self.chart = chart
        self.features = features

    def to_dict(self, **kwargs: Any) -> dict[str, Any]:
        spec = self.chart.to_dict(**kwargs)
        spec.setdefault("datasets", {})[GEO_DATA] = self.features
        return spec

    def live_spec(self) -> dict[str, Any]:
        """The spec to draw in the app (for this map, :meth:`to_dict`)."""
        return self.to_dict()

    def __getattr__(self, name: str) -> Any:
        found = getattr(self.chart, name)
        if not callable(found):
            return found

        def kept(*args: Any, **kwargs: Any) -> Any:
            # a changed chart (configured, given properties) keeps the districts with it
            out = found(*args, **kwargs)
            return GeoChart(out, self.features) if isinstance(out, alt.TopLevelMixin) else out

        return kept


def _geo_base(features: Sequence[dict], selected: Iterable[str], lifted: Sequence[str]):
    chart = alt.Chart(alt.NamedData(name=GEO_DATA)).mark_geoshape(stroke="#ffffff", strokeWidth=0.6)
    return chart.transform_calculate(**{key: f"datum.properties.{key}" for key in lifted})


def _name_labels(features: Sequence[dict], selected: Iterable[str]) -> alt.Chart | None:
    """A text layer naming the chosen districts at a point inside each (None without any)."""
    chosen = {str(s) for s in selected}
    rows = [
        {
            "name": str(f["properties"].get("name")),
            "label_x": f["properties"].get("label_x"),
            "label_y": f["properties"].get("label_y"),
        }
        for f in features
        if str((f.get("properties") or {}).get("region")) in chosen
        and f["properties"].get("label_x") is not None
    ]
    if not rows:
        return None
    return (
        alt.Chart(alt.Data(values=rows))
        .mark_text(fontSize=12, fontWeight="bold", stroke="#ffffff", strokeWidth=3, dy=-2)
        .encode(longitude="label_x:Q", latitude="label_y:Q", text="name:N")
    ) + (
        alt.Chart(alt.Data(values=rows))
        .mark_text(fontSize=12, fontWeight="bold", color="#000000", dy=-2)
        .encode(longitude="label_x:Q", latitude="label_y:Q", text="name:N")
    )


def choropleth(
    features: Sequence[dict],
    *,
    value_label: str,
    classes: Sequence[str],
    title: str,
    caption: str,
    selected: Iterable[str] = (),
    width: int = 560,
    height: int = 460,
) -> alt.Chart:
    """District map coloured by class of an index, with a click selection named ``pick``.

    Parameters
    ----------
    features : list of dict
        GeoJSON features from :func:`features_for_display` (rings wound clockwise).
    value_label : str
        The index with its units, for the legend and tooltip (e.g. from
        :func:`index_label`).
    classes : sequence of str
        Class labels, lowest first (``Classification.labels``); sets the legend order.
    title, caption : str
        Chart title and the caption naming the data and the method.
    selected : iterable of str
        District ids drawn with a heavy outline.

    Returns
    -------
    alt.Chart
        Clicking a district sets the selection ``pick`` on field ``region``; with
        ``st.altair_chart(on_select="rerun")`` the clicked id comes back under
        ``selection["pick"]``. Districts whose interval is wide have a dashed outline;
        districts with no value are grey.
    """
    pick = alt.selection_point(fields=["region"], name="pick")
    has_class = "isValid(datum.klass) && datum.klass !== ''"
    colour = alt.Color(
        "klass:O",
        title=value_label,
        scale=alt.Scale(domain=list(classes), scheme=SEQUENTIAL_SCHEME, reverse=True),
        legend=alt.Legend(orient="right", symbolType="square"),
    )
    shapes = (
        _geo_base(features, selected, _LIFTED)
        .transform_calculate(
            interval="isValid(datum.lower) && isValid(datum.upper) ? "
            "format(datum.lower, '.3f') + ' to ' + format(datum.upper, '.3f') : 'not available'",
            wide_text="datum.wide ? 'wide: read with care' : 'narrow'",
            shown="isValid(datum.value) ? format(datum.value, '.3f') : 'no data'",
        )
        .encode(
            color=alt.condition(has_class, colour, alt.value(NO_DATA_COLOUR)),
            stroke=alt.when("datum.picked")
            .then(alt.value("#000000"))
            .when("datum.wide")
            .then(alt.value("#333333"))
            .otherwise(alt.value("#ffffff")),
            strokeWidth=alt.when("datum.picked")
            .then(alt.value(2.5))
            .when("datum.wide")
            .then(alt.value(1.3))
            .otherwise(alt.value(0.6)),
            strokeDash=alt.condition("datum.wide", alt.value([4, 2]), alt.value([1, 0])),
            opacity=alt.condition(pick, alt.value(1.0), alt.value(0.45)),
            tooltip=[
                alt.Tooltip("name:N", title="District"),
                alt.Tooltip("region:N", title="Id"),
                alt.Tooltip("county:N", title="County"),
                alt.Tooltip("shown:N", title=value_label),
                alt.Tooltip("interval:N", title="Bounds / interval"),
                alt.Tooltip("wide_text:N", title="Interval"),
                alt.Tooltip("klass:N", title="Class"),
            ],
        )
        .add_params(pick)
    )
    return _with_labels(shapes, features, selected, title, caption, width, height)


def _with_labels(shapes, features, selected, title, caption, width, height) -> GeoChart:
    """The map, with the chosen districts named on it, projected to fit its districts."""
    labels = _name_labels(features, selected)
    chart = shapes if labels is None else alt.layer(shapes, labels)
    chart = chart.project(type="mercator").properties(
        title=_title(title, caption), width=width, height=height
    )
    return GeoChart(chart, _with_picked(features, selected))


def clusters_map(
    features: Sequence[dict],
    *,
    title: str,
    caption: str,
    selected: Iterable[str] = (),
    width: int = 560,
    height: int = 460,
) -> alt.Chart:
    """District map of local Moran clusters in categorical colour-blind-safe colours.

    Parameters
    ----------
    features : list of dict
        GeoJSON features (clockwise rings) whose properties hold ``region``, ``name`` and
        ``cluster`` (one of :data:`CLUSTER_COLOURS`'s keys, any case; others drawn grey).
    title, caption : str
    selected : iterable of str
        District ids drawn with a heavy outline.

    Returns
    -------
    alt.Chart
        With the click selection ``pick`` on ``region``, as :func:`choropleth`.

    References
    ----------
    Anselin, L. (1995). Local indicators of spatial association — LISA. *Geographical
    Analysis* 27: 93–115.
    """
    pick = alt.selection_point(fields=["region"], name="pick")
    domain = list(CLUSTER_COLOURS)
    shapes = (
        _geo_base(features, selected, ("region", "name", "picked"))
        .transform_calculate(
            cluster="isValid(datum.properties.cluster) ? lower(datum.properties.cluster) : 'no value'"
        )
        .encode(
            color=alt.Color(
                "cluster:N",
                title="Local cluster",
                scale=alt.Scale(domain=domain, range=[CLUSTER_COLOURS[d] for d in domain]),
            ),
            # A grey outline keeps the white "no value" districts visible.
            stroke=alt.condition("datum.picked", alt.value("#000000"), alt.value("#999999")),
            strokeWidth=alt.condition("datum.picked", alt.value(2.5), alt.value(0.6)),
            opacity=alt.condition(pick, alt.value(1.0), alt.value(0.45)),
            tooltip=[
                alt.Tooltip("name:N", title="District"),
                alt.Tooltip("region:N", title="Id"),
                alt.Tooltip("cluster:N", title="Local cluster"),
            ],
        )
        .add_params(pick)
    )
    return _with_labels(shapes, features, selected, title, caption, width, height)


# --------------------------------------------------------------------------- over time


def _interval_tooltips(frame: pd.DataFrame, label: str) -> list[alt.Tooltip]:
    tips = [alt.Tooltip("value:Q", title=label, format=".3f")]
    for column, name in (("lower", "Lower"), ("upper", "Upper")):
        if column in frame.columns:
            tips.append(alt.Tooltip(f"{column}:Q", title=name, format=".3f"))
    if "method" in frame.columns:
        tips.append(alt.Tooltip("method:N", title="Method"))
    return tips


def trajectories(
    table: pd.DataFrame,
    *,
    index: str,
    highlight: Iterable[str] = (),
    province: pd.DataFrame | None = None,
    by_county: bool = False,
    title: str | None = None,
    caption: str | None = None,
    label: str | None = None,
    carried: pd.DataFrame | None = None,
) -> alt.Chart:
    """One line per district over the years, chosen districts emphasised.

    Parameters
    ----------
    table : DataFrame
        Index table rows (``region, year, index, value`` and optionally ``lower, upper,
        method, name, county``); only rows of ``index`` are drawn.
    index : str
        Index key.
    highlight : iterable of str
        District ids drawn in colour, with their interval band when present.
    province : DataFrame, optional
        ``year, value`` for the whole province, drawn as a heavy dashed black line.
    by_county : bool
        Small multiples, one panel per county (needs a ``county`` column).
    title, caption : str, optional
    label : str, optional
        The value axis's title; by default the index's.
    carried : DataFrame, optional
        ``region, year, carried``: district-years carried across boundary changes, with
        the words saying how (``carried to the 2011 boundaries: merged from A, B``); drawn
        as hollow points on the chosen districts' lines, the words in the legend and the
        tooltip.

    Returns
    -------
    alt.Chart or alt.FacetChart
    """
    label = label or index_label(index)
    rows = table[table["index"] == index] if "index" in table.columns else table
    rows = _records(rows)
    if "name" not in rows.columns:
        rows["name"] = rows["region"]
    if by_county and "county" not in rows.columns:
        raise ValueError("trajectories by county need a 'county' column in the table")
    chosen = [str(h) for h in highlight]
    rows["role"] = np.where(rows["region"].astype(str).isin(chosen), "highlight", "district")
    rows = _with_carried(rows, carried)
    parts = [rows]
    if province is not None and len(province):
        line = _records(province[["year", "value"]])
        line["region"] = "(province)"
        line["name"] = "Province"
        line["role"] = "province"
        if by_county:
            counties = rows["county"].dropna().unique()
            line = pd.concat([line.assign(county=c) for c in counties], ignore_index=True)
        parts.append(line)
    data = pd.concat(parts, ignore_index=True)
    data["year"] = data["year"].astype(int)
    data["carried"] = data["carried"].fillna("").astype(object)
    tips = [alt.Tooltip("name:N", title="District"), alt.Tooltip("year:O", title="Year")]
    tips += _interval_tooltips(data, label)
    x = _YEAR_X
    y = alt.Y("value:Q", title=label, scale=alt.Scale(zero=False))
    base = alt.Chart(data)
    layers = [
        base.transform_filter("datum.role === 'district'")
        .mark_line(color="#9a9a9a", strokeWidth=1, opacity=0.55)
        .encode(x=x, y=y, detail="region:N", tooltip=tips),
    ]
    if chosen:
        colour = alt.Color(
            "name:N",
            title="District",
            scale=alt.Scale(range=list(OKABE_ITO)),
        )
        highlighted = base.transform_filter("datum.role === 'highlight'")
        if {"lower", "upper"} <= set(data.columns) and data["lower"].notna().any():
            layers.append(
                highlighted.mark_area(opacity=0.18).encode(
                    x=x, y="lower:Q", y2="upper:Q", color=colour, detail="region:N"
                )
            )
        layers.append(
            highlighted.mark_line(strokeWidth=2.5, point=True).encode(
                x=x, y=y, color=colour, detail="region:N", tooltip=tips
            )
        )
        if (data["carried"] != "").any():
            # hollow points over the filled ones: the years carried, the words in the legend
            layers.append(
                highlighted.transform_filter("datum.carried !== ''")
                .mark_point(filled=False, fill="#ffffff", size=110, strokeWidth=2.5, opacity=1)
                .encode(
                    x=x,
                    y=y,
                    stroke=alt.Stroke(
                        "name:N", scale=alt.Scale(range=list(OKABE_ITO)), legend=None
                    ),
                    shape=alt.Shape(
                        "carried:N",
                        title="Hollow points",
                        legend=alt.Legend(
                            orient="bottom",
                            direction="vertical",
                            labelLimit=0,
                            symbolFillColor="#ffffff",
                            symbolStrokeColor="#444444",
                            symbolStrokeWidth=2,
                        ),
                    ),
                    tooltip=[*tips, alt.Tooltip("carried:N", title="Boundary changes")],
                )
            )
    if province is not None and len(province):
        layers.append(
            base.transform_filter("datum.role === 'province'")
            .mark_line(color="#000000", strokeWidth=3, strokeDash=[6, 3])
            .encode(x=x, y=y, tooltip=tips)
        )
    title = title or f"{label.split(' (')[0]} by district over time"
    caption = caption or (
        "Grey: every district; colour: chosen districts with their bounds; "
        "dashed black: the province."
    )
    chart = alt.layer(*layers)
    if by_county:
        return chart.properties(width=220, height=160).facet(
            facet=alt.Facet("county:N", title="County"), columns=3, title=_title(title, caption)
        )
    return chart.properties(title=_title(title, caption), width=620, height=360)


def _with_carried(rows: pd.DataFrame, carried: pd.DataFrame | None) -> pd.DataFrame:
    """Each row's words on how it was carried ('' where it was not): chosen districts only."""
    rows = rows.assign(carried="")
    if carried is None or carried.empty:
        return rows
    said = carried.assign(region=carried["region"].astype(str), year=carried["year"].astype(int))
    said = said.drop_duplicates(["region", "year"]).set_index(["region", "year"])["carried"]
    keys = pd.MultiIndex.from_arrays([rows["region"].astype(str), rows["year"].astype(int)])
    words = said.reindex(keys).fillna("").to_numpy(dtype=object)
    rows["carried"] = np.where(rows["role"].to_numpy() == "highlight", words, "")
    return rows


def rank_over_time(
    ranks: pd.DataFrame,
    *,
    highlight: Iterable[str] = (),
    title: str = "Rank of each district over time",
    caption: str = "1 = most unequal. Ranks move on small differences; read them with the intervals.",
    rank_title: str = "Rank (1 = most unequal)",
) -> alt.Chart:
    """Districts' ranks by year (1 on top); the district under the pointer stands out.

    Parameters
    ----------
    ranks : DataFrame
        ``region, year, rank`` and optionally ``name, value``.
    highlight : iterable of str
        District ids drawn in colour.
    title, caption : str
    rank_title : str
        The rank axis's title, saying what rank 1 is.

    Returns
    -------
    alt.Chart
    """
    data = _records(ranks)
    if "name" not in data.columns:
        data["name"] = data["region"]
    data["chosen"] = data["region"].astype(str).isin([str(h) for h in highlight])
    hover = alt.selection_point(on="pointerover", fields=["region"], name="hover", empty=False)
    tips = [
        alt.Tooltip("name:N", title="District"),
        alt.Tooltip("year:O", title="Year"),
        alt.Tooltip("rank:Q", title=rank_title),
    ]
    if "value" in data.columns:
        tips.append(alt.Tooltip("value:Q", title="Value", format=".3f"))
    emphasis = "datum.chosen"
    return (
        alt.Chart(data)
        .mark_line(point=True)
        .encode(
            x=_YEAR_X,
            y=alt.Y("rank:Q", title=rank_title, scale=alt.Scale(reverse=True)),
            detail="region:N",
            color=alt.when(hover)
            .then(alt.value("#000000"))
            .when(emphasis)
            .then(alt.value(OKABE_ITO[0]))
            .otherwise(alt.value("#b0b0b0")),
            strokeWidth=alt.condition(hover, alt.value(3), alt.value(1.2)),
            tooltip=tips,
        )
        .add_params(hover)
        .properties(title=_title(title, caption), width=620, height=380)
    )


# --------------------------------------------------------------------------- breakdown


def components(
    decomp: pd.DataFrame,
    *,
    index: str,
    title: str | None = None,
    caption: str | None = None,
) -> alt.Chart:
    """Stacked bars of the within, between (and, for the Gini, overlap) parts by year.

    Parameters
    ----------
    decomp : DataFrame
        Decomposition table (``year, level, group, component, value, share``); the rows
        for ``group == "(all)"`` and components within/between/overlap are drawn, one
        panel per level.
    index : str
        Index key of the decomposition.
    title, caption : str, optional

    Returns
    -------
    alt.FacetChart

    References
    ----------
    Shorrocks, A. F. (1980). The class of additively decomposable inequality measures.
    *Econometrica* 48: 613–625.
    Dagum, C. (1997). A new approach to the decomposition of the Gini income inequality
    ratio. *Empirical Economics* 22: 515–531.
    """
    label = index_label(index)
    rows = decomp[
        (decomp["group"] == "(all)")
        & decomp["component"].isin(_COMPONENT_ORDER)
        & (decomp["level"] != "total")
    ]
    data = _records(rows)
    data["year"] = data["year"].astype(str)
    data["groups"] = ["districts" if level == "region" else f"{level}" for level in data["level"]]
    data["order"] = data["component"].map({c: i for i, c in enumerate(_COMPONENT_ORDER)})
    levels = list(dict.fromkeys(data["groups"].tolist()))
    present = [c for c in _COMPONENT_ORDER if c in set(data["component"])]
    title = title or f"How much of the {label.split(' (')[0]} lies within and between groups"
    caption = caption or (
        "Bar height = the province's total. Within: inequality inside the groups; "
        "between: differences of group means"
        + (
            "; overlap: incomes of groups that overlap (Gini only)."
            if "overlap" in present
            else "."
        )
    )
    return (
        alt.Chart(data)
        .mark_bar()
        .encode(
            x=_YEAR_X,
            y=alt.Y("value:Q", title=label, stack="zero"),
            color=alt.Color(
                "component:N",
                title="Part",
                scale=alt.Scale(domain=present, range=list(OKABE_ITO[: len(present)])),
            ),
            order=alt.Order("order:Q"),
            tooltip=[
                alt.Tooltip("groups:N", title="Groups"),
                alt.Tooltip("year:O", title="Year"),
                alt.Tooltip("component:N", title="Part"),
                alt.Tooltip("value:Q", title=label, format=".4f"),
                alt.Tooltip("share:Q", title="Share of total", format=".1%"),
            ],
        )
        .properties(width=max(180, 28 * data["year"].nunique()), height=280)
        .facet(
            column=alt.Column("groups:N", title="Groups compared", sort=levels),
            title=_title(title, caption),
        )
    )


def change_bars(
    change_table: pd.DataFrame,
    *,
    title: str = "What drove the change in inequality",
    caption: str | None = None,
) -> alt.Chart:
    """Terms of the change decomposition between two years as diverging bars.

    Parameters
    ----------
    change_table : DataFrame
        Change decomposition (``year = "<from>-<to>", level, group, component, value,
        share``); rows of ``group == "(all)"`` are drawn. The ``total`` row is the grey
        bar; a ``residual`` term (the approximation's error) is drawn hollow.
    title, caption : str

    Returns
    -------
    alt.Chart

    References
    ----------
    Mookherjee, D. and Shorrocks, A. (1982). A decomposition analysis of the trend in UK
    income inequality. *Economic Journal* 92: 886–902.
    """
    rows = (
        change_table[change_table["group"] == "(all)"] if "group" in change_table else change_table
    )
    data = _records(rows)
    data["kind"] = np.where(
        data["component"] == "total",
        "total change",
        np.where(data["value"] >= 0, "raises inequality", "lowers inequality"),
    )
    data["residual"] = data["component"].astype(str).str.contains("residual")
    order = list(dict.fromkeys(data["component"].tolist()))
    order = [c for c in order if c != "total"] + (["total"] if "total" in order else [])
    period = ", ".join(dict.fromkeys(str(y) for y in data["year"]))
    caption = caption or (
        f"{period}. Orange raises, blue lowers inequality; grey is the total change. "
        "The hollow bar is the residual the approximation leaves."
    )
    return (
        alt.Chart(data)
        .mark_bar(strokeWidth=1.5)
        .encode(
            y=alt.Y("component:N", title=None, sort=order),
            x=alt.X("value:Q", title="Change in the index (index points)"),
            color=alt.Color(
                "kind:N",
                title="Effect",
                scale=alt.Scale(
                    domain=["lowers inequality", "raises inequality", "total change"],
                    range=[DIVERGING[0], DIVERGING[1], "#7f7f7f"],
                ),
            ),
            fillOpacity=alt.condition("datum.residual", alt.value(0.0), alt.value(1.0)),
            stroke=alt.condition("datum.residual", alt.value("#444444"), alt.value(None)),
            row=alt.Row("level:N", title="Groups")
            if data["level"].nunique() > 1
            else alt.Undefined,
            tooltip=[
                alt.Tooltip("year:N", title="Years"),
                alt.Tooltip("level:N", title="Groups"),
                alt.Tooltip("component:N", title="Term"),
                alt.Tooltip("value:Q", title="Change", format="+.4f"),
                alt.Tooltip("share:Q", title="Share of total change", format=".1%"),
            ],
        )
        .properties(title=_title(title, caption), width=480)
    )


# --------------------------------------------------------------------------- district


def mean_income_over_time(
    table: pd.DataFrame, *, title: str, caption: Sequence[str] | str = ""
) -> alt.Chart:
    """One district's mean income by year, in whole currency units.

    Parameters
    ----------
    table : DataFrame
        ``year, mean_income`` rows of one district.
    title, caption : str
    """
    return (
        alt.Chart(table.assign(year=table["year"].astype(int)))
        .mark_line(point=True)
        .encode(
            x=alt.X("year:O", title="Year"),
            y=alt.Y(
                "mean_income:Q", title="Mean income (currency units)", axis=alt.Axis(format=",.0f")
            ),
            tooltip=[
                alt.Tooltip("year:O", title="Year"),
                alt.Tooltip("mean_income:Q", title="Mean income", format=",.0f"),
            ],
        )
        .properties(title=_title(title, caption), width=620, height=320)
    )


def growth_incidence(
    curve: pd.DataFrame,
    *,
    mean_growth: float,
    title: str,
    caption: Sequence[str] | str = "",
) -> alt.LayerChart:
    """A growth incidence curve: growth at each percentile, with the growth of the mean.

    Parameters
    ----------
    curve : DataFrame
        ``p, rate`` with ``p`` in (0, 1) and ``rate`` in % a year.
    mean_growth : float
        The growth of the mean in % a year, drawn as a dashed line.
    title, caption : str

    References
    ----------
    Ravallion, M. and Chen, S. (2003). Measuring pro-poor growth. *Economics Letters* 78:
    93–99.
    """
    frame = curve.assign(percentile=100.0 * curve["p"])
    frame = frame[np.isfinite(frame["rate"])]
    x = alt.X(
        "percentile:Q", title="Percentile (poorest on the left)", scale=alt.Scale(domain=[0, 100])
    )
    y_title = "Growth of income at the percentile (% a year)"
    rates = frame["rate"].to_numpy(dtype=float)
    # the bounds can run far off near the ends: the axis follows the curve and the band is
    # cut at its edges (clamped), so the curve stays readable
    pad = max(3.0, 0.5 * float(np.ptp(rates))) if len(rates) else 3.0
    domain = [float(np.min(rates)) - pad, float(np.max(rates)) + pad] if len(rates) else None
    scale = alt.Scale(domain=domain, clamp=True) if domain else alt.Undefined
    y = alt.Y("rate:Q", title=y_title, scale=scale)
    line = (
        alt.Chart(_records(frame))
        .mark_line(strokeWidth=2, color=OKABE_ITO[0])
        .encode(
            x=x,
            y=y,
            tooltip=[
                alt.Tooltip("percentile:Q", title="Percentile", format=".0f"),
                alt.Tooltip("rate:Q", title="Growth (% a year)", format=".2f"),
            ],
        )
    )
    layers = []
    if {"lower", "upper"} <= set(frame.columns):
        # only where both bounds are finite: an unbounded side has nothing to draw
        banded = frame[np.isfinite(frame["lower"]) & np.isfinite(frame["upper"])]
        if len(banded):
            layers.append(
                alt.Chart(_records(banded[["percentile", "lower", "upper"]]))
                .mark_area(opacity=0.18, color=OKABE_ITO[0])
                .encode(x=x, y=alt.Y("lower:Q", title=y_title, scale=scale), y2="upper:Q")
            )
    rule = (
        alt.Chart(pd.DataFrame({"rate": [float(mean_growth)], "what": ["growth of the mean"]}))
        .mark_rule(strokeDash=[6, 4], color="#555555")
        .encode(
            y="rate:Q", tooltip=[alt.Tooltip("rate:Q", title="Growth of the mean", format=".2f")]
        )
    )
    bottom = (
        alt.Chart(pd.DataFrame({"start": [0.0], "end": [40.0]}))
        .mark_rect(opacity=0.08, color="#000000")
        .encode(x="start:Q", x2="end:Q")
    )
    return alt.layer(bottom, *layers, line, rule).properties(
        title=_title(title, caption), width=560, height=320
    )


def curves_overlay(
    curves: pd.DataFrame,
    *,
    title: str,
    caption: Sequence[str] | str = "",
    y_title: str = "Cumulative income share (0–1)",
    band: pd.DataFrame | None = None,
    equality: bool = True,
) -> alt.LayerChart:
    """Several curves on one chart, one colour each, with optional bands and the diagonal.

    Parameters
    ----------
    curves : DataFrame
        ``name, p, L``: each curve's points.
    band : DataFrame, optional
        ``name, p, low, high``: the region each curve may lie in (its bounds).
    equality : bool
        Draw the line of complete equality (Lorenz curves; not generalised Lorenz curves).
    title, caption, y_title : str
    """
    names = list(dict.fromkeys(curves["name"]))
    colour = alt.Color(
        "name:N",
        title=None,
        scale=alt.Scale(domain=names, range=list(OKABE_ITO[: len(names)])),
        legend=alt.Legend(orient="bottom", columns=2, labelLimit=320),
    )
    x = alt.X("p:Q", title="Cumulative population share (0–1)", scale=alt.Scale(domain=[0, 1]))
    y = alt.Y("L:Q", title=y_title)
    layers = []
    if band is not None and len(band):
        layers.append(
            alt.Chart(_records(band))
            .mark_area(opacity=0.15)
            .encode(x=x, y=alt.Y("low:Q", title=y_title), y2="high:Q", color=colour)
        )
    if equality:
        diagonal = pd.DataFrame({"p": [0.0, 1.0], "L": [0.0, 1.0]})
        layers.append(
            alt.Chart(diagonal).mark_line(color="#555555", strokeDash=[4, 3]).encode(x=x, y=y)
        )
    layers.append(
        alt.Chart(_records(curves))
        .mark_line(point=len(curves) <= 80, strokeWidth=2)
        .encode(
            x=x,
            y=y,
            color=colour,
            tooltip=[
                alt.Tooltip("name:N", title="Curve"),
                alt.Tooltip("p:Q", title="Population share", format=".2f"),
                alt.Tooltip("L:Q", title=y_title, format=",.3f"),
            ],
        )
    )
    return alt.layer(*layers).properties(title=_title(title, caption), width=460, height=460)


def lorenz_pair(
    points: pd.DataFrame, *, title: str, caption: Sequence[str] | str = ""
) -> alt.LayerChart:
    """Two districts' Lorenz points joined by straight lines, with the line of equality.

    Parameters
    ----------
    points : DataFrame
        ``name, p, L``: each district's cumulative population and income shares.
    title, caption : str
    """
    x = alt.X("p:Q", title="Cumulative population share (0–1)", scale=alt.Scale(domain=[0, 1]))
    y = alt.Y("L:Q", title="Cumulative income share (0–1)", scale=alt.Scale(domain=[0, 1]))
    equality = pd.DataFrame({"p": [0.0, 1.0], "L": [0.0, 1.0]})
    diagonal = alt.Chart(equality).mark_line(color="#555555", strokeDash=[4, 3]).encode(x=x, y=y)
    curves = (
        alt.Chart(_records(points))
        .mark_line(point=len(points) <= 60, strokeWidth=2)
        .encode(
            x=x,
            y=y,
            color=alt.Color("name:N", title="District", scale=alt.Scale(range=list(OKABE_ITO[:2]))),
            tooltip=[
                alt.Tooltip("name:N", title="District"),
                alt.Tooltip("p:Q", title="Population share", format=".2f"),
                alt.Tooltip("L:Q", title="Income share", format=".3f"),
            ],
        )
    )
    return alt.layer(diagonal, curves).properties(
        title=_title(title, caption), width=420, height=420
    )


def lorenz_profile(
    points: pd.DataFrame,
    curves: pd.DataFrame,
    band: pd.DataFrame | None = None,
    *,
    title: str = "Lorenz curve",
    caption: str = "Dots: the published shares; lines: each reconstruction; grey band: "
    "every curve consistent with the shares lies inside it.",
) -> alt.LayerChart:
    """One district-year's Lorenz points, every method's curve, the bounds band.

    Parameters
    ----------
    points : DataFrame
        ``p, L``: cumulative population and income shares at the bracket limits.
    curves : DataFrame
        ``method, p, L``: each Lorenz method's curve on a grid.
    band : DataFrame, optional
        ``p, lower, upper``: the area between the ``linear`` (lower) and ``upper`` curves.
    title, caption : str

    Returns
    -------
    alt.LayerChart

    References
    ----------
    Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index. *Review of
    Economics and Statistics* 54: 306–316.
    """
    x_title = "Cumulative population share (0–1)"
    y_title = "Cumulative income share (0–1)"
    x = alt.X("p:Q", title=x_title, scale=alt.Scale(domain=[0, 1]))
    layers = []
    if band is not None and len(band):
        layers.append(
            alt.Chart(_records(band))
            .mark_area(color="#bdbdbd", opacity=0.45)
            .encode(x=x, y=alt.Y("lower:Q", title=y_title), y2="upper:Q")
        )
    equality = pd.DataFrame({"p": [0.0, 1.0], "L": [0.0, 1.0]})
    layers.append(
        alt.Chart(equality)
        .mark_line(color="#555555", strokeDash=[4, 3])
        .encode(x=x, y=alt.Y("L:Q", title=y_title))
    )
    if curves is not None and len(curves):
        layers.append(
            alt.Chart(_records(curves))
            .mark_line(strokeWidth=1.8)
            .encode(
                # A curve its fit marks unusable is dashed (and says so in the legend).
                strokeDash=alt.condition(
                    "datum.valid === false", alt.value([5, 3]), alt.value([1, 0])
                ),
                x=x,
                y=alt.Y("L:Q", title=y_title, scale=alt.Scale(domain=[0, 1])),
                color=alt.Color(
                    "method:N", title="Lorenz method", scale=alt.Scale(range=list(OKABE_ITO))
                ),
                tooltip=[
                    alt.Tooltip("method:N", title="Method"),
                    alt.Tooltip("p:Q", title="Population share", format=".2f"),
                    alt.Tooltip("L:Q", title="Income share", format=".3f"),
                ],
            )
        )
    layers.append(
        alt.Chart(_records(points))
        .mark_point(filled=True, size=60, color="#000000")
        .encode(
            x=x,
            y=alt.Y("L:Q", title=y_title),
            tooltip=[
                alt.Tooltip("p:Q", title="Population share", format=".3f"),
                alt.Tooltip("L:Q", title="Income share", format=".3f"),
            ],
        )
    )
    return alt.layer(*layers).properties(title=_title(title, caption), width=380, height=380)


def interval_strip(
    table: pd.DataFrame,
    *,
    region: str | None = None,
    year: int | None = None,
    title: str | None = None,
    caption: str = "Dot: the estimate; bar: its bounds (grouped data) or interval (unit data).",
) -> alt.FacetChart | alt.VConcatChart:
    """Every index of one district-year with its bounds or interval, one row per index.

    Parameters
    ----------
    table : DataFrame
        Index table rows (``region, year, index, value, lower, upper, method``).
    region, year : optional
        Filters; when omitted the table is drawn as given.
    title, caption : str

    Returns
    -------
    alt.FacetChart or alt.VConcatChart
        One block per kind of index (0–1 indices and shares, ratios, the entropy family),
        each with one value axis and its title, shared by the block's rows.
    """
    rows = table
    if region is not None:
        rows = rows[rows["region"].astype(str) == str(region)]
    if year is not None:
        rows = rows[rows["year"] == year]
    data = _records(rows)
    data["label"] = [index_label(i) for i in data["index"]]
    if "method" not in data.columns:
        data["method"] = ""
    # An unbounded upper bound (the upper curve's jump at p = 1) cannot be drawn: the bar
    # stops at the estimate and an arrow says the bound runs on.
    upper = pd.to_numeric(data["upper"], errors="coerce")
    data["unbounded"] = np.isinf(upper)
    data["bar_to"] = np.where(np.isinf(upper), data["value"], upper)
    # JSON has no infinity: an infinite bound would reach Vega as a broken value.
    data["upper"] = upper.where(np.isfinite(upper))
    title = title or (
        f"Indices of {region}" + (f", {year}" if year is not None else "")
        if region is not None
        else "Indices with their intervals"
    )
    tips = [alt.Tooltip("label:N", title="Index")] + _interval_tooltips(data, "Value")
    data["kind"] = [_strip_kind(i) for i in data["index"]]
    # one shared axis per kind of index, titled once, so rows of one kind can be compared
    parts = [
        _strip_part(data[data["kind"] == kind], _STRIP_AXES[kind], tips)
        for kind in _STRIP_AXES
        if (data["kind"] == kind).any()
    ]
    if not parts:
        parts = [_strip_part(data, "Value", tips)]
    chart = parts[0] if len(parts) == 1 else alt.vconcat(*parts, spacing=18)
    return chart.properties(title=_title(title, caption))


#: The axis of each kind of index on the strip of a district's indices.
_STRIP_AXES = {
    "unit": "0–1 scale (Gini, Atkinson, income shares, poverty rates; 0 = equal or no poverty)",
    "ratio": "Ratio (Palma, S80/S20, coefficient of variation)",
    "entropy": "Entropy scale (Theil, mean log deviation, GE, Watts; 0 = equal, no upper limit)",
}


def _strip_kind(key: str) -> str:
    """Which axis an index shares on the strip (:data:`_STRIP_AXES`)."""
    if key in ("palma", "s80_s20", "cv"):
        return "ratio"
    if key in ("theil_t", "mld", "watts") or key.startswith("ge_"):
        return "entropy"
    return "unit"


def _strip_part(data: pd.DataFrame, axis_title: str, tips) -> alt.FacetChart:
    """Rows of one kind of index: one row each, one shared value axis with its title."""
    x = alt.X(
        "value:Q",
        title=axis_title,
        scale=alt.Scale(zero=False),
        axis=alt.Axis(tickCount=6, labelOverlap=True),
    )
    colour = alt.Color("method:N", title="Method", scale=alt.Scale(range=list(OKABE_ITO)))
    method = alt.Y("method:N", title=None)
    layers = alt.layer(
        alt.Chart()
        .transform_filter("isValid(datum.lower) && isValid(datum.bar_to)")
        .mark_tick(thickness=2, size=12, opacity=0.8)
        .encode(x=alt.X("lower:Q", title=axis_title), y=method, color=colour, tooltip=tips),
        alt.Chart()
        .transform_filter("isValid(datum.upper)")
        .mark_tick(thickness=2, size=12, opacity=0.8)
        .encode(x=alt.X("upper:Q", title=axis_title), y=method, color=colour, tooltip=tips),
        alt.Chart()
        .transform_filter("isValid(datum.lower) && isValid(datum.bar_to)")
        .mark_rule(strokeWidth=3, opacity=0.6)
        .encode(
            x=alt.X("lower:Q", title=axis_title),
            x2="bar_to:Q",
            y=method,
            color=colour,
            tooltip=tips,
        ),
        alt.Chart()
        .mark_point(filled=True, size=70)
        .encode(x=x, y=method, color=colour, tooltip=tips),
        alt.Chart()
        .transform_filter("datum.unbounded")
        .mark_text(text="→ no finite upper bound", align="left", dx=8, fontSize=10)
        .encode(x=x, y=method),
        data=_records(data),
    )
    return (
        layers.properties(width=420, height=alt.Step(18))
        .facet(
            row=alt.Row(
                "label:N",
                title=None,
                header=alt.Header(labelAngle=0, labelAlign="left", labelLimit=260),
            )
        )
        .resolve_scale(x="shared")
    )


def convergence(
    sigma_table: pd.DataFrame,
    beta_result: Any = None,
    *,
    title: str = "Are districts' mean incomes converging?",
    caption: str = "Left: spread of log district means by year (falling = σ-convergence). "
    "Right: growth against the starting level (a falling line = β-convergence).",
) -> alt.Chart:
    """σ-convergence line and, when given, the β-convergence scatter with its fitted line.

    Parameters
    ----------
    sigma_table : DataFrame
        ``year`` and ``sigma`` (or ``value``): the standard deviation of log district
        means per year; a tidy table with a ``measure`` column is reduced to its
        ``sd_log`` rows.
    beta_result : mapping or object, optional
        With ``points`` (DataFrame ``region, log_initial, growth`` and optionally ``name``),
        ``slope`` and ``intercept`` (keys or attributes).
    title, caption : str

    Returns
    -------
    alt.Chart or alt.HConcatChart

    References
    ----------
    Barro, R. J. and Sala-i-Martin, X. (1992). Convergence. *Journal of Political Economy*
    100: 223–251.
    """
    sigma = _records(sigma_table)
    if "measure" in sigma.columns:  # the tidy table of explorer.stats.convergence.sigma
        sigma = sigma[sigma["measure"] == "sd_log"]
    if "sigma" not in sigma.columns:
        sigma = sigma.rename(columns={"value": "sigma"})
    left = (
        alt.Chart(sigma)
        .mark_line(point=True, color=OKABE_ITO[0])
        .encode(
            x=_YEAR_X,
            y=alt.Y(
                "sigma:Q",
                title="SD of log district mean income (log points)",
                scale=alt.Scale(zero=False),
            ),
            tooltip=[
                alt.Tooltip("year:O", title="Year"),
                alt.Tooltip("sigma:Q", title="Spread (SD of logs)", format=".4f"),
            ],
        )
        .properties(width=320, height=300)
    )
    if beta_result is None:
        return left.properties(title=_title(title, caption))

    def field(name: str) -> Any:
        if isinstance(beta_result, Mapping):
            return beta_result.get(name)
        return getattr(beta_result, name, None)

    points = _records(field("points"))
    if "name" not in points.columns:
        points["name"] = points["region"]
    slope, intercept = float(field("slope")), float(field("intercept"))
    lo, hi = float(points["log_initial"].min()), float(points["log_initial"].max())
    line = pd.DataFrame(
        {"log_initial": [lo, hi], "growth": [intercept + slope * lo, intercept + slope * hi]}
    )
    x = alt.X(
        "log_initial:Q",
        title="Log mean income at the start (log units)",
        scale=alt.Scale(zero=False),
    )
    y = alt.Y("growth:Q", title="Growth of log mean income per year (log points)")
    right = alt.layer(
        alt.Chart(points)
        .mark_point(filled=True, color=OKABE_ITO[1])
        .encode(
            x=x,
            y=y,
            tooltip=[
                alt.Tooltip("name:N", title="District"),
                alt.Tooltip("log_initial:Q", title="Log mean at start", format=".3f"),
                alt.Tooltip("growth:Q", title="Growth (log points a year)", format=".4f"),
            ],
        ),
        alt.Chart(line).mark_line(color="#000000").encode(x=x, y=y),
    ).properties(width=320, height=300)
    return alt.hconcat(left, right).properties(title=_title(title, caption))


# --------------------------------------------------------------------------- export


# --------------------------------------------------------------------------- display fitting


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


def to_svg(chart: alt.TopLevelMixin) -> str:
    """The chart as an SVG document, rendered offline (no data or font is fetched)."""
    return vlc.vegalite_to_svg(chart.to_dict(), vl_version=_VL_VERSION, allowed_base_urls=[])


def to_png(chart: alt.TopLevelMixin, scale: float = 2.0) -> bytes:
    """The chart as PNG bytes, rendered offline at ``scale`` times its size."""
    return vlc.vegalite_to_png(
        chart.to_dict(), vl_version=_VL_VERSION, scale=scale, allowed_base_urls=[]
    )

"""Tests of explorer.present.charts: classes, map data for Vega, and every chart builder.

Outside references: numpy's quantiles and linspace (class edges), Fisher (1958)'s
definition of the optimal partition checked by brute force, mapclassify's own class
assignment, shapely's signed ring area (winding), the naturalearth_lowres boundaries that
pyogrio ships, and vl-convert's renderer (SVG text and PNG pixels).
"""

from __future__ import annotations

import copy
import functools
import io
import itertools
import json
import os

import altair as alt
import geopandas as gpd
import mapclassify
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from PIL import Image
from shapely.geometry import Polygon, box, shape
from shapely.geometry.polygon import orient, signed_area

from explorer.present import charts

# mapclassify's natural breaks fall back to pure Python without numba; that is fine here.
pytestmark = pytest.mark.filterwarnings("ignore:Numba not installed:UserWarning")

NATURALEARTH = os.path.join(
    os.path.dirname(pyogrio.__file__),
    "tests",
    "fixtures",
    "naturalearth_lowres",
    "naturalearth_lowres.shp",
)


# --------------------------------------------------------------------------- fixtures


def grid_districts(columns: int = 6, rows: int = 4, step: float = 0.25) -> gpd.GeoDataFrame:
    """A fictional coverage of square districts, edges densified so simplification bites."""
    polygons, ids, counties = [], [], []
    for i in range(columns):
        for j in range(rows):
            x0, y0 = -31.0 + i * step, -47.0 + j * step
            polygons.append(box(x0, y0, x0 + step, y0 + step).segmentize(step / 100))
            ids.append(f"Q{i}{j}")
            counties.append(f"Ridge {i // 2}")
    return gpd.GeoDataFrame({"region": ids, "county": counties}, geometry=polygons, crs="EPSG:4326")


def values_for(gdf: gpd.GeoDataFrame) -> pd.DataFrame:
    rng = np.random.default_rng(7)
    value = rng.uniform(0.25, 0.45, len(gdf))
    frame = pd.DataFrame(
        {
            "region": gdf["region"].to_numpy(),
            "value": value,
            "lower": value - 0.01,
            "upper": value + rng.uniform(0.005, 0.08, len(gdf)),
        }
    )
    frame.loc[2, ["value", "lower", "upper"]] = np.nan
    frame["wide"] = (frame["upper"] - frame["lower"]) > 0.06
    frame["klass"] = charts.classify(frame["value"], "quantiles", 4).assign(frame["value"])
    return frame


def polygons_of(geometry: dict) -> list[list]:
    """The rings of every polygon in a GeoJSON Polygon or MultiPolygon."""
    if geometry["type"] == "Polygon":
        return [geometry["coordinates"]]
    return list(geometry["coordinates"])


def shape_layer(spec: dict) -> dict:
    """The districts' layer of a map spec (the first layer when names are drawn on it)."""
    return spec["layer"][0] if "layer" in spec else spec


def spec_values(chart: alt.TopLevelMixin, layer: int = 0) -> list[dict]:
    """The inline data rows of a chart's serialised spec (of one layer when layered)."""
    spec = chart.to_dict()
    view = spec["layer"][layer] if "data" not in spec and "layer" in spec else spec
    data = view["data"]
    if "values" in data:
        return data["values"]
    return spec["datasets"][data["name"]]


def text_marks(spec: dict) -> list[dict]:
    """Every text layer of a spec, however deeply layered."""
    found = []
    for view in spec.get("layer", []):
        mark = view.get("mark")
        if (mark if isinstance(mark, str) else (mark or {}).get("type")) == "text":
            found.append(view)
        found.extend(text_marks(view))
    return found


def index_table() -> pd.DataFrame:
    rows = []
    for r in range(9):
        for year in range(2016, 2022):
            for index in ("gini", "theil_t", "palma"):
                value = 0.3 + 0.01 * r + 0.004 * (year - 2016)
                rows.append(
                    {
                        "region": f"Q{r}",
                        "year": year,
                        "index": index,
                        "value": value,
                        "lower": value - 0.01,
                        "upper": value + 0.02,
                        "method": "pchip",
                        "note": "",
                        "county": f"Ridge {r % 3}",
                    }
                )
    return pd.DataFrame(rows)


def decomposition_table() -> pd.DataFrame:
    rows = []
    for year in range(2016, 2020):
        total = 0.3 + 0.01 * (year - 2016)
        rows.append(
            dict(year=year, level="total", group="(all)", component="total", value=total, share=1.0)
        )
        for level, between in (("county", 0.2), ("region", 0.35)):
            rows.append(
                dict(
                    year=year,
                    level=level,
                    group="(all)",
                    component="between",
                    value=between * total,
                    share=between,
                )
            )
            rows.append(
                dict(
                    year=year,
                    level=level,
                    group="(all)",
                    component="within",
                    value=(1 - between) * total,
                    share=1 - between,
                )
            )
            rows.append(
                dict(
                    year=year,
                    level=level,
                    group="Ridge 0",
                    component="within",
                    value=0.01,
                    share=0.03,
                )
            )
    return pd.DataFrame(rows)


def change_table() -> pd.DataFrame:
    terms = [
        ("within", 0.012),
        ("population shift", -0.004),
        ("relative income", 0.007),
        ("residual", 0.001),
    ]
    total = sum(v for _, v in terms)
    rows = [
        dict(year="2016-2019", level="county", group="(all)", component=c, value=v, share=v / total)
        for c, v in terms
    ]
    rows.append(
        dict(
            year="2016-2019",
            level="county",
            group="(all)",
            component="total",
            value=total,
            share=1.0,
        )
    )
    return pd.DataFrame(rows)


# --------------------------------------------------------------------------- classify


@pytest.mark.parametrize("k", [3, 5, 7])
def test_quantile_edges_equal_numpy_quantiles(k):
    """Quantile class edges are numpy's linear-interpolation quantiles (common practice)."""
    x = np.random.default_rng(k).lognormal(0, 0.5, 83)
    result = charts.classify(x, "quantiles", k)
    expected = np.quantile(x, np.linspace(0, 1, k + 1))
    np.testing.assert_allclose(result.edges, expected, rtol=1e-12)
    assert result.k == k


def test_equal_interval_edges_equal_numpy_linspace():
    """Equal-interval edges split the range evenly (common practice; numpy.linspace)."""
    x = np.random.default_rng(3).uniform(0.2, 0.6, 40)
    result = charts.classify(x, "equal", 6)
    np.testing.assert_allclose(result.edges, np.linspace(x.min(), x.max(), 7), rtol=1e-12)


def _within_ss(sorted_x: np.ndarray, cuts: tuple[int, ...]) -> float:
    parts = np.split(sorted_x, cuts)
    return float(sum(((p - p.mean()) ** 2).sum() for p in parts))


def test_natural_breaks_reach_the_brute_force_optimum():
    """Natural breaks minimise the within-class sum of squares over every partition into
    k contiguous classes (Fisher 1958, "On grouping for maximum homogeneity", Journal of
    the American Statistical Association 53: 789-798), checked by enumerating all
    partitions."""
    x = np.sort(np.random.default_rng(11).gamma(2.0, 1.0, 13))
    k = 4
    best = min(_within_ss(x, cuts) for cuts in itertools.combinations(range(1, x.size), k - 1))
    result = charts.classify(x, "breaks", k)
    upper = np.asarray(result.edges[1:])
    cuts = tuple(int(np.searchsorted(x, u, side="right")) for u in upper[:-1])
    assert _within_ss(x, cuts) == pytest.approx(best, rel=1e-9)


@pytest.mark.parametrize("scheme", ["quantiles", "equal", "breaks"])
def test_assignment_matches_mapclassify_classes(scheme):
    """Each value's class is the one mapclassify assigns (reference implementation)."""
    x = np.random.default_rng(5).normal(0.35, 0.05, 60)
    maker = {
        "quantiles": mapclassify.Quantiles,
        "equal": mapclassify.EqualInterval,
        "breaks": mapclassify.FisherJenks,
    }[scheme]
    reference = maker(x, k=5).yb
    result = charts.classify(x, scheme, 5)
    labels = result.assign(x)
    assert [result.labels.index(label) for label in labels] == list(reference)


def test_ties_give_fewer_classes_and_missing_values_no_class():
    """Tied values cannot be split, so fewer classes form; NaN has no class (common practice)."""
    x = np.array([0.3, 0.3, 0.3, 0.3, 0.5, 0.5, np.nan])
    result = charts.classify(x, "quantiles", 5)
    assert result.k == 2
    assigned = result.assign(x)
    assert assigned[-1] is None
    assert assigned[0] != assigned[4]
    assert charts.classify([np.nan], "equal", 3).labels == ()
    assert charts.classify([0.4, 0.4], "breaks", 3).k == 1


def test_labels_are_distinct_even_for_close_edges():
    """Labels gain decimals until no two classes read the same."""
    x = np.linspace(0.3000, 0.3010, 50)
    labels = charts.classify(x, "equal", 5).labels
    assert len(set(labels)) == 5


def test_unknown_classification_is_refused():
    with pytest.raises(ValueError, match="unknown classification"):
        charts.classify([1.0, 2.0], "jenks-ish", 3)


# --------------------------------------------------------------------------- map data


def test_every_exterior_ring_winds_clockwise_on_naturalearth():
    """Vega/d3-geo needs clockwise exteriors and counter-clockwise holes; shapely's signed
    area is negative for clockwise rings. Data: naturalearth_lowres shipped with pyogrio."""
    world = gpd.read_file(NATURALEARTH).rename(columns={"iso_a3": "region"})
    features = charts.features_for_display(world)
    assert len(features) == len(world)
    for feature in features:
        for rings in polygons_of(feature["geometry"]):
            assert signed_area(shapely.LinearRing(rings[0])) < 0
            for hole in rings[1:]:
                assert signed_area(shapely.LinearRing(hole)) > 0


def test_orientation_agrees_with_shapely_orient_sign_minus_one():
    """Same shape and ring windings as shapely.geometry.polygon.orient(p, sign=-1.0)."""
    ring = [(0, 0), (2, 0), (2, 2), (0, 2)]
    hole = [(0.5, 0.5), (0.5, 1.0), (1.0, 1.0), (1.0, 0.5)]
    gdf = gpd.GeoDataFrame({"region": ["A"]}, geometry=[Polygon(ring, [hole])], crs=4326)
    got = shape(charts.features_for_display(gdf, tolerance=0)[0]["geometry"])
    expected = orient(Polygon(ring, [hole]), sign=-1.0)
    assert got.equals(expected)  # the same point set
    assert signed_area(got.exterior) == pytest.approx(signed_area(expected.exterior))
    assert [signed_area(r) for r in got.interiors] == pytest.approx(
        [signed_area(r) for r in expected.interiors]
    )


def test_simplification_moves_outlines_less_than_the_tolerance_and_shrinks_the_payload():
    """Each outline's mean displacement (symmetric-difference area / perimeter, shapely)
    stays below the display tolerance (the map's larger side / 1000) and the total area
    changes by < 0.5 %, while the payload shrinks. Data: naturalearth_lowres."""
    world = gpd.read_file(NATURALEARTH).rename(columns={"iso_a3": "region"})
    original = world.geometry.to_numpy()
    x0, y0, x1, y1 = shapely.total_bounds(original)
    tolerance = max(x1 - x0, y1 - y0) / 1000
    features = charts.features_for_display(world)
    simplified = np.array([shape(f["geometry"]) for f in features])
    displacement = shapely.area(
        shapely.symmetric_difference(simplified, original)
    ) / shapely.length(original)
    assert np.all(displacement < tolerance)
    assert abs(shapely.area(simplified).sum() / shapely.area(original).sum() - 1) < 0.005
    full = json.dumps(json.loads(world.to_json())["features"], separators=(",", ":"))
    assert charts.payload_kb(features) < 0.8 * len(full) / 1024


def test_neighbours_keep_a_common_border_after_simplification():
    """A coverage stays a coverage: no overlaps and no gaps (shapely union areas)."""
    gdf = grid_districts()
    features = charts.features_for_display(gdf, tolerance=0.01)
    parts = np.array([shape(f["geometry"]) for f in features])
    union = shapely.union_all(parts)
    assert shapely.area(parts).sum() == pytest.approx(union.area, rel=1e-9)
    assert union.area == pytest.approx(gdf.union_all().area, rel=1e-6)
    assert bool(shapely.coverage_is_valid(parts))


def test_values_are_merged_and_json_safe_and_inputs_untouched():
    """Properties carry the value table; NaN becomes null (strict JSON); inputs unchanged."""
    gdf = grid_districts()
    values = values_for(gdf)
    before_gdf, before_values = gdf.copy(), values.copy()
    features = charts.features_for_display(gdf, values)
    json.dumps(features, allow_nan=False)
    by_region = {f["properties"]["region"]: f["properties"] for f in features}
    row = values.iloc[5]
    assert by_region[row["region"]]["value"] == pytest.approx(row["value"])
    assert by_region[row["region"]]["county"] == gdf["county"].iloc[5]
    assert by_region[values.iloc[2]["region"]]["value"] is None
    assert by_region[values.iloc[2]["region"]]["klass"] is None
    pd.testing.assert_frame_equal(values, before_values)
    assert gdf.geometry.geom_equals_exact(before_gdf.geometry, tolerance=0).all()


def test_a_repeated_value_row_does_not_shift_features():
    """One feature per boundary row, each with its own district's value."""
    gdf = grid_districts()
    values = values_for(gdf)
    doubled = pd.concat([values.iloc[[3]].assign(value=99.0), values], ignore_index=True)
    features = charts.features_for_display(gdf, doubled)
    assert [f["properties"]["region"] for f in features] == list(gdf["region"])
    centroids = [shape(f["geometry"]).centroid for f in features]
    assert all(c.within(g) for c, g in zip(centroids, gdf.geometry, strict=True))


def test_projected_boundaries_are_shown_in_degrees():
    """Boundaries in a metric CRS are reprojected to EPSG:4326 (pyproj)."""
    gdf = grid_districts().to_crs("EPSG:3857")
    features = charts.features_for_display(gdf)
    x, y = shape(features[0]["geometry"]).centroid.coords[0]
    assert -32 < x < -29 and -48 < y < -45


# --------------------------------------------------------------------------- maps


def make_map(selected=("Q11",)) -> alt.Chart:
    gdf = grid_districts()
    values = values_for(gdf)
    labels = charts.classify(values["value"], "quantiles", 4).labels
    features = charts.features_for_display(gdf, values)
    return charts.choropleth(
        features,
        value_label=charts.index_label("gini"),
        classes=labels,
        title="Gini by district, 2021",
        caption="Invented test districts; pchip Lorenz curves.",
        selected=selected,
    )


def test_choropleth_spec_has_pick_selection_tooltips_and_clockwise_rings():
    """The map carries the click selection the app reads, tooltips with the bounds, and
    data whose first ring is clockwise (shapely signed area < 0)."""
    chart = make_map()
    spec = chart.to_dict()
    params = {p["name"]: p for p in spec["params"]}
    assert params["pick"]["select"]["type"] == "point"
    assert params["pick"]["select"]["fields"] == ["region"]
    tooltip_titles = {t["title"] for t in shape_layer(spec)["encoding"]["tooltip"]}
    assert {"District", "Bounds / interval"} <= tooltip_titles
    values = spec_values(chart)
    first_ring = polygons_of(values[0]["geometry"])[0][0]
    assert signed_area(shapely.LinearRing(first_ring)) < 0
    assert spec["projection"]["type"] == "mercator"
    assert shape_layer(spec)["encoding"]["color"]["condition"]["scale"]["domain"] == list(
        charts.classify(values_for(grid_districts())["value"], "quantiles", 4).labels
    )


def test_choropleth_marks_selected_districts_without_touching_the_features():
    """Pre-selected ids are flagged on copies; the caller's features stay as given."""
    gdf = grid_districts()
    features = charts.features_for_display(gdf, values_for(gdf))
    snapshot = copy.deepcopy(features)
    chart = charts.choropleth(
        features, value_label="Gini", classes=["a"], title="t", caption="c", selected=["Q00"]
    )
    assert features == snapshot
    picked = [v["properties"]["region"] for v in spec_values(chart) if v["properties"]["picked"]]
    assert picked == ["Q00"]


def _pixel_filled(png: bytes, fx: float, fy: float) -> bool:
    image = Image.open(io.BytesIO(png)).convert("RGB")
    w, h = image.size
    r, g, b = image.getpixel((int(w * fx), int(h * fy)))
    return (r, g, b) != (255, 255, 255)


def _two_corner_districts(winding: float) -> list[dict]:
    """Two fictional districts in opposite corners of their bounding box."""
    geometries = [box(-30.0, -46.0, -29.8, -45.8), box(-29.6, -45.6, -29.4, -45.4)]
    return [
        {
            "type": "Feature",
            "geometry": json.loads(shapely.to_geojson(orient(g, sign=winding))),
            "properties": {
                "region": r,
                "name": r,
                "county": "",
                "value": 0.3,
                "lower": None,
                "upper": None,
                "klass": "a",
                "wide": False,
            },
        }
        for r, g in zip(("A", "B"), geometries, strict=True)
    ]


def test_clockwise_rings_draw_districts_not_the_whole_frame():
    """Rendered with vl-convert, clockwise rings leave the empty corners white, while
    right-hand-rule rings fill the whole frame (d3-geo spherical winding)."""

    def render(features):
        chart = charts.choropleth(
            features, value_label="Gini", classes=["a"], title="", caption="", width=200, height=200
        )
        return charts.to_png(chart.configure_legend(disable=True), scale=1)

    right_way = render(_two_corner_districts(-1.0))
    wrong_way = render(_two_corner_districts(1.0))
    # In the plot area: the empty top-left corner between the two districts.
    assert not _pixel_filled(right_way, 0.2, 0.35)
    assert _pixel_filled(wrong_way, 0.2, 0.35)


def test_clusters_map_uses_the_fixed_colour_blind_safe_palette():
    gdf = grid_districts()
    features = charts.features_for_display(gdf)
    clusters = ["High-High", "low-low", None, "low-high"]
    for feature, cluster in zip(features, itertools.cycle(clusters), strict=False):
        feature["properties"]["cluster"] = cluster
    chart = charts.clusters_map(features, title="Local clusters", caption="c")
    scale = chart.to_dict()["encoding"]["color"]["scale"]
    assert scale["range"] == [charts.CLUSTER_COLOURS[d] for d in scale["domain"]]
    assert "Local clusters" in charts.to_svg(chart)


# --------------------------------------------------------------------------- builders


@functools.cache
def every_chart() -> dict[str, tuple[alt.TopLevelMixin, str]]:
    table = index_table()
    province = pd.DataFrame({"year": range(2016, 2022), "value": 0.36})
    p = np.linspace(0, 1, 51)
    ranks = table[table["index"] == "gini"].copy()
    ranks["rank"] = ranks.groupby("year")["value"].rank(ascending=False)
    log_start = np.linspace(9.8, 10.4, 9)
    beta = {
        "points": pd.DataFrame(
            {
                "region": [f"Q{i}" for i in range(9)],
                "log_initial": log_start,
                "growth": 0.4 - 0.036 * log_start,
            }
        ),
        "slope": -0.036,
        "intercept": 0.4,
    }
    gdf = grid_districts()
    cluster_features = charts.features_for_display(gdf)
    return {
        "map": (make_map(), "Gini by district, 2021"),
        "clusters": (
            charts.clusters_map(cluster_features, title="Clusters of high Gini", caption="c"),
            "Clusters of high Gini",
        ),
        "trajectories": (
            charts.trajectories(
                table, index="gini", highlight=["Q1"], province=province, title="Gini over time"
            ),
            "Gini over time",
        ),
        "by county": (
            charts.trajectories(
                table, index="theil_t", by_county=True, province=province, title="Theil by county"
            ),
            "Theil by county",
        ),
        "components": (
            charts.components(decomposition_table(), index="theil_t", title="Within and between"),
            "Within and between",
        ),
        "change": (
            charts.change_bars(change_table(), title="Drivers of change"),
            "Drivers of change",
        ),
        "lorenz": (
            charts.lorenz_profile(
                pd.DataFrame({"p": [0, 0.5, 1], "L": [0, 0.3, 1]}),
                pd.DataFrame({"method": "pchip", "p": p, "L": p**1.8}),
                pd.DataFrame({"p": p, "lower": p**2, "upper": p**1.6}),
                title="Lorenz of Q1",
            ),
            "Lorenz of Q1",
        ),
        "ranks": (charts.rank_over_time(ranks, title="Ranks by year"), "Ranks by year"),
        "convergence": (
            charts.convergence(
                pd.DataFrame({"year": range(2016, 2022), "sigma": np.linspace(0.3, 0.26, 6)}),
                beta,
                title="Convergence check",
            ),
            "Convergence check",
        ),
        "sigma only": (
            charts.convergence(
                pd.DataFrame({"year": [2016, 2017], "value": [0.3, 0.29]}), title="Spread only"
            ),
            "Spread only",
        ),
        "strip": (charts.interval_strip(table, region="Q3", year=2018), "Indices of Q3, 2018"),
    }


@pytest.mark.parametrize("name", list(every_chart()))
def test_every_builder_renders_to_svg_showing_its_title(name):
    """vl-convert (the reference Vega renderer) draws the chart and prints the title."""
    chart, title = every_chart()[name]
    svg = charts.to_svg(chart)
    assert svg.lstrip().startswith("<svg")
    assert title in svg
    assert chart.to_dict()["title"]["subtitle"]


@pytest.mark.parametrize(
    "name",
    ["map", "trajectories", "components", "change", "lorenz", "ranks", "convergence", "strip"],
)
def test_every_builder_has_tooltips(name):
    chart, _ = every_chart()[name]
    assert '"tooltip"' in json.dumps(chart.to_dict())


def test_png_export_is_a_png():
    """PNG signature per the PNG specification (ISO/IEC 15948)."""
    chart, _ = every_chart()["change"]
    assert charts.to_png(chart)[:8] == b"\x89PNG\r\n\x1a\n"


def test_change_bars_colour_terms_by_their_sign_and_keep_the_residual():
    """Diverging colours: positive terms raise, negative lower inequality; the residual is
    drawn (Mookherjee & Shorrocks 1982, Economic Journal 92: 886-902, is an approximation,
    its residual must show)."""
    chart = charts.change_bars(change_table())
    rows = {r["component"]: r for r in spec_values(chart)}
    assert rows["within"]["kind"] == "raises inequality"
    assert rows["population shift"]["kind"] == "lowers inequality"
    assert rows["residual"]["residual"] is True
    scale = chart.to_dict()["encoding"]["color"]["scale"]
    assert scale["range"][:2] == list(charts.DIVERGING)


def test_components_stack_to_the_total_for_each_level_and_year():
    """Within + between equal the total (Shorrocks 1980, Econometrica 48: 613-625, exact
    additivity, built into the test input), so the drawn stack height is the province
    total; per-group rows are left out."""
    decomp = decomposition_table()
    chart = charts.components(decomp, index="theil_t")
    rows = pd.DataFrame(spec_values(chart))
    assert set(rows["group"]) == {"(all)"}
    stacked = rows.groupby(["year", "level"])["value"].sum()
    totals = decomp[decomp["component"] == "total"].set_index("year")["value"]
    for (year, _level), height in stacked.items():
        assert height == pytest.approx(totals[int(year)])


def test_trajectories_emphasise_chosen_districts_and_refuse_missing_county():
    table = index_table()
    chart = charts.trajectories(table, index="gini", highlight=["Q2"])
    rows = pd.DataFrame(spec_values(chart))
    assert set(rows.loc[rows["role"] == "highlight", "region"]) == {"Q2"}
    assert set(rows["index"]) == {"gini"}
    with pytest.raises(ValueError, match="county"):
        charts.trajectories(table.drop(columns="county"), index="gini", by_county=True)


@pytest.mark.parametrize(
    ("key", "expected"),
    [("gini", "Gini"), ("ge_2", "GE(2)"), ("atkinson_0.5", "ε = 0.5"), ("palma", "bottom 40")],
)
def test_index_labels_name_the_index_and_its_units(key, expected):
    assert expected in charts.index_label(key)


def test_chosen_districts_are_named_on_the_map_at_a_point_inside_each():
    """A text layer holds exactly the chosen districts' names, each at a point that lies
    inside its district (shapely's point on surface, checked here with ``contains``)."""
    gdf = grid_districts()
    features = charts.features_for_display(gdf, values_for(gdf))
    chosen = ["Q00", "Q11"]
    spec = charts.choropleth(
        features, value_label="Gini", classes=["a"], title="t", caption="c", selected=chosen
    ).to_dict()
    layers = text_marks(spec)
    assert layers, "no text layer"
    for layer in layers:
        data = layer["data"]
        rows = data["values"] if "values" in data else spec["datasets"][data["name"]]
        names = gdf.set_index(gdf["region"].astype(str))["name"] if "name" in gdf else None
        expected = sorted(str(names[c]) if names is not None else c for c in chosen)
        assert sorted(r["name"] for r in rows) == expected
        for row in rows:
            region = next(
                c
                for c in chosen
                if (names is None and c == row["name"])
                or (names is not None and str(names[c]) == row["name"])
            )
            shape = gdf.set_index(gdf["region"].astype(str)).geometry[region]
            assert shape.contains(shapely.Point(row["label_x"], row["label_y"]))
    nothing = charts.choropleth(
        features, value_label="Gini", classes=["a"], title="t", caption="c", selected=()
    ).to_dict()
    assert not text_marks(nothing)


def _axis_titles(spec, found=None):
    """Every x title in a spec, however nested."""
    found = [] if found is None else found
    if isinstance(spec, dict):
        x = spec.get("encoding", {}).get("x")
        if isinstance(x, dict) and x.get("title"):
            found.append(x["title"])
        for value in spec.values():
            _axis_titles(value, found)
    elif isinstance(spec, list):
        for value in spec:
            _axis_titles(value, found)
    return found


def test_the_index_strip_has_one_axis_per_kind_of_index_titled_once():
    """Rows of one kind (0–1 indices, ratios, the entropy family) share one scale; no title
    repeated per row, and an unbounded upper bound is said in words, not drawn to infinity."""
    rows = pd.DataFrame(
        {
            "region": "Q1",
            "year": 2020,
            "index": ["gini", "top10_share", "palma", "theil_t", "mld"],
            "value": [0.32, 0.25, 1.3, 0.18, 0.17],
            "lower": [0.31, 0.24, 1.2, 0.17, 0.16],
            "upper": [0.33, 0.26, 1.4, np.inf, np.inf],
            "method": "curve",
        }
    )
    spec = charts.interval_strip(rows, title="t").to_dict()
    blocks = spec["vconcat"]
    assert len(blocks) == 3
    assert all(block["resolve"]["scale"]["x"] == "shared" for block in blocks)
    titles = set(_axis_titles(spec))
    assert titles == set(charts._STRIP_AXES.values())
    assert "units as in the row's label" not in json.dumps(spec)
    assert "Infinity" not in json.dumps(spec) and "inf" not in json.dumps(spec["datasets"])

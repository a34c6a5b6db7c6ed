"""Checks of the invented demo province in demo_data/ and of the script that writes it."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from shapely.geometry import shape

DEMO = Path(__file__).resolve().parents[2] / "demo_data"
FILES = ("deciles.csv", "households.csv", "means.csv", "districts.geojson", "README.md")
SHARES = [f"share_{k}" for k in range(1, 11)]
# Natural Earth 1:110m admin-0 countries, as shipped in pyogrio's test fixtures.
NATURAL_EARTH = (
    Path(pyogrio.__file__).parent
    / "tests"
    / "fixtures"
    / "naturalearth_lowres"
    / "naturalearth_lowres.shp"
)


@pytest.fixture(scope="module")
def deciles() -> pd.DataFrame:
    return pd.read_csv(DEMO / "deciles.csv")


@pytest.fixture(scope="module")
def households() -> pd.DataFrame:
    return pd.read_csv(DEMO / "households.csv")


@pytest.fixture(scope="module")
def features() -> list[dict]:
    return json.loads((DEMO / "districts.geojson").read_text(encoding="utf-8"))["features"]


@pytest.fixture(scope="module")
def polygons(features) -> dict[str, shapely.Polygon]:
    return {f["properties"]["region"]: shape(f["geometry"]) for f in features}


def decile_gini(shares: np.ndarray) -> np.ndarray:
    """Gini of the Lorenz points joined by straight lines (trapezoid rule), per row.

    Gini = 1 - 2 * area under the Lorenz curve (common practice); with straight lines
    between the points this is the lower bound of Gastwirth (1972).
    """
    lorenz = np.hstack([np.zeros((len(shares), 1)), np.cumsum(shares, axis=1)])
    area = np.trapezoid(lorenz, dx=1.0 / shares.shape[1], axis=1)
    return 1.0 - 2.0 * area


def weighted_gini(income: np.ndarray, weight: np.ndarray) -> float:
    """Weighted Gini as 2 cov(y, F(y)) / mean, F at each unit's mid-rank.

    Lerman & Yitzhaki (1984), "A note on the calculation and interpretation of the Gini
    index", Economics Letters 15: 363-368.
    """
    order = np.argsort(income)
    y, w = income[order], weight[order] / weight.sum()
    mid_rank = np.cumsum(w) - w / 2
    mean = np.sum(w * y)
    return float(2 * np.sum(w * y * (mid_rank - 0.5)) / mean)


def test_generator_reproduces_shipped_files_byte_for_byte(tmp_path):
    subprocess.run(
        [sys.executable, str(DEMO / "generate.py"), "--out", str(tmp_path)],
        check=True,
        capture_output=True,
    )
    for name in FILES:
        assert (tmp_path / name).read_bytes() == (DEMO / name).read_bytes(), name


def test_demo_files_stay_under_ten_megabytes():
    assert sum((DEMO / name).stat().st_size for name in FILES) < 10 * 2**20


def test_panel_counts_are_within_the_scenario_ranges(deciles):
    assert 40 <= deciles["region"].nunique() <= 60
    assert 5 <= deciles["county"].nunique() <= 8
    years = np.sort(deciles["year"].unique())
    assert 15 <= len(years) <= 20
    assert np.array_equal(years, np.arange(years[0], years[-1] + 1))  # no gaps in time
    # a balanced panel: one row for every district-year, each district in one county
    assert len(deciles) == deciles["region"].nunique() * len(years)
    assert not deciles.duplicated(["region", "year"]).any()
    assert (deciles.groupby("region")["county"].nunique() == 1).all()


def test_rows_are_sorted_by_region_then_year(deciles):
    keys = deciles[["region", "year"]]
    assert keys.equals(keys.sort_values(["region", "year"], ignore_index=True))


def test_decile_shares_sum_to_one_and_increase(deciles):
    shares = deciles[SHARES].to_numpy()
    assert np.all(np.abs(shares.sum(axis=1) - 1.0) < 5e-7)  # to 6 decimals
    assert np.all(np.diff(shares, axis=1) > 0)  # sorted bottom to top: a convex Lorenz curve
    assert np.all(shares > 0)


def test_decile_ginis_span_the_plausible_range(deciles):
    # Disposable-income Ginis run from about 0.25 to about 0.50 (common practice); the
    # scenario asks for districts spanning roughly 0.24 to 0.52.
    gini = decile_gini(deciles[SHARES].to_numpy())
    assert 0.20 <= gini.min() <= 0.28
    assert 0.48 <= gini.max() <= 0.56


def test_trapezoid_gini_matches_the_lognormal_closed_form_at_deciles():
    """The test's own Gini helper, checked before it is trusted.

    Lognormal Lorenz curve L(p) = Phi(Phi^-1(p) - sigma) (Aitchison & Brown 1957); its
    Gini 2 Phi(sigma / sqrt 2) - 1 bounds the trapezoid value from above, and for
    sigma = 0.7 at quintile points the trapezoid value is 0.3537347204 (computed here by the trapezoid rule;
    Gastwirth 1972 bounds).
    """
    from scipy.stats import norm

    p = np.linspace(0, 1, 6)
    shares = np.diff(norm.cdf(norm.ppf(p) - 0.7))[None, :]
    assert decile_gini(shares)[0] == pytest.approx(0.3537347204, abs=1e-9)
    assert decile_gini(shares)[0] < 2 * norm.cdf(0.7 / np.sqrt(2)) - 1


def test_means_file_repeats_the_deciles_means_and_populations(deciles):
    means = pd.read_csv(DEMO / "means.csv")
    assert list(means.columns) == ["region", "year", "county", "mean_income", "population"]
    cols = ["region", "year", "county", "mean_income", "population"]
    pd.testing.assert_frame_equal(means[cols], deciles[cols])
    assert (means["mean_income"] > 0).all() and (means["population"] > 0).all()


def test_households_sample_a_few_years_with_150_to_300_each(deciles, households):
    assert list(households.columns) == ["region", "year", "county", "income", "weight"]
    assert 2 <= households["year"].nunique() <= 4
    size = households.groupby(["region", "year"]).size()
    assert size.between(150, 300).all()
    assert set(households["region"]) == set(deciles["region"])
    assert (households["income"] > 0).all() and (households["weight"] > 0).all()


def test_households_agree_with_the_deciles_distributions(deciles, households):
    """The sample's weighted Gini and mean track the decile table's district-years.

    With ~230 units a sample Gini has a standard error of a few hundredths (common
    practice), so the checks are on the average gap and on the ranking of districts.
    """
    rows = []
    for (region, year), unit in households.groupby(["region", "year"]):
        income, weight = unit["income"].to_numpy(), unit["weight"].to_numpy()
        rows.append(
            (region, year, weighted_gini(income, weight), np.average(income, weights=weight))
        )
    sample = pd.DataFrame(rows, columns=["region", "year", "sample_gini", "sample_mean"])
    table = deciles.assign(gini=decile_gini(deciles[SHARES].to_numpy()))
    both = sample.merge(table, on=["region", "year"], validate="one_to_one")
    assert len(both) == len(sample)
    assert np.mean(np.abs(both["sample_gini"] - both["gini"])) < 0.03
    assert np.corrcoef(both["sample_gini"], both["gini"])[0, 1] > 0.8
    ratio = both["sample_mean"] / both["mean_income"]
    assert 0.95 < np.median(ratio) < 1.05
    # the weights represent the district's population (persons)
    weights = households.groupby(["region", "year"])["weight"].sum().rename("weight_sum")
    pop = both.set_index(["region", "year"])["population"]
    assert np.allclose(weights.loc[pop.index], pop, rtol=1e-4)


def test_geojson_features_carry_region_name_and_county(deciles, features):
    props = pd.DataFrame([f["properties"] for f in features])
    assert list(props.columns) == ["region", "name", "county"]
    assert props["region"].is_unique and props["name"].is_unique
    assert set(props["region"]) == set(deciles["region"])
    counties = deciles.drop_duplicates("region").set_index("region")["county"]
    assert (props.set_index("region")["county"] == counties.loc[props["region"]]).all()
    assert all(f["geometry"]["type"] == "Polygon" for f in features)


def test_coordinates_are_rounded_to_five_decimals(features):
    coords = np.concatenate(
        [np.asarray(ring) for f in features for ring in f["geometry"]["coordinates"]]
    )
    assert np.array_equal(np.round(coords, 5), coords)


def test_exterior_rings_wind_counter_clockwise_and_holes_clockwise(features):
    # RFC 7946, section 3.1.6 (the right-hand rule); shapely.is_ccw is the reference.
    for f in features:
        exterior, *holes = f["geometry"]["coordinates"]
        assert shapely.is_ccw(shapely.LinearRing(exterior)), f["properties"]["region"]
        assert not any(shapely.is_ccw(shapely.LinearRing(h)) for h in holes)


def test_polygons_are_valid_and_form_a_coverage_without_overlaps(polygons):
    geoms = np.array(list(polygons.values()))
    assert shapely.is_valid(geoms).all()
    # GEOS coverage validation: no overlaps and matching shared edges.
    assert shapely.coverage_is_valid(geoms)
    tree = shapely.STRtree(geoms)
    left, right = tree.query(geoms, predicate="intersects")
    pairs = left < right
    interiors_meet = shapely.relate_pattern(geoms[left[pairs]], geoms[right[pairs]], "2********")
    assert not interiors_meet.any()


def test_mainland_districts_tile_the_province_without_gaps(polygons):
    geoms = np.array(list(polygons.values()))
    union = shapely.union_all(geoms)
    parts = list(getattr(union, "geoms", [union]))
    mainland = max(parts, key=lambda p: p.area)
    assert len(mainland.interiors) == 0  # no holes: no gaps between districts
    assert 1 <= len(parts) - 1 <= 2  # the one or two offshore islands
    assert mainland.area == pytest.approx(
        sum(g.area for g in geoms if g.within(mainland.buffer(1e-9)))
    )


def test_neighbours_share_borders_and_islands_touch_nothing(polygons):
    regions = list(polygons)
    geoms = np.array([polygons[r] for r in regions])
    left, right = shapely.STRtree(geoms).query(geoms, predicate="intersects")
    keep = left != right
    left, right = left[keep], right[keep]
    shared = shapely.length(shapely.intersection(geoms[left], geoms[right]))
    border_neighbours = np.bincount(left[shared > 0], minlength=len(geoms))
    any_contact = np.bincount(left, minlength=len(geoms))
    islands = np.flatnonzero(any_contact == 0)
    assert 1 <= len(islands) <= 2
    mainland = np.setdiff1d(np.arange(len(geoms)), islands)
    assert (border_neighbours[mainland] >= 1).all()
    # a tessellation has many neighbours per district, not a chain (common practice: a
    # planar map's mean degree is near 5-6 for Voronoi cells)
    assert border_neighbours[mainland].mean() >= 4


def test_province_lies_over_open_sea():
    """No Natural Earth land polygon comes within one degree of the province.

    Source: Natural Earth 1:110m countries shipped with pyogrio's test fixtures.
    """
    land = pyogrio.read_dataframe(NATURAL_EARTH)
    features = json.loads((DEMO / "districts.geojson").read_text(encoding="utf-8"))["features"]
    geoms = [shape(f["geometry"]) for f in features]
    box = shapely.box(*shapely.total_bounds(geoms))
    assert box.bounds[0] > -131 and box.bounds[2] < -119  # South Pacific, 120-130 W
    assert box.bounds[1] > -36 and box.bounds[3] < -29
    assert not shapely.intersects(land.geometry.to_numpy(), box.buffer(1.0)).any()
    # the check itself can fail: the same box moved onto Australia does meet land
    assert shapely.intersects(land.geometry.to_numpy(), shapely.box(135, -30, 139, -26)).any()


def test_scenario_stories_are_visible_in_the_table(deciles):
    """The demo's stories, as stated in demo_data/README.md, hold in the shipped table."""
    table = deciles.assign(gini=decile_gini(deciles[SHARES].to_numpy()))
    first, last = table["year"].min(), table["year"].max()
    by_year = table.pivot(index="region", columns="year", values="gini")
    means = table.pivot(index="region", columns="year", values="mean_income")
    province = means.median()
    # the city: the highest mean, pulling away, and more unequal at the end
    city = means[last].idxmax()
    assert (means.loc[city] / province).iloc[-1] > 1.3 * (means.loc[city] / province).iloc[0]
    assert by_year.loc[city, last] > by_year.loc[city, first] + 0.04
    # a county whose within-district inequality falls after some year
    county_gini = table.groupby(["county", "year"])["gini"].mean().unstack()
    fall = county_gini[first + 7] - county_gini[last]
    assert fall.max() > 0.04
    # a county whose means rise then fall (boom and bust)
    county_mean = table.groupby(["county", "year"])["mean_income"].mean().unstack() / province
    peak = county_mean.idxmax(axis=1)
    boom = county_mean.max(axis=1) / county_mean[first]
    assert ((peak > first + 2) & (peak < last - 4) & (boom > 1.25)).any()

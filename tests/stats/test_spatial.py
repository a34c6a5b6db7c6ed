"""Tests of explorer.stats.spatial against shapely's predicates, closed forms and enumeration.

Sources: Cliff & Ord (1981), Spatial Processes: Models and Applications, Pion, London (Moran's
I, its moments under randomisation); Anselin (1995), "Local indicators of spatial
association - LISA", Geographical Analysis 27: 93-115; Rey & Smith (2013), "A spatial
decomposition of the Gini coefficient", Letters in Spatial and Resource Sciences 6: 55-70.
"""

from __future__ import annotations

import itertools
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial.distance import cdist

from explorer.data.model import DataError
from explorer.stats import measures, spatial

# Natural Earth 1:110m countries, public domain, shipped with pyogrio's own tests.
NATURAL_EARTH = (
    Path(pyogrio.__file__).parent / "tests/fixtures/naturalearth_lowres/naturalearth_lowres.shp"
)


def grid(rows, cols, crs="EPSG:3857"):
    """A regular grid of unit squares with ids 'r<row>c<col>'."""
    boxes = [shapely.box(c, r, c + 1, r + 1) for r in range(rows) for c in range(cols)]
    ids = [f"r{r}c{c}" for r in range(rows) for c in range(cols)]
    return gpd.GeoDataFrame({"region": ids}, geometry=boxes, crs=crs)


@pytest.fixture(scope="module")
def countries():
    frame = gpd.read_file(NATURAL_EARTH)
    frame["region"] = [f"c{i}" for i in range(len(frame))]  # row ids; names are not needed
    return frame


def pairs(graph):
    m = graph.matrix.tocoo()
    return {(int(i), int(j)) for i, j in zip(m.row, m.col, strict=True)}


# --------------------------------------------------------------------------------------------
# neighbour graphs


def test_grid_rook_and_queen_counts_are_the_lattice_counts():
    """On a regular lattice rook gives 4/3/2 neighbours (interior/edge/corner) and queen
    8/5/3 (Cliff & Ord 1981, common practice)."""
    frame = grid(5, 6)
    rook = spatial.neighbours(frame, "rook").cardinalities().reshape(5, 6)
    queen = spatial.neighbours(frame, "queen").cardinalities().reshape(5, 6)
    assert rook[2, 2] == 4 and rook[0, 2] == 3 and rook[0, 0] == 2
    assert queen[2, 2] == 8 and queen[0, 2] == 5 and queen[0, 0] == 3
    assert rook.sum() == 2 * (5 * 5 + 4 * 6)  # horizontal and vertical adjacencies, both ways


def test_queen_matches_shapely_intersects_on_natural_earth(countries):
    """Queen pairs are exactly the pairs shapely finds intersecting (all pairs, brute force),
    and include every pair shapely says touches; Natural Earth countries (public domain)."""
    graph = spatial.neighbours(countries, "queen", island_neighbours=0)
    geoms = countries.geometry.to_numpy()
    n = len(geoms)
    hits = shapely.intersects(geoms[:, None], geoms[None, :])
    np.fill_diagonal(hits, False)
    expected = {(int(i), int(j)) for i, j in zip(*np.nonzero(hits), strict=True)}
    assert pairs(graph) == expected
    touch = shapely.touches(geoms[:, None], geoms[None, :])
    assert {(int(i), int(j)) for i, j in zip(*np.nonzero(touch), strict=True)} <= pairs(graph)
    lonely = [countries["region"][i] for i in range(n) if not hits[i].any()]
    assert sorted(spatial.neighbours(countries, "queen").islands) == sorted(lonely)
    assert len(lonely) > 10  # island nations exist in the file: the check is not empty


def test_rook_matches_shared_boundary_length_on_natural_earth(countries):
    """Rook pairs are those whose boundaries' intersection has positive length (shapely),
    computed here for every intersecting pair independently of the STRtree query."""
    graph = spatial.neighbours(countries, "rook", island_neighbours=0)
    geoms = countries.geometry.to_numpy()
    i, j = np.nonzero(np.triu(shapely.intersects(geoms[:, None], geoms[None, :]), k=1))
    length = shapely.length(
        shapely.intersection(shapely.boundary(geoms[i]), shapely.boundary(geoms[j]))
    )
    expected = {(int(a), int(b)) for a, b, ln in zip(i, j, length, strict=True) if ln > 0}
    expected |= {(b, a) for a, b in expected}
    assert pairs(graph) == expected
    assert pairs(graph) < pairs(spatial.neighbours(countries, "queen", island_neighbours=0))


def test_knn_picks_the_nearest_centroids_by_scipy_distance():
    """k nearest by planar centroid distance agree with scipy's cdist ranking."""
    rng = np.random.default_rng(2)
    centres = rng.uniform(0, 100, (60, 2))
    frame = gpd.GeoDataFrame(
        {"region": [f"d{i}" for i in range(60)]},
        geometry=shapely.buffer(shapely.points(centres), 0.5),
        crs="EPSG:3857",
    )
    graph = spatial.neighbours(frame, "knn", k=5)
    dist = cdist(centres, centres)
    np.fill_diagonal(dist, np.inf)
    nearest = np.argsort(dist, axis=1)[:, :5]
    assert pairs(graph) == {(i, int(j)) for i in range(60) for j in nearest[i]}
    assert np.all(graph.cardinalities() == 5)


def test_knn_in_lon_lat_ranks_by_great_circle_distance():
    """Across the antimeridian, lon/lat points 1 degree apart are neighbours (haversine,
    common practice); a planar ranking would put them 358 degrees apart."""
    lon = np.array([179.5, -179.5, 170.0, 160.0])
    frame = gpd.GeoDataFrame(
        {"region": list("abcd")},
        geometry=shapely.buffer(shapely.points(np.column_stack([lon, np.zeros(4)])), 0.1),
        crs="EPSG:4326",
    )
    graph = spatial.neighbours(frame, "knn", k=1)
    assert (0, 1) in pairs(graph) and (1, 0) in pairs(graph)


def test_an_island_is_reported_and_joined_to_its_nearest_district():
    """A district touching none gets its nearest neighbour (both ways) and is reported."""
    frame = grid(3, 3)
    far = gpd.GeoDataFrame(
        {"region": ["isle"]}, geometry=[shapely.box(10, 0, 11, 1)], crs=frame.crs
    )
    frame = pd.concat([frame, far], ignore_index=True)
    graph = spatial.neighbours(frame, "queen")
    assert graph.islands == ("isle",)
    nearest = int(np.flatnonzero(graph.ids == "r0c2")[0])
    assert pairs(graph) >= {(9, nearest), (nearest, 9)}
    assert graph.cardinalities()[9] == 1


def test_neighbours_reject_duplicate_ids_and_missing_geometry():
    """Clear DataErrors naming the district (common practice)."""
    frame = grid(2, 2)
    frame.loc[1, "region"] = frame.loc[0, "region"]
    with pytest.raises(DataError, match="r0c0 appears more than once"):
        spatial.neighbours(frame)
    with pytest.raises(DataError, match="no column 'code'"):
        spatial.neighbours(grid(2, 2), id_column="code")


# --------------------------------------------------------------------------------------------
# Moran's I


@pytest.mark.parametrize("row_standardise", [True, False])
def test_checkerboard_with_rook_contiguity_gives_minus_one(row_standardise):
    """Cliff & Ord (1981): a checkerboard on a regular grid with rook contiguity has I = -1."""
    frame = grid(6, 6)
    values = np.indices((6, 6)).sum(axis=0).ravel() % 2 + 1.0
    graph = spatial.neighbours(frame, "rook")
    result = spatial.moran(values, graph, permutations=99, row_standardise=row_standardise)
    assert result.i == pytest.approx(-1.0, abs=1e-12)
    assert result.p_value == pytest.approx(1 / 100)


def test_full_enumeration_mean_and_variance_match_cliff_ord_randomisation():
    """Over all n! relabellings, mean I = -1/(n-1) exactly and the variance is Cliff & Ord's
    randomisation variance (from memory of Cliff & Ord 1981, checked here exactly)."""
    frame = grid(2, 3)
    graph = spatial.neighbours(frame, "queen")
    x = np.array([3.0, 1.0, 4.0, 1.5, 9.0, 2.6])
    sims = np.array(
        [
            spatial.moran(x[list(p)], graph, permutations=0).i
            for p in itertools.permutations(range(6))
        ]
    )
    result = spatial.moran(x, graph, permutations=0)
    assert sims.mean() == pytest.approx(-1 / 5, abs=1e-12)
    assert sims.var() == pytest.approx(result.variance, abs=1e-12)


def test_permutation_mean_is_near_the_expected_value():
    """E[I] = -1/(n-1) under random relabelling (Cliff & Ord 1981): the mean of 999
    permutations lies within 4 standard errors of it."""
    rng = np.random.default_rng(9)
    graph = spatial.neighbours(grid(12, 12), "queen")
    result = spatial.moran(rng.lognormal(size=144), graph, permutations=999, seed=3)
    se = np.sqrt(result.variance / 999)
    assert abs(result.permuted_mean - result.expected) < 4 * se
    assert result.permuted_var == pytest.approx(result.variance, rel=0.15)


def test_smooth_surface_is_strongly_positive_and_significant():
    """A smooth gradient has I near 1 and the smallest possible permutation p-value
    (common practice)."""
    graph = spatial.neighbours(grid(10, 10), "rook")
    values = np.add.outer(np.arange(10.0), np.arange(10.0)).ravel()
    result = spatial.moran(values, graph, permutations=199, seed=1)
    assert result.i > 0.8
    assert result.p_value == pytest.approx(1 / 200)
    assert result.z > 5


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), scale=st.floats(0.01, 100.0), shift=st.floats(-50, 50))
def test_moran_is_invariant_to_affine_changes_of_the_values(seed, scale, shift):
    """I, its p-value and every local I_i depend on the values only through their
    standardised deviations (Cliff & Ord 1981; Anselin 1995; common practice)."""
    rng = np.random.default_rng(seed)
    graph = spatial.neighbours(grid(4, 5), "queen")
    x = rng.normal(size=20)
    a = spatial.moran(x, graph, permutations=49, seed=1)
    b = spatial.moran(scale * x + shift, graph, permutations=49, seed=1)
    assert b.i == pytest.approx(a.i, abs=1e-10) and b.p_value == a.p_value
    la = spatial.local_moran(x, graph, permutations=0).local_i
    lb = spatial.local_moran(scale * x + shift, graph, permutations=0).local_i
    np.testing.assert_allclose(lb, la, atol=1e-9)


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_local_statistics_sum_to_n_times_global_i(seed):
    """Anselin (1995): sum_i I_i = n I with row-standardised weights (m2 = z'z / n)."""
    rng = np.random.default_rng(seed)
    graph = spatial.neighbours(grid(5, 7), "queen")
    x = rng.normal(size=35) + rng.uniform(0, 3)
    local = spatial.local_moran(x, graph, permutations=0)
    assert local.local_i.sum() == pytest.approx(35 * spatial.moran(x, graph, 0).i, abs=1e-12)


def test_local_clusters_find_a_hot_and_a_cold_block():
    """A high block and a low block in noise are high-high and low-low (Anselin 1995)."""
    rng = np.random.default_rng(4)
    values = rng.normal(0, 0.3, (12, 12))
    values[:4, :4] += 5
    values[-4:, -4:] -= 5
    graph = spatial.neighbours(grid(12, 12), "queen")
    table = spatial.district_table(values.ravel(), graph, permutations=499, seed=2)
    cluster = table["cluster"].to_numpy().reshape(12, 12)
    assert (cluster[1:3, 1:3] == "high-high").all()
    assert (cluster[-3:-1, -3:-1] == "low-low").all()
    assert list(table.columns) == ["region", "value", "local_i", "p_value", "cluster"]


def test_local_p_values_reject_at_about_alpha_under_no_autocorrelation():
    """Under random relabelling a two-sided pseudo p-value falls below alpha = 0.05 for about
    5 % of districts (common practice); 900 districts, generous bounds."""
    rng = np.random.default_rng(12)
    graph = spatial.neighbours(grid(30, 30), "rook")
    local = spatial.local_moran(rng.normal(size=900), graph, permutations=199, seed=5)
    rate = np.mean(local.p_value <= 0.05)
    assert 0.02 < rate < 0.09
    assert local.p_value.min() >= 2 / 200


def test_district_table_aligns_a_series_by_region_and_rejects_gaps():
    """Values are matched by id, not by position; a missing district is a clear DataError."""
    graph = spatial.neighbours(grid(3, 3), "rook")
    values = pd.Series(np.arange(9.0), index=graph.ids)
    shuffled = values.sample(frac=1.0, random_state=1)
    a = spatial.district_table(values, graph, permutations=0)
    b = spatial.district_table(shuffled, graph, permutations=0)
    pd.testing.assert_frame_equal(a, b)
    with pytest.raises(DataError, match="have no value"):
        spatial.district_table(values.iloc[1:], graph)


# --------------------------------------------------------------------------------------------
# spatial Gini


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_spatial_gini_parts_sum_to_the_gini_and_match_brute_force(seed):
    """Rey & Smith (2013): G = neighbour part + non-neighbour part, each a sum over pairs;
    the Gini agrees with explorer.stats.measures (unweighted)."""
    rng = np.random.default_rng(seed)
    graph = spatial.neighbours(grid(4, 6), "queen")
    x = rng.lognormal(size=24)
    result = spatial.spatial_gini(x, graph, permutations=19)
    diff = np.abs(x[:, None] - x[None, :])
    mask = graph.matrix.toarray() > 0
    scale = 2 * 24**2 * x.mean()
    assert result.gini == pytest.approx(diff.sum() / scale, abs=1e-12)
    assert result.neighbours == pytest.approx(diff[mask].sum() / scale, abs=1e-12)
    assert result.neighbours + result.non_neighbours == pytest.approx(result.gini, abs=1e-15)
    gini = measures.weighted(x, None, None, ["gini"])["value"].iloc[0]
    assert result.gini == pytest.approx(gini, abs=1e-12)


def test_spatial_gini_non_neighbour_part_is_significant_for_a_smooth_surface():
    """Neighbours alike -> large non-neighbour part, small p-value (Rey & Smith 2013)."""
    graph = spatial.neighbours(grid(10, 10), "rook")
    values = np.add.outer(np.arange(10.0), np.arange(10.0)).ravel() + 1
    result = spatial.spatial_gini(values, graph, permutations=199, seed=0)
    assert result.p_value == pytest.approx(1 / 200)
    stats = spatial.global_stats(values, graph, permutations=199, seed=0)
    assert stats.gini_p_value == result.p_value and stats.n == 100 and stats.islands == ()

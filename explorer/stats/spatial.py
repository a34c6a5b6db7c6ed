"""Spatial structure of district values: neighbour graphs, Moran's I, local clusters, spatial Gini.

Neighbour graphs come from the district boundaries (contiguity is topological, so any CRS
will do) or from centroid distances; the statistics work on any graph and are vectorised
over permutations.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
import scipy.sparse as sp
import shapely
from scipy.spatial import cKDTree

from explorer.data.model import fail

__all__ = [
    "CLUSTERS",
    "GlobalStats",
    "LocalMoran",
    "MoranResult",
    "NeighbourGraph",
    "SpatialGini",
    "district_table",
    "global_stats",
    "local_moran",
    "moran",
    "neighbours",
    "spatial_gini",
]

CLUSTERS = ("high-high", "low-low", "high-low", "low-high", "not significant")
_PERM_ELEMENTS = 1_000_000  # permutations x districts held at once (~8 MB, cache-friendly)


# --------------------------------------------------------------------------------------------
# neighbour graphs


@dataclass(frozen=True)
class NeighbourGraph:
    """Binary neighbour relation between districts.

    ``matrix[i, j] == 1`` when district ``ids[j]`` is a neighbour of ``ids[i]``
    (symmetric for contiguity; for ``knn`` row i holds i's k nearest). ``islands`` are the
    districts that touched no other and were joined to their nearest ones instead.
    """

    ids: np.ndarray
    matrix: sp.csr_matrix = field(repr=False)
    islands: tuple[str, ...]
    kind: str

    @property
    def n(self) -> int:
        """Number of districts."""
        return int(self.ids.size)

    def cardinalities(self) -> np.ndarray:
        """Number of neighbours of each district."""
        return np.diff(self.matrix.indptr)


def _centroid_points(geometry: Any, crs: Any) -> np.ndarray:
    centres = shapely.get_coordinates(shapely.centroid(np.asarray(geometry)))
    if crs is not None and getattr(crs, "is_geographic", False):
        # lon/lat: chord distances on the unit sphere rank neighbours as great circles do
        lon, lat = np.radians(centres[:, 0]), np.radians(centres[:, 1])
        return np.column_stack([np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)])
    return centres


def _knn_pairs(points: np.ndarray, k: int, subset: np.ndarray | None = None):
    n = len(points)
    k = min(k, n - 1)
    query = points if subset is None else points[subset]
    _, idx = cKDTree(points).query(query, k=k + 1)
    idx = np.asarray(idx).reshape(len(query), k + 1)
    rows = np.arange(n) if subset is None else subset
    rows = np.repeat(rows, k + 1)
    cols = idx.ravel()
    keep = rows != cols
    rows, cols = rows[keep], cols[keep]
    # when a district's own centroid is not first (duplicate centroids), drop the extra one
    order = np.lexsort((cols, rows))
    rows, cols = rows[order], cols[order]
    first = np.ones(rows.size, dtype=bool)
    first[1:] = (rows[1:] != rows[:-1]) | (cols[1:] != cols[:-1])
    rows, cols = rows[first], cols[first]
    counts = np.bincount(rows, minlength=n)
    rank = np.arange(rows.size) - np.repeat(np.cumsum(counts) - counts, counts)
    keep = rank < k
    return rows[keep], cols[keep]


def neighbours(
    districts: Any,
    kind: str = "queen",
    k: int = 4,
    id_column: str = "region",
    island_neighbours: int = 1,
) -> NeighbourGraph:
    """Neighbour graph of districts from their boundaries.

    Parameters
    ----------
    districts : GeoDataFrame
        One row per district with ``id_column`` and polygon geometry, in any CRS.
    kind : {"queen", "rook", "knn"}
        ``queen``: boundaries share at least one point (or the polygons overlap, as happens
        in imperfect boundary files); ``rook``: boundaries share a stretch of positive
        length; ``knn``: the ``k`` nearest centroids (great-circle order for lon/lat).
    k : int
        Neighbours per district for ``knn``.
    island_neighbours : int
        For contiguity graphs, a district touching no other is joined (both ways) to this
        many nearest districts by centroid and reported in ``islands``.

    Returns
    -------
    NeighbourGraph

    References
    ----------
    Cliff, A. D. & Ord, J. K. (1981). *Spatial Processes: Models and Applications*. Pion.
    """
    if kind not in ("queen", "rook", "knn"):
        raise fail(f"unknown neighbour rule '{kind}'.", "Use queen, rook or knn.")
    if id_column not in districts.columns:
        raise fail(
            f"the boundary file has no column '{id_column}'.",
            "Name the column that holds the district ids.",
            column=id_column,
        )
    ids = districts[id_column].astype(str).to_numpy(dtype=object)
    if pd.Series(ids).duplicated().any():
        dup = pd.Series(ids)[pd.Series(ids).duplicated()].iloc[0]
        raise fail(
            f"district {dup} appears more than once in the boundaries.",
            "Dissolve its parts into one row per district.",
            column=id_column,
        )
    geometry = np.asarray(districts.geometry.values)
    if shapely.is_missing(geometry).any() or shapely.is_empty(geometry).any():
        bad = ids[shapely.is_missing(geometry) | shapely.is_empty(geometry)][0]
        raise fail(
            f"district {bad} has no geometry.", "Give every district a boundary.", column="geometry"
        )
    n = ids.size
    if n < 2:
        raise fail("a neighbour graph needs at least two districts.", "Add districts.")
    points = _centroid_points(geometry, getattr(districts, "crs", None))
    islands: tuple[str, ...] = ()
    if kind == "knn":
        rows, cols = _knn_pairs(points, k)
    else:
        tree = shapely.STRtree(geometry)
        left, right = tree.query(geometry, predicate="intersects")
        keep = left < right
        left, right = left[keep], right[keep]
        if kind == "rook":
            boundary = shapely.boundary(geometry)
            shared = shapely.length(shapely.intersection(boundary[left], boundary[right]))
            keep = shared > 0
            left, right = left[keep], right[keep]
        rows, cols = np.concatenate([left, right]), np.concatenate([right, left])
        lonely = np.setdiff1d(np.arange(n), rows)
        if lonely.size and island_neighbours > 0:
            islands = tuple(ids[lonely])
            r, c = _knn_pairs(points, island_neighbours, subset=lonely)
            rows, cols = np.concatenate([rows, r, c]), np.concatenate([cols, c, r])
    matrix = sp.csr_matrix((np.ones(rows.size), (rows, cols)), shape=(n, n))
    matrix.sum_duplicates()
    matrix.data[:] = 1.0
    return NeighbourGraph(ids=ids, matrix=matrix, islands=islands, kind=kind)


def _row_standardised(matrix: sp.csr_matrix) -> sp.csr_matrix:
    degree = np.diff(matrix.indptr).astype(float)
    scale = np.divide(1.0, degree, out=np.zeros_like(degree), where=degree > 0)
    return sp.csr_matrix(sp.diags(scale) @ matrix)


def _values(values: Any, graph: NeighbourGraph) -> np.ndarray:
    """District values in graph order, with a clear error for gaps."""
    if isinstance(values, pd.Series):
        series = values.copy()
        series.index = series.index.astype(str)
        missing = [i for i in graph.ids if i not in series.index]
        if missing:
            raise fail(
                f"{len(missing)} district(s) of the map have no value, e.g. {missing[0]}.",
                "Give every mapped district a value, or drop it from the boundaries.",
                column="region",
            )
        if series.index.duplicated().any():
            raise fail(
                f"district {series.index[series.index.duplicated()][0]} has more than one value.",
                "Give one value per district.",
                column="region",
            )
        x = series.reindex(graph.ids).to_numpy(dtype=float)
    else:
        x = np.asarray(values, dtype=float)
        if x.shape != (graph.n,):
            raise fail(
                f"{x.size} values were given for {graph.n} districts.",
                "Give one value per district, in the graph's order.",
            )
    if not np.all(np.isfinite(x)):
        bad = graph.ids[~np.isfinite(x)][0]
        raise fail(f"district {bad} has a missing value.", "Fill or drop it.", column="value")
    return x


def _permuted(z: np.ndarray, count: int, rng: np.random.Generator) -> np.ndarray:
    """``count`` independent permutations of ``z`` as the columns of an (n, count) array."""
    out = np.empty((count, z.size))
    out[:] = z
    for row in out:  # in-place row shuffles draw faster than Generator.permuted on 2-D arrays
        rng.shuffle(row)
    return out.T


def _distinct_draws(rng: np.random.Generator, rows: int, population: int, size: int) -> np.ndarray:
    """``rows`` samples of ``size`` distinct integers from ``range(population)``.

    Drawn with replacement and redrawn where a row repeats a value: conditional on being
    distinct, uniform tuples are exactly samples without replacement (rejection sampling,
    common practice), and with ``size`` much smaller than ``population`` few rows repeat.
    """
    if size > population:
        raise fail("a district has more neighbours than there are other districts.", "")
    if 2 * size * size > population:  # repeats would be frequent: shuffle instead
        keys = rng.random((rows, population))
        return np.argpartition(keys, size - 1, axis=1)[:, :size]
    out = rng.integers(0, population, (rows, size))
    while True:
        ordered = np.sort(out, axis=1)
        bad = np.flatnonzero((ordered[:, 1:] == ordered[:, :-1]).any(axis=1))
        if bad.size == 0:
            return out
        out[bad] = rng.integers(0, population, (bad.size, size))


def _chunks(total: int, n: int) -> list[int]:
    step = max(1, _PERM_ELEMENTS // max(n, 1))
    return [min(step, total - s) for s in range(0, total, step)]


# --------------------------------------------------------------------------------------------
# global Moran's I


@dataclass(frozen=True)
class MoranResult:
    """Global Moran's I with its permutation and randomisation inference."""

    i: float
    expected: float
    variance: float
    z: float
    p_value: float
    permutations: int
    permuted_mean: float
    permuted_var: float


def _moran_variance(matrix: sp.csr_matrix, z: np.ndarray) -> float:
    """Variance of I under randomisation (Cliff & Ord 1981, from memory; checked exactly
    against full enumeration in tests/test_spatial.py)."""
    n = z.size
    s0 = matrix.sum()
    both = matrix + matrix.T
    s1 = 0.5 * both.multiply(both).sum()
    s2 = float(
        (
            (np.asarray(matrix.sum(axis=1)).ravel() + np.asarray(matrix.sum(axis=0)).ravel()) ** 2
        ).sum()
    )
    b2 = n * np.sum(z**4) / np.sum(z**2) ** 2
    second = (
        n * ((n * n - 3 * n + 3) * s1 - n * s2 + 3 * s0**2)
        - b2 * ((n * n - n) * s1 - 2 * n * s2 + 6 * s0**2)
    ) / ((n - 1) * (n - 2) * (n - 3) * s0**2)
    return float(second - 1.0 / (n - 1) ** 2)


def moran(
    values: Any,
    graph: NeighbourGraph,
    permutations: int = 999,
    seed: int = 0,
    row_standardise: bool = True,
) -> MoranResult:
    """Global Moran's I with a permutation p-value.

    ``I = (n / S0) z'Wz / z'z`` with z the deviations from the mean. The p-value is
    two-sided, ``(1 + #{|I_perm - E| >= |I - E|}) / (permutations + 1)``, from
    ``permutations`` random relabellings drawn at once (``numpy.random.default_rng(seed)``).
    ``z`` uses E[I] = -1/(n - 1) and the variance under randomisation.

    Parameters
    ----------
    values : array_like, shape (n,)
        One value per district, in the graph's order.
    graph : NeighbourGraph
        Who neighbours whom.
    permutations : int
        Random relabellings for the p-value.
    seed : int
        Seed of ``numpy.random.default_rng``.
    row_standardise : bool
        Divide each district's neighbour weights by their sum.

    Returns
    -------
    MoranResult

    References
    ----------
    Cliff, A. D. & Ord, J. K. (1981). *Spatial Processes: Models and Applications*. Pion.
    """
    x = _values(values, graph)
    n = graph.n
    if n < 4:
        raise fail("Moran's I needs at least four districts.", "Add districts.")
    w = _row_standardised(graph.matrix) if row_standardise else graph.matrix
    z = x - x.mean()
    zz = float(z @ z)
    expected = -1.0 / (n - 1)
    if zz == 0:
        raise fail(
            "every district has the same value; Moran's I is undefined.", "Check the values."
        )
    s0 = float(w.sum())
    i = float(n / s0 * (z @ (w @ z)) / zz)
    rng = np.random.default_rng(seed)
    sims = np.empty(permutations)
    done = 0
    for size in _chunks(permutations, n):
        perm = _permuted(z, size, rng)
        sims[done : done + size] = n / s0 * np.einsum("ij,ij->j", perm, w @ perm) / zz
        done += size
    extreme = np.count_nonzero(np.abs(sims - expected) >= abs(i - expected) - 1e-15)
    variance = _moran_variance(w, z) if n > 3 else np.nan
    return MoranResult(
        i=i,
        expected=expected,
        variance=variance,
        z=float((i - expected) / np.sqrt(variance)) if variance > 0 else np.nan,
        p_value=float((extreme + 1) / (permutations + 1)) if permutations else np.nan,
        permutations=permutations,
        permuted_mean=float(sims.mean()) if permutations else np.nan,
        permuted_var=float(sims.var()) if permutations else np.nan,
    )


# --------------------------------------------------------------------------------------------
# local Moran


@dataclass(frozen=True)
class LocalMoran:
    """Local Moran statistics of every district (row-standardised weights)."""

    local_i: np.ndarray
    p_value: np.ndarray
    lag: np.ndarray
    cluster: np.ndarray
    alpha: float
    permutations: int


def local_moran(
    values: Any,
    graph: NeighbourGraph,
    permutations: int = 999,
    seed: int = 0,
    alpha: float = 0.05,
) -> LocalMoran:
    """Local Moran's I_i with conditional permutation inference and cluster labels.

    ``I_i = (z_i / m2) sum_j w_ij z_j`` with row-standardised w and ``m2 = z'z / n``, so
    ``sum_i I_i = n I``. For each district its own value is held fixed and its
    neighbours' values are drawn without replacement from the other n - 1 districts; the
    pseudo p-value is two-sided,
    ``min(1, 2 (1 + min(#{I_perm >= I_i}, #{I_perm <= I_i})) / (permutations + 1))``, so
    that ``alpha`` is the rate of false clusters per district. Districts with
    ``p <= alpha`` are high-high, low-low, high-low or low-high by the signs of z_i and of
    the neighbours' mean deviation; the rest are "not significant". Permutation draws are
    shared across districts (one set of draws per chunk), each district's test stays exact.

    Parameters
    ----------
    values, graph, permutations, seed
        As for :func:`moran`.
    alpha : float
        Pseudo p-value at or below which a district is labelled a cluster.

    Returns
    -------
    LocalMoran

    References
    ----------
    Anselin, L. (1995). Local indicators of spatial association - LISA. *Geographical
    Analysis* 27: 93-115.
    """
    x = _values(values, graph)
    n = graph.n
    if not 0 < alpha < 1:
        raise fail(f"significance level {alpha} is not between 0 and 1.", "Use e.g. 0.05.")
    matrix = graph.matrix
    degree = np.diff(matrix.indptr)
    z = x - x.mean()
    m2 = float(z @ z) / n
    if m2 == 0:
        raise fail(
            "every district has the same value; local Moran is undefined.", "Check the values."
        )
    lag = _row_standardised(matrix) @ z
    local_i = z * lag / m2
    p_value = _local_p_values(z, local_i, degree, m2, permutations, seed)
    significant = p_value <= alpha
    quadrant = np.select(
        [(z > 0) & (lag > 0), (z < 0) & (lag < 0), (z > 0) & (lag < 0), (z < 0) & (lag > 0)],
        list(CLUSTERS[:4]),
        default=CLUSTERS[4],
    )
    cluster = np.where(significant, quadrant, CLUSTERS[4]).astype(object)
    return LocalMoran(
        local_i=np.where(degree > 0, local_i, np.nan),
        p_value=p_value,
        lag=lag,
        cluster=cluster,
        alpha=alpha,
        permutations=permutations,
    )


def _local_p_values(
    z: np.ndarray,
    local_i: np.ndarray,
    degree: np.ndarray,
    m2: float,
    permutations: int,
    seed: int,
) -> np.ndarray:
    """Conditional-permutation pseudo p-values of every district's I_i (NaN without neighbours)."""
    n = z.size
    p_value = np.full(n, np.nan)
    kmax = int(degree.max()) if n else 0
    if permutations and kmax:
        rng = np.random.default_rng(seed)
        # one sample of kmax distinct positions out of n - 1 per permutation; position q maps
        # to district q for q < i and q + 1 otherwise, so district i is never its own neighbour
        draws = _distinct_draws(rng, permutations, n - 1, kmax)
        step = max(1, _PERM_ELEMENTS // permutations)
        for start in range(0, n, step):
            sites = np.arange(start, min(n, start + step))
            k = degree[sites]
            sums = np.zeros((sites.size, permutations))
            for q in range(kmax):  # a few neighbour slots, each vectorised over sites x draws
                slot = draws[None, :, q]
                pick = slot + (slot >= sites[:, None])
                sums += z[pick] * (q < k)[:, None]
            sims = z[sites, None] * sums / np.maximum(k, 1)[:, None] / m2
            above = np.count_nonzero(sims >= local_i[sites, None] - 1e-15, axis=1)
            below = np.count_nonzero(sims <= local_i[sites, None] + 1e-15, axis=1)
            p = np.minimum(1.0, 2.0 * (np.minimum(above, below) + 1) / (permutations + 1))
            p_value[sites] = np.where(k > 0, p, np.nan)
    return p_value


# --------------------------------------------------------------------------------------------
# spatial Gini


@dataclass(frozen=True)
class SpatialGini:
    """Gini of district values split into neighbour and non-neighbour pairs."""

    gini: float
    neighbours: float
    non_neighbours: float
    p_value: float
    permutations: int


def _gini(x: np.ndarray) -> float:
    ordered = np.sort(x)
    n = x.size
    rank = np.arange(1, n + 1)
    return float(np.dot(2 * rank - n - 1, ordered) / (n * n * ordered.mean()))


def spatial_gini(
    values: Any, graph: NeighbourGraph, permutations: int = 999, seed: int = 0
) -> SpatialGini:
    """Spatial decomposition of the Gini of district values.

    ``G = sum_ij |x_i - x_j| / (2 n^2 mu)`` over ordered pairs, split into pairs that are
    neighbours (either way, for asymmetric graphs) and pairs that are not; the two parts
    sum to G exactly. Under positive autocorrelation neighbours are alike, so the
    non-neighbour part is large; its p-value is ``(1 + #{NN_perm >= NN}) / (permutations + 1)``
    over random relabellings of the districts (which leave G unchanged).

    Parameters
    ----------
    values, graph, permutations, seed
        As for :func:`moran`.

    Returns
    -------
    SpatialGini

    References
    ----------
    Rey, S. J. & Smith, R. J. (2013). A spatial decomposition of the Gini coefficient.
    *Letters in Spatial and Resource Sciences* 6: 55-70.
    """
    x = _values(values, graph)
    n = graph.n
    if np.any(x < 0) or x.sum() <= 0:
        raise fail("the Gini needs values of zero or more, not all zero.", "Check the values.")
    gini = _gini(x)
    pairs = sp.triu(graph.matrix + graph.matrix.T, k=1).tocoo()
    rows, cols = pairs.row, pairs.col
    scale = 1.0 / (n * n * x.mean())  # each unordered pair counts twice over 2 n^2 mu
    near = float(np.abs(x[rows] - x[cols]).sum() * scale)
    rng = np.random.default_rng(seed)
    count = 0
    for size in _chunks(permutations, max(n, rows.size)):
        perm = _permuted(x, size, rng)
        sims = np.abs(perm[rows] - perm[cols]).sum(axis=0) * scale
        count += np.count_nonzero(gini - sims >= gini - near - 1e-15)
    return SpatialGini(
        gini=gini,
        neighbours=near,
        non_neighbours=gini - near,
        p_value=float((count + 1) / (permutations + 1)) if permutations else np.nan,
        permutations=permutations,
    )


# --------------------------------------------------------------------------------------------
# tables for the pages


@dataclass(frozen=True)
class GlobalStats:
    """Global spatial statistics of one district variable."""

    moran_i: float
    expected: float
    z: float
    p_value: float
    gini: float
    gini_neighbours: float
    gini_non_neighbours: float
    gini_p_value: float
    n: int
    islands: tuple[str, ...]


def global_stats(
    values: Any, graph: NeighbourGraph, permutations: int = 999, seed: int = 0
) -> GlobalStats:
    """Moran's I (row-standardised) and the spatial Gini of one district variable.

    Parameters
    ----------
    values, graph, permutations, seed
        As for :func:`moran`.

    Returns
    -------
    GlobalStats

    References
    ----------
    Cliff, A. D. & Ord, J. K. (1981). *Spatial Processes: Models and Applications*. Pion.
    Rey, S. J. & Smith, R. J. (2013). A spatial decomposition of the Gini coefficient.
    *Letters in Spatial and Resource Sciences* 6: 55-70.
    """
    m = moran(values, graph, permutations, seed)
    g = spatial_gini(values, graph, permutations, seed)
    return GlobalStats(
        moran_i=m.i,
        expected=m.expected,
        z=m.z,
        p_value=m.p_value,
        gini=g.gini,
        gini_neighbours=g.neighbours,
        gini_non_neighbours=g.non_neighbours,
        gini_p_value=g.p_value,
        n=graph.n,
        islands=graph.islands,
    )


def district_table(
    values: Any,
    graph: NeighbourGraph,
    permutations: int = 999,
    seed: int = 0,
    alpha: float = 0.05,
) -> pd.DataFrame:
    """Local Moran per district: ``region, value, local_i, p_value, cluster``.

    Parameters
    ----------
    values, graph, permutations, seed
        As for :func:`moran`.
    alpha : float
        As for :func:`local_moran`.

    Returns
    -------
    DataFrame
        One row per district of the graph.

    References
    ----------
    Anselin, L. (1995). Local indicators of spatial association - LISA. *Geographical
    Analysis* 27: 93-115.
    """
    x = _values(values, graph)
    local = local_moran(x, graph, permutations, seed, alpha)
    return pd.DataFrame(
        {
            "region": graph.ids.astype(str),
            "value": x,
            "local_i": local.local_i,
            "p_value": local.p_value,
            "cluster": local.cluster.astype(str),
        }
    )

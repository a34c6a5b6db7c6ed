"""Within/between decompositions of inequality across the district hierarchy.

Three families, all computed from arrays first and then wrapped for a :class:`Panel`:

- the generalised entropy family (Theil T, MLD, GE(alpha)), split exactly over any number of
  nested levels (county -> district -> units);
- the Gini split after Dagum into within, net between and overlap (transvariation);
- the change of MLD (and of Theil T) between two years after Mookherjee and Shorrocks.

Grouped (bracket) data enter through :func:`pseudo_units`, which rebuilds each district-year
on a fixed quantile grid from its Lorenz fit, so every decomposition sees units.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats.measures import parse_index

__all__ = [
    "DEFAULT_GRID",
    "DagumSplit",
    "GESplit",
    "PseudoUnits",
    "change",
    "dagum_split",
    "ge_index",
    "ge_split",
    "pseudo_units",
    "table",
]

DECOMPOSABLE = ("theil_t", "mld", "ge_2", "gini")

ALL = "(all)"

# Percentiles, with the top percentile cut ten times finer: the top cell carries most of the
# within-cell dispersion a pseudo-unit cannot keep (see tests/test_decompose.py for the error).
DEFAULT_GRID = np.unique(np.concatenate([np.linspace(0.0, 0.99, 100), np.linspace(0.99, 1.0, 11)]))


# --------------------------------------------------------------------------------------------
# errors


def parse_ge_alpha(index: str) -> float:
    """The GE parameter of an index key: ``mld`` -> 0, ``theil_t`` -> 1, ``ge_<alpha>``.

    Raises
    ------
    DataError
        If the key is not a GE index.
    """
    try:
        family, alpha = parse_index(str(index))
    except ValueError:
        family, alpha = "", None
    if family == "ge" and alpha is not None:
        return float(alpha)
    raise fail(
        f"'{index}' is not an index that decomposes into within and between parts.",
        "Use gini, theil_t, mld or ge_<alpha> (for example ge_2).",
    )


def _check_arrays(values: np.ndarray, weights: np.ndarray, alpha: float | None) -> None:
    if values.shape != weights.shape or values.ndim != 1:
        raise fail(
            f"incomes ({values.shape}) and weights ({weights.shape}) must be one-dimensional "
            "and of the same length.",
            "Give one weight per income.",
        )
    if values.size == 0:
        raise fail("there are no incomes to decompose.", "Check the year and the filters.")
    if not (np.all(np.isfinite(values)) and np.all(np.isfinite(weights))):
        raise fail("some incomes or weights are missing or infinite.", "Remove or fill them.")
    if np.any(weights < 0):
        raise fail("some weights are negative.", "Weights must be zero or positive.")
    if alpha is not None and alpha <= 0 and np.any(values <= 0):
        raise fail(
            f"GE({alpha:g}) (MLD for alpha = 0) needs every income to be positive; "
            "zero or negative incomes were found.",
            "Use theil_t, ge_2 or gini, or remove the zero incomes.",
            column="income",
        )
    if np.any(values < 0):
        raise fail(
            "negative incomes were found; these indices need incomes of zero or more.",
            "Remove or correct the negative incomes.",
            column="income",
        )


# --------------------------------------------------------------------------------------------
# generalised entropy family


def _ge_term(ratio: np.ndarray, share: np.ndarray, alpha: float) -> np.ndarray:
    """Contribution ``share * phi(ratio)`` of one member to its parent's GE(alpha)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        if alpha == 0:
            out = -share * np.log(ratio)
        elif alpha == 1:
            out = share * np.where(ratio > 0, ratio * np.log(np.where(ratio > 0, ratio, 1.0)), 0.0)
        else:
            out = share * (ratio**alpha - 1.0) / (alpha * (alpha - 1.0))
    return np.where(share > 0, out, 0.0)


def ge_index(values: np.ndarray, weights: np.ndarray | None = None, alpha: float = 1.0) -> float:
    """Generalised entropy index GE(alpha) of one weighted distribution.

    Parameters
    ----------
    values : ndarray, shape (n,)
        Incomes (> 0 when ``alpha <= 0``).
    weights : ndarray, shape (n,), optional
        Population weights; equal when omitted.
    alpha : float
        0 gives the mean log deviation, 1 Theil's T.

    Returns
    -------
    float

    References
    ----------
    Shorrocks, A. F. (1980). The class of additively decomposable inequality measures.
    *Econometrica* 48: 613-625.
    """
    y = np.asarray(values, dtype=float)
    w = np.ones_like(y) if weights is None else np.asarray(weights, dtype=float)
    _check_arrays(y, w, alpha)
    mean = np.dot(w, y) / w.sum()
    return float(_ge_term(y / mean, w / w.sum(), alpha).sum())


@dataclass(frozen=True)
class _Tree:
    """GE contributions of every node of a rooted hierarchy (roots = years, or one root)."""

    total: np.ndarray  # (n_roots,) direct GE of each root's units
    components: np.ndarray  # (n_levels + 1, n_roots): between at each level, then within
    node_root: tuple[np.ndarray, ...]  # per level: root of each node
    node_codes: tuple[np.ndarray, ...]  # per level: (n_nodes, level + 1) codes path
    between_nodes: tuple[np.ndarray, ...]  # per level: contribution of each node
    within_nodes: np.ndarray  # per finest node: w_g * GE_g


def _codes(labels: Any) -> tuple[np.ndarray, np.ndarray]:
    """Integer codes 0..k-1 of ``labels`` and the sorted distinct labels (hashing, O(n))."""
    codes, uniques = pd.factorize(np.asarray(labels), sort=True)
    if codes.size and codes.min() < 0:
        raise fail(
            f"{int((codes < 0).sum())} units have no group label.",
            "Give every unit a group (district, county) before decomposing.",
        )
    return codes.astype(np.int64), np.asarray(uniques)


def _nest(parent: np.ndarray, codes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Node id of each unit for (parent node, code) pairs, and each node's parent and code."""
    key = parent.astype(np.int64) * (int(codes.max()) + 1) + codes.astype(np.int64)
    inverse, uniq = _codes(key)
    width = int(codes.max()) + 1
    return inverse, np.stack([uniq // width, uniq % width], axis=1)


def _ge_tree(
    values: np.ndarray,
    weights: np.ndarray,
    roots: np.ndarray,
    level_codes: Sequence[np.ndarray],
    alpha: float,
) -> _Tree:
    """GE(alpha) of every root (a year, or the whole pool) split over nested levels at once.

    Every node's contribution is its parent's weight in the root times its own term in the
    parent's GE, so each level's contributions sum to that level's between part and the
    units' contributions to the within part: one pass of segment sums per level, all roots
    together (Shorrocks 1980).
    """
    n_roots = int(roots.max()) + 1
    wy = weights * values
    root_pop = np.bincount(roots, weights, n_roots)
    root_mean = np.bincount(roots, wy, n_roots) / root_pop
    total = np.bincount(
        roots, _ge_term(values / root_mean[roots], weights / root_pop[roots], alpha), n_roots
    )

    # Each node's weight in its root's total is P^(1-alpha) S^alpha = P * (mean/root mean)^alpha;
    # a child's contribution is its parent's weight times its own term in the parent's GE.
    parent_id, parent_pop = roots, root_pop
    parent_mean, parent_root = root_mean, np.arange(n_roots)
    parent_codes = np.arange(n_roots)[:, None]
    parent_weight = np.ones(n_roots)
    components, node_roots, node_codes, between_nodes = [], [], [], []
    for codes in level_codes:
        unit_node, pairs = _nest(parent_id, np.asarray(codes))
        n_nodes = len(pairs)
        pop = np.bincount(unit_node, weights, n_nodes)
        mean = np.bincount(unit_node, wy, n_nodes) / np.where(pop > 0, pop, 1.0)
        up = pairs[:, 0]
        contribution = parent_weight[up] * _ge_term(
            mean / parent_mean[up], pop / parent_pop[up], alpha
        )
        root = parent_root[up]
        components.append(np.bincount(root, contribution, n_roots))
        node_roots.append(root)
        node_codes.append(np.column_stack([parent_codes[up], pairs[:, 1]]))
        between_nodes.append(contribution)
        with np.errstate(divide="ignore", invalid="ignore"):
            weight = (pop / root_pop[root]) * (mean / root_mean[root]) ** alpha
        parent_id, parent_pop, parent_mean = unit_node, pop, mean
        parent_root, parent_codes, parent_weight = root, node_codes[-1], np.nan_to_num(weight)

    unit_terms = parent_weight[parent_id] * _ge_term(
        values / parent_mean[parent_id], weights / parent_pop[parent_id], alpha
    )
    within_nodes = np.bincount(parent_id, unit_terms, len(parent_pop))
    components.append(np.bincount(parent_root, within_nodes, n_roots))
    return _Tree(
        total=total,
        components=np.vstack(components),
        node_root=tuple(node_roots),
        node_codes=tuple(node_codes),
        between_nodes=tuple(between_nodes),
        within_nodes=within_nodes,
    )


@dataclass(frozen=True)
class GESplit:
    """Exact within/between split of a GE index over nested levels.

    ``total == sum(between) + within`` up to rounding. ``between[k]`` is the inequality
    between the groups of level ``k`` inside their parent groups (level 0 between the
    outermost groups); ``within`` is the inequality inside the finest groups.
    """

    alpha: float
    total: float
    between: tuple[float, ...]
    within: float
    between_groups: tuple[np.ndarray, ...] = field(repr=False)
    within_groups: np.ndarray = field(repr=False)
    group_codes: tuple[np.ndarray, ...] = field(repr=False)

    def components(self) -> np.ndarray:
        """Between parts, outermost level first, then the within part."""
        return np.array([*self.between, self.within])

    def shares(self) -> np.ndarray:
        """Each component's share of the total (NaN when the total is 0)."""
        return (
            self.components() / self.total
            if self.total != 0
            else np.full(len(self.between) + 1, np.nan)
        )


def ge_split(
    values: np.ndarray,
    weights: np.ndarray | None,
    level_codes: Sequence[np.ndarray],
    alpha: float = 1.0,
) -> GESplit:
    """Split GE(alpha) into between-group parts at nested levels and a within part.

    Parameters
    ----------
    values, weights : ndarray, shape (n,)
        Incomes and population weights (equal when ``weights`` is None).
    level_codes : list of ndarray, shape (n,) each
        Group codes of each unit, outermost level first (e.g. county, then district).
        Levels are nested by construction: a group at level k is a (parent, code) pair.
    alpha : float
        0 = MLD, 1 = Theil T, otherwise GE(alpha).

    Returns
    -------
    GESplit
        ``between_groups[k][g]`` is the contribution of group g of level k (its parent's
        weight times its own term), ``within_groups[g]`` is w_g * GE_g of finest group g
        with ``w_g = p_g^(1-alpha) s_g^alpha``; ``group_codes[k]`` gives the codes path
        (one column per level) of each group.

    References
    ----------
    Bourguignon, F. (1979). Decomposable income inequality measures. *Econometrica* 47:
    901-920.
    Shorrocks, A. F. (1980). The class of additively decomposable inequality measures.
    *Econometrica* 48: 613-625.
    """
    y = np.asarray(values, dtype=float)
    w = np.ones_like(y) if weights is None else np.asarray(weights, dtype=float)
    _check_arrays(y, w, alpha)
    codes = [_codes(c)[0] for c in level_codes]
    for k, c in enumerate(codes):
        if c.shape != y.shape:
            raise fail(
                f"level {k + 1} has {c.size} group codes for {y.size} incomes.",
                "Give one group code per income at every level.",
            )
    tree = _ge_tree(y, w, np.zeros(y.size, dtype=np.int64), codes, float(alpha))
    comps = tree.components[:, 0]
    return GESplit(
        alpha=float(alpha),
        total=float(tree.total[0]),
        between=tuple(float(c) for c in comps[:-1]),
        within=float(comps[-1]),
        between_groups=tree.between_nodes,
        within_groups=tree.within_nodes,
        group_codes=tuple(c[:, 1:] for c in tree.node_codes),
    )


# --------------------------------------------------------------------------------------------
# Gini after Dagum


@dataclass(frozen=True)
class DagumSplit:
    """Gini = within + net between + overlap (transvariation), after Dagum (1997).

    Arrays are indexed by group (sorted group labels in ``groups``). ``pair_gini[j, h]`` is
    G_jh (G_jj on the diagonal), ``pair_distance[j, h]`` is D_jh (0 on the diagonal).
    Per-group parts attribute each ordered pair (j, h) to j, the population side:
    ``between_groups[j] = sum_h G_jh p_j s_h D_jh``; they sum to ``between``.
    """

    total: float
    within: float
    between: float
    overlap: float
    groups: np.ndarray = field(repr=False)
    pop_share: np.ndarray = field(repr=False)
    income_share: np.ndarray = field(repr=False)
    mean: np.ndarray = field(repr=False)
    pair_gini: np.ndarray = field(repr=False)
    pair_distance: np.ndarray = field(repr=False)
    within_groups: np.ndarray = field(repr=False)
    between_groups: np.ndarray = field(repr=False)
    overlap_groups: np.ndarray = field(repr=False)

    def components(self) -> np.ndarray:
        """within, net between, overlap."""
        return np.array([self.within, self.between, self.overlap])

    def shares(self) -> np.ndarray:
        """Each component's share of the total (NaN when the total is 0)."""
        return self.components() / self.total if self.total != 0 else np.full(3, np.nan)


def _block_size(k: int) -> int:
    # balances n m / 2 in-block pairs against n k^2 / m for the block products (measured
    # best near m = 16 for k = 50 in benchmarks/dagum.py)
    return int(np.clip(k // 3, 2, 24))


# Units per chunk of the pair sums: the chunk's arrays and its k-column block sums stay in
# one core's cache, so each of the m offsets reads memory once.
_CHUNK_UNITS = 1 << 14
# OpenBLAS runs a product m x n x k <= 2^18 on the calling thread; bigger ones fan out to
# threads that stall when the other core is busy, so the block products are cut to this.
_SINGLE_THREAD_PRODUCT = 1 << 18
# Blocks per run in the exclusive running sum over blocks (see _pair_sums).
_RUN = 16


def _group_codes(groups: Any) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_codes` with a counting pass for small non-negative integer labels."""
    labels = np.asarray(groups)
    small_int = labels.dtype.kind == "i" or (labels.dtype.kind == "u" and labels.itemsize < 8)
    if small_int and labels.ndim == 1 and labels.size:
        low, high = int(labels.min()), int(labels.max())
        if low >= 0 and high < 4 * labels.size + 1024:
            present = np.bincount(labels, minlength=high + 1) > 0
            if present.all() and labels.dtype == np.int64:  # already 0..k-1
                return labels, np.arange(high + 1, dtype=labels.dtype)
            rank = np.cumsum(present) - 1
            return np.take(rank, labels), np.flatnonzero(present).astype(labels.dtype)
    return _codes(labels)


def _pooled_order(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The permutation that sorts non-negative ``values``, and the sorted values.

    A non-negative double's bit pattern, read as an integer, orders like the double; its
    low ``b`` bits are replaced by the unit's index (n <= 2^b), so a plain sort of integers
    (much faster than an argsort) carries the permutation. Values that agree in all but
    those low bits may come out of order; a stable sort of the nearly sorted result puts
    them right (timsort: linear on sorted runs).
    """
    n = values.size
    shift = max(int(n - 1).bit_length(), 1)
    ordered = np.add(values, 0.0)  # + 0.0 turns -0.0 into +0.0; the buffer is reused below
    bits = ordered.view(np.int64)
    bits >>= shift
    bits <<= shift
    key = np.arange(n, dtype=np.int64)
    key |= bits
    key.sort()
    key &= (1 << shift) - 1
    np.take(values, key, out=ordered)
    if np.any(ordered[1:] < ordered[:-1]):
        fix = np.argsort(ordered, kind="stable")
        key, ordered = np.take(key, fix), np.take(ordered, fix)
    return key, ordered


def _pair_sums(
    weighted: np.ndarray, weight: np.ndarray, group: np.ndarray, k: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Pair sums of the pooled units, sorted by income, for every pair of groups at once.

    ``weighted`` is w_i y_i, ``weight`` w_i and ``group`` the group code of each unit.

    Returns ``low[j, h] = sum w_q y_q w_r`` over pairs of units q below r with q in j and
    r in h, ``own[j] = sum w_i^2 y_i`` and ``level[j] = sum w_i y_i`` over the units of j.

    Blocks of m neighbours: pairs inside a block are summed directly (one segment sum per
    offset, n m / 2 pairs); pairs in different blocks add up to ``sum_b Ycum_b W_b'`` with
    per-block group sums W_b, Y_b of weight and weighted income and Ycum_b the exclusive
    running sum of Y over earlier blocks (matrix products). Work goes chunk by chunk so
    every array of a chunk stays in cache. Cost about n (m / 2 + k^2 / m), never n^2.
    """
    n, m = weighted.size, _block_size(k)
    chunks = -(-n // _CHUNK_UNITS)
    cols = -(-n // (chunks * m * _RUN)) * _RUN  # blocks per chunk, whole runs
    span = cols * m
    chunks = -(-n // span)  # rounding cols up may leave a chunk fewer
    rows = max(8, _SINGLE_THREAD_PRODUCT // (k * k))  # blocks per matrix product
    # Block b = s * _RUN + q gets the k cells from ((q * runs) + s) * k: each run position
    # q is one contiguous (runs, k) slab, so the running sum below is whole-slab adds.
    runs = cols // _RUN
    block = np.arange(cols)
    cell = (((block % _RUN) * runs + block // _RUN) * k)[:, None]
    pairs = np.zeros(k * k)
    cross = np.zeros((k, k))
    own = np.zeros(k)
    carry = np.zeros(k)  # sum of w y per group over the chunks done
    value = np.empty((m - 1) * cols)
    index = np.empty((m - 1) * cols, dtype=np.int64)
    for c in range(chunks):
        part = slice(c * span, min((c + 1) * span, n))
        w, v, g = weight[part], weighted[part], group[part]
        if w.size < span:  # pad the last chunk with zero weights, which change no sum
            w, v, g = np.zeros(span), np.zeros(span), np.zeros(span, dtype=group.dtype)
            size = part.stop - part.start
            w[:size], v[:size], g[:size] = weight[part], weighted[part], group[part]
        own += np.bincount(g, v * w, k)
        # block sums by group, then the exclusive running sum over earlier blocks
        slot = (cell + g.reshape(cols, m)).ravel()
        block_w = np.bincount(slot, w, cols * k).reshape(cols, k)
        block_y = np.bincount(slot, v, cols * k).reshape(cols, k)
        # exclusive running sum over blocks: a running sum over runs of blocks, then the
        # _RUN - 1 steps inside every run at once (numpy's cumsum is a slow scalar loop)
        slab_y = block_y.reshape(_RUN, runs, k)
        run_y = slab_y.sum(axis=0)
        earlier = np.empty_like(slab_y)
        np.cumsum(run_y, axis=0, out=earlier[0])
        earlier[0] -= run_y
        earlier[0] += carry
        for q in range(1, _RUN):
            np.add(earlier[q - 1], slab_y[q - 1], out=earlier[q])
        carry = earlier[0, -1] + run_y[-1]
        earlier = earlier.reshape(cols, k)
        for a in range(0, cols, rows):
            cross += earlier[a : a + rows].T @ block_w[a : a + rows]
        # in-block pairs: unit q of every block against unit q + d, one offset at a time
        w, v = (np.ascontiguousarray(x.reshape(cols, m).T) for x in (w, v))
        g = np.ascontiguousarray(g.reshape(cols, m).T, dtype=np.int64)
        gk = g * k
        for d in range(1, m):
            size = (m - d) * cols
            np.multiply(v[: m - d], w[d:], out=value[:size].reshape(m - d, cols))
            np.add(gk[: m - d], g[d:], out=index[:size].reshape(m - d, cols))
            pairs += np.bincount(index[:size], value[:size], k * k)
    return pairs.reshape(k, k) + cross, own, carry


def dagum_split(values: np.ndarray, weights: np.ndarray | None, groups: np.ndarray) -> DagumSplit:
    """Dagum's decomposition of the Gini into within, net between and overlap parts.

    One sort of the pooled incomes, then block sums over the sorted array that accumulate
    sum w_i w_r min(y_i, y_r) for every pair of groups at once (cost about
    n (m/2 + k^2/m) with blocks of m = k/3 units, never pairs of units). Since
    |a - b| = a + b - 2 min(a, b) and the signed sums of y_r - y_i have a closed form, these
    give every G_jh and both directions d_jh, p_jh.

    Parameters
    ----------
    values, weights : ndarray, shape (n,)
        Incomes (>= 0) and population weights (equal when ``weights`` is None).
    groups : ndarray, shape (n,)
        Group label of each income.

    Returns
    -------
    DagumSplit

    Notes
    -----
    With Delta_jh the mean absolute difference between a unit of j and one of h,
    G_jh = Delta_jh / (mu_j + mu_h), G_jj = Delta_jj / (2 mu_j),
    D_jh = (d_jh - p_jh) / (d_jh + p_jh) where d_jh = E(Y_j - Y_h)+ and
    p_jh = E(Y_h - Y_j)+ for mu_j >= mu_h; the Gini is
    sum_j G_jj p_j s_j + sum_{j != h} G_jh p_j s_h [D_jh + (1 - D_jh)].

    References
    ----------
    Dagum, C. (1997). A new approach to the decomposition of the Gini income inequality
    ratio. *Empirical Economics* 22: 515-531.
    """
    y0 = np.asarray(values, dtype=float)
    w0 = np.ones_like(y0) if weights is None else np.asarray(weights, dtype=float)
    _check_arrays(y0, w0, None)
    g0, labels = _group_codes(groups)
    if g0.shape != y0.shape:
        raise fail(
            f"{g0.size} group labels were given for {y0.size} incomes.",
            "Give one group label per income.",
        )
    k = labels.size
    pop = np.bincount(g0, w0, k)
    income = np.bincount(g0, w0 * y0, k)
    if np.any(pop <= 0):
        raise fail("a group has zero total weight.", "Drop empty groups or fix the weights.")
    total_pop, total_income = pop.sum(), income.sum()
    if total_income <= 0:
        raise fail("all incomes are zero; the Gini is undefined.", "Check the income column.")
    mean = income / pop
    p = pop / total_pop
    s = income / total_income

    # One sort. Few arrays of n live at once: fresh memory costs page faults on every call.
    # np.take gathers faster than indexing; narrow codes make the gather's source small.
    codes = g0.astype(np.int32) if k < 2**31 else g0
    del g0
    order, y = _pooled_order(y0)
    w_sorted = np.take(w0, order)
    g_sorted = np.take(codes, order)
    del order, codes
    # incomes relative to the median: the pair sums then add numbers of the size of the
    # spread, not of the level, which keeps rounding small
    y -= y[y0.size // 2]
    wy = w_sorted * y
    del y

    # sum of w_i w_r min(y_i, y_r) over the pairs of groups j, h (each unit with itself too):
    # below-above pairs both ways round, plus each unit's own w^2 y
    low, own, level = _pair_sums(wy, w_sorted, g_sorted, k)
    del g_sorted
    low_sum = low + low.T
    low_sum[np.diag_indices(k)] += own
    # |a - b| = a + b - 2 min(a, b); the signed sum of y_r - y_i (i in j, r in h) is
    # W_j Y_h - Y_j W_h exactly, and the excess of h over j is half absolute plus signed
    signed = pop[:, None] * level[None, :] - level[:, None] * pop[None, :]
    spread = level[:, None] * pop[None, :] + pop[:, None] * level[None, :] - 2.0 * low_sum
    abs_sum = np.maximum(spread, np.abs(signed))  # |signed| <= abs_sum; rounding may cross
    excess = 0.5 * (abs_sum + signed)  # excess[j, h]: h above j
    pair_mad = abs_sum / np.outer(pop, pop)
    mean_sum = mean[:, None] + mean[None, :]
    with np.errstate(divide="ignore", invalid="ignore"):
        pair_gini = np.where(mean_sum > 0, pair_mad / mean_sum, 0.0)
        # d_jh - p_jh over d_jh + p_jh, oriented so the richer group is j (Dagum's D_jh >= 0)
        richer_over = np.where(mean[:, None] >= mean[None, :], excess.T, excess)
        poorer_over = np.where(mean[:, None] >= mean[None, :], excess, excess.T)
        distance = np.where(abs_sum > 0, (richer_over - poorer_over) / abs_sum, 0.0)
    np.fill_diagonal(distance, 0.0)

    weight = np.outer(p, s)
    off = ~np.eye(k, dtype=bool)
    within_groups = np.diag(pair_gini) * p * s
    between_groups = np.where(off, pair_gini * weight * distance, 0.0).sum(axis=1)
    overlap_groups = np.where(off, pair_gini * weight * (1.0 - distance), 0.0).sum(axis=1)

    # the total straight from the pooled sorted incomes, independent of the pair sums
    # (shifting incomes by the centre changes nothing: sum_i w_i (2 c_i - w_i - W) = 0);
    # einsum runs its own loops, not a BLAS dot that may wait on a thread of a busy core
    below = np.einsum("i,i->", wy, np.cumsum(w_sorted))
    twice_below = 2.0 * below - np.einsum("i,i->", wy, w_sorted)
    total = float((twice_below - total_pop * wy.sum()) / (total_pop * total_income))
    return DagumSplit(
        total=total,
        within=float(within_groups.sum()),
        between=float(between_groups.sum()),
        overlap=float(overlap_groups.sum()),
        groups=labels,
        pop_share=p,
        income_share=s,
        mean=mean,
        pair_gini=pair_gini,
        pair_distance=distance,
        within_groups=within_groups,
        between_groups=between_groups,
        overlap_groups=overlap_groups,
    )


# --------------------------------------------------------------------------------------------
# grouped data -> pseudo-units


@dataclass(frozen=True)
class PseudoUnits:
    """District-years rebuilt on a quantile grid: one pseudo-unit per grid cell.

    ``income[r, m]`` is the mean income of cell m of row r (mean * dL/dp), ``weight[r, m]``
    is population * dp; ``keys`` names each row (the fits' keys, ``region, year`` for a
    panel); rows whose fit was invalid or whose mean is missing are left out and listed in
    ``dropped`` (the same keys and a ``reason``).
    """

    keys: pd.DataFrame
    income: np.ndarray
    weight: np.ndarray
    grid: np.ndarray
    dropped: pd.DataFrame


def pseudo_units(
    fits: Any,
    population: np.ndarray,
    mean_income: np.ndarray,
    grid: np.ndarray = DEFAULT_GRID,
) -> PseudoUnits:
    """Rebuild each district-year's distribution from its Lorenz fit on a fixed grid.

    Cell m spans population shares ``grid[m] .. grid[m+1]``; its pseudo-unit has weight
    ``population * (grid[m+1] - grid[m])`` and income
    ``mean * (L(grid[m+1]) - L(grid[m])) / (grid[m+1] - grid[m])``, the cell's mean income.
    Since the cells tile [0, 1] and L(0) = 0, L(1) = 1, each district's mean and population
    are kept exactly. Inequality inside a cell is lost, so pooled indices come out slightly
    low. On a lognormal sample (sigma = 0.7) rebuilt from its own Lorenz curve, the default
    grid (percentiles, the top one cut in ten) loses 0.14 % of the Theil and 0.02 % of the
    Gini (an even 100-cell grid: 0.7 % and 0.03 %); from decile shares through the ``auto``
    fit the whole chain is within 0.2 % (``tests/test_decompose.py``). The fit, not the
    grid, is the larger error.

    Parameters
    ----------
    fits : LorenzFits
        From ``explorer.stats.lorenz.fit_panel``: ``keys``, ``valid``, ``evaluate(p)``.
    population, mean_income : ndarray, shape (n_rows,)
        Per row of ``fits.keys``. A NaN population counts the row with population 1
        (equal weights); a NaN mean drops the row.
    grid : ndarray
        Increasing population shares from 0 to 1.

    Returns
    -------
    PseudoUnits

    References
    ----------
    Kakwani, N. C. & Podder, N. (1976). Efficient estimation of the Lorenz curve and
    associated inequality measures from grouped observations. *Econometrica* 44: 137-148.
    """
    grid = np.asarray(grid, dtype=float)
    if (
        grid.ndim != 1
        or grid.size < 2
        or grid[0] != 0
        or grid[-1] != 1
        or np.any(np.diff(grid) <= 0)
    ):
        raise fail(
            "the quantile grid must increase strictly from 0 to 1.",
            "Pass a grid such as numpy.linspace(0, 1, 101).",
        )
    keys = fits.keys.reset_index(drop=True)
    population = np.asarray(population, dtype=float)
    mean_income = np.asarray(mean_income, dtype=float)
    valid = np.asarray(fits.valid, dtype=bool)
    curve = np.asarray(fits.evaluate(grid), dtype=float)
    curve = curve - curve[:, :1]  # L(0) = 0 exactly, so the cells' masses sum to 1
    reason = np.where(~valid, "the Lorenz fit is not valid", "")
    reason = np.where(valid & ~np.isfinite(mean_income), "no mean income", reason)
    reason = np.where(
        (reason == "") & ~np.all(np.isfinite(curve), axis=1),
        "the Lorenz curve is undefined",
        reason,
    )
    keep = reason == ""
    width = np.diff(grid)
    mass = np.diff(curve[keep], axis=1)
    income = mean_income[keep, None] * mass / width
    pop = np.where(np.isfinite(population[keep]), population[keep], 1.0)
    weight = pop[:, None] * width[None, :]
    dropped = keys.loc[~keep].assign(reason=reason[~keep])
    return PseudoUnits(
        keys=keys.loc[keep].reset_index(drop=True),
        income=income,
        weight=weight,
        grid=grid,
        dropped=dropped.reset_index(drop=True),
    )


# --------------------------------------------------------------------------------------------
# panels -> units


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
    raise fail(f"unknown panel kind '{panel.kind}'.", "Load the panel through explorer.data.io.")


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


# --------------------------------------------------------------------------------------------
# tidy tables


def _ge_table(
    units: _Units, labels: list[np.ndarray], names: list[str], alpha: float
) -> pd.DataFrame:
    years, root = _years(units)
    factor = [pd.factorize(lab, sort=True) for lab in labels]
    codes = [f[0] for f in factor]
    _check_arrays(units.income, units.weight, alpha)
    tree = _ge_tree(units.income, units.weight, root, codes, alpha)
    frames = [
        pd.DataFrame(
            {
                "year": years,
                "level": "total",
                "group": ALL,
                "component": "total",
                "value": tree.total,
            }
        )
    ]
    for k, name in enumerate(names):
        frames.append(
            pd.DataFrame(
                {
                    "year": years,
                    "level": name,
                    "group": ALL,
                    "component": "between",
                    "value": tree.components[k],
                }
            )
        )
        frames.append(
            pd.DataFrame(
                {
                    "year": years[tree.node_root[k]],
                    "level": name,
                    "group": np.asarray(factor[k][1], dtype=object)[tree.node_codes[k][:, -1]],
                    "component": "between",
                    "value": tree.between_nodes[k],
                }
            )
        )
    if units.has_within:
        finest = names[-1]
        frames.append(
            pd.DataFrame(
                {
                    "year": years,
                    "level": finest,
                    "group": ALL,
                    "component": "within",
                    "value": tree.components[-1],
                }
            )
        )
        frames.append(
            pd.DataFrame(
                {
                    "year": years[tree.node_root[-1]],
                    "level": finest,
                    "group": np.asarray(factor[-1][1], dtype=object)[tree.node_codes[-1][:, -1]],
                    "component": "within",
                    "value": tree.within_nodes,
                }
            )
        )
    out = pd.concat(frames, ignore_index=True)
    totals = pd.Series(tree.total, index=years)
    with np.errstate(divide="ignore", invalid="ignore"):
        out["share"] = out["value"].to_numpy() / totals.reindex(out["year"]).to_numpy()
    return out


def _gini_table(units: _Units, labels: np.ndarray, name: str) -> pd.DataFrame:
    years, root = _years(units)
    frames = []
    for r, year in enumerate(years):  # one call per year; each call is vectorised over groups
        rows = root == r
        split = dagum_split(units.income[rows], units.weight[rows], labels[rows])
        group = np.asarray(split.groups, dtype=object)
        parts = [("total", "total", ALL, split.total)]
        parts += [
            (name, c, ALL, v)
            for c, v in zip(("within", "between", "overlap"), split.components(), strict=True)
        ]
        frames.append(pd.DataFrame(parts, columns=["level", "component", "group", "value"]))
        for comp, values in (
            ("within", split.within_groups),
            ("between", split.between_groups),
            ("overlap", split.overlap_groups),
        ):
            frames.append(
                pd.DataFrame({"level": name, "component": comp, "group": group, "value": values})
            )
        frames[-4:] = [
            f.assign(year=year, share=f["value"] / split.total if split.total else np.nan)
            for f in frames[-4:]
        ]
    out = pd.concat(frames, ignore_index=True)
    return out[["year", "level", "group", "component", "value", "share"]]


def table(
    panel: Any, by: Sequence[str] = ("county",), index: str = "theil_t", method: str = "auto"
) -> pd.DataFrame:
    """Decomposition of one index for every year of a panel, as a tidy table.

    Parameters
    ----------
    panel : Panel
        Units are used directly; grouped data go through :func:`pseudo_units` with the
        Lorenz ``method``; a means-only panel treats each district as one unit at its mean,
        weighted by population when given, so only between-district parts exist.
    by : sequence of str
        Higher levels, outermost first (columns of ``panel.hierarchy``). Districts
        (``region``) are always the finest level. For the Gini, at most one level: Dagum's
        split is between the groups of that level (of districts when ``by`` is empty).
    index : str
        ``theil_t``, ``mld``, ``ge_<alpha>`` or ``gini``.
    method : str
        Lorenz method for grouped data.

    Returns
    -------
    DataFrame
        Columns ``year, level, group, component, value, share``. Rows with group
        ``"(all)"`` other than the total partition the total: for GE indices, ``between``
        at each level in ``by`` (between its groups inside their parents), ``between`` at
        ``region`` (districts inside their finest group) and ``within`` at ``region``
        (inside districts); for the Gini, ``within``, ``between`` and ``overlap`` at the
        chosen level. Other rows are per-group contributions. District-years left out
        (invalid Lorenz fits, missing means) are listed in ``attrs["excluded"]``.

    References
    ----------
    Shorrocks, A. F. (1980). The class of additively decomposable inequality measures.
    *Econometrica* 48: 613-625.
    Dagum, C. (1997). A new approach to the decomposition of the Gini income inequality
    ratio. *Empirical Economics* 22: 515-531.
    """
    by = tuple(by)
    key = str(index).strip().lower()
    units = _panel_units(panel, method)
    if units.income.size == 0:
        raise fail("the panel has no district-years left to decompose.", "Check the data.")
    labels = _level_labels(panel, by, units.region)
    if key == "gini":
        if len(by) > 1:
            raise fail(
                "the Gini splits (after Dagum) one level at a time; several levels were asked.",
                "Choose one level, or a GE index (theil_t, mld) for a nested split.",
            )
        if units.has_within or by:
            group = labels[0] if by else units.region.astype(str)
            out = _gini_table(units, group, by[0] if by else "region")
        else:
            raise fail(
                "a means-only panel has one value per district, so there is nothing to split "
                "the between-district Gini into.",
                "Choose a higher level (for example county) to split by.",
            )
    else:
        alpha = parse_ge_alpha(key)
        out = _ge_table(units, [*labels, units.region.astype(str)], [*by, "region"], alpha)
    out["year"] = out["year"].astype(np.int64)
    out.attrs["excluded"] = units.dropped
    return out.reset_index(drop=True)


# --------------------------------------------------------------------------------------------
# change over time


_CHANGE_COMPONENTS = ("within", "population_within", "population_between", "relative_income")


def _group_stats(units: _Units, rows: np.ndarray, codes: np.ndarray, n: int, alpha: float):
    y, w, g = units.income[rows], units.weight[rows], codes[rows]
    pop = np.bincount(g, w, n)
    inc = np.bincount(g, w * y, n)
    if np.any(pop <= 0):
        return None
    mean = inc / pop
    inside = np.bincount(g, _ge_term(y / mean[g], w / pop[g], alpha), n)
    share = pop / pop.sum()
    total = float(_ge_term(y / (inc.sum() / pop.sum()), w / pop.sum(), alpha).sum())
    return share, mean, mean / (inc.sum() / pop.sum()), inside, total


def change(
    panel: Any,
    by: Sequence[str] = ("county",),
    index: str = "mld",
    year_from: int | None = None,
    year_to: int | None = None,
    method: str = "auto",
) -> pd.DataFrame:
    """Decompose the change of MLD (or Theil T) between two years by groups.

    Groups are the finest level in ``by`` (districts when ``by`` is empty). With bars for
    the average of the two years, p_k population shares, I_k the groups' own index,
    lambda_k = mu_k / mu and theta_k = p_k lambda_k, the MLD terms are

    - ``within``: sum p̄_k dI_k (change of inequality inside groups);
    - ``population_within``: sum Ī_k dp_k (population shift, within part);
    - ``population_between``: sum (λ̄_k - ln λ̄_k) dp_k (population shift, between part);
    - ``relative_income``: sum (θ̄_k - p̄_k) d ln mu_k (change of the groups' relative incomes);
    - ``residual``: the exact change minus the sum of the four (the approximation error).

    For Theil T, by the same steps on T = sum s_k T_k + sum p_k lambda_k ln lambda_k:
    ``within`` sum s̄_k dT_k, ``population_within`` sum T̄_k λ̄_k dp_k,
    ``population_between`` sum λ̄_k ln λ̄_k dp_k, ``relative_income``
    sum p̄_k (T̄_k + ln λ̄_k + 1) dλ_k. This Theil form is our analogue, not the paper's.

    Returns
    -------
    DataFrame
        Columns ``year, level, group, component, value, share`` with ``year`` the string
        ``"<from>-<to>"``; ``total`` is the exact change, ``share`` each term's share of it;
        per-group rows give each group's part of the four approximate terms.

    References
    ----------
    Mookherjee, D. & Shorrocks, A. F. (1982). A decomposition analysis of the trend in UK
    income inequality. *Economic Journal* 92: 886-902.
    """
    key = str(index).strip().lower()
    if key not in ("mld", "theil_t"):
        raise fail(
            f"the change over time is split for mld and theil_t only, not '{index}'.",
            "Choose mld or theil_t.",
        )
    alpha = 0.0 if key == "mld" else 1.0
    by = tuple(by)
    units = _panel_units(panel, method)
    _check_arrays(units.income, units.weight, alpha)
    years = np.unique(units.year)
    year_from = int(years[0]) if year_from is None else int(year_from)
    year_to = int(years[-1]) if year_to is None else int(year_to)
    for y in (year_from, year_to):
        if y not in years:
            raise fail(
                f"the panel has no data for {y}.",
                f"Choose years from {years[0]} to {years[-1]}.",
                column="year",
            )
    if by:
        labels = _level_labels(panel, by, units.region)
        name = by[-1]
        group = (
            labels[-1]
            if len(labels) == 1
            else np.array(["/".join(t) for t in zip(*labels, strict=True)], dtype=object)
        )
    else:
        name, group = "region", units.region.astype(str)
    codes, uniq = pd.factorize(group, sort=True)
    n = len(uniq)
    before = _group_stats(units, units.year == year_from, codes, n, alpha)
    after = _group_stats(units, units.year == year_to, codes, n, alpha)
    if before is None or after is None:
        raise fail(
            f"some {name} groups have no data in {year_from} or {year_to}.",
            "Compare years in which every group is present.",
            column=name,
        )
    (p0, mu0, lam0, i0, t0), (p1, mu1, lam1, i1, t1) = before, after
    pb, ib, lb = (p0 + p1) / 2, (i0 + i1) / 2, (lam0 + lam1) / 2
    dp = p1 - p0
    if alpha == 0:
        theta = (p0 * lam0 + p1 * lam1) / 2
        terms = {
            "within": pb * (i1 - i0),
            "population_within": ib * dp,
            "population_between": (lb - np.log(lb)) * dp,
            "relative_income": (theta - pb) * (np.log(mu1) - np.log(mu0)),
        }
    else:
        sb = (p0 * lam0 + p1 * lam1) / 2
        terms = {
            "within": sb * (i1 - i0),
            "population_within": ib * lb * dp,
            "population_between": lb * np.log(lb) * dp,
            "relative_income": pb * (ib + np.log(lb) + 1.0) * (lam1 - lam0),
        }
    exact = t1 - t0
    approx = sum(float(v.sum()) for v in terms.values())
    label = f"{year_from}-{year_to}"
    summary = pd.DataFrame(
        {
            "level": ["total", *[name] * (len(_CHANGE_COMPONENTS) + 1)],
            "group": ALL,
            "component": ["total", *_CHANGE_COMPONENTS, "residual"],
            "value": [exact, *(float(terms[c].sum()) for c in _CHANGE_COMPONENTS), exact - approx],
        }
    )
    per_group = pd.DataFrame(
        {
            "level": name,
            "group": np.tile(np.asarray(uniq, dtype=object).astype(str), len(_CHANGE_COMPONENTS)),
            "component": np.repeat(_CHANGE_COMPONENTS, n),
            "value": np.concatenate([terms[c] for c in _CHANGE_COMPONENTS]),
        }
    )
    out = pd.concat([summary, per_group], ignore_index=True)
    out.insert(0, "year", label)
    out["share"] = out["value"] / exact if exact != 0 else math.nan
    out.attrs["excluded"] = units.dropped
    return out

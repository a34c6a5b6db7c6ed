"""The Gini split after Dagum into within, net between and overlap (transvariation).

References
----------
Dagum, C. (1997). A new approach to the decomposition of the Gini income inequality ratio.
*Empirical Economics* 22: 515-531.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from explorer.data.model import fail
from explorer.stats.decomposition.checks import _check_arrays, _codes

__all__ = ["DagumSplit", "dagum_split"]


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
    codes, labels, pop, income = _group_totals(y0, w0, groups)
    k = labels.size
    total_pop, total_income = pop.sum(), income.sum()
    mean = income / pop
    p = pop / total_pop
    s = income / total_income

    # One sort. Few arrays of n live at once: fresh memory costs page faults on every call.
    # np.take gathers faster than indexing; narrow codes make the gather's source small.
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
    pair_gini, distance = _pair_terms(low, own, level, pop, mean)

    weight = np.outer(p, s)
    off = ~np.eye(k, dtype=bool)
    within_groups = np.diag(pair_gini) * p * s
    between_groups = np.where(off, pair_gini * weight * distance, 0.0).sum(axis=1)
    overlap_groups = np.where(off, pair_gini * weight * (1.0 - distance), 0.0).sum(axis=1)
    total = _pooled_gini(wy, w_sorted, total_pop, total_income)
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


def _group_totals(
    values: np.ndarray, weights: np.ndarray, groups: Any
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Checked group codes (narrowed to int32 where they fit), labels, weights and incomes."""
    _check_arrays(values, weights, None)
    codes, labels = _group_codes(groups)
    if codes.shape != values.shape:
        raise fail(
            f"{codes.size} group labels were given for {values.size} incomes.",
            "Give one group label per income.",
        )
    k = labels.size
    pop = np.bincount(codes, weights, k)
    income = np.bincount(codes, weights * values, k)
    if np.any(pop <= 0):
        raise fail("a group has zero total weight.", "Drop empty groups or fix the weights.")
    if income.sum() <= 0:
        raise fail("all incomes are zero; the Gini is undefined.", "Check the income column.")
    # the wide codes are freed on return: only the narrow copy lives through the sort
    return (codes.astype(np.int32) if k < 2**31 else codes), labels, pop, income


def _pair_terms(
    low: np.ndarray, own: np.ndarray, level: np.ndarray, pop: np.ndarray, mean: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Dagum's G_jh and D_jh of every pair of groups from the pair sums of :func:`_pair_sums`."""
    low_sum = low + low.T
    low_sum[np.diag_indices(pop.size)] += own
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
    return pair_gini, distance


def _pooled_gini(
    wy: np.ndarray, w_sorted: np.ndarray, total_pop: float, total_income: float
) -> float:
    """The Gini straight from the pooled sorted incomes, independent of the pair sums.

    Shifting incomes by the centre changes nothing: sum_i w_i (2 c_i - w_i - W) = 0.
    """
    # einsum runs its own loops, not a BLAS dot that may wait on a thread of a busy core
    below = np.einsum("i,i->", wy, np.cumsum(w_sorted))
    twice_below = 2.0 * below - np.einsum("i,i->", wy, w_sorted)
    return float((twice_below - total_pop * wy.sum()) / (total_pop * total_income))

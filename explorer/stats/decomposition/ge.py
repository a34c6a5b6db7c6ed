"""The generalised entropy family (Theil T, MLD, GE(alpha)) split exactly over nested levels.

References
----------
Shorrocks, A. F. (1980). The class of additively decomposable inequality measures.
*Econometrica* 48: 613-625.
Bourguignon, F. (1979). Decomposable income inequality measures. *Econometrica* 47: 901-920.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from explorer.data.model import fail
from explorer.stats.decomposition.checks import _check_arrays, _codes

__all__ = ["GESplit", "ge_index", "ge_split"]


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

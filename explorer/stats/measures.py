"""Inequality indices on weighted units, for many groups at once after one sort.

Units (incomes with weights) are sorted once by (group, income); every index of every
group then comes from cumulative sums and segment reductions over that one order. The
same engine serves grouped data: bracket means as values and bracket population shares
as weights give the indices of the linearly interpolated Lorenz curve.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike

from explorer.data.model import DataError, Problem, fail

__all__ = [
    "STANDARD_INDICES",
    "IndexValues",
    "SortedUnits",
    "compute",
    "index_name",
    "parse_index",
    "replicate_values",
    "sort_units",
    "weighted",
]

#: Every index family at its usual parameters; the default of :func:`compute`.
STANDARD_INDICES: tuple[str, ...] = (
    "gini",
    "theil_t",
    "mld",
    "ge_2",
    "atkinson_0.5",
    "atkinson_1",
    "atkinson_2",
    "cv",
    "palma",
    "s80_s20",
    "top10_share",
    "bottom40_share",
)

_PLAIN = ("gini", "cv", "palma", "s80_s20", "top10_share", "bottom40_share")
_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)"
_PARAM_KEY = re.compile(rf"^(ge|atkinson)_({_NUMBER})$")
_VALID_KEYS = (
    "gini, theil_t, mld, ge_<alpha> (any real alpha, e.g. ge_2, ge_0.5, ge_-1), "
    "atkinson_<epsilon> (epsilon >= 0, e.g. atkinson_0.5, atkinson_1), cv, palma, "
    "s80_s20, top10_share, bottom40_share"
)
# Lorenz ordinates the quantile-share indices read.
_SHARE_POINTS = {
    "palma": (0.4, 0.9),
    "s80_s20": (0.2, 0.8),
    "top10_share": (0.9,),
    "bottom40_share": (0.4,),
}


def parse_index(key: str) -> tuple[str, float | None]:
    """Split an index key into its family and parameter.

    Parameters
    ----------
    key : str
        One of ``gini, theil_t, mld, ge_<alpha>, atkinson_<epsilon>, cv, palma, s80_s20,
        top10_share, bottom40_share``.

    Returns
    -------
    family : str
        ``"gini"``, ``"ge"``, ``"atkinson"``, ``"cv"``, ``"palma"``, ``"s80_s20"``,
        ``"top10_share"`` or ``"bottom40_share"``. Theil's T is ``("ge", 1.0)`` and the
        mean log deviation ``("ge", 0.0)``: the limits of the generalised entropy family.
    param : float or None
        ``alpha`` for ``ge``, ``epsilon`` for ``atkinson``, otherwise None.

    Raises
    ------
    ValueError
        For an unknown key or a negative Atkinson parameter; the message lists the valid
        keys.

    Examples
    --------
    >>> parse_index("ge_-1")
    ('ge', -1.0)
    >>> parse_index("theil_t")
    ('ge', 1.0)
    """
    if not isinstance(key, str):
        raise ValueError(f"index key must be text, got {key!r}; valid keys: {_VALID_KEYS}")
    text = key.strip().lower()
    if text in _PLAIN:
        return text, None
    if text == "theil_t":
        return "ge", 1.0
    if text == "mld":
        return "ge", 0.0
    match = _PARAM_KEY.match(text)
    if match is None:
        raise ValueError(f"unknown inequality index {key!r}; valid keys: {_VALID_KEYS}")
    family, param = match.group(1), float(match.group(2))
    if family == "atkinson" and param < 0:
        raise ValueError(
            f"Atkinson index {key!r} needs epsilon >= 0 (inequality aversion); "
            f"valid keys: {_VALID_KEYS}"
        )
    return family, param + 0.0  # turn -0.0 into 0.0


def index_name(key: str) -> str:
    """Human-readable name of an index key, as used in notes (e.g. ``"GE(2)"``).

    Parameters
    ----------
    key : str
        An index key such as ``gini``, ``ge_2`` or ``atkinson_0.5``.

    Returns
    -------
    str
    """
    family, param = parse_index(key)
    if family == "ge":
        return {0.0: "MLD", 1.0: "Theil T"}.get(param, f"GE({param:g})")
    if family == "atkinson":
        return f"Atkinson({param:g})"
    return {
        "gini": "Gini",
        "cv": "CV",
        "palma": "Palma ratio",
        "s80_s20": "S80/S20",
        "top10_share": "top 10% share",
        "bottom40_share": "bottom 40% share",
    }[family]


@dataclass(frozen=True, eq=False)
class SortedUnits:
    """Units sorted by (group, income), ready for segment reductions.

    Attributes
    ----------
    values, weights : ndarray of float, shape (n,)
        Incomes and weights in sorted order (ascending income within each group).
    codes : ndarray of int64, shape (n,)
        Group code of each unit, non-decreasing; code ``g`` is ``labels[g]``.
    starts : ndarray of int64, shape (n_groups,)
        Position of each group's first unit.
    labels : ndarray or DataFrame
        The original group label of each code, in code order (a DataFrame with one row
        per group when the groups were given as several key columns).
    order : ndarray of int64, shape (n,)
        Input positions in sorted order: ``values == input_values[order]``.
    """

    values: np.ndarray
    weights: np.ndarray
    codes: np.ndarray
    starts: np.ndarray
    labels: np.ndarray | pd.DataFrame
    order: np.ndarray

    @property
    def n_groups(self) -> int:
        """Number of groups."""
        return len(self.starts)

    @property
    def sizes(self) -> np.ndarray:
        """Number of units in each group (zero weights included)."""
        return np.diff(np.append(self.starts, len(self.values)))


@dataclass(frozen=True, eq=False)
class IndexValues:
    """One index for every group.

    Attributes
    ----------
    value : ndarray of float, shape (n_groups,)
        The index per group; NaN where it is undefined.
    note : ndarray of object (str), shape (n_groups,)
        ``""`` when the value is fine, otherwise the reason it is missing or needs care
        (e.g. ``"MLD undefined: 3 zero incomes"``).
    """

    value: np.ndarray
    note: np.ndarray


def _positions(mask: np.ndarray) -> str:
    where = np.flatnonzero(mask)
    shown = ", ".join(str(i + 1) for i in where[:5])
    more = f" and {len(where) - 5} more" if len(where) > 5 else ""
    return f"record{'s' if len(where) > 1 else ''} {shown}{more} (counting from 1)"


def _as_float(data, column: str) -> np.ndarray:
    try:
        array = np.asarray(data, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise fail(
            f"{column} must be numbers; found a value that is not ({exc}).",
            f"make every {column} a plain number (no units, no thousands separators).",
            column=column,
        ) from None
    if array.ndim != 1:
        raise fail(
            f"{column} must be one column of numbers, got an array of shape {array.shape}.",
            f"pass a single {column} column.",
            column=column,
        )
    return array


def _group_codes(groups, n: int) -> tuple[np.ndarray, np.ndarray | pd.DataFrame]:
    if isinstance(groups, pd.DataFrame):
        if len(groups) != n:
            raise fail(
                f"group columns have {len(groups)} rows but income has {n}.",
                "pass group columns from the same table as the incomes.",
            )
        missing = groups.isna().any(axis=1).to_numpy()
        if missing.any():
            raise fail(
                f"group label missing in {_positions(missing)}.",
                "fill in the district (and year) of every record.",
                column=", ".join(map(str, groups.columns)),
            )
        codes, uniques = pd.MultiIndex.from_frame(groups).factorize(sort=True)
        labels = uniques.to_frame(index=False)
        labels.columns = groups.columns
        return codes.astype(np.int64), labels
    labels = groups.to_numpy() if isinstance(groups, pd.Series | pd.Index) else np.asarray(groups)
    if labels.ndim != 1 or len(labels) != n:
        raise fail(
            f"groups must be one label per income ({n}), got shape {np.shape(labels)}.",
            "pass one group label for each record.",
            column="group",
        )
    codes, uniques = pd.factorize(labels, sort=True)
    if (codes < 0).any():
        raise fail(
            f"group label missing in {_positions(codes < 0)}.",
            "fill in the group (district) of every record.",
            column="group",
        )
    return codes.astype(np.int64), np.asarray(uniques)


def _checked_units(values: ArrayLike, weights: ArrayLike | None) -> tuple[np.ndarray, np.ndarray]:
    """Incomes and weights as float arrays, every bad record named in one error."""
    income = _as_float(values, "income")
    n = len(income)
    weight = np.ones(n) if weights is None else _as_float(weights, "weight")
    if len(weight) != n:
        raise fail(
            f"weight has {len(weight)} entries but income has {n}.",
            "give one weight per income, or none.",
            column="weight",
        )
    checks = (
        (
            ~np.isfinite(income),
            "income",
            "income is missing or not finite",
            "fill in or drop those records.",
        ),
        (
            ~np.isfinite(weight) | (weight < 0),
            "weight",
            "weight is negative, missing or not finite",
            "weights are population counts or shares: use finite numbers >= 0.",
        ),
    )
    problems = [
        Problem(f"{what} in {_positions(bad)}.", fix, column=column)
        for bad, column, what, fix in checks
        if bad.any()
    ]
    if problems:
        raise DataError(problems)
    return income, weight


def sort_units(
    values: ArrayLike,
    weights: ArrayLike | None = None,
    groups: ArrayLike | pd.DataFrame | None = None,
) -> SortedUnits:
    """Sort units by (group, income) with one ``np.lexsort``.

    Parameters
    ----------
    values : array_like, shape (n,)
        Incomes. Finite; zeros and negatives are allowed (indices that cannot take them
        come out NaN with a note).
    weights : array_like, shape (n,), optional
        Non-negative finite weights (population represented by each unit); 1 when
        omitted. Zero weights are allowed and change nothing.
    groups : array_like, shape (n,), or DataFrame, optional
        Group label of each unit (e.g. district), or several key columns (e.g. region
        and year). One group when omitted.

    Returns
    -------
    SortedUnits

    Raises
    ------
    explorer.data.model.DataError
        For non-numeric or non-finite incomes, negative or non-finite weights, missing
        group labels, or inputs of different lengths. The inputs are never modified.
    """
    income, weight = _checked_units(values, weights)
    n = len(income)
    if groups is None:
        codes, labels = np.zeros(n, dtype=np.int64), np.array(["(all)"], dtype=object)
        if n == 0:
            labels = labels[:0]
    else:
        codes, labels = _group_codes(groups, n)
    # The narrowest integer type for the group key: NumPy's stable sort of 8- and 16-bit
    # integers is a radix sort, so the group pass of the lexsort is then nearly free.
    key = codes.astype(np.min_scalar_type(max(len(labels) - 1, 0)), copy=False)
    order = np.lexsort((income, key))
    # Sorted codes and segment starts from the group sizes: sequential, no gather.
    sizes = np.bincount(codes, minlength=len(labels))
    sorted_codes = np.repeat(np.arange(len(sizes), dtype=np.int64), sizes)
    starts = (np.cumsum(sizes) - sizes).astype(np.int64)
    arrays = (income[order], weight[order], sorted_codes, starts, order)
    for array in arrays:
        array.setflags(write=False)
    return SortedUnits(
        values=arrays[0],
        weights=arrays[1],
        codes=arrays[2],
        starts=arrays[3],
        labels=labels,
        order=arrays[4],
    )


# ---------------------------------------------------------------------------------------
# The engine. Weights are (R, n): one row per weighting of the same sorted units (R = 1
# for the point estimate, R replicates in the bootstrap); group results are (R, G).
# Units run along the last, contiguous axis so segment reductions stream through memory.


_ROUNDING = 8 * np.finfo(float).eps  # population shares closer than this to p count as p


def _segment_sum(x: np.ndarray, starts: np.ndarray) -> np.ndarray:
    return np.add.reduceat(x, starts, axis=-1)


def _shift(x: np.ndarray) -> np.ndarray:
    """``x`` moved one unit along the last axis, 0 first (the total before each unit)."""
    out = np.empty_like(x)
    out[..., 0] = 0.0
    out[..., 1:] = x[..., :-1]
    return out


def _local_cumsum(
    x: np.ndarray, starts: np.ndarray, codes: np.ndarray, totals: np.ndarray, exact: bool
) -> np.ndarray:
    """Cumulative sums along the last axis, restarting at every group start.

    ``totals`` are the group sums of ``x``. Fast path: subtract each group's total at
    the next group's start and take one cumulative sum, which then restarts near zero
    at every group (a drift of a few ulps of the group totals: plenty for resampling).
    With ``exact``: one global cumulative sum minus the running total before each group,
    the rounding error of every addition recovered by the error-free TwoSum
    transformation and added back, so the result keeps full precision relative to the
    group's own total however many groups precede it.
    """
    if not exact:
        reset = np.array(x, dtype=np.float64, copy=True)
        reset[..., starts[1:]] -= totals[..., :-1]
        return np.cumsum(reset, axis=-1, out=reset)
    total = np.cumsum(x, axis=-1)
    before = _shift(total)
    local = total - before[..., starts][..., codes]
    # Knuth's TwoSum: the exact error of each fl(before + x).
    shifted = total - before
    error = (before - (total - shifted)) + (x - shifted)
    carry = np.cumsum(error, axis=-1)
    local += carry - _shift(carry)[..., starts][..., codes]
    return local


class _Engine:
    """Lazily computed group sums shared by the indices of one request."""

    def __init__(self, rel, weights, codes, starts, exact):
        self.rel = rel  # income / group centre, shape (n,)
        self.w = np.atleast_2d(weights)  # (R, n)
        self.codes, self.starts, self.exact = codes, starts, exact
        self._cache: dict = {}
        with np.errstate(invalid="ignore", divide="ignore"):
            self.W = _segment_sum(self.w, starts)
            self.S = self.sum(rel)
            self.m = self.S / self.W  # mean relative to the centre

    def holds(self, mask: np.ndarray, name: str) -> np.ndarray:
        """Groups (per replicate) where units with ``mask`` carry positive weight."""
        if name not in self._cache:
            if mask.any():
                self._cache[name] = self.sum(mask) > 0
            else:
                self._cache[name] = np.zeros(self.W.shape, dtype=bool)
        return self._cache[name]

    def sum(self, per_unit: np.ndarray) -> np.ndarray:
        return _segment_sum(self.w * per_unit, self.starts)

    def mean(self, name, build):
        if name not in self._cache:
            with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
                self._cache[name] = self.sum(build()) / self.W
        return self._cache[name]

    def positive_rel(self) -> np.ndarray:
        if "pos" not in self._cache:
            self._cache["pos"] = np.where(self.rel > 0, self.rel, 1.0)
        return self._cache["pos"]

    def power_mean(self, a: float) -> np.ndarray:
        """Weighted mean of rel**a over units with rel > 0 (zeros count 0 when a > 0)."""

        def build():
            powered = self.positive_rel() ** a
            return np.where(self.rel > 0, powered, 0.0)

        return self.mean(("pow", a), build)

    def log_mean(self) -> np.ndarray:
        return self.mean("log", lambda: np.log(self.positive_rel()))

    def xlogx_mean(self) -> np.ndarray:
        return self.mean(
            "xlogx", lambda: np.where(self.rel > 0, self.rel, 0.0) * np.log(self.positive_rel())
        )

    def cumulative(self):
        if "cum" not in self._cache:
            self._cache["cum"] = _local_cumsum(self.w, self.starts, self.codes, self.W, self.exact)
        return self._cache["cum"]

    def gini(self) -> np.ndarray:
        c = self.cumulative()
        # Lerman & Yitzhaki: G = 2 cov(y, F)/mu with F at the midpoint of each unit's
        # population segment; equal to the mean absolute difference over 2 mu, ties
        # included, whatever their order.
        total = _segment_sum(self.w * self.rel * (2.0 * c - self.w), self.starts)
        with np.errstate(invalid="ignore", divide="ignore"):
            return total / (self.W * self.S) - 1.0

    def lorenz(self, p: float) -> np.ndarray:
        """Lorenz ordinate at p, linear between the units' cumulative points."""
        if ("lorenz", p) not in self._cache:
            self._cache["lorenz", p] = self._lorenz(p)
        return self._cache["lorenz", p]

    def _lorenz(self, p: float) -> np.ndarray:
        if "P" not in self._cache:
            with np.errstate(invalid="ignore", divide="ignore"):
                # Cumulative population share at the top of each unit's stretch.
                self._cache["P"] = self.cumulative() / self.W[:, self.codes]
        # The units wholly below p. A unit whose top lies within rounding of p reaches p:
        # otherwise a stretch of rounding size (p W - c ~ 1e-17 W) would take the next
        # unit's income, and a bottom share that is exactly 0 would come out ~1e-17.
        below = self._cache["P"] < p - _ROUNDING
        # Weight and income below p as direct sums (no differences of running totals);
        # the stretch of the first unit reaching p adds income at that unit's level.
        w_below = self.w * below
        c_prev = _segment_sum(w_below, self.starts)
        inc_prev = _segment_sum(w_below * self.rel, self.starts)
        ends = np.append(self.starts[1:], len(self.rel)) - 1
        idx = np.minimum(self.starts + _segment_sum(below, self.starts), ends)
        with np.errstate(invalid="ignore", divide="ignore"):
            return (inc_prev + (p * self.W - c_prev) * self.rel[idx]) / self.S

    def index(self, family: str, param: float | None) -> np.ndarray:
        m = self.m
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            if family == "gini":
                return self.gini()
            if family == "cv":
                # Centred on the point mean, so no cancellation when inequality is small.
                second = self.mean("sq", lambda: (self.rel - 1.0) ** 2)
                variance = np.maximum(second - (m - 1.0) ** 2, 0.0)
                return np.sqrt(variance) / m
            if family == "ge":
                if param == 0.0:
                    return np.log(m) - self.log_mean()
                if param == 1.0:
                    return self.xlogx_mean() / m - np.log(m)
                return (self.power_mean(param) / m**param - 1.0) / (param * (param - 1.0))
            if family == "atkinson":
                if param == 0.0:
                    return np.zeros_like(m)
                if param == 1.0:
                    return 1.0 - np.exp(self.log_mean()) / m
                b = 1.0 - param
                return 1.0 - self.power_mean(b) ** (1.0 / b) / m
            points = [self.lorenz(p) for p in _SHARE_POINTS[family]]
            if family in ("palma", "s80_s20"):
                # A ratio to a bottom share that holds nothing (or less) is no ratio.
                return np.where(points[0] > 0, (1.0 - points[1]) / points[0], np.nan)
            if family == "top10_share":
                return 1.0 - points[0]
            return points[0]


def _centres(units: SortedUnits) -> np.ndarray:
    """Per-group scale (the weighted mean; 1 where it is not positive)."""
    W = _segment_sum(units.weights, units.starts)
    S = _segment_sum(units.weights * units.values, units.starts)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = S / W
    return np.where(np.isfinite(mean) & (mean > 0), mean, 1.0)


# Cells (replicates x units) handled at once. Temporaries of this size (16 MB) stay on
# the allocator's heap and in cache; far larger ones are mapped afresh from the kernel
# each time, and their page faults cost more than the arithmetic.
_BLOCK_CELLS = 1 << 21


def _blocks(units: SortedUnits, rows: int):
    """Runs of whole groups holding about ``_BLOCK_CELLS / rows`` units each.

    Yields ``(first_unit, end_unit, first_group, end_group)``; a group larger than the
    budget forms a block of its own. A loop over a handful of blocks, not over groups.
    """
    n, starts = len(units.values), units.starts
    budget = max(1, _BLOCK_CELLS // max(rows, 1))
    first = 0
    while first < len(starts):
        a = starts[first]
        end = int(np.searchsorted(starts, a + budget, side="right"))
        end = max(end, first + 1)
        b = starts[end] if end < len(starts) else n
        yield a, b, first, end
        first = end


def _run(units: SortedUnits, specs, weights: np.ndarray, exact: bool):
    """Index values, total weights and relative means, each (R, G), block by block."""
    weights = np.atleast_2d(np.asarray(weights, dtype=np.float64))
    centre = _centres(units)
    values = {key: [] for key in specs}
    totals, means = [], []
    for a, b, g0, g1 in _blocks(units, weights.shape[0]):
        codes = units.codes[a:b] - g0
        rel = units.values[a:b] / centre[g0:g1][codes]
        engine = _Engine(rel, weights[:, a:b], codes, units.starts[g0:g1] - a, exact)
        for key, (family, param) in specs.items():
            value = engine.index(family, param)
            values[key].append(np.where(_replicate_mask(engine, family, param), np.nan, value))
        totals.append(engine.W)
        means.append(engine.m)
    joined = {key: np.concatenate(parts, axis=-1) for key, parts in values.items()}
    return joined, np.concatenate(totals, axis=-1), np.concatenate(means, axis=-1)


def _needs_positive(family: str, param: float | None) -> bool:
    """True where a zero income makes the index undefined."""
    return (family == "ge" and param <= 0) or (family == "atkinson" and param >= 1)


def _replicate_mask(engine: _Engine, family: str, param: float | None) -> np.ndarray:
    """Groups (per replicate) where the index is undefined by its own rules."""
    undefined = ~(engine.W > 0) | ~(engine.m > 0)
    if family in ("ge", "atkinson"):
        undefined |= engine.holds(engine.rel < 0, "negative")
        if _needs_positive(family, param):
            undefined |= engine.holds(engine.rel == 0, "zero")
    return undefined


def replicate_values(
    sorted_units: SortedUnits,
    indices: Iterable[str] | str,
    weights: np.ndarray,
    exact: bool = False,
) -> dict[str, np.ndarray]:
    """Indices for many weightings of the same sorted units at once.

    Parameters
    ----------
    sorted_units : SortedUnits
        The units; their order is kept.
    indices : str or iterable of str
        Index keys.
    weights : ndarray, shape (n,) or (R, n)
        Weights in the sorted order, one row per replicate (e.g. the units' weights
        times bootstrap multiplicities).
    exact : bool
        Compensated cumulative sums (full precision within each group); not needed for
        resampling.

    Returns
    -------
    dict of str to ndarray, shape (n_groups, R)
        NaN where an index is undefined under its own rules (no weight, a mean that is
        not positive, zero or negative incomes where they are not allowed). A group
        left with a single unit is not masked here.
    """
    if sorted_units.n_groups == 0:
        return {key: np.zeros((0, np.atleast_2d(weights).shape[0])) for key in _specs(indices)}
    values, _, _ = _run(sorted_units, _specs(indices), weights, exact)
    return {key: value.T for key, value in values.items()}


def _specs(indices) -> dict[str, tuple[str, float | None]]:
    if isinstance(indices, str):
        indices = (indices,)
    return {key: parse_index(key) for key in indices}


def _counted(counts: np.ndarray, what: str) -> np.ndarray:
    """``"3 zero incomes"``, ``"1 zero income"`` per group."""
    plural = np.where(counts == 1, f" {what} income", f" {what} incomes")
    return np.char.add(counts.astype(str), plural).astype(object)


def _put(note: np.ndarray, mask: np.ndarray, text) -> None:
    """Write ``text`` where ``mask`` holds and no earlier (more basic) reason was given."""
    texts = np.broadcast_to(np.asarray(text, dtype=object), note.shape)
    fill = mask & (note == "")
    note[fill] = texts[fill]


def _notes(
    units: SortedUnits, total: np.ndarray, mean: np.ndarray, specs, values: dict
) -> dict[str, np.ndarray]:
    """Why each value is missing or needs care; ``mean`` need only have the right sign."""
    w, y = units.weights, units.values
    G = units.n_groups
    positive = w > 0
    units_in = _units_in(units)
    if y.min() > 0:  # the usual case: nothing to count
        zeros = negatives = np.zeros(G, dtype=np.int64)
    else:
        zeros = np.bincount(units.codes, weights=positive & (y == 0), minlength=G)
        negatives = np.bincount(units.codes, weights=positive & (y < 0), minlength=G)
        zeros, negatives = zeros.astype(np.int64), negatives.astype(np.int64)
    zero_text, negative_text = _counted(zeros, "zero"), _counted(negatives, "negative")
    notes = {}
    for key, (family, param) in specs.items():
        name = index_name(key)
        undefined = f"{name} undefined: "
        finite = np.isfinite(values[key])
        note = np.full(G, "", dtype=object)
        if finite.all() and not negatives.any():
            notes[key] = note
            continue
        _put(note, ~(total > 0), undefined + "no weight")
        _put(note, units_in == 1, undefined + "single unit")
        _put(note, ~(mean > 0), undefined + "mean income not positive")
        if family in ("ge", "atkinson"):
            _put(note, negatives > 0, undefined + negative_text)
            if _needs_positive(family, param):
                _put(note, zeros > 0, undefined + zero_text)
        elif family in ("palma", "s80_s20"):
            bottom = {"palma": "bottom 40%", "s80_s20": "bottom 20%"}[family]
            _put(note, ~finite, f"{undefined}the {bottom} share is not positive")
        # Defined with negative incomes, but no longer bounded as usual: say so.
        _put(note, (negatives > 0) & finite, negative_text + f": {name} may leave its usual range")
        _put(note, ~finite, undefined.rstrip(": "))
        notes[key] = note
    return notes


def _units_in(units: SortedUnits) -> np.ndarray:
    """Units with positive weight in each group."""
    if units.weights.min() > 0:
        return units.sizes
    return np.bincount(units.codes, weights=units.weights > 0, minlength=units.n_groups)


def compute(
    sorted_units: SortedUnits, indices: Iterable[str] | str = STANDARD_INDICES
) -> dict[str, IndexValues]:
    """Every requested index for every group, in one pass over the sorted units.

    Parameters
    ----------
    sorted_units : SortedUnits
        From :func:`sort_units`.
    indices : str or iterable of str
        Index keys (see :func:`parse_index`); every standard index by default.

    Returns
    -------
    dict of str to IndexValues
        Keyed by the keys as given, values in group-code order.

    Notes
    -----
    Conventions: weights are population weights and every index uses the population
    (not the sample) convention, so an integer weight k is the same as k copies of the
    unit. The Gini is ``sum_i w_i y_i (c_{i-1} + c_i - W) / (W^2 mu)`` over incomes in
    ascending order, ``c_i`` the cumulative weight: exactly the mean absolute difference
    over twice the mean, ties included. Quantile shares read the weighted Lorenz curve
    interpolated linearly between the units' cumulative points (each unit's weight spread
    evenly over its stretch of the population) at p = 0.1, 0.2, 0.4, 0.8, 0.9: top 10%
    share = 1 - L(0.9), bottom 40% share = L(0.4), Palma = (1 - L(0.9)) / L(0.4),
    S80/S20 = (1 - L(0.8)) / L(0.2). For grouped data given as bracket means and
    population shares this is the Lorenz curve joined by straight lines.

    Zero and negative incomes: Gini, CV and the quantile shares are defined with zeros;
    with negatives they are computed and noted. MLD, GE(alpha <= 0) and
    Atkinson(epsilon >= 1) are NaN with a zero income; every GE and Atkinson index is
    NaN with a negative income. A group with a single unit of positive weight, no weight
    or a mean income that is not positive is NaN for every index.

    References
    ----------
    Lerman, R. I. and Yitzhaki, S. (1984). A note on the calculation and interpretation
    of the Gini index. *Economics Letters* 15: 363-368.
    Theil, H. (1967). *Economics and Information Theory*. North-Holland.
    Shorrocks, A. F. (1980). The class of additively decomposable inequality measures.
    *Econometrica* 48: 613-625.
    Atkinson, A. B. (1970). On the measurement of inequality. *Journal of Economic
    Theory* 2: 244-263.
    Cobham, A. and Sumner, A. (2013). Is it all about the tails? The Palma measure of
    income inequality. CGD Working Paper 343.
    Knuth, D. E. (1997). *The Art of Computer Programming*, vol. 2, 3rd ed., 4.2.2
    (the TwoSum error-free transformation used for exact cumulative sums).
    """
    specs = _specs(indices)
    G = sorted_units.n_groups
    if G == 0:
        return {k: IndexValues(np.zeros(0), np.zeros(0, dtype=object)) for k in specs}
    raw, total, mean = _run(sorted_units, specs, sorted_units.weights, exact=True)
    several = _units_in(sorted_units) >= 2
    values = {key: np.where(several, value[0], np.nan) for key, value in raw.items()}
    notes = _notes(sorted_units, total[0], mean[0], specs, values)
    return {key: IndexValues(values[key], notes[key]) for key in specs}


def weighted(
    values: ArrayLike,
    weights: ArrayLike | None,
    groups: ArrayLike | pd.DataFrame | None,
    indices: Sequence[str] | str = STANDARD_INDICES,
) -> pd.DataFrame:
    """Sort and compute in one call; a tidy table.

    Parameters
    ----------
    values, weights, groups
        As for :func:`sort_units` (``weights`` may be None; ``groups`` may be a DataFrame
        of key columns).
    indices : str or sequence of str
        Index keys.

    Returns
    -------
    DataFrame
        Columns ``group`` (or the key columns when ``groups`` is a DataFrame), ``index``,
        ``value``, ``note``; one row per group and index, groups in sorted order, indices
        in the order asked.

    Examples
    --------
    >>> table = weighted([1.0, 3.0, 2.0, 2.0], None, ["a", "a", "b", "b"], ["gini"])
    >>> table["value"].round(3).tolist()
    [0.25, 0.0]
    """
    units = sort_units(values, weights, groups)
    results = compute(units, indices)
    keys = list(results)
    G = units.n_groups
    value = np.column_stack([results[k].value for k in keys]).ravel() if keys and G else np.zeros(0)
    note = (
        np.column_stack([results[k].note for k in keys]).ravel()
        if keys and G
        else np.zeros(0, dtype=object)
    )
    codes = np.repeat(np.arange(G), len(keys))
    if isinstance(units.labels, pd.DataFrame):
        table = units.labels.iloc[codes].reset_index(drop=True)
    else:
        table = pd.DataFrame({"group": units.labels[codes]})
    table["index"] = np.tile(np.asarray(keys, dtype=object), G)
    table["value"] = value
    table["note"] = note.astype(str) if len(note) else pd.Series([], dtype=str)
    return table

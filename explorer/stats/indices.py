"""A Panel to the tidy index table and the Lorenz fit diagnostics.

One table for every kind of panel, so charts, exports, the command line and the report
read the same columns: ``region, year, index, value, lower, upper, method, note``.

* brackets: one block of rows per Lorenz method asked for; ``lower``/``upper`` are the
  bounds from the ``linear`` and ``upper`` curves, between which every Lorenz-consistent
  index of any distribution with those bracket shares lies (Gastwirth 1972).
* units: indices on the weighted records (:mod:`explorer.stats.measures`); with
  ``ci="bootstrap"`` the percentile interval (:mod:`explorer.stats.intervals`) at ``level``,
  which the table also carries in ``attrs["level"]``.
* means: inequality between districts per year from their mean incomes, one row per year
  with ``region = "(all)"``; population-weighted when every district of the year has a
  population, unweighted otherwise (the note says which).

District-years left out by validation are not in the table; they are in
``panel.excluded``.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from explorer.data.model import Panel, fail
from explorer.stats import lorenz, measures, text_columns

__all__ = [
    "ALL_DISTRICTS",
    "CI_CHOICES",
    "COLUMNS",
    "DEFAULT_INDICES",
    "FIT_COLUMNS",
    "compute",
    "fits",
]

DEFAULT_INDICES: tuple[str, ...] = measures.STANDARD_INDICES
"""The default indices: every family at its usual parameters (as measures.STANDARD_INDICES)."""

COLUMNS = ("region", "year", "index", "value", "lower", "upper", "method", "note")
FIT_COLUMNS = ("region", "year", "method", "used", "params", "sse", "max_error", "valid", "reason")
CI_CHOICES = (None, "bootstrap")
ALL_DISTRICTS = "(all)"

_OUTSIDE_NOTE = "the fitted curve gives a value outside the bounds the bracket shares allow"
_FIXED_NOTE = (
    "the published shares fix this value (a share at a bracket boundary); the fitted curve "
    "differs there, so the fixed value is shown"
)


# ---------------------------------------------------------------------------- checks


def _check_arguments(methods, indices, ci, reps, level) -> tuple[tuple[str, ...], tuple[str, ...]]:
    methods = (methods,) if isinstance(methods, str) else tuple(methods)
    indices = (indices,) if isinstance(indices, str) else tuple(indices)
    unknown = [m for m in methods if m not in lorenz.METHODS]
    if unknown or not methods:
        raise fail(
            f"unknown Lorenz method {', '.join(map(repr, unknown)) or '(none given)'}",
            f"use one or more of {', '.join(lorenz.METHODS)}",
            column="method",
        )
    if not indices:
        raise fail("no index asked for", f"use e.g. {', '.join(DEFAULT_INDICES)}")
    for key in indices:
        try:
            measures.parse_index(key)
        except ValueError as err:
            raise fail(str(err), "correct the index name", column="index") from None
    if ci not in CI_CHOICES:
        raise fail(
            f"unknown interval {ci!r}", "use ci=None (no interval) or ci='bootstrap'", column="ci"
        )
    if not 0.0 < float(level) < 1.0:
        raise fail(f"confidence level {level} is not between 0 and 1", "use e.g. 0.95")
    if int(reps) < 2:
        raise fail(f"{reps} bootstrap replicates are too few", "use e.g. 199 or 999")
    return tuple(dict.fromkeys(methods)), tuple(dict.fromkeys(indices))


# ---------------------------------------------------------------------------- assembly


def _block(keys: pd.DataFrame, indices, values, lower, upper, method: str, notes) -> pd.DataFrame:
    """One method's rows: district-years outer, indices inner."""
    n, k = len(keys), len(indices)
    stack = lambda arrays: np.column_stack(arrays).ravel() if n else np.zeros(0)  # noqa: E731
    return pd.DataFrame(
        {
            "region": np.repeat(keys["region"].astype(str).to_numpy(), k),
            "year": np.repeat(keys["year"].to_numpy().astype(np.int64), k),
            "index": np.tile(np.asarray(indices, dtype=object), n),
            "value": stack(values),
            "lower": stack(lower),
            "upper": stack(upper),
            "method": method,
            "note": stack(notes).astype(object) if n else np.zeros(0, dtype=object),
        }
    )


def _empty_table() -> pd.DataFrame:
    table = pd.DataFrame({c: pd.Series(dtype=float) for c in COLUMNS})
    for c in ("region", "index", "method", "note"):
        table[c] = table[c].astype(object)
    table["year"] = table["year"].astype(np.int64)
    return table


def _vocabulary(texts) -> tuple[np.ndarray, np.ndarray]:
    """Codes and distinct values of a text array (hash-based: notes repeat a lot)."""
    codes, uniques = pd.factorize(np.asarray(texts, dtype=object))
    return codes, np.asarray(uniques, dtype=object)


def _join_notes(*parts) -> np.ndarray:
    """Row-wise "; "-join of the non-empty texts of several note arrays."""
    n = len(parts[0])
    key = np.zeros(n, dtype=np.int64)
    vocabularies = []
    for part in parts:
        codes, uniques = _vocabulary(part)
        key = key * max(len(uniques), 1) + codes
        vocabularies.append(uniques)
    combos, inverse = np.unique(key, return_inverse=True)
    texts = []
    for combo in combos:  # few distinct combinations: decode each once
        pieces = []
        for uniques in reversed(vocabularies):
            size = max(len(uniques), 1)
            pieces.append(uniques[combo % size] if len(uniques) else "")
            combo //= size
        texts.append("; ".join(str(t) for t in reversed(pieces) if t))
    return np.asarray(texts, dtype=object)[inverse] if n else np.zeros(0, dtype=object)


# ---------------------------------------------------------------------------- by kind


def _matrix(got, indices, field) -> np.ndarray:
    """One field of every index as a (district-years, indices) array."""
    return np.column_stack([getattr(got[k], field) for k in indices])


def _coded_notes(got, indices) -> tuple[np.ndarray, np.ndarray]:
    """The notes of every index as (district-years, indices) codes into shared texts."""
    columns, texts, offset = [], [], 0
    for key in indices:
        codes, distinct = text_columns.coded(got[key].note)
        columns.append(codes + offset)
        texts.append(distinct)
        offset += len(distinct)
    return np.column_stack(columns), np.concatenate(texts)


def _flag(mask: np.ndarray, text: str) -> tuple[np.ndarray, np.ndarray]:
    """``text`` where ``mask`` holds, as codes for :func:`text_columns.join_coded`."""
    return mask.astype(np.int64), np.asarray(["", text], dtype=object)


def _upper_bound_words(text) -> str:
    return "upper bound " + text if str(text).startswith("infinite: ") else str(text)


def _brackets(panel, methods, indices) -> pd.DataFrame:
    # every fit from one pass over the points; auto's candidates serve the bounds
    fitted = lorenz.fit_panel_methods(panel, ("linear", "upper", *methods))
    keys = fitted["linear"].keys
    got = {m: fitted[m].indices(indices) for m in dict.fromkeys(("linear", "upper", *methods))}
    low, up = _matrix(got["linear"], indices, "value"), _matrix(got["upper"], indices, "value")
    lower_bound, upper_bound = np.fmin(low, up), np.fmax(low, up)
    # why a bound is infinite (the upper curve's jump or zero incomes), said once
    up_codes, up_texts = _coded_notes(got["upper"], indices)
    bound_codes = np.where(np.isinf(upper_bound), up_codes, 0)
    bound_texts = np.asarray([_upper_bound_words(t) for t in up_texts], dtype=object)
    # where the two bounding curves agree the published points fix the index (a share at a
    # bracket boundary): the fixed value is shown, and how far the fit was off
    fixed = np.isfinite(lower_bound) & np.isclose(lower_bound, upper_bound, rtol=1e-12, atol=1e-15)
    n, k = len(keys), len(indices)
    region = text_columns.text_column(keys["region"].astype(str), np.repeat(np.arange(n), k))
    year = np.repeat(keys["year"].to_numpy().astype(np.int64), k)
    index = text_columns.text_column(indices, np.tile(np.arange(k), n))
    blocks = []
    for method in methods:
        value = _matrix(got[method], indices, "value")
        off = fixed & ~np.isclose(value, lower_bound, rtol=1e-6, atol=1e-9)
        value = np.where(fixed, lower_bound, value)
        slack = 1e-9 * np.maximum(1.0, np.abs(value))
        with np.errstate(invalid="ignore"):
            outside = (value < lower_bound - slack) | (value > upper_bound + slack)
        # the upper curve's own note already says why its value is infinite
        extra = (bound_codes, bound_texts) if method != "upper" else _flag(fixed & False, "")
        codes, texts = text_columns.join_coded(
            _coded_notes(got[method], indices),
            _flag(outside, _OUTSIDE_NOTE),
            extra,
            _flag(off, _FIXED_NOTE),
        )
        blocks.append(
            pd.DataFrame(
                {
                    "region": region,
                    "year": year,
                    "index": index,
                    "value": value.ravel(),
                    "lower": lower_bound.ravel(),
                    "upper": upper_bound.ravel(),
                    "method": text_columns.text_column([method], np.zeros(n * k, np.int64)),
                    "note": text_columns.note_column(texts, codes.ravel()),
                }
            )
        )
    return blocks[0] if len(blocks) == 1 else pd.concat(blocks, ignore_index=True)


def _units(panel, indices, ci, reps, seed, level) -> pd.DataFrame:
    data = panel.data
    units = measures.sort_units(
        data["income"].to_numpy(dtype=float),
        data["weight"].to_numpy(dtype=float),
        data[["region", "year"]].reset_index(drop=True),
    )
    got = measures.compute(units, indices)
    n = units.n_groups
    if ci == "bootstrap":
        from explorer.stats import intervals

        bounds = intervals.bootstrap(units, indices, reps=int(reps), seed=seed, level=level)
        lower = [bounds[k][0] for k in indices]
        upper = [bounds[k][1] for k in indices]
    else:
        lower = upper = [np.full(n, np.nan) for _ in indices]
    keys = units.labels if isinstance(units.labels, pd.DataFrame) else pd.DataFrame()
    return _block(
        keys,
        indices,
        [got[k].value for k in indices],
        lower,
        upper,
        "units",
        [got[k].note for k in indices],
    )


def _means(panel, indices, ci) -> pd.DataFrame:
    data = panel.data
    year = data["year"].to_numpy().astype(np.int64)
    population = data["population"].to_numpy(dtype=float)
    given = np.isfinite(population) & (population > 0)
    years, code = np.unique(year, return_inverse=True)
    all_given = np.bincount(code, weights=~given, minlength=years.size) == 0
    missing = np.bincount(code, weights=~given, minlength=years.size).astype(int)
    weights = np.where(all_given[code], population, 1.0)
    units = measures.sort_units(data["mean_income"].to_numpy(dtype=float), weights, year)
    got = measures.compute(units, indices)
    # units.labels are the years in sorted order, the same order as ``years``
    label_years = np.asarray(units.labels).astype(np.int64)
    order = np.searchsorted(years, label_years)
    weighting = np.where(
        all_given[order],
        "between districts, weighted by population",
        np.where(
            missing[order] == np.bincount(code, minlength=years.size)[order],
            "between districts, unweighted (no populations given)",
            "between districts, unweighted (population missing for "
            + missing[order].astype(str)
            + " districts)",
        ),
    ).astype(object)
    if ci is not None:  # intervals are for unit records; say so rather than leave a gap
        weighting = weighting + "; no interval: district means carry no sampling information"
    keys = pd.DataFrame({"region": ALL_DISTRICTS, "year": label_years})
    n = len(keys)
    return _block(
        keys,
        indices,
        [got[k].value for k in indices],
        [np.full(n, np.nan) for _ in indices],
        [np.full(n, np.nan) for _ in indices],
        "means",
        [_join_notes(weighting, got[k].note) for k in indices],
    )


def _published(panel: Panel, indices: str | Sequence[str]) -> pd.DataFrame:
    """Published figures in the index table's form, as given: never recomputed or bounded.

    The default asks for every figure the table holds; named keys keep those present.
    """
    data = panel.data
    asked = (indices,) if isinstance(indices, str) else tuple(indices)
    if asked != tuple(DEFAULT_INDICES):
        data = data[data["measure"].isin(asked)]
    nan = np.full(len(data), np.nan)
    table = pd.DataFrame(
        {
            "region": data["region"].to_numpy(),
            "year": data["year"].to_numpy(),
            "index": data["measure"].to_numpy(),
            "value": data["value"].to_numpy(dtype=float),
            "lower": nan,
            "upper": nan,
            "method": "published",
            "note": ("as published, " + data["scale"].astype(str)).to_numpy(dtype=object),
        }
    )
    table.attrs.update(kind="published", ci=None, level=None)
    return table


# ---------------------------------------------------------------------------- public


def compute(
    panel: Panel,
    methods: str | Sequence[str] = ("auto",),
    indices: str | Sequence[str] = DEFAULT_INDICES,
    ci: str | None = None,
    reps: int = 199,
    seed: int | None = 0,
    level: float = 0.95,
) -> pd.DataFrame:
    """The tidy index table of a panel.

    Parameters
    ----------
    panel : explorer.data.model.Panel
    methods : str or sequence of str
        Lorenz methods for bracket panels (``linear, upper, pchip, gq, beta, quadratic,
        lognormal, auto``); one block of rows each. Ignored for unit and means panels.
    indices : str or sequence of str
        Index keys (see :func:`explorer.stats.measures.parse_index`).
    ci : {None, "bootstrap"}
        Intervals for unit panels: the percentile bootstrap at ``level`` with ``reps``
        replicates and ``seed``. Bracket panels always carry their bounds instead.
    reps, seed, level
        Bootstrap settings.

    Returns
    -------
    DataFrame
        Columns ``region, year, index, value, lower, upper, method, note``; rows by method,
        then district-year, then index in the order asked. ``attrs`` holds ``kind``, ``ci``
        and ``level``.

    Raises
    ------
    explorer.data.model.DataError
        For an unknown method, index, interval or level.

    References
    ----------
    Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index.
    *Review of Economics and Statistics* 54: 306–316 (the bounds).
    """
    if panel.kind == "published":
        return _published(panel, indices)
    methods, indices = _check_arguments(methods, indices, ci, reps, level)
    kind = panel.kind
    if len(panel.data) == 0:
        table = _empty_table()
    elif kind == "brackets":
        table = _brackets(panel, methods, indices)
    elif kind == "units":
        table = _units(panel, indices, ci, reps, seed, level)
    elif kind == "means":
        table = _means(panel, indices, ci)
    else:
        raise fail(f"unknown panel kind {kind!r}", "use brackets, units or means")
    table = table.reset_index(drop=True)
    if kind != "brackets":  # the bracket notes are built as Python strings already
        table["note"] = table["note"].astype(str).astype(object)
    table.attrs.update(kind=kind, ci=ci if kind == "units" else None, level=level if ci else None)
    return table


def fits(panel: Panel, methods: str | Sequence[str] = ("auto",)) -> pd.DataFrame:
    """Lorenz fit diagnostics of a bracket panel, one row per district-year and method.

    Parameters
    ----------
    panel : explorer.data.model.Panel
    methods : str or sequence of str
        Lorenz methods, one block of rows each (as for :func:`compute`).

    Returns
    -------
    DataFrame
        Columns ``region, year, method, used, params, sse, max_error, valid, reason``:
        ``used`` is the method actually used (for ``auto``), ``params`` the fitted
        parameters as JSON text, ``sse`` and ``max_error`` the squared error summed over
        the bracket points and the largest absolute error at one. Empty for unit and means
        panels.
    """
    methods, _ = _check_arguments(methods, ("gini",), None, 2, 0.5)
    if panel.kind != "brackets" or len(panel.data) == 0:
        return pd.DataFrame({c: pd.Series(dtype=object) for c in FIT_COLUMNS})
    blocks = []
    for method in methods:
        fitted = lorenz.fit_panel(panel, method)
        blocks.append(
            pd.DataFrame(
                {
                    "region": fitted.keys["region"].astype(str).to_numpy(),
                    "year": fitted.keys["year"].to_numpy().astype(np.int64),
                    "method": method,
                    "used": fitted.used.astype(str),
                    "params": fitted.params_json(),
                    "sse": fitted.sse,
                    "max_error": fitted.max_error,
                    "valid": fitted.valid.astype(bool),
                    "reason": fitted.reason.astype(str),
                }
            )
        )
    return pd.concat(blocks, ignore_index=True)

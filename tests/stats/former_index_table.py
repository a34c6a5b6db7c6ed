"""The index table's bracket assembly as it was before it was vectorised, kept as a reference.

The tests compare the present assembly with this one column by column; nothing else uses it.
It fits ``linear``, ``upper`` and each method separately on the panel and joins the notes
row by row through their distinct combinations, exactly as the table was built before.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from explorer.stats import lorenz
from explorer.stats.indices import _FIXED_NOTE, _OUTSIDE_NOTE

__all__ = ["former_brackets"]


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


def _vocabulary(texts) -> tuple[np.ndarray, np.ndarray]:
    """Codes and distinct values of a text array (hash-based: notes repeat a lot)."""
    codes, uniques = pd.factorize(np.asarray(texts, dtype=object))
    return codes, np.asarray(uniques, dtype=object)


def _map_text(texts, change) -> np.ndarray:
    """``change`` applied to every distinct text once, then spread back."""
    codes, uniques = _vocabulary(texts)
    return np.asarray([change(t) for t in uniques], dtype=object)[codes]


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


def _brackets(panel, methods, indices) -> pd.DataFrame:
    linear = lorenz.fit_panel(panel, "linear")
    upper = lorenz.fit_panel(panel, "upper")
    low_vals, up_vals = linear.indices(indices), upper.indices(indices)
    lower_bound = {k: np.fmin(low_vals[k].value, up_vals[k].value) for k in indices}
    upper_bound = {k: np.fmax(low_vals[k].value, up_vals[k].value) for k in indices}
    bound_note = {}
    for key in indices:
        # why a bound is infinite (the upper curve's jump or zero incomes), said once
        infinite = np.isinf(upper_bound[key])
        reason = np.where(infinite, up_vals[key].note, "")
        bound_note[key] = _map_text(
            reason, lambda t: "upper bound " + t if t.startswith("infinite: ") else t
        )
    blocks = []
    for method in methods:
        if method in ("linear", "upper"):
            fits, got = (linear, low_vals) if method == "linear" else (upper, up_vals)
        else:
            fits = lorenz.fit_panel(panel, method)
            got = fits.indices(indices)
        notes = []
        values = {}
        for key in indices:
            value = got[key].value
            # where the two bounding curves agree the published points fix the index (a share
            # at a bracket boundary): the fixed value is shown, and how far the fit was off
            fixed = np.isfinite(lower_bound[key]) & np.isclose(
                lower_bound[key], upper_bound[key], rtol=1e-12, atol=1e-15
            )
            off = fixed & ~np.isclose(value, lower_bound[key], rtol=1e-6, atol=1e-9)
            fixed_note = np.where(off, _FIXED_NOTE, "").astype(object)
            value = np.where(fixed, lower_bound[key], value)
            values[key] = value
            slack = 1e-9 * np.maximum(1.0, np.abs(value))
            with np.errstate(invalid="ignore"):
                outside = (value < lower_bound[key] - slack) | (value > upper_bound[key] + slack)
            outside_note = np.where(outside, _OUTSIDE_NOTE, "")
            extra = bound_note[key] if method != "upper" else np.full(len(value), "")
            notes.append(_join_notes(got[key].note, outside_note, extra, fixed_note))
        blocks.append(
            _block(
                fits.keys,
                indices,
                [values[k] for k in indices],
                [lower_bound[k] for k in indices],
                [upper_bound[k] for k in indices],
                method,
                notes,
            )
        )
    return pd.concat(blocks, ignore_index=True)


def former_brackets(panel, methods, indices) -> pd.DataFrame:
    """The bracket table as :func:`explorer.stats.indices.compute` returned it before."""
    table = _brackets(panel, tuple(methods), tuple(indices)).reset_index(drop=True)
    table["note"] = table["note"].astype(str).astype(object)
    return table

"""Checks and group codes shared by every decomposition."""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats.measures import parse_index

__all__ = ["ALL", "parse_ge_alpha"]

ALL = "(all)"


def parse_ge_alpha(index: str) -> float:
    """The GE parameter of an index key: ``mld`` -> 0, ``theil_t`` -> 1, ``ge_<alpha>``.

    Parameters
    ----------
    index : str
        An index key.

    Returns
    -------
    float

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


def _codes(labels: Any) -> tuple[np.ndarray, np.ndarray]:
    """Integer codes 0..k-1 of ``labels`` and the sorted distinct labels (hashing, O(n))."""
    codes, uniques = pd.factorize(np.asarray(labels), sort=True)
    if codes.size and codes.min() < 0:
        raise fail(
            f"{int((codes < 0).sum())} units have no group label.",
            "Give every unit a group (district, county) before decomposing.",
        )
    return codes.astype(np.int64), np.asarray(uniques)

"""Text columns of long tables from a few distinct texts and one code per row.

A table of every district-year and index repeats a handful of texts (ids, index names, a
method, notes) hundreds of thousands of times. Turning a Python object per row into
pandas' text column costs more than everything else in such a table, so the texts are
kept once and the column is taken from them by code: with Arrow-backed text (pandas' own
default when pyarrow is there) the take runs in Arrow, otherwise in numpy.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["coded", "join_coded", "note_column", "text_column"]

#: The dtype pandas itself gives a column made from an object array of Python strings.
_TEXT = pd.Series(["x"]).dtype


def text_column(texts, codes) -> pd.api.extensions.ExtensionArray | np.ndarray:
    """``texts[codes]`` as the column pandas would make of those strings itself.

    Parameters
    ----------
    texts : sequence of str or Series
        The distinct texts (a Series of pandas' text dtype is taken as it is).
    codes : ndarray of int
        One position in ``texts`` per row.

    Returns
    -------
    ExtensionArray or ndarray
        Of pandas' default text dtype (object arrays where pandas keeps text as objects).
    """
    codes = np.asarray(codes, dtype=np.int64)
    arrow = getattr(_TEXT, "storage", None) == "pyarrow"
    if arrow and isinstance(texts, pd.Series) and texts.dtype == _TEXT:
        import pyarrow as pa

        # already Arrow text: taken as it is, no Python string per value
        return pd.array(pa.array(texts).take(pa.array(codes)), dtype=_TEXT)
    texts = np.asarray([str(t) for t in texts], dtype=object)
    if not arrow:
        if _TEXT == np.dtype(object):
            return texts[codes]
        return pd.array(texts[codes], dtype=_TEXT)
    import pyarrow as pa

    return pd.array(pa.array(texts, type=pa.large_string()).take(pa.array(codes)), dtype=_TEXT)


def note_column(texts, codes) -> pd.Series:
    """``texts[codes]`` as a Series of Python strings of dtype object (the tables' ``note``)."""
    texts = np.asarray([str(t) for t in texts], dtype=object)
    return pd.Series(texts[np.asarray(codes, dtype=np.int64)], dtype=object)


def coded(texts) -> tuple[np.ndarray, np.ndarray]:
    """Codes and distinct values of an array of texts; code 0 is always ``""``.

    Notes are mostly empty: only the non-empty ones are hashed.
    """
    texts = np.asarray(texts, dtype=object)
    codes = np.zeros(texts.shape, dtype=np.int64)
    filled = texts.astype(bool)
    if not filled.any():
        return codes, np.asarray([""], dtype=object)
    present = texts[filled]
    first = present[0]
    if (present == first).all():  # one text throughout (a note set by a mask): no hashing
        codes[filled] = 1
        return codes, np.asarray(["", first], dtype=object)
    found, uniques = pd.factorize(present)
    codes[filled] = found + 1
    return codes, np.concatenate([np.asarray([""], dtype=object), np.asarray(uniques, object)])


def join_coded(*parts: tuple[np.ndarray, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """Row-wise ``"; "``-join of the non-empty texts of several coded arrays.

    Parameters
    ----------
    *parts : (codes, texts)
        Arrays of the same shape, each as codes into its own texts.

    Returns
    -------
    codes, texts
        The joined texts, each distinct combination decoded once.
    """
    shape = parts[0][0].shape
    key = np.zeros(shape, dtype=np.int64)
    for codes, texts in parts:
        key = key * max(len(texts), 1) + codes
    found, combos = pd.factorize(key.ravel())
    joined = []
    for combo in combos:
        pieces = []
        for _codes, texts in reversed(parts):
            size = max(len(texts), 1)
            pieces.append(str(texts[combo % size]) if len(texts) else "")
            combo //= size
        joined.append("; ".join(t for t in reversed(pieces) if t))
    return found.reshape(shape), np.asarray(joined, dtype=object)

"""The index table's vectorised assembly against the assembly it replaced.

The reference (``former_index_table.py`` beside this file) is the bracket table as it was
built before: each Lorenz method fitted on its own and the notes joined row by row. The two
must agree in every column (numbers to 1e-12 relative, texts exactly) on the demo province
and on a small generated panel with mixed bracket counts, shares at a bracket boundary and
empty brackets, which give the fixed-value, outside-the-bounds and infinite-bound notes.
The shares are exact lognormal bracket shares (Aitchison, J. and Brown, J. A. C. 1957, *The
Lognormal Distribution*, CUP: L(p) = Phi(Phi^-1(p) - sigma)); district names are invented.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from former_index_table import former_brackets
from scipy import special

from explorer import data as readers
from explorer.data.validate import validate
from explorer.stats import indices, lorenz, text_columns


def _shares(k: int, sigma: float) -> np.ndarray:
    p = np.linspace(0, 1, k + 1)
    return np.diff(special.ndtr(special.ndtri(p) - sigma))


def generated_panel(n: int = 40, seed: int = 3):
    """n invented districts x 3 years; deciles, quintiles and a few awkward rows."""
    rng = np.random.default_rng(seed)
    rows = []
    for d in range(n):
        for year in (2019, 2020, 2021):
            k = 10 if d % 3 else 5
            shares = _shares(k, rng.uniform(0.2, 1.3))
            if d % 7 == 0:  # an empty bottom bracket: zero incomes, infinite bounds
                shares[1] += shares[0]
                shares[0] = 0.0
            if d % 11 == 0:  # half the people hold a share of exactly one half
                shares = np.full(k, 1.0 / k)
            for b, share in enumerate(shares, start=1):
                rows.append(
                    {
                        "region": f"Q{d:03d}",
                        "year": year,
                        "bracket": b,
                        "pop_share": 1.0 / k,
                        "income_share": share,
                        "mean_income": 1000.0 + d,
                        "population": 500.0 + d,
                    }
                )
    return validate(pd.DataFrame(rows), kind="brackets")


@pytest.fixture(scope="module")
def demo():
    return readers.demo_panel("brackets")


@pytest.fixture(scope="module")
def generated():
    return generated_panel()


def _same(new: pd.DataFrame, old: pd.DataFrame) -> None:
    assert list(new.columns) == list(old.columns)
    pd.testing.assert_frame_equal(new, old, check_exact=False, rtol=1e-12, atol=0.0)
    for column in ("region", "index", "method", "note"):  # texts exactly, dtype too
        assert new[column].dtype == old[column].dtype
        assert (new[column].astype(object) == old[column].astype(object)).all()


@pytest.mark.parametrize("which", ["demo", "generated"])
@pytest.mark.parametrize("methods", [("auto",), tuple(lorenz.METHODS)])
def test_vectorised_index_table_equals_the_former_assembly(which, methods, request):
    panel = request.getfixturevalue(which)
    new = indices.compute(panel, methods=methods)
    old = former_brackets(panel, methods, indices.DEFAULT_INDICES)
    _same(new, old)


def test_the_generated_panel_reaches_every_kind_of_note(generated):
    """The comparison above is only as good as the notes it meets: each kind occurs."""
    notes = " ".join(set(indices.compute(generated, methods=tuple(lorenz.METHODS))["note"]))
    assert "upper bound infinite" in notes
    assert indices._FIXED_NOTE in notes or indices._OUTSIDE_NOTE in notes
    assert "; " in notes  # at least one row joins two notes


def test_fitting_several_methods_at_once_equals_fitting_each_alone(generated):
    together = lorenz.fit_panel_methods(generated, lorenz.METHODS)
    for method in lorenz.METHODS:
        alone = lorenz.fit_panel(generated, method)
        got = together[method]
        pd.testing.assert_frame_equal(got.keys, alone.keys)
        assert list(got.used) == list(alone.used)
        np.testing.assert_array_equal(got.valid, alone.valid)
        np.testing.assert_allclose(got.params, alone.params, rtol=1e-12, equal_nan=True)
        np.testing.assert_allclose(got.sse, alone.sse, rtol=1e-12, equal_nan=True)
        a, b = got.indices(indices.DEFAULT_INDICES), alone.indices(indices.DEFAULT_INDICES)
        for key in indices.DEFAULT_INDICES:
            np.testing.assert_allclose(a[key].value, b[key].value, rtol=1e-12, equal_nan=True)
            assert list(a[key].note) == list(b[key].note)


def test_joined_codes_give_the_row_by_row_join():
    """Common practice: a row's notes joined with "; ", empty ones left out."""
    rng = np.random.default_rng(0)
    words = np.asarray(["", "a", "bb", "a; c"], dtype=object)
    parts = [words[rng.integers(0, 4, size=(50, 3))] for _ in range(3)]
    codes, texts = text_columns.join_coded(*(text_columns.coded(p) for p in parts))
    expected = [
        "; ".join(t for t in row if t) for row in zip(*(p.ravel() for p in parts), strict=True)
    ]
    assert list(texts[codes.ravel()]) == expected
    assert codes.shape == (50, 3)


def test_text_columns_are_what_pandas_makes_of_the_strings():
    codes = np.asarray([2, 0, 1, 1])
    got = pd.Series(text_columns.text_column(["x", "y", "z"], codes))
    expected = pd.Series(np.asarray(["z", "x", "y", "y"], dtype=object))
    pd.testing.assert_series_equal(got, expected)

"""CSV exports are safe to open in a spreadsheet; Parquet keeps the raw strings.

The characters that make a spreadsheet run a cell as a formula, and the single-quote prefix
that stops it, follow OWASP Foundation (2023), "CSV Injection", OWASP community pages.
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from explorer.present import exports

# The six leading characters named by the OWASP "CSV Injection" guidance.
OWASP_LEADS = ["=", "+", "-", "@", "\t", "\r"]


def _read_back(data: bytes) -> pd.DataFrame:
    return pd.read_csv(io.BytesIO(data), dtype=str, keep_default_na=False)


@pytest.mark.parametrize("lead", OWASP_LEADS, ids=repr)
def test_a_text_cell_starting_with_a_formula_character_gets_a_quote(lead):
    table = pd.DataFrame({"district": [f"{lead}HYPERLINK(1)", "Orlen Vale"], "gini": [0.3, 0.4]})
    back = _read_back(exports.csv_bytes(table))
    assert back["district"].tolist() == [f"'{lead}HYPERLINK(1)", "Orlen Vale"]


def test_numbers_stay_numbers_and_negative_numbers_keep_their_sign():
    table = pd.DataFrame(
        {"change": [-0.25, 0.5, np.nan], "year": np.array([2019, 2020, 2021], dtype="int32")}
    )
    back = pd.read_csv(io.BytesIO(exports.csv_bytes(table)))
    assert back["change"].iloc[0] == -0.25
    assert np.isnan(back["change"].iloc[2])
    assert back["year"].tolist() == [2019, 2020, 2021]


def test_in_a_mixed_column_only_the_strings_change():
    table = pd.DataFrame({"value": ["=1+1", -3.0, None, "plain"]})
    safe = exports.neutralise(table)
    assert safe["value"].tolist()[:2] == ["'=1+1", -3.0]
    assert safe["value"].iloc[2] is None
    assert safe["value"].iloc[3] == "plain"


def test_categorical_text_and_column_names_are_covered_and_the_input_is_unchanged():
    table = pd.DataFrame({"@county": pd.Categorical(["-x", "'-x", "Brisk"])})
    safe = exports.neutralise(table)
    assert list(safe.columns) == ["'@county"]
    assert safe.iloc[:, 0].tolist() == ["'-x", "'-x", "Brisk"]
    assert list(table.columns) == ["@county"]
    assert table["@county"].tolist() == ["-x", "'-x", "Brisk"]


def test_parquet_keeps_the_raw_strings():
    table = pd.DataFrame({"district": ["=cmd|' /C calc'!A0", "+1"], "gini": [0.3, 0.4]})
    back = pd.read_parquet(io.BytesIO(exports.parquet_bytes(table)))
    pd.testing.assert_frame_equal(back, table)


@given(st.lists(st.text(alphabet=st.characters(blacklist_categories=("Cs",))), min_size=1))
def test_every_text_comes_back_as_itself_or_quoted_exactly_when_it_would_run(texts):
    table = pd.DataFrame({"name": texts})
    back = exports.neutralise(table)["name"].tolist()
    for original, written in zip(texts, back, strict=True):
        if original[:1] in OWASP_LEADS:
            assert written == "'" + original
        else:
            assert written == original

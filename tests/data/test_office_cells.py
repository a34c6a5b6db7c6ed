"""Cells as offices write them. Reference for the number forms: Python's own float() on the
undecorated literal; the suppression codes are common practice of statistics offices."""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from explorer.data.office.cells import (
    SUPPRESSION_CODES,
    decimal_mark,
    is_numberlike,
    parse_number,
    strip_marker,
)


@pytest.mark.parametrize(
    ("text", "decimal", "value"),
    [
        ("12,345", ".", 12345.0),
        ("12 345", ".", 12345.0),
        ("12\u00a0345", ".", 12345.0),
        ("12\u202f345,5", ",", 12345.5),
        ("12.345,6", ",", 12345.6),
        ("1.234.567", ",", 1234567.0),
        ("3,25", ",", 3.25),
        ("-3.5", ".", -3.5),
        ("\u22124.25", ".", -4.25),
        ("1.2e-3", ".", 0.0012),
        ("12,345e", ".", 12345.0),
        ("870 (p)", ".", 870.0),
        ("14.5%", ".", 14.5),
    ],
)
def test_number_forms(text: str, decimal: str, value: float) -> None:
    assert parse_number(text, decimal)[0] == pytest.approx(value)


@pytest.mark.parametrize("code", sorted(SUPPRESSION_CODES))
def test_suppression_codes_are_missing_with_their_code(code: str) -> None:
    value, found, _ = parse_number(f" {code} ")
    assert math.isnan(value) and found == code
    assert is_numberlike(code)


def test_words_are_missing_but_flagged_as_text() -> None:
    value, code, _ = parse_number("see note")
    assert math.isnan(value) and code == "text"
    assert not is_numberlike("see note")


def test_flag_on_a_number_is_reported() -> None:
    assert parse_number("13,000e")[1] == "flag:e"
    assert parse_number("13,000")[1] is None


@pytest.mark.parametrize(
    ("text", "clean", "marker"),
    [
        ("Northland 3/", "Northland", "3/"),
        ("Total (r)", "Total", "(r)"),
        ("Alder (p)", "Alder", "(p)"),
        ("Birch 1)", "Birch", "1)"),
        ("Ash (p) 2/", "Ash", "(p) 2/"),
        ("Pine*", "Pine", "*"),
        ("Fenwick²", "Fenwick", "²"),
        ("Zone 12", "Zone 12", ""),
        ("  Lower   Marsh ", "Lower Marsh", ""),
    ],
)
def test_footnote_markers_are_removed(text: str, clean: str, marker: str) -> None:
    assert strip_marker(text) == (clean, marker)


def test_decimal_mark_is_decided_by_the_file() -> None:
    assert decimal_mark(["12.345,6", "3,25", "12,345"]) == ","
    assert decimal_mark(["12,345.6", "3.25", "12,345"]) == "."
    assert decimal_mark(["12,345"]) == "."  # ambiguous alone: the point is the default


@given(st.integers(min_value=0, max_value=10**9), st.integers(min_value=0, max_value=9))
def test_any_grouping_reads_the_same_number(whole: int, tenth: int) -> None:
    expected = float(f"{whole}.{tenth}")
    us = f"{whole:,}.{tenth}"
    continental = us.replace(",", "_").replace(".", ",").replace("_", ".")
    spaced = f"{whole:,}".replace(",", "\u00a0") + f",{tenth}"
    assert parse_number(us, ".")[0] == expected
    assert parse_number(continental, ",")[0] == expected
    assert parse_number(spaced, ",")[0] == expected


def test_semicolon_files_lean_to_the_decimal_comma_when_cells_cannot_tell() -> None:
    assert decimal_mark(["12.345", "1.000"], prefer=",") == ","
    assert decimal_mark(["12.345", "1.5"], prefer=",") == "."
    assert decimal_mark(["1.234.567"]) == ","

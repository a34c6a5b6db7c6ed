"""District names across files. Suggestions are ranked by difflib's ratio (Ratcliff and
Metzener 1988, 'Pattern matching: the gestalt approach', Dr. Dobb's Journal 13(7)) or the
share of words in common (Jaccard 1912); difflib itself is the reference for the scores."""

from __future__ import annotations

import difflib

import pandas as pd
import pytest

from explorer.data.model import DataError
from explorer.data.office.names import apply_crosswalk, match_names, normalise


@pytest.mark.parametrize(
    ("a", "b"),
    [
        ("Lower Marsh", " lower-marsh "),
        ("Élmere", "Elmere"),
        ("Nørdland 3/", "NORDLAND"),
        ("St. Alder (p)", "St Alder"),
        ("Brindle\u00a0Cove", "Brindle  Cove"),
    ],
)
def test_normalised_names_are_equal(a: str, b: str) -> None:
    assert normalise(a) == normalise(b)


def test_normalising_does_not_merge_different_names() -> None:
    assert normalise("Lower Marsh") != normalise("Lower Marsh North")


def test_names_match_after_normalising_and_the_rest_get_suggestions() -> None:
    boundary = {"LM1": "Lower Marsh North", "AS": "Ashvale", "EL": "Élmere", "KH": "Kestrel Hts"}
    match = match_names(
        ["ASHVALE", "Elmere 2/", "Lower Marsh", "Kestrel Heights", "Zzyzx"], boundary
    )
    assert match.matched == {"ASHVALE": "AS", "Elmere 2/": "EL"}
    assert match.how["ASHVALE"] == "normalised"
    assert match.suggestions["Lower Marsh"][0][0] == "LM1"
    assert match.suggestions["Kestrel Heights"][0][0] == "KH"
    assert "Zzyzx" not in match.suggestions
    assert set(match.boundary_only) == {"LM1", "KH"}
    text = " ".join(match.messages())
    assert "'LM1' in the boundaries looks like 'Lower Marsh' in the panel" in text


def test_suggestion_scores_follow_difflib() -> None:
    match = match_names(["Ashvalle"], ["Ashvale", "Ashton"])
    best, score = match.suggestions["Ashvalle"][0]
    assert best == "Ashvale"
    assert score == pytest.approx(
        difflib.SequenceMatcher(None, "ashvalle", "ashvale").ratio(), abs=1e-3
    )


def test_numeric_codes_match_zero_padded_codes_only_when_all_do() -> None:
    match = match_names(["1", "2", "10"], ["01", "02", "10"])
    assert match.matched == {"1": "01", "2": "02", "10": "10"}
    assert match.how["1"] == "zero-padded"
    partial = match_names(["1", "7"], ["01", "02"])
    assert partial.matched == {} and set(partial.panel_only) == {"1", "7"}


def test_leading_zeros_are_kept_apart() -> None:
    match = match_names(["01", "1"], ["01", "02"])
    assert match.matched == {"01": "01"}
    assert match.panel_only == ("1",)
    assert match.zeros == {"1": "01"}
    assert "differs from '01' only by leading zeros" in " ".join(match.messages())


def test_crosswalk_renames_and_reports_what_it_missed() -> None:
    table = pd.DataFrame({"region": ["Lower Marsh", "Ashvale", "Zzyzx"], "year": [2001] * 3})
    walk = pd.DataFrame({"region": ["Lower Marsh", "Ashvale"], "boundary_id": ["LM1", "AS"]})
    renamed, uncovered = apply_crosswalk(table, walk)
    assert renamed["region"].tolist() == ["LM1", "AS", "Zzyzx"]
    assert uncovered == ("Zzyzx",)


def test_crosswalk_with_two_ids_for_one_region_is_refused() -> None:
    table = pd.DataFrame({"region": ["Ashvale"], "year": [2001]})
    walk = pd.DataFrame({"region": ["Ashvale", "Ashvale"], "boundary_id": ["A", "B"]})
    with pytest.raises(DataError, match="more than one id"):
        apply_crosswalk(table, walk)
    with pytest.raises(DataError, match="boundary_id"):
        apply_crosswalk(table, walk[["region"]])

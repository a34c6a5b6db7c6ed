"""Fuzzing of link and view-file reading: whatever arrives, a view and notices come back.

Hypothesis generates arbitrary parameter dicts, arbitrary text and arbitrary JSON
documents (a quick profile and a ``slow`` one of 10,000+ examples each).
"""

from __future__ import annotations

import json

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from explorer import views
from explorer.views import ViewState, from_json, from_query

KNOWN = {
    "datasets": ["demo"],
    "years": list(range(2010, 2021)),
    "districts": ["D-01", "D-02"],
    "levels": ["county"],
}
keys = st.one_of(st.sampled_from(list(views.QUERY_KEYS.values())), st.text(max_size=8))
scalars = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(),
    st.integers(-(10**6), 10**6).map(str),
    st.sampled_from(["2015", "gini", "breaks", "1", "D-01,D-02", "%ZZ", "a%2Cb", ","]),
)
json_values = st.one_of(
    scalars,
    st.recursive(
        scalars,
        lambda inner: (
            st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=4), inner, max_size=3)
        ),
        max_leaves=6,
    ),
)
query_values = st.one_of(
    scalars, st.lists(st.one_of(st.text(), st.integers()), max_size=3), json_values
)
field_names = st.one_of(st.sampled_from(["rift_view", *views.QUERY_KEYS]), st.text(max_size=8))
view_documents = st.dictionaries(field_names, json_values, max_size=8).map(
    lambda body: {"rift_view": 1, **body} if "rift_view" not in body else body
)

_COMMON = {"deadline": None, "suppress_health_check": [HealthCheck.too_slow]}


def _check(result) -> None:
    view, notices = result
    assert isinstance(view, ViewState)
    assert isinstance(notices, list) and all(isinstance(n, str) for n in notices)
    assert len(notices) <= views._MAX_NOTICES
    # whatever came back is itself a valid, round-trippable view
    assert from_query(view.to_query()) == (view, [])


def _query(params):
    _check(from_query(params))
    _check(from_query(params, known=KNOWN))


def _text(text):
    _check(from_json(text))
    _check(from_json(text, known=KNOWN))


def _document(body):
    try:
        text = json.dumps(body)
    except ValueError:  # integers too long for the standard library's str()
        return
    _check(from_json(text, known=KNOWN))


params_strategy = st.dictionaries(keys, query_values, max_size=10)


@settings(max_examples=300, **_COMMON)
@given(params_strategy)
def test_any_link_parameters_give_a_view_and_notices(params):
    _query(params)


@settings(max_examples=300, **_COMMON)
@given(st.one_of(st.text(), st.binary()))
def test_any_text_as_a_view_file_gives_a_view_and_notices(text):
    _text(text)


@settings(max_examples=300, **_COMMON)
@given(view_documents)
def test_any_json_document_as_a_view_file_gives_a_view_and_notices(body):
    _document(body)


@pytest.mark.slow
@settings(max_examples=10_000, **_COMMON)
@given(params_strategy)
def test_any_link_parameters_give_a_view_and_notices_long_run(params):
    _query(params)


@pytest.mark.slow
@settings(max_examples=10_000, **_COMMON)
@given(st.one_of(st.text(), st.binary()))
def test_any_text_as_a_view_file_gives_a_view_and_notices_long_run(text):
    _text(text)


@pytest.mark.slow
@settings(max_examples=10_000, **_COMMON)
@given(view_documents)
def test_any_json_document_as_a_view_file_gives_a_view_and_notices_long_run(body):
    _document(body)

"""Tests of explorer.views: a view survives links and view files; bad values never break it.

The round trips are checked through the standard library's URL encoding
(urllib.parse.urlencode / parse_qsl, RFC 3986 percent-encoding) and JSON parser (RFC 8259),
the reference codecs a browser link and a saved file go through.
"""

from __future__ import annotations

import json
from urllib.parse import parse_qsl, urlsplit

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from explorer import views
from explorer.views import Known, ViewState, from_json, from_query

DEFAULT = ViewState()

years = st.one_of(st.none(), st.integers(1000, 9999))
labels = st.text(
    st.characters(blacklist_categories=("Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp")),
    min_size=1,
    max_size=20,
).filter(lambda s: s.strip() == s and s != "")
indices = st.one_of(
    st.sampled_from(
        ["gini", "theil_t", "mld", "cv", "palma", "s80_s20", "top10_share", "bottom40_share"]
    ),
    st.builds(lambda a: f"ge_{a}", st.sampled_from(["-1", "0", "0.5", "1", "2"])),
    st.builds(lambda e: f"atkinson_{e}", st.sampled_from(["0.5", "1", "2"])),
)


@st.composite
def view_states(draw) -> ViewState:
    """Any valid view."""
    start, end = draw(years), draw(years)
    if start is not None and end is not None and start > end:
        start, end = end, start
    return ViewState(
        dataset=draw(st.from_regex(r"[A-Za-z0-9][A-Za-z0-9_.-]{0,20}", fullmatch=True)),
        page=draw(st.sampled_from(list(views.PAGES))),
        year=draw(years),
        year_from=start,
        year_to=end,
        index=draw(indices),
        method=draw(st.sampled_from(views.LORENZ_METHODS)),
        districts=tuple(draw(st.lists(labels, max_size=6))),
        classes=draw(st.sampled_from(views.CLASS_SCHEMES)),
        k=draw(st.integers(3, 9)),
        level=draw(st.one_of(st.none(), labels)),
        counties=tuple(draw(st.lists(labels, max_size=4))),
        decomposition_index=draw(st.sampled_from(["theil_t", "mld", "gini", "ge_2", "ge_0.5"])),
        show_intervals=draw(st.booleans()),
        layer=draw(st.sampled_from(views.MAP_LAYERS)),
        by_county=draw(st.booleans()),
        bootstrap=draw(st.booleans()),
    )


@settings(max_examples=200, deadline=None)
@given(view_states())
def test_any_valid_view_survives_the_link_round_trip(view):
    """to_query -> from_query is the identity with no notices."""
    assert from_query(view.to_query()) == (view, [])


@settings(max_examples=200, deadline=None)
@given(view_states())
def test_any_valid_view_survives_a_real_url(view):
    """Through a full URL string (urlencode, then parse_qsl as a web server does)."""
    url = "http://localhost:8501/" + view.to_link()
    params = dict(parse_qsl(urlsplit(url).query, keep_blank_values=True))
    assert from_query(params) == (view, [])


@settings(max_examples=200, deadline=None)
@given(view_states())
def test_any_valid_view_survives_the_view_file_round_trip(view):
    """to_json -> from_json is the identity with no notices; the file is JSON with a version."""
    text = view.to_json()
    assert json.loads(text)["rift_view"] == views.VIEW_FILE_VERSION
    assert from_json(text) == (view, [])
    assert from_json(text.encode("utf-8")) == (view, [])


def test_default_view_gives_an_empty_link():
    assert DEFAULT.to_query() == {}
    assert DEFAULT.to_link() == ""
    assert from_query({}) == (DEFAULT, [])


def test_link_keys_are_documented_in_the_module():
    """Every short key appears in the module's table of link keys."""
    for key in views.QUERY_KEYS.values():
        assert f"``{key}``" in views.__doc__


KNOWN = Known.of(
    {
        "datasets": ["demo", "a1b2c3d4e5f60718"],
        "years": range(2012, 2023),
        "indices": ["gini", "theil_t", "mld", "palma"],
        "methods": ["linear", "upper", "pchip", "auto"],
        "districts": ["D-01", "D-02", "D-03"],
        "levels": ["county"],
        "counties": ["Upper Vale", "Saltmarsh"],
    }
)


@pytest.mark.parametrize(
    ("key", "raw", "field"),
    [
        ("y", "abc", "year"),
        ("y", "1850", "year"),  # outside the panel's years
        ("y", "2019.5", "year"),
        ("y0", "-1", "year_from"),
        ("ix", "evil()", "index"),
        ("ix", "__import__('os').system('true')", "index"),
        ("ix", "atkinson_2", "index"),  # well formed but not computed for this dataset
        ("k", "99", "k"),
        ("k", "2", "k"),
        ("k", "five", "k"),
        ("d", "not-in-workspace", "dataset"),
        ("d", "../../etc/passwd", "dataset"),
        ("pg", "settings", "page"),
        ("lm", "spline", "method"),
        ("cl", "jenks", "classes"),
        ("lv", "province", "level"),
        ("dx", "palma", "decomposition_index"),
        ("iv", "maybe", "show_intervals"),
    ],
)
def test_malformed_link_values_fall_back_to_defaults_with_a_notice(key, raw, field):
    """Each bad value resets only its own field and says so (never raises)."""
    params = {"pg": "timelines", "k": "7", key: raw}
    view, notices = from_query(params, known=KNOWN)
    assert getattr(view, field) == getattr(DEFAULT, field)
    assert len(notices) == 1
    assert views._PLAIN[field] in notices[0]
    if field != "page":
        assert view.page == "timelines"


def test_notice_quotes_the_rejected_value_and_the_panel_years():
    view, notices = from_query({"y": "1850"}, known=KNOWN)
    assert view.year is None
    assert "1850" in notices[0] and "2012–2022" in notices[0]


def test_unknown_districts_are_dropped_one_by_one():
    view, notices = from_query({"sel": "D-01,D-99,D-03"}, known=KNOWN)
    assert view.districts == ("D-01", "D-03")
    assert len(notices) == 1 and "D-99" in notices[0]


def test_unknown_keys_are_ignored_with_a_notice():
    view, notices = from_query({"zoom": "3", "pg": "breakdown"}, known=KNOWN)
    assert view.page == "breakdown"
    assert notices == ["Ignored the unknown link setting “zoom”."]


def test_backward_year_range_is_turned_round_with_a_notice():
    view, notices = from_query({"y0": "2020", "y1": "2014"}, known=KNOWN)
    assert (view.year_from, view.year_to) == (2014, 2020)
    assert len(notices) == 1


def test_repeated_link_values_use_the_last():
    """Query strings may repeat a key (RFC 3986 leaves it open); the last one counts."""
    view, notices = from_query({"k": ["4", "6"]})
    assert view.k == 6 and notices == []


def test_long_notice_lists_are_capped():
    params = {f"junk{i}": "x" for i in range(100)}
    _, notices = from_query(params)
    assert len(notices) == views._MAX_NOTICES
    assert "81 more" in notices[-1]


def test_case_and_spaces_in_choice_values_are_forgiven():
    view, notices = from_query({"pg": " Atlas ", "cl": "BREAKS"})
    # "Atlas" is the map page's earlier key: old links still open the map.
    assert (view.page, view.classes, notices) == ("map", "breaks", [])


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ('{"rift_view": 2, "k": 4}', "version"),
        ('{"k": 4}', "version"),
        ('{"rift_view": true, "k": 4}', "version"),
        ("not json at all", "not valid JSON"),
        ("[1, 2, 3]", "JSON object"),
        ("[" * 50_000 + "]" * 50_000, "not valid JSON"),
        (b"\xff\xfe\x00junk", "UTF-8"),
        ("", "not valid JSON"),
    ],
)
def test_files_that_are_not_view_files_give_the_default_view(text, words):
    view, notices = from_json(text)
    assert view == DEFAULT
    assert len(notices) == 1 and words in notices[0]


def test_huge_view_files_are_refused_before_parsing():
    body = {"rift_view": 1, "districts": ["D-01"] * 200_000}
    view, notices = from_json(json.dumps(body))
    assert view == DEFAULT
    assert "MB" in notices[0]


@pytest.mark.parametrize(
    ("field", "raw"),
    [
        ("year", "twenty"),
        ("year", 2019.0),
        ("year", True),
        ("k", [5]),
        ("k", {"value": 5}),
        ("index", 3),
        ("districts", 17),
        ("show_intervals", "perhaps"),
        ("page", None),
        ("level", 4),
    ],
)
def test_wrong_types_in_a_view_file_fall_back_field_by_field(field, raw):
    text = json.dumps({"rift_view": 1, "page": "district", "k": 8, field: raw})
    view, notices = from_json(text, known=KNOWN)
    assert getattr(view, field) == getattr(DEFAULT, field)
    assert len(notices) == 1
    if field not in ("page", "k"):
        assert (view.page, view.k) == ("district", 8)


def test_view_file_checks_choices_like_a_link():
    text = json.dumps(
        {"rift_view": 1, "dataset": "elsewhere", "year": 2030, "districts": ["D-02", "X"]}
    )
    view, notices = from_json(text, known=KNOWN)
    assert (view.dataset, view.year, view.districts) == ("demo", None, ("D-02",))
    assert len(notices) == 3


def test_unknown_view_file_fields_are_ignored_with_a_notice():
    view, notices = from_json('{"rift_view": 1, "theme": "dark", "k": 4}')
    assert view.k == 4 and len(notices) == 1 and "theme" in notices[0]


@pytest.mark.parametrize(
    "changes",
    [
        {"page": "settings"},
        {"k": 12},
        {"index": "evil()"},
        {"year_from": 2020, "year_to": 2010},
        {"districts": ("ok", "")},
        {"year": "2019"},
    ],
)
def test_invalid_views_cannot_be_built_in_code(changes):
    """A programming error is loud; only links and files are forgiving."""
    with pytest.raises(ValueError):
        ViewState(**changes)


def test_duplicate_districts_are_kept_once_in_order():
    assert ViewState(districts=("b", "a", "b")).districts == ("b", "a")


def test_page_names_are_our_own():
    assert [ViewState(page=p).page_name for p in views.PAGES] == [
        "Map",
        "Timelines",
        "Breakdown",
        "District sheet",
        "Compare",
        "What if",
        "Briefing",
        "Intake",
    ]


def test_links_and_view_files_with_the_map_pages_earlier_key_still_open_the_map():
    # The map page was called "atlas" before; links and view files made then still open it.
    assert from_query({"pg": "atlas"}) == (ViewState(page="map"), [])
    body = {"rift_view": 1, "page": "atlas", "year": 2012}
    assert from_json(json.dumps(body)) == (ViewState(page="map", year=2012), [])
    assert ViewState(page="map").to_query() == {}


def test_a_view_file_text_with_its_byte_order_mark_still_decoded_is_read():
    # A byte-order mark decoded as text (U+FEFF first) is the file's signature, not part
    # of the JSON (Unicode Standard, section 23.8 "Signature": common practice).
    from explorer import views

    text = "\ufeff" + '{"rift_view": 1, "dataset": "demo", "year": 2015}'
    view, notices = views.from_json(text)
    assert view.year == 2015 and not notices
    assert views.check_view_file(text.encode("utf-8")) == text[1:]

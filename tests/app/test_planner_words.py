"""What a planner reads: words instead of keys, no raw 'nan' or 'None', full captions."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from app_helpers import ROOT, as_read, dataframe, page, run, view
from hypothesis import given
from hypothesis import strategies as st

from explorer.present import vocabulary

RAW_KEYS = {
    "population_within",
    "population_between",
    "relative_income",
    "theil_t",
    "klass",
    "(all)",
    "region",
}


def open_page(app, name, **params):
    app.query_params.update(params)
    run(app)
    app.switch_page(page(name))
    return run(app)


def shown_columns(table: pd.DataFrame) -> pd.DataFrame:
    return table[[c for c in table.columns if c.endswith("(shown)")]]


def test_change_terms_are_shown_in_words_that_name_the_counties(app):
    open_page(app, "breakdown", dx="theil_t", y0="2008", y1="2025")
    terms = dataframe(app, "change_table")
    words = shown_columns(terms)
    assert not set(words.to_numpy().ravel()) & RAW_KEYS
    # Mookherjee & Shorrocks (1982), "A decomposition analysis of the trend in UK income
    # inequality", Economic Journal 92: 886-902, name this term the effect of population
    # shifts; the
    # shown row is the one whose key it is (the data behind the table keep the keys).
    row = terms[(terms["component"] == "population_within") & (terms["group"] == "(all)")]
    assert row["component (shown)"].tolist() == ["Population shifts within counties"]
    # One key, one word: the words tell every term apart (common practice for a legend).
    pairs = terms[["component", "level", "component (shown)"]].drop_duplicates()
    assert len(pairs) == len(terms[["component", "level"]].drop_duplicates())


def test_breakdown_shares_read_as_percentages_and_rounding_noise_as_zero(app):
    open_page(app, "breakdown", d="demo-means", dx="theil_t", y="2025")
    metrics = [m.value for m in app.metric]
    assert metrics and not [m for m in metrics if m.startswith("-0.0")]
    detail = dataframe(app, "breakdown_detail")
    # Within districts is exactly zero for district means (Shorrocks 1980, Econometrica 48:
    # 613-625: a group of one unit has no inequality inside).
    within = detail[(detail["component"] == "within") & (detail["level"] == "region")]
    within = within[within["group"] == "(all)"]
    assert (within["value"] == 0.0).all()


@pytest.mark.parametrize("dataset", ["demo", "demo-households", "demo-means"])
@pytest.mark.parametrize("name", ["atlas", "district", "breakdown"])
def test_no_metric_shows_a_raw_nan_or_none(app, dataset, name):
    open_page(app, name, d=dataset)
    assert view(app).dataset == dataset
    values = [m.value for m in app.metric]
    if (name, dataset) != ("district", "demo-means"):  # a means-only sheet has no metrics
        assert values, "the page shows its figures as metrics"
    assert not [v for v in values if v.lower() in ("nan", "none", "inf", "-inf")]


def test_an_infinite_upper_bound_is_written_out_where_the_data_are_infinite(app):
    open_page(app, "district", sel="BRE01", y="2025")
    table = dataframe(app, "district_indices")
    infinite = np.isinf(table["Upper bound"].to_numpy(dtype=float))
    # Theil T's upper curve jumps at p = 1 (Gastwirth 1972, Review of Economics and
    # Statistics 54: 306-316)
    assert infinite.any()
    shown = table["Upper bound (shown)"]
    assert (shown[infinite] == "no finite bound").all()
    assert (shown[~infinite] != "no finite bound").all()
    assert set(table["Index (shown)"]) & {"Gini coefficient", "Theil T"}


def test_mean_incomes_on_the_atlas_read_as_whole_currency_units(app):
    open_page(app, "atlas", d="demo-means", y="2025")
    ranked = dataframe(app, "atlas_ranking")
    metrics = {as_read(m.label): m.value for m in app.metric}
    top = ranked.iloc[0]
    shown = metrics[f"Highest: {top['District']}"]
    assert shown == f"{top['Value']:,.0f}"  # thousands separators, no decimals
    assert int(shown.replace(",", "")) == round(float(top["Value"]))


def test_every_problem_of_a_bad_file_is_written_out_in_full(app):
    run(app)
    app.switch_page(page("intake"))
    run(app)
    content = (ROOT / "tests" / "fixtures" / "bad" / "shares_above_one.csv").read_bytes()
    app.file_uploader(key="intake_panel").set_value(("shares_above_one.csv", content, "text/csv"))
    run(app)
    app.button(key="intake_read").click()
    run(app)
    problems = dataframe(app, "problems_table")
    text = as_read(" ".join(m.value for m in app.markdown))
    for message in problems["message"]:
        assert message in text
    assert not {"None", "<NA>", "nan"} & set(problems.to_numpy().ravel())


@given(st.text(alphabet=st.sampled_from("abc de,;.()"), max_size=400))
def test_wrapped_caption_lines_fit_and_keep_every_word(text):
    # textwrap's contract (Python documentation): no line longer than the width, words kept.
    lines = vocabulary.wrap(text, width=40)
    assert all(len(line) <= 40 for line in lines)
    assert " ".join(lines).split() == text.split()


@pytest.mark.parametrize(
    ("level", "expected"),
    [("county", "counties"), ("region", "districts"), ("valley", "valleys"), ("zones", "zones")],
)
def test_group_names_take_the_english_plural(level, expected):
    assert vocabulary.groups_word(level) == expected  # common practice (English plurals)


def test_the_upload_summary_reads_in_words_not_python_values(app):
    from test_intake import small_panel, upload

    run(app)
    upload(app, small_panel())
    summary = dataframe(app, "intake_summary").set_index("item")
    found = summary["Found"]
    assert not [text for text in found if any(mark in text for mark in "{}[]")]
    assert found["years"] == "2010–2014 (5 years)"  # small_panel keeps 2010..2014
    assert found["levels"] == "2 counties"  # Brennhollow and Tanvery
    assert "None" not in set(found)


def test_a_view_saved_on_intake_keeps_the_analysis_page_it_came_from(app):
    open_page(app, "timelines", y="2012")
    app.switch_page(page("intake"))
    run(app)
    assert view(app).page == "timelines" and view(app).year == 2012


def test_warnings_of_a_partly_broken_panel_leave_missing_lines_blank(app):
    from test_intake import DECILES, upload

    frame = pd.read_csv(DECILES)
    frame = frame[frame["county"].isin(["Tanvery"]) & frame["year"].between(2010, 2014)]
    broken = (frame["region"] == frame["region"].iloc[0]) & (frame["year"] == 2012)
    frame.loc[broken, "share_3"] = 0.9  # shares of one district-year no longer sum to 1
    run(app)
    upload(app, frame.to_csv(index=False).encode())
    warnings = dataframe(app, "intake_warnings")
    cells = set(warnings.to_numpy().ravel())
    assert not {"None", "<NA>", "nan"} & cells
    assert "" in cells  # the panel-wide warning has no line (Problem.row is None)

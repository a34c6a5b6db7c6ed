"""Every page that computes shows the district-years set aside, and the dataset's facts."""

from __future__ import annotations

import pytest
from app_helpers import chart_words, charts, page, run, save_demo_with_a_gap

from explorer.data.dataset_store import DatasetFacts
from explorer.data.workspace import Workspace

COMPUTING_PAGES = ("atlas", "timelines", "breakdown", "district")


def _expander_labels(at) -> list[str]:
    return [e.label for e in at.expander]


@pytest.mark.parametrize("name", COMPUTING_PAGES)
def test_every_computing_page_lists_the_set_aside_district_year(app, tmp_path, name):
    # The shares of CAL03 in 2015 sum to about 1.35, so the reader sets that year aside
    # (shares of a distribution sum to one: common practice).
    dataset = save_demo_with_a_gap(tmp_path / "workspace", "CAL03", 2015)
    app.query_params.update({"d": dataset, "y": "2016"})
    run(app)
    app.switch_page(page(name))
    run(app)
    labels = [x for x in _expander_labels(app) if "set aside" in x]
    assert labels == ["1 district-year set aside and not used in any figure here"], labels
    listed = [d.value for d in app.get("dataframe")]
    hits = [t for t in listed if {"region", "year", "reason"} <= set(t.columns)]
    assert any(((t["region"] == "CAL03") & (t["year"] == 2015)).any() for t in hits)


def test_a_clean_dataset_shows_no_set_aside_notice(app):
    run(app)
    assert not [x for x in _expander_labels(app) if "set aside" in x]


def test_saved_facts_reach_the_captions_of_a_reopened_dataset(app, tmp_path):
    folder = tmp_path / "workspace"
    dataset = save_demo_with_a_gap(folder, "CAL03", 2015)
    facts = DatasetFacts(
        name="Gapped deciles",
        income_concept="market income",
        unit="household",
        currency="marks",
        price_base="2012 prices",
        source="Office of Kellvaran counts, table 7",
    )
    Workspace(folder).set_facts(dataset, facts)
    app.query_params.update({"d": dataset, "y": "2016"})
    run(app)
    # The figures carry the caption in their Vega-Lite spec, or (the Map, whose spec stays
    # the same between views) in the small tables sent beside it.
    text = " ".join(chart_words(c) for c in charts(app)).replace("\\n", " ").replace("\n", " ")
    for word in ("market income", "per household", "marks", "2012 prices", "table 7"):
        assert word in text, word

"""The dataset's facts reach the report (top and every figure) and the view file."""

from __future__ import annotations

import dataclasses
import json

from explorer import data as readers
from explorer.data.dataset_store import DatasetFacts, with_facts
from explorer.figures.report import report_html
from explorer.views import FACTS_ENTRY, ViewState, from_json, view_file_text

FACTS = DatasetFacts(
    name="Coast survey",
    income_concept="gross household income",
    unit="household",
    currency="marks",
    price_base="2012 prices",
    source="Coast office, table 4",
)


def _panel():
    panel = readers.demo_panel("brackets")
    return with_facts(dataclasses.replace(panel, name=FACTS.name), FACTS)


def test_report_names_the_facts_near_the_top_and_under_every_figure():
    view = ViewState(dataset="demo", year=2015)
    text = report_html(view, _panel())
    line = "gross household income; per household; marks, 2012 prices. Source: Coast office"
    head, _, _ = text.partition("Read this first")
    assert line in head
    captions = text.split("<figcaption>")[1:]
    assert captions, "the report drew no figure"
    assert all(line in c.split("</figcaption>")[0] for c in captions)


def test_view_file_carries_the_facts_and_reads_back_without_a_notice():
    view = ViewState(dataset="demo", year=2015, page="timelines")
    text = view_file_text(view, FACTS.to_dict())
    assert json.loads(text)[FACTS_ENTRY]["currency"] == "marks"
    again, notices = from_json(text)
    assert again == view
    assert notices == []


def test_view_file_without_facts_has_no_facts_entry():
    assert FACTS_ENTRY not in json.loads(view_file_text(ViewState(), None))

"""Facts given on saving come back with the opened panel; the demo has its own."""

from __future__ import annotations

import types

from explorer import data as readers
from explorer.data.dataset_store import DatasetFacts, facts_of
from explorer.data.workspace import Workspace
from explorer.present.vocabulary import caption


def test_facts_ride_with_the_opened_panel(tmp_path):
    panel_path, boundary_path = readers.demo_paths("brackets")
    panel = readers.load_panel(panel_path, boundary_path)
    facts = DatasetFacts(
        name="Coast",
        income_concept="gross income",
        unit="person",
        currency="marks",
        price_base="current prices",
        source="Survey 9",
    )
    ws = Workspace(tmp_path / "ws")
    ident = ws.add(panel, [panel_path, boundary_path], {}, facts)
    opened = ws.open(ident)
    assert facts_of(opened) == facts
    view = types.SimpleNamespace(method="linear", year=2015, counties=(), dataset=ident)
    text = caption(view, opened)
    assert "gross income; per person; marks, current prices. Source: Survey 9" in text


def test_demo_has_facts_of_its_own():
    facts = facts_of(readers.demo_panel("brackets"))
    assert facts.currency and facts.unit == "person" and "invented" in facts.source

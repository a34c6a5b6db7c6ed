"""Dataset facts (name, income concept, unit, currency and price base, source) in the
manifest, old manifests without them, and the equal-weight notice."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from explorer.data.load import load_panel
from explorer.data.model import DataError
from explorer.data.workspace import DatasetFacts, Workspace, equal_weight_notice

OFFICE = Path(__file__).parents[1] / "fixtures" / "office"
ACROSS = OFFICE / "income_years_across.csv"

FACTS = DatasetFacts(
    name="Valdoria per-capita income",
    income_concept="personal income",
    unit="per capita",
    currency="crowns",
    price_base="current prices",
    source="Valdoria Board of Statistics, regional accounts",
)


def _stored(tmp_path, facts=None):
    workspace = Workspace(tmp_path / "ws")
    panel = load_panel(ACROSS)
    return workspace, workspace.add(panel, [ACROSS], {"kind": "means"}, facts)


def test_facts_are_stored_and_the_panel_opens_with_their_name_and_concept(tmp_path):
    workspace, ident = _stored(tmp_path, FACTS)
    assert workspace.facts(ident) == FACTS
    panel = workspace.open(ident)
    assert panel.name == FACTS.name
    assert panel.income_concept == "personal income"
    listed = workspace.list().set_index("id")
    assert listed.loc[ident, "name"] == FACTS.name


def test_adding_again_with_other_facts_keeps_the_id_and_updates_the_facts(tmp_path):
    workspace, ident = _stored(tmp_path, FACTS)
    changed = DatasetFacts(name="Per-capita income, Valdoria", unit="person")
    again = workspace.add(load_panel(ACROSS), [ACROSS], {"kind": "means"}, changed)
    assert again == ident
    assert workspace.facts(ident) == changed
    assert workspace.open(ident).name == "Per-capita income, Valdoria"


def test_a_manifest_written_before_facts_still_opens(tmp_path):
    workspace, ident = _stored(tmp_path)
    manifest_path = workspace.datasets_dir / ident / "manifest.json"
    manifest = json.loads(manifest_path.read_text(encoding="utf-8"))
    manifest.pop("facts", None)
    manifest_path.write_text(json.dumps(manifest), encoding="utf-8")
    assert workspace.facts(ident) == DatasetFacts()
    assert workspace.open(ident).kind == "means"


def test_an_unknown_unit_is_refused_with_the_choices():
    with pytest.raises(DataError, match="per capita"):
        DatasetFacts(unit="family")


def test_caption_says_concept_unit_money_and_source():
    assert FACTS.caption() == (
        "personal income; per capita; crowns, current prices. "
        "Source: Valdoria Board of Statistics, regional accounts"
    )
    assert DatasetFacts(unit="household").caption() == "per household"


def test_each_district_counts_equally_without_populations():
    alone = load_panel(ACROSS)
    assert "each district counts equally" in equal_weight_notice(alone)
    joined = load_panel(ACROSS, population=OFFICE / "population_long.csv")
    assert equal_weight_notice(joined) is None


def test_stored_options_keep_the_crosswalk(tmp_path):
    workspace = Workspace(tmp_path / "ws")
    walk = {"Lower Marsh": "LM"}
    panel = load_panel(ACROSS, crosswalk=walk)
    ident = workspace.add(panel, [ACROSS], {"crosswalk": walk})
    assert workspace.options(ident)["crosswalk"] == walk
    again = load_panel(ACROSS, crosswalk=workspace.options(ident)["crosswalk"])
    assert "LM" in again.regions

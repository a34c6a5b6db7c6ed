"""The What-if page: a scenario drafted with the page's controls, in the link, the report.

The identities of the scenarios themselves are checked in tests/stats/test_scenario.py; here
the page's figures are checked against the scenario tables and against facts of the trade: a
balanced levy raises exactly what the transfer costs (by construction, common practice), a
transfer from the top decile to the bottom deciles lowers the Gini (the principle of
transfers, Dalton 1920, *Economic Journal* 30: 348–361), and district means cannot carry one.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from explorer import figures
from explorer.data import demo_panel
from explorer.figures import what_if
from explorer.figures.compute import PlainCompute
from explorer.views import ViewState, from_query

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests" / "app"))


def money(text: str) -> float:
    return float(text.replace(",", ""))


@pytest.fixture(scope="module")
def brackets():
    return demo_panel("brackets")


@given(
    to=st.sampled_from(["deciles", "median"]),
    deciles=st.integers(1, 5),
    share=st.sampled_from([0.3, 0.5, 0.6, 0.8]),
    amount=st.floats(1, 5000).map(lambda a: round(a, 2)),
    top_up=st.booleans(),
    levy=st.booleans(),
    districts=st.sets(st.sampled_from(["BRE01", "CAL02", "OSS03"]), max_size=2),
)
@settings(max_examples=40, deadline=None)
def test_a_draft_survives_the_trip_through_the_link(
    to, deciles, share, amount, top_up, levy, districts
):
    draft = what_if.Draft(
        to=to,
        deciles=deciles,
        share=share,
        amount=amount,
        top_up=top_up and to == "median",
        districts=tuple(sorted(districts)),
        levy=levy,
    )
    text = what_if.scenario_of(draft)
    view, notices = from_query(ViewState(scenario=text).to_query())
    assert not notices and view.scenario == text
    back = what_if.draft_of(view.scenario)
    assert back.to == draft.to and back.levy == draft.levy and back.districts == draft.districts
    if to == "deciles":
        assert back.deciles == deciles and back.amount == pytest.approx(amount)
    else:
        assert back.share == pytest.approx(share) and back.top_up == draft.top_up


def test_a_balanced_levy_raises_what_the_transfer_costs_and_the_gini_falls(brackets):
    view = ViewState(year=int(brackets.years[-1]))
    shown = what_if.what_if(brackets, view, PlainCompute(brackets))
    facts = dict(shown.budget)
    cost = money(next(v for k, v in facts.items() if k.startswith("Cost of the transfer")))
    revenue = money(next(v for k, v in facts.items() if k.startswith("Revenue of the levy")))
    assert cost == pytest.approx(revenue, rel=1e-9) and cost > 0
    gini = shown.indices.set_index("index").loc["gini"]
    assert gini["after"] < gini["before"]
    assert gini["change"] == pytest.approx(gini["after"] - gini["before"], abs=1e-12)
    # the figures are the scenario table's province rows
    table = shown.result.indices
    row = table[(table["region"] == "(all)") & (table["index"] == "gini")].iloc[0]
    assert gini["after"] == row["after"]


def test_districts_a_year_lacks_are_taken_out_and_said(brackets):
    year = int(brackets.years[-1])
    draft = what_if.Draft(districts=("BRE01", "NOWHERE1"))
    shown = what_if.what_if(
        brackets, ViewState(year=year, scenario=what_if.scenario_of(draft)), PlainCompute(brackets)
    )
    assert any("NOWHERE1" in n for n in shown.notes)
    budget = shown.result.budget
    reached = budget[(budget["kind"] == "transfer") & (budget["people"] > 0)]["region"]
    assert set(reached) <= {"BRE01", "(all)"}


def test_district_means_cannot_carry_a_scenario():
    panel = demo_panel("means")
    shown = what_if.what_if(panel, ViewState(dataset="demo-means"), PlainCompute(panel))
    assert shown.indices is None and "District means" in shown.notice


def test_the_report_carries_the_views_scenario(brackets):
    view = ViewState(year=int(brackets.years[-1]), scenario=what_if.scenario_of(what_if.Draft()))
    parts = figures.sections(view, brackets)
    assert any(t.startswith("What if: the province's inequality") for t in parts.tables)
    assert any(c.startswith("What if: who gains") for c in parts.charts)
    plain = figures.sections(ViewState(year=view.year), brackets)
    assert not any(t.startswith("What if") for t in plain.tables)


def test_the_page_in_the_app_writes_the_scenario_into_the_link(tmp_path, monkeypatch):
    from app_helpers import APP, page, run
    from streamlit.testing.v1 import AppTest

    monkeypatch.setenv("RIFT_DATA", str(tmp_path / "workspace"))
    app = AppTest.from_file(str(APP), default_timeout=120)
    run(app)
    app.switch_page(page("what_if"))
    run(app)
    app.slider(key="ctl_scenario__deciles").set_value(4)
    run(app)
    link = dict(app.query_params)
    assert what_if.draft_of(link["sc"]).deciles == 4
    shown = [m.value for m in app.metric]
    fresh = AppTest.from_file(str(APP), default_timeout=120)
    fresh.query_params.update(link)
    fresh.switch_page(page("what_if"))
    run(fresh)
    assert [m.value for m in fresh.metric] == shown

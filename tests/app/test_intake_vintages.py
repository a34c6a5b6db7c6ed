"""Intake's "Boundary changes" part: two vintages and a change table carry the panel.

The invented province of Tarrowmere (tests/fixtures/vintages/make_vintages.py): Ardley
split, Bexmoor and Corvain merged, the Dunholt-Eskwith border moved, all in 2011. The
carried 2009 mean of Bexvale is checked against the population-weighted mean of its two
sources written out here (the mean of a union of groups, common practice), and the
reopened dataset against the carried panel's own fingerprint.
"""

from __future__ import annotations

import importlib.util
import os

import pytest
from app_helpers import ROOT, dataframe, page, run, view

from explorer.data.carrying import carrying_of
from explorer.data.workspace import Workspace

FIXTURES = ROOT / "tests" / "fixtures" / "vintages"


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    spec = importlib.util.spec_from_file_location("make_vintages", FIXTURES / "make_vintages.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    paths = module.write(tmp_path_factory.mktemp("tarrowmere"))
    return {k: (p.name, p.read_bytes()) for k, p in paths.items()}, module


def _give(app, files, changes_text=None):
    got, _ = files
    app.switch_page(page("intake"))
    run(app)
    app.file_uploader(key="intake_panel").set_value((*got["panel"], "text/csv"))
    app.file_uploader(key="intake_boundaries").set_value([(*got["old"], "application/geo+json")])
    run(app)
    app.number_input(key="in_vint_year_0").set_value(2001)
    app.file_uploader(key="in_vint_file_1").set_value((*got["new"], "application/geo+json"))
    app.number_input(key="in_vint_year_1").set_value(2011)
    run(app)
    table = got["changes"] if changes_text is None else (got["changes"][0], changes_text)
    app.file_uploader(key="in_vint_table").set_value((*table, "text/csv"))
    run(app)
    app.button(key="intake_read").click()
    return run(app)


def test_two_vintages_and_a_change_table_give_a_carried_panel_saved_with_its_record(app, files):
    run(app)
    _give(app, files)
    assert view(app).dataset.startswith("upload-"), [e.value for e in app.error]
    carried = dataframe(app, "intake_carried").set_index(["region", "year"])
    assert carried.loc[("Bexvale", 2009), "how"] == "merged from Bexmoor, Corvain"
    assert carried.loc[("Ardley South", 2008), "how"] == "split from Ardley (weight 0.45)"
    assert bool(carried["carried"].all())
    app.button(key="intake_save").click()
    run(app)
    saved = view(app).dataset
    assert not saved.startswith("upload-") and saved != "demo"
    opened = Workspace(os.environ["RIFT_DATA"]).open(saved)
    record = carrying_of(opened).record.set_index(["region", "year"])
    assert record.loc[("Bexvale", 2009), "how"] == "merged from Bexmoor, Corvain"
    _, make = files
    (m_b, p_b), (m_c, p_c) = (
        (round(m, 4), round(p, 1))
        for m, p in (make.old_district("Bexmoor", 2009), make.old_district("Corvain", 2009))
    )
    got = opened.data.set_index(["region", "year"]).loc[("Bexvale", 2009), "mean_income"]
    assert got == pytest.approx((m_b * p_b + m_c * p_c) / (p_b + p_c), rel=1e-9)
    assert set(opened.regions) == set(make.NEW)


def test_a_bad_change_table_is_shown_as_a_problem_with_its_line_and_column(app, files):
    run(app)
    bad = (
        b"year,from,to,weight\n2011,Ardley,Ardley North,0.55\n2011,Ardley,Ardley South,0.35\n"
        b"2011,Bexmoor,Bexvale,1\n2011,Corvain,Bexvale,1\n2011,Dunholt,Dunholt,0.8\n"
        b"2011,Dunholt,Eskwith,0.2\n2011,Eskwith,Eskwith,1\n"
    )
    _give(app, files, bad)
    assert view(app).dataset == "demo"
    problems = dataframe(app, "problems_table")
    hit = problems[problems["message"].str.contains("weights of district Ardley in 2011")]
    assert len(hit) == 1
    assert hit.iloc[0]["file"] == "tarrowmere_changes.csv"
    assert (hit.iloc[0]["row"], hit.iloc[0]["column"]) == ("2", "weight")
    assert "add up to 1" in hit.iloc[0]["fix"]

"""The pages' figures of a panel carried across boundary changes mark exactly the carried
district-years of its record.

The invented province of Tarrowmere (tests/fixtures/vintages/make_vintages.py) carried to
its 2011 boundaries through ``rift check`` (a split, a merge and a moved border). The
marks are held against the record built independently here from the change table (a
district of 2011 made from any 2001 district other than itself whole is carried in every
year before 2011; common practice of boundary harmonisation). The carried 2009 mean of
Ardley North is that of Ardley (a split piece keeps its district's mean: Goodchild & Lam
1980, "Areal interpolation", Geo-Processing 1: 297-312, even-spread assumption).
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import pandas as pd
import pytest

from explorer import cli, figures
from explorer.data.carrying import carrying_of
from explorer.figures.carried import year_spans
from explorer.figures.settle import settle
from explorer.views import ViewState

FIXTURES = Path(__file__).resolve().parent / "fixtures" / "vintages"


@pytest.fixture(scope="module")
def make():
    spec = importlib.util.spec_from_file_location("make_vintages", FIXTURES / "make_vintages.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def panel(make, tmp_path_factory):
    paths = make.write(tmp_path_factory.mktemp("tarrowmere"))
    args = cli.build_parser().parse_args(
        [
            "check",
            str(paths["panel"]),
            "--boundaries",
            f"{paths['old']}@2001",
            "--boundaries",
            f"{paths['new']}@2011",
            "--changes",
            str(paths["changes"]),
        ]
    )
    return cli._load(args)


def _expected(make) -> set[tuple[str, int]]:
    """(district, year) carried, from the change table alone."""
    changed = {t for _, s, t, w in make.CHANGES if not (s == t and w == 1.0 and _sole(make, t))}
    return {(t, y) for t in changed for y in make.YEARS if y < make.CHANGE_YEAR}


def _sole(make, target: str) -> bool:
    return sum(1 for _, _, t, _ in make.CHANGES if t == target) == 1


def _view(panel, districts):
    return settle(ViewState(dataset="tarrowmere", districts=tuple(districts)), panel)


def _chart_rows(chart) -> pd.DataFrame:
    spec = chart.to_dict()
    (values,) = spec["datasets"].values()
    return pd.DataFrame(values)


def test_timelines_marks_the_chosen_districts_carried_years_and_no_others(panel, make):
    chosen = ("Bexvale", "Eskwith", "Ardley South")
    view = _view(panel, chosen)
    shown = figures.timelines(panel, view, figures.PlainCompute(panel))
    marked = {
        (r, int(y)) for r, y in zip(shown.carried["region"], shown.carried["year"], strict=True)
    }
    expected = {(r, y) for r, y in _expected(make) if r in chosen}
    assert marked == expected and len(marked) == 3 * 6
    rows = _chart_rows(shown.chart)
    drawn = rows[rows["carried"] != ""]
    assert {(r, int(y)) for r, y in zip(drawn["region"], drawn["year"], strict=True)} == expected
    # the words on each mark are those of the record
    record = carrying_of(panel).record.set_index(["region", "year"])["how"]
    for row in drawn.itertuples():
        assert row.carried == f"carried to the 2011 boundaries: {record[(row.region, row.year)]}"
    # a hollow point layer keyed on the carried words, with them in the legend
    layers = shown.chart.to_dict()["layer"]
    hollow = [
        layer
        for layer in layers
        if isinstance(layer.get("mark"), dict)
        and layer["mark"].get("type") == "point"
        and layer["mark"].get("fill") == "#ffffff"
    ]
    assert len(hollow) == 1 and hollow[0]["encoding"]["shape"]["field"] == "carried"
    assert "carried to the 2011 boundaries" in " ".join(shown.chart.to_dict()["title"]["subtitle"])


def test_timelines_has_no_marks_for_a_district_kept_as_published(panel):
    # Dunholt is carried (it gave a fifth away), so pick years: after 2011 nothing is carried
    view = _view(panel, ("Dunholt",))
    shown = figures.timelines(panel, view, figures.PlainCompute(panel))
    assert set(shown.carried["year"]) == set(range(2005, 2011))
    rows = _chart_rows(shown.chart)
    after = rows[(rows["region"] == "Dunholt") & (rows["year"] >= 2011)]
    assert len(after) == 4 and (after["carried"] == "").all()


def test_a_panel_that_was_not_carried_has_no_marks(panel):
    from explorer import data as readers

    demo = readers.demo_panel("means")
    view = _view(demo, demo.regions[:2])
    shown = figures.timelines(demo, view, figures.PlainCompute(demo))
    assert shown.carried.empty
    assert (_chart_rows(shown.chart)["carried"] == "").all()
    assert figures.district(demo, view, figures.PlainCompute(demo)).carried is None


def test_the_district_sheet_notes_the_years_carried_and_how(panel, make):
    view = _view(panel, ("Ardley North",))
    sheet = figures.district(panel, view, figures.PlainCompute(panel))
    assert sheet.carried == (
        "Years carried to the 2011 boundaries (weights as stated in tarrowmere_changes.csv): "
        "2005–2010: split from Ardley (weight 0.55)."
    )
    # the carried mean of a split piece is its district's mean, as written in the panel
    mean, _ = make.old_district("Ardley", 2009)
    data = panel.data.set_index(["region", "year"])
    assert data.loc[("Ardley North", 2009), "mean_income"] == pytest.approx(round(mean, 4))


def test_the_report_lists_every_carried_district_year_once(panel, make):
    view = _view(panel, ("Bexvale",))
    parts = figures.sections(view, panel)
    table = parts.tables["District-years carried across boundary changes"]
    counted = table.data.groupby("region")["count"].sum()
    expected = pd.Series([r for r, _ in _expected(make)], dtype=object).value_counts()
    assert counted.sort_index().to_dict() == expected.sort_index().to_dict()
    assert int(table.data["count"].sum()) == len(_expected(make))
    assert "Read them as estimates" in table.notes[0]
    html = figures.report_html(view, panel)
    assert html.count("District-years carried across boundary changes") == 1


@pytest.mark.parametrize(
    ("years", "said"),
    [
        ([2005, 2006, 2007, 2010], "2005–2007, 2010"),
        ([2009], "2009"),
        ([2003, 2001, 2002], "2001–2003"),
    ],
)
def test_years_are_said_as_runs(years, said):
    assert year_spans(years) == said

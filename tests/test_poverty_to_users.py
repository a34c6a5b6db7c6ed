"""Poverty measures as the planner gets them: the command line, the link, the pages.

Checked against the Foster–Greer–Thorbecke measures written out directly on the demo's
household records (Foster, J., Greer, J. & Thorbecke, E. 1984, "A class of decomposable
poverty measures", *Econometrica* 52: 761-766, eq. 1: P_a = Σ w (1 − y/z)^a [y < z] / Σ w),
computed here with pandas, not with the project's code.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from explorer import cli, figures, views
from explorer.data import demo_panel

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests" / "app"))

LINE = 20_000.0


@pytest.fixture(scope="module")
def households() -> pd.DataFrame:
    return pd.read_csv(ROOT / "demo_data" / "households.csv", dtype={"region": str})


def fgt(group: pd.DataFrame, alpha: int, line: float = LINE) -> float:
    poor = group["income"] < line
    gap = np.where(poor, 1 - group["income"] / line, 0.0)
    terms = gap**alpha if alpha else poor.astype(float)
    return float((group["weight"] * terms).sum() / group["weight"].sum())


def test_compute_with_an_absolute_line_gives_the_fgt_measures_of_the_records(
    tmp_path, capsys, households
):
    out = tmp_path / "poverty.csv"
    code = cli.main(
        [
            "compute",
            "demo",
            "--kind",
            "units",
            "--indices",
            "gini",
            "--poverty-line",
            "20000",
            "--out",
            str(out),
        ]
    )
    assert code == 0
    assert "poverty line: 20000 per person per year" in capsys.readouterr().err
    table = pd.read_csv(out, dtype={"region": str}).set_index(["region", "year", "index"])
    for (region, year), group in list(households.groupby(["region", "year"]))[:12]:
        for alpha in (0, 1, 2):
            got = table.loc[(region, year, f"fgt_{alpha}"), "value"]
            assert abs(got - fgt(group, alpha)) < 1e-12, (region, year, alpha)
    assert {"watts", "sen_poverty"} <= set(table.index.get_level_values("index"))


def test_compute_refuses_poverty_from_district_means_in_plain_words(capsys):
    code = cli.main(["compute", "demo", "--kind", "means", "--poverty-line", "60%median"])
    assert code == 2
    assert "poverty cannot be measured from district means alone" in capsys.readouterr().err


def test_the_province_line_of_poverty_is_the_headcount_of_all_records(households):
    panel = demo_panel("units")
    view = figures.settle(
        views.ViewState(dataset="demo-households", index="fgt_0", poverty_line="20000"), panel
    )
    shown = figures.timelines(panel, view, figures.PlainCompute(panel))
    province = shown.province.set_index("year")["value"]
    for year, group in households.groupby("year"):
        assert abs(province[year] - fgt(group, 0)) < 1e-12
    assert "20,000 per person a year" in shown.chart.to_dict()["title"]["text"]


def test_the_map_of_poverty_is_the_headcount_of_each_district(households):
    panel = demo_panel("units")
    view = figures.settle(
        views.ViewState(dataset="demo-households", index="fgt_1", poverty_line="20000"), panel
    )
    shown = figures.atlas(panel, view, figures.PlainCompute(panel))
    got = shown.layer.set_index("region")["value"]
    year = households[households["year"] == view.year]
    expected = year.groupby("region").apply(lambda g: fgt(g, 1))
    assert np.allclose(got.sort_index(), expected.sort_index(), rtol=0, atol=1e-12)
    assert shown.ranking_title == "Districts ranked (1 = highest poverty gap)"


def test_a_link_carries_the_line_in_one_form_and_refuses_what_is_not_a_line():
    view, notices = views.from_query({"pl": "12,000", "pr": "district", "ix": "fgt_0"})
    assert (view.poverty_line, view.relative_to, view.index) == ("12000", "district", "fgt_0")
    assert not notices
    assert views.from_query(view.to_query())[0] == view
    view, notices = views.from_query({"pl": " 60 % Median "})
    assert view.poverty_line == "60%median" and not notices
    view, notices = views.from_query({"pl": "lots"})
    assert view.poverty_line == "60%median"
    assert notices and "is not a poverty line" in notices[0]


def test_bracket_poverty_lies_within_its_bounds_or_says_why():
    panel = demo_panel("brackets")
    view = figures.settle(views.ViewState(index="fgt_2"), panel)
    shown = figures.atlas(panel, view, figures.PlainCompute(panel))
    rows = shown.layer
    inside = (rows["lower"] - 1e-9 <= rows["value"]) & (rows["value"] <= rows["upper"] + 1e-9)
    outside = rows[~inside]
    assert inside.mean() > 0.5
    assert outside["note"].str.contains("outside the bounds").all()


def test_typing_a_line_in_the_sidebar_changes_the_map_and_a_bad_one_is_refused(
    tmp_path, monkeypatch, households
):
    from app_helpers import APP, dataframe, run
    from streamlit.testing.v1 import AppTest

    monkeypatch.setenv("RIFT_DATA", str(tmp_path / "workspace"))
    app = AppTest.from_file(str(APP), default_timeout=120)
    app.query_params.update({"d": "demo-households", "ix": "fgt_0"})
    run(app)
    app.text_input(key="ctl_poverty_line").set_value("lots").run()
    assert app.session_state["rift_view"].poverty_line == "60%median"
    assert any("'lots' is not a poverty line" in w.value for w in app.warning)
    app.text_input(key="ctl_poverty_line").set_value("20000").run()
    assert app.session_state["rift_view"].poverty_line == "20000"
    assert "ctl_relative_to" not in [w.key for w in app.radio]  # an amount has no "whose"
    shown = dataframe(app, "atlas_ranking").set_index("Id")["Value"]
    year = households[households["year"] == households["year"].max()]
    expected = year.groupby("region").apply(lambda g: fgt(g, 0))
    assert np.allclose(shown.sort_index(), expected.sort_index(), atol=1e-12)

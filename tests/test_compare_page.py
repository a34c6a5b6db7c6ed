"""The Compare page: members, every figure side by side with its difference, verdicts.

The verdicts rest on Lorenz dominance (Atkinson, A. B. 1970, "On the measurement of
inequality", *Journal of Economic Theory* 2: 244–263) and generalised Lorenz dominance
(Shorrocks, A. F. 1983, "Ranking income distributions", *Economica* 50: 3–17); the curves
are checked here on lognormal distributions, whose Lorenz curve is
L(p) = Φ(Φ⁻¹(p) − σ) (Aitchison, J. & Brown, J. A. C. 1957, *The Lognormal Distribution*,
Cambridge University Press): a smaller σ gives a curve above at every p.
"""

from __future__ import annotations

import dataclasses
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from explorer import figures
from explorer.data import demo_panel
from explorer.figures import series
from explorer.figures.compute import PlainCompute
from explorer.views import ViewState

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests" / "app"))


@pytest.fixture(scope="module")
def brackets():
    return demo_panel("brackets")


def lognormal_deciles(panel, sigmas, mean=20_000.0):
    """The panel's first districts' rows in its last year replaced by the exact decile
    shares of lognormal distributions with the given σ (one district each)."""
    year = int(panel.years[-1])
    p = np.linspace(0, 1, 11)
    data = panel.data[panel.data["year"] == year].copy()
    regions = [str(r) for r in panel.regions[: len(sigmas)]]
    for region, sigma in zip(regions, sigmas, strict=True):
        lorenz = stats.norm.cdf(stats.norm.ppf(p) - sigma)
        lorenz[0], lorenz[-1] = 0.0, 1.0
        rows = data["region"].astype(str) == region
        assert rows.sum() == 10
        data.loc[rows, "income_share"] = np.diff(lorenz)
        data.loc[rows, "pop_share"] = 0.1
        data.loc[rows, "mean_income"] = mean
    return dataclasses.replace(panel, data=data.reset_index(drop=True)), regions, year


def test_side_by_side_differences_are_the_index_table_differences(brackets):
    regions = tuple(str(r) for r in brackets.regions[:3])
    year = int(brackets.years[-1])
    view = ViewState(districts=regions, year=year)
    compute = PlainCompute(brackets)
    shown = figures.compare_page(brackets, view, compute)
    assert [m.region for m in shown.members] == list(regions)
    gini = compute.indices("auto")
    gini = gini[(gini["index"] == "gini") & (gini["year"] == year)]
    gini = gini.assign(region=gini["region"].astype(str)).set_index("region")
    row = shown.table.set_index("Figure").loc["Gini coefficient"]
    first, second = shown.members[0].label, shown.members[1].label
    expected = gini.loc[regions[1], "value"] - gini.loc[regions[0], "value"]
    assert float(row[f"{second} − {first}"].split(" ")[0]) == pytest.approx(expected, abs=5e-4)
    a, b = gini.loc[regions[0]], gini.loc[regions[1]]
    apart = b["lower"] > a["upper"] or a["lower"] > b["upper"]
    assert row[f"{second} − {first}"].endswith("(clear)" if apart else "(ranges overlap)")
    assert len(shown.verdicts) == 3  # every pair of three


def test_a_more_equal_lognormal_is_said_to_lie_above_even_at_the_bounds(brackets):
    panel, regions, year = lognormal_deciles(brackets, (0.3, 0.9))
    view = ViewState(districts=tuple(regions), year=year)
    shown = figures.compare_page(panel, view, PlainCompute(panel))
    verdict = shown.verdicts[0]
    assert "lies above" in verdict.lorenz and "even at the bounds" in verdict.lorenz
    assert verdict.lorenz.startswith(shown.members[0].label)
    # equal means: the more equal one is also ahead on the generalised curve
    assert "lies above" in verdict.welfare
    assert shown.general_chart is not None


def test_close_lognormals_cannot_be_told_apart_at_the_bounds(brackets):
    panel, regions, year = lognormal_deciles(brackets, (0.60, 0.62))
    view = ViewState(districts=tuple(regions), year=year)
    verdict = figures.compare_page(panel, view, PlainCompute(panel)).verdicts[0]
    assert "even at the bounds" not in verdict.lorenz


def test_one_district_over_the_years(brackets):
    years = tuple(int(y) for y in brackets.years[:3])
    region = str(brackets.regions[5])
    view = ViewState(districts=(region,), compare_years=years, year=int(brackets.years[-1]))
    shown = figures.compare_page(brackets, view, PlainCompute(brackets))
    assert [(m.region, m.year) for m in shown.members] == [(region, y) for y in years]
    assert len(shown.verdicts) == 3


def test_fewer_than_two_members_asks_for_more(brackets):
    view = ViewState(districts=(str(brackets.regions[0]),), year=int(brackets.years[-1]))
    shown = figures.compare_page(brackets, view, PlainCompute(brackets))
    assert shown.notice and shown.table is None


def test_district_means_are_set_side_by_side_without_curves():
    panel = demo_panel("means")
    regions = tuple(str(r) for r in panel.regions[:2])
    view = ViewState(dataset="demo-means", districts=regions, year=int(panel.years[-1]))
    shown = figures.compare_page(panel, view, PlainCompute(panel))
    assert shown.lorenz_chart is None and not shown.verdicts
    means = series.means_figure(panel, "mean_income")
    means = means[means["year"] == view.year].set_index("region")["value"]
    row = shown.table.set_index("Figure").loc["Mean income"]
    assert float(row[shown.members[0].label].replace(",", "")) == pytest.approx(
        means[regions[0]], abs=0.5
    )


def test_unit_records_get_a_decile_by_decile_sampling_verdict():
    panel = demo_panel("units")
    regions = tuple(str(r) for r in panel.regions[:2])
    view = ViewState(dataset="demo-households", districts=regions, year=int(panel.years[-1]))
    verdict = figures.compare_page(panel, view, PlainCompute(panel)).verdicts[0]
    assert verdict.deciles is not None and len(verdict.deciles) == 9
    inside = (verdict.deciles["lower"] <= 0) & (0 <= verdict.deciles["upper"])
    assert (~inside == verdict.deciles["exceeds"]).all()
    assert ("At no decile" in verdict.decile_words) == bool(inside.all())


def test_the_compare_page_in_the_app(tmp_path, monkeypatch):
    from app_helpers import APP, dataframe, page, run
    from streamlit.testing.v1 import AppTest

    monkeypatch.setenv("RIFT_DATA", str(tmp_path / "workspace"))
    app = AppTest.from_file(str(APP), default_timeout=120)
    app.query_params.update({"sel": "BRE01,BRE02,BRE03"})
    run(app)
    app.switch_page(page("compare"))
    run(app)
    table = dataframe(app, "compare_table")
    assert "Figure" in table.columns and len(table.columns) == 1 + 3 + 2
    assert "Verdicts, pair by pair" in [h.value for h in app.subheader]
    app.button_group(key="ctl_compare_years__mode").set_value("years").run()
    assert app.session_state["rift_view"].compare_years != ()
    assert app.query_params["cy"]

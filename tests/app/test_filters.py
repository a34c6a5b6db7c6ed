"""The group filter: every page covers only the districts of the chosen counties, and says so."""

from __future__ import annotations

import pandas as pd
import pytest
from app_helpers import ROOT, as_read, dataframe, page, run, view


@pytest.mark.parametrize("name", ["atlas", "timelines", "breakdown", "district"])
def test_a_county_filter_from_the_link_is_on_every_page_and_every_caption_says_so(app, name):
    # The demo's counties and districts (demo_data/deciles.csv): a filter keeps exactly
    # the districts whose county is chosen (common practice for a filter).
    frame = pd.read_csv(ROOT / "demo_data" / "deciles.csv")
    county = sorted(frame["county"].unique())[0]
    inside = set(frame.loc[frame["county"] == county, "region"])
    app.query_params.update({"ct": county})
    run(app)
    app.switch_page(page(name))
    run(app)
    assert view(app).counties == (county,)
    assert app.multiselect(key="ctl_counties").value == [county]
    captions = [as_read(c.value) for c in app.caption]
    assert any(f"only the districts of the county {county}" in c for c in captions), captions
    if name == "atlas":
        assert len(dataframe(app, "atlas_ranking")) == len(inside)
    if name == "district":
        assert app.selectbox(key="ctl_districts").value in inside

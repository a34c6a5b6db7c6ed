"""One bad district-year among good ones is set aside with its reason; the rest is computed.

Common practice for statistical production: a single faulty record must not hold back the
publication of every other figure, and what was left out must be said.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from explorer.data import demo, load
from explorer.figures import spatial as spatial_view
from explorer.stats import decompose, indices

BAD_REGION, BAD_YEAR = "CAL03", 2015


@pytest.fixture(scope="module")
def damaged(tmp_path_factory):
    """The demo deciles with one district-year's shares broken (they sum to about 1.35)."""
    panel_path, boundary_path = demo.demo_paths("brackets")
    frame = pd.read_csv(panel_path)
    hit = (frame["region"] == BAD_REGION) & (frame["year"] == BAD_YEAR)
    assert hit.sum() == 1
    frame.loc[hit, "share_3"] = 0.4
    folder = tmp_path_factory.mktemp("damaged")
    path = folder / "deciles.csv"
    frame.to_csv(path, index=False)
    return load.load_panel(path, boundary_path), frame


def test_only_the_bad_district_year_is_set_aside_with_its_reason(damaged):
    panel, frame = damaged
    assert list(zip(panel.excluded["region"], panel.excluded["year"], strict=True)) == [
        (BAD_REGION, BAD_YEAR)
    ]
    assert "sum to" in panel.excluded["reason"].iloc[0]
    kept = panel.data[["region", "year"]].drop_duplicates()
    assert len(kept) == len(frame) - 1
    assert any(BAD_REGION in w.message and str(BAD_YEAR) in w.message for w in panel.warnings)


def test_every_other_district_year_still_has_its_indices(damaged):
    panel, frame = damaged
    table = indices.compute(panel, methods=("auto",), indices=("gini", "theil_t"))
    keys = set(zip(table["region"], table["year"], strict=True))
    assert (BAD_REGION, BAD_YEAR) not in keys
    assert len(keys) == len(frame) - 1
    assert np.isfinite(table.loc[table["index"] == "gini", "value"]).all()
    # The same district's other years are untouched by the bad row: compare with the
    # undamaged demo (the panel is otherwise identical).
    clean = indices.compute(demo.demo_panel(), methods=("auto",), indices=("gini",))
    mine = table[(table["region"] == BAD_REGION) & (table["index"] == "gini")]
    theirs = clean[(clean["region"] == BAD_REGION) & (clean["year"] != BAD_YEAR)]
    assert np.allclose(mine.sort_values("year")["value"], theirs.sort_values("year")["value"])


def test_decomposition_of_the_damaged_year_runs_on_the_rest(damaged):
    panel, _ = damaged
    parts = decompose.table(panel, by=("county",), index="theil_t")
    year = parts[(parts["year"] == BAD_YEAR) & (parts["group"] == "(all)")]
    total = year.loc[year["component"] == "total", "value"].iloc[0]
    assert year.loc[year["component"] != "total", "value"].sum() == pytest.approx(total)


def test_spatial_statistics_leave_the_district_out_and_say_so(damaged):
    panel, _ = damaged
    result = spatial_view.for_panel(panel, index="gini", year=BAD_YEAR, permutations=19)
    assert BAD_REGION not in set(result.districts["region"])
    assert BAD_REGION in result.summary["left_out"]

"""Rankings that carry their uncertainty on the Map: moves since the first year, clear ranks.

A district's possible ranks given every district's bounds run from its best (it at its
lower bound, all others at their upper) to its worst (the reverse); a move of rank is clear
when no ranks inside the two years' ranges leave it in place (Goldstein, H. & Spiegelhalter,
D. J. 1996, "League tables and their limitations", *JRSS A* 159: 385–443, on rank intervals).
The small cases here are worked by hand.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from explorer import figures
from explorer.data import demo_panel
from explorer.figures.compute import PlainCompute
from explorer.figures.tables import rank_moves, ranking
from explorer.views import ViewState


def frame(values, lower, upper):
    return pd.DataFrame(
        {
            "region": list("ABCD"),
            "value": values,
            "lower": lower,
            "upper": upper,
            "name": list("ABCD"),
        }
    )


def test_a_move_is_clear_only_when_the_ranges_of_ranks_do_not_allow_staying():
    # then: D lowest (rank 4 of 4), its bounds apart from everyone: ranks 4..4
    then = ranking(
        frame([0.40, 0.35, 0.30, 0.20], [0.39, 0.34, 0.29, 0.19], [0.41, 0.36, 0.31, 0.21])
    )
    # now: D highest and apart (rank 1 surely); A and B overlap (ranks 2-3)
    now = ranking(
        frame([0.33, 0.32, 0.25, 0.50], [0.31, 0.30, 0.24, 0.49], [0.34, 0.335, 0.26, 0.51])
    )
    moved = rank_moves(now, then, 2010).set_index("region")
    assert moved.loc["D", "rank_then"] == 4 and moved.loc["D", "rank"] == 1
    assert moved.loc["D", "move"] == "3 places nearer rank 1 (clear)"
    # A: rank 1 -> 2 or 3 now (B's bounds overlap it): it surely moved down from 1
    assert moved.loc["A", "move"] == "1 place further from rank 1 (clear)"
    # B: rank 2 -> 3, but now it could be 2 as well: not clear
    assert moved.loc["B", "move"] == "1 place further from rank 1 (within the ranges)"


def test_without_bounds_the_words_say_nothing_of_clarity():
    nan = [np.nan] * 4
    then = ranking(frame([0.4, 0.3, 0.2, 0.1], nan, nan))
    now = ranking(frame([0.1, 0.3, 0.2, 0.4], nan, nan))
    moved = rank_moves(now, then, 2010).set_index("region")
    assert moved.loc["A", "move"] == "3 places further from rank 1"
    assert moved.loc["B", "move"] == "same place"


def test_only_clear_ranks_leaves_exactly_the_districts_with_one_possible_rank():
    panel = demo_panel()
    compute = PlainCompute(panel)
    year = int(panel.years[-1])
    every = figures.atlas(panel, ViewState(year=year), compute)
    clear = every.ranking[every.ranking["best"] == every.ranking["worst"]]
    only = figures.atlas(panel, ViewState(year=year, clear_ranks=True), compute)
    assert set(only.ranking["region"].astype(str)) == set(clear["region"].astype(str))
    assert only.unclear == len(every.ranking) - len(clear) > 0
    kept = only.layer[np.isfinite(only.layer["value"].to_numpy(float))]
    assert set(kept["region"].astype(str)) == set(clear["region"].astype(str))
    assert any("rank is clear" in n for n in only.notices)


def test_the_map_ranking_gives_the_rank_in_the_first_year():
    panel = demo_panel()
    compute = PlainCompute(panel)
    first, last = int(panel.years[0]), int(panel.years[-1])
    shown = figures.atlas(panel, ViewState(year=last, year_from=first), compute)
    back = figures.atlas(panel, ViewState(year=first), compute).ranking
    expected = back.set_index(back["region"].astype(str))["rank"]
    got = shown.ranking.set_index(shown.ranking["region"].astype(str))["rank_then"]
    assert shown.moved_since == first
    assert np.array_equal(got.sort_index().to_numpy(), expected.sort_index().to_numpy())

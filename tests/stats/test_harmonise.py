"""Carrying a panel across boundary changes, checked by construction.

The province of Vellmark is invented (districts Ashfold, Brennick, Corrow, Dunmere, Elsby,
Fallowmere); its incomes are drawn or written for these tests.

Sources: Theil (1967), "Economics and Information Theory", ch. 4 (Theil's T: between-group
term sum_g s_g ln(mu_g / mu), s_g the group's income share); Shorrocks (1980), "The class of
additively decomposable inequality measures", Econometrica 48: 613-625 (the between term
depends only on the groups' sizes and means, so merging districts inside a group leaves the
between-group term of those groups unchanged); Aitchison & Brown (1957), "The Lognormal
Distribution", CUP (Lorenz curve L(p) = Phi(Phi^-1(p) - sigma); partial mean
E[X; X < q] = mean * Phi((ln q - mu - sigma^2) / sigma)).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import optimize
from scipy.stats import norm

from explorer.data.model import Panel
from explorer.data.validate import validate
from explorer.data.vintages import changes_from_frame
from explorer.stats import decompose
from explorer.stats.harmonise import BRACKET_NOTE, harmonise

DECILES = np.linspace(0, 1, 11)


def _changes(rows, year=2011):
    frame = pd.DataFrame(rows, columns=["from", "to", "weight"]).assign(year=year)
    return changes_from_frame(frame, "changes.csv")


def _lognormal_rows(region, year, sigma, mean, population):
    """Decile shares of a lognormal distribution (Aitchison & Brown 1957)."""
    curve = norm.cdf(norm.ppf(DECILES) - sigma)
    curve[0], curve[-1] = 0.0, 1.0
    return pd.DataFrame(
        {
            "region": region,
            "year": year,
            "bracket": np.arange(1, 11),
            "pop_share": np.diff(DECILES),
            "income_share": np.diff(curve),
            "population": float(population),
            "mean_income": float(mean),
        }
    )


def _brackets(*specs):
    return validate(
        pd.concat([_lognormal_rows(*s) for s in specs], ignore_index=True), kind="brackets"
    )


def _shares(panel, region, year=2008):
    rows = panel.data[(panel.data["region"] == region) & (panel.data["year"] == year)]
    return rows["income_share"].to_numpy()


def _mixture_shares(components):
    """Decile income shares of a population mixture of lognormals, from their closed forms.

    ``components``: (population, mean, sigma). The mixture's quantile q_p solves
    sum_i f_i Phi((ln q - mu_i) / sigma_i) = p; the income below it is
    sum_i f_i mean_i Phi((ln q - mu_i - sigma_i^2) / sigma_i) (Aitchison & Brown 1957).
    """
    pops = np.array([c[0] for c in components], dtype=float)
    f = pops / pops.sum()
    means = np.array([c[1] for c in components], dtype=float)
    sig = np.array([c[2] for c in components], dtype=float)
    mu = np.log(means) - sig**2 / 2

    def below(q):
        return float(np.dot(f, norm.cdf((np.log(q) - mu) / sig)))

    total = float(np.dot(f, means))
    curve = [0.0]
    for p in DECILES[1:-1]:
        q = optimize.brentq(lambda x, p=p: below(x) - p, 1e-9, 1e9, xtol=1e-12)
        curve.append(float(np.dot(f, means * norm.cdf((np.log(q) - mu - sig**2) / sig))) / total)
    curve.append(1.0)
    return np.diff(curve)


# ------------------------------------------------------------------------ grouped shares


def test_a_split_district_keeps_its_distribution_and_shares_its_population():
    panel = _brackets(("Brennick", 2008, 0.6, 140.0, 5000))
    result = harmonise(
        panel, _changes([("Brennick", "Elsby", 0.4), ("Brennick", "Fallowmere", 0.6)]), 2011
    )
    out = result.panel
    # by construction the pieces are drawn from Brennick, so each has its distribution
    for piece, share in (("Elsby", 0.4), ("Fallowmere", 0.6)):
        assert _shares(out, piece) == pytest.approx(_shares(panel, "Brennick"), abs=1e-15)
        rows = out.data[out.data["region"] == piece]
        assert rows["population"].iloc[0] == pytest.approx(5000 * share)
        assert rows["mean_income"].iloc[0] == 140.0
    how = dict(zip(result.carried["region"], result.carried["how"], strict=True))
    assert how == {
        "Elsby": "split from Brennick (weight 0.4)",
        "Fallowmere": "split from Brennick (weight 0.6)",
    }
    assert result.notes == ()  # nothing was mixed, so nothing is approximate


def test_merging_two_pieces_of_one_distribution_gives_that_distribution_back():
    # two districts with the same lognormal distribution (sigma 0.7, mean 120): their
    # mixture is that distribution, whose decile shares are Aitchison & Brown's closed form
    panel = _brackets(("Corrow", 2008, 0.7, 120.0, 3000), ("Dunmere", 2008, 0.7, 120.0, 1000))
    result = harmonise(
        panel, _changes([("Corrow", "Fallowmere", 1.0), ("Dunmere", "Fallowmere", 1.0)]), 2011
    )
    assert _shares(result.panel, "Fallowmere") == pytest.approx(_shares(panel, "Corrow"), abs=5e-4)
    assert BRACKET_NOTE in result.notes
    assert result.carried["how"].tolist() == ["merged from Corrow, Dunmere"]


def test_a_merger_of_different_districts_matches_the_mixture_closed_form():
    panel = _brackets(("Corrow", 2008, 0.5, 100.0, 3000), ("Dunmere", 2008, 0.8, 180.0, 1000))
    result = harmonise(
        panel, _changes([("Corrow", "Fallowmere", 1.0), ("Dunmere", "Fallowmere", 1.0)]), 2011
    )
    expected = _mixture_shares([(3000, 100.0, 0.5), (1000, 180.0, 0.8)])
    got = _shares(result.panel, "Fallowmere")
    # the error is the Lorenz fit's and the quantile grid's (pseudo_units: within 0.2 %)
    assert got == pytest.approx(expected, abs=5e-4)
    assert got.sum() == pytest.approx(1.0, abs=1e-12)
    rows = result.panel.data
    assert rows["mean_income"].iloc[0] == pytest.approx((3000 * 100 + 1000 * 180) / 4000)
    assert rows["population"].iloc[0] == pytest.approx(4000)


def test_a_moved_border_rebuilds_the_gaining_district():
    panel = _brackets(("Ashfold", 2008, 0.5, 100.0, 2000), ("Corrow", 2008, 0.8, 180.0, 1000))
    changes = _changes([("Ashfold", "Ashfold", 0.9), ("Ashfold", "Corrow", 0.1)])
    result = harmonise(panel, changes, 2011)
    how = dict(zip(result.carried["region"], result.carried["how"], strict=True))
    assert how["Ashfold"] == "split from Ashfold (weight 0.9)"
    assert how["Corrow"] == "rebuilt from Corrow (1), Ashfold (0.1)"
    expected = _mixture_shares([(1000, 180.0, 0.8), (200, 100.0, 0.5)])
    assert _shares(result.panel, "Corrow") == pytest.approx(expected, abs=5e-4)
    populations = result.panel.data.drop_duplicates("region").set_index("region")["population"]
    assert populations.to_dict() == pytest.approx({"Ashfold": 1800.0, "Corrow": 1200.0})


# ------------------------------------------------------------------------ means


def _means(rows):
    return validate(
        pd.DataFrame(rows, columns=["region", "year", "mean_income", "population"]), kind="means"
    )


def test_merged_means_are_the_pooled_mean_of_the_populations():
    panel = _means(
        [
            ("Corrow", 2008, 100.0, 3000),
            ("Dunmere", 2008, 160.0, 1000),
            ("Corrow", 2009, 110.0, 3100),
            ("Dunmere", 2009, 150.0, 900),
        ]
    )
    result = harmonise(
        panel, _changes([("Corrow", "Fallowmere", 1.0), ("Dunmere", "Fallowmere", 1.0)]), 2011
    )
    data = result.panel.data.set_index("year")
    # common practice: the pooled mean is sum(N_i mean_i) / sum(N_i)
    assert data.loc[2008, "mean_income"] == pytest.approx((3000 * 100 + 1000 * 160) / 4000)
    assert data.loc[2009, "mean_income"] == pytest.approx((3100 * 110 + 900 * 150) / 4000)
    assert data["population"].tolist() == [4000.0, 4000.0]


def test_a_moved_border_moves_population_with_the_weights():
    panel = _means([("Ashfold", 2008, 100.0, 2000), ("Corrow", 2008, 200.0, 1000)])
    result = harmonise(
        panel, _changes([("Ashfold", "Ashfold", 0.9), ("Ashfold", "Corrow", 0.1)]), 2011
    )
    data = result.panel.data.set_index("region")
    assert data.loc["Ashfold", "population"] == pytest.approx(1800)
    assert data.loc["Ashfold", "mean_income"] == pytest.approx(100)
    assert data.loc["Corrow", "population"] == pytest.approx(1200)
    assert data.loc["Corrow", "mean_income"] == pytest.approx((1000 * 200 + 200 * 100) / 1200)


def test_years_already_on_the_target_boundaries_stay_as_published():
    panel = _means(
        [
            ("Brennick", 2008, 100.0, 2000),
            ("Elsby", 2012, 130.0, 800),
            ("Fallowmere", 2012, 90.0, 1300),
        ]
    )
    result = harmonise(
        panel, _changes([("Brennick", "Elsby", 0.4), ("Brennick", "Fallowmere", 0.6)]), 2011
    )
    later = result.carried[result.carried["year"] == 2012]
    assert later["how"].tolist() == ["as published", "as published"]
    data = result.panel.data.set_index(["region", "year"])
    assert data.loc[("Elsby", 2012), "mean_income"] == 130.0
    assert data.loc[("Elsby", 2008), "population"] == pytest.approx(800)


def test_a_target_whose_source_has_no_data_that_year_is_not_carried():
    panel = _means(
        [
            ("Corrow", 2008, 100.0, 3000),
            ("Dunmere", 2008, 160.0, 1000),
            ("Corrow", 2009, 110.0, 3100),
        ]
    )
    result = harmonise(
        panel, _changes([("Corrow", "Fallowmere", 1.0), ("Dunmere", "Fallowmere", 1.0)]), 2011
    )
    assert result.panel.years == (2008,)
    (aside,) = result.panel.excluded.itertuples()
    assert (aside.region, aside.year) == ("Fallowmere", 2009)
    assert "Dunmere has no data this year" in aside.reason


# ------------------------------------------------------------------------ units


def _units(seed=3):
    rng = np.random.default_rng(seed)
    frames = []
    for region, county, scale in (
        ("Ashfold", "North", 3.0),
        ("Brennick", "North", 3.4),
        ("Corrow", "South", 3.8),
        ("Dunmere", "South", 3.1),
    ):
        n = 200
        frames.append(
            pd.DataFrame(
                {
                    "region": region,
                    "year": 2008,
                    "county": county,
                    "income": rng.lognormal(scale, 0.6, n),
                    "weight": rng.uniform(0.5, 2.0, n),
                }
            )
        )
    return validate(pd.concat(frames, ignore_index=True), kind="units", levels=["county"])


def test_unit_records_are_reweighted_one_row_per_target():
    panel = _units()
    changes = _changes([("Brennick", "Elsby", 0.4), ("Brennick", "Fallowmere", 0.6)])
    out = harmonise(panel, changes, 2011).panel.data
    source = panel.data[panel.data["region"] == "Brennick"].sort_values("income")
    for piece, share in (("Elsby", 0.4), ("Fallowmere", 0.6)):
        rows = out[out["region"] == piece].sort_values("income")
        assert rows["income"].to_numpy() == pytest.approx(source["income"].to_numpy())
        assert rows["weight"].to_numpy() == pytest.approx(share * source["weight"].to_numpy())
    # common practice: a re-weighting that splits a record keeps its total weight
    assert out["weight"].sum() == pytest.approx(panel.data["weight"].sum())


def _theil_between(incomes, weights, groups):
    """Theil (1967) between-group term, written out."""
    frame = pd.DataFrame({"y": incomes, "w": weights, "g": groups})
    mu = np.average(frame["y"], weights=frame["w"])
    sizes = frame.groupby("g")["w"].sum()
    means = frame.groupby("g").apply(
        lambda f: np.average(f["y"], weights=f["w"]), include_groups=False
    )
    share = sizes * means / (sizes * means).sum()
    return float((share * np.log(means / mu)).sum())


def test_the_between_term_of_merged_districts_is_the_coarser_between_term_before():
    # Ashfold+Brennick merge into Elsby, Corrow+Dunmere into Fallowmere: exactly the
    # counties North and South of the panel before the merger (Shorrocks 1980)
    panel = _units()
    changes = _changes(
        [
            ("Ashfold", "Elsby", 1.0),
            ("Brennick", "Elsby", 1.0),
            ("Corrow", "Fallowmere", 1.0),
            ("Dunmere", "Fallowmere", 1.0),
        ]
    )
    merged = harmonise(panel, changes, 2011).panel
    after = decompose.table(merged, by=(), index="theil_t")
    before = decompose.table(panel, by=("county",), index="theil_t")

    def pick(table, level):
        rows = table[
            (table["level"] == level)
            & (table["group"] == "(all)")
            & (table["component"] == "between")
        ]
        return float(rows["value"].iloc[0])

    direct = _theil_between(
        panel.data["income"],
        panel.data["weight"],
        panel.data["region"].map({"Ashfold": "N", "Brennick": "N", "Corrow": "S", "Dunmere": "S"}),
    )
    assert pick(after, "region") == pytest.approx(pick(before, "county"), rel=1e-12)
    assert pick(after, "region") == pytest.approx(direct, rel=1e-12)
    assert merged.hierarchy.set_index("region")["county"].to_dict() == {
        "Elsby": "North",
        "Fallowmere": "South",
    }


# ------------------------------------------------------------------------ published


def test_published_figures_are_carried_only_when_whole():
    panel = validate(
        pd.DataFrame(
            {
                "region": ["Ashfold", "Brennick", "Corrow", "Dunmere"],
                "year": 2008,
                "gini": [0.31, 0.35, 0.29, 0.40],
            }
        ),
        kind="published",
    )
    changes = _changes(
        [
            ("Ashfold", "Ashfold", 1.0),
            ("Brennick", "Elsby", 0.4),
            ("Brennick", "Fallowmere", 0.6),
            ("Corrow", "Fallowmere", 1.0),
            ("Dunmere", "Dunmere", 1.0),
        ]
    )
    result = harmonise(panel, changes, 2011)
    values = result.panel.data.set_index("region")["value"].to_dict()
    assert values == {"Ashfold": 0.31, "Dunmere": 0.40}  # never averaged
    carried = result.carried.set_index("region")
    assert not carried.loc["Elsby", "carried"] and not carried.loc["Fallowmere", "carried"]
    assert carried.loc["Elsby", "how"].startswith("not comparable: split from Brennick")
    assert "never averaged" in carried.loc["Fallowmere", "how"]
    assert set(result.panel.excluded["region"]) == {"Elsby", "Fallowmere"}


def test_a_renamed_district_keeps_its_published_figure():
    panel = validate(
        pd.DataFrame({"region": ["Dunmere"], "year": [2008], "gini": [0.4]}), kind="published"
    )
    result = harmonise(panel, _changes([("Dunmere", "Fallowmere", 1.0)]), 2011)
    assert result.panel.data["region"].tolist() == ["Fallowmere"]
    assert result.carried["how"].tolist() == ["renamed from Dunmere"]


def test_the_result_is_a_panel_of_the_same_kind():
    panel = _means([("Corrow", 2008, 100.0, 3000), ("Dunmere", 2008, 160.0, 1000)])
    result = harmonise(
        panel, _changes([("Corrow", "Fallowmere", 1.0), ("Dunmere", "Fallowmere", 1.0)]), 2011
    )
    assert isinstance(result.panel, Panel) and result.panel.kind == "means"
    assert result.panel.fingerprint != panel.fingerprint and len(result.panel.fingerprint) == 16


def test_rebuilt_shares_are_a_valid_lorenz_curve():
    # common practice (Gastwirth 1972): bracket shares from a Lorenz curve are positive,
    # sum to 1 and have non-decreasing bracket means; validate checks exactly these rules
    panel = _brackets(
        ("Ashfold", 2008, 0.3, 90.0, 2000),
        ("Corrow", 2008, 1.1, 300.0, 500),
        ("Dunmere", 2008, 0.6, 150.0, 800),
    )
    changes = _changes(
        [("Ashfold", "Ashfold", 0.7), ("Ashfold", "Corrow", 0.3), ("Dunmere", "Corrow", 1.0)]
    )
    out = harmonise(panel, changes, 2011).panel
    again = validate(out.data, kind="brackets")
    assert again.excluded.empty and again.regions == ("Ashfold", "Corrow")


def test_a_target_drawing_on_two_counties_is_put_in_its_largest_sources_with_a_warning():
    panel = _units()
    changes = _changes([("Brennick", "Elsby", 1.0), ("Corrow", "Elsby", 1.0)])
    out = harmonise(panel, changes, 2011).panel
    (warning,) = [w for w in out.warnings if "more than one county" in w.message]
    assert "Elsby" in warning.message and warning.severity == "warning"
    weights = panel.data.groupby("region")["weight"].sum()
    larger = "North" if weights["Brennick"] >= weights["Corrow"] else "South"
    assert out.hierarchy.set_index("region").loc["Elsby", "county"] == larger

"""Tests of explorer.data.validate (and explorer.data.model): the Panel model, Problem/DataError and every validation rule.

Bracket shares come from closed-form Lorenz curves: the uniform distribution on (0, b)
has L(p) = p^2 (derived: the integral of its quantile function b u from 0 to p over the
mean b/2) and Pareto I with alpha has L(p) = 1 - (1 - p)^(1 - 1/alpha) (Kleiber & Kotz
2003, Statistical Size Distributions in Economics and Actuarial Sciences, Wiley; from
memory; cross-checked below by integrating the quantile function with scipy). Bracket k
of K equal groups holds L(k/K) - L((k-1)/K) of income.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate

from explorer.data.model import DataError, Panel, Problem
from explorer.data.validate import detect_kind, validate

K = 5


def uniform_shares(k: int = K) -> np.ndarray:
    """Shares of k equal groups under L(p) = p^2 (uniform incomes; derived above)."""
    p = np.linspace(0, 1, k + 1)
    return np.diff(p**2)


def pareto_shares(alpha: float = 3.0, k: int = K) -> np.ndarray:
    """Shares under the Pareto I Lorenz curve (Kleiber & Kotz 2003, from memory)."""
    p = np.linspace(0, 1, k + 1)
    return np.diff(1 - (1 - p) ** (1 - 1 / alpha))


def test_pareto_shares_match_quadrature_of_the_quantile_function():
    """Cross-check of the from-memory Pareto Lorenz curve: the share of bracket k is the
    integral of the quantile function Q(p) = (1 - p)^(-1/alpha) over it, divided by the
    mean alpha/(alpha - 1) (Kleiber & Kotz 2003), computed with scipy.integrate.quad. The
    project's validation then takes the quadrature shares as they are: no rescaling, no
    warning, nothing set aside."""
    alpha = 3.0
    edges = np.linspace(0, 1, K + 1)
    mean = alpha / (alpha - 1)
    quad = [
        integrate.quad(lambda p: (1 - p) ** (-1 / alpha), a, b)[0] / mean
        for a, b in zip(edges[:-1], edges[1:], strict=True)
    ]
    np.testing.assert_allclose(pareto_shares(alpha), quad, rtol=1e-8)
    panel = validate(long_frame({("A1", 2020): np.array(quad)}))
    np.testing.assert_allclose(panel.data.income_share, quad, rtol=0, atol=1e-15)
    assert panel.warnings == () and len(panel.excluded) == 0


def long_frame(cells: dict[tuple[str, int], np.ndarray], **extra) -> pd.DataFrame:
    """One row per bracket: region, year, pop_share, income_share (equal groups)."""
    rows = []
    for (region, year), shares in cells.items():
        k = len(shares)
        for s in shares:
            rows.append(
                {"region": region, "year": year, "pop_share": 1 / k, "income_share": s, **extra}
            )
    return pd.DataFrame(rows)


def wide_frame(cells: dict[tuple[str, int], np.ndarray]) -> pd.DataFrame:
    rows = []
    for (region, year), shares in cells.items():
        row = {"region": region, "year": year}
        row.update({f"share_{j + 1}": s for j, s in enumerate(shares)})
        rows.append(row)
    return pd.DataFrame(rows)


def two_districts() -> dict[tuple[str, int], np.ndarray]:
    return {
        ("A1", 2020): uniform_shares(),
        ("A1", 2021): pareto_shares(),
        ("B2", 2020): pareto_shares(4.0),
        ("B2", 2021): uniform_shares(),
    }


def messages(problems) -> str:
    return "\n".join(p.message for p in problems)


# --- the model ------------------------------------------------------------------------


def test_valid_long_brackets_keep_closed_form_shares_sorted_by_region_year_bracket():
    """Uniform and Pareto shares (closed forms above) pass through unchanged."""
    cells = two_districts()
    panel = validate(long_frame(cells), file="shares.csv")
    assert panel.kind == "brackets"
    assert list(panel.data.columns) == [
        "region",
        "year",
        "bracket",
        "pop_share",
        "income_share",
        "population",
        "mean_income",
    ]
    for (region, year), shares in cells.items():
        got = panel.data[(panel.data.region == region) & (panel.data.year == year)]
        np.testing.assert_allclose(got.income_share, shares, rtol=0, atol=1e-15)
        assert got.bracket.tolist() == list(range(1, K + 1))
    assert panel.regions == ("A1", "B2")
    assert panel.years == (2020, 2021)
    assert panel.data.population.isna().all()  # NaN when not given (contract)
    assert panel.warnings == ()
    assert len(panel.excluded) == 0


def test_wide_shares_become_long_equal_population_groups_with_the_same_fingerprint():
    """share_1..share_k are k equal population groups (the data model of
    explorer.data.model): the long and wide forms of the same shares are the same panel."""
    cells = two_districts()
    wide = validate(wide_frame(cells))
    long = validate(long_frame(cells))
    pd.testing.assert_frame_equal(wide.data, long.data)
    np.testing.assert_allclose(wide.data.pop_share, 1 / K)
    assert wide.fingerprint == long.fingerprint


@pytest.mark.parametrize(
    ("columns", "kind"),
    [
        (["region", "year", "pop_share", "income_share"], "brackets"),
        (["region", "year", "share_1", "share_2", "share_3"], "brackets"),
        (["region", "year", "income", "weight"], "units"),
        (["region", "year", "mean_income", "population"], "means"),
        (["region", "year", "county"], None),
    ],
)
def test_kind_is_detected_from_the_columns(columns, kind):
    """Column sets of the data model (explorer.data.validate.detect_kind) decide the kind."""
    assert detect_kind(columns) == kind


def test_kind_override_reads_a_bracket_file_as_district_means():
    frame = wide_frame(two_districts()).assign(mean_income=100.0, population=10)
    panel = validate(frame, kind="means")
    assert panel.kind == "means"
    assert list(panel.data.columns) == ["region", "year", "mean_income", "population"]


def test_panel_is_frozen():
    panel = validate(long_frame(two_districts()))
    with pytest.raises(AttributeError):
        panel.kind = "units"  # type: ignore[misc]


def test_input_frame_is_not_modified():
    frame = long_frame(two_districts())
    frame.loc[0, "income_share"] += 0.001  # within 0.01: validate rescales its own copy
    before = frame.copy()
    validate(frame)
    pd.testing.assert_frame_equal(frame, before)


def test_describe_summarises_sizes_coverage_levels_and_boundary_matches():
    import geopandas as gpd
    from shapely.geometry import box

    cells = {(r, y): uniform_shares() for r in ("A1", "A2", "B1") for y in (2020, 2021)}
    frame = long_frame(cells)
    frame["county"] = frame.region.str[0]
    bounds = gpd.GeoDataFrame(
        {"region": ["A1", "A2", "Z9"]},
        geometry=[box(0, 0, 1, 1), box(1, 0, 2, 1), box(2, 0, 3, 1)],
        crs=4326,
    )
    d = validate(frame, boundaries=bounds, levels=["county"]).describe()
    assert d["kind"] == "brackets" and d["districts"] == 3
    assert d["years"] == {"first": 2020, "last": 2021, "count": 2}
    assert d["brackets"] == {"min": K, "max": K}
    assert d["levels"] == {"county": 2}
    assert d["boundaries"] == {"matched": 2, "panel_only": ["B1"], "boundary_only": ["Z9"]}
    assert d["warnings"] == 2 and d["excluded"] == 0


# --- Problem and DataError ------------------------------------------------------------


def test_data_error_is_a_value_error_whose_text_lists_every_problem_and_whose_table_has_the_columns():
    problems = [
        Problem("first thing", "do this", file="a.csv", row=3, column="x"),
        Problem("second thing", file="a.csv", severity="warning"),
    ]
    err = DataError(problems)
    assert isinstance(err, ValueError)
    text = str(err)
    assert (
        "first thing" in text and "second thing" in text and "line 3" in text and "do this" in text
    )
    table = err.table()
    assert list(table.columns) == ["file", "row", "column", "severity", "message", "fix"]
    assert table.row.tolist()[0] == 3 and pd.isna(table.row.tolist()[1])


def test_problem_rejects_an_unknown_severity():
    with pytest.raises(ValueError, match="severity"):
        Problem("x", severity="fatal")


# --- file-level rules: raise ----------------------------------------------------------


def test_empty_table_is_an_error():
    with pytest.raises(DataError, match="empty"):
        validate(pd.DataFrame())


def test_header_only_is_an_error_on_line_1():
    with pytest.raises(DataError, match="header but no data rows") as info:
        validate(pd.DataFrame(columns=["region", "year", "income"]), file="h.csv")
    assert info.value.problems[0].row == 1 and info.value.problems[0].file == "h.csv"


def test_duplicated_column_names_are_an_error_naming_the_column():
    frame = pd.DataFrame([["A", 2020, 1.0, 2.0]], columns=["region", "year", "income", "income"])
    with pytest.raises(DataError, match="duplicated column name: 'income' appears 2 times"):
        validate(frame)


def test_missing_required_column_lists_the_columns_present_and_suggests_a_column_map():
    frame = pd.DataFrame({"DistrictCode": ["A"], "year": [2020], "income": [1.0]})
    with pytest.raises(DataError) as info:
        validate(frame)
    p = info.value.problems[0]
    assert "required column 'region' is missing" in p.message and "DistrictCode" in p.message
    assert "region=" in p.fix


def test_year_as_text_names_the_line_and_the_value():
    frame = pd.DataFrame(
        {"region": ["A", "A", "B"], "year": [2020, "FY2021", 2020], "income": [1.0, 2.0, 3.0]}
    )
    with pytest.raises(DataError) as info:
        validate(frame)
    p = next(p for p in info.value.problems if p.column == "year")
    assert "text" in p.message and "'FY2021'" in p.message and p.row == 3  # header is line 1


def test_year_as_fraction_is_an_error():
    frame = pd.DataFrame({"region": ["A", "B"], "year": [2020.5, 2020.0], "income": [1.0, 2.0]})
    with pytest.raises(DataError, match="fraction") as info:
        validate(frame)
    assert info.value.problems[0].row == 2


def test_missing_district_id_is_an_error():
    frame = pd.DataFrame({"region": ["A", None], "year": [2020, 2020], "income": [1.0, 2.0]})
    with pytest.raises(DataError, match="district id is missing"):
        validate(frame)


def test_negative_unit_incomes_are_an_error_unless_allowed_and_zero_is_fine():
    """Indices on unit data need non-negative incomes (common practice)."""
    frame = pd.DataFrame({"region": ["A"] * 3, "year": [2020] * 3, "income": [0.0, -5.0, 10.0]})
    with pytest.raises(DataError, match="negative incomes") as info:
        validate(frame)
    assert info.value.problems[0].row == 3
    allowed = validate(frame, allow_negative=True)
    assert sorted(allowed.data.income) == [-5.0, 0.0, 10.0]
    zero_ok = validate(frame.assign(income=[0.0, 0.0, 10.0]))
    assert zero_ok.data.weight.tolist() == [1.0, 1.0, 1.0]  # 1.0 when not given (contract)


def test_no_valid_district_year_at_all_is_an_error_listing_each_reason():
    frame = long_frame({("A", 2020): uniform_shares() * 1.5})
    with pytest.raises(DataError) as info:
        validate(frame)
    text = str(info.value)
    assert "no district-year passed the checks" in text and "sum to 1.5" in text


# --- district-year rules: leave out, warn ---------------------------------------------


def excluded_after(frame: pd.DataFrame, **kw) -> tuple[Panel, str]:
    panel = validate(frame, **kw)
    return panel, messages(panel.warnings)


def test_shares_within_1e6_are_taken_as_they_are():
    cells = two_districts()
    cells[("A1", 2020)] = uniform_shares() + 1e-7 / K
    panel, text = excluded_after(long_frame(cells))
    assert text == "" and len(panel.excluded) == 0


def test_shares_within_001_are_rescaled_to_one_with_a_warning():
    cells = two_districts()
    cells[("A1", 2020)] = uniform_shares() * 1.004
    panel, text = excluded_after(long_frame(cells))
    assert "rescaled" in text
    got = panel.data[(panel.data.region == "A1") & (panel.data.year == 2020)].income_share
    np.testing.assert_allclose(
        got, uniform_shares(), rtol=1e-12
    )  # rescaled back to the closed form


def test_shares_beyond_001_leave_that_district_year_out_and_keep_the_rest():
    cells = two_districts()
    cells[("A1", 2020)] = uniform_shares() * 1.2
    panel, text = excluded_after(long_frame(cells))
    assert panel.excluded[["region", "year"]].values.tolist() == [["A1", 2020]]
    assert "sum to 1.2" in panel.excluded.reason[0]
    assert "A1, year 2020 left out" in text
    assert len(panel.data) == 3 * K


def test_shares_given_in_percent_are_divided_by_100():
    cells = {k: v * 100 for k, v in two_districts().items()}
    panel, text = excluded_after(wide_frame(cells))
    assert "percentages" in text
    np.testing.assert_allclose(panel.data.groupby(["region", "year"]).income_share.sum(), 1.0)


@pytest.mark.parametrize(
    ("value", "phrase"),
    [
        (-0.01, "negative"),
        (np.nan, "missing"),
        (np.inf, "not a finite number"),
        ("abc", "text 'abc'"),
    ],
)
def test_a_bad_share_value_leaves_only_its_district_year_out(value, phrase):
    frame = long_frame(two_districts()).astype({"income_share": object})
    frame.loc[7, "income_share"] = value  # row 7 is A1 2021, bracket 3
    panel, text = excluded_after(frame)
    assert panel.excluded[["region", "year"]].values.tolist() == [["A1", 2021]]
    assert phrase in panel.excluded.reason[0]
    w = next(p for p in panel.warnings if "left out" in p.message)
    assert w.row == 9 and w.column == "income_share"  # frame row 7 is file line 9


def test_brackets_out_of_order_are_not_convex_and_the_message_names_the_bracket():
    """A Lorenz curve is convex: bracket mean incomes non-decreasing (Gastwirth 1972)."""
    cells = two_districts()
    shares = pareto_shares()
    cells[("B2", 2021)] = shares[[0, 1, 3, 2, 4]]
    panel, _ = excluded_after(long_frame(cells))
    assert panel.excluded[["region", "year"]].values.tolist() == [["B2", 2021]]
    assert "bracket 4" in panel.excluded.reason[0] and "not convex" in panel.excluded.reason[0]


def test_bracket_column_orders_rows_and_duplicate_bracket_rows_are_left_out():
    frame = long_frame(two_districts())
    frame["bracket"] = np.tile(np.arange(1, K + 1), 4)
    shuffled = frame.sample(frac=1.0, random_state=3)
    panel = validate(shuffled)
    pd.testing.assert_frame_equal(panel.data, validate(frame).data)
    frame.loc[1, "bracket"] = 1
    panel, _ = excluded_after(frame)
    assert "duplicate bracket rows" in panel.excluded.reason[0]


def test_duplicate_region_years_are_left_out_naming_both_lines():
    frame = pd.DataFrame(
        {"region": ["A", "A", "B"], "year": [2020, 2020, 2020], "mean_income": [1.0, 2.0, 3.0]}
    )
    panel, _ = excluded_after(frame)
    assert panel.excluded.region.tolist() == ["A"]
    assert "appears on 2 lines (2, 3)" in panel.excluded.reason[0]


def test_population_that_differs_within_a_district_year_is_left_out():
    frame = long_frame(two_districts(), population=1000.0, mean_income=50.0)
    frame.loc[2, "population"] = 999.0
    panel, _ = excluded_after(frame)
    assert panel.excluded[["region", "year"]].values.tolist() == [["A1", 2020]]
    assert "population differs" in panel.excluded.reason[0]


def test_nan_unit_income_leaves_its_district_year_out():
    frame = pd.DataFrame(
        {"region": ["A", "A", "B"], "year": [2020] * 3, "income": [1.0, np.nan, 3.0]}
    )
    panel, _ = excluded_after(frame)
    assert panel.excluded.region.tolist() == ["A"] and panel.regions == ("B",)


def test_years_missing_for_some_districts_are_listed_in_a_warning():
    cells = two_districts()
    cells[("A1", 2022)] = uniform_shares()
    _, text = excluded_after(long_frame(cells))
    assert "lack some years: B2 (2022)" in text


# --- levels, boundaries, fingerprint --------------------------------------------------


def province(n_per_county=(2, 3, 1)) -> pd.DataFrame:
    cells, county, zone = {}, {}, {}
    for c, n in enumerate(n_per_county):
        for i in range(n):
            r = f"C{c}D{i}"
            cells[(r, 2020)] = uniform_shares()
            county[r] = f"county{c}"
            zone[r] = "north" if c < 2 else "south"
    frame = long_frame(cells)
    frame["county"] = frame.region.map(county)
    frame["zone"] = frame.region.map(zone)
    frame["code"] = frame.region  # one group per district: not a level
    frame["everywhere"] = "x"  # one group: not a level
    return frame


def test_levels_are_text_columns_constant_within_districts_with_2_to_half_n_groups_outermost_first():
    panel = validate(province())
    assert panel.levels == ("zone", "county")  # 2 groups before 3
    h = panel.hierarchy.set_index("region")
    assert h.loc["C1D2", "county"] == "county1" and h.loc["C2D0", "zone"] == "south"


def test_a_column_that_varies_within_a_district_is_not_a_level():
    frame = province()
    frame.loc[0, "county"] = "elsewhere"
    assert "county" not in validate(frame).levels


def test_named_levels_must_exist():
    with pytest.raises(DataError, match="level 'province' is not a column"):
        validate(province(), levels=["province"])
    assert validate(province(), levels=["county"]).levels == ("county",)


def squares(ids, attr="code"):
    import geopandas as gpd
    from shapely.geometry import box

    return gpd.GeoDataFrame(
        {attr: ids, "label": [f"Place {i}" for i in ids]},
        geometry=[box(i, 0, i + 1, 1) for i in range(len(ids))],
        crs=4326,
    )


def test_boundary_id_attribute_is_the_one_matching_most_panel_ids():
    frame = province()
    ids = list(pd.unique(frame.region))
    bounds = squares(ids)
    bounds["other"] = [f"X{i}" for i in range(len(ids))]
    panel = validate(frame, boundaries=bounds, boundary_file="b.geojson")
    assert sorted(panel.boundaries.region) == sorted(ids)
    assert list(panel.boundaries.columns) == ["region", "name", "geometry"]  # 'label' is a name
    assert panel.boundaries.name.tolist()[0] == "Place C0D0"
    assert str(panel.boundaries.crs) == "EPSG:4326"


def test_ids_matching_partly_warn_both_ways_and_ids_matching_not_at_all_are_an_error():
    frame = province()
    ids = list(pd.unique(frame.region))
    panel = validate(
        frame, boundaries=squares(ids[1:] + ["ZZ"], attr="region"), boundary_file="b.gpkg"
    )
    text = messages(panel.warnings)
    assert f"have no boundary: {ids[0]}" in text and "no data in the panel: ZZ" in text
    with pytest.raises(DataError, match="none of the panel's 6 district ids appear"):
        validate(frame, boundaries=squares(["Q1", "Q2"], attr="region"))


def test_fingerprint_is_16_hex_ignores_row_order_and_changes_with_a_value():
    frame = long_frame(two_districts())
    a = validate(frame).fingerprint
    assert len(a) == 16 and int(a, 16) >= 0
    blocks_reversed = np.concatenate([np.arange(b * K, (b + 1) * K) for b in (3, 2, 1, 0)])
    assert validate(frame.iloc[blocks_reversed].reset_index(drop=True)).fingerprint == a
    changed = frame.copy()
    changed.loc[0, "income_share"] += 0.02
    changed.loc[1, "income_share"] -= 0.02
    assert validate(changed).fingerprint != a


# --- properties (hypothesis) -----------------------------------------------------------


@st.composite
def convex_shares(draw):
    """Bracket shares from non-decreasing relative means: always a valid Lorenz sequence."""
    k = draw(st.integers(2, 12))
    rel = np.sort(np.array(draw(st.lists(st.floats(0.0, 50.0), min_size=k, max_size=k))))
    if rel.sum() <= 0:
        rel = rel + 1.0
    return rel / rel.sum()


@settings(max_examples=40, deadline=None)
@given(shares=convex_shares(), perm_seed=st.integers(0, 1000))
def test_any_convex_share_vector_is_accepted_and_row_order_does_not_matter(shares, perm_seed):
    frame = long_frame({("A", 2020): shares, ("B", 2020): shares.copy()})
    frame["bracket"] = np.tile(np.arange(1, len(shares) + 1), 2)
    panel = validate(frame)
    assert len(panel.excluded) == 0
    np.testing.assert_allclose(panel.data.groupby("region").income_share.sum(), 1.0)
    shuffled = frame.sample(frac=1.0, random_state=perm_seed)
    assert validate(shuffled).fingerprint == panel.fingerprint


cell = st.one_of(
    st.none(),
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(-5, 3000),
    st.text(max_size=4),
)


@settings(max_examples=150, deadline=None)
@given(
    columns=st.lists(
        st.sampled_from(
            [
                "region",
                "year",
                "pop_share",
                "income_share",
                "share_1",
                "share_2",
                "income",
                "weight",
                "mean_income",
                "population",
                "county",
            ]
        ),
        min_size=1,
        max_size=6,
    ),
    data=st.data(),
)
def test_validate_on_arbitrary_cells_returns_a_panel_or_raises_data_error_only(columns, data):
    n = data.draw(st.integers(0, 6))
    rows = [[data.draw(cell) for _ in columns] for _ in range(n)]
    frame = pd.DataFrame(rows, columns=columns, dtype=object)
    try:
        panel = validate(frame)
    except DataError as err:
        assert err.problems and any(p.severity == "error" for p in err.problems)
    else:
        assert isinstance(panel, Panel) and len(panel.data) > 0

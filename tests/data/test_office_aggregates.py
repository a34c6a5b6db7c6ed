"""Total rows set apart from districts. A population total is the sum of its districts and a
mean income their population-weighted average (common practice of national accounts)."""

from __future__ import annotations

import pandas as pd
import pytest

from explorer.data.office import read_office_table
from explorer.data.office.aggregates import set_apart_aggregates

DISTRICTS = {"01": (100, 120), "02": (300, 330), "03": (50, 40), "04": (250, 260)}


def _table(rows: list[tuple[str, tuple[int, int]]]) -> pd.DataFrame:
    records = []
    for line, (region, pops) in enumerate(rows, 2):
        for year, pop in zip((2001, 2002), pops, strict=True):
            records.append({"line": line, "region": region, "year": year, "population": pop})
    return pd.DataFrame(records).astype({"population": float})


def _sum(codes: list[str]) -> tuple[int, int]:
    return tuple(sum(DISTRICTS[c][t] for c in codes) for t in range(2))  # type: ignore[return-value]


def test_nested_totals_are_found_innermost_first() -> None:
    rows = [("N", _sum(list(DISTRICTS))), ("A", _sum(["01", "02"]))]
    rows += [(c, DISTRICTS[c]) for c in ("01", "02")]
    rows += [("B", _sum(["03", "04"]))] + [(c, DISTRICTS[c]) for c in ("03", "04")]
    districts, aggregates = set_apart_aggregates(_table(rows))
    assert sorted(districts["region"].unique()) == ["01", "02", "03", "04"]
    reasons = aggregates.drop_duplicates("region").set_index("region")["reason"]
    assert set(reasons.index) == {"N", "A", "B"}
    assert "sum of 2" in reasons["A"] and "sum of 4" in reasons["N"]


def test_total_below_its_members_is_found() -> None:
    rows = [(c, DISTRICTS[c]) for c in DISTRICTS] + [("All", _sum(list(DISTRICTS)))]
    rows[-1] = ("9", rows[-1][1])  # a code, not a name: found by its values alone
    _, aggregates = set_apart_aggregates(_table(rows))
    assert aggregates["region"].unique().tolist() == ["9"]


def test_named_totals_are_set_apart_even_without_values() -> None:
    rows = [("Total (r)", (1, 1)), ("Ashvale", (5, 6)), ("All districts", (2, 2))]
    table = _table(rows).assign(region=lambda t: t["region"].str.replace(" (r)", ""))
    _, aggregates = set_apart_aggregates(table)
    assert set(aggregates["region"]) == {"Total", "All districts"}
    assert set(aggregates["reason"]) == {"named like a total"}


def test_an_id_in_the_boundary_file_is_always_a_district() -> None:
    rows = [("05", _sum(["01", "02"]))] + [(c, DISTRICTS[c]) for c in ("01", "02")]
    districts, aggregates = set_apart_aggregates(_table(rows), boundary_ids=["01", "02", "05"])
    assert aggregates.empty and len(districts) == 6
    _, apart = set_apart_aggregates(_table(rows), boundary_ids=["01", "02"])
    assert "not in the boundary file" in apart["reason"].iloc[0]


def test_coincidence_of_one_year_is_not_an_average() -> None:
    # 150 is the plain average of 100 and 200 in 2001 only; averages need 3 rows and 2 years
    table = pd.DataFrame(
        {
            "line": [2, 3, 4],
            "region": ["a", "b", "c"],
            "year": [2001] * 3,
            "mean_income": [150.0, 100.0, 200.0],
        }
    )
    _, aggregates = set_apart_aggregates(table)
    assert aggregates.empty


def test_weighted_average_row_is_found() -> None:
    pops = {"a": 100.0, "b": 300.0, "c": 600.0}
    means = {"a": (10.0, 11.0), "b": (20.0, 22.0), "c": (30.0, 29.0)}
    total = tuple(sum(pops[k] * means[k][t] for k in pops) / 1000 for t in range(2))
    # the province's own population is withheld, so only its mean can tell
    records = [
        {"line": 2, "region": "P", "year": y, "mean_income": total[t], "population": float("nan")}
        for t, y in enumerate((2001, 2002))
    ]
    for line, k in enumerate(pops, 3):
        records += [
            {
                "line": line,
                "region": k,
                "year": y,
                "mean_income": means[k][t],
                "population": pops[k],
            }
            for t, y in enumerate((2001, 2002))
        ]
    _, aggregates = set_apart_aggregates(pd.DataFrame(records))
    assert aggregates["region"].unique().tolist() == ["P"]
    assert "average of 3" in aggregates["reason"].iloc[0]
    plain = pd.DataFrame(records).drop(columns="population")  # 22.0 is not a plain mean
    assert set_apart_aggregates(plain)[1].empty


@pytest.mark.parametrize("keep", [False, True])
def test_option_keeps_the_totals(keep: bool) -> None:
    text = "District,pop2001,pop2002\nTotal,15,18\nAshvale,5,6\nNorthland,10,12\n"
    reading = read_office_table(text.encode(), "t.csv", keep_aggregates=keep)
    assert ("Total" in set(reading.table["region"])) is keep
    assert reading.aggregates["region"].unique().tolist() == ["Total"]
    assert any("totals of other rows" in p.message for p in reading.notes)


def test_a_district_named_all_saints_is_not_a_total() -> None:
    table = _table([("All Saints", (5, 6)), ("All districts", (9, 9))])
    districts, aggregates = set_apart_aggregates(table)
    assert districts["region"].unique().tolist() == ["All Saints"]
    assert aggregates["region"].unique().tolist() == ["All districts"]


def test_districts_with_identical_means_are_not_taken_for_an_average_of_each_other(tmp_path):
    """Found by property testing: four districts with the same means in every year made the
    first look like the average of the other three and set it apart."""
    from explorer.data.load import load_panel

    names = ["Aldercombe", "Brackwater", "Cindervale", "Dunmarsh"]
    body = "\n".join(f"{n},1491,1365,1000" for n in names)
    path = tmp_path / "alike.csv"
    path.write_text(
        "Mean income by district\n\nDistrict,1990,1991,1992\n" + body + "\n", encoding="utf-8"
    )
    panel = load_panel(path)
    assert sorted(panel.data["region"].unique()) == names

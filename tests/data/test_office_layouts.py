"""Layouts of office tables, each read into the same tidy long table. The reference for the
expected tidy table is pandas itself (read_csv and melt of the plain table)."""

from __future__ import annotations

import io

import openpyxl
import pandas as pd
import pytest

from explorer.data.model import DataError
from explorer.data.office import join_measure, read_office_table

PLAIN = "District,2001,2002,2003\nAshvale,100,110,120\nNorthland,200,210,220\n"


def _melted(text: str, measure: str) -> pd.DataFrame:
    wide = pd.read_csv(io.StringIO(text), dtype={"District": str})
    long = wide.melt(id_vars="District", var_name="year", value_name=measure)
    long = long.rename(columns={"District": "region"}).astype({"year": "int64"})
    return long.sort_values(["region", "year"]).reset_index(drop=True).astype({measure: float})


def _tidy(reading) -> pd.DataFrame:
    table = reading.table.sort_values(["region", "year"]).reset_index(drop=True)
    return table


@pytest.mark.parametrize(
    "header",
    [
        "District,2001,2002,2003",
        'District,"2001  ","2002  ","2003  "',
        "District,Y2001,Y2002,Y2003",
        "District,2001 (p),2002 (r),2003e",
        "District,2001 1/,2002,2003*",
    ],
)
def test_years_across_with_any_year_header(header: str) -> None:
    text = header + "\n" + PLAIN.split("\n", 1)[1]
    reading = read_office_table(text.encode(), "y.csv", measure="population")
    assert reading.layout.key == "years_across"
    pd.testing.assert_frame_equal(_tidy(reading), _melted(PLAIN, "population"))


@pytest.mark.parametrize(
    ("header", "measure"),
    [
        ("District,inc2001,inc2002,inc2003", "mean_income"),
        ("District,pop_2001,pop_2002,pop_2003", "population"),
        ("District,Gini 2001,Gini 2002,Gini 2003", "gini"),
    ],
)
def test_measure_told_by_header_prefix(header: str, measure: str) -> None:
    text = header + "\n" + PLAIN.split("\n", 1)[1]
    reading = read_office_table(text.encode(), "y.csv")
    assert reading.layout.measures == (measure,)
    assert list(reading.table.columns) == ["region", "year", measure]


def test_measure_told_by_the_title_and_overridable() -> None:
    text = "Population of districts\n" + PLAIN
    assert read_office_table(text.encode(), "t.csv").layout.measures == ("population",)
    forced = read_office_table(text.encode(), "t.csv", measure="mean_income")
    assert "mean_income" in forced.table and "population" not in forced.table
    assert forced.options.measure == "mean_income"


def test_unknown_measure_is_named_value_with_a_note() -> None:
    reading = read_office_table(PLAIN.encode(), "t.csv")
    assert reading.layout.measures == ("value",)
    assert any("could not tell which measure" in p.message for p in reading.notes)


def test_measures_side_by_side_under_a_spanning_line() -> None:
    text = (
        ",Mean income,,Population,\n"
        "District,2001,2002,2001,2002\n"
        "Ashvale,100,110,5,6\n"
        "Northland,200,210,7,8\n"
    )
    reading = read_office_table(text.encode(), "s.csv")
    table = _tidy(reading)
    assert reading.layout.measures == ("mean_income", "population")
    assert table["mean_income"].tolist() == [100.0, 110.0, 200.0, 210.0]
    assert table["population"].tolist() == [5.0, 6.0, 7.0, 8.0]


def test_measures_side_by_side_by_prefix_and_names_override() -> None:
    text = "District,a2001,a2002,b2001,b2002\nAshvale,1,2,3,4\n"
    reading = read_office_table(text.encode(), "s.csv", measure=("gini", "population"))
    assert _tidy(reading)[["gini", "population"]].to_numpy().tolist() == [[1, 3], [2, 4]]
    with pytest.raises(DataError, match="2 block"):
        read_office_table(text.encode(), "s.csv", measure="gini")


def test_one_year_table_needs_its_year() -> None:
    text = "District,Population,Mean income\nAshvale,5,100\nNorthland,7,200\n"
    with pytest.raises(DataError, match="Say which year"):
        read_office_table(text.encode(), "one.csv")
    reading = read_office_table(text.encode(), "one.csv", year=1990)
    assert reading.layout.key == "one_year"
    assert reading.table["year"].tolist() == [1990, 1990]
    assert reading.table["population"].tolist() == [5.0, 7.0]


def test_long_layout_passes_through_unchanged() -> None:
    text = (
        "region,year,mean_income,population\n"
        "01,2001,100.5,5\n01,2002,110,6\n02,2001,200,7\n02,2002,210.25,8\n"
    )
    reading = read_office_table(text.encode(), "long.csv")
    expected = pd.read_csv(io.StringIO(text), dtype={"region": str})
    expected = expected.astype({"mean_income": float, "population": float})
    assert reading.layout.key == "long"
    pd.testing.assert_frame_equal(reading.table, expected)


def test_two_lines_for_one_district_year_are_refused() -> None:
    text = "region,year,population\nAshvale,2001,5\nAshvale,2001,6\n"
    with pytest.raises(DataError, match="more than once"):
        read_office_table(text.encode(), "dup.csv")


def _workbook(sheets: dict[str, list[list[object]]]) -> bytes:
    book = openpyxl.Workbook()
    book.remove(book.active)
    for title, rows in sheets.items():
        sheet = book.create_sheet(title)
        for row in rows:
            sheet.append(row)
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def test_workbook_with_a_sheet_per_measure() -> None:
    data = _workbook(
        {
            "Notes": [["Valdoria Board of Statistics"], ["All figures provisional."]],
            "Mean income": [
                ["Income per person"],
                ["District", 2001, 2002],
                ["Ashvale", 100, 110],
                ["Northland", 200, "(D)"],
            ],
            "Population": [["District", 2001, 2002], ["Ashvale", 5, 6], ["Northland", 7, 8]],
        }
    )
    reading = read_office_table(data, "book.xlsx")
    table = _tidy(reading)
    assert reading.layout.measures == ("mean_income", "population")
    assert "one measure per sheet" in reading.layout.words
    assert table["population"].tolist() == [5.0, 6.0, 7.0, 8.0]
    assert table["mean_income"].iloc[:3].tolist() == [100.0, 110.0, 200.0]
    assert pd.isna(table["mean_income"].iloc[3])
    assert any("sheet 'Notes'" in p.message for p in reading.notes)
    assert any("'(D)'" in p.message for p in reading.notes)


def test_workbook_with_a_sheet_per_year() -> None:
    data = _workbook(
        {
            "2001": [["District", "Population"], ["Ashvale", 5], ["Northland", 7]],
            "2002": [["District", "Population"], ["Ashvale", 6], ["Northland", 8]],
        }
    )
    reading = read_office_table(data, "years.xlsx")
    assert "one year per sheet" in reading.layout.words
    table = _tidy(reading)
    assert table[["year", "population"]].to_numpy().tolist() == [
        [2001, 5],
        [2002, 6],
        [2001, 7],
        [2002, 8],
    ]


def test_second_table_is_joined_and_unmatched_keys_reported() -> None:
    panel = read_office_table(
        b"District,inc2001,inc2002\nAshvale,100,110\nNorthland,200,210\n", "income.csv"
    )
    other = read_office_table(
        b"district,year,population\nAshvale,2001,5\nAshvale,2002,6\n"
        b"Northland,2001,7\nGreyhollow,2001,9\n",
        "pop.csv",
    )
    joined, notes = join_measure(panel, other, "pop.csv")
    assert len(joined) == len(panel.table)
    by_key = joined.set_index(["region", "year"])["population"]
    assert by_key[("Ashvale", 2002)] == 6.0 and pd.isna(by_key[("Northland", 2002)])
    messages = " ".join(p.message for p in notes)
    assert "Northland 2002" in messages and "Greyhollow 2001" in messages
    with pytest.raises(DataError, match="both tables hold"):
        join_measure(panel, panel)


def test_one_year_column_is_a_year_not_a_measure() -> None:
    text = "Population by district\nDistrict,2003 (p)\nAshvale,5\nNorthland,7\n"
    reading = read_office_table(text.encode(), "one.csv")
    assert reading.table[["year", "population"]].to_numpy().tolist() == [[2003, 5], [2003, 7]]


def test_columns_beside_the_years_are_named_as_not_read() -> None:
    text = "District,2001,2002,Change (%)\nAshvale,5,6,20.0\nNorthland,7,8,14.3\n"
    reading = read_office_table(text.encode(), "c.csv", measure="population")
    assert list(reading.table.columns) == ["region", "year", "population"]
    assert any("not read: Change (%)" in p.message for p in reading.notes)


def test_years_in_the_line_above_measures_in_the_header() -> None:
    text = (
        "Valdoria Province\n"
        ",2001,,2002,\n"
        "District,Mean income,Population,Mean income,Population\n"
        "Ashvale,100,5,110,6\n"
        "Northland,200,7,210,8\n"
    )
    reading = read_office_table(text.encode(), "m.csv")
    table = _tidy(reading)
    assert reading.layout.measures == ("mean_income", "population")
    assert table[["year", "mean_income", "population"]].to_numpy().tolist() == [
        [2001, 100, 5],
        [2002, 110, 6],
        [2001, 200, 7],
        [2002, 210, 8],
    ]


def test_values_without_a_district_name_are_named_not_read() -> None:
    text = "District,2001,2002\n,1,2\nAshvale,3,4\n"
    reading = read_office_table(text.encode(), "n.csv", measure="population")
    assert reading.table["region"].unique().tolist() == ["Ashvale"]
    assert any("no district name" in p.message and "lines 2" in p.message for p in reading.notes)


def test_an_empty_file_is_a_clear_error() -> None:
    with pytest.raises(DataError, match="holds no cells"):
        read_office_table(b"", "empty.csv")


def test_summary_states_what_was_understood() -> None:
    text = "Population\nDistrict,2001,2002\nTotal,8,10\nAshvale,3,4\nNorthland,5,6\n"
    lines = read_office_table(text.encode(), "s.csv").summary()
    assert lines[0] == "Layout: one line per district, years across the columns."
    assert lines[1] == "Header on line 2; measures: population."
    assert lines[2] == "2 districts, years 2001–2002, 4 rows."
    assert lines[3] == "1 total row(s) set apart: Total."


def test_notes_count_every_cleaned_cell_but_list_only_a_few() -> None:
    rows = "\n".join(f"D{k} 3/,{k},see note" for k in range(1, 13))
    reading = read_office_table(f"District,2001,2002\n{rows}\n".encode(), "m.csv")
    text = " ".join(p.message for p in reading.notes)
    assert "footnote markers removed from 12 district names" in text
    assert "12 cell(s) are not numbers" in text
    assert text.count("see note") == 5


def test_a_year_given_for_a_table_with_years_is_not_used_and_said_so() -> None:
    reading = read_office_table(PLAIN.encode(), "y.csv", year=1990, measure="population")
    assert sorted(reading.table["year"].unique()) == [2001, 2002, 2003]
    assert any("1990 was given" in p.message for p in reading.notes)


def test_bracket_shares_by_group_with_years_across_become_a_bracket_panel(tmp_path) -> None:
    """One line per district and quintile, years across, shares in percent.

    The lower bound of the Gini from grouped shares is the trapezoid rule over the Lorenz
    points (Gastwirth 1972, *Review of Economics and Statistics* 54: 306-316), computed
    here by hand from the file's numbers.
    """
    from explorer.data.load import load_panel
    from explorer.stats import indices

    shares = {
        ("Ashvale", 2001): [6.0, 12.0, 17.0, 23.0, 42.0],
        ("Ashvale", 2002): [6.5, 12.5, 17.0, 23.0, 41.0],
        ("Northland", 2001): [7.0, 13.0, 18.0, 23.0, 39.0],
        ("Northland", 2002): [7.5, 13.0, 18.0, 22.5, 39.0],
    }
    lines = ["Table 7. Income shares by quintile (%)", "District,Quintile,2001,2002"]
    for district in ("Ashvale", "Northland"):
        for q in range(5):
            lines.append(
                f"{district},Q{q + 1},{shares[(district, 2001)][q]},{shares[(district, 2002)][q]}"
            )
    lines.append("Source: invented survey of the test province.")
    path = tmp_path / "quintiles.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    panel = load_panel(path)
    assert panel.kind == "brackets"
    assert sorted(panel.data.groupby(["region", "year"]).size().tolist()) == [5, 5, 5, 5]
    table = indices.compute(panel, indices=("gini",)).set_index(["region", "year"])
    for key, given in shares.items():
        share = [s / 100 for s in given]
        lorenz = [0.0]
        for s in share:
            lorenz.append(lorenz[-1] + s)
        trapezoid = 1 - sum(0.2 * (a + b) for a, b in zip(lorenz[:-1], lorenz[1:], strict=True))
        assert abs(table.loc[key, "lower"] - trapezoid) < 1e-12
    assert any("one line per district and quintile" in w.message for w in panel.warnings)


def test_a_group_given_twice_for_a_district_is_named(tmp_path) -> None:
    from explorer.data.load import load_panel

    text = "District,Decile,2001,2002\nAshvale,1,5,5\nAshvale,1,6,6\nAshvale,2,89,89\n"
    path = tmp_path / "twice.csv"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(DataError, match="has group 1 twice for 2001"):
        load_panel(path)


def test_a_workbook_with_a_sheet_per_measure_opens_as_a_panel(tmp_path) -> None:
    """End to end: the workbook's two sheets become one means panel with populations."""
    from explorer.data.load import load_panel

    data = _workbook(
        {
            "Notes": [["Valdoria Board of Statistics"], ["All figures provisional."]],
            "Mean income": [
                ["Income per person, current prices"],
                ["District", 2001, 2002],
                ["Ashvale", "12,100", 12800],
                ["Northland", 20400, "21,000 (r)"],
            ],
            "Population": [
                ["District", 2001, 2002],
                ["Ashvale", 5100, 5200],
                ["Northland", 7000, 7100],
            ],
        }
    )
    path = tmp_path / "book.xlsx"
    path.write_bytes(data)
    panel = load_panel(path)
    assert panel.kind == "means"
    got = panel.data.set_index(["region", "year"])[["mean_income", "population"]]
    assert got.loc[("Northland", 2002)].tolist() == [21000.0, 7100.0]
    assert got.loc[("Ashvale", 2001)].tolist() == [12100.0, 5100.0]

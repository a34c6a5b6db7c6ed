"""load_panel on tables as statistics offices publish them, and the command line around it.

The fixtures are invented office-style downloads (tests/fixtures/office/make_fixtures.py):
title and note rows, footnote markers, suppression codes, a total row, padded headers.
"""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from shapely.geometry import box

from explorer import cli
from explorer.data.load import load_panel, read_panel_table
from explorer.data.office import ReadOptions
from explorer.data.tables import read_table
from explorer.data.validate import validate

OFFICE = Path(__file__).parents[1] / "fixtures" / "office"
ACROSS = OFFICE / "income_years_across.csv"
POPULATION = OFFICE / "population_long.csv"
DISTRICTS = ["Northland", "Ashvale", "Lower Marsh", "Brindle Cove", "Kestrel Heights"]


def _messages(panel) -> str:
    return "\n".join(p.message for p in panel.warnings)


def test_years_across_table_is_read_with_every_note_in_the_warnings():
    panel = load_panel(ACROSS)
    assert panel.kind == "means"
    assert sorted(panel.regions) == sorted(DISTRICTS)
    assert panel.years == (2001, 2002, 2003)
    text = _messages(panel)
    assert "above the header" in text and "below the data" in text
    assert "'(D)'" in text and "'..'" in text
    assert "Valdoria Province" in text and "set apart" in text
    northland = panel.data.query("region == 'Northland'")["mean_income"].tolist()
    assert northland == [14120.0, 14480.0, 15010.0]


def test_suppressed_cells_set_their_district_years_aside_at_their_file_lines():
    panel = load_panel(ACROSS)
    aside = set(zip(panel.excluded["region"], panel.excluded["year"], strict=True))
    assert aside == {("Ashvale", 2003), ("Brindle Cove", 2001)}
    rows = {p.message.split(",")[0]: p.row for p in panel.warnings if "left out" in p.message}
    # Ashvale is on line 7 of the file and Brindle Cove on line 9 (header on line 4)
    assert rows == {"district Ashvale": 7, "district Brindle Cove": 9}


def test_total_rows_are_kept_as_districts_when_asked():
    panel = load_panel(ACROSS, options=ReadOptions(keep_aggregates=True))
    assert "Valdoria Province" in panel.regions
    assert "kept in the table" in _messages(panel)


def test_population_table_is_joined_on_district_and_year_and_strays_reported():
    panel = load_panel(ACROSS, population=POPULATION)
    expected = pd.read_csv(POPULATION).rename(columns={"district": "region"})
    got = panel.data.merge(expected, on=["region", "year"], suffixes=("", "_file"))
    assert len(got) == len(panel.data)
    assert (got["population"] == got["population_file"]).all()
    assert "Greyhollow 2002" in _messages(panel)


def test_a_one_year_table_takes_the_year_given(tmp_path):
    path = tmp_path / "means_2004.csv"
    path.write_text(
        'Mean income by district, 2004\n\nDistrict,Mean income\nNorthland,"15,100"\n'
        'Ashvale,"12,900"\nLower Marsh,"17,800"\n',
        encoding="utf-8",
    )
    panel = load_panel(path, options=ReadOptions(year=2004))
    assert panel.years == (2004,)
    assert panel.data.set_index("region")["mean_income"].to_dict() == {
        "Ashvale": 12900.0,
        "Lower Marsh": 17800.0,
        "Northland": 15100.0,
    }


def test_side_by_side_blocks_give_means_with_populations():
    panel = load_panel(OFFICE / "side_by_side.csv")
    assert panel.kind == "means"
    row = panel.data.query("region == '04' and year == 2002").iloc[0]
    assert (row["mean_income"], row["population"]) == (10015.0, 5090.0)
    assert "00" not in panel.regions  # the province total is set apart


def test_a_tidy_table_reads_exactly_as_before(tmp_path):
    path = tmp_path / "means.csv"
    path.write_text(
        "region,year,mean_income,population\nA,2001,10,5\nA,2002,11,5\nB,2001,20,6\nB,2002,21,6\n",
        encoding="utf-8",
    )
    assert read_panel_table(path).reading is None
    before = validate(read_table(path), file=path.name)
    after = load_panel(path)
    pd.testing.assert_frame_equal(before.data, after.data)
    assert before.warnings == after.warnings


def test_a_crosswalk_renames_districts_to_boundary_ids(tmp_path):
    walk = tmp_path / "walk.csv"
    rows = [f"{name},D{i}" for i, name in enumerate(DISTRICTS, start=1)]
    walk.write_text("region,boundary_id\n" + "\n".join(rows) + "\n", encoding="utf-8")
    panel = load_panel(ACROSS, crosswalk=walk)
    assert sorted(panel.regions) == ["D1", "D2", "D3", "D4", "D5"]


def _boundaries(tmp_path: Path, names: list[str]) -> Path:
    frame = gpd.GeoDataFrame(
        {"region": names, "name": names},
        geometry=[box(i, 0, i + 1, 1) for i in range(len(names))],
        crs="EPSG:4326",
    )
    path = tmp_path / "districts.geojson"
    frame.to_file(path, driver="GeoJSON")
    return path


def run(capsys, *argv: str) -> tuple[int, str, str]:
    code = cli.main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_check_names_each_set_aside_district_year_and_exits_two(capsys):
    code, out, err = run(capsys, "check", str(ACROSS))
    assert code == cli.EXIT_BAD_INPUT
    assert "set aside: district Ashvale, year 2003: a value is missing" in err
    assert "set aside: district Brindle Cove, year 2001" in err
    assert "2 of 15 district-year(s) set aside" in err
    assert "13 (87%) of the panel is usable" in out
    assert "read as: Layout: one line per district, years across the columns." in out
    assert "read as: Header on line 4; measures: mean_income." in out


def test_check_of_a_clean_office_table_exits_zero(tmp_path, capsys):
    path = tmp_path / "clean.csv"
    text = ACROSS.read_text(encoding="utf-8-sig").replace("(D)", '"15,000"')
    path.write_text(text.replace("..", '"9,900"'), encoding="utf-8")
    code, out, err = run(capsys, "check", str(path))
    assert code == cli.EXIT_OK, err
    assert "0 of 15 district-year(s) set aside" in err
    assert "valid" in out


def test_compute_reports_what_it_set_aside(tmp_path, capsys):
    out_file = tmp_path / "means.csv"
    code, _, err = run(
        capsys, "compute", str(ACROSS), "--population", str(POPULATION), "--out", str(out_file)
    )
    assert code == cli.EXIT_OK, err
    assert err.count("set aside: district") == 2


def test_cli_reading_options_reach_the_reader(tmp_path, capsys):
    code, _, err = run(capsys, "check", str(ACROSS), "--keep-totals", "--header-row", "4")
    assert "Valdoria Province" in err or code in (cli.EXIT_OK, cli.EXIT_BAD_INPUT)
    panel = load_panel(
        ACROSS,
        options=cli._read_options(
            cli.build_parser().parse_args(["check", str(ACROSS), "--keep-totals"])
        ),
    )
    assert "Valdoria Province" in panel.regions


def test_check_suggests_boundary_names_and_a_crosswalk(tmp_path, capsys):
    names = ["Northland", "Ashvale", "Lower Marsh North", "Brindle Cove", "Kestrel Heights"]
    bounds = _boundaries(tmp_path, names)
    code, out, _ = run(capsys, "check", str(ACROSS), "--boundaries", str(bounds))
    assert "'Lower Marsh North' in the boundaries looks like 'Lower Marsh' in the panel" in out
    assert "--crosswalk" in out
    walk = tmp_path / "walk.csv"
    walk.write_text("region,boundary_id\nLower Marsh,Lower Marsh North\n", encoding="utf-8")
    code, out, _ = run(
        capsys, "check", str(ACROSS), "--boundaries", str(bounds), "--crosswalk", str(walk)
    )
    assert "boundaries: 5 districts matched" in out


@pytest.mark.parametrize("spec", ["zone=Zone,sub", "zone"])
def test_levels_option_takes_display_names(spec):
    assert cli._levels(spec) == (
        {"zone": "Zone", "sub": "sub"} if "," in spec else {"zone": "zone"}
    )


def test_a_one_year_table_without_its_year_names_the_option(tmp_path, capsys):
    path = tmp_path / "means_2004.csv"
    path.write_text(
        'Mean income by district\n\nDistrict,Mean income\nNorthland,"15,100"\nAshvale,"12,900"\n',
        encoding="utf-8",
    )
    code, _, err = run(capsys, "check", str(path))
    assert code == cli.EXIT_BAD_INPUT
    assert "no year column" in err and "--year YEAR" in err
    code, out, err = run(capsys, "check", str(path), "--year", "2004")
    assert code == cli.EXIT_OK, err
    assert "years: 2004-2004" in out


@given(
    means=st.lists(
        st.lists(st.integers(1_000, 99_999), min_size=3, max_size=3), min_size=2, max_size=5
    ),
    first=st.integers(1990, 2020),
)
@settings(
    max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
def test_decorated_and_tidy_forms_give_the_same_panel(tmp_path, means, first):
    names = DISTRICTS[: len(means)]
    years = [first, first + 1, first + 2]
    tidy = tmp_path / "tidy.csv"
    rows = [
        f"{n},{y},{v}"
        for n, vs in zip(names, means, strict=True)
        for y, v in zip(years, vs, strict=True)
    ]
    tidy.write_text("region,year,mean_income\n" + "\n".join(rows) + "\n", encoding="utf-8")
    decorated = tmp_path / "decorated.csv"
    header = ",".join(["District", f'"{years[0]}  "', f"{years[1]} (p)", f"Y{years[2]}"])
    body = [
        f"{n} 3/," + ",".join(f'"{v:,}"' for v in vs) for n, vs in zip(names, means, strict=True)
    ]
    decorated.write_text(
        "Table 2. Mean income by district\n\n"
        + header
        + "\n"
        + "\n".join(body)
        + "\n\nSource: an invented office.\n",
        encoding="utf-8",
    )
    plain, office = load_panel(tidy), load_panel(decorated)
    pd.testing.assert_frame_equal(plain.data, office.data)
    assert plain.fingerprint == office.fingerprint


def test_levels_option_chooses_and_names_the_level(tmp_path, capsys):
    import geopandas as gpd
    from shapely.geometry import box

    frame = gpd.GeoDataFrame(
        {
            "name": DISTRICTS,
            "ZONE_CD": ["East", "East", "West", "West", "West"],
            "BELT": ["Hill", "Coast", "Hill", "Coast", "Hill"],
        },
        geometry=[box(i, 0, i + 1, 1) for i in range(5)],
        crs="EPSG:4326",
    )
    bounds = tmp_path / "districts.geojson"
    frame.to_file(bounds, driver="GeoJSON")
    _, out, _ = run(capsys, "check", str(ACROSS), "--boundaries", str(bounds))
    assert "BELT (2 groups)" in out and "ZONE_CD (2 groups)" in out
    _, out, _ = run(
        capsys, "check", str(ACROSS), "--boundaries", str(bounds), "--levels", "ZONE_CD=Zone"
    )
    assert "higher levels: Zone (2 groups)" in out
    assert "BELT" not in out


def test_measure_option_says_what_undescribed_values_are(tmp_path):
    path = tmp_path / "table.csv"
    path.write_text(
        "Table 4\n\nDistrict,2001,2002\nNorthland,12400,12600\nAshvale,8300,8350\n",
        encoding="utf-8",
    )
    read = read_panel_table(path, options=ReadOptions(measure="population"))
    assert list(read.frame.columns) == ["region", "year", "population"]
    assert read.frame["population"].tolist() == [12400.0, 12600.0, 8300.0, 8350.0]


def test_check_save_stores_the_crosswalk_with_the_dataset(tmp_path, capsys):
    from explorer.data.workspace import Workspace

    walk = tmp_path / "walk.csv"
    walk.write_text("region,boundary_id\nLower Marsh,LM-01\n", encoding="utf-8")
    clean = tmp_path / "clean.csv"
    text = ACROSS.read_text(encoding="utf-8-sig").replace("(D)", '"15,000"')
    clean.write_text(text.replace("..", '"9,900"'), encoding="utf-8")
    ws = tmp_path / "ws"
    code, out, err = run(
        capsys, "check", str(clean), "--crosswalk", str(walk), "--save", "--data", str(ws)
    )
    assert code == cli.EXIT_OK, err
    ident = out.strip().splitlines()[-1].split()[3]
    workspace = Workspace(ws)
    assert workspace.options(ident)["crosswalk"] == {"Lower Marsh": "LM-01"}
    assert "LM-01" in workspace.open(ident).regions

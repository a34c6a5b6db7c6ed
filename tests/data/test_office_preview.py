"""The preview of what the readers understood, before anything is used."""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
from shapely.geometry import box

from explorer.data.office import ReadOptions
from explorer.data.office.preview import preview_inputs

OFFICE = Path(__file__).parents[1] / "fixtures" / "office"
ACROSS = OFFICE / "income_years_across.csv"
NAMES = ["Northland", "Ashvale", "Lower Marsh North", "Brindle Cove", "Kestrel Heights"]


def _parts(folder: Path, crs: str | None) -> list[Path]:
    if crs is None:  # UTM-like eastings and northings in metres, no .prj
        cells = [
            box(500_000 + i * 1000, 6_000_000, 501_000 + i * 1000, 6_001_000) for i in range(5)
        ]
    else:
        cells = [box(10 + i * 0.1, 50, 10.1 + i * 0.1, 50.1) for i in range(5)]
    frame = gpd.GeoDataFrame(
        {
            "CODE": ["N1", "A1", "L1", "B1", "K1"],
            "name": NAMES,
            "ZONE": ["East", "East", "West", "West", "West"],
            "AREA": [1.0, 2.0, 3.0, 4.0, 5.0],
        },
        geometry=cells,
        crs=crs,
    )
    frame.to_file(folder / "districts.shp")
    return sorted(folder.glob("districts.*"))


def test_the_preview_says_what_was_understood_and_proposes_levels_and_names(tmp_path):
    preview = preview_inputs(ACROSS, _parts(tmp_path, "EPSG:4326"))
    assert preview.office and preview.measures == ("mean_income",)
    assert preview.lines[0] == "Layout: one line per district, years across the columns."
    # ZONE nests the five districts in two groups; AREA is a measure, CODE unique per district
    assert [c.column for c in preview.levels] == ["ZONE"]
    assert preview.names.suggestions["Lower Marsh"][0][0] == "Lower Marsh North"
    assert not preview.crs_missing and preview.problems == ()


def test_a_file_in_metres_without_a_system_gets_candidates(tmp_path):
    preview = preview_inputs(ACROSS, _parts(tmp_path, None))
    assert preview.crs_missing
    # eastings of 500,000 m are those of a UTM zone (Snyder 1987, pp. 57-64)
    assert preview.crs_candidates[0].code.startswith("EPSG:326")
    assert preview.problems == ()  # previewed in a stand-in system, attributes only


def test_overrides_reach_the_preview():
    kept = preview_inputs(ACROSS, options=ReadOptions(keep_aggregates=True))
    assert any("kept in the table" in line for line in kept.lines)


def test_a_bad_file_is_previewed_as_its_problems_never_raised(tmp_path):
    path = tmp_path / "empty.csv"
    path.write_text("", encoding="utf-8")
    preview = preview_inputs(path)
    assert preview.problems and not preview.office


def test_a_tidy_table_is_not_called_an_office_table(tmp_path):
    path = tmp_path / "means.csv"
    path.write_text("region,year,mean_income\nA,2001,10\nB,2001,12\n", encoding="utf-8")
    preview = preview_inputs(path)
    assert not preview.office and preview.lines == [] and preview.problems == ()

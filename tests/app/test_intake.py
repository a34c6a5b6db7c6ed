"""Intake: uploads are checked, shown, kept to their session, and saved on request."""

from __future__ import annotations

import re

import pandas as pd
from app_helpers import APP, ROOT, dataframe, page, run, view
from streamlit.testing.v1 import AppTest

DECILES = ROOT / "demo_data" / "deciles.csv"


def small_panel(counties=("Brennhollow", "Tanvery")) -> bytes:
    frame = pd.read_csv(DECILES)
    frame = frame[frame["county"].isin(counties) & frame["year"].between(2010, 2014)]
    return frame.to_csv(index=False).encode()


def upload(app, content: bytes, name: str = "panel.csv"):
    app.switch_page(page("intake"))
    run(app)
    app.file_uploader(key="intake_panel").set_value((name, content, "text/csv"))
    run(app)
    app.button(key="intake_read").click()
    return run(app)


def test_an_uploaded_panel_becomes_this_sessions_dataset(app):
    run(app)
    upload(app, small_panel())
    assert view(app).dataset.startswith("upload-")
    summary = dataframe(app, "intake_summary").set_index("item")["value"]
    assert summary["kind"] == "brackets"
    # 7 Brennhollow + 5 Tanvery districts (demo_data/README.md).
    assert "12" in summary["districts"]


def test_a_bad_upload_shows_every_problem_with_file_row_and_column(app):
    run(app)
    frame = pd.read_csv(DECILES, dtype=str).head(40)
    frame.loc[3, "share_2"] = "lots"
    frame.loc[7, "year"] = "twenty"
    upload(app, frame.to_csv(index=False).encode(), name="broken.csv")
    problems = dataframe(app, "problems_table")
    assert {"file", "row", "column", "message", "fix"} <= set(problems.columns)
    assert set(problems["file"]) == {"broken.csv"}
    assert {"share_2", "year"} <= set(problems["column"].dropna())
    assert view(app).dataset == "demo"
    assert any("could not be used" in e.value for e in app.error)


def test_one_sessions_upload_is_invisible_to_another_session(app):
    run(app)
    upload(app, small_panel())
    mine = view(app).dataset
    other = AppTest.from_file(str(APP), default_timeout=120)
    run(other)
    options = other.selectbox(key="ctl_dataset").options
    assert not [o for o in options if "this session" in o]
    other2 = AppTest.from_file(str(APP), default_timeout=120)
    other2.query_params["d"] = mine
    run(other2)
    assert view(other2).dataset == "demo"


def test_saving_an_upload_puts_it_in_the_workspace_for_everyone(app):
    run(app)
    upload(app, small_panel(("Osselin",)))
    app.button(key="intake_save").click()
    run(app)
    saved = view(app).dataset
    assert not saved.startswith("upload-") and saved != "demo"
    # the page says what was saved: the name, where, the id
    said = " ".join(s.value for s in app.success)
    assert "Saved “panel”" in said and saved in said and "workspace" in said, said
    other = AppTest.from_file(str(APP), default_timeout=120)
    other.query_params["d"] = saved
    run(other)
    assert view(other).dataset == saved
    # The entry names the dataset and what tells it apart: kind, date saved, start of its id.
    entries = other.selectbox(key="ctl_dataset").options
    assert any(
        e.startswith("panel · ") and saved[:6] in e and e.endswith(" (saved)") for e in entries
    ), entries


def test_column_choices_map_a_files_own_names_onto_the_panel(app):
    run(app)
    frame = pd.read_csv(DECILES)
    frame = frame[frame["county"] == "Tanvery"].rename(columns={"region": "Code", "year": "Yr"})
    app.switch_page(page("intake"))
    run(app)
    app.file_uploader(key="intake_panel").set_value(
        ("renamed.csv", frame.to_csv(index=False).encode(), "text/csv")
    )
    run(app)
    # Without a map the file lacks its district and year columns.
    app.button(key="intake_read").click()
    run(app)
    assert len(dataframe(app, "problems_table")) > 0 and view(app).dataset == "demo"
    app.selectbox(key="in_map_region").set_value("Code")
    app.selectbox(key="in_map_year").set_value("Yr")
    app.button(key="intake_read").click()
    run(app)
    assert view(app).dataset.startswith("upload-")
    summary = dataframe(app, "intake_summary").set_index("item")["value"]
    assert "5" in summary["districts"]  # Tanvery has 5 districts (demo_data/README.md)


# ------------------------------------------------------------------ office tables in
OFFICE = ROOT / "tests" / "fixtures" / "office"
DISTRICT_NAMES = ["Northland", "Ashvale", "Lower Marsh North", "Brindle Cove", "Kestrel Heights"]


def shapefile_parts(folder, crs: str | None = "EPSG:4326") -> list[tuple[str, bytes, str]]:
    """An invented Shapefile of the five districts, as the parts a planner uploads."""
    import geopandas as gpd
    from shapely.geometry import box

    if crs is None:  # metres of the European grid, with no .prj to say so
        cells = [box(4321000 + i * 1000, 3210000, 4322000 + i * 1000, 3211000) for i in range(5)]
    else:
        cells = [box(10 + i * 0.1, 50, 10.1 + i * 0.1, 50.1) for i in range(5)]
    frame = gpd.GeoDataFrame(
        {
            "name": DISTRICT_NAMES,
            "ZONE_CD": ["East", "East", "West", "West", "West"],
            "AREA_KM2": [410.0, 380.5, 512.25, 150.0, 620.75],
        },
        geometry=cells,
        crs=crs,
    )
    frame.to_file(folder / "districts.shp")
    parts = []
    for suffix in (".shp", ".shx", ".dbf", ".prj", ".cpg"):
        path = folder / f"districts{suffix}"
        if path.exists():
            parts.append((path.name, path.read_bytes(), "application/octet-stream"))
    return parts


def office_upload(app, tmp_path, crs: str | None = "EPSG:4326"):
    app.switch_page(page("intake"))
    run(app)
    across = OFFICE / "income_years_across.csv"
    app.file_uploader(key="intake_panel").set_value((across.name, across.read_bytes(), "text/csv"))
    app.file_uploader(key="intake_boundaries").set_value(shapefile_parts(tmp_path, crs))
    return run(app)


def markdown_text(app) -> str:
    """The page's Markdown as a reader sees it: backslash escapes of data text removed
    (CommonMark 0.29, section 2.4: a backslash before ASCII punctuation shows the character)."""
    return as_read("\n".join(m.value for m in app.markdown))


def as_read(source: str) -> str:
    """Markdown source as a reader sees it (backslash escapes and word joiners removed)."""
    return re.sub(r"\\([!-/:-@\[-`{-~])", r"\1", source).replace("\u2060", "")


def test_an_office_table_is_previewed_before_it_is_used(app, tmp_path):
    run(app)
    office_upload(app, tmp_path)
    text = markdown_text(app)
    assert "years across the columns" in text
    assert "Header on line 4" in text
    assert "Valdoria Province" in text  # the total row set apart
    assert "'(D)'" in text
    # the proposal is the zone only: not the area, which is unique per district
    assert app.checkbox(key="in_level_ZONE_CD").value is True
    assert not [c for c in app.checkbox if c.key == "in_level_AREA_KM2"]
    assert app.text_input(key="in_level_name_ZONE_CD").value == "Zone"  # not the raw code


def test_a_name_suggestion_accepted_joins_the_district_and_is_saved(app, tmp_path):
    run(app)
    office_upload(app, tmp_path)
    suggestion = app.checkbox(key="in_name_Lower Marsh")
    assert "'Lower Marsh North' in the boundaries" in as_read(suggestion.label)
    suggestion.check()
    app.text_input(key="in_level_name_ZONE_CD").set_value("Zone")
    run(app)
    app.button(key="intake_read").click()
    run(app)
    summary = dataframe(app, "intake_summary").set_index("item")["value"]
    assert "'matched': 5" in summary["boundaries"]
    assert "Zone" in summary["levels"]
    assert any("each district counts equally" in i.value for i in app.info)
    app.text_input(key="facts_currency").set_value("crowns")
    app.selectbox(key="facts_unit").set_value("per capita")
    app.text_input(key="facts_source").set_value("Valdoria Board of Statistics")
    run(app)
    app.button(key="intake_save").click()
    run(app)
    saved = view(app).dataset
    from explorer.data.workspace import Workspace

    workspace = Workspace()
    assert workspace.options(saved)["crosswalk"] == {"Lower Marsh": "Lower Marsh North"}
    facts = workspace.facts(saved)
    assert (facts.currency, facts.unit, facts.source) == (
        "crowns",
        "per capita",
        "Valdoria Board of Statistics",
    )
    assert workspace.open(saved).levels == ("Zone",)


def test_overrides_change_the_reading(app, tmp_path):
    run(app)
    office_upload(app, tmp_path)
    app.checkbox(key="in_keep_totals").check()
    run(app)
    app.button(key="intake_read").click()
    run(app)
    summary = dataframe(app, "intake_summary").set_index("item")["value"]
    assert "6" in summary["districts"]  # the province row kept as a district


def test_a_boundary_file_without_a_coordinate_system_offers_the_likely_ones(app, tmp_path):
    run(app)
    office_upload(app, tmp_path, crs=None)
    choice = app.selectbox(key="in_crs_choice")
    assert choice.options[0].startswith("EPSG:3035")
    assert "--crs" not in markdown_text(app)
    app.checkbox(key="in_name_Lower Marsh").check()
    run(app)
    app.button(key="intake_read").click()
    run(app)
    dataset = view(app).dataset
    assert dataset.startswith("upload-")
    # The grid's false origin, 4,321,000 m east and 3,210,000 m north, is 10 E, 52 N
    # (EPSG:3035 definition, common practice).
    bounds = app.session_state["rift_uploads"][dataset].boundaries.total_bounds
    assert abs(bounds[0] - 10.0) < 0.01 and abs(bounds[1] - 52.0) < 0.01


def test_an_accepted_name_match_is_offered_again_for_the_next_upload(app, tmp_path):
    run(app)
    office_upload(app, tmp_path)
    app.checkbox(key="in_name_Lower Marsh").check()
    run(app)
    app.button(key="intake_read").click()
    run(app)
    app.button(key="intake_save").click()
    run(app)
    later = AppTest.from_file(str(APP), default_timeout=120)
    run(later)
    again = tmp_path / "again"
    again.mkdir()
    office_upload(later, again)
    assert later.checkbox(key="in_name_Lower Marsh").value is True


def test_saving_a_view_by_name_gives_its_link(app):
    app.query_params["ix"] = "mld"
    run(app)
    app.switch_page(page("intake"))
    run(app)
    app.text_input(key="out_view_name").set_value("council briefing")
    app.button[[b.label for b in app.button].index("Save view")].click()
    run(app)
    assert any("Saved as" in s.value for s in app.success), [s.value for s in app.success]
    assert any("ix=mld" in c.value for c in app.code), [c.value for c in app.code]

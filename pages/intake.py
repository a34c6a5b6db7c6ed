"""Intake: bring a panel and its boundaries in, check them, save them; take results out."""

import streamlit as st

from explorer import ui
from explorer.data.model import DataError
from explorer.ui import intake, intake_vintages

opened = ui.open_view()
view, panel = opened.view, opened.panel
st.title("Intake")

upload_tab, stored_tab, out_tab = st.tabs(
    ["Bring in a panel", "Saved datasets", "Take results out"]
)

with upload_tab:
    st.markdown(
        "A **panel** has one row per district, year and income group (or per household, or "
        "one mean per district), or is a table as a statistics office publishes it (years "
        "across the columns, notes above and below). CSV, Excel or Parquet. **Boundaries** "
        "are optional: GeoJSON, GeoPackage, a Shapefile (zipped, or its parts together) or "
        "GeoParquet. Your files are read in this "
        "browser session only; nobody else sees them until you save them to the workspace."
    )
    panel_file = st.file_uploader(
        "Panel file", type=["csv", "txt", "tsv", "xlsx", "parquet"], key="intake_panel"
    )
    boundary_files = st.file_uploader(
        "Boundary file (optional): one file, or the parts of a Shapefile together "
        "(.shp, .shx, .dbf, .prj, .cpg)",
        type=["geojson", "json", "gpkg", "zip", "parquet", "shp", "shx", "dbf", "prj", "cpg"],
        accept_multiple_files=True,
        key="intake_boundaries",
    )
    population_file = st.file_uploader(
        "Populations (optional): a table of district, year and population",
        type=["csv", "txt", "tsv", "xlsx"],
        key="intake_population",
    )
    changes = intake_vintages.boundary_changes(boundary_files)
    if panel_file is not None:
        options = intake.reading_options(panel_file, boundary_files, population_file)
        if st.button("Read and check", type="primary", key="intake_read"):
            try:
                loaded = intake.read_upload(
                    panel_file, boundary_files, options, population_file, changes
                )
            except DataError as error:
                ui.problems(error, heading="The files could not be used")
            else:
                dataset_id = ui.add_upload(loaded)
                st.session_state["intake_last"] = dataset_id
                ui.update(dataset=dataset_id)
                st.rerun()
    last = st.session_state.get("intake_last")
    if last and last in ui.uploads():
        intake.summary(ui.uploads()[last], last)

with stored_tab:
    intake.stored_datasets()

with out_tab:
    intake.results_out(opened)

"""Intake: uploads are checked, shown, kept to their session, and saved on request."""

from __future__ import annotations

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
    other = AppTest.from_file(str(APP), default_timeout=120)
    other.query_params["d"] = saved
    run(other)
    assert view(other).dataset == saved
    assert "panel (saved)" in other.selectbox(key="ctl_dataset").options


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

"""Stored datasets of one name are told apart in the list, and each entry opens its own."""

from __future__ import annotations

import dataclasses

import pandas as pd
from app_helpers import APP, ROOT, page, run, tables, view
from streamlit.testing.v1 import AppTest

DECILES = ROOT / "demo_data" / "deciles.csv"
#: Districts per county in the demo province (demo_data/README.md).
COUNTIES = {"Brennhollow": 7, "Tanvery": 5, "Ferrowdown": 8}


def _districts(county: str) -> set[str]:
    frame = pd.read_csv(DECILES)
    return set(frame.loc[frame["county"] == county, "region"])


def _save_three_of_one_name(tmp_path) -> dict[str, str]:
    from explorer import data as readers
    from explorer.data.workspace import Workspace

    frame = pd.read_csv(DECILES)
    saved = {}
    for county in COUNTIES:
        path = tmp_path / f"{county}.csv"
        frame[frame["county"] == county].to_csv(path, index=False)
        panel = dataclasses.replace(readers.load_panel(path), name="deciles")
        options = {"kind": None, "column_map": None, "boundary_id": None, "crs": None}
        saved[county] = Workspace(tmp_path / "workspace").add(panel, [path], options)
    return saved


def test_each_of_three_same_named_datasets_opens_its_own_data(app, tmp_path):
    saved = _save_three_of_one_name(tmp_path)
    run(app)
    app.switch_page(page("atlas"))
    run(app)
    box = app.selectbox(key="ctl_dataset")
    entries = [e for e in box.options if e.startswith("deciles · ")]
    assert len(entries) == 3 and len(set(entries)) == 3, entries
    for county, ident in saved.items():
        assert any(ident[:6] in e for e in entries)
        app.selectbox(key="ctl_dataset").set_value(ident)
        run(app)
        assert view(app).dataset == ident
        (ranking,) = [t for t in tables(app) if "Id" in t.columns]
        assert set(ranking["Id"]) == _districts(county)
        assert len(ranking) == COUNTIES[county]
    # and a link to one of them opens that one in a new session
    other = AppTest.from_file(str(APP), default_timeout=120)
    other.query_params["d"] = saved["Tanvery"]
    run(other)
    other.switch_page(page("atlas"))
    run(other)
    (ranking,) = [t for t in tables(other) if "Id" in t.columns]
    assert set(ranking["Id"]) == _districts("Tanvery")


def test_ids_beginning_alike_are_shown_long_enough_to_differ():
    from explorer.ui.data import saved_labels

    listing = pd.DataFrame(
        {
            "id": ["abcdef0123456789", "abcdef01aa456789", "99cdef0123456789"],
            "name": "deciles",
            "kind": "brackets",
            "created": "2026-01-05T10:00:00",
        }
    )
    labels = saved_labels(listing)
    assert len(set(labels.values())) == 3
    assert labels["99cdef0123456789"].endswith(" · 99cdef0123")
    assert labels["abcdef0123456789"].endswith(" · abcdef0123")
    assert all(label.startswith("deciles · brackets · 2026-01-05 · ") for label in labels.values())


def test_renaming_and_deleting_one_of_three_same_named_datasets_touches_only_it(app, tmp_path):
    """The Intake page renames the chosen dataset, and deletes it only once confirmed; the
    other two of the same name stay, with their files."""
    from explorer.data.workspace import Workspace

    saved = _save_three_of_one_name(tmp_path)
    store = Workspace(tmp_path / "workspace")
    target, kept = saved["Tanvery"], [saved["Brennhollow"], saved["Ferrowdown"]]
    run(app)
    app.switch_page(page("intake"))
    run(app)
    app.selectbox(key="intake_open_choice").set_value(target)
    run(app)
    app.text_input(key="intake_rename_name").set_value("Tanvery deciles, 2008–2025")
    app.button(key="intake_rename").click()
    run(app)
    names = store.list().set_index("id")["name"]
    assert names[target] == "Tanvery deciles, 2008–2025"
    assert all(names[k] == "deciles" for k in kept)
    assert any("Renamed to" in s.value for s in app.success)
    # delete: refused until confirmed
    app.selectbox(key="intake_open_choice").set_value(target)
    run(app)
    assert app.button(key="intake_delete").disabled
    app.checkbox(key="intake_delete_confirm").check()
    run(app)
    app.button(key="intake_delete").click()
    run(app)
    left = set(store.list()["id"])
    assert target not in left and set(kept) <= left
    assert not (tmp_path / "workspace" / "datasets" / target).exists()
    for ident in kept:
        assert store.open(ident).regions is not None

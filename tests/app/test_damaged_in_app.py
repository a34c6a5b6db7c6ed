"""The app says in plain words why a stored dataset cannot be opened, and lists it.

The damage is made as in tests/data/test_damaged_datasets.py: a data table emptied with its
hash updated, a manifest cut short, a manifest of a newer format.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest
from app_helpers import dataframe, page, run, view

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "data"))
from test_damaged_datasets import CASES  # noqa: E402

from explorer import data as readers  # noqa: E402
from explorer.data.workspace import Workspace  # noqa: E402


def _damaged_workspace(tmp_path: Path, case: str) -> str:
    panel_path, boundary_path = readers.demo_paths("brackets")
    panel = readers.load_panel(panel_path, boundary_path)
    options = {"kind": None, "column_map": None, "boundary_id": None, "crs": None}
    root = tmp_path / "workspace"  # the app fixture's RIFT_DATA
    ident = Workspace(root).add(panel, [panel_path, boundary_path], options)
    CASES[case][0](root / "datasets" / ident)
    return ident


@pytest.mark.parametrize("case", list(CASES), ids=list(CASES))
def test_a_link_to_a_damaged_dataset_gives_its_reason_and_the_demo(app, tmp_path, case):
    words = CASES[case][1]
    ident = _damaged_workspace(tmp_path, case)
    app.query_params["d"] = ident
    run(app)
    notices = [w.value for w in app.warning]
    assert any(words in n.replace("\\", "") for n in notices), notices
    assert not [n for n in notices if "Error)" in n or "error(s)" in n], notices
    assert view(app).dataset == "demo"
    # the dataset stays in the list, and choosing it gives the reason again
    options = app.selectbox(key="ctl_dataset").options
    assert [o for o in options if ident[:6] in o], options
    app.selectbox(key="ctl_dataset").set_value(ident)
    run(app)
    assert any(words in w.value.replace("\\", "") for w in app.warning)
    assert not app.exception


@pytest.mark.parametrize(
    "case", [c for c in CASES if CASES[c][2]], ids=[c for c in CASES if CASES[c][2]]
)
def test_intake_lists_an_unlistable_dataset_with_its_reason(app, tmp_path, case):
    words = CASES[case][1]
    ident = _damaged_workspace(tmp_path, case)
    run(app)
    app.switch_page(page("intake"))
    run(app)
    damaged = dataframe(app, "intake_damaged")
    assert list(damaged["id"]) == [ident]
    assert words in damaged["reason"].iloc[0]

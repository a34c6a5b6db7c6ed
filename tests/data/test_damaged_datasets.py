"""A damaged stored dataset is listed as damaged with its reason, and opening it says why.

Three kinds of damage that the files' hashes alone do not explain: a data table emptied
with its hash updated to match, a manifest cut short, and a manifest of a newer format.
Each must give a plain reason in ``Workspace.damaged()`` or ``Workspace.open`` and in
``rift report`` (exit 2, no traceback), and never make the dataset vanish from the lists.
"""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest

from explorer import cli
from explorer import data as readers
from explorer.data.atomic import sha256_file
from explorer.data.model import DataError
from explorer.data.workspace import Workspace


def _emptied(folder: Path) -> None:
    data = pd.read_parquet(folder / "data.parquet").iloc[:0]
    data.to_parquet(folder / "data.parquet", index=False)
    manifest = json.loads((folder / "manifest.json").read_text())
    manifest["files"]["data.parquet"] = sha256_file(folder / "data.parquet")
    (folder / "manifest.json").write_text(json.dumps(manifest))


def _fewer_districts(folder: Path) -> None:
    data = pd.read_parquet(folder / "data.parquet")
    data[data["region"] != data["region"].iloc[0]].to_parquet(folder / "data.parquet", index=False)
    manifest = json.loads((folder / "manifest.json").read_text())
    manifest["files"]["data.parquet"] = sha256_file(folder / "data.parquet")
    (folder / "manifest.json").write_text(json.dumps(manifest))


def _cut_short(folder: Path) -> None:
    text = (folder / "manifest.json").read_text()
    (folder / "manifest.json").write_text(text[: len(text) // 2])


def _newer(folder: Path) -> None:
    manifest = json.loads((folder / "manifest.json").read_text())
    manifest["schema_version"] = 2
    (folder / "manifest.json").write_text(json.dumps(manifest))


#: damage -> (words of the reason, listed by damaged() rather than list())
CASES = {
    "emptied data, hash matching": (_emptied, "data.parquet holds no rows", False),
    "a district dropped, hash matching": (_fewer_districts, "not the 46 districts", False),
    "manifest cut short": (_cut_short, "manifest is cut short", True),
    "manifest of a newer format": (_newer, "stored by a newer version of Rift", True),
}


@pytest.fixture(scope="module")
def demo():
    panel_path, boundary_path = readers.demo_paths("brackets")
    return readers.load_panel(panel_path, boundary_path), [panel_path, boundary_path]


def _store(tmp_path: Path, demo) -> tuple[Path, str]:
    panel, sources = demo
    options = {"kind": None, "column_map": None, "boundary_id": None, "crs": None}
    root = tmp_path / "workspace"
    return root, Workspace(root).add(panel, sources, options)


@pytest.mark.parametrize("case", list(CASES), ids=list(CASES))
def test_a_damaged_dataset_is_listed_and_opening_it_says_why(tmp_path, demo, case):
    damage, words, unlisted = CASES[case]
    root, ident = _store(tmp_path, demo)
    damage(root / "datasets" / ident)
    ws = Workspace(root)
    listed, damaged = set(ws.list()["id"]), ws.damaged()
    # never gone from both lists
    assert (ident in listed) != unlisted
    assert (ident in set(damaged["id"])) == unlisted
    if unlisted:
        (reason,) = damaged.loc[damaged["id"] == ident, "reason"]
        assert words in reason
    with pytest.raises(DataError) as caught:
        ws.open(ident)
    problem = caught.value.problems[0]
    assert words in problem.message and problem.fix and problem.file.startswith(ident)


@pytest.mark.parametrize("case", list(CASES), ids=list(CASES))
def test_rift_report_of_a_damaged_dataset_exits_two_with_the_reason(tmp_path, demo, case, capsys):
    damage, words, _ = CASES[case]
    root, ident = _store(tmp_path, demo)
    damage(root / "datasets" / ident)
    view_file = tmp_path / "view.json"
    view_file.write_text(json.dumps({"rift_view": 1, "dataset": ident}))
    out = tmp_path / "report.html"
    code = cli.main(["report", str(view_file), "--data", str(root), "--out", str(out)])
    err = capsys.readouterr().err
    assert code == 2, err
    assert words in err and ident in err
    assert "Traceback" not in err and "not in the workspace" not in err
    assert not out.exists()


def test_a_healthy_workspace_lists_nothing_as_damaged(tmp_path, demo):
    root, ident = _store(tmp_path, demo)
    ws = Workspace(root)
    assert list(ws.list()["id"]) == [ident]
    assert ws.damaged().empty
    assert ws.open(ident).data["region"].nunique() == 46  # demo_data/README.md

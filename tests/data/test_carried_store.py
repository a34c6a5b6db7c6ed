"""A panel carried across boundary changes, stored in the workspace and opened again.

The invented province of Tarrowmere (tests/fixtures/vintages/make_vintages.py): a split, a
merge and a moved border in 2011. Outside references: ``explorer.data.model.fingerprint``
recomputed from the reopened tables (the panel's content hash) and pandas' frame equality
for the record; that a stored dataset must reopen as it was stored is common practice.
The carried 2009 figures are checked against the weighted means written out by hand
(a population-weighted mean of the pieces, common practice for areal interpolation of
means; Goodchild & Lam 1980, "Areal interpolation", Geo-Processing 1: 297-312).
"""

from __future__ import annotations

import importlib.util
import json
from pathlib import Path

import pandas as pd
import pytest

from explorer import cli
from explorer.data.carrying import carried_years, carrying_of
from explorer.data.model import DataError, fingerprint
from explorer.data.workspace import Workspace

FIXTURES = Path(__file__).resolve().parents[1] / "fixtures" / "vintages"


def _make():
    spec = importlib.util.spec_from_file_location("make_vintages", FIXTURES / "make_vintages.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def saved(tmp_path_factory):
    folder = tmp_path_factory.mktemp("tarrowmere")
    paths = _make().write(folder / "in")
    root = folder / "ws"
    argv = [
        "check",
        str(paths["panel"]),
        "--boundaries",
        f"{paths['old']}@2001",
        "--boundaries",
        f"{paths['new']}@2011",
        "--changes",
        str(paths["changes"]),
        "--save",
        "--data",
        str(root),
    ]
    assert cli.main(argv) == 0
    # the same panel as `rift check` builds it, to compare with what is reopened
    args = cli.build_parser().parse_args(argv)
    panel = cli._load(args)
    ws = Workspace(root)
    (ident,) = ws.list()["id"]
    return panel, ws, ident, paths


def test_a_carried_panel_reopens_with_the_same_fingerprint_and_record(saved):
    panel, ws, ident, _ = saved
    opened = ws.open(ident)
    assert opened.fingerprint == panel.fingerprint
    # the fingerprint recomputed from the reopened tables agrees with the stored one
    assert fingerprint(opened.kind, opened.data, opened.hierarchy, opened.boundaries) == (
        panel.fingerprint
    )
    before, after = carrying_of(panel), carrying_of(opened)
    assert after is not None and after.to_vintage == 2011
    pd.testing.assert_frame_equal(after.record, before.record)
    assert set(opened.regions) == {"Ardley North", "Ardley South", "Bexvale", "Dunholt", "Eskwith"}


def test_the_record_says_how_each_district_year_was_carried(saved):
    _, ws, ident, _ = saved
    record = carrying_of(ws.open(ident)).record.set_index(["region", "year"])["how"]
    assert record[("Bexvale", 2009)] == "merged from Bexmoor, Corvain"
    assert record[("Ardley North", 2009)] == "split from Ardley (weight 0.55)"
    assert record[("Eskwith", 2009)].startswith("rebuilt from ")
    assert record[("Bexvale", 2012)] == "as published"
    carried = carried_years(ws.open(ident))
    # every pre-change year of every new district is carried; none after the change
    assert set(carried["year"]) == set(range(2005, 2011))
    assert len(carried) == 5 * 6


def test_the_carried_means_are_the_weighted_means_of_the_pieces(saved):
    _, ws, ident, _ = saved
    make = _make()
    data = ws.open(ident).data.set_index(["region", "year"])
    # as written in the panel file: means to 4 decimals, populations to 1
    (m_b, p_b), (m_c, p_c) = (
        (round(m, 4), round(p, 1))
        for m, p in (make.old_district("Bexmoor", 2009), make.old_district("Corvain", 2009))
    )
    assert data.loc[("Bexvale", 2009), "population"] == pytest.approx(p_b + p_c, rel=1e-6)
    expected = (m_b * p_b + m_c * p_c) / (p_b + p_c)
    assert data.loc[("Bexvale", 2009), "mean_income"] == pytest.approx(expected, rel=1e-6)


def test_the_manifest_names_the_vintages_and_the_change_table_with_their_sizes(saved):
    _, ws, ident, paths = saved
    manifest = json.loads((ws.datasets_dir / ident / "manifest.json").read_text())
    entry = manifest["carrying"]
    assert entry["to_vintage"] == 2011
    assert [(v["file"], v["year"]) for v in entry["vintages"]] == [
        (paths["old"].name, 2001),
        (paths["new"].name, 2011),
    ]
    assert entry["vintages"][1]["bytes"] == paths["new"].stat().st_size
    assert entry["changes"] == {
        "weights": "table",
        "file": paths["changes"].name,
        "bytes": paths["changes"].stat().st_size,
    }
    assert "carried.parquet" in manifest["files"]


def test_a_missing_record_makes_the_dataset_damaged_not_silently_plain(saved, tmp_path):
    _, ws, ident, _ = saved
    import shutil

    copy = Workspace(tmp_path / "ws")
    shutil.copytree(ws.datasets_dir / ident, copy.datasets_dir / ident)
    manifest_path = copy.datasets_dir / ident / "manifest.json"
    manifest = json.loads(manifest_path.read_text())
    del manifest["files"]["carried.parquet"]
    manifest_path.write_text(json.dumps(manifest))
    with pytest.raises(DataError, match="carried.parquet is missing"):
        copy.open(ident)

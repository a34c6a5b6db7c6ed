"""Tests of explorer.data.workspace: datasets and views on disk.

Outside references: ``explorer.data.model.fingerprint`` (the panel's own content hash) and
shapely's exact geometry equality for the round trip; Python's ``hashlib`` for "inputs
untouched"; ``os.path.commonpath`` for "stays inside the root". That a content-hashed
store is idempotent and that user names must not reach the file system unfiltered is
common practice.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
import subprocess
import sys
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from explorer.data.model import DataError, Panel, fingerprint
from explorer.data.validate import validate
from explorer.data.workspace import Workspace, dataset_id, safe_name

HOSTILE_NAMES = [
    "../../etc/passwd",
    "a/b",
    "C:\\x",
    "a\0b",
    "x" * 300,
    "/absolute/path",
    "..",
    ".",
    "CON",
    "nul.json",
    "COM1 .txt",
    " .hidden",
    "\\\\server\\share",
    "name\nwith\rcontrol\x7f",
    "ﾃﾞｨｽﾄﾘｸﾄ／..／up",  # fullwidth solidus: becomes "/" under NFKC
]


# ---------------------------------------------------------------------------------------
# sample panels (built through explorer.data.validate.validate, as readers do)


def _boundaries(regions: list[str]) -> gpd.GeoDataFrame:
    # An invented grid of square districts placed in open ocean (no real land).
    cells = [
        shapely.box(-150 + i * 0.1, -40, -150 + (i + 1) * 0.1, -39.9) for i in range(len(regions))
    ]
    return gpd.GeoDataFrame(
        {"region": regions, "name": [f"District {r}" for r in regions]},
        geometry=cells,
        crs="EPSG:4326",
    )


def sample_panels() -> list[Panel]:
    """One panel of each kind; the units panel has a district-year left out."""
    regions = ["N01", "N02", "N03", "N04"]
    county = {"N01": "Aster", "N02": "Aster", "N03": "Brill", "N04": "Brill"}
    years = [2019, 2020, 2021]

    means = pd.DataFrame(
        [
            (r, y, 20_000 + 1_000 * i + 500 * j)
            for i, r in enumerate(regions)
            for j, y in enumerate(years)
        ],
        columns=["region", "year", "mean_income"],
    )
    means["county"] = means["region"].map(county)

    shares = np.array([0.06, 0.11, 0.16, 0.23, 0.44])
    rows = []
    for i, r in enumerate(regions):
        for y in years:
            for s in shares:
                rows.append((r, y, 0.2, s, 1_000 * (i + 1), 18_000.0 + i))
    brackets = pd.DataFrame(
        rows,
        columns=["region", "year", "pop_share", "income_share", "population", "mean_income"],
    )
    brackets["county"] = brackets["region"].map(county)

    rng = np.random.default_rng(7)
    units = pd.DataFrame(
        {
            "region": np.repeat(regions, 30),
            "year": np.tile(np.repeat([2020, 2021], 15), len(regions)),
            "income": rng.lognormal(10, 0.7, 30 * len(regions)).round(2),
            "weight": rng.uniform(0.5, 2.0, 30 * len(regions)).round(3),
        }
    )
    units.loc[3, "weight"] = -1.0  # N01 2020 breaks a value rule: left out, not fatal

    return [
        validate(means, file="district_means.csv", boundaries=_boundaries(regions)),
        validate(brackets, file="quintile_shares.csv", boundaries=_boundaries(regions)),
        validate(units, file="survey_units.csv"),
    ]


@pytest.fixture(scope="module")
def panels() -> list[Panel]:
    return sample_panels()


def assert_same_panel(got: Panel, want: Panel) -> None:
    """Equal content, checked field by field and by the panel's own fingerprint."""
    assert got.kind == want.kind
    assert got.levels == want.levels
    assert got.name == want.name
    assert got.income_concept == want.income_concept
    assert got.warnings == want.warnings
    assert got.fingerprint == want.fingerprint
    pd.testing.assert_frame_equal(got.data, want.data.reset_index(drop=True))
    pd.testing.assert_frame_equal(got.hierarchy, want.hierarchy.reset_index(drop=True))
    pd.testing.assert_frame_equal(
        got.excluded.reset_index(drop=True), want.excluded.reset_index(drop=True)
    )
    if want.boundaries is None:
        assert got.boundaries is None
    else:
        assert got.boundaries.crs == want.boundaries.crs
        assert list(got.boundaries.columns) == list(want.boundaries.columns)
        # shapely's exact equality (same coordinates, same order) is the outside check
        assert shapely.equals_exact(
            got.boundaries.geometry.to_numpy(), want.boundaries.geometry.to_numpy(), 0.0
        ).all()
        attrs = [c for c in want.boundaries.columns if c != "geometry"]
        pd.testing.assert_frame_equal(
            pd.DataFrame(got.boundaries[attrs]), pd.DataFrame(want.boundaries[attrs])
        )
    # The stored tables hash to the fingerprint the panel module computes from content.
    assert fingerprint(got.kind, got.data, got.hierarchy, got.boundaries) == want.fingerprint


def _snapshot(folder: Path) -> dict[str, tuple[int, int, str]]:
    """Every file under ``folder`` with its size, mtime and sha256."""
    out = {}
    for path in sorted(folder.rglob("*")):
        if path.is_file():
            stat = path.stat()
            digest = hashlib.sha256(path.read_bytes()).hexdigest()
            out[str(path.relative_to(folder))] = (stat.st_size, stat.st_mtime_ns, digest)
    return out


def _inside(path: Path, root: Path) -> bool:
    path, root = Path(os.path.realpath(path)), Path(os.path.realpath(root))
    return os.path.commonpath([path, root]) == str(root)


# ---------------------------------------------------------------------------------------
# round trip and idempotence


@pytest.mark.parametrize("which", [0, 1, 2], ids=["means", "brackets", "units"])
def test_opened_dataset_equals_the_panel_that_was_added(tmp_path, panels, which):
    ws = Workspace(tmp_path / "ws")
    panel = panels[which]
    ident = ws.add(panel, [("input.csv", b"rows")], {"kind": panel.kind})
    assert_same_panel(ws.open(ident), panel)
    # and from a fresh Workspace object, as another process would see it
    assert_same_panel(Workspace(tmp_path / "ws").open(ident), panel)


def test_units_panel_keeps_its_left_out_district_years(tmp_path, panels):
    units = panels[2]
    assert len(units.excluded) == 1  # precondition: validate left N01 2020 out
    ws = Workspace(tmp_path)
    back = ws.open(ws.add(units, [("u.csv", b"u")], {}))
    assert back.excluded[["region", "year"]].values.tolist() == [["N01", 2020]]


def test_adding_the_same_files_twice_returns_the_same_id_and_writes_nothing(tmp_path, panels):
    root = tmp_path / "ws"
    source = tmp_path / "shares.csv"
    source.write_bytes(b"region,year,mean_income\n")
    ws = Workspace(root)
    first = ws.add(panels[0], [source], {"kind": "means", "sheet": None})
    before = _snapshot(root)
    # same bytes given as an upload under another name: same content, same id
    again = ws.add(panels[0], [("renamed.csv", source.read_bytes())], {"kind": "means"})
    assert again == first == dataset_id([source], {"kind": "means"})
    assert _snapshot(root) == before
    assert len(ws.list()) == 1


@pytest.mark.parametrize(
    "options",
    [
        {"kind": "units"},
        {"kind": "means", "columns": {"region": "DistrictCode"}},
        {"kind": "means", "crs": "EPSG:3035"},
        {"kind": "means", "layer": "districts"},
        {"kind": "means", "boundary_id": "code"},
        {"kind": "means", "sheet": "2021"},
    ],
)
def test_other_read_options_give_another_dataset_id(tmp_path, options):
    base = dataset_id([("a.csv", b"x")], {"kind": "means"})
    assert dataset_id([("a.csv", b"x")], options) != base


def test_other_bytes_or_file_order_give_another_dataset_id():
    one, two = ("a.csv", b"x"), ("b.geojson", b"{}")
    assert dataset_id([one, two]) != dataset_id([two, one])
    assert dataset_id([("a.csv", b"x ")]) != dataset_id([one])


def test_panels_added_without_sources_get_ids_of_their_own(tmp_path, panels):
    """With nothing to hash, two different panels must not collapse into one dataset."""
    ws = Workspace(tmp_path)
    ids = {ws.add(p, [], {}) for p in panels}
    assert len(ids) == len(panels)
    assert ws.add(panels[0], [], {}) in ids


def test_inputs_are_byte_for_byte_unchanged_after_add_open_and_remove(tmp_path, panels):
    inputs = tmp_path / "inputs"
    inputs.mkdir()
    table, bounds = inputs / "district_means.csv", inputs / "districts.geojson"
    table.write_bytes(b"region,year,mean_income\nN01,2019,20000\n")
    bounds.write_bytes(b'{"type": "FeatureCollection", "features": []}')
    table.chmod(0o444)  # a read-only input must be enough
    before = _snapshot(inputs)
    ws = Workspace(tmp_path / "ws")
    ident = ws.add(panels[0], [table, bounds], {"kind": "means"})
    ws.open(ident)
    ws.remove(ident)
    assert _snapshot(inputs) == before


def test_list_names_each_dataset_with_its_size_and_years(tmp_path, panels):
    ws = Workspace(tmp_path)
    ids = [ws.add(p, [(f"{i}.csv", bytes([i]))], {}) for i, p in enumerate(panels)]
    listed = ws.list().set_index("id")
    assert list(ws.list().columns) == ["id", "name", "kind", "districts", "years", "created"]
    assert set(listed.index) == set(ids)
    for ident, panel in zip(ids, panels, strict=True):
        assert listed.loc[ident, "kind"] == panel.kind
        assert listed.loc[ident, "districts"] == len(panel.regions)
        assert listed.loc[ident, "years"] == f"{min(panel.years)}–{max(panel.years)}"


def test_removed_dataset_is_gone_from_the_list_and_cannot_be_opened(tmp_path, panels):
    ws = Workspace(tmp_path)
    keep = ws.add(panels[0], [("a.csv", b"a")], {})
    gone = ws.add(panels[1], [("b.csv", b"b")], {})
    ws.remove(gone)
    assert list(ws.list()["id"]) == [keep]
    with pytest.raises(DataError, match="no dataset"):
        ws.open(gone)
    with pytest.raises(DataError, match="no dataset"):
        ws.remove(gone)
    assert not (tmp_path / "datasets" / gone).exists()


def test_list_sees_datasets_added_by_another_workspace_object(tmp_path, panels):
    """The index is only a cache: a second writer's dataset shows up (common practice)."""
    one, two = Workspace(tmp_path), Workspace(tmp_path)
    one.list()
    ident = two.add(panels[0], [("a.csv", b"a")], {})
    assert list(one.list()["id"]) == [ident]


def test_data_directory_comes_from_argument_then_environment_then_platform(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "xdg"))
    monkeypatch.delenv("RIFT_DATA", raising=False)
    import platformdirs

    assert Workspace().root == Path(platformdirs.user_data_dir("rift")).absolute()
    monkeypatch.setenv("RIFT_DATA", str(tmp_path / "env"))
    assert Workspace().root == tmp_path / "env"
    assert Workspace(tmp_path / "arg").root == tmp_path / "arg"


def test_unwritable_data_directory_is_a_data_error(tmp_path):
    blocker = tmp_path / "file"
    blocker.write_text("not a directory")
    with pytest.raises(DataError, match="RIFT_DATA"):
        Workspace(blocker / "ws")


# ---------------------------------------------------------------------------------------
# hostile names


@pytest.mark.parametrize("name", HOSTILE_NAMES)
def test_hostile_view_names_stay_inside_the_views_folder(tmp_path, name):
    root = tmp_path / "ws"
    ws = Workspace(root)
    outside_before = sorted(p for p in tmp_path.rglob("*") if not _inside(p, root))
    path = ws.save_view(name, '{"page": "map"}')
    assert _inside(path, root / "views")
    assert path.parent == root / "views"
    assert ws.load_view(name) == '{"page": "map"}'
    assert len(path.name) <= 85 and "\0" not in path.name
    assert sorted(p for p in tmp_path.rglob("*") if not _inside(p, root)) == outside_before


def test_hostile_view_names_never_share_a_file(tmp_path):
    ws = Workspace(tmp_path)
    paths = {ws.save_view(name, name) for name in HOSTILE_NAMES + ["a-b", "a b", "con"]}
    assert len(paths) == len(HOSTILE_NAMES) + 3
    assert all(ws.load_view(name) == name for name in HOSTILE_NAMES)


@given(st.text(min_size=1, max_size=400))
@settings(max_examples=300, deadline=None)
def test_safe_name_is_a_plain_bounded_fixed_point(name):
    if not name.strip():
        return
    safe = safe_name(name)
    assert safe and len(safe) <= 80
    assert not set(safe) & set("/\\\0:") and safe not in (".", "..")
    assert not safe.startswith((".", " ")) and not safe.endswith((".", " "))
    assert safe_name(safe) == safe
    assert Path(safe).name == safe and not Path(safe).is_absolute()


@pytest.mark.parametrize("name", ["", "   ", "\t"])
def test_blank_view_name_is_a_data_error(tmp_path, name):
    with pytest.raises(DataError, match="empty"):
        Workspace(tmp_path).save_view(name, "{}")


def test_hostile_dataset_and_upload_names_are_kept_as_text_only(tmp_path, panels):
    root = tmp_path / "ws"
    ws = Workspace(root)
    panel = panels[0]
    hostile = dataclasses.replace(panel, name="../../etc/passwd")
    ident = ws.add(hostile, [("../../../evil.csv", b"x"), ("C:\\temp\\b.geojson", b"y")], {})
    files = [p for p in tmp_path.rglob("*") if p.is_file()]
    assert all(_inside(p, root) for p in files)
    assert not any("evil" in p.name or "passwd" in p.name for p in files)
    manifest = json.loads((root / "datasets" / ident / "manifest.json").read_text())
    assert [s["name"] for s in manifest["sources"]] == ["evil.csv", "b.geojson"]
    assert ws.list().loc[0, "name"] == "../../etc/passwd"


def test_names_with_unpaired_surrogates_are_stored_with_a_replacement_character(tmp_path, panels):
    """Names decoded with surrogateescape (common practice for undecodable POSIX file
    names) cannot be UTF-8 or Arrow text; they are kept with U+FFFD in their place."""
    ws = Workspace(tmp_path)
    odd = dataclasses.replace(panels[0], name="district\udc80s")
    ident = ws.add(odd, [("shares\udcff.csv", b"x")], {})
    assert ws.list().loc[0, "name"] == "district\ufffds"
    assert ws.open(ident).name == "district\ufffds"
    assert ws.save_view("q\udc80", "{}").parent == tmp_path / "views"


@pytest.mark.parametrize("ident", ["../../etc", "/tmp", "0123456789ABCDEF", "x" * 16, "", None])
def test_malformed_dataset_ids_are_a_data_error(tmp_path, ident):
    ws = Workspace(tmp_path)
    with pytest.raises(DataError, match="not a dataset id"):
        ws.open(ident)
    with pytest.raises(DataError, match="not a dataset id"):
        ws.remove(ident)


def test_missing_view_is_a_data_error(tmp_path):
    with pytest.raises(DataError, match="no saved view"):
        Workspace(tmp_path).load_view("never saved")


def test_saving_a_view_again_replaces_its_text(tmp_path):
    ws = Workspace(tmp_path)
    ws.save_view("q3", "old")
    ws.save_view("q3", "new")
    assert ws.load_view("q3") == "new" and ws.list_views() == ["q3"]


# ---------------------------------------------------------------------------------------
# damage


def _flip_byte(path: Path) -> None:
    raw = bytearray(path.read_bytes())
    raw[len(raw) // 2] ^= 0xFF
    path.write_bytes(bytes(raw))


def _rewrite_manifest(change):
    def damage(folder: Path) -> None:
        manifest = json.loads((folder / "manifest.json").read_text())
        change(manifest)
        (folder / "manifest.json").write_text(json.dumps(manifest))

    return damage


DAMAGE = {
    "manifest missing": lambda f: (f / "manifest.json").unlink(),
    "manifest not json": lambda f: (f / "manifest.json").write_text("{not json"),
    "manifest not utf8": lambda f: (f / "manifest.json").write_bytes(b"\xff\xfe\x00"),
    "manifest a list": lambda f: (f / "manifest.json").write_text("[]"),
    "manifest newer": _rewrite_manifest(lambda m: m.update(schema_version=99)),
    "manifest no kind": _rewrite_manifest(lambda m: m.pop("kind")),
    "manifest odd kind": _rewrite_manifest(lambda m: m.update(kind="poverty")),
    "manifest files a list": _rewrite_manifest(lambda m: m.update(files=[])),
    "manifest names outside file": _rewrite_manifest(
        lambda m: m["files"].update({"../../../etc/passwd": "0" * 64})
    ),
    "manifest bad warnings": _rewrite_manifest(lambda m: m.update(warnings=[{"x": 1}])),
    "data missing": lambda f: (f / "data.parquet").unlink(),
    "data truncated": lambda f: (f / "data.parquet").write_bytes(
        (f / "data.parquet").read_bytes()[:100]
    ),
    "data empty": lambda f: (f / "data.parquet").write_bytes(b""),
    "hierarchy byte flipped": lambda f: _flip_byte(f / "hierarchy.parquet"),
    "boundaries byte flipped": lambda f: _flip_byte(f / "boundaries.parquet"),
    "boundaries missing": lambda f: (f / "boundaries.parquet").unlink(),
    "excluded replaced by a directory": lambda f: (
        (f / "excluded.parquet").unlink(),
        (f / "excluded.parquet").mkdir(),
    ),
}


@pytest.mark.parametrize("damage", list(DAMAGE), ids=list(DAMAGE))
def test_damaged_dataset_opens_as_a_data_error_naming_the_part(tmp_path, panels, damage):
    ws = Workspace(tmp_path)
    ident = ws.add(panels[0], [("a.csv", b"a")], {})
    DAMAGE[damage](tmp_path / "datasets" / ident)
    with pytest.raises(DataError) as caught:
        Workspace(tmp_path).open(ident)
    problem = caught.value.problems[0]
    assert problem.file.startswith(ident) and problem.fix


def test_damaged_parquet_with_a_matching_hash_is_still_a_data_error(tmp_path, panels):
    """A file rewritten together with its manifest hash is caught by the reader."""
    ws = Workspace(tmp_path)
    ident = ws.add(panels[0], [("a.csv", b"a")], {})
    folder = tmp_path / "datasets" / ident
    (folder / "data.parquet").write_bytes(b"PAR1 not really parquet PAR1")
    manifest = json.loads((folder / "manifest.json").read_text())
    manifest["files"]["data.parquet"] = hashlib.sha256(
        (folder / "data.parquet").read_bytes()
    ).hexdigest()
    (folder / "manifest.json").write_text(json.dumps(manifest))
    with pytest.raises(DataError, match="data.parquet cannot be read"):
        ws.open(ident)


def test_wrong_columns_with_a_matching_hash_are_a_data_error(tmp_path, panels):
    ws = Workspace(tmp_path)
    ident = ws.add(panels[0], [("a.csv", b"a")], {})
    folder = tmp_path / "datasets" / ident
    pd.DataFrame({"region": ["N01"], "year": ["2020"]}).to_parquet(folder / "data.parquet")
    manifest = json.loads((folder / "manifest.json").read_text())
    manifest["files"]["data.parquet"] = hashlib.sha256(
        (folder / "data.parquet").read_bytes()
    ).hexdigest()
    (folder / "manifest.json").write_text(json.dumps(manifest))
    with pytest.raises(DataError, match="lacks the columns mean_income"):
        ws.open(ident)


def test_adding_again_repairs_a_damaged_copy_under_the_same_id(tmp_path, panels):
    ws = Workspace(tmp_path)
    ident = ws.add(panels[0], [("a.csv", b"a")], {})
    (tmp_path / "datasets" / ident / "manifest.json").unlink()
    assert ws.add(panels[0], [("a.csv", b"a")], {}) == ident
    assert_same_panel(ws.open(ident), panels[0])


def test_listing_skips_a_dataset_whose_manifest_is_unreadable(tmp_path, panels):
    ws = Workspace(tmp_path)
    good = ws.add(panels[0], [("a.csv", b"a")], {})
    bad = ws.add(panels[1], [("b.csv", b"b")], {})
    (tmp_path / "datasets" / bad / "manifest.json").write_text("{")
    assert list(Workspace(tmp_path).list()["id"]) == [good]


def test_index_file_damage_is_repaired_by_listing(tmp_path, panels):
    ws = Workspace(tmp_path)
    ident = ws.add(panels[0], [("a.csv", b"a")], {})
    (tmp_path / "index.json").write_text("garbage")
    assert list(ws.list()["id"]) == [ident]
    assert ident in json.loads((tmp_path / "index.json").read_text())["datasets"]


# ---------------------------------------------------------------------------------------
# leftovers of crashed writers


def _dead_pid() -> int:
    child = subprocess.Popen([sys.executable, "-c", "pass"])
    child.wait()
    return child.pid


def test_leftovers_of_dead_writers_are_cleaned_and_never_listed(tmp_path, panels):
    ws = Workspace(tmp_path)
    ident = ws.add(panels[0], [("a.csv", b"a")], {})
    dead = _dead_pid()
    stale_dir = tmp_path / "datasets" / f".partial-{dead}-abc"
    stale_dir.mkdir()
    (stale_dir / "data.parquet").write_bytes(b"half")
    stale_view = tmp_path / "views" / f".partial-{dead}-abc.json"
    stale_view.write_text("half a vi")
    trash = tmp_path / "datasets" / f".removing-{dead}-abc"
    trash.mkdir()
    live = tmp_path / "datasets" / f".partial-{os.getpid()}-live"
    live.mkdir()  # a writer of this very process is still busy: leave it alone

    assert list(ws.list()["id"]) == [ident] and ws.list_views() == []
    Workspace(tmp_path)
    assert not stale_dir.exists() and not stale_view.exists() and not trash.exists()
    assert live.exists()


def test_three_datasets_of_one_name_stay_apart_by_id(tmp_path, panels):
    """Same-named datasets are listed separately and each id opens its own data."""
    ws = Workspace(tmp_path / "ws")
    same = [dataclasses.replace(p, name="deciles") for p in panels[:3]]
    ids = [ws.add(p, [(f"in{i}.csv", f"rows {i}".encode())], {}) for i, p in enumerate(same)]
    listing = ws.list()
    assert len(set(ids)) == 3 and set(listing["id"]) == set(ids)
    assert set(listing["name"]) == {"deciles"}
    for ident, panel in zip(ids, same, strict=True):
        assert_same_panel(ws.open(ident), panel)

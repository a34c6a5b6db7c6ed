"""The bad-input corpus (tests/fixtures/bad, written by make_corpus.py): every file yields a
DataError whose message names its problem, never another exception, and reading writes
nothing anywhere and leaves the inputs as they were."""

from __future__ import annotations

import hashlib
import importlib.util
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from explorer.data import boundaries, tables
from explorer.data.load import load_panel
from explorer.data.model import DataError

BAD = Path(__file__).resolve().parents[1] / "fixtures" / "bad"

# file -> a phrase its DataError must contain (tables are read as panels; .geojson and
# .zip files as the boundaries of a small valid panel with districts K01 and K02)
CORPUS = {
    "empty.csv": "the file is empty",
    "whitespace_only.csv": "the file is empty",
    "header_only.csv": "header but no data rows",
    "binary_junk.csv": "holds binary data",
    "duplicated_columns.csv": "duplicated column name: 'income'",
    "shares_above_one.csv": "sum to 1.3",
    "nan_and_inf.csv": "the value inf is not a finite number",
    "negative_incomes.csv": "negative incomes on 1 line(s): line 2 (-250.0)",
    "text_in_numbers.csv": "text 'about 300' where a number is expected",
    "year_as_text.csv": "the year is text, not a number, on 2 line(s): line 2 ('FY2020')",
    "year_fraction.csv": "the year is a fraction",
    "missing_region_column.csv": "required column 'region' is missing",
    "unknown_kind.csv": "cannot tell what kind of panel",
    "ragged_rows.csv": "line 3 has 5 fields",
    "latin1_negative_share.csv": "district Côte-Ombre, year 2020 left out: the value -0.1 is negative",
    "non_convex.csv": "bracket 3's mean income",
    "duplicate_region_years.csv": "appears on 2 lines (2, 3)",
    "population_varies.csv": "population differs",
    "share_columns_gap.csv": "missing: share_3",
    "csv_named_xlsx.xlsx": "not an Excel .xlsx workbook: its content is text",
    "zip_named_xlsx.xlsx": "Excel workbook cannot be read",
    "old_excel.xls": "old-style .xls",
    "wrong_columns.parquet": "required column 'year' is missing",
    "text_named_parquet.parquet": "not a Parquet file",
    "truncated.parquet": "Parquet file cannot be read",
    "not_json.geojson": "this is not JSON",
    "truncated.geojson": "GeoJSON file cannot be read",
    "points.geojson": "Point geometries",
    "lines.geojson": "LineString geometries",
    "no_features.geojson": "has no geometries",
    "ids_do_not_match.geojson": "none of the panel's 2 district ids appear",
    "not_a_zip.zip": "not a readable zip archive",
    "no_shapefile.zip": "holds no Shapefile",
    "shapefile_without_dbf.zip": "lacks its .dbf file",
    "entry_escapes_folder.zip": "'../districts.shp' escapes the archive's folder",
    "absolute_entry.zip": "'/tmp/districts.shp' escapes the archive's folder",
    "declares_huge_size.zip": "declares 4.0 GB uncompressed",
    "projected_without_crs.zip": "declares no CRS",
}


def load(path: Path, tmp: Path):
    if path.suffix in (".geojson", ".zip"):
        panel = tmp / "panel.csv"
        panel.write_text("region,year,mean_income\nK01,2020,300\nK02,2020,280\n")
        return load_panel(panel, path)
    return load_panel(path)


def digest(folder: Path) -> dict[str, str]:
    return {
        p.name: hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(folder.iterdir())
        if p.is_file()
    }


def test_corpus_has_at_least_25_files_and_each_is_in_the_table():
    shipped = {p.name for p in BAD.iterdir() if p.is_file() and p.suffix != ".py"}
    assert len(shipped) >= 25
    assert shipped == set(CORPUS)


def test_corpus_script_reproduces_the_shipped_files_byte_for_byte(tmp_path):
    spec = importlib.util.spec_from_file_location("make_corpus", BAD / "make_corpus.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    module.make(tmp_path)
    assert digest(tmp_path) == {k: v for k, v in digest(BAD).items() if k != "make_corpus.py"}


@pytest.mark.parametrize("name", sorted(CORPUS))
def test_bad_file_gives_a_data_error_naming_its_problem_and_writes_nothing(
    name, tmp_path, snapshot_dir
):
    workspace = tmp_path / "workspace"
    workspace.mkdir()
    (workspace / "keep.txt").write_text("untouched")
    scratch = tmp_path / "scratch"
    scratch.mkdir()
    before_inputs = digest(BAD)
    before_workspace = snapshot_dir(workspace)
    try:
        load(BAD / name, scratch)
    except DataError as err:
        assert CORPUS[name] in str(err), str(err)
        assert err.problems and all(p.message for p in err.problems)
        assert any(p.severity == "error" for p in err.problems)
    except Exception as other:  # noqa: BLE001 - the point is that nothing else escapes
        pytest.fail(f"{name}: {type(other).__name__} instead of DataError: {other}")
    else:
        pytest.fail(f"{name} was accepted")
    assert digest(BAD) == before_inputs
    assert snapshot_dir(workspace) == before_workspace
    assert {p.name for p in scratch.iterdir()} <= {"panel.csv"}  # nothing extracted beside it


@settings(
    max_examples=120, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    blob=st.binary(max_size=300),
    suffix=st.sampled_from([".csv", ".xlsx", ".parquet", ".geojson", ".zip", ".gpkg"]),
)
def test_arbitrary_bytes_under_any_name_give_a_frame_or_a_data_error(tmp_path, blob, suffix):
    """Fuzzing the readers (hypothesis): random bytes never escape as another exception."""
    path = tmp_path / f"fuzz{suffix}"
    path.write_bytes(blob)
    try:
        if suffix in (".geojson", ".zip", ".gpkg"):
            boundaries.read_boundaries(path)
        else:
            tables.read_table(path)
    except DataError:
        pass


@settings(
    max_examples=80, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    lines=st.lists(
        st.lists(
            st.sampled_from(
                ["K01", "2020", "0,5", "0.5", "-1", "", "x", "nan", "inf", '"a;b"', "1e400"]
            ),
            min_size=1,
            max_size=5,
        ),
        max_size=6,
    ),
    header=st.lists(
        st.sampled_from(
            [
                "region",
                "year",
                "income",
                "weight",
                "mean_income",
                "pop_share",
                "income_share",
                "share_1",
                "share_2",
            ]
        ),
        min_size=1,
        max_size=5,
    ),
    sep=st.sampled_from([",", ";", "\t"]),
)
def test_arbitrary_csv_text_gives_a_panel_or_a_data_error(tmp_path, lines, header, sep):
    """Fuzzing read + validate with table-like text (hypothesis)."""
    path = tmp_path / "fuzz.csv"
    path.write_text("\n".join([sep.join(header)] + [sep.join(r) for r in lines]) + "\n")
    try:
        panel = load_panel(path)
    except DataError:
        return
    assert len(panel.data) > 0

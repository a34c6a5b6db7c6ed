"""The ``rift`` command line: exit codes, outputs, and that inputs are never overwritten."""

from __future__ import annotations

import hashlib
import io
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from explorer import cli, serving
from explorer import data as readers

BAD = Path(__file__).parent / "fixtures" / "bad"


def run(capsys, *argv: str) -> tuple[int, str, str]:
    code = cli.main(list(argv))
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def test_check_demo_reports_the_province_and_exits_zero(capsys):
    code, out, _ = run(capsys, "check", "demo")
    assert code == 0
    panel = readers.demo_panel()
    assert f"districts: {len(panel.regions)}" in out
    assert "higher levels: county" in out
    assert f"boundaries: {len(panel.regions)} districts matched" in out
    assert out.strip().endswith("valid")


def test_check_bad_file_exits_two_and_names_the_problem(capsys):
    code, _, err = run(capsys, "check", str(BAD / "shares_above_one.csv"))
    assert code == 2
    assert "shares_above_one.csv" in err
    assert "nothing was written" in err


def test_check_reads_a_column_map(tmp_path, capsys):
    demo = pd.read_csv(readers.demo_paths("means")[0])
    renamed = demo.rename(columns={"region": "DistrictCode", "year": "Yr"})
    path = tmp_path / "renamed.csv"
    renamed.to_csv(path, index=False)
    code, out, _ = run(capsys, "check", str(path), "--map", "region=DistrictCode,year=Yr")
    assert code == 0
    assert "kind: means" in out


def test_compute_writes_the_tidy_table_with_bounds(tmp_path, capsys):
    out = tmp_path / "indices.csv"
    code, _, _ = run(
        capsys,
        "compute",
        "demo",
        "--method",
        "auto,linear",
        "--indices",
        "gini,theil_t",
        "--out",
        str(out),
    )
    assert code == 0
    table = pd.read_csv(out, keep_default_na=False, na_values=[""])
    assert list(table.columns[:7]) == [
        "region",
        "year",
        "index",
        "value",
        "lower",
        "upper",
        "method",
    ]
    assert set(table["method"]) == {"auto", "linear"}
    gini = table[(table["index"] == "gini") & (table["method"] == "auto")]
    # Gastwirth (1972), "The estimation of the Lorenz curve and Gini index", Review of
    # Economics and Statistics 54: 306-316: every Lorenz-consistent curve's Gini lies
    # between the bounds.
    assert (gini["lower"] <= gini["value"] + 1e-12).all()
    assert (gini["value"] <= gini["upper"] + 1e-12).all()
    # The linear method's value is the lower bound itself.
    linear = table[(table["index"] == "gini") & (table["method"] == "linear")]
    assert np.allclose(linear["value"], linear["lower"])


def test_compute_to_stdout_parses_as_csv(capsys):
    code, out, _ = run(capsys, "compute", "demo", "--kind", "means", "--indices", "gini")
    assert code == 0
    table = pd.read_csv(io.StringIO(out))
    assert list(table.columns[:4]) == ["region", "year", "index", "value"]
    assert len(table) > 1
    assert pd.api.types.is_float_dtype(table["value"])


def test_compute_refuses_to_overwrite_its_input(tmp_path, capsys):
    source = readers.demo_paths("means")[0]
    copy = tmp_path / "means.csv"
    copy.write_bytes(source.read_bytes())
    before = hashlib.sha256(copy.read_bytes()).hexdigest()
    code, _, err = run(capsys, "compute", str(copy), "--out", str(copy))
    assert code == 2
    assert "inputs are never overwritten" in err
    assert hashlib.sha256(copy.read_bytes()).hexdigest() == before


def test_unknown_index_is_an_input_error_not_a_traceback(capsys):
    code, _, err = run(capsys, "compute", "demo", "--indices", "nonsense")
    assert code == 2
    assert "Traceback" not in err


def test_decompose_components_add_up_to_the_total(tmp_path, capsys):
    out = tmp_path / "parts.parquet"
    code, _, _ = run(
        capsys, "decompose", "demo", "--by", "county", "--index", "theil_t", "--out", str(out)
    )
    assert code == 0
    parts = pd.read_parquet(out)
    everyone = parts[parts["group"] == "(all)"]
    for year, rows in everyone.groupby("year"):
        total = rows.loc[rows["component"] == "total", "value"].iloc[0]
        others = rows.loc[rows["component"] != "total", "value"].sum()
        # Shorrocks (1980), "The class of additively decomposable inequality measures",
        # Econometrica 48: 613-625: the GE split is exact.
        assert others == pytest.approx(total, abs=1e-9), year


def test_decompose_change_needs_both_years(capsys):
    code, _, err = run(capsys, "decompose", "demo", "--from", "2010")
    assert code == 2
    assert "--from and --to" in err


def test_spatial_writes_one_row_per_district(tmp_path, capsys):
    out = tmp_path / "clusters.csv"
    code, _, err = run(
        capsys,
        "spatial",
        "demo",
        "--index",
        "mean_income",
        "--year",
        "2020",
        "--permutations",
        "99",
        "--out",
        str(out),
    )
    assert code == 0
    table = pd.read_csv(out)
    assert len(table) == len(readers.demo_panel().regions)
    assert set(table["cluster"]) <= {
        "high-high",
        "low-low",
        "high-low",
        "low-high",
        "not significant",
    }
    assert "moran_i:" in err


def test_report_of_a_saved_view_is_one_offline_file_with_the_views_figures(tmp_path, capsys):
    from explorer import views

    view = views.ViewState(
        year=2020, method="linear", districts=("CAL01",), year_from=2010, year_to=2024
    )
    view_file = tmp_path / "report-view.json"
    view_file.write_text(view.to_json(), encoding="utf-8")
    out = tmp_path / "report.html"
    code, _, err = run(capsys, "report", str(view_file), "--out", str(out))
    assert code == 0, err
    html = out.read_text(encoding="utf-8")
    assert readers.demo_panel().fingerprint in html
    assert "<script src=" not in html and "https://cdn" not in html
    # The straight-line Gini of CAL01 in 2020 by the trapezoid rule on the shipped shares
    # (common practice: G = 1 - sum (p_i - p_{i-1}) (L_i + L_{i-1})) appears in the ranking.
    deciles = pd.read_csv(readers.demo_paths("brackets")[0])
    row = deciles[(deciles["region"] == "CAL01") & (deciles["year"] == 2020)]
    shares = row[[f"share_{i}" for i in range(1, 11)]].to_numpy(dtype=float)[0]
    lorenz = np.concatenate([[0.0], np.cumsum(shares)])
    gini = 1.0 - np.sum(0.1 * (lorenz[1:] + lorenz[:-1]))
    assert f"{gini:.4f}" in html


def test_report_of_a_view_whose_dataset_is_missing_says_where_to_look(tmp_path, capsys):
    view_file = tmp_path / "view.json"
    view_file.write_text('{"rift_view": 1, "dataset": "d0000000000000000"}', encoding="utf-8")
    code, _, err = run(
        capsys,
        "report",
        str(view_file),
        "--out",
        str(tmp_path / "r.html"),
        "--data",
        str(tmp_path / "ws"),
    )
    assert code == 2
    assert "Traceback" not in err
    assert not (tmp_path / "r.html").exists()


def test_app_serves_this_machine_only_by_default_and_passes_the_data_folder(
    tmp_path, monkeypatch, capsys
):
    seen = {}

    def fake_run(command, env, cwd):
        seen.update(command=command, env=env, cwd=cwd)
        return 0

    monkeypatch.setattr(serving, "run_until_stopped", fake_run)
    code, _, err = run(capsys, "app", "--data", str(tmp_path), "--port", "8611")
    assert code == 0
    command = seen["command"]
    assert command[command.index("--server.address") + 1] == "localhost"
    assert command[command.index("--server.port") + 1] == "8611"
    assert command[command.index("run") + 1].endswith("app.py")
    assert seen["env"]["RIFT_DATA"] == str(tmp_path.resolve())
    # The settings travel on the command line, so they hold from any working directory
    # (an installed wheel has no .streamlit/config.toml beside it).
    for flag, value in (
        ("--browser.gatherUsageStats", "false"),
        ("--client.toolbarMode", "minimal"),
        ("--client.showErrorDetails", "none"),
        ("--server.maxUploadSize", "200"),
    ):
        assert command[command.index(flag) + 1] == value, flag
    assert "http://localhost:8611" in err
    # Only this machine's own names are answered (a rebinding name is refused).
    hosts = [command[i + 1] for i, part in enumerate(command) if part == "--server.allowedHosts"]
    assert set(hosts) == {"localhost", "127.0.0.1", "::1"}


def test_check_save_stores_the_dataset_once_and_leaves_the_inputs_alone(tmp_path, capsys):
    from explorer.data.workspace import Workspace

    panel_path, boundary_path = readers.demo_paths("means")
    before = hashlib.sha256(panel_path.read_bytes()).hexdigest()
    folder = tmp_path / "workspace"
    argv = (
        "check",
        str(panel_path),
        "--boundaries",
        str(boundary_path),
        "--save",
        "--data",
        str(folder),
    )
    code, out, _ = run(capsys, *argv)
    assert code == 0
    first = out.strip().splitlines()[-1]
    code, out, _ = run(capsys, *argv)
    assert out.strip().splitlines()[-1] == first  # same files, same id: stored once
    stored = Workspace(folder).list()
    assert len(stored) == 1
    reopened = Workspace(folder).open(stored["id"].iloc[0])
    assert reopened.fingerprint == readers.load_panel(panel_path, boundary_path).fingerprint
    assert hashlib.sha256(panel_path.read_bytes()).hexdigest() == before


def test_python_dash_m_explorer_is_the_same_command_line():
    import subprocess
    import sys

    done = subprocess.run(
        [sys.executable, "-m", "explorer", "check", "demo"],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip().endswith("valid")


# --------------------------------------------------------------------------- view files


@pytest.mark.parametrize(
    ("content", "what"),
    [
        (b'{"rift_view": 1, "year": ', "not valid JSON"),
        (b"[1, 2, 3]", "not a view file"),
        (b'{"year": 2020}', "not a view file"),
        (b'{"rift_view": 99}', "not a view file"),
        (b'{"rift_view": 1, "year": "\xff"}', "not UTF-8"),
        (b"", "not valid JSON"),
    ],
    ids=["truncated", "list", "no-version", "newer", "latin-1", "empty"],
)
def test_report_of_an_unreadable_view_file_exits_two_and_writes_nothing(
    tmp_path, capsys, content, what
):
    view_file = tmp_path / "view.json"
    view_file.write_bytes(content)
    out = tmp_path / "r.html"
    code, _, err = run(capsys, "report", str(view_file), "--out", str(out))
    assert code == 2, err
    assert what in err and "view.json" in err
    assert "Traceback" not in err
    assert not out.exists()  # never a report of the default view instead


def test_a_view_file_with_a_byte_order_mark_is_read(tmp_path, capsys):
    view_file = tmp_path / "view.json"
    view_file.write_bytes(
        b"\xef\xbb\xbf" + b'{"rift_view": 1, "year": 2020, "index": "nonsense", "zz": 1}'
    )
    out = tmp_path / "r.html"
    code, _, err = run(capsys, "report", str(view_file), "--out", str(out))
    assert code == 0, err
    assert out.exists()
    # Notices about a view file call it a view file, not a link.
    notes = [line for line in err.splitlines() if line.startswith("note:")]
    assert len(notes) == 2, err
    assert all("view" in line and "link" not in line for line in notes)


def test_an_oversized_view_file_is_refused_at_the_limit_without_reading_it(tmp_path, capsys):
    from explorer import views

    huge = tmp_path / "zeros.json"
    with huge.open("wb") as handle:  # sparse: 8 GB declared, nothing on disk
        handle.truncate(8 * 1024**3)
    opened = []
    real_open = Path.open

    def counting_open(self, *args, **kwargs):
        handle = real_open(self, *args, **kwargs)
        if self == huge:
            real_read = handle.read

            def read(size=-1):
                opened.append(size)
                return real_read(size)

            handle.read = read
        return handle

    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(Path, "open", counting_open)
        code, _, err = run(capsys, "report", str(huge), "--out", str(tmp_path / "r.html"))
    assert code == 2
    assert "larger than" in err
    # refused from its stated size; whatever is read stays within one byte of the limit
    assert all(0 <= size <= views.MAX_VIEW_FILE_BYTES + 1 for size in opened)


@pytest.mark.skipif(not Path("/dev/zero").exists(), reason="needs /dev/zero")
def test_an_endless_device_as_view_file_is_refused(tmp_path, capsys):
    code, _, err = run(capsys, "report", "/dev/zero", "--out", str(tmp_path / "r.html"))
    assert code == 2
    assert "not a regular file" in err and "/dev/zero" in err
    assert not (tmp_path / "r.html").exists()


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes")
def test_a_pipe_as_view_file_is_refused_without_waiting_for_a_writer(tmp_path):
    # Opening a pipe for reading waits for a writer that never comes: the child would hang
    # until the timeout if the view file were opened before its kind is looked at.
    pipe = tmp_path / "view.json"
    os.mkfifo(pipe)
    done = subprocess.run(
        [sys.executable, "-m", "explorer", "report", str(pipe), "--out", str(tmp_path / "r.html")],
        cwd=Path(__file__).resolve().parents[1],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 2, done.stderr
    assert "not a regular file" in done.stderr and "Traceback" not in done.stderr
    assert not (tmp_path / "r.html").exists()


# --------------------------------------------------------------------------- exports


def test_formula_cells_are_quoted_in_csv_out_and_on_stdout_but_raw_in_parquet(tmp_path, capsys):
    import argparse

    # OWASP Foundation (2023), "CSV Injection": a leading = + - @ tab or CR is prefixed with
    # a single quote; numbers, negative ones included, are left alone.
    table = pd.DataFrame(
        {"region": ["=HYPERLINK(1)", "@SUM(A1)", "Orlen"], "value": [-0.5, 0.25, 1.0]}
    )
    args = argparse.Namespace(panel="demo")
    cli._write(table, str(tmp_path / "t.csv"), args)
    cli._write(table, str(tmp_path / "t.parquet"), args)
    cli._write(table, None, args)
    out = capsys.readouterr().out
    for text in (out, (tmp_path / "t.csv").read_text(encoding="utf-8")):
        back = pd.read_csv(io.StringIO(text))
        assert back["region"].tolist() == ["'=HYPERLINK(1)", "'@SUM(A1)", "Orlen"]
        assert back["value"].tolist() == [-0.5, 0.25, 1.0]
    pd.testing.assert_frame_equal(pd.read_parquet(tmp_path / "t.parquet"), table)


def test_report_names_every_district_year_set_aside_on_stderr(tmp_path, capsys):
    """Nothing is dropped silently: the report's dataset has one district-year whose shares
    sum to about 1.35, and `rift report` names it with its reason and counts it."""
    from explorer import views
    from explorer.data.workspace import Workspace

    panel_path, boundary_path = readers.demo_paths("brackets")
    frame = pd.read_csv(panel_path)
    hit = (frame["region"] == "CAL03") & (frame["year"] == 2015)
    frame.loc[hit, "share_3"] = 0.4
    damaged = tmp_path / "deciles.csv"
    frame.to_csv(damaged, index=False)
    panel = readers.load_panel(damaged, boundary_path)
    ident = Workspace(tmp_path / "ws").add(panel, [damaged, boundary_path], {})
    view_file = tmp_path / "view.json"
    view_file.write_text(views.ViewState(dataset=ident).to_json(), encoding="utf-8")
    code, _, err = run(
        capsys,
        "report",
        str(view_file),
        "--out",
        str(tmp_path / "r.html"),
        "--data",
        str(tmp_path / "ws"),
    )
    assert code == 0, err
    assert "set aside: district CAL03, year 2015:" in err
    assert f"1 of {46 * 18} district-year(s) set aside" in err


# --------------------------------------------------------------------------- boundary changes
# An invented province, Vellmark: Ashfold and Brennick in 2000; from 2011 the border has
# moved east and Brennick is split into Elsby (south) and Fallowmere (north).


def _vellmark(tmp_path: Path) -> dict[str, Path]:
    import geopandas as gpd
    from shapely.geometry import box

    old = gpd.GeoDataFrame(
        {"region": ["Ashfold", "Brennick"]},
        geometry=[box(10.0, 50.0, 10.1, 50.1), box(10.1, 50.0, 10.3, 50.1)],
        crs="EPSG:4326",
    )
    new = gpd.GeoDataFrame(
        {"region": ["Ashfold", "Elsby", "Fallowmere"]},
        geometry=[
            box(10.0, 50.0, 10.13, 50.1),
            box(10.13, 50.0, 10.3, 50.05),
            box(10.13, 50.05, 10.3, 50.1),
        ],
        crs="EPSG:4326",
    )
    paths = {"old": tmp_path / "vellmark_2000.geojson", "new": tmp_path / "vellmark_2011.geojson"}
    old.to_file(paths["old"], driver="GeoJSON")
    new.to_file(paths["new"], driver="GeoJSON")
    rows = [
        ("Ashfold", 2009, 100.0, 2000),
        ("Brennick", 2009, 150.0, 4000),
        ("Ashfold", 2012, 104.0, 2100),
        ("Elsby", 2012, 120.0, 1500),
        ("Fallowmere", 2012, 170.0, 2300),
    ]
    paths["panel"] = tmp_path / "means.csv"
    pd.DataFrame(rows, columns=["region", "year", "mean_income", "population"]).to_csv(
        paths["panel"], index=False
    )
    paths["changes"] = tmp_path / "changes.csv"
    paths["changes"].write_text(
        "year,from,to,weight\n2011,Ashfold,Ashfold,1\n2011,Brennick,Ashfold,0.15\n"
        "2011,Brennick,Elsby,0.4\n2011,Brennick,Fallowmere,0.45\n"
    )
    return paths


def test_check_carries_a_panel_across_boundary_changes(tmp_path, capsys):
    p = _vellmark(tmp_path)
    code, out, err = run(
        capsys,
        "check",
        str(p["panel"]),
        "--boundaries",
        f"{p['old']}@2000",
        "--boundaries",
        f"{p['new']}@2011",
        "--changes",
        str(p["changes"]),
    )
    assert code == 0, err
    assert "districts: 3 (6 district-years)" in out
    assert "boundaries: 3 districts matched" in out
    assert "carried to the 2011 boundaries:" in err and "1 rebuilt" in err and "2 split" in err


def test_decompose_on_the_target_vintage_uses_its_districts(tmp_path, capsys):
    p = _vellmark(tmp_path)
    out_file = tmp_path / "split.csv"
    code, _, err = run(
        capsys,
        "decompose",
        str(p["panel"]),
        "--boundaries",
        f"{p['old']}@2000",
        "--boundaries",
        f"{p['new']}@2011",
        "--changes",
        str(p["changes"]),
        "--out",
        str(out_file),
    )
    assert code == 0, err
    table = pd.read_csv(out_file)
    assert set(table["year"]) == {2009, 2012}
    # with district means only, the between-district Theil of 2009 is that of the carried
    # means, Ashfold 1000+600 people ... written out (Theil 1967, between-group term)
    pops = np.array([2000 + 0.15 * 4000, 0.4 * 4000, 0.45 * 4000])
    means = np.array([(2000 * 100 + 600 * 150) / 2600, 150.0, 150.0])
    mu = np.dot(pops, means) / pops.sum()
    theil = float(np.dot(pops * means / (pops * means).sum(), np.log(means / mu)))
    total = table[(table["year"] == 2009) & (table["component"] == "total")]["value"].iloc[0]
    assert total == pytest.approx(theil, rel=1e-9)


def test_two_vintages_without_a_change_table_get_area_weights_said_on_stderr(tmp_path, capsys):
    p = _vellmark(tmp_path)
    out_file = tmp_path / "indices.csv"
    code, _, err = run(
        capsys,
        "compute",
        str(p["panel"]),
        "--boundaries",
        f"{p['old']}@2000",
        "--boundaries",
        f"{p['new']}@2011",
        "--out",
        str(out_file),
    )
    assert code == 0, err
    assert (
        "no change table: weights by area derived by overlaying vellmark_2000.geojson (2000)" in err
    )
    assert "sliver(s)" in err


def test_a_bad_change_table_exits_two_naming_line_and_column(tmp_path, capsys):
    p = _vellmark(tmp_path)
    p["changes"].write_text(
        "year,from,to,weight\n2011,Ashfold,Ashfold,1\n2011,Brennick,Ashfold,0.15\n"
        "2011,Brennick,Elsby,0.4\n2011,Brennick,Fallowmere,0.35\n"
    )
    code, _, err = run(
        capsys,
        "check",
        str(p["panel"]),
        "--boundaries",
        f"{p['old']}@2000",
        "--boundaries",
        f"{p['new']}@2011",
        "--changes",
        str(p["changes"]),
    )
    assert code == 2
    assert (
        "changes.csv, line 3, column 'weight': the weights of district Brennick in 2011 sum to 0.9"
        in err
    )


def test_a_change_table_is_never_overwritten(tmp_path, capsys):
    p = _vellmark(tmp_path)
    before = p["changes"].read_bytes()
    code, _, err = run(
        capsys,
        "compute",
        str(p["panel"]),
        "--boundaries",
        f"{p['old']}@2000",
        "--boundaries",
        f"{p['new']}@2011",
        "--changes",
        str(p["changes"]),
        "--out",
        str(p["changes"].with_suffix(".csv")),
    )
    assert code == 2 and "one of the input files" in err
    assert p["changes"].read_bytes() == before


def test_carrying_back_to_an_earlier_vintage_is_refused_with_the_year_to_choose(tmp_path, capsys):
    p = _vellmark(tmp_path)
    code, out, err = run(
        capsys,
        "check",
        str(p["panel"]),
        "--boundaries",
        f"{p['old']}@2000",
        "--boundaries",
        f"{p['new']}@2011",
        "--changes",
        str(p["changes"]),
        "--to-vintage",
        "2005",
    )
    assert code == 2 and out == ""
    assert "choose a target vintage of 2011 or later" in err

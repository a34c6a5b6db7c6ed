"""Both ways a table leaves Rift as CSV neutralise formula-leading text, end to end.

OWASP Foundation (2023), "CSV Injection": a text cell that begins with ``=``, ``+``, ``-``,
``@``, a tab or a carriage return is prefixed with a single quote; numbers, negative ones
included, stay numbers. Here the district ids of a real panel begin with those characters
and the tables come out of ``rift compute --out``, ``rift decompose --out`` and the app's
CSV download buttons.
"""

from __future__ import annotations

import csv
import io
import sys
from pathlib import Path

import pandas as pd
import pytest

from explorer import cli
from explorer import data as readers

sys.path.insert(0, str(Path(__file__).parent / "app"))

HOSTILE = {"BRE01": "=HYPERLINK(1)", "BRE02": "+Varn", "BRE03": "-Oskel", "CAL01": "@Tarn"}
LEADS = ("=", "+", "-", "@", "\t", "\r")


@pytest.fixture
def hostile_panel(tmp_path) -> Path:
    panel_path, _ = readers.demo_paths("brackets")
    frame = pd.read_csv(panel_path)
    frame["region"] = frame["region"].replace(HOSTILE)
    path = tmp_path / "hostile.csv"
    frame.to_csv(path, index=False)
    return path


def _cells(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO(text)))


def _check_neutralised(text: str, column: str) -> pd.DataFrame:
    rows = _cells(text)
    at = rows[0].index(column)
    # no text cell begins with a formula character once the quote is taken into account
    assert not [r[at] for r in rows[1:] if r[at].startswith(LEADS)]
    back = pd.read_csv(io.StringIO(text), keep_default_na=False)
    return back


def test_compute_out_quotes_the_hostile_ids_and_keeps_numbers(tmp_path, hostile_panel, capsys):
    out = tmp_path / "indices.csv"
    assert cli.main(["compute", str(hostile_panel), "--out", str(out)]) == 0
    back = _check_neutralised(out.read_text(encoding="utf-8"), "region")
    shown = set(back["region"])
    assert {"'" + v for v in HOSTILE.values()} <= shown
    assert not set(HOSTILE.values()) & shown
    assert pd.api.types.is_float_dtype(pd.to_numeric(back["value"]))


def test_decompose_out_keeps_negative_numbers_as_numbers(tmp_path, hostile_panel, capsys):
    out = tmp_path / "change.csv"
    argv = ["decompose", str(hostile_panel), "--by", "county", "--index", "mld"]
    assert cli.main([*argv, "--from", "2010", "--to", "2024", "--out", str(out)]) == 0
    text = out.read_text(encoding="utf-8")
    rows = _cells(text)
    at = rows[0].index("value")
    values = [r[at] for r in rows[1:]]
    negative = [v for v in values if v.startswith("-")]
    assert negative, "a change decomposition has terms below zero"
    assert all(float(v) < 0 for v in negative)  # unquoted, no leading quote: still numbers
    assert f'"{negative[0]}"' not in text and f"'{negative[0]}" not in text


def test_the_apps_csv_downloads_quote_the_hostile_ids(tmp_path, hostile_panel, monkeypatch):
    from app_helpers import APP, page, run
    from streamlit.delta_generator import DeltaGenerator
    from streamlit.testing.v1 import AppTest

    from explorer.data.workspace import Workspace
    from explorer.present import exports

    workspace = tmp_path / "workspace"
    panel = readers.load_panel(hostile_panel)
    options = {"kind": None, "column_map": None, "boundary_id": None, "crs": None}
    dataset = Workspace(workspace).add(panel, [hostile_panel], options)
    monkeypatch.setenv("RIFT_DATA", str(workspace))
    written: list[bytes] = []
    real = exports.csv_bytes

    def spy(table):
        data = real(table)
        written.append(data)
        return data

    monkeypatch.setattr(exports, "csv_bytes", spy)
    # Downloads are made when clicked: keep what each button would make, and make it.
    offered: list = []
    button = DeltaGenerator.download_button

    def keep(self, label, data, *args, **kwargs):
        offered.append(data)
        return button(self, label, data, *args, **kwargs)

    monkeypatch.setattr(DeltaGenerator, "download_button", keep)
    app = AppTest.from_file(str(APP), default_timeout=180)
    app.query_params.update({"d": dataset})
    run(app)
    app.switch_page(page("intake"))
    run(app)
    for data in offered:
        if callable(data):
            data()
    with_ids = [d.decode("utf-8") for d in written if b"Varn" in d]
    assert with_ids, "the Intake page offers the index table as CSV"
    for text in with_ids:
        back = _check_neutralised(text, "region")
        assert "'=HYPERLINK(1)" in set(back["region"])

"""Helpers for AppTest runs of the app on the demo province."""

from __future__ import annotations

from pathlib import Path

from streamlit.testing.v1 import AppTest

ROOT = Path(__file__).resolve().parents[2]
APP = ROOT / "explorer" / "app.py"
PAGES = ROOT / "pages"


def page(name: str) -> str:
    """Absolute path of a page script, as AppTest.switch_page expects for st.navigation."""
    return str(PAGES / f"{name}.py")


def run(at: AppTest) -> AppTest:
    """Run and fail loudly with the app's own exception text if a page raised."""
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def view(at: AppTest):
    """The session's shared view."""
    return at.session_state["rift_view"]


def dataframe(at: AppTest, key: str):
    """The DataFrame of the table shown in the container with this key."""
    for block in at.get("flex_container"):
        if getattr(block, "key", None) == key:
            tables = [c for c in _walk(block) if c.type == "dataframe"]
            assert tables, f"container {key!r} holds no table"
            return tables[0].value
    raise AssertionError(f"no table {key!r} on the page")


def tables(at: AppTest) -> list:
    """Every DataFrame shown on the page."""
    return [d.value for d in at.get("dataframe")]


def charts(at: AppTest) -> list:
    """Every Vega-Lite chart element on the page."""
    return list(at.get("vega_lite_chart"))


def chart_words(chart) -> str:
    """A chart's spec and every text of the tables sent beside it (Arrow IPC streams)."""
    import pyarrow as pa

    words = [chart.proto.spec]
    for dataset in chart.proto.datasets:
        table = pa.ipc.open_stream(dataset.data.data).read_all()
        for column in table.column_names:
            if pa.types.is_string(table[column].type) or pa.types.is_large_string(
                table[column].type
            ):
                words.extend(str(v) for v in table[column].to_pylist() if v is not None)
    return " ".join(words)


def _walk(node):
    for child in getattr(node, "children", {}).values():
        yield child
        yield from _walk(child)


def save_demo_with_a_gap(folder: Path, region: str, year: int) -> str:
    """Save the demo deciles with one district-year broken (its shares sum to about 1.35)
    into the workspace at ``folder``; the app sets it aside. Returns the dataset id."""
    import pandas as pd

    from explorer import data as readers
    from explorer.data.workspace import Workspace

    panel_path, boundary_path = readers.demo_paths("brackets")
    frame = pd.read_csv(panel_path)
    hit = (frame["region"] == region) & (frame["year"] == year)
    assert hit.sum() == 1
    frame.loc[hit, "share_3"] = 0.4
    folder.mkdir(parents=True, exist_ok=True)
    path = folder.parent / "deciles-with-a-gap.csv"
    frame.to_csv(path, index=False)
    panel = readers.load_panel(path, boundary_path)
    assert len(panel.excluded) == 1
    options = {"kind": None, "column_map": None, "boundary_id": None, "crs": None}
    return Workspace(folder).add(panel, [path, boundary_path], options)


def as_read(text: str) -> str:
    """Text as the reader sees it: Markdown backslash escapes removed (CommonMark 0.29, 2.4)."""
    import re

    return re.sub(r"\\([!-/:-@\[-`{-~])", r"\1", text)

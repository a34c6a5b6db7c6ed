"""Shared pieces every page draws: cautions, problem tables, downloads, plain-language errors."""

from __future__ import annotations

import json
import logging
import re
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

import pandas as pd
import streamlit as st

from explorer.data.model import DataError
from explorer.present import exports
from explorer.present.markup import WORD_JOINER, plain

__all__ = [
    "WORD_JOINER",
    "caption",
    "caution_texts",
    "cautions",
    "downloads",
    "equal_weight_offer",
    "guard",
    "markdown",
    "metric",
    "moran_summary",
    "notice",
    "picked_region",
    "plain",
    "planner_table",
    "problem_table",
    "problems",
    "set_aside_notice",
    "table",
    "table_bytes",
]

LOG = logging.getLogger("rift")


def markdown(template: str, *values: Any) -> None:
    """Markdown of our own wording, with each ``{}`` filled by a value shown as text."""
    st.markdown(template.format(*(plain(v) for v in values)))


def caption(text: Any) -> None:
    """A caption whose whole text is shown as typed (it may hold names from the data)."""
    st.caption(plain(text))


def notice(text: Any, kind: str = "info") -> None:
    """An info, warning, error or success box whose text is shown as typed."""
    getattr(st, kind)(plain(text))


def metric(where: Any, label: Any, value: Any, help: Any = None) -> None:  # noqa: A002
    """A metric whose label and help are shown as typed (labels may be group names)."""
    where.metric(plain(label), value, help=None if help is None else plain(help))


def caution_texts(panel: Any, *, ranking: bool = False, wide_intervals: int = 0) -> list[str]:
    """The cautions that apply to what is shown (from explorer.present.cautions)."""
    from explorer.present import cautions as caution_rules

    return list(
        caution_rules.for_view(
            panel.kind,
            ranking=ranking,
            wide_intervals=wide_intervals,
            income_concept=getattr(panel, "income_concept", None),
        )
    )


def cautions(panel: Any, *, ranking: bool = False, wide_intervals: int = 0) -> list[str]:
    """Draw the cautions box for what the page shows and return the cautions drawn."""
    items = caution_texts(panel, ranking=ranking, wide_intervals=wide_intervals)
    if items:
        with st.container(border=True, key="cautions_box"):
            st.markdown("**Read with care**")
            st.markdown("\n".join(f"- {plain(item)}" for item in items))
    return items


def table(frame: pd.DataFrame, key: str, **kwargs: Any) -> None:
    """A table in a keyed container, so tests and styles can find it by name."""
    with st.container(key=key):
        st.dataframe(frame, hide_index=kwargs.pop("hide_index", True), **kwargs)


def problems(error: DataError, *, heading: str = "The data could not be used") -> None:
    """Show every problem of a DataError as a table a planner can work through."""
    st.error(f"{heading}: {len(error.problems)} problem(s) found. Fix them and try again.")
    problem_table(error, "problems_table")


def problem_table(error: DataError, key: str) -> None:
    """The problems as a table (blank where no line or column) and in full sentences."""
    listed = error.table()
    # The table's cells cut long sentences; the list below says each problem in full.
    # Blank, not "None", where a problem has no line or column (text columns: Arrow-safe).
    listed = listed.apply(lambda column: column.map(_cell))
    table(listed, key, width="stretch")
    lines = []
    for problem in error.problems[:_LISTED]:
        where = ", ".join(
            part
            for part in (
                problem.file,
                f"line {problem.row}" if problem.row is not None else "",
                f"column '{problem.column}'" if problem.column else "",
            )
            if part
        )
        fix = f" **How to fix:** {plain(problem.fix)}" if problem.fix else ""
        message = plain(problem.message.rstrip("."))
        lines.append(f"- {f'**{plain(where)}**: ' if where else ''}{message}.{fix}")
    more = len(error.problems) - _LISTED
    if more > 0:
        lines.append(f"- … and {more} more in the table above.")
    st.markdown("\n".join(lines))


_LISTED = 20


def _cell(value: Any) -> str:
    if value is None or (not isinstance(value, str) and bool(pd.isna(value))):
        return ""  # None, NaN and pandas' NA alike
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


@contextmanager
def guard(what: str = "this page") -> Iterator[None]:
    """Turn DataError into its problem table and anything else into a plain message."""
    try:
        yield
    except DataError as error:
        problems(error)
    except Exception as error:  # page level: never a traceback in front of the user
        LOG.exception("while drawing %s", what)  # the details go to the server's log
        st.error(
            f"Something went wrong while drawing {what} ({type(error).__name__}). "
            "Try another choice in the sidebar; if it persists, check the data on the "
            "Intake page."
        )


def slug(text: str) -> str:
    """A file-name-safe version of a label."""
    cleaned = re.sub(r"[^A-Za-z0-9._-]+", "-", str(text)).strip("-.")
    return cleaned[:80] or "rift"


def table_bytes(table: pd.DataFrame, fmt: str) -> bytes:
    """A table as CSV (safe to open in a spreadsheet) or Parquet (raw strings) bytes."""
    if fmt == "csv":
        return exports.csv_bytes(table)
    return exports.parquet_bytes(table)


#: Tables up to this many cells get their CSV written with the page; larger ones on request.
EAGER_CSV_CELLS = 20_000


def table_downloads(table: pd.DataFrame, name: str, *, key: str) -> None:
    """CSV and Parquet buttons for the table behind a chart."""
    left, right = st.columns(2)
    # a large table is written when asked for, not on every rerun of its page
    large = table.shape[0] * max(table.shape[1], 1) > EAGER_CSV_CELLS
    left.download_button(
        "Table (CSV)",
        (lambda: table_bytes(table, "csv")) if large else table_bytes(table, "csv"),
        file_name=f"{slug(name)}.csv",
        mime="text/csv",
        key=f"{key}_csv",
        on_click="ignore",
    )
    right.download_button(
        "Table (Parquet)",
        lambda: table_bytes(table, "parquet"),
        file_name=f"{slug(name)}.parquet",
        mime="application/vnd.apache.parquet",
        key=f"{key}_parquet",
        on_click="ignore",
    )


def chart_downloads(chart: Any, name: str, *, key: str) -> None:
    """PNG and SVG of a chart, rendered offline on request."""
    from explorer.present import charts

    left, right = st.columns(2)
    left.download_button(
        "Chart (PNG)",
        lambda: charts.to_png(chart),
        file_name=f"{slug(name)}.png",
        mime="image/png",
        key=f"{key}_png",
        on_click="ignore",
    )
    right.download_button(
        "Chart (SVG)",
        lambda: charts.to_svg(chart).encode("utf-8"),
        file_name=f"{slug(name)}.svg",
        mime="image/svg+xml",
        key=f"{key}_svg",
        on_click="ignore",
    )


def geojson_download(features: list[dict[str, Any]], name: str, *, key: str) -> None:
    """The map layer as a GeoJSON FeatureCollection."""
    collection = {"type": "FeatureCollection", "features": features}
    st.download_button(
        "Map layer (GeoJSON)",
        lambda: json.dumps(collection).encode("utf-8"),
        file_name=f"{slug(name)}.geojson",
        mime="application/geo+json",
        key=f"{key}_geojson",
        on_click="ignore",
    )


def downloads(
    name: str,
    *,
    key: str,
    table: pd.DataFrame | None = None,
    chart: Any = None,
    features: list[dict[str, Any]] | None = None,
) -> None:
    """Every download for one chart, tucked in an expander."""
    with st.expander(f"Download: {name}"):
        if table is not None:
            table_downloads(table, name, key=key)
        if chart is not None:
            chart_downloads(chart, name, key=key)
        if features is not None:
            geojson_download(features, name, key=key)


def picked_region(event: Any) -> str | None:
    """The district id clicked on a map, from the chart's selection event."""
    try:
        chosen = event.selection.get("pick") or []
    except AttributeError:
        return None
    for item in chosen:
        for key in ("region", "properties\\.region", "properties.region"):
            if isinstance(item, dict) and item.get(key):
                return str(item[key])
    return None


def moran_summary(overall: Any) -> None:
    """The global Moran's I with its permutation p-value, as metrics."""
    from explorer.figures.spatial import moran_metrics

    for column, (label, value, help_text) in zip(
        st.columns(3), moran_metrics(overall), strict=True
    ):
        metric(column, label, value, help_text)
    islands = getattr(overall, "islands", ())
    if islands is not None and len(islands):
        st.caption(
            f"{len(islands)} district(s) touch no other and were linked to their nearest neighbour."
        )


def planner_table(
    frame: pd.DataFrame,
    titles: dict[str, str],
    *,
    words: dict[str, Any] | None = None,
    formats: dict[str, str] | None = None,
) -> tuple[pd.DataFrame, dict[str, Any]]:
    """A table shown with planner words while its data keep their keys.

    ``titles`` names the columns to show (in order) and their headings; a column in
    ``words`` is shown through a text column made by that function (row -> text), so the
    data (and every test or download built on them) keep the short keys. Returns the frame
    and the keyword arguments for ``ui.table``.
    """
    words = words or {}
    formats = formats or {}
    out = frame.reset_index(drop=True).copy()
    config: dict[str, Any] = {}
    order: list[str] = []
    for column, title in titles.items():
        if column in words:
            shown = f"{column} (shown)"
            out[shown] = [str(words[column](row)) for row in out.to_dict("records")]
            config[shown] = st.column_config.TextColumn(title)
            order.append(shown)
        elif column in out.columns:
            if pd.api.types.is_float_dtype(out[column]):
                config[column] = st.column_config.NumberColumn(
                    title, format=formats.get(column, "%.4f")
                )
            else:
                config[column] = st.column_config.Column(title)
            order.append(column)
    return out, {"column_config": config, "column_order": order}


def set_aside_title(panel: Any) -> str | None:
    """The title of the set-aside notice ("3 district-years set aside ..."), or None."""
    excluded = getattr(panel, "excluded", None)
    if excluded is None or not len(excluded):
        return None
    count = len(excluded)
    noun = "district-year" if count == 1 else "district-years"
    return f"{count} {noun} set aside and not used in any figure here"


def set_aside_notice(panel: Any) -> None:
    """One collapsed notice listing every district-year set aside, with its reason."""
    title = set_aside_title(panel)
    if title is None:
        return
    with st.expander(title, expanded=False):
        table(panel.excluded.reset_index(drop=True), "set_aside_notice")


def equal_weight_offer(panel: Any) -> None:
    """Say that each district counts equally (no populations) and point to Intake."""
    from explorer.data.dataset_store import equal_weight_notice

    text = equal_weight_notice(panel)
    if text is None:
        return
    notice(
        f"{text} Open the Intake page and add a table under "
        "'Populations (optional)' to weight districts by their size.",
        "warning",
    )

"""The Intake page's "Boundary changes" part: later boundary files, weights, target vintage.

The planner gives the boundary file of the Intake page the year it is valid from, adds a
second (or third) boundary file with its year, and says where the change weights come
from: a change table file, the overlay of the boundary files (by area), or a finer layer
of population. The panel is then carried to the chosen vintage exactly as ``rift check
--boundaries FILE@YEAR --changes FILE`` does (:func:`explorer.cli_vintages.carry`), and the
carried panel, with its account, is what is kept and saved.

Every control's key starts with ``in_``: they belong to reading uploaded files, not to the
view (a link cannot carry a file).
"""

from __future__ import annotations

import argparse
import contextlib
import io
from dataclasses import dataclass
from typing import Any

import streamlit as st

from explorer.present import vocabulary
from explorer.ui import show

__all__ = ["Changes", "boundary_changes", "carry", "sources"]

BOUNDARY_TYPES = ["geojson", "json", "gpkg", "zip", "parquet"]
TABLE_TYPES = ["csv", "txt", "tsv", "xlsx", "parquet"]
LATEST = 0  # the target vintage's choice meaning "the latest"


@dataclass(frozen=True)
class Changes:
    """What the planner gave in the Boundary changes part.

    Attributes
    ----------
    first_year : int or None
        The year the Intake page's boundary file is valid from (None: the panel's first).
    later : tuple of (upload, int)
        Each further boundary file and the year it is valid from.
    weights : str
        ``table``, ``area`` or ``finer``.
    table, finer : upload or None
        The change table; the finer layer of population.
    finer_column : str
    to_vintage : int or None
        The first year of the target boundaries (None: the latest).
    """

    first_year: int | None
    later: tuple[tuple[Any, int], ...]
    weights: str
    table: Any = None
    finer: Any = None
    finer_column: str = "population"
    to_vintage: int | None = None

    def uploads(self) -> list[Any]:
        """The files these changes bring, in a fixed order (part of the dataset's id)."""
        files = [u for u, _ in self.later]
        files += [f for f in (self.table, self.finer) if f is not None]
        return files

    def options(self) -> dict[str, Any]:
        """Plain values for the dataset's manifest (and its id)."""
        return {
            "vintages": [self.first_year, *(y for _, y in self.later)],
            "weights": self.weights,
            "to_vintage": self.to_vintage,
            "finer_column": self.finer_column if self.weights == "finer" else None,
        }


def boundary_changes(boundary_files: list[Any]) -> Changes | None:
    """Controls of the Boundary changes part; None when no later boundary file is given."""
    words = vocabulary.VINTAGE_WORDS
    with st.expander(words["part"], expanded=False):
        st.markdown(words["intro"])
        first = st.number_input(
            words["first_year"], min_value=0, max_value=2200, step=1, key="in_vint_year_0"
        )
        later = []
        for i in (1, 2):
            left, right = st.columns([3, 1])
            upload = left.file_uploader(
                words["later_file"].format(n=words["ordinal"][i]),
                type=BOUNDARY_TYPES,
                key=f"in_vint_file_{i}",
            )
            year = right.number_input(
                words["later_year"], min_value=0, max_value=2200, step=1, key=f"in_vint_year_{i}"
            )
            if upload is not None:
                later.append((upload, int(year)))
        weights = st.radio(
            words["weights"],
            list(words["weights_from"]),
            format_func=words["weights_from"].get,
            key="in_vint_weights",
        )
        table = finer = None
        column = "population"
        if weights == "table":
            table = st.file_uploader(words["table_file"], type=TABLE_TYPES, key="in_vint_table")
        elif weights == "finer":
            finer = st.file_uploader(words["finer_file"], type=BOUNDARY_TYPES, key="in_vint_finer")
            column = (
                st.text_input(
                    words["finer_column"], value="population", key="in_vint_column"
                ).strip()
                or "population"
            )
        years = sorted({int(first), *(y for _, y in later)} - {0})
        choices = [LATEST, *years]
        target = st.selectbox(
            words["target"],
            choices,
            format_func=lambda y: words["latest"] if y == LATEST else str(y),
            key="in_vint_target",
        )
        if not later:
            if boundary_files:
                show.caption(words["none_yet"])
            return None
        return Changes(
            first_year=int(first) or None,
            later=tuple(later),
            weights=str(weights),
            table=table,
            finer=finer,
            finer_column=column,
            to_vintage=int(target) or None,
        )


def carry(panel: Any, panel_name: str, first: Any, changes: Changes, folder_paths: dict) -> Any:
    """``panel`` carried to the target vintage, with the account of how, as the CLI does it.

    Parameters
    ----------
    panel : Panel
        Read without boundaries (each year's districts are those of its own vintage).
    panel_name : str
        The panel file's name, for problems about its districts.
    first : path
        The Intake page's boundary file on disk (the first vintage).
    changes : Changes
    folder_paths : dict
        ``later`` (paths of the further boundary files), ``table``, ``finer`` (paths or None).

    Returns
    -------
    (Panel, list of str)
        The carried panel and what was said about the carrying (weights derived, notes).

    Raises
    ------
    DataError
        Every problem of the vintages and the change table, each with file, line, column.
    """
    from explorer import cli_vintages
    from explorer.data.model import DataError, Problem

    words = vocabulary.VINTAGE_WORDS
    if changes.weights == "table" and folder_paths.get("table") is None:
        raise DataError([Problem(*vocabulary.VINTAGE_WORDS["no_table"])])
    if changes.weights == "finer" and folder_paths.get("finer") is None:
        raise DataError([Problem(*vocabulary.VINTAGE_WORDS["no_finer"])])
    if first is None or isinstance(first, list):
        raise DataError([Problem(*vocabulary.VINTAGE_WORDS["first_file"])])
    undated = [
        Problem(
            words["no_year"][0].format(n=words["ordinal"][i], file=upload.name),
            words["no_year"][1],
            file=upload.name,
        )
        for i, (upload, year) in enumerate(changes.later, start=1)
        if not year
    ]
    if undated:
        raise DataError(undated)
    spec = f"{first}@{changes.first_year}" if changes.first_year else str(first)
    specs = [spec] + [
        f"{path}@{year}" if year else str(path)
        for path, (_, year) in zip(folder_paths["later"], changes.later, strict=True)
    ]
    args = argparse.Namespace(
        panel=panel_name,
        boundaries=specs,
        changes=str(folder_paths["table"]) if changes.weights == "table" else None,
        finer=str(folder_paths["finer"]) if changes.weights == "finer" else None,
        finer_column=changes.finer_column,
        to_vintage=changes.to_vintage,
        boundary_id=None,
        layer=None,
        crs=None,
    )
    said = io.StringIO()
    with contextlib.redirect_stderr(said):
        carried = cli_vintages.carry(panel, args)
    return carried, [line for line in said.getvalue().splitlines() if line.strip()]


def sources(changes: Changes) -> list[tuple[str, bytes]]:
    """The files of the changes as (name, bytes), stored with the dataset."""
    return [(u.name, u.getvalue()) for u in changes.uploads()]

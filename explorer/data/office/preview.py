"""What the readers understood of a panel and its boundaries, before anything is used:
the office reading, the proposed levels, the name matches and the coordinate systems
that fit a boundary file naming none. The Intake page shows it and takes the planner's
choices from it."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from explorer.data.boundaries import BoundarySource, read_boundaries
from explorer.data.crs import CrsCandidate, propose_crs
from explorer.data.ids import id_codes, id_strings, match_ids
from explorer.data.levels import LevelCandidate, propose_levels
from explorer.data.model import DataError, Problem
from explorer.data.office import NameMatch, ReadOptions, apply_crosswalk, match_names

__all__ = ["Preview", "boundary_names", "preview_inputs", "raw_crs"]


@dataclass(frozen=True)
class Preview:
    """What was understood of the files.

    Attributes
    ----------
    lines : list of str
        The office reading in words (layout, header line, lines skipped, codes read as
        missing, totals set apart); empty for a tidy table.
    office : bool
        Whether the table was read as an office table.
    measures : tuple of str
        The measures found.
    levels : list of LevelCandidate
        Columns that nest the districts, fewest groups first.
    names : NameMatch or None
        How the panel's districts meet the boundary file's.
    crs_missing : bool
        The boundary file names no coordinate system.
    crs_candidates : list of CrsCandidate
        Systems that fit its coordinates, most likely first.
    problems : tuple of Problem
        Why a part could not be previewed (the full check says it again).
    """

    lines: list[str] = field(default_factory=list)
    office: bool = False
    measures: tuple[str, ...] = ()
    levels: list[LevelCandidate] = field(default_factory=list)
    names: NameMatch | None = None
    crs_missing: bool = False
    crs_candidates: list[CrsCandidate] = field(default_factory=list)
    problems: tuple[Problem, ...] = ()


def raw_crs(source: BoundarySource) -> tuple[bool, list[CrsCandidate]]:
    """Whether a boundary file names no coordinate system, and the systems that fit.

    Read as written (no system set or changed); a file that cannot be read this way is
    taken as naming one, and the full reading reports what is wrong.
    """
    import geopandas as gpd

    paths = [source] if isinstance(source, str | Path) else list(source)
    shp = [Path(p) for p in paths if not isinstance(p, tuple) and str(p).lower().endswith(".shp")]
    target = shp[0] if shp else Path(paths[0]) if not isinstance(paths[0], tuple) else None
    if target is None:
        return False, []
    try:
        if target.suffix.lower() == ".zip":
            frame = gpd.read_file(f"zip://{target}")
        elif target.suffix.lower() == ".parquet":
            frame = gpd.read_parquet(target)
        else:
            frame = gpd.read_file(target)
    except Exception:  # noqa: BLE001 - the full reading names the problem
        return False, []
    if frame.crs is not None or frame.empty:
        return False, []
    return True, propose_crs(tuple(frame.total_bounds))


def boundary_names(boundaries: pd.DataFrame, regions: list[str], boundary_id: str | None):
    """The boundary file's districts as {id: name}: the id attribute that best matches
    the panel's ids (or the one named), its ``name`` attribute when it has one."""
    attrs = {
        c: id_strings(boundaries[c])
        for c in boundaries.columns
        if (c != "geometry" and not pd.api.types.is_numeric_dtype(boundaries[c]))
        or c == boundary_id
    }
    column = boundary_id or "region"
    if column not in boundaries.columns:
        found = match_ids(regions, attrs)
        column = found.column or next(iter(attrs), None)
    if column is None:
        return {}
    ids = [str(v) for v in id_strings(boundaries[column])]
    names_col = next((c for c in ("name", "NAME", "Name") if c in boundaries.columns), column)
    names = [str(v) for v in boundaries[names_col]]
    return dict(zip(ids, names, strict=True))


def preview_inputs(
    panel_path: str | Path,
    boundaries: BoundarySource | None = None,
    *,
    sheet: str | int | None = None,
    column_map: Mapping[str, str] | str | None = None,
    options: ReadOptions | None = None,
    boundary_id: str | None = None,
    crs: str | None = None,
    layer: str | None = None,
    crosswalk: Mapping[str, str] | None = None,
) -> Preview:
    """Read the files far enough to show what was understood, without validating.

    Returns
    -------
    Preview
        Never raises for bad input: what could not be read is in ``problems``.
    """
    from explorer.data.load import read_panel_table

    problems: list[Problem] = []
    crs_missing, candidates = (False, []) if boundaries is None else raw_crs(boundaries)
    bounds = None
    if boundaries is not None:
        try:
            bounds = read_boundaries(
                boundaries, layer=layer, crs=crs or _assumed(crs_missing, candidates)
            )
        except DataError as error:
            problems += error.problems
    try:
        read = read_panel_table(panel_path, sheet=sheet, column_map=column_map, options=options)
    except DataError as error:
        return Preview(
            crs_missing=crs_missing,
            crs_candidates=candidates,
            problems=(*problems, *error.problems),
        )
    frame = read.frame
    if "region" not in frame.columns:
        problems.append(Problem("no district column was found", file=Path(panel_path).name))
        return Preview(crs_missing=crs_missing, crs_candidates=candidates, problems=tuple(problems))
    if crosswalk:
        frame, _ = apply_crosswalk(
            frame,
            pd.DataFrame({"region": list(crosswalk), "boundary_id": list(crosswalk.values())}),
        )
    codes, ids = id_codes(frame["region"])  # on codes: one text per district, not per row
    regions = [str(r) for r in ids[pd.unique(codes[codes >= 0])]]
    names = None
    if bounds is not None:
        names = match_names(regions, boundary_names(bounds, regions, boundary_id))
    reading = read.reading
    return Preview(
        lines=reading.summary() if reading is not None else [],
        office=reading is not None,
        measures=reading.layout.measures if reading is not None else (),
        levels=_levels(frame, bounds, problems),
        names=names,
        crs_missing=crs_missing,
        crs_candidates=candidates,
        problems=tuple(problems),
    )


def _assumed(missing: bool, candidates: list[CrsCandidate]) -> str | None:
    # A file in metres naming no system is previewed in some projected system: the
    # preview needs its attributes only, and the planner chooses the real one.
    if not missing or (candidates and candidates[0].code == "EPSG:4326"):
        return None
    usable = [c.code for c in candidates if "zz" not in c.code]
    return usable[0] if usable else "EPSG:3857"


def _levels(frame: pd.DataFrame, bounds: Any, problems: list[Problem]) -> list[LevelCandidate]:
    try:
        return propose_levels(frame, bounds)
    except (DataError, KeyError, ValueError) as error:
        problems.append(Problem(f"levels could not be proposed ({error})", severity="warning"))
        return []

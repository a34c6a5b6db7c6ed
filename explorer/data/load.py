"""``load_panel``: files in, a validated :class:`~explorer.data.model.Panel` out.

Reads the table (:mod:`explorer.data.tables`), applies the column map
(:mod:`explorer.data.columns`), reads the boundaries (:mod:`explorer.data.boundaries`) and
hands everything to :func:`explorer.data.validate.validate`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path

from explorer.data.boundaries import BoundarySource, read_boundaries
from explorer.data.columns import apply_column_map, parse_column_map
from explorer.data.model import Panel, fail
from explorer.data.tables import read_table
from explorer.data.validate import validate

__all__ = ["load_panel"]


def load_panel(
    panel_path: str | Path,
    boundaries_path: BoundarySource | None = None,
    *,
    kind: str | None = None,
    column_map: Mapping[str, str] | str | None = None,
    boundary_id: str | None = None,
    crs: str | None = None,
    sheet: str | int | None = None,
    layer: str | None = None,
    levels: Sequence[str] | Mapping[str, str] | None = None,
    allow_negative: bool = False,
) -> Panel:
    """Read a panel file (and boundaries), map columns, validate, return a :class:`Panel`.

    Parameters
    ----------
    panel_path : path
        CSV, Parquet or Excel table.
    boundaries_path : path or sequence, optional
        A boundary file, or the parts of one Shapefile given together
        (see :func:`explorer.data.boundaries.read_boundaries`).
    kind, column_map, boundary_id, crs, sheet, layer, allow_negative
        How to read the files; ``column_map`` as a mapping or ``"region=Code,year=Yr"``.
    levels : sequence of str or mapping, optional
        The higher levels the planner chose, outermost first, optionally with display
        names (``{"ZONE_CD": "Zone"}``); by default the proposals of
        :func:`explorer.data.levels.propose_levels`.

    Returns
    -------
    Panel

    Raises
    ------
    DataError
        Every problem found, each naming its file, line and column.
    """
    panel_path = Path(panel_path)
    file = panel_path.name
    frame = read_table(panel_path, sheet=sheet)
    if column_map:
        mapping = parse_column_map(column_map) if isinstance(column_map, str) else dict(column_map)
        frame = apply_column_map(frame, mapping, file=file)
    boundaries = None
    boundary_file = ""
    if boundaries_path is not None:
        boundary_file = _source_name(boundaries_path)
        boundaries = read_boundaries(
            boundaries_path, layer=layer, crs=crs, file_label=boundary_file
        )
        if boundary_id is not None:
            boundaries = _with_id(boundaries, boundary_id, boundary_file)
    return validate(
        frame,
        kind=kind,
        file=file,
        boundaries=boundaries,
        boundary_file=boundary_file,
        levels=levels,
        allow_negative=allow_negative,
    )


def _source_name(source: BoundarySource) -> str:
    if isinstance(source, str | Path):
        return Path(source).name
    names = [str(p[0]) if isinstance(p, tuple) else Path(p).name for p in source]
    shp = [n for n in names if n.lower().endswith(".shp")]
    return shp[0] if shp else ", ".join(names)


def _with_id(boundaries, boundary_id: str, boundary_file: str):
    """The boundaries with the named attribute as ``region``."""
    attrs = [c for c in boundaries.columns if c != "geometry"]
    if boundary_id not in attrs:
        raise fail(
            f"the boundary file has no attribute {boundary_id!r}; its attributes are: {', '.join(attrs)}",
            "choose one of these attributes as the id",
            file=boundary_file,
        )
    keep = boundaries.attrs
    if boundary_id != "region":
        boundaries = boundaries.rename(columns={"region": "region_in_file"}).rename(
            columns={boundary_id: "region"}
        )
    boundaries.attrs = keep
    return boundaries

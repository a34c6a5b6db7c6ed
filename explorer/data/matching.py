"""Boundaries attached to the panel's districts: which attribute holds the ids, how ids that
lost their zeros are matched, which districts are in one file and not the other.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from explorer.data.checks import Log
from explorer.data.ids import IdMatch, id_strings, leading_zero_clashes, match_ids
from explorer.data.model import _listing

if TYPE_CHECKING:
    import geopandas as gpd

__all__ = ["NAME_ATTRIBUTES", "attach_boundaries", "boundary_ids", "report_clashes"]

NAME_ATTRIBUTES = ("name", "district_name", "district", "label", "title")


def boundary_ids(boundaries: Any, panel_ids, boundary_file: str, log: Log) -> IdMatch | None:
    """The attribute of ``boundaries`` that holds the panel's ids, or None (logged)."""
    import geopandas as gpd

    if not isinstance(boundaries, gpd.GeoDataFrame) or boundaries.geometry is None:
        log.add("the boundaries are not a table of geometries", file=boundary_file)
        return None
    attrs = [c for c in boundaries.columns if c != boundaries.geometry.name]
    found = match_ids(panel_ids, {str(c): id_strings(boundaries[c]) for c in attrs})
    if found.column is None or found.matched == 0 and found.column != "region":
        ours = sorted(set(panel_ids))
        log.add(
            "no attribute of the boundary file matches the panel's district ids "
            f"(attributes: {_listing(attrs, 20)}; panel ids such as {_listing(ours[:3])})",
            "name the boundary attribute that holds the district ids",
            file=boundary_file,
        )
        return None
    if found.note:
        log.add(found.note, "", file=boundary_file, column=found.column, severity="warning")
    return found


def report_clashes(ids, file: str, column: str, log: Log) -> None:
    """Warn about codes that differ only by leading zeros: they stay different districts."""
    clashes = leading_zero_clashes(ids)
    if clashes:
        shown = _listing([" and ".join(f"'{c}'" for c in group) for group in clashes], 4)
        log.add(
            f"{len(clashes)} district code(s) differ only by leading zeros ({shown}); they are "
            "kept as different districts",
            "write every code the same way (with or without the zeros) if they are the same district",
            file=file,
            column=column,
            severity="warning",
        )


def _merge_parts(out, boundary_file: str, log: Log, column: str):
    """Districts with several features get their parts merged, with a warning."""
    import geopandas as gpd

    dups = sorted(set(out["region"][out["region"].duplicated()]))
    log.add(
        f"{len(dups)} district(s) have several boundary features ({_listing(dups)}); their parts were merged",
        file=boundary_file,
        column=column,
        severity="warning",
    )
    geom = out.groupby("region").geometry.agg(lambda s: s.union_all())
    first = out.drop_duplicates("region").set_index("region").drop(columns="geometry")
    return gpd.GeoDataFrame(
        first.join(geom.rename("geometry")).reset_index(), geometry="geometry", crs=out.crs
    )


def _report_coverage(ours: set, theirs: set, boundary_file: str, column: str, log: Log) -> bool:
    """Name districts in one file only; False when none match at all."""
    panel_only = sorted(ours - theirs)
    boundary_only = sorted(theirs - ours)
    if not ours & theirs:
        log.add(
            f"none of the panel's {len(ours)} district ids appear in the boundary file's '{column}' "
            f"(panel: {_listing(sorted(ours), 4)}; boundaries: {_listing(sorted(theirs), 4)})",
            "check that both files use the same district codes, or name the boundary id attribute",
            file=boundary_file,
            column=column,
        )
        return False
    if panel_only:
        log.add(
            f"{len(panel_only)} district(s) of the panel have no boundary: {_listing(panel_only)}",
            "they are analysed but not mapped; add them to the boundary file",
            file=boundary_file,
            column=column,
            severity="warning",
        )
    if boundary_only:
        log.add(
            f"{len(boundary_only)} boundary feature(s) have no data in the panel: {_listing(boundary_only)}",
            "they are drawn as having no data",
            file=boundary_file,
            column=column,
            severity="warning",
        )
    return True


def attach_boundaries(
    boundaries: Any, regions, found: IdMatch, boundary_file: str, log: Log
) -> gpd.GeoDataFrame | None:
    """``region`` (the panel's ids), ``geometry`` in EPSG:4326, ``name`` when the file has
    one, and the other attributes; None (logged) when no district matches."""
    import geopandas as gpd

    id_col = str(found.column)
    attrs = [c for c in boundaries.columns if c != boundaries.geometry.name]
    ids = id_strings(boundaries[found.column])
    if found.boundary_ids:
        ids = [found.boundary_ids.get(i, i) for i in ids]
    out = gpd.GeoDataFrame(
        {"region": ids},
        geometry=boundaries.geometry.to_numpy(),
        crs=boundaries.crs if boundaries.crs is not None else "EPSG:4326",
    )
    others = [c for c in attrs if c != found.column]
    name_col = next(
        (c for c in others if str(c).lower() in NAME_ATTRIBUTES),
        next((c for c in others if "name" in str(c).lower()), None),
    )
    if name_col is not None:
        out["name"] = id_strings(boundaries[name_col])
    for c in others:  # the name attribute too, under its own name, for level checks
        if str(c) not in out.columns:
            out[str(c)] = boundaries[c].to_numpy()
    if out.crs is not None and not out.crs.equals("EPSG:4326"):
        out = out.to_crs("EPSG:4326")
    no_id = out["region"].isna().to_numpy()
    if no_id.any():
        log.add(
            f"{no_id.sum()} boundary feature(s) have no id and are ignored",
            file=boundary_file,
            column=id_col,
            severity="warning",
        )
        out = out[~no_id]
    if out["region"].duplicated().any():
        out = _merge_parts(out, boundary_file, log, id_col)
    if not _report_coverage(set(regions), set(out["region"]), boundary_file, id_col, log):
        return None
    return out.sort_values("region", kind="stable").reset_index(drop=True)

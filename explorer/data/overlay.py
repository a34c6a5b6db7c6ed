"""Change weights derived by overlaying two boundary vintages: by area, or by a finer layer
of population (dasymetric).

Both give a :class:`~explorer.data.vintages.ChangeTable` that harmonisation uses exactly as a
table the planner wrote, with the kind of weight in ``weight_kind`` and the slivers left out
counted in its warnings.

References
----------
Goodchild, M. F. & Lam, N. S.-N. (1980). Areal interpolation: a variant of the traditional
spatial problem. *Geo-Processing* 1: 297-312.
Mennis, J. (2003). Generating surface models of population using dasymetric mapping.
*The Professional Geographer* 55: 31-42.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import DataError, Problem, _listing, fail
from explorer.data.vintages import ChangeTable, Vintage

__all__ = ["EQUAL_AREA_CRS", "SLIVER_SHARE", "Overlay", "area_weights", "dasymetric_weights"]

#: Areas are measured in an equal-area projection when the files are in degrees
#: (WGS 84 / NSIDC EASE-Grid 2.0 Global, a cylindrical equal-area projection).
EQUAL_AREA_CRS = "EPSG:6933"
#: Pieces smaller than this share of their source's area are slivers (digitising noise).
SLIVER_SHARE = 0.001


@dataclass(frozen=True)
class Overlay:
    """The pieces of two vintages' overlay.

    Attributes
    ----------
    pieces : GeoDataFrame
        ``source``, ``target``, ``area`` (in the equal-area CRS's units), ``geometry``,
        slivers removed.
    slivers : int
        Pieces left out because they were below the tolerance.
    crs : str
        The CRS the areas were measured in.
    """

    pieces: Any
    slivers: int
    crs: str


def _projected(frame: Any) -> Any:
    if frame.crs is None or frame.crs.is_geographic:
        return frame.to_crs(EQUAL_AREA_CRS) if frame.crs is not None else frame
    return frame


def overlay(source: Vintage, target: Vintage, *, sliver: float = SLIVER_SHARE) -> Overlay:
    """Intersect two vintages (``geopandas.overlay``) in an equal-area CRS, slivers removed.

    Raises
    ------
    DataError
        When a vintage has no geometry, or a source district meets no target district.
    """
    import geopandas as gpd

    for vintage in (source, target):
        if vintage.geometry is None:
            raise fail(
                "this vintage has no geometry to overlay",
                "give the boundary file, or a change table",
                file=vintage.file,
            )
    old = _projected(source.geometry.rename(columns={"region": "source"}))
    new = _projected(target.geometry.rename(columns={"region": "target"})).to_crs(old.crs)
    pieces = gpd.overlay(
        old[["source", "geometry"]],
        new[["target", "geometry"]],
        how="intersection",
        keep_geom_type=True,
    )
    pieces["area"] = pieces.geometry.area
    whole = old.set_index("source").geometry.area
    share = pieces["area"].to_numpy() / whole.reindex(pieces["source"]).to_numpy()
    small = share < sliver
    kept = pieces[~small].reset_index(drop=True)
    lost = sorted(set(old["source"]) - set(kept["source"]))
    if lost:
        raise fail(
            f"district(s) {_listing(lost)} of {source.file} meet no district of {target.file}",
            "check that both files cover the same province in the same coordinate system",
            file=source.file,
        )
    return Overlay(kept, int(small.sum()), str(old.crs))


def _table(
    pieces: pd.DataFrame,
    mass: str,
    kind: str,
    source: Vintage,
    target: Vintage,
    found: Overlay,
    notes: list[Problem],
) -> ChangeTable:
    total = pieces.groupby("source")[mass].transform("sum")
    table = pd.DataFrame(
        {
            "year": np.int64(target.year),
            "source": pieces["source"].astype(object).to_numpy(),
            "target": pieces["target"].astype(object).to_numpy(),
            "weight": (pieces[mass] / total).to_numpy(dtype=float),
            "weight_kind": pd.Series(
                pieces["weight_kind"] if "weight_kind" in pieces.columns else kind,
                index=pieces.index,
            ).to_numpy(dtype=object),
            "line": np.int64(0),
        }
    ).sort_values(["source", "target"], ignore_index=True)
    label = f"overlay of {source.file} and {target.file}"
    notes.append(
        Problem(
            f"{found.slivers} sliver(s) below {SLIVER_SHARE:.1%} of their district's area "
            f"left out of the {label} (areas in {found.crs})",
            ""
            if not found.slivers
            else "check the pieces named in the overlay if that is more than digitising noise",
            file=target.file,
            severity="warning",
        )
    )
    return ChangeTable(label, table, tuple(notes))


def area_weights(source: Vintage, target: Vintage, *, sliver: float = SLIVER_SHARE) -> ChangeTable:
    """Change weights by area: the share of each source district's area in each target.

    Each source's weights are its pieces' areas over the area of its kept pieces, so they
    sum to 1; a source less than 99.9 % covered by the target vintage is named in a warning.

    Parameters
    ----------
    source, target : Vintage
        The earlier and the later vintage, with geometry; ``target.year`` is the change year.
    sliver : float
        Pieces below this share of their source's area are left out and counted.

    Returns
    -------
    ChangeTable
        ``weight_kind`` ``area``; warnings give the sliver count and poor coverage.

    References
    ----------
    Goodchild, M. F. & Lam, N. S.-N. (1980). Areal interpolation: a variant of the
    traditional spatial problem. *Geo-Processing* 1: 297-312.
    """
    found = overlay(source, target, sliver=sliver)
    pieces = found.pieces
    whole = _projected(source.geometry).set_index("region").geometry.area
    cover = pieces.groupby("source")["area"].sum() / whole.reindex(
        pieces.groupby("source")["area"].sum().index
    )
    notes = []
    poor = cover[cover < 0.999]
    if len(poor):
        notes.append(
            Problem(
                f"{len(poor)} district(s) of {source.file} are not wholly covered by "
                f"{target.file} ({_listing([f'{s} {c:.1%}' for s, c in poor.items()])}); their "
                "weights are shares of the covered part",
                "check that both files cover the same province",
                file=source.file,
                severity="warning",
            )
        )
    return _table(
        pd.DataFrame(pieces.drop(columns="geometry")), "area", "area", source, target, found, notes
    )


def dasymetric_weights(
    source: Vintage,
    target: Vintage,
    finer: Any,
    column: str,
    *,
    kind: str = "population",
    sliver: float = SLIVER_SHARE,
    finer_file: str = "",
) -> ChangeTable:
    """Change weights from a finer layer: the share of each source's population in each piece.

    A point of the finer layer counts wholly in the piece that holds it; a polygon is split
    over the pieces by area (areal weighting inside the finer unit). A source district with
    no population in the finer layer falls back to area weights, named in a warning, and
    its rows say ``area`` in ``weight_kind``.

    Parameters
    ----------
    source, target : Vintage
    finer : GeoDataFrame
        Points or polygons with a ``column`` of population or dwellings.
    column : str
        The attribute to weight by.
    kind : str
        What ``column`` counts (``population``, ``dwellings``, ``households``).
    sliver : float
        As for :func:`area_weights`.
    finer_file : str
        The finer layer's file name, for problems.

    References
    ----------
    Mennis, J. (2003). Generating surface models of population using dasymetric mapping.
    *The Professional Geographer* 55: 31-42.
    """
    import geopandas as gpd

    if column not in finer.columns:
        raise fail(
            f"the finer layer has no attribute {column!r}",
            f"choose one of {', '.join(c for c in finer.columns if c != 'geometry')}",
            file=finer_file,
        )
    mass = pd.to_numeric(finer[column], errors="coerce")
    bad = ~np.isfinite(mass.to_numpy(dtype=float)) | (mass.to_numpy(dtype=float) < 0)
    if bad.any():
        raise DataError(
            [
                Problem(
                    f"{column} is missing, negative or not a number",
                    "give every feature a count of 0 or more",
                    file=finer_file,
                    row=int(i) + 2,
                    column=column,
                )
                for i in np.flatnonzero(bad)[:50]
            ]
        )
    found = overlay(source, target, sliver=sliver)
    pieces = found.pieces.reset_index(drop=True).assign(piece=lambda f: np.arange(len(f)))
    layer = finer[[finer.geometry.name]].assign(mass=mass.to_numpy(dtype=float))
    layer = layer.to_crs(pieces.crs) if layer.crs is not None else layer.set_crs(pieces.crs)
    kinds = set(layer.geom_type.unique())
    if kinds <= {"Point", "MultiPoint"}:
        hits = gpd.sjoin(layer, pieces[["piece", "geometry"]], predicate="within", how="inner")
        per_piece = hits.groupby("piece")["mass"].sum()
    else:
        layer = layer.assign(whole=layer.geometry.area)
        parts = gpd.overlay(
            layer, pieces[["piece", "geometry"]], how="intersection", keep_geom_type=True
        )
        share = np.where(parts["whole"] > 0, parts.geometry.area / parts["whole"], 0.0)
        per_piece = (parts["mass"] * share).groupby(parts["piece"]).sum()
    pieces["mass"] = per_piece.reindex(pieces["piece"]).fillna(0.0).to_numpy()
    empty = pieces.groupby("source")["mass"].transform("sum") <= 0
    notes = []
    if empty.any():
        names = sorted(set(pieces.loc[empty, "source"]))
        notes.append(
            Problem(
                f"{len(names)} district(s) of {source.file} hold no {kind} in the finer layer "
                f"({_listing(names)}); their weights are by area",
                f"add their {kind} to the finer layer for weights by {kind}",
                file=finer_file or source.file,
                severity="warning",
            )
        )
    area_share = pieces["area"] / pieces.groupby("source")["area"].transform("sum")
    pieces["mass"] = np.where(empty, area_share, pieces["mass"])
    pieces["weight_kind"] = np.where(empty, "area", kind)
    return _table(
        pd.DataFrame(pieces.drop(columns="geometry")), "mass", kind, source, target, found, notes
    )

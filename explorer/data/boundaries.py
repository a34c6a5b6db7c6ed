"""Boundary readers: GeoJSON, GeoPackage layers, Shapefiles (zipped, or their parts given
together), GeoParquet, into a GeoDataFrame of polygons in EPSG:4326.

Inputs are only read: a zip is read in place through GDAL's ``/vsizip/``, and the parts of
a Shapefile are put together in memory, never on disk. Geometry repair and coordinate
systems are settled here; matching districts to the panel is :mod:`explorer.data.ids`.
"""

from __future__ import annotations

import io as _io
import warnings
import zipfile
from collections.abc import Sequence
from pathlib import Path, PurePosixPath
from typing import TYPE_CHECKING

import numpy as np

from explorer.data.crs import settle_crs
from explorer.data.files import at_the_edge, check_file, check_size, check_zip, label
from explorer.data.model import DataError, Problem, fail

if TYPE_CHECKING:
    import geopandas as gpd

__all__ = ["SHAPEFILE_PARTS", "BoundarySource", "read_boundaries"]

_POLYGONAL = {"Polygon", "MultiPolygon"}
#: The files of one Shapefile; the first three are required.
SHAPEFILE_PARTS = (".shp", ".shx", ".dbf", ".prj", ".cpg")
_REQUIRED_PARTS = SHAPEFILE_PARTS[:3]
_WHAT = {
    ".geojson": "GeoJSON",
    ".json": "GeoJSON",
    ".gpkg": "GeoPackage",
    ".zip": "zipped Shapefile",
    ".shp": "Shapefile",
}

#: A path, or the parts of one Shapefile as paths or as uploaded (file name, bytes) pairs.
BoundarySource = str | Path | Sequence[str | Path | tuple[str, bytes]]


def read_boundaries(
    source: BoundarySource,
    *,
    layer: str | None = None,
    crs: str | None = None,
    file_label: str | None = None,
) -> gpd.GeoDataFrame:
    """Read district boundaries as a GeoDataFrame in EPSG:4326.

    Parameters
    ----------
    source : path, or sequence of paths or (file name, bytes)
        GeoJSON, GeoPackage (``layer``; with several and none chosen, the first with
        polygons is used and a warning names them all), a zipped Shapefile, GeoParquet, a
        ``.shp`` whose sidecar files sit beside it, or the parts of one Shapefile given
        together (``.shp``, ``.shx``, ``.dbf`` and optionally ``.prj``, ``.cpg``), as
        paths or as uploads, whatever their stems.
    layer : str, optional
        Layer of a GeoPackage, or Shapefile of a zip holding several.
    crs : str, optional
        The coordinate system, where the file names none (or names a wrong one).
    file_label : str, optional
        The name problems give the file.

    Returns
    -------
    GeoDataFrame
        Polygons in EPSG:4326; warnings (repairs, assumed CRS, layer chosen) in
        ``attrs["problems"]``.

    Raises
    ------
    DataError
        For unreadable files, unsafe archives, missing layers or Shapefile parts, points
        or lines where polygons are needed, or a CRS that is missing and cannot be
        assumed; never another exception.
    """
    parts = _as_parts(source)
    name = file_label or (_parts_label(parts) if parts is not None else Path(source).name)
    try:
        if parts is not None:
            return _finish(_read_parts(parts, name), name, crs, [])
        return _read_path(Path(source), name, layer, crs)
    except DataError:
        raise
    except Exception as exc:  # noqa: BLE001 - the edge: nothing else may escape
        raise at_the_edge(name, "boundary file", exc) from None


def _as_parts(source: BoundarySource) -> list | None:
    """The list of parts when ``source`` is several files (or one upload), else None."""
    if isinstance(source, str | Path):
        return None
    if isinstance(source, tuple) and len(source) == 2 and isinstance(source[1], bytes):
        return [source]
    return list(source)


def _part_name(part: str | Path | tuple[str, bytes]) -> str:
    return str(part[0]) if isinstance(part, tuple) else Path(part).name


def _parts_label(parts: list) -> str:
    shp = [_part_name(p) for p in parts if _part_name(p).lower().endswith(".shp")]
    return shp[0] if shp else ", ".join(_part_name(p) for p in parts) or "boundaries"


def _read_parts(parts: list, file: str):
    """The parts of one Shapefile, put together as a zip in memory and read from there."""
    import pyogrio

    if not parts:
        raise fail("no boundary file was given", "give the boundary file", file=file)
    found: dict[str, bytes] = {}
    for part in parts:
        name = _part_name(part)
        suffix = PurePosixPath(name.replace("\\", "/")).suffix.lower()
        if suffix not in SHAPEFILE_PARTS:
            raise fail(
                f"'{name}' is not a part of a Shapefile ({', '.join(SHAPEFILE_PARTS)})",
                "give the Shapefile's parts together, or one GeoJSON, GeoPackage or zip file",
                file=file,
            )
        if suffix in found:
            raise fail(
                f"two files of the kind {suffix} were given; a Shapefile has one of each",
                "give the parts of one Shapefile only",
                file=file,
            )
        found[suffix] = _part_bytes(part, file)
    missing = [s for s in _REQUIRED_PARTS if s not in found]
    if missing:
        raise fail(
            f"the Shapefile lacks its {' and '.join(missing)} file(s): a Shapefile is read from "
            f"its {', '.join(_REQUIRED_PARTS)} files together",
            f"add the {' and '.join(missing)} file(s) (same name as the .shp), or zip all parts",
            file=file,
        )
    archive = _io.BytesIO()
    with zipfile.ZipFile(archive, "w") as bundle:
        for suffix, content in found.items():
            bundle.writestr(f"boundaries{suffix}", content)
    problems: list[Problem] = []
    gdf = _gdal_read(lambda: pyogrio.read_dataframe(archive.getvalue()), file, ".shp", problems)
    gdf.attrs = {"problems": tuple(problems)}
    return gdf


def _part_bytes(part: str | Path | tuple[str, bytes], file: str) -> bytes:
    if isinstance(part, tuple):
        check_size(len(part[1]), file)
        return bytes(part[1])
    path = check_file(part, Path(part).name)
    try:
        return path.read_bytes()
    except OSError as exc:
        raise fail(f"'{path.name}' cannot be read ({exc})", "check the path", file=file) from None


def _read_path(p: Path, file: str, layer: str | None, crs: str | None):
    p = check_file(p, label(p, file))
    problems: list[Problem] = []
    suffix = p.suffix.lower()
    if suffix in (".parquet", ".geoparquet", ".pq"):
        return _finish(_read_geoparquet(p, file), file, crs, problems)
    if suffix == ".shp":
        _sidecars_beside(p, file)
    source = str(p)
    if suffix == ".zip":
        source = _zip_member(p, file, layer, problems)
        layer = None
    elif suffix in (".geojson", ".json"):
        with open(p, "rb") as handle:
            start = handle.read(2048).lstrip(b"\xef\xbb\xbf \t\r\n")
        if not start.startswith(b"{"):
            raise fail(
                "this is not JSON, so not GeoJSON: a GeoJSON file starts with '{'",
                "export the boundaries again as GeoJSON",
                file=file,
            )
    elif suffix == ".gpkg":
        layer = _choose_layer(p, file, layer, problems)
    import pyogrio

    gdf = _gdal_read(lambda: pyogrio.read_dataframe(source, layer=layer), file, suffix, problems)
    return _finish(gdf, file, crs, problems)


def _sidecars_beside(shp: Path, file: str) -> None:
    """A lone .shp is read with its .shx and .dbf beside it; name the one that is missing."""
    missing = [s for s in (".shx", ".dbf") if not shp.with_suffix(s).exists()]
    missing = [s for s in missing if not shp.with_suffix(s.upper()).exists()]
    if missing:
        raise fail(
            f"the Shapefile lacks its {' and '.join(missing)} file(s) beside {shp.name}",
            "give the .shp, .shx and .dbf files together (and the .prj), or zip them",
            file=file,
        )


def _zip_member(p: Path, file: str, layer: str | None, problems: list[Problem]) -> str:
    """The GDAL path of the layer to read inside a zip, after the archive's safety checks."""
    entries = check_zip(p, file)
    shps = [e.filename for e in entries if e.filename.lower().endswith(".shp")]
    if not shps:
        shps = [
            e.filename
            for e in entries
            if e.filename.lower().endswith((".geojson", ".gpkg", ".json"))
        ]
        if not shps:
            raise fail(
                "the zip archive holds no Shapefile (.shp)",
                "zip the .shp together with its .shx, .dbf and .prj",
                file=file,
            )
    if layer:
        pick = [s for s in shps if PurePosixPath(s).stem == layer or s == layer]
        if not pick:
            raise fail(
                f"the archive has no layer {layer!r}; it has: {', '.join(PurePosixPath(s).stem for s in shps)}",
                "choose one of these layers",
                file=file,
            )
        shp = pick[0]
    else:
        shp = shps[0]
        if len(shps) > 1:
            problems.append(
                Problem(
                    f"the archive holds several layers ({', '.join(shps)}); '{shp}' was used",
                    "choose a layer to use another",
                    file=file,
                    severity="warning",
                )
            )
    if shp.lower().endswith(".shp"):
        names = {e.filename.lower() for e in entries}
        stem = shp[:-4].lower()
        for side in (".shx", ".dbf"):
            if stem + side not in names:
                raise fail(
                    f"the Shapefile '{shp}' in the archive lacks its {side} file",
                    f"zip the {side} file together with the .shp (all files of the Shapefile share its name)",
                    file=file,
                )
    return f"/vsizip/{p.resolve()}/{shp}"


def _gdal_read(read, file: str, suffix: str, problems: list[Problem]):
    """Run a pyogrio read; GDAL's own remarks become warnings, its failures a DataError."""
    import pyogrio

    try:
        with warnings.catch_warnings(record=True) as noted:
            warnings.simplefilter("always")
            gdf = read()
    except (
        pyogrio.errors.DataSourceError,
        pyogrio.errors.DataLayerError,
        pyogrio.errors.FieldError,
        pyogrio.errors.GeometryError,
        pyogrio.errors.CRSError,
        ValueError,
        OSError,
        RuntimeError,
    ) as exc:
        raise fail(
            f"the {_WHAT.get(suffix, 'boundary')} file cannot be read ({str(exc).splitlines()[0][:300]})",
            "export the boundaries again as GeoJSON, GeoPackage or a zipped Shapefile",
            file=file,
        ) from None
    # GDAL's own remarks (unclosed rings, laundered names) go to the planner
    for remark in dict.fromkeys(str(w.message).splitlines()[0] for w in noted):
        problems.append(Problem(f"the reader noted: {remark}", "", file=file, severity="warning"))
    return gdf


def _finish(gdf, file: str, crs: str | None, problems: list[Problem]):
    """Polygons only, empty ones dropped, invalid ones repaired, in EPSG:4326."""
    import geopandas as gpd
    import shapely

    problems = [*gdf.attrs.get("problems", ()), *problems] if hasattr(gdf, "attrs") else problems
    if not isinstance(gdf, gpd.GeoDataFrame) or "geometry" not in gdf.columns:
        raise fail(
            "the file has no geometry column",
            "export the boundaries with their polygons",
            file=file,
        )
    empty = gdf.geometry.isna().to_numpy() | gdf.geometry.is_empty.to_numpy()
    if empty.all():
        raise fail(
            "the boundary file has no geometries",
            "export the boundaries with their polygons",
            file=file,
        )
    if empty.any():
        problems.append(
            Problem(
                f"{empty.sum()} feature(s) have no geometry and were ignored",
                "",
                file=file,
                severity="warning",
            )
        )
        gdf = gdf[~empty]
    types = set(gdf.geom_type.unique())
    if not types <= _POLYGONAL:
        other = sorted(types - _POLYGONAL)
        raise fail(
            f"the boundaries hold {', '.join(other)} geometries, but district boundaries must be polygons",
            "export the district areas (polygons), not their centres or borders",
            file=file,
        )
    gdf = settle_crs(gdf, file, crs, problems)
    invalid = ~shapely.is_valid(gdf.geometry.to_numpy())
    if invalid.any():
        geoms = gdf.geometry.to_numpy().copy()
        # keep the polygonal part of repairs that come back as collections
        repaired = [_polygonal(g) for g in shapely.make_valid(geoms[invalid])]
        geoms[invalid] = np.array(repaired, dtype=object)
        gdf = gdf.set_geometry(gpd.GeoSeries(geoms, index=gdf.index, crs=gdf.crs))
        problems.append(
            Problem(
                f"{invalid.sum()} invalid geometr{'y was' if invalid.sum() == 1 else 'ies were'} repaired (shapely make_valid)",
                "check those districts' outlines in the source",
                file=file,
                severity="warning",
            )
        )
    if gdf.crs is not None and not gdf.crs.equals("EPSG:4326"):
        try:
            gdf = gdf.to_crs("EPSG:4326")
        except Exception as exc:  # pyproj raises its own types
            raise fail(
                f"the boundaries cannot be reprojected to longitude/latitude ({exc})",
                "give the right coordinate system",
                file=file,
            ) from None
    gdf = gdf.reset_index(drop=True)
    gdf.attrs = {"problems": tuple(problems)}
    return gdf


def _polygonal(geom):
    import shapely

    if geom is None or geom.geom_type in _POLYGONAL:
        return geom
    parts = [g for g in shapely.get_parts(geom) if g.geom_type in _POLYGONAL]
    return shapely.union_all(parts) if parts else geom


def _choose_layer(p: Path, file: str, layer: str | None, problems: list[Problem]) -> str:
    import pyogrio

    try:
        layers = pyogrio.list_layers(p)
    except (pyogrio.errors.DataSourceError, OSError, ValueError, RuntimeError) as exc:
        raise fail(
            f"the GeoPackage cannot be read ({str(exc).splitlines()[0][:300]})",
            "export the boundaries again",
            file=file,
        ) from None
    names = [str(n) for n, _ in layers]
    if layer is not None:
        if layer not in names:
            raise fail(
                f"the GeoPackage has no layer {layer!r}; its layers are: {', '.join(names)}",
                "choose one of these layers",
                file=file,
            )
        return layer
    polygonal = [str(n) for n, t in layers if t and "POLYGON" in str(t).upper()]
    if not polygonal:
        raise fail(
            f"no layer of the GeoPackage holds polygons (layers: {', '.join(names)})",
            "export the district areas as polygons",
            file=file,
        )
    if len(names) > 1:
        problems.append(
            Problem(
                f"the GeoPackage has several layers ({', '.join(names)}); '{polygonal[0]}' was used",
                "choose a layer to use another",
                file=file,
                severity="warning",
            )
        )
    return polygonal[0]


def _read_geoparquet(p: Path, file: str):
    import geopandas as gpd
    import pyarrow as pa

    try:
        return gpd.read_parquet(p)
    except (ValueError, pa.ArrowException, OSError, TypeError, KeyError) as exc:
        raise fail(
            f"the GeoParquet file cannot be read ({str(exc).splitlines()[0][:300]})",
            "export the boundaries as GeoParquet with a geometry column, or as GeoJSON",
            file=file,
        ) from None

"""Coordinate systems of boundary files: the one given, the one the file declares, or, for a
file that names none, the likely ones proposed from the range of its coordinates.

A range only narrows the choice, it never proves one: coordinates inside
longitude/latitude range may still be metres of a small local grid, so that case is
proposed with a warning, and a file in metres is never taken as longitude/latitude.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from explorer.data.model import Problem, fail

if TYPE_CHECKING:
    import geopandas as gpd

__all__ = ["CrsCandidate", "propose_crs", "settle_crs"]

# Half the equator's length in Web Mercator metres (EPSG:3857's projected bounds).
_MERCATOR_HALF = 20_037_508.34
_EPS = 1e-6  # rounding at the antimeridian and the poles


@dataclass(frozen=True)
class CrsCandidate:
    """A coordinate system a file's coordinates could be in.

    Attributes
    ----------
    code : str
        What to give as the coordinate system (``"EPSG:4326"``); for a family of zones the
        pattern (``"EPSG:326zz"``), which the planner completes.
    label : str
        Its name in plain words.
    reason : str
        Why the coordinates suggest it, and what to check.
    """

    code: str
    label: str
    reason: str


def propose_crs(bounds: tuple[float, float, float, float]) -> list[CrsCandidate]:
    """Likely coordinate systems for coordinates spanning ``bounds``, most likely first.

    Parameters
    ----------
    bounds : (minx, miny, maxx, maxy)
        The total bounds of the file's geometries, in the file's own units.

    Returns
    -------
    list of CrsCandidate
        Empty when no common system fits the range.

    Notes
    -----
    Ranges of common practice: longitude/latitude lies within +-180 and +-90 degrees;
    UTM eastings run from about 166,000 to 834,000 m and northings up to 10,000,000 m in
    each zone (north: EPSG:326zz, south: EPSG:327zz); Web Mercator (EPSG:3857) within
    +-20,037,508 m; the European LAEA grid (EPSG:3035) has false origin 4,321,000 m east,
    3,210,000 m north.

    References
    ----------
    Snyder, J. P. (1987). *Map Projections: A Working Manual*. U.S. Geological Survey
    Professional Paper 1395 (UTM zones, false eastings and northings, pp. 57-64).
    """
    minx, miny, maxx, maxy = (float(b) for b in bounds)
    out: list[CrsCandidate] = []
    if -180 - _EPS <= minx and maxx <= 180 + _EPS and -90 - _EPS <= miny and maxy <= 90 + _EPS:
        out.append(
            CrsCandidate(
                "EPSG:4326",
                "longitude/latitude (WGS 84)",
                "the coordinates lie within longitude/latitude range; small local grids in "
                "metres can too, so check that the map shows the districts where they are",
            )
        )
    if 100_000 <= minx and maxx <= 900_000 and -_EPS <= miny and maxy <= 10_000_000:
        out.append(
            CrsCandidate(
                "EPSG:326zz",
                "UTM, northern hemisphere (zone zz)",
                "eastings between 100,000 and 900,000 m are those of a UTM zone; give the zone",
            )
        )
        out.append(
            CrsCandidate(
                "EPSG:327zz",
                "UTM, southern hemisphere (zone zz)",
                "the same eastings with northings counted from 10,000,000 m at the equator",
            )
        )
    if 1_000_000 <= minx and maxx <= 8_000_000 and 500_000 <= miny and maxy <= 6_000_000:
        out.append(
            CrsCandidate(
                "EPSG:3035",
                "ETRS89 / LAEA Europe",
                "metres around the grid's false origin (4,321,000 E, 3,210,000 N)",
            )
        )
    inside_mercator = all(abs(v) <= _MERCATOR_HALF for v in (minx, miny, maxx, maxy))
    if inside_mercator and max(abs(minx), abs(maxx), abs(miny), abs(maxy)) > 180:
        out.append(
            CrsCandidate(
                "EPSG:3857",
                "Web Mercator",
                "metres within the Web Mercator square (+-20,037,508 m)",
            )
        )
    return out


def settle_crs(
    gdf: gpd.GeoDataFrame, file: str, crs: str | None, problems: list[Problem]
) -> gpd.GeoDataFrame:
    """``gdf`` with its coordinate system set: the one given, else declared, else lon/lat.

    A file with no CRS whose coordinates lie in longitude/latitude range is taken as
    EPSG:4326 with a warning that they may not be; any other file without one is refused
    with the likely candidates from :func:`propose_crs` named.

    Raises
    ------
    DataError
        For an unknown CRS, or a file in metres that names none and was given none.
    """
    from pyproj import CRS
    from pyproj.exceptions import CRSError

    if crs is not None:
        try:
            given = CRS.from_user_input(crs)
        except CRSError:
            raise fail(
                f"the coordinate system {crs!r} is not recognised",
                "give it as an EPSG code such as EPSG:3035",
                file=file,
            ) from None
        if gdf.crs is not None and not gdf.crs.equals(given):
            problems.append(
                Problem(
                    f"the file declares {gdf.crs.to_string()}, but {given.to_string()} was given and is used",
                    "",
                    file=file,
                    severity="warning",
                )
            )
        return gdf.set_crs(given, allow_override=True)
    if gdf.crs is not None:
        return gdf
    bounds = tuple(gdf.total_bounds)
    candidates = propose_crs(bounds)
    if candidates and candidates[0].code == "EPSG:4326":
        problems.append(
            Problem(
                "the file declares no CRS (coordinate system); its coordinates lie in "
                "longitude/latitude range, so EPSG:4326 was assumed, but they may not be "
                "longitude/latitude",
                "if the map puts the districts in the wrong place, choose the file's "
                "coordinate system",
                file=file,
                severity="warning",
            )
        )
        return gdf.set_crs("EPSG:4326")
    minx, miny, maxx, maxy = bounds
    likely = "; ".join(f"{c.code} ({c.label})" for c in candidates) or "none of the common ones"
    raise fail(
        f"the file declares no CRS (coordinate system) and its coordinates ({minx:.0f} to {maxx:.0f}, "
        f"{miny:.0f} to {maxy:.0f}) are not longitude/latitude; likely systems: {likely}",
        "choose the coordinate system the file was made in (an EPSG code such as EPSG:3035), "
        "or add its .prj file",
        file=file,
    )

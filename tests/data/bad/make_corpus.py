"""Write the bad-input corpus: small files that each break one reading or validation rule.

Run ``python tests/data/bad/make_corpus.py [folder]`` (default: this folder). The output
is byte-for-byte reproducible: random bytes come from a fixed seed, zip entries carry a
fixed date, and the date in Shapefile .dbf headers is fixed. Every file is invented.
"""

from __future__ import annotations

import struct
import sys
import tempfile
import zipfile
from pathlib import Path

import numpy as np

SEED = 20240611
DATE = (2020, 1, 1, 0, 0, 0)
HERE = Path(__file__).resolve().parent


def _zip(path: Path, entries: dict[str, bytes]) -> None:
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for name, data in entries.items():
            info = zipfile.ZipInfo(name, date_time=DATE)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o644 << 16
            archive.writestr(info, data)


def _declare_huge(path: Path, size: int = 0xF0000000) -> None:
    """Rewrite the uncompressed sizes in the local and central headers (a tiny file that
    claims about 4 GB, as a zip bomb would)."""
    raw = bytearray(path.read_bytes())
    local = raw.find(b"PK\x03\x04")
    raw[local + 22 : local + 26] = struct.pack("<I", size)
    central = raw.find(b"PK\x01\x02")
    raw[central + 24 : central + 28] = struct.pack("<I", size)
    path.write_bytes(bytes(raw))


def _shapefile_parts(gdf) -> dict[str, bytes]:
    with tempfile.TemporaryDirectory() as tmp:
        target = Path(tmp) / "districts.shp"
        gdf.to_file(target, driver="ESRI Shapefile")
        parts = {}
        for f in sorted(Path(tmp).iterdir()):
            data = bytearray(f.read_bytes())
            if f.suffix == ".dbf":
                data[1:4] = bytes([100, 1, 1])  # last-update date fixed to 2000-01-01
            parts[f.suffix] = bytes(data)
        return parts


def _squares(crs, offset=(0.0, 0.0), ids=("K01", "K02")):
    import geopandas as gpd
    from shapely.geometry import box

    dx, dy = offset
    step = 1.0 if crs == 4326 else 10_000.0
    return gpd.GeoDataFrame(
        {"region": list(ids)},
        geometry=[box(dx + i * step, dy, dx + (i + 1) * step, dy + step) for i in range(len(ids))],
        crs=crs,
    )


def _feature_collection(features: list[str]) -> str:
    return '{"type": "FeatureCollection", "features": [' + ", ".join(features) + "]}\n"


def _feature(region: str, geometry: str) -> str:
    return f'{{"type": "Feature", "properties": {{"region": "{region}"}}, "geometry": {geometry}}}'


def _deciles_header() -> str:
    return (
        "region,year," + ",".join(f"share_{k}" for k in range(1, 11)) + ",population,mean_income\n"
    )


def make(folder: Path) -> list[Path]:
    """Write every corpus file into ``folder``; return their paths."""
    import pandas as pd

    rng = np.random.default_rng(SEED)
    folder.mkdir(parents=True, exist_ok=True)
    files: dict[str, bytes] = {}

    def text(name: str, body: str, encoding: str = "utf-8") -> None:
        files[name] = body.encode(encoding)

    # --- tables ----------------------------------------------------------------------
    text("empty.csv", "")
    text("whitespace_only.csv", "\n   \n\t\n")
    text("header_only.csv", "region,year,mean_income,population\n")
    files["binary_junk.csv"] = b"\x00\x01" + rng.integers(0, 256, 200, dtype=np.uint8).tobytes()
    text("duplicated_columns.csv", "region,year,income,income\nK01,2020,100,200\n")
    text(
        "shares_above_one.csv",
        _deciles_header() + "K01,2020," + ",".join(["0.13"] * 10) + ",1200,900\n",
    )
    text(
        "nan_and_inf.csv",
        "region,year,income,weight\nK01,2020,NaN,1\nK01,2020,500,1\nK02,2020,inf,1\nK02,2020,300,1\n",
    )
    text("negative_incomes.csv", "region,year,income,weight\nK01,2020,-250,1\nK01,2020,400,2\n")
    text("text_in_numbers.csv", "region,year,mean_income,population\nK01,2020,about 300,1200\n")
    text("year_as_text.csv", "region,year,mean_income\nK01,FY2020,300\nK02,FY2020,280\n")
    text("year_fraction.csv", "region,year,mean_income\nK01,2020.5,300\nK02,2020.5,280\n")
    text("missing_region_column.csv", "DistrictCode,year,mean_income\nK01,2020,300\n")
    text("unknown_kind.csv", "region,year,county\nK01,2020,North\n")
    text("ragged_rows.csv", "region,year,mean_income\nK01,2020,300\nK02,2020,280,17,extra\n")
    text(
        "latin1_negative_share.csv",
        "region;year;pop_share;income_share\n"
        + "".join(f"Côte-Ombre;2020;0,5;{v}\n" for v in ("-0,1", "1,1")),
        encoding="latin-1",
    )
    text(
        "non_convex.csv",
        "region,year,pop_share,income_share\n"
        + "".join(f"K01,2020,0.25,{v}\n" for v in ("0.10", "0.40", "0.20", "0.30")),
    )
    text("duplicate_region_years.csv", "region,year,mean_income\nK01,2020,300\nK01,2020,310\n")
    text(
        "population_varies.csv",
        "region,year,pop_share,income_share,population\n"
        + "".join(f"K01,2020,0.5,{s},{p}\n" for s, p in (("0.3", 1000), ("0.7", 1200))),
    )
    text("share_columns_gap.csv", "region,year,share_1,share_2,share_4\nK01,2020,0.2,0.3,0.5\n")
    text("csv_named_xlsx.xlsx", "region,year,mean_income\nK01,2020,300\n")
    text("old_excel.xls", "region,year,mean_income\nK01,2020,300\n")
    with tempfile.TemporaryDirectory() as tmp:
        _zip(
            Path(tmp) / "w.zip", {"[Content_Types].xml": b"<Types/>", "junk.txt": b"not a workbook"}
        )
        files["zip_named_xlsx.xlsx"] = (Path(tmp) / "w.zip").read_bytes()
        pd.DataFrame({"district": ["K01"], "yr": [2020], "income": [300.0]}).to_parquet(
            Path(tmp) / "p.parquet", index=False
        )
        files["wrong_columns.parquet"] = (Path(tmp) / "p.parquet").read_bytes()
    text("text_named_parquet.parquet", "region,year,mean_income\nK01,2020,300\n")
    files["truncated.parquet"] = b"PAR1" + rng.integers(0, 256, 64, dtype=np.uint8).tobytes()

    # --- boundaries --------------------------------------------------------------------
    square = '{"type": "Polygon", "coordinates": [[[-140, -40], [-139, -40], [-139, -39], [-140, -39], [-140, -40]]]}'
    text("not_json.geojson", "region,geometry\nK01,POLYGON((0 0,1 0,1 1,0 0))\n")
    text("truncated.geojson", '{"type": "FeatureCollection", "features": [{"type": "Feat')
    text(
        "points.geojson",
        _feature_collection([_feature("K01", '{"type": "Point", "coordinates": [-140, -40]}')]),
    )
    text(
        "lines.geojson",
        _feature_collection(
            [_feature("K01", '{"type": "LineString", "coordinates": [[-140, -40], [-139, -39]]}')]
        ),
    )
    text("no_features.geojson", _feature_collection([]))
    text("ids_do_not_match.geojson", _feature_collection([_feature("ZZ9", square)]))
    text("not_a_zip.zip", "this is text, not an archive\n")

    shp = _shapefile_parts(_squares(4326, (-140.0, -40.0)))
    with tempfile.TemporaryDirectory() as tmp:
        t = Path(tmp)

        def zipped(name: str, entries: dict[str, bytes]) -> None:
            _zip(t / name, entries)
            files[name] = (t / name).read_bytes()

        zipped(
            "shapefile_without_dbf.zip", {f"districts{s}": shp[s] for s in (".shp", ".shx", ".prj")}
        )
        zipped("no_shapefile.zip", {"readme.txt": b"boundaries to follow\n"})
        zipped(
            "entry_escapes_folder.zip",
            {"../districts.shp": shp[".shp"], "../districts.shx": shp[".shx"]},
        )
        zipped("absolute_entry.zip", {"/tmp/districts.shp": shp[".shp"]})
        zipped("declares_huge_size.zip", {"districts.shp": shp[".shp"]})
        _declare_huge(t / "declares_huge_size.zip")
        files["declares_huge_size.zip"] = (t / "declares_huge_size.zip").read_bytes()
        projected = _shapefile_parts(_squares(3035, (4_000_000.0, 3_000_000.0)))
        zipped(
            "projected_without_crs.zip",
            {f"districts{s}": projected[s] for s in (".shp", ".shx", ".dbf")},
        )

    paths = []
    for name, data in sorted(files.items()):
        path = folder / name
        path.write_bytes(data)
        paths.append(path)
    return paths


if __name__ == "__main__":
    out = Path(sys.argv[1]) if len(sys.argv) > 1 else HERE
    for p in make(out):
        print(p.name)

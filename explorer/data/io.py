"""Readers: tables (CSV, Parquet, Excel) and boundaries (GeoJSON, GeoPackage, zipped
Shapefile, GeoParquet) into DataFrames, column maps, and ``load_panel()``.

This is the edge of the program: every failure of the underlying libraries is caught here
and turned into a :class:`~explorer.data.model.DataError` naming the file and what to do.
Inputs are only read: nothing is extracted, written or evaluated. Checking the content
is the job of :func:`explorer.data.validate.validate`; readers pass their own warnings to it in
``attrs["problems"]``.
"""

from __future__ import annotations

import csv
import dataclasses
import io as _io
import re
import warnings
import zipfile
from collections.abc import Mapping
from pathlib import Path, PurePosixPath
from typing import Any

import numpy as np
import pandas as pd

from explorer import resources
from explorer.data.model import DataError, Panel, Problem, fail
from explorer.data.validate import validate

MAX_FILE_BYTES = 200 * 1024 * 1024  # matches server.maxUploadSize in explorer.serving.SETTINGS
MAX_COLUMNS = 1_000  # far more than any panel needs; wider files are refused early
MAX_ZIP_ENTRIES = 1_000
MAX_ZIP_UNCOMPRESSED = 1_000_000_000  # declared total, 1 GB

DEMO_DIR = resources.demo_dir()
DEMO_FILES = {"brackets": "deciles.csv", "units": "households.csv", "means": "means.csv"}
DEMO_BOUNDARIES = "districts.geojson"

_TABLE_SUFFIXES = {".csv", ".txt", ".tsv", ".parquet", ".pq", ".xlsx", ".xlsm"}
_DELIMITERS = (",", ";", "\t", "|")
# what statistical tables print for "no value"
_MISSING = {"", "na", "n/a", "nan", "null", "none", ".", "..", "...", ":", "-", "–"}
_NUMBER = re.compile(r"^[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?$")
_COMMA_DECIMAL = re.compile(r"^[+-]?\d*,\d+$")
_POINT_DECIMAL = re.compile(r"^[+-]?\d*\.\d+$")
_THOUSANDS_POINT = re.compile(r"^[+-]?\d{1,3}(\.\d{3})+(,\d+)?$")
_LEADING_ZERO = re.compile(r"^0\d")


def _label(path: Path, file_label: str | None) -> str:
    return file_label or path.name


def _check_file(path: str | Path, file: str) -> Path:
    path = Path(path)
    try:
        if not path.exists():
            raise fail(f"the file {str(path)!r} does not exist", "check the path", file=file)
        if not path.is_file():
            raise fail("this is a folder, not a file", "give the path of a file", file=file)
        size = path.stat().st_size
    except OSError as exc:
        raise fail(
            f"the file cannot be opened ({exc.strerror or exc})",
            "check the path and permissions",
            file=file,
        ) from None
    if size > MAX_FILE_BYTES:
        raise fail(
            f"the file is larger than the limit ({size / 1e6:.0f} MB > {MAX_FILE_BYTES / 1e6:.0f} MB)",
            "split it (e.g. by year) or drop columns the panel does not need",
            file=file,
        )
    return path


def check_zip(path: Path, file: str) -> list[zipfile.ZipInfo]:
    """Entries of a zip archive after the safety checks, without extracting anything.

    Rejects more than :data:`MAX_ZIP_ENTRIES` entries, a declared total uncompressed size
    above :data:`MAX_ZIP_UNCOMPRESSED`, and entry names that escape the archive's folder
    (absolute paths, drive letters, ``..``).
    """
    try:
        with zipfile.ZipFile(path) as archive:
            entries = archive.infolist()
    except (zipfile.BadZipFile, zipfile.LargeZipFile, OSError, ValueError, EOFError) as exc:
        raise fail(
            f"this is not a readable zip archive ({exc})", "create the archive again", file=file
        ) from None
    if len(entries) > MAX_ZIP_ENTRIES:
        raise fail(
            f"the zip archive has too many entries ({len(entries)} > {MAX_ZIP_ENTRIES})",
            "put only the files that belong to the data set in the archive",
            file=file,
        )
    declared = sum(e.file_size for e in entries)
    if declared > MAX_ZIP_UNCOMPRESSED:
        raise fail(
            f"the zip archive declares {declared / 1e9:.1f} GB uncompressed, above the limit of "
            f"{MAX_ZIP_UNCOMPRESSED / 1e9:.1f} GB",
            "this archive is refused for safety; send the files themselves or a smaller archive",
            file=file,
        )
    for e in entries:
        name = e.filename.replace("\\", "/")
        parts = PurePosixPath(name).parts
        if name.startswith("/") or re.match(r"^[A-Za-z]:", name) or ".." in parts:
            raise fail(
                f"the zip entry {e.filename!r} escapes the archive's folder (absolute path or '..')",
                "this archive is refused for safety; create it again from the folder itself",
                file=file,
            )
    return entries


# --------------------------------------------------------------------------------------
# Tables
# --------------------------------------------------------------------------------------


def _sniff(head: bytes) -> str:
    """What the first bytes say a file is, whatever its name says."""
    if head.startswith(b"PAR1"):
        return "parquet"
    if head.startswith(b"PK\x03\x04"):
        return "excel"
    return "csv"


def _at_the_edge(file: str, what: str, exc: BaseException) -> DataError:
    """Any failure of a library below us, as a DataError naming the file."""
    detail = str(exc).splitlines()[0][:300] if str(exc) else ""
    return fail(
        f"the {what} cannot be read ({type(exc).__name__}{': ' + detail if detail else ''})",
        "export it again in one of the supported formats",
        file=file,
    )


def read_table(
    path: str | Path, *, sheet: str | int | None = None, file_label: str | None = None
) -> pd.DataFrame:
    """Read a CSV, Parquet or Excel (.xlsx) table as it is, with no checks of content.

    CSV: UTF-8 (with or without a byte-order mark), else latin-1; the delimiter among
    ``, ; tab |`` and a decimal comma are detected. Columns whose cells are all numbers
    (or empty) become numbers unless they look like codes with leading zeros; cells of
    a column that mixes numbers and text keep the text, for ``validate`` to name.
    Excel: the named ``sheet`` (name or 0-based position), else the first. Column names
    are stripped; duplicated names are kept as they are. The index is the file line
    minus 2 (the header is line 1).

    Raises
    ------
    DataError
        For a missing, oversized, empty, binary or unreadable file, or a missing sheet;
        never another exception.
    """
    try:
        return _read_table(path, sheet=sheet, file_label=file_label)
    except DataError:
        raise
    except Exception as exc:  # noqa: BLE001 - the edge: nothing else may escape
        raise _at_the_edge(file_label or Path(path).name, "table", exc) from None


def _read_table(
    path: str | Path, *, sheet: str | int | None = None, file_label: str | None = None
) -> pd.DataFrame:
    """The reader behind the public function of the same name (see there)."""
    p = Path(path)
    file = _label(p, file_label)
    p = _check_file(p, file)
    suffix = p.suffix.lower()
    kind = {".parquet": "parquet", ".pq": "parquet", ".xlsx": "excel", ".xlsm": "excel"}.get(
        suffix, "csv"
    )
    if suffix == ".xls":
        raise fail(
            "old-style .xls workbooks are not read", "save the sheet as .xlsx or .csv", file=file
        )
    try:
        with open(p, "rb") as handle:
            head = handle.read(8)
    except OSError as exc:
        raise fail(
            f"the file cannot be opened ({exc})", "check the path and permissions", file=file
        ) from None
    if not head:
        raise fail(
            "the file is empty: it has no header and no rows", "export the table again", file=file
        )
    sniffed = _sniff(head)
    if kind == "excel" and sniffed != "excel":
        looks = "text (perhaps a CSV file)" if _is_text(p) else "not an Excel workbook"
        raise fail(
            f"this is not an Excel .xlsx workbook: its content is {looks}",
            "open it in a spreadsheet and save as .xlsx, or rename it to .csv if it is CSV",
            file=file,
        )
    if kind == "parquet" and sniffed != "parquet":
        raise fail(
            "this is not a Parquet file (it lacks the Parquet signature)",
            "export the table again as Parquet or CSV",
            file=file,
        )
    kind = sniffed
    if kind == "parquet":
        frame = _read_parquet(p, file)
    elif kind == "excel":
        frame = _read_excel(p, file, sheet)
    else:
        frame = _read_csv(p, file)
    frame.columns = [str(c).strip() for c in frame.columns]
    return frame


def _is_text(path: Path) -> bool:
    with open(path, "rb") as handle:
        chunk = handle.read(4096)
    return b"\x00" not in chunk and not chunk.startswith(b"PK")


def _decode(raw: bytes, file: str) -> str:
    if b"\x00" in raw[:65536]:
        raise fail(
            "this is not a text table: the file holds binary data",
            "export the table as CSV (comma- or semicolon-separated text), Excel .xlsx or Parquet",
            file=file,
        )
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        # latin-1 maps every byte, so this cannot fail; older office exports use it
        return raw.decode("latin-1")


def _pick_delimiter(lines: list[str]) -> str:
    best, best_score = ",", (-1, -1)
    for d in _DELIMITERS:
        try:
            counts = [len(row) for row in csv.reader(lines, delimiter=d)]
        except csv.Error:
            continue
        if not counts or counts[0] < 2:
            continue
        consistent = sum(c == counts[0] for c in counts)
        score = (consistent, counts[0])
        if score > best_score:
            best, best_score = d, score
    return best


def _decimal_style(cells: pd.DataFrame, delimiter: str) -> tuple[str, str | None]:
    """('.', None) or (',', '.' or None) from the number-like cells."""
    if delimiter == ",":
        return ".", None
    flat = pd.Series(cells.to_numpy().ravel()).astype(str).str.strip()
    comma = flat.str.match(_COMMA_DECIMAL).sum()
    point = flat.str.match(_POINT_DECIMAL).sum()
    if comma > point:
        thousands = "." if flat.str.match(_THOUSANDS_POINT).any() else None
        return ",", thousands
    return ".", None


def _type_column(values: pd.Series, decimal: str, thousands: str | None) -> pd.Series:
    """Numbers where every filled cell is a number; otherwise floats next to text.

    A column that mixes numbers and text keeps the text cells as they are, so that
    ``validate`` can name the line and the value.
    """
    text = values.astype("str").str.strip()
    missing = text.isna() | text.str.lower().isin(_MISSING)
    filled = text[~missing]
    if filled.empty:
        return pd.Series(np.nan, index=values.index, dtype=float)
    if filled.str.match(_LEADING_ZERO).any():
        return pd.Series(text.where(~missing), dtype=object)  # codes such as 0042 stay text
    norm = filled
    if thousands:
        norm = norm.str.replace(thousands, "", regex=False)
    if decimal == ",":
        norm = norm.str.replace(",", ".", regex=False)
    parsed = pd.to_numeric(norm, errors="coerce")
    ok = parsed.notna().to_numpy()
    if ok.all():
        if not missing.any():
            return pd.Series(parsed.to_numpy(), index=values.index)
        out = pd.Series(np.nan, index=values.index, dtype=float)
        out[filled.index] = parsed.to_numpy(dtype=float)
        return out
    out = pd.Series(text.where(~missing).to_numpy(dtype=object), index=values.index, dtype=object)
    if ok.any():
        out[filled.index[ok]] = parsed.to_numpy(dtype=float)[ok]
    return out


def _frame_from_rows(
    rows: pd.DataFrame, file: str, decimal: str = ".", thousands: str | None = None
) -> pd.DataFrame:
    """First row = header; later rows typed; index = file line - 2; empty lines dropped."""
    if rows.shape[0] == 0:
        raise fail(
            "the file is empty: it has no header and no rows", "export the table again", file=file
        )
    header = [
        ("" if h is None or (isinstance(h, float) and np.isnan(h)) else str(h)).strip()
        for h in rows.iloc[0].tolist()
    ]
    if len(header) > MAX_COLUMNS:
        raise fail(
            f"the table has {len(header):,} columns, more than the {MAX_COLUMNS:,} a panel "
            "can have (is this really a table? a boundary file given as the panel, say)",
            "give the panel as a table of region, year and a few value columns",
            file=file,
        )
    # One object array, sliced per column: per-column access on a wide frame of text
    # columns costs time in the square of the column count.
    cells = rows.iloc[1:].to_numpy(dtype=object)
    text = np.where(pd.isna(cells), "", cells).astype(str)
    filled = np.char.strip(text) != ""
    keep = filled.any(axis=1)
    lines = np.arange(len(text))[keep]  # line - 2
    # trailing columns that are empty and unnamed (a stray delimiter) are noise
    while header and header[-1] == "" and not filled[:, len(header) - 1].any():
        header.pop()
    text = text[keep]
    cols = {
        i: _type_column(pd.Series(text[:, i], index=lines, dtype=object), decimal, thousands)
        for i in range(len(header))
    }
    frame = pd.DataFrame(cols, index=lines)
    frame.columns = [h or f"unnamed_{i + 1}" for i, h in enumerate(header)]
    return frame


def _read_csv(path: Path, file: str) -> pd.DataFrame:
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise fail(
            f"the file cannot be read ({exc})", "check the path and permissions", file=file
        ) from None
    text = _decode(raw, file)
    if not text.strip():
        raise fail(
            "the file is empty: it has no header and no rows", "export the table again", file=file
        )
    lines = [ln for ln in text.splitlines()[:50] if ln.strip()]
    delimiter = _pick_delimiter(lines)
    try:
        rows = pd.read_csv(
            _io.StringIO(text),
            sep=delimiter,
            header=None,
            dtype=str,
            keep_default_na=False,
            na_filter=False,
            skip_blank_lines=False,
            engine="c",
        )
    except pd.errors.EmptyDataError:
        raise fail(
            "the file is empty: it has no header and no rows", "export the table again", file=file
        ) from None
    except (pd.errors.ParserError, ValueError, csv.Error) as exc:
        m = re.search(r"line (\d+), saw (\d+)", str(exc))
        row = int(m.group(1)) if m else None
        detail = f"line {row} has {m.group(2)} fields, more than the header" if m else str(exc)
        raise fail(
            f"the table cannot be parsed: {detail}",
            "every line needs the same number of fields as the header; quote text that contains the delimiter",
            file=file,
            row=row,
        ) from None
    # the header row decides the width; pandas pads short lines with empty cells
    sample = rows.iloc[1:200]
    decimal, thousands = _decimal_style(sample, delimiter)
    return _frame_from_rows(rows, file, decimal, thousands)


def _read_parquet(path: Path, file: str) -> pd.DataFrame:
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        table = pq.read_table(path)
        frame = table.to_pandas(ignore_metadata=True)  # no pandas metadata is trusted
    except (pa.ArrowException, OSError, ValueError, TypeError) as exc:
        raise fail(
            f"the Parquet file cannot be read ({exc})",
            "export the table again as Parquet or CSV",
            file=file,
        ) from None
    frame = frame.reset_index(drop=True)
    for c in frame.columns:
        if frame[c].dtype == object or pd.api.types.is_string_dtype(frame[c].dtype):
            frame[c] = _type_column(frame[c], ".", None)
    return frame


def _cell_text(v: Any) -> str | None:
    if v is None or isinstance(v, str):
        return v
    if isinstance(v, float):
        return repr(v)
    return str(v)


def _read_excel(path: Path, file: str, sheet: str | int | None) -> pd.DataFrame:
    import openpyxl

    check_zip(path, file)
    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many types for damaged workbooks
        raise fail(
            f"the Excel workbook cannot be read ({type(exc).__name__}: {exc})",
            "open it in a spreadsheet and save it again as .xlsx",
            file=file,
        ) from None
    try:
        names = book.sheetnames
        if sheet is None:
            chosen = names[0]
        elif isinstance(sheet, int) or (
            isinstance(sheet, str) and sheet.isdigit() and sheet not in names
        ):
            i = int(sheet)
            if not 0 <= i < len(names):
                raise fail(
                    f"the workbook has no sheet number {i}; its sheets are: {', '.join(names)}",
                    "choose one of these sheets",
                    file=file,
                )
            chosen = names[i]
        elif sheet in names:
            chosen = sheet
        else:
            raise fail(
                f"the workbook has no sheet {sheet!r}; its sheets are: {', '.join(names)}",
                "choose one of these sheets",
                file=file,
            )
        try:
            rows = [list(r) for r in book[chosen].iter_rows(values_only=True)]
        except Exception as exc:
            raise fail(
                f"the sheet {chosen!r} cannot be read ({exc})",
                "save the workbook again as .xlsx",
                file=file,
            ) from None
    finally:
        book.close()
    if not rows or all(all(v is None for v in r) for r in rows):
        raise fail(
            f"the sheet {chosen!r} is empty: it has no header and no rows",
            "choose the sheet that holds the table",
            file=file,
        )
    width = max(len(r) for r in rows)
    grid = pd.DataFrame([r + [None] * (width - len(r)) for r in rows], dtype=object)
    # cells as text, so one typing rule serves CSV and Excel alike
    grid = grid.map(_cell_text)
    return _frame_from_rows(grid, file)


# --------------------------------------------------------------------------------------
# Column maps
# --------------------------------------------------------------------------------------


def parse_column_map(text: str) -> dict[str, str]:
    """``"region=DistrictCode,year=Yr"`` -> ``{"region": "DistrictCode", "year": "Yr"}``.

    Targets (left) are our names, sources (right) the file's.
    """
    mapping: dict[str, str] = {}
    for part in (text or "").split(","):
        if not part.strip():
            continue
        if "=" not in part:
            raise DataError(
                Problem(
                    f"the column map entry {part.strip()!r} has no '='",
                    "write entries as ours=theirs, e.g. region=DistrictCode",
                )
            )
        target, source = (s.strip() for s in part.split("=", 1))
        if not target or not source:
            raise DataError(
                Problem(
                    f"the column map entry {part.strip()!r} is incomplete",
                    "write entries as ours=theirs, e.g. region=DistrictCode",
                )
            )
        if target in mapping:
            raise DataError(
                Problem(
                    f"the column map names '{target}' twice", "give each of our columns one source"
                )
            )
        mapping[target] = source
    if not mapping:
        raise DataError(
            Problem(
                "the column map is empty",
                "write entries as ours=theirs, e.g. region=DistrictCode,year=Yr",
            )
        )
    return mapping


def apply_column_map(
    frame: pd.DataFrame, mapping: Mapping[str, str], *, file: str = ""
) -> pd.DataFrame:
    """A copy of ``frame`` with the file's columns renamed to ours; the input is unchanged."""
    present = [str(c) for c in frame.columns]
    problems = []
    sources = list(mapping.values())
    for target, source in mapping.items():
        if source not in present:
            problems.append(
                Problem(
                    f"the column map names '{source}' (for {target}), which is not a column of the file; columns present: {', '.join(present)}",
                    "use one of the columns present",
                    file=file,
                    row=1,
                    column=source,
                )
            )
        elif sources.count(source) > 1:
            problems.append(
                Problem(
                    f"the column '{source}' is mapped to more than one of our columns",
                    "map each column once",
                    file=file,
                    row=1,
                    column=source,
                )
            )
        if target in present and target not in sources:
            problems.append(
                Problem(
                    f"the file already has a column '{target}', so '{source}' cannot be renamed to it",
                    f"drop the map entry or rename the file's '{target}'",
                    file=file,
                    row=1,
                    column=target,
                )
            )
    if problems:
        raise DataError(problems)
    renamed = frame.rename(columns={s: t for t, s in mapping.items()})
    renamed.attrs = dict(frame.attrs)
    return renamed


# --------------------------------------------------------------------------------------
# Boundaries
# --------------------------------------------------------------------------------------

_POLYGONAL = {"Polygon", "MultiPolygon"}


def _read_boundaries(
    path: str | Path,
    *,
    layer: str | None = None,
    crs: str | None = None,
    file_label: str | None = None,
):
    """The reader behind the public function of the same name (see there)."""
    import geopandas as gpd
    import pyogrio
    import shapely

    p = Path(path)
    file = _label(p, file_label)
    p = _check_file(p, file)
    problems: list[Problem] = []
    suffix = p.suffix.lower()
    source = str(p)
    if suffix == ".zip":
        entries = check_zip(p, file)
        shps = [e.filename for e in entries if e.filename.lower().endswith(".shp")]
        if not shps:
            inner = [
                e.filename
                for e in entries
                if e.filename.lower().endswith((".geojson", ".gpkg", ".json"))
            ]
            if not inner:
                raise fail(
                    "the zip archive holds no Shapefile (.shp)",
                    "zip the .shp together with its .shx, .dbf and .prj",
                    file=file,
                )
            shps = inner
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
        source = f"/vsizip/{p.resolve()}/{shp}"
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
    if suffix in (".parquet", ".geoparquet", ".pq"):
        gdf = _read_geoparquet(p, file)
    else:
        if suffix == ".gpkg":
            layer = _choose_layer(p, file, layer, problems)
        try:
            with warnings.catch_warnings(record=True) as noted:
                warnings.simplefilter("always")
                gdf = pyogrio.read_dataframe(source, layer=layer)
            # GDAL's own remarks (unclosed rings, laundered names) go to the planner
            for remark in dict.fromkeys(str(w.message).splitlines()[0] for w in noted):
                problems.append(
                    Problem(f"the reader noted: {remark}", "", file=file, severity="warning")
                )
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
            what = {
                ".geojson": "GeoJSON",
                ".json": "GeoJSON",
                ".gpkg": "GeoPackage",
                ".zip": "zipped Shapefile",
                ".shp": "Shapefile",
            }.get(suffix, "boundary")
            raise fail(
                f"the {what} file cannot be read ({str(exc).splitlines()[0][:300]})",
                "export the boundaries again as GeoJSON, GeoPackage or a zipped Shapefile",
                file=file,
            ) from None
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
    gdf = _set_crs(gdf, file, crs, problems)
    invalid = ~shapely.is_valid(gdf.geometry.to_numpy())
    if invalid.any():
        geoms = gdf.geometry.to_numpy().copy()
        repaired = shapely.make_valid(geoms[invalid])
        # keep the polygonal part of repairs that come back as collections
        repaired = np.array([_polygonal(g) for g in repaired], dtype=object)
        geoms[invalid] = repaired
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
                "give the right CRS",
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


def _choose_layer(p: Path, file: str, layer: str | None, warnings: list[Problem]) -> str:
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
        warnings.append(
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


def _set_crs(gdf, file: str, crs: str | None, warnings: list[Problem]):
    from pyproj import CRS
    from pyproj.exceptions import CRSError

    if crs is not None:
        try:
            given = CRS.from_user_input(crs)
        except CRSError:
            raise fail(
                f"the CRS {crs!r} is not recognised",
                "give it as an EPSG code such as EPSG:3035",
                file=file,
            ) from None
        if gdf.crs is not None and not gdf.crs.equals(given):
            warnings.append(
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
    minx, miny, maxx, maxy = gdf.total_bounds
    eps = 1e-6  # rounding at the antimeridian
    if -180 - eps <= minx and maxx <= 180 + eps and -90 - eps <= miny and maxy <= 90 + eps:
        warnings.append(
            Problem(
                "the file declares no CRS; its coordinates lie in longitude/latitude range, so EPSG:4326 was assumed",
                "give --crs if that is wrong",
                file=file,
                severity="warning",
            )
        )
        return gdf.set_crs("EPSG:4326")
    raise fail(
        f"the file declares no CRS and its coordinates ({minx:.0f} to {maxx:.0f}, {miny:.0f} to {maxy:.0f}) are not longitude/latitude",
        "give the coordinate reference system with --crs, e.g. --crs EPSG:3035, or add a .prj file",
        file=file,
    )


def read_boundaries(
    path: str | Path,
    *,
    layer: str | None = None,
    crs: str | None = None,
    file_label: str | None = None,
):
    """Read district boundaries as a GeoDataFrame in EPSG:4326.

    GeoJSON, GeoPackage (``layer``; with several and none chosen, the first with polygons
    is used and a warning names them all), a zipped Shapefile (read in place through
    GDAL's ``/vsizip/``, nothing extracted), GeoParquet, or a plain Shapefile. A file with
    no CRS whose coordinates lie in longitude/latitude range is taken as EPSG:4326 with a
    warning; otherwise ``crs`` must be given. Invalid polygons are repaired with
    ``shapely.make_valid`` and counted in a warning. Warnings are in
    ``attrs["problems"]``.

    Raises
    ------
    DataError
        For unreadable files, unsafe archives, missing layers or sidecar files, points or
        lines where polygons are needed, or a CRS that is missing and cannot be assumed;
        never another exception.
    """
    try:
        return _read_boundaries(path, layer=layer, crs=crs, file_label=file_label)
    except DataError:
        raise
    except Exception as exc:  # noqa: BLE001 - the edge: nothing else may escape
        raise _at_the_edge(file_label or Path(path).name, "boundary file", exc) from None


# --------------------------------------------------------------------------------------
# Panels
# --------------------------------------------------------------------------------------


def load_panel(
    panel_path: str | Path,
    boundaries_path: str | Path | None = None,
    *,
    kind: str | None = None,
    column_map: Mapping[str, str] | str | None = None,
    boundary_id: str | None = None,
    crs: str | None = None,
    sheet: str | int | None = None,
    layer: str | None = None,
    allow_negative: bool = False,
) -> Panel:
    """Read a panel file (and boundaries), map columns, validate, return a :class:`Panel`.

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
        boundaries_path = Path(boundaries_path)
        boundary_file = boundaries_path.name
        boundaries = read_boundaries(boundaries_path, layer=layer, crs=crs)
        if boundary_id is not None:
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
    return validate(
        frame,
        kind=kind,
        file=file,
        boundaries=boundaries,
        boundary_file=boundary_file,
        allow_negative=allow_negative,
    )


def demo_paths(kind: str = "brackets") -> tuple[Path, Path]:
    """The shipped demo panel of ``kind`` and the demo boundary file."""
    if kind not in DEMO_FILES:
        raise DataError(
            Problem(f"no demo panel of kind {kind!r}", f"use one of {', '.join(DEMO_FILES)}")
        )
    return DEMO_DIR / DEMO_FILES[kind], DEMO_DIR / DEMO_BOUNDARIES


DEMO_INCOME_CONCEPT = "equivalised disposable income per person (demo currency units)"


def demo_panel(kind: str = "brackets") -> Panel:
    """The invented demo province as a validated :class:`Panel` with boundaries."""
    table, bounds = demo_paths(kind)
    if not table.exists():
        raise DataError(
            Problem(
                f"the demo data is missing ({table})",
                "run python demo_data/generate.py",
                file=table.name,
            )
        )
    panel = load_panel(table, bounds if bounds.exists() else None)
    # The demo's files carry no concept column; demo_data/README.md states it.
    return dataclasses.replace(panel, income_concept=DEMO_INCOME_CONCEPT, name=f"demo {kind}")

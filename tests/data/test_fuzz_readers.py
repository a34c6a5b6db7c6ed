"""Fuzzing of every reader in explorer.data (tables, boundaries, load): hostile bytes may
only ever raise DataError.

Inputs are random bytes, mutated copies of valid files (CSV, Parquet, Excel, GeoJSON,
GeoPackage, GeoParquet, zipped Shapefile), random CSV text with odd delimiters, quotes,
huge numbers and Unicode, and random GeoJSON-like documents; ``load_panel`` is driven end
to end with random read options. The property (common practice for code at a trust
boundary): the only exception that escapes is ``explorer.data.model.DataError``, it names a
problem, no reader hangs (a watchdog per example), the input file is left byte for byte as
it was and nothing is written outside the example's temporary directory.

The valid seed files are written by outside libraries (pandas, pyarrow, openpyxl, pyogrio,
zipfile) from the Natural Earth low-resolution countries that pyogrio ships as a test
fixture; no reader of ours is used to make them.

Zip limits are checked against ``zipfile``'s own reading of the archive (the declared
sizes in the central directory, APPNOTE.TXT section 4.3.12 of the ZIP specification).
"""

from __future__ import annotations

import faulthandler
import io
import json
import os
import shutil
import signal
import struct
import tempfile
import zipfile
from collections.abc import Callable, Iterator
from pathlib import Path

import numpy as np
import pandas as pd
import pyogrio
import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from explorer.data import boundaries, files, load, tables
from explorer.data.model import DataError

FIXTURE = Path(pyogrio.__file__).parent / "tests" / "fixtures" / "naturalearth_lowres"
WATCHDOG_SECONDS = 5  # honest reads of these inputs take milliseconds: only a hang trips it
QUICK = {"raw": 40, "mutated": 90, "csv": 60, "geojson": 40, "panel": 70}  # ~300 in all
SLOW = {"raw": 4500, "mutated": 2500, "csv": 1500, "geojson": 1000, "panel": 500}  # 10,000

TABLE_SUFFIXES = [".csv", ".txt", ".tsv", ".parquet", ".pq", ".xlsx", ".xlsm", ".xls", ""]
BOUNDARY_SUFFIXES = [".geojson", ".json", ".zip", ".gpkg", ".parquet", ".shp", ".kml", ""]


class Hang(BaseException):
    """Raised by the watchdog; a BaseException so that no reader's handler swallows it."""


def _expire(signum, frame):
    raise Hang(f"a reader ran for more than {WATCHDOG_SECONDS} s")


class Sandbox:
    """Folders for one module's fuzzing: inputs, the working folder and the temp folder.

    Readers run with the working folder and ``TMPDIR``/``CPL_TMPDIR`` (GDAL's) pointed
    into the sandbox, so a file written anywhere but an explicit absolute path shows up.
    """

    def __init__(self, root: Path) -> None:
        self.inputs, self.cwd, self.tmp = root / "inputs", root / "cwd", root / "tmp"
        for folder in (self.inputs, self.cwd, self.tmp):
            folder.mkdir()

    def run(self, call: Callable[[Path], object], files: dict[str, bytes]) -> None:
        for name, content in files.items():
            (self.inputs / name).write_bytes(content)
        try:
            previous = signal.signal(signal.SIGALRM, _expire)
            signal.setitimer(signal.ITIMER_REAL, WATCHDOG_SECONDS)
            try:
                call(self.inputs)
            finally:
                signal.setitimer(signal.ITIMER_REAL, 0)
                signal.signal(signal.SIGALRM, previous)
        except Hang as exc:  # as an ordinary failure, so that hypothesis shrinks the input
            raise AssertionError(f"{exc} on {sorted(files)}") from None
        except DataError as exc:
            assert exc.problems and all(p.message.strip() for p in exc.problems)
            assert str(exc).strip()
        finally:
            present = sorted(os.listdir(self.inputs))
            unchanged = present == sorted(files) and all(
                (self.inputs / n).read_bytes() == c for n, c in files.items()
            )
            for name in present:
                target = self.inputs / name
                if target.is_dir():
                    shutil.rmtree(target)
                else:
                    target.unlink()
        assert unchanged, f"a reader changed or added files next to its input: {present}"
        assert os.listdir(self.cwd) == [], "a reader wrote into the working folder"
        assert os.listdir(self.tmp) == [], "a reader left files in the temp folder"


_SANDBOX: list[Sandbox] = []


@pytest.fixture(scope="module", autouse=True)
def sandbox(tmp_path_factory) -> Iterator[Sandbox]:
    box = Sandbox(tmp_path_factory.mktemp("fuzz"))
    with pytest.MonkeyPatch.context() as patch:
        patch.chdir(box.cwd)
        patch.setenv("TMPDIR", str(box.tmp))
        patch.setenv("CPL_TMPDIR", str(box.tmp))
        patch.setattr(tempfile, "tempdir", str(box.tmp))
        _SANDBOX.append(box)
        yield box
        _SANDBOX.remove(box)


def only_data_error(call: Callable[[Path], object], files: dict[str, bytes]) -> None:
    """Write ``files`` into the sandbox, call the reader on the folder, check the property."""
    _SANDBOX[-1].run(call, files)


# ---------------------------------------------------------------------------------------
# valid seeds, written by outside libraries


def _seed_files() -> dict[str, bytes]:
    countries = pyogrio.read_dataframe(FIXTURE / "naturalearth_lowres.shp").iloc[:12]
    countries = countries.rename(columns={"iso_a3": "region"})[["region", "name", "geometry"]]
    table = pd.DataFrame(
        {
            "region": np.repeat(countries["region"].to_numpy(), 2),
            "year": np.tile([2020, 2021], len(countries)),
            "mean_income": np.linspace(10_000, 40_000, 2 * len(countries)).round(1),
            "population": np.arange(2 * len(countries)) * 100 + 1_000,
        }
    )
    seeds: dict[str, bytes] = {}
    seeds["means.csv"] = table.to_csv(index=False).encode()
    seeds["means_semicolon.csv"] = table.to_csv(index=False, sep=";", decimal=",").encode()
    buffer = io.BytesIO()
    table.to_parquet(buffer, index=False)
    seeds["means.parquet"] = buffer.getvalue()
    buffer = io.BytesIO()
    table.to_excel(buffer, index=False, engine="openpyxl")
    seeds["means.xlsx"] = buffer.getvalue()
    seeds["districts.geojson"] = countries.to_json().encode()
    buffer = io.BytesIO()
    countries.to_parquet(buffer, index=False)
    seeds["districts.parquet"] = buffer.getvalue()
    with tempfile.TemporaryDirectory() as tmp:
        countries.to_file(Path(tmp) / "districts.gpkg", driver="GPKG", layer="districts")
        seeds["districts.gpkg"] = (Path(tmp) / "districts.gpkg").read_bytes()
        countries.to_file(Path(tmp) / "districts.shp")
        buffer = io.BytesIO()
        with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
            for part in sorted(Path(tmp).glob("districts.*")):
                if part.suffix != ".gpkg":
                    archive.write(part, part.name)
        seeds["districts.zip"] = buffer.getvalue()
    return seeds


SEEDS = _seed_files()
TABLE_SEEDS = [n for n in SEEDS if n.startswith("means")]
BOUNDARY_SEEDS = [n for n in SEEDS if n.startswith("districts")]


def test_seed_files_are_read_without_error():
    """The seeds are valid, so mutations start from files that go deep into the readers."""
    with tempfile.TemporaryDirectory() as tmp:
        for name, content in SEEDS.items():
            (Path(tmp) / name).write_bytes(content)
        for name in TABLE_SEEDS:
            assert len(tables.read_table(Path(tmp) / name)) == 24
        for name in BOUNDARY_SEEDS:
            gdf = boundaries.read_boundaries(Path(tmp) / name)
            assert len(gdf) == 12 and gdf.crs.to_epsg() == 4326
        panel = load.load_panel(Path(tmp) / "means.csv", Path(tmp) / "districts.geojson")
        assert panel.kind == "means" and len(panel.regions) == 12


# ---------------------------------------------------------------------------------------
# strategies


@st.composite
def mutated(draw, names: list[str]) -> tuple[str, str, bytes]:
    """(reader, file name, bytes): a seed damaged by a few random edits."""
    name = draw(st.sampled_from(names))
    raw = bytearray(SEEDS[name])
    for _ in range(draw(st.integers(1, 6))):
        op = draw(st.sampled_from(["flip", "insert", "delete", "repeat", "cut", "overwrite"]))
        at = draw(st.integers(0, max(len(raw) - 1, 0)))
        span = draw(st.integers(1, 512))
        if op == "flip" and raw:
            raw[at] ^= draw(st.integers(1, 255))
        elif op == "insert":
            raw[at:at] = draw(st.binary(min_size=1, max_size=64))
        elif op == "delete":
            del raw[at : at + span]
        elif op == "repeat":
            raw[at:at] = raw[at : at + span] * draw(st.integers(1, 4))
        elif op == "cut":
            del raw[at:]
        else:
            chunk = draw(st.binary(min_size=1, max_size=16))
            raw[at : at + len(chunk)] = chunk
    reader = "table" if name in TABLE_SEEDS else "boundaries"
    suffix = Path(name).suffix
    if draw(st.integers(0, 9)) == 0:  # now and then, the wrong reader or suffix
        reader = draw(st.sampled_from(["table", "boundaries"]))
        suffix = draw(st.sampled_from(TABLE_SUFFIXES + BOUNDARY_SUFFIXES))
    return reader, "input" + suffix, bytes(raw)


# Pieces of hostile tables. Drawing from fixed pools is far cheaper than drawing every
# character, which buys many more examples in the same time.
TOKENS = [
    "region", "year", "mean_income", "population", "income", "weight", "pop_share",
    "income_share", "share_1", "share_2", "county", "D1", "D2", "0042", "2020", "2021",
    "12500", "12.500,50", "0,25", "0.25", "-3", "1e400", "-1e400", "9" * 400,
    "1" + "0" * 330, "0x1F", "1_000", "١٢٣", "inf", "nan", "NA", "..", "–", "", " ",
    '"', '""', '"a,b"', '"line\nbreak"', "'", "\\", "=1+1", "Ørsted", "Łódź-Ost", "Ñu",
    "区", "🏘", "\u200b", "\ufeff", "\x00", "é" * 50,
]  # fmt: skip
SEPARATORS = [",", ";", "\t", "|", " ", ":", ",,", "\u2028", "\n", "\r\n", "\r", "\n\n"]
PIECE = st.one_of(
    st.sampled_from(TOKENS),
    st.sampled_from(SEPARATORS),
    st.integers(-(10**30), 10**30).map(str),
    st.floats().map(repr),
    st.text(max_size=6),
)
HEADERS = [
    "region,year,mean_income,population",
    "region;year;income;weight",
    "region\tyear\tpop_share\tincome_share\tpopulation\tmean_income",
    "region|year|share_1|share_2|share_3",
    "region,year,mean_income,county",
]


@st.composite
def csv_text(draw, headers: bool = False) -> bytes:
    """Delimited text with odd delimiters, quotes, line ends, encodings and numbers."""
    pieces = draw(st.lists(PIECE, max_size=120))
    text = "".join(pieces)
    if headers or draw(st.booleans()):
        # a real header line takes the readers (and validate) further in
        text = draw(st.sampled_from(HEADERS)) + draw(st.sampled_from(SEPARATORS[-4:])) + text
    encoding = draw(st.sampled_from(["utf-8", "utf-8-sig", "latin-1", "cp1252", "utf-16"]))
    return text.encode(encoding, errors="replace")


NUMBER = st.sampled_from(
    [0, 1, -1, 0.5, 179.9, 180.0, 180.1, -90.0, 91, 1e308, -1e308, 5e-324, 10**20, 2.5e6]
    + [float("nan"), float("inf"), float("-inf")]
)
POSITION = st.lists(NUMBER, max_size=4)
RING = st.lists(POSITION, max_size=8)
COORDS = st.one_of(
    POSITION, RING, st.lists(RING, max_size=3), st.lists(st.lists(RING, max_size=2), max_size=2)
)
ODD_JSON = st.sampled_from(
    [None, True, 0, -1, "", "x", "NaN", [], {}, [[]], [None], {"type": None}, {"": ""}]
    + [{"type": "Polygon"}, {"coordinates": []}, "a" * 300, 10**400, ["region", 1]]
)
JSON_VALUE = st.one_of(
    ODD_JSON, NUMBER, st.text(max_size=6), st.lists(ODD_JSON, max_size=3),
    st.dictionaries(st.sampled_from(["region", "name", "id", "", "type"]), ODD_JSON, max_size=3),
)  # fmt: skip


@st.composite
def geojson_document(draw) -> bytes:
    """A GeoJSON-shaped document whose parts are wrong in random ways."""
    features = []
    for _ in range(draw(st.integers(0, 5))):
        geometry = {
            "type": draw(
                st.sampled_from(
                    ["Polygon", "MultiPolygon", "Point", "LineString", "GeometryCollection", "Nope"]
                )
            ),
            "coordinates": draw(st.one_of(COORDS, JSON_VALUE)),
        }
        feature = {
            "type": draw(st.sampled_from(["Feature", "feature", "Other"])),
            "geometry": draw(st.one_of(st.just(geometry), JSON_VALUE)),
            "properties": draw(
                st.one_of(
                    st.fixed_dictionaries(
                        {"region": st.sampled_from(["D1", "D2", "", "0042"]) | JSON_VALUE},
                        optional={"name": JSON_VALUE, "county": JSON_VALUE},
                    ),
                    JSON_VALUE,
                )
            ),
        }
        features.append(feature)
    document: object = {"type": "FeatureCollection", "features": features}
    if draw(st.booleans()):
        document = {**document, "crs": draw(JSON_VALUE)}
    if draw(st.integers(0, 4)) == 0:
        document = draw(JSON_VALUE)
    text = json.dumps(document, allow_nan=True)
    if draw(st.integers(0, 5)) == 0:
        text = text[: draw(st.integers(0, len(text)))]
    return text.encode()


# ---------------------------------------------------------------------------------------
# the property, for every reader


READERS = {"table": tables.read_table, "boundaries": boundaries.read_boundaries}


def _check_file(case):
    reader, name, raw = case
    only_data_error(lambda folder: READERS[reader](folder / name), {name: raw})


def _check_csv(raw):
    _check_file(("table", "table.csv", raw))


def _check_geojson(raw):
    _check_file(("boundaries", "districts.geojson", raw))


@st.composite
def panel_case(draw):
    table = draw(
        st.one_of(
            csv_text(headers=True).map(lambda raw: ("panel.csv", raw)),
            mutated(TABLE_SEEDS).map(lambda case: case[1:]),
            st.sampled_from(TABLE_SEEDS).map(lambda n: (n, SEEDS[n])),
        )
    )
    bounds = draw(
        st.one_of(
            st.none(),
            st.sampled_from(BOUNDARY_SEEDS).map(lambda n: (n, SEEDS[n])),
            mutated(BOUNDARY_SEEDS).map(lambda case: case[1:]),
            geojson_document().map(lambda raw: ("bounds.geojson", raw)),
        )
    )
    if bounds is not None and bounds[0] == table[0]:
        bounds = ("b_" + bounds[0], bounds[1])
    text = st.text(max_size=12)
    options = {
        "kind": draw(st.sampled_from([None, "brackets", "units", "means", "Means", ""])),
        "column_map": draw(
            st.one_of(
                st.none(),
                text,
                st.sampled_from(["region=iso", "region=region,year=year", "=", ",,", "a=b=c"]),
                st.dictionaries(text, text, max_size=3),
            )
        ),
        "boundary_id": draw(st.one_of(st.none(), st.sampled_from(["region", "name", "x"]), text)),
        "crs": draw(st.one_of(st.none(), st.sampled_from(["EPSG:4326", "EPSG:3035", "x", ""]))),
        "sheet": draw(st.one_of(st.none(), st.integers(-2, 3), text)),
        "layer": draw(st.one_of(st.none(), st.sampled_from(["districts", "x"]), text)),
        "allow_negative": draw(st.booleans()),
    }
    return table, bounds, options


def _check_panel(case):
    (table_name, table_raw), bounds, options = case
    files = {table_name: table_raw}
    if bounds is not None:
        files[bounds[0]] = bounds[1]

    def call(folder: Path) -> None:
        load.load_panel(
            folder / table_name, None if bounds is None else folder / bounds[0], **options
        )

    only_data_error(call, files)


RAW = st.one_of(
    st.tuples(
        st.just("table"),
        st.sampled_from(TABLE_SUFFIXES).map("input".__add__),
        st.binary(max_size=4096),
    ),
    st.tuples(
        st.just("boundaries"),
        st.sampled_from(BOUNDARY_SUFFIXES).map("input".__add__),
        st.binary(max_size=4096),
    ),
    # random bytes behind a real signature get past the sniffing
    st.tuples(
        st.sampled_from(["table", "boundaries"]),
        st.sampled_from(["input.parquet", "input.xlsx", "input.zip", "input.gpkg"]),
        st.tuples(
            st.sampled_from([b"PAR1", b"PK\x03\x04", b"SQLite format 3\x00", b"{"]),
            st.binary(max_size=2048),
        ).map(b"".join),
    ),
)

CASES = {
    "raw": (RAW, _check_file),
    "mutated": (mutated(list(SEEDS)), _check_file),
    "csv": (csv_text(), _check_csv),
    "geojson": (geojson_document(), _check_geojson),
    "panel": (panel_case(), _check_panel),
}


def _fuzz_test(kind: str, examples: int, shrink: bool = True):
    strategy, check = CASES[kind]
    phases = [Phase.explicit, Phase.reuse, Phase.generate, Phase.target]

    @settings(
        max_examples=examples,
        # the many-example runs report the input as found: shrinking a hang costs a
        # watchdog period per attempt
        phases=phases + [Phase.shrink] if shrink else phases,
        deadline=None,  # the watchdog catches hangs; timings never decide a test
        suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
        derandomize=True,
        database=None,
    )
    @given(strategy)
    def fuzz(case):
        check(case)

    def test():
        # last resort for native code that never returns to Python: dump stacks and exit
        faulthandler.dump_traceback_later(900, exit=True)
        try:
            fuzz()
        finally:
            faulthandler.cancel_dump_traceback_later()

    return test


test_table_and_boundary_readers_raise_only_data_error_on_random_bytes = _fuzz_test(
    "raw", QUICK["raw"]
)
test_readers_raise_only_data_error_on_mutated_valid_files = _fuzz_test("mutated", QUICK["mutated"])
test_read_table_raises_only_data_error_on_random_delimited_text = _fuzz_test("csv", QUICK["csv"])
test_read_boundaries_raises_only_data_error_on_random_geojson = _fuzz_test(
    "geojson", QUICK["geojson"]
)
test_load_panel_raises_only_data_error_end_to_end = _fuzz_test("panel", QUICK["panel"])

test_every_reader_raises_only_data_error_on_many_random_bytes = pytest.mark.slow(
    _fuzz_test("raw", SLOW["raw"], shrink=False)
)
test_every_reader_raises_only_data_error_on_many_mutated_files = pytest.mark.slow(
    _fuzz_test("mutated", SLOW["mutated"], shrink=False)
)
test_read_table_raises_only_data_error_on_much_random_text = pytest.mark.slow(
    _fuzz_test("csv", SLOW["csv"], shrink=False)
)
test_read_boundaries_raises_only_data_error_on_many_geojson_documents = pytest.mark.slow(
    _fuzz_test("geojson", SLOW["geojson"], shrink=False)
)
test_load_panel_raises_only_data_error_on_many_hostile_inputs = pytest.mark.slow(
    _fuzz_test("panel", SLOW["panel"], shrink=False)
)


# ---------------------------------------------------------------------------------------
# upload limits


def _data_error(call: Callable[[], object], *fragments: str) -> DataError:
    with pytest.raises(DataError) as caught:
        call()
    text = str(caught.value)
    for fragment in fragments:
        assert fragment in text
    return caught.value


@pytest.mark.parametrize("suffix", [".csv", ".parquet", ".xlsx", ".geojson", ".zip"])
def test_files_above_the_size_limit_are_refused_before_reading(tmp_path, suffix):
    big = tmp_path / f"big{suffix}"
    with open(big, "wb") as handle:
        handle.truncate(files.MAX_FILE_BYTES + 1)  # sparse: costs no disk space
    reader = (
        tables.read_table if suffix in (".csv", ".parquet", ".xlsx") else boundaries.read_boundaries
    )
    _data_error(lambda: reader(big), "larger than the limit")
    assert big.stat().st_size == files.MAX_FILE_BYTES + 1


def test_the_size_limit_admits_a_file_of_exactly_the_limit(tmp_path, monkeypatch):
    """The limit is inclusive; checked with the limit lowered to a seed's size."""
    edge = tmp_path / "edge.csv"
    edge.write_bytes(SEEDS["means.csv"])
    monkeypatch.setattr(files, "MAX_FILE_BYTES", edge.stat().st_size)
    assert len(tables.read_table(edge)) == 24
    monkeypatch.setattr(files, "MAX_FILE_BYTES", edge.stat().st_size - 1)
    _data_error(lambda: tables.read_table(edge), "larger than the limit")


def test_a_one_line_table_of_thousands_of_fields_is_read_or_refused_without_hanging():
    """A 30 kB header of 5,000 fields (what a GeoJSON file given as CSV looks like) must
    come back within the watchdog, as a table or as a DataError (common practice: the
    cost of reading grows with the file, not with its square)."""
    header = ",".join(f"c{i}" for i in range(5_000))
    row = ",".join("1" for _ in range(5_000))
    only_data_error(
        lambda folder: tables.read_table(folder / "wide.csv"),
        {"wide.csv": f"{header}\n{row}\n".encode()},
    )


@pytest.mark.parametrize("reader", ["table", "boundaries"])
def test_zip_with_too_many_entries_is_refused(tmp_path, reader):
    name = "many.xlsx" if reader == "table" else "many.zip"
    path = tmp_path / name
    with zipfile.ZipFile(path, "w") as archive:
        for i in range(files.MAX_ZIP_ENTRIES + 1):
            archive.writestr(f"part_{i}.txt", b"")
    assert len(zipfile.ZipFile(path).infolist()) == files.MAX_ZIP_ENTRIES + 1  # zipfile agrees
    call = tables.read_table if reader == "table" else boundaries.read_boundaries
    _data_error(lambda: call(path), "too many entries")


def _declare_size(path: Path, declared: int) -> None:
    """Rewrite the central directory so that the first entry declares ``declared`` bytes.

    The central directory header (signature PK\\x01\\x02) holds the uncompressed size at
    byte 24 (APPNOTE.TXT 4.3.12); with ZIP64 it moves to an extra field, so we stay below
    4 GiB.
    """
    raw = bytearray(path.read_bytes())
    at = raw.index(b"PK\x01\x02")
    raw[at + 24 : at + 28] = struct.pack("<I", declared)
    path.write_bytes(bytes(raw))


@pytest.mark.parametrize("reader", ["table", "boundaries"])
def test_zip_declaring_more_than_the_uncompressed_limit_is_refused(tmp_path, reader):
    path = tmp_path / ("bomb.xlsx" if reader == "table" else "bomb.zip")
    path.write_bytes(SEEDS["means.xlsx" if reader == "table" else "districts.zip"])
    declared = files.MAX_ZIP_UNCOMPRESSED + 1
    _declare_size(path, declared)
    infos = zipfile.ZipFile(path).infolist()
    assert sum(i.file_size for i in infos) > files.MAX_ZIP_UNCOMPRESSED  # zipfile reads it so
    call = tables.read_table if reader == "table" else boundaries.read_boundaries
    _data_error(lambda: call(path), "uncompressed")


@pytest.mark.parametrize("entry", ["../escape.shp", "/abs/districts.shp", "C:/x/districts.shp"])
def test_zip_entries_that_escape_the_archive_are_refused_and_nothing_is_extracted(tmp_path, entry):
    path = tmp_path / "slip.zip"
    with zipfile.ZipFile(path, "w") as archive:
        archive.writestr(entry, b"")
        archive.writestr("districts.dbf", b"")
    before = sorted(p.name for p in tmp_path.parent.rglob("*"))
    _data_error(lambda: boundaries.read_boundaries(path), "escapes the archive")
    assert sorted(p.name for p in tmp_path.parent.rglob("*")) == before


def test_a_zip_bomb_shaped_entry_is_not_inflated(tmp_path):
    """A highly compressible 200 MB entry inside a tiny archive is refused or read lazily:
    either way the reader returns within the watchdog and writes nothing (common practice).
    """
    path = tmp_path / "deflate.zip"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("districts.geojson", b" " * (200 * 1024 * 1024))
    assert path.stat().st_size < 1024 * 1024
    only_data_error(
        lambda f: boundaries.read_boundaries(f / "deflate.zip"), {"deflate.zip": path.read_bytes()}
    )

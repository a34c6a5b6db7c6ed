"""The dataset store of a workspace: validated panels on disk under content-hashed ids.

Each dataset lives in ``datasets/<id>/`` as Parquet tables plus a JSON manifest; its id
is a content hash of the input files' bytes and the read options, so adding the same
files twice is a no-op. A dataset is built complete in a hidden temporary folder and
renamed into place (:mod:`explorer.data.atomic`); ``index.json`` is only a cache of the
manifests, rebuilt whenever it disagrees with them.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import hashlib
import json
import os
import re
import shutil
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import pandas as pd
from pyarrow import ArrowException

from explorer.data.atomic import (
    CHUNK,
    REMOVING,
    clean_leftovers,
    fsync_dir,
    fsync_file,
    sha256_file,
    temp_name,
    write_text_atomic,
)
from explorer.data.carrying import RECORD_COLUMNS, Carrying, carrying_of, with_carrying
from explorer.data.model import KIND_COLUMNS, DataError, Panel, Problem, fail
from explorer.data.naming import as_text, display_name

__all__ = [
    "ENV_VAR",
    "SCHEMA_VERSION",
    "UNITS",
    "DatasetFacts",
    "DatasetStore",
    "Source",
    "DEMO_FACTS",
    "dataset_id",
    "equal_weight_notice",
    "facts_of",
    "with_facts",
]

SCHEMA_VERSION = 1
ENV_VAR = "RIFT_DATA"
_ID_RE = re.compile(r"^[0-9a-f]{16}$")
_MANIFEST = "manifest.json"
_TABLES = ("data", "hierarchy", "excluded")
_LIST_COLUMNS = ("id", "name", "kind", "districts", "years", "created")

Source = Path | str | tuple[str, bytes]


#: What one income figure is per: the planner's choice on saving.
UNITS = ("person", "household", "per capita")


@dataclasses.dataclass(frozen=True)
class DatasetFacts:
    """What a dataset is, in the planner's words, for every caption, report and view file.

    Stored under ``facts`` in the manifest; a manifest written before facts existed opens
    with all of them empty (nothing else about the format changed, so the schema version
    stays the same).

    Attributes
    ----------
    name : str
        The dataset's name as the planner gives it.
    income_concept : str
        E.g. "disposable household income".
    unit : str
        One of :data:`UNITS`, or empty when not given.
    currency, price_base : str
        E.g. "crowns" and "2015 prices" (or "current prices").
    source : str
        Where the figures come from, as the planner writes it.
    """

    name: str = ""
    income_concept: str = ""
    unit: str = ""
    currency: str = ""
    price_base: str = ""
    source: str = ""

    def __post_init__(self) -> None:
        if self.unit and self.unit not in UNITS:
            raise fail(
                f"unknown unit {self.unit!r}.",
                f"Choose one of: {', '.join(UNITS)}.",
            )

    def to_dict(self) -> dict[str, str]:
        """Plain values for the manifest."""
        return dataclasses.asdict(self)

    @classmethod
    def from_dict(cls, values: Any) -> DatasetFacts:
        """Facts from a manifest; unknown keys and non-text values are left out."""
        if not isinstance(values, dict):
            return cls()
        known = {f.name for f in dataclasses.fields(cls)}
        clean = {k: v for k, v in values.items() if k in known and isinstance(v, str)}
        if clean.get("unit") not in (None, "", *UNITS):
            clean.pop("unit")
        return cls(**clean)

    def caption(self) -> str:
        """One line for a caption: concept, unit, money and source, what was given."""
        money = ", ".join(p for p in (self.currency, self.price_base) if p)
        unit = f"per {self.unit}" if self.unit and self.unit != "per capita" else self.unit
        parts = [p for p in (self.income_concept, unit, money) if p]
        line = "; ".join(parts)
        if self.source:
            line = f"{line}. Source: {self.source}" if line else f"Source: {self.source}"
        return line


#: The demo province's facts, as its README states them (invented, like the province).
DEMO_FACTS = DatasetFacts(
    income_concept="equivalised disposable income",
    unit="person",
    currency="Kellvaran crowns (invented demo currency)",
    price_base="constant prices",
    source="invented demo province of Kellvaran (generated, not real data)",
)


def with_facts(panel: Panel, facts: DatasetFacts) -> Panel:
    """The same panel with its facts attached, for captions, the report and the view file.

    The panel is frozen; the facts ride along as an attribute so that every page, command
    and export reads them from the panel it already has.
    """
    object.__setattr__(panel, "facts", facts)
    return panel


def facts_of(panel: Any) -> DatasetFacts:
    """The facts of a panel: attached ones, the demo's, or its name and concept alone."""
    attached = getattr(panel, "facts", None)
    if isinstance(attached, DatasetFacts):
        return attached
    name = str(getattr(panel, "name", "") or "")
    if name.startswith("demo "):
        return dataclasses.replace(DEMO_FACTS, name=name)
    concept = str(getattr(panel, "income_concept", "") or "")
    return DatasetFacts(name=name, income_concept=concept)


def equal_weight_notice(panel: Panel) -> str | None:
    """The notice that each district counts equally, for a means panel with no populations."""
    if panel.kind != "means" or "population" not in panel.data.columns:
        return None
    if panel.data["population"].notna().any():
        return None
    return (
        "This panel has no populations: where districts are pooled, each district counts "
        "equally, whatever its size. Add a table of populations (district, year, "
        "population) to weight them."
    )


def _canonical_options(options: dict[str, Any] | None) -> dict[str, Any]:
    """Read options as plain JSON values, ``None`` entries dropped, keys sorted."""
    options = {} if options is None else options
    if not isinstance(options, dict):
        raise fail(
            f"Read options must be a mapping, not {type(options).__name__}.",
            "Pass the options as a dict such as {'kind': 'brackets'}.",
        )
    clean = {str(k): v for k, v in options.items() if v is not None}
    return json.loads(json.dumps(clean, sort_keys=True, default=str))


def _source_bytes_hash(source: Source) -> tuple[str, str, int]:
    """(display name, sha256, size) of one input, reading a path in chunks, read-only."""
    if isinstance(source, tuple):
        if len(source) != 2 or not isinstance(source[1], bytes | bytearray | memoryview):
            raise fail(
                "An uploaded source must be a (file name, bytes) pair.",
                "Pass uploads as (name, content_bytes).",
            )
        name, content = source
        return display_name(str(name)), hashlib.sha256(content).hexdigest(), len(content)
    path = Path(source)
    digest = hashlib.sha256()
    size = 0
    try:
        with open(path, "rb") as handle:
            while chunk := handle.read(CHUNK):
                digest.update(chunk)
                size += len(chunk)
    except OSError as exc:
        raise fail(
            f"Cannot read the input file: {exc.strerror or exc}.",
            "Check that the file exists and is readable.",
            file=path.name,
        ) from None
    return display_name(path.name), digest.hexdigest(), size


def dataset_id(
    sources: Sequence[Source],
    options: dict[str, Any] | None = None,
    fingerprint: str = "",
) -> str:
    """The id a dataset built from ``sources`` with ``options`` gets in any workspace.

    The id is the first 16 hex digits of SHA-256 over each input's SHA-256 (in the order
    given) and the canonical JSON of the read options. File names do not count, so the
    same bytes read the same way always give the same id. With no sources (a panel built
    in memory) the panel's ``fingerprint`` stands in for the files, so that two different
    panels never share an id.

    Parameters
    ----------
    sources : sequence of path or (name, bytes)
        The input files as read (data first, then boundaries, as the reader took them).
    options : dict, optional
        The read options: kind, column map, boundary id, crs, sheet, layer, ...
    fingerprint : str, optional
        The panel's fingerprint; used only when ``sources`` is empty.

    Returns
    -------
    str
        16 lowercase hex characters.
    """
    hashed = [_source_bytes_hash(s) for s in sources]
    return _dataset_id(hashed, _canonical_options(options), fingerprint)


def _dataset_id(
    hashed: Sequence[tuple[str, str, int]], options: dict[str, Any], fingerprint: str
) -> str:
    digest = hashlib.sha256(b"rift-dataset-v1\0")
    for _, sha, _ in hashed:
        digest.update(sha.encode() + b"\0")
    if not hashed:
        digest.update(b"panel\0" + str(fingerprint).encode() + b"\0")
    digest.update(json.dumps(options, sort_keys=True).encode())
    return digest.hexdigest()[:16]


class DatasetStore:
    """Datasets in ``root/datasets``, listed through the cache ``root/index.json``.

    Parameters
    ----------
    root : Path
        The workspace's data directory (already created).
    """

    def __init__(self, root: Path) -> None:
        self.root = root
        self.datasets_dir = root / "datasets"
        self.index_path = root / "index.json"

    def _dataset_dirs(self) -> list[Path]:
        try:
            names = os.listdir(self.datasets_dir)
        except OSError:
            return []
        return sorted(self.datasets_dir / n for n in names if _ID_RE.match(n))

    def add(
        self,
        panel: Panel,
        sources: Sequence[Source],
        options: dict[str, Any],
        facts: DatasetFacts | None = None,
    ) -> str:
        """Store a validated panel and return its dataset id.

        Parameters
        ----------
        panel : Panel
            The panel read from ``sources`` (from ``explorer.data.load.load_panel``).
        sources : sequence of path or (name, bytes)
            The input files exactly as read: paths on disk or uploads as (name, bytes).
            Only read, never changed.
        options : dict
            The read options used (kind, column map, boundary id, crs, sheet, layer,
            office reading options, crosswalk, levels).
        facts : DatasetFacts, optional
            Name, income concept, unit, currency and price base, source. They do not
            change the id: adding the same dataset with other facts updates the facts.

        Returns
        -------
        str
            The dataset id. Adding the same sources with the same options again returns
            the same id and writes nothing but changed facts.

        Raises
        ------
        DataError
            If a source cannot be read or the data directory cannot be written.
        """
        hashed = [_source_bytes_hash(s) for s in sources]
        canonical = _canonical_options(options)
        ident = _dataset_id(hashed, canonical, str(panel.fingerprint))
        final = self.datasets_dir / ident
        if final.is_dir() and self._complete(final):
            if facts is not None and facts != self.facts(ident):
                self.set_facts(ident, facts)
            return ident

        tmp = self.datasets_dir / temp_name()
        try:
            tmp.mkdir()
            manifest = self._write_tables(tmp, panel)
            manifest.update(
                schema_version=SCHEMA_VERSION,
                id=ident,
                created=_dt.datetime.now(_dt.UTC).isoformat(timespec="seconds"),
                sources=[{"name": n, "sha256": h, "bytes": b} for n, h, b in hashed],
                options=canonical,
            )
            if facts is not None:
                manifest.update(_facts_fields(facts))
            (tmp / _MANIFEST).write_text(json.dumps(manifest, indent=2), encoding="utf-8")
            fsync_file(tmp / _MANIFEST)
            fsync_dir(tmp)
            self._move_into_place(tmp, final)
        except OSError as exc:
            raise fail(
                f"Cannot save the dataset in {self.root}: {exc.strerror or exc}.",
                f"Free some disk space or point {ENV_VAR} at a writable directory.",
            ) from None
        finally:
            if tmp.exists():
                shutil.rmtree(tmp, ignore_errors=True)
        self._index_entries()
        return ident

    def facts(self, ident: str) -> DatasetFacts:
        """The stored facts of a dataset (empty ones for a dataset stored without)."""
        manifest = self._manifest(ident)
        facts = DatasetFacts.from_dict(manifest.get("facts"))
        return facts

    def options(self, ident: str) -> dict[str, Any]:
        """The read options a dataset was stored with (crosswalk, levels, reading)."""
        options = self._manifest(ident).get("options")
        return dict(options) if isinstance(options, dict) else {}

    def set_facts(self, ident: str, facts: DatasetFacts) -> None:
        """Replace a dataset's facts (atomically); name and income concept follow them."""
        manifest = self._manifest(ident)
        manifest.update(_facts_fields(facts))
        path = self.datasets_dir / ident / _MANIFEST
        try:
            write_text_atomic(path, json.dumps(manifest, indent=2))
        except OSError as exc:
            raise fail(
                f"Cannot save the dataset's facts in {self.root}: {exc.strerror or exc}.",
                f"Point {ENV_VAR} at a writable directory.",
            ) from None
        self._index_entries()

    def _move_into_place(self, tmp: Path, final: Path) -> None:
        try:
            os.rename(tmp, final)
        except OSError:
            if not final.exists():
                raise
            if self._complete(final):
                return  # another writer stored the same content first
            # A damaged copy under this id: set it aside whole, then put ours in.
            os.rename(final, self.datasets_dir / temp_name(REMOVING))
            os.rename(tmp, final)
            clean_leftovers([self.datasets_dir])
        fsync_dir(self.datasets_dir)

    def _write_tables(self, folder: Path, panel: Panel) -> dict[str, Any]:
        """Write the panel's tables into ``folder``; return the manifest's panel part."""
        files: dict[str, str] = {}
        excluded = getattr(panel, "excluded", None)
        if excluded is None:
            excluded = pd.DataFrame(
                {
                    "region": pd.Series([], dtype="str"),
                    "year": pd.Series([], dtype="int64"),
                    "reason": pd.Series([], dtype="str"),
                }
            )
        tables = {"data": panel.data, "hierarchy": panel.hierarchy, "excluded": excluded}
        if panel.boundaries is not None:
            tables["boundaries"] = panel.boundaries
        carrying = carrying_of(panel)
        if carrying is not None:
            tables["carried"] = carrying.record
        for name, frame in tables.items():
            path = folder / f"{name}.parquet"
            # A shallow copy without attrs: pandas stores attrs as JSON, and readers'
            # attrs hold Problem objects. The panel itself is left as it is.
            frame = frame.copy(deep=False)
            frame.attrs = {}
            try:
                frame.to_parquet(path, index=False)
            except (ValueError, TypeError, ImportError, ArrowException) as exc:
                raise fail(
                    f"The {name} table cannot be stored as Parquet: {exc}.",
                    "Report this with the input files; the dataset was not saved.",
                ) from None
            fsync_file(path)
            files[path.name] = sha256_file(path)

        years = sorted({int(y) for y in panel.data["year"].unique()})
        regions = panel.data["region"].nunique()
        return {
            "name": as_text(panel.name),
            "kind": str(panel.kind),
            "levels": [str(level) for level in panel.levels],
            "fingerprint": str(panel.fingerprint),
            "income_concept": as_text(getattr(panel, "income_concept", "") or ""),
            "districts": int(regions),
            "years": years,
            "warnings": [_problem_record(w) for w in panel.warnings],
            "files": files,
            **({"carrying": carrying.manifest()} if carrying is not None else {}),
        }

    def _complete(self, folder: Path) -> bool:
        """Cheap check that a stored dataset has its manifest and every listed file."""
        try:
            manifest = json.loads((folder / _MANIFEST).read_text(encoding="utf-8"))
            return all((folder / f).is_file() for f in manifest["files"])
        except (OSError, ValueError, KeyError, TypeError):
            return False

    def _manifest(self, ident: str) -> dict[str, Any]:
        if not isinstance(ident, str) or not _ID_RE.match(ident):
            raise fail(
                f"{ident!r} is not a dataset id (16 hex digits).",
                "Pick a dataset from the list of stored datasets.",
            )
        folder = self.datasets_dir / ident
        if not folder.is_dir():
            raise fail(
                f"There is no dataset {ident} in {self.root}.",
                "Pick a dataset from the list, or add the files again.",
            )
        where = f"{ident}/{_MANIFEST}"
        try:
            manifest = json.loads((folder / _MANIFEST).read_text(encoding="utf-8"))
        except FileNotFoundError:
            raise _damaged(ident, "its manifest is missing", where) from None
        except json.JSONDecodeError as exc:
            raise _damaged(
                ident,
                f"its manifest is cut short or is not JSON (line {exc.lineno}, column {exc.colno})",
                where,
            ) from None
        except (OSError, UnicodeDecodeError, ValueError) as exc:
            raise _damaged(ident, f"its manifest cannot be read ({exc})", where) from None
        if not isinstance(manifest, dict):
            raise _damaged(ident, "its manifest is not a JSON object", where)
        version = manifest.get("schema_version")
        if isinstance(version, int) and not isinstance(version, bool) and version > SCHEMA_VERSION:
            raise fail(
                f"Dataset {ident} was stored by a newer version of Rift (format version "
                f"{version}); this version reads format version {SCHEMA_VERSION}.",
                "Open it with the newer version of Rift, or add the original files again "
                "with this one.",
                file=where,
            )
        if version != SCHEMA_VERSION:
            raise _damaged(ident, f"its manifest has no known format version ({version!r})", where)
        required = {
            "id": str,
            "name": str,
            "kind": str,
            "levels": list,
            "fingerprint": str,
            "files": dict,
            "warnings": list,
            "years": list,
            "districts": int,
            "created": str,
        }
        for key, kind in required.items():
            if not isinstance(manifest.get(key), kind):
                raise _damaged(ident, f"its manifest lacks a valid {key!r}", where)
        if manifest["id"] != ident or manifest["kind"] not in KIND_COLUMNS:
            raise _damaged(ident, "its manifest does not match its folder", where)
        return manifest

    def open(self, ident: str) -> Panel:
        """Read a stored dataset back as a :class:`~explorer.data.model.Panel`.

        Every stored file is checked against the SHA-256 in the manifest and the tables
        against the columns their kind needs, so a damaged dataset is reported rather
        than half-read.

        Parameters
        ----------
        ident : str
            A dataset id from :meth:`add` or :meth:`list`.

        Returns
        -------
        Panel

        Raises
        ------
        DataError
            If there is no such dataset or it is damaged.
        """
        manifest = self._manifest(ident)
        folder = self.datasets_dir / ident
        for file, expected in manifest["files"].items():
            where = f"{ident}/{file}"
            if not isinstance(file, str) or "/" in file or "\\" in file or file.startswith("."):
                raise _damaged(ident, f"its manifest names an odd file {file!r}", where)
            try:
                actual = sha256_file(folder / file)
            except FileNotFoundError:
                raise _damaged(ident, f"{file} is missing", where) from None
            except OSError as exc:
                raise _damaged(ident, f"{file} cannot be read ({exc})", where) from None
            if actual != expected:
                raise _damaged(ident, f"{file} has changed since it was stored", where)
        for table in (*_TABLES,):
            if f"{table}.parquet" not in manifest["files"]:
                raise _damaged(ident, f"{table}.parquet is missing", f"{ident}/{table}.parquet")

        frames = {t: self._read_table(ident, t) for t in _TABLES}
        boundaries = None
        if "boundaries.parquet" in manifest["files"]:
            boundaries = self._read_boundaries(ident)
        self._check_tables(ident, manifest, frames, boundaries)
        carrying = self._read_carrying(ident, manifest)

        try:
            warnings = tuple(Problem(**w) for w in manifest["warnings"])
        except TypeError:
            raise _damaged(ident, "its warnings are malformed", f"{ident}/{_MANIFEST}") from None
        values = {
            "kind": manifest["kind"],
            "data": frames["data"],
            "levels": tuple(manifest["levels"]),
            "hierarchy": frames["hierarchy"],
            "boundaries": boundaries,
            "warnings": warnings,
            "fingerprint": manifest["fingerprint"],
            "name": manifest["name"],
            "income_concept": manifest.get("income_concept", ""),
            "excluded": frames["excluded"],
        }
        names = {f.name for f in dataclasses.fields(Panel)}
        facts = DatasetFacts.from_dict(manifest.get("facts"))
        if not facts.name:
            facts = dataclasses.replace(facts, name=str(manifest["name"] or ""))
        try:
            panel = with_facts(Panel(**{k: v for k, v in values.items() if k in names}), facts)
        except DataError:
            raise
        except (TypeError, ValueError) as exc:
            raise _damaged(ident, f"its tables do not form a panel ({exc})", ident) from None
        return with_carrying(panel, carrying) if carrying is not None else panel

    def _read_carrying(self, ident: str, manifest: dict[str, Any]) -> Carrying | None:
        """The account of a carried dataset: its record table and its manifest entry.

        A dataset stored before carried panels could be stored has neither and opens as
        before; one with only one of the two, or a malformed entry, is damaged.
        """
        entry = manifest.get("carrying")
        listed = "carried.parquet" in manifest["files"]
        if entry is None and not listed:
            return None
        where = f"{ident}/carried.parquet"
        if not listed:
            raise _damaged(ident, "carried.parquet is missing", where)
        if not isinstance(entry, dict):
            raise _damaged(ident, "its manifest lacks a valid 'carrying'", f"{ident}/{_MANIFEST}")
        record = self._read_table(ident, "carried")
        missing = [c for c in RECORD_COLUMNS if c not in record.columns]
        if missing:
            raise _damaged(ident, f"carried.parquet lacks the columns {', '.join(missing)}", where)
        try:
            return Carrying.from_manifest(entry, record)
        except (KeyError, TypeError, ValueError) as exc:
            raise _damaged(
                ident, f"its account of carrying is malformed ({exc})", f"{ident}/{_MANIFEST}"
            ) from None

    def _read_table(self, ident: str, table: str) -> pd.DataFrame:
        path = self.datasets_dir / ident / f"{table}.parquet"
        if path.is_file() and path.stat().st_size == 0:
            raise _damaged(ident, f"{path.name} is empty (0 bytes)", f"{ident}/{path.name}")
        try:
            return pd.read_parquet(path)
        except Exception as exc:  # pyarrow raises many types for a broken file
            raise _damaged(
                ident, f"{path.name} cannot be read ({exc})", f"{ident}/{path.name}"
            ) from None

    def _read_boundaries(self, ident: str):
        import geopandas  # only datasets with boundaries pay for the import

        path = self.datasets_dir / ident / "boundaries.parquet"
        try:
            return geopandas.read_parquet(path)
        except Exception as exc:  # pyarrow and shapely raise many types
            raise _damaged(
                ident, f"{path.name} cannot be read ({exc})", f"{ident}/{path.name}"
            ) from None

    def _check_tables(
        self,
        ident: str,
        manifest: dict[str, Any],
        frames: dict[str, pd.DataFrame],
        boundaries: Any,
    ) -> None:
        """Cheap structural checks: the columns each table must have."""
        expected = {
            "data": KIND_COLUMNS[manifest["kind"]],
            "hierarchy": ("region", *manifest["levels"]),
            "excluded": ("region", "year", "reason"),
        }
        if boundaries is not None:
            frames = {**frames, "boundaries": boundaries}
            expected["boundaries"] = ("region", "geometry")
        for table, columns in expected.items():
            missing = [c for c in columns if c not in frames[table].columns]
            if missing:
                raise _damaged(
                    ident,
                    f"{table}.parquet lacks the columns {', '.join(map(str, missing))}",
                    f"{ident}/{table}.parquet",
                )
        data = frames["data"]
        where = f"{ident}/data.parquet"
        if data.empty:
            raise _damaged(
                ident,
                f"data.parquet holds no rows, though its manifest lists "
                f"{manifest['districts']} districts",
                where,
            )
        if not pd.api.types.is_integer_dtype(data["year"]):
            raise _damaged(ident, "its years are not whole numbers", where)
        # The hashes only say the files are the ones the manifest names; the manifest's own
        # count of districts and years says whether they are the ones that were stored.
        years = sorted({int(y) for y in data["year"].unique()})
        if data["region"].nunique() != manifest["districts"] or years != manifest["years"]:
            raise _damaged(
                ident,
                f"data.parquet holds {data['region'].nunique()} districts and "
                f"{len(years)} years, not the {manifest['districts']} districts and "
                f"{len(manifest['years'])} years its manifest lists",
                where,
            )

    def list(self) -> pd.DataFrame:
        """The stored datasets, newest first.

        Returns
        -------
        DataFrame
            Columns ``id, name, kind, districts, years, created``; ``districts`` is the
            number of districts and ``years`` the span as text (``"2015–2022"``).
            Datasets still being written, and those whose manifest is damaged, are not
            listed here; :meth:`damaged` lists the latter with their reasons.
        """
        entries = self._index_entries()
        rows = [{c: entries[i][c] for c in _LIST_COLUMNS} for i in sorted(entries)]
        frame = pd.DataFrame(rows, columns=list(_LIST_COLUMNS))
        frame["districts"] = frame["districts"].astype("int64")
        return frame.sort_values(["created", "id"], ascending=[False, True], ignore_index=True)

    def damaged(self) -> pd.DataFrame:
        """The stored datasets that cannot be listed, each with the reason, in plain words.

        Returns
        -------
        DataFrame
            Columns ``id, reason, file, fix``, one row per dataset folder whose manifest is
            missing, cut short, of a newer format or otherwise unreadable (folders still
            being written are not datasets yet and are left out). Damage inside the tables
            is found when the dataset is opened (:meth:`open`).
        """
        rows = []
        for folder in self._dataset_dirs():
            try:
                self._manifest(folder.name)
            except DataError as error:
                problem = error.problems[0]
                rows.append((folder.name, problem.message, problem.file, problem.fix))
        return pd.DataFrame(rows, columns=["id", "reason", "file", "fix"])

    def _read_index(self) -> dict[str, Any]:
        try:
            index = json.loads(self.index_path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return {}
        if not isinstance(index, dict) or index.get("schema_version") != SCHEMA_VERSION:
            return {}
        entries = index.get("datasets")
        return entries if isinstance(entries, dict) else {}

    def _index_entries(self) -> dict[str, dict[str, Any]]:
        """The summary of every readable dataset, from the index where it is current.

        An entry is current when its manifest's (mtime, size, inode) stamp is unchanged;
        other manifests are read again and the index rewritten atomically. Directories
        stay the truth: the index is a cache any process may rebuild.
        """
        cached = self._read_index()
        entries: dict[str, dict[str, Any]] = {}
        for folder in self._dataset_dirs():
            ident = folder.name
            try:
                stat = os.stat(folder / _MANIFEST)
            except OSError:
                continue
            stamp = [stat.st_mtime_ns, stat.st_size, stat.st_ino]
            entry = cached.get(ident)
            if (
                isinstance(entry, dict)
                and entry.get("stamp") == stamp
                and all(c in entry for c in _LIST_COLUMNS)
            ):
                entries[ident] = entry
                continue
            try:
                manifest = self._manifest(ident)
            except DataError:
                continue  # damaged: not listed; open() says what is wrong
            years = manifest["years"]
            entries[ident] = {
                "id": ident,
                "name": manifest["name"],
                "kind": manifest["kind"],
                "districts": manifest["districts"],
                "years": f"{min(years)}–{max(years)}" if years else "",
                "created": manifest["created"],
                "stamp": stamp,
            }
        if entries != cached:
            payload = {"schema_version": SCHEMA_VERSION, "datasets": entries}
            try:
                write_text_atomic(self.index_path, json.dumps(payload))
            except OSError:
                pass  # a read-only workspace still lists from the manifests
        return entries

    def remove(self, ident: str) -> None:
        """Delete a stored dataset (all of it, or nothing if interrupted).

        Raises
        ------
        DataError
            If there is no such dataset.
        """
        if not isinstance(ident, str) or not _ID_RE.match(ident):
            raise fail(f"{ident!r} is not a dataset id (16 hex digits).")
        folder = self.datasets_dir / ident
        trash = self.datasets_dir / temp_name(REMOVING)
        try:
            os.rename(folder, trash)
        except FileNotFoundError:
            raise fail(
                f"There is no dataset {ident} in {self.root}.", "Pick one from the list."
            ) from None
        except OSError as exc:
            raise fail(f"Cannot remove dataset {ident}: {exc.strerror or exc}.") from None
        fsync_dir(self.datasets_dir)
        shutil.rmtree(trash, ignore_errors=True)
        self._index_entries()


def _facts_fields(facts: DatasetFacts) -> dict[str, Any]:
    """Manifest fields for the facts: the facts themselves, and the name and income
    concept the panel opens with when the planner gave them."""
    fields: dict[str, Any] = {"facts": facts.to_dict()}
    if facts.name:
        fields["name"] = facts.name
    if facts.income_concept:
        fields["income_concept"] = facts.income_concept
    return fields


def _problem_record(problem: Any) -> dict[str, Any]:
    if dataclasses.is_dataclass(problem):
        return dataclasses.asdict(problem)
    return {"message": str(problem)}


def _damaged(ident: str, what: str, file: str) -> DataError:
    return fail(
        f"Dataset {ident} is damaged: {what}.",
        "Remove it and add the original files again.",
        file=file,
    )

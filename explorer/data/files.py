"""Checks every reader makes before it looks inside a file: size, existence, safe zip archives.

Also the one way a failure of a library below the readers becomes a
:class:`~explorer.data.model.DataError` naming the file (:func:`at_the_edge`).
"""

from __future__ import annotations

import re
import zipfile
from pathlib import Path, PurePosixPath

from explorer.data.model import DataError, fail

__all__ = [
    "MAX_FILE_BYTES",
    "MAX_ZIP_ENTRIES",
    "MAX_ZIP_UNCOMPRESSED",
    "at_the_edge",
    "check_file",
    "check_size",
    "check_zip",
    "label",
]

MAX_FILE_BYTES = 200 * 1024 * 1024  # matches server.maxUploadSize in explorer.serving.SETTINGS
MAX_ZIP_ENTRIES = 1_000
MAX_ZIP_UNCOMPRESSED = 1_000_000_000  # declared total, 1 GB


def label(path: Path, file_label: str | None) -> str:
    """The name problems give a file: the label the user knows it by, else its name."""
    return file_label or path.name


def check_file(path: str | Path, file: str) -> Path:
    """``path`` as a Path once it is known to be a readable file within the size limit.

    Raises
    ------
    DataError
        For a missing path, a folder, an unreadable file or one above :data:`MAX_FILE_BYTES`.
    """
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
    check_size(size, file)
    return path


def check_size(size: int, file: str) -> None:
    """Refuse a file (on disk or uploaded) larger than :data:`MAX_FILE_BYTES`."""
    if size > MAX_FILE_BYTES:
        raise fail(
            f"the file is larger than the limit ({size / 1e6:.0f} MB > {MAX_FILE_BYTES / 1e6:.0f} MB)",
            "split it (e.g. by year) or drop columns the panel does not need",
            file=file,
        )


def check_zip(path: Path, file: str) -> list[zipfile.ZipInfo]:
    """Entries of a zip archive after the safety checks, without extracting anything.

    Rejects more than :data:`MAX_ZIP_ENTRIES` entries, a declared total uncompressed size
    above :data:`MAX_ZIP_UNCOMPRESSED`, and entry names that escape the archive's folder
    (absolute paths, drive letters, ``..``).

    Raises
    ------
    DataError
        For an unreadable or unsafe archive.
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


def at_the_edge(file: str, what: str, exc: BaseException) -> DataError:
    """Any failure of a library below us, as a DataError naming the file."""
    detail = str(exc).splitlines()[0][:300] if str(exc) else ""
    return fail(
        f"the {what} cannot be read ({type(exc).__name__}{': ' + detail if detail else ''})",
        "export it again in one of the supported formats",
        file=file,
    )

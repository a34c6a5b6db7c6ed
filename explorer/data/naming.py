"""Names typed by users made safe as file names, and file names made fit to store as text."""

from __future__ import annotations

import hashlib
import re
import unicodedata
from typing import Any

from explorer.data.model import fail

__all__ = ["as_text", "display_name", "safe_name"]

_MAX_NAME = 80
# Device names Windows reserves in every directory, whatever the extension.
_RESERVED = frozenset(
    ["CON", "PRN", "AUX", "NUL", "CONIN$", "CONOUT$"]
    + [f"{p}{i}" for p in ("COM", "LPT") for i in range(10)]
)


def safe_name(name: str, *, what: str = "name") -> str:
    """Turn a user's name into a file name that stays inside its directory.

    Letters, digits, spaces, ``-``, ``_`` and ``.`` are kept (after Unicode NFKC
    normalisation); anything else (path separators, ``..``, NUL and other control
    characters, drive letters) becomes ``-``. Leading dots and spaces are dropped, names
    are cut to at most 80 characters and Windows device names (``CON``, ``NUL``, ``COM1`` ...) get a
    leading ``_``. When anything had to change, a short hash of the original is appended
    so that two different names never share a file.

    Parameters
    ----------
    name : str
        The name as the user typed it.
    what : str
        What the name is for, used in the error message.

    Returns
    -------
    str
        A non-empty name of at most 80 characters with no path separators;
        ``safe_name(safe_name(x)) == safe_name(x)``.

    Raises
    ------
    DataError
        If ``name`` is not a string or is blank.
    """
    if not isinstance(name, str):
        raise fail(f"The {what} must be text, not {type(name).__name__}.", "Type a name.")
    if not name.strip():
        raise fail(f"The {what} is empty.", "Type a name with at least one letter or digit.")
    text = unicodedata.normalize("NFKC", name)
    kept = "".join(ch if (ch.isalnum() or ch in " -_.") else "-" for ch in text)
    kept = re.sub(r"-{2,}", "-", kept)
    kept = re.sub(r"\.{2,}", ".", kept)
    kept = kept.strip(" .-")
    if kept.split(".")[0].rstrip(" ").upper() in _RESERVED:
        kept = "_" + kept
    if not kept.strip("-_"):
        kept = ""
    if kept != name or len(kept) > _MAX_NAME:
        # Room for "-" and 8 hex digits keeps the result a fixed point of safe_name.
        digest = hashlib.sha256(name.encode("utf-8", "surrogatepass")).hexdigest()[:8]
        kept = kept[: _MAX_NAME - 9].rstrip(" .-")
        kept = f"{kept}-{digest}" if kept else f"unnamed-{digest}"
    return kept


def as_text(text: Any) -> str:
    """Text that every encoder takes: unpaired surrogates (from undecodable file names)
    become U+FFFD, since UTF-8 and Arrow strings cannot hold them."""
    return re.sub("[\ud800-\udfff]", "\ufffd", str(text))


def display_name(name: str) -> str:
    """A file name fit to show and store as text (never used as a path)."""
    name = "".join(ch for ch in name if unicodedata.category(ch)[0] != "C")
    return name.replace("\\", "/").rsplit("/", 1)[-1][:255] or "unnamed"

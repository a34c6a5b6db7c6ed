"""Cells as offices write them: footnote markers, thousands separators, decimal commas and
suppression codes, turned into clean names and numbers (missing where a value is withheld).

Each function here handles one cell; :func:`decimal_mark` decides once per file whether the
comma is the decimal mark, because ``12,345`` alone cannot tell.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable

__all__ = [
    "SUPPRESSION_CODES",
    "decimal_mark",
    "is_numberlike",
    "parse_number",
    "strip_marker",
]

#: Codes offices put in place of a value that is withheld, unreliable or not applicable
#: (common practice). Compared after trimming; ``x``/``X`` and ``c``/``F`` are kept apart.
SUPPRESSION_CODES = frozenset(
    {
        "..",
        "...",
        "…",
        "x",
        "X",
        "(D)",
        "(NA)",
        "(X)",
        "(S)",
        "-",
        "–",
        "—",
        "*",
        "**",
        "c",
        "F",
        "n/a",
        "N/A",
        "na",
        "NA",
        ":",
        "(Z)",
    }
)

_SPACES = "\u00a0\u202f\u2009 "
# Markers offices append to names and headers: "3/", "(r)", "(p)", "1)", "*", superscripts.
_MARKER = re.compile(
    r"(?:\s*\d{1,2}/|\s*\((?:[a-zA-Z]|\d{1,2}|NA)\)|(?<=[^\W\d_])\s?\d{1,2}\)|\s*[*†‡§]+"
    r"|\s*[¹²³⁴⁵⁶⁷⁸⁹⁰]+)$"
)
# A flag letter glued to a number: "12,345e", "2001p", "870r".
_NUMBER_FLAG = re.compile(r"(?<=\d)\s?(?:\(?[a-zA-Z]\)?)$")
_POINT = re.compile(r"^[-+]?(?:\d{1,3}(?:,\d{3})+|\d+)(?:\.\d+)?$")
_COMMA = re.compile(r"^[-+]?(?:\d{1,3}(?:\.\d{3})+|\d+)(?:,\d+)?$")
_SPACED = re.compile(r"^[-+]?\d{1,3}(?:[" + _SPACES + r"]\d{3})+(?:[.,]\d+)?$")
_EVIDENCE_COMMA = re.compile(r"^[-+]?(?:\d{1,3}(?:\.\d{3})+,\d+|\d+,(?:\d{1,2}|\d{4,}))$")
_GROUPS_POINT = re.compile(r"^[-+]?\d{1,3}(?:\.\d{3}){2,}$")
_GROUPS_COMMA = re.compile(r"^[-+]?\d{1,3}(?:,\d{3}){2,}$")
_EVIDENCE_POINT = re.compile(r"^[-+]?(?:\d{1,3}(?:,\d{3})+\.\d+|\d+\.(?:\d{1,2}|\d{4,}))$")


def strip_marker(text: str) -> tuple[str, str]:
    """A name or header without its footnote markers, and the markers removed.

    ``"Northland 3/"`` -> ``("Northland", "3/")``; ``"Total (r)"`` -> ``("Total", "(r)")``;
    ``"Alder 1)"`` -> ``("Alder", "1)")``. Markers are stripped repeatedly (``"Ash (p) 2/"``).
    A cell that is nothing but a marker is kept as it is.
    """
    clean = " ".join(text.replace("\u00a0", " ").split())
    removed: list[str] = []
    while True:
        match = _MARKER.search(clean)
        if not match or match.start() == 0:
            break
        removed.insert(0, match.group().strip())
        clean = clean[: match.start()].rstrip()
    return clean, " ".join(removed)


def decimal_mark(cells: Iterable[str], prefer: str = ".") -> str:
    """The file's decimal mark, from the cells that can only be read one way.

    ``12.345,6``, ``3,25`` and ``1.234.567`` say comma; ``12,345.6``, ``3.25`` and
    ``1,234,567`` say point. ``12,345`` alone says nothing: then ``prefer`` decides (a
    semicolon-separated file usually comes with decimal commas, common practice).
    """
    comma = point = 0
    for cell in cells:
        text = cell.strip().rstrip("%")
        comma += bool(_EVIDENCE_COMMA.match(text) or _GROUPS_POINT.match(text))
        point += bool(_EVIDENCE_POINT.match(text) or _GROUPS_COMMA.match(text))
    if comma == point:
        return prefer
    return "," if comma > point else "."


def _plain(text: str, decimal: str) -> str | None:
    """``text`` as a Python float literal, or None when it is not a number."""
    if _SPACED.match(text):  # "12 345" and "12 345,6": spaces only ever group thousands
        text = re.sub(f"[{_SPACES}]", "", text)
    if decimal == "," and _COMMA.match(text):
        return text.replace(".", "").replace(",", ".")
    if decimal == "." and _POINT.match(text):
        return text.replace(",", "")
    return None


def parse_number(text: str, decimal: str = ".") -> tuple[float, str | None, bool]:
    """One cell as a number.

    Parameters
    ----------
    text : str
        The cell as written.
    decimal : {".", ","}
        The file's decimal mark (see :func:`decimal_mark`).

    Returns
    -------
    value : float
        NaN when the cell is blank, a suppression code or not a number.
    code : str or None
        The suppression code, ``"flag:<f>"`` when a footnote flag was removed from a number,
        ``"text"`` when the cell is not a number, None for a clean number or a blank.
    percent : bool
        Whether the cell carried a ``%`` sign.
    """
    raw = text.strip(_SPACES)
    if not raw:
        return math.nan, None, False
    if raw in SUPPRESSION_CODES:
        return math.nan, raw, False
    percent = raw.endswith("%")
    body = raw.rstrip("%").strip(_SPACES).replace("\u2212", "-").lstrip("$€£")
    flag = None
    match = _NUMBER_FLAG.search(body)
    if match and not body.lower().startswith(("e", "inf", "nan")):
        flag = "flag:" + match.group().strip()
        body = body[: match.start()]
    literal = _plain(body, decimal)
    if literal is None:
        try:  # plain exponent notation, as spreadsheets write very small or large values
            value = float(body) if re.fullmatch(r"[-+]?\d+(\.\d+)?[eE][-+]?\d+", body) else None
        except ValueError:
            value = None
        return (math.nan, "text", percent) if value is None else (value, flag, percent)
    return float(literal), flag, percent


def is_numberlike(text: str, decimal: str = ".") -> bool:
    """Whether a cell holds a number or a suppression code (what a data cell looks like)."""
    value, code, _ = parse_number(text, decimal)
    return not math.isnan(value) or (code is not None and code != "text")

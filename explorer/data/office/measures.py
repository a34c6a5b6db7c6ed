"""The planner's words for the columns of a published table: which header means a region,
a year, a population, a mean income or a published index, and years written into headers.
"""

from __future__ import annotations

import re
import unicodedata

__all__ = ["INDEX_MEASURES", "MEASURE_WORDS", "column_role", "header_year", "measure_key"]

#: Published indices (a table of these holds the figure itself, not the shares behind it).
INDEX_MEASURES = ("gini", "poverty_rate", "median_income", "top10_share")

#: Canonical measure -> words that name it in a header, most specific first.
MEASURE_WORDS: dict[str, tuple[str, ...]] = {
    "median_income": ("median income", "median"),
    "poverty_rate": ("poverty rate", "poverty", "below poverty", "headcount ratio", "poor"),
    "top10_share": (
        "top decile share",
        "top 10 share",
        "top10 share",
        "share of top decile",
        "top decile",
        "top 10",
    ),
    "gini": ("gini coefficient", "gini index", "gini"),
    "population": ("population", "pop", "persons", "inhabitants", "residents", "people"),
    "mean_income": (
        "mean income",
        "average income",
        "per capita income",
        "income per capita",
        "per capita personal income",
        "income",
        "inc",
        "pci",
        "mean",
    ),
}
_ROLES = {
    "year": ("year", "yr", "period", "reference year"),
    "region": (
        "region",
        "district",
        "area",
        "county",
        "municipality",
        "name",
        "code",
        "id",
        "geo",
        "geography",
        "place",
        "zone",
        "locality",
        "unit",
    ),
}
_SHARE = re.compile(r"^(?:share|s|q|quintile|decile|d|group|bracket)\s?(\d{1,2})(?: share)?$")
_YEAR = re.compile(r"^(?P<prefix>[^\d]*?)[\s_\-]*(?P<year>(?:1[89]|20)\d{2})(?P<rest>.*)$")
_YEAR_REST = re.compile(r"^\s*(?:\(?[a-zA-Z]\)?|\d{1,2}/|\*+|[¹²³⁴⁵⁶⁷⁸⁹⁰]+)?\s*$")


def _words(label: str) -> str:
    text = unicodedata.normalize("NFKD", label).encode("ascii", "ignore").decode().lower()
    text = text.replace("%", " ")
    return " ".join(re.sub(r"[^a-z0-9]+", " ", text).split())


def measure_key(label: str) -> str | None:
    """The canonical measure a header names (``"Pop."`` -> ``"population"``), or None.

    Bracket shares become ``share_<k>`` (``"Q3"``, ``"decile 3"`` -> ``"share_3"``).
    """
    words = _words(label)
    if not words:
        return None
    share = _SHARE.match(words)
    if share:
        return f"share_{int(share.group(1))}"
    if words.replace(" ", "_") in MEASURE_WORDS:
        return words.replace(" ", "_")
    padded = f" {words} "
    for key, names in MEASURE_WORDS.items():
        if any(f" {name} " in padded for name in names):
            return key
    return None


def column_role(label: str) -> str | None:
    """``"year"`` or ``"region"`` when a header names one of them, else None."""
    words = _words(label)
    for role, names in _ROLES.items():
        if words in names or any(
            words.startswith(n + " ") or words.endswith(" " + n) for n in names
        ):
            return role
    return None


def header_year(label: str) -> tuple[str, int] | None:
    """The measure prefix and year of a year header (``"inc2001"`` -> ``("inc", 2001)``).

    Padded and decorated headers are years too: ``"2001  "``, ``"Y2001"``, ``"2001 (p)"``,
    ``"2001e"``. A prefix of a single letter ``Y`` is not a measure and is dropped.
    """
    match = _YEAR.match(label.strip())
    if not match or not _YEAR_REST.match(match.group("rest")):
        return None
    prefix = match.group("prefix").strip(" _-:")
    if prefix.lower() in ("y", "yr", "year", "fy"):
        prefix = ""
    return prefix, int(match.group("year"))

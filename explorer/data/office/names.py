"""District names and codes across files: normalised so that case, accents, punctuation,
spacing and footnote markers do not matter, matched, and where they still differ, ranked
suggestions and a crosswalk (``region,boundary_id``) to settle them.
"""

from __future__ import annotations

import difflib
import re
import unicodedata
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field

import pandas as pd

from explorer.data.model import fail
from explorer.data.office.cells import strip_marker

__all__ = ["NameMatch", "apply_crosswalk", "match_names", "normalise"]

SUGGESTIONS = 3
CUTOFF = 0.6


def normalise(name: str) -> str:
    """A name reduced to what identifies it: ``" Lower-Marsh  3/"`` -> ``"lower marsh"``.

    Footnote markers are removed, accents dropped (``Nørd`` and ``Nord`` alike, by Unicode
    decomposition), case folded, punctuation turned to spaces, spaces collapsed.
    """
    text = strip_marker(str(name))[0]
    text = unicodedata.normalize("NFKD", text.replace("ø", "o").replace("Ø", "O"))
    text = "".join(c for c in text if not unicodedata.combining(c)).casefold()
    return " ".join(re.sub(r"[^\w]+", " ", text).replace("_", " ").split())


@dataclass(frozen=True)
class NameMatch:
    """How the panel's districts meet the boundary file's.

    Attributes
    ----------
    matched : dict
        Panel name -> boundary id, for every name that matched.
    how : dict
        Panel name -> ``"exact"``, ``"normalised"`` or ``"zero-padded"``.
    suggestions : dict
        Unmatched panel name -> boundary ids that look like it, best first, with a score.
    panel_only, boundary_only : tuple of str
        What is left on each side.
    zeros : dict
        Unmatched panel code -> boundary code equal to it but for leading zeros (``1``
        and ``01``); codes are text, so these are reported, not matched.
    """

    matched: dict[str, str]
    how: dict[str, str]
    suggestions: dict[str, tuple[tuple[str, float], ...]]
    panel_only: tuple[str, ...]
    boundary_only: tuple[str, ...]
    zeros: dict[str, str] = field(default_factory=dict)

    def messages(self) -> list[str]:
        """One sentence per unmatched panel name, in the planner's words."""
        out = [
            f"panel code '{p}' was matched to '{b}' by adding leading zeros."
            for p, b in self.matched.items()
            if self.how.get(p) == "zero-padded"
        ]
        for name in self.panel_only:
            if name in self.zeros:
                out.append(
                    f"'{name}' in the panel differs from '{self.zeros[name]}' only by "
                    "leading zeros; codes are compared as written."
                )
                continue
            options = self.suggestions.get(name)
            if options:
                out.append(
                    f"'{options[0][0]}' in the boundaries looks like '{name}' in the "
                    "panel"
                    + (
                        f" (also: {', '.join(o for o, _ in options[1:])})"
                        if len(options) > 1
                        else ""
                    )
                    + "."
                )
            else:
                out.append(f"'{name}' in the panel has no district like it in the boundaries.")
        return out


def _score(a: str, b: str) -> float:
    ratio = difflib.SequenceMatcher(None, a, b).ratio()
    ta, tb = set(a.split()), set(b.split())
    overlap = len(ta & tb) / max(len(ta | tb), 1)
    return round(max(ratio, overlap), 3)


def _padded(panel: list[str], boundary: list[str]) -> dict[str, str] | None:
    """Numeric panel codes to zero-padded boundary codes, only when every code matches."""
    if not all(p.isdigit() for p in panel) or not all(b.isdigit() for b in boundary):
        return None
    by_value: dict[int, list[str]] = {}
    for b in boundary:
        by_value.setdefault(int(b), []).append(b)
    if any(len(v) > 1 for v in by_value.values()):
        return None
    out = {p: by_value[int(p)][0] for p in panel if int(p) in by_value}
    distinct = len(set(out.values())) == len(out)
    return out if len(out) == len(panel) and distinct else None


def match_names(panel: Iterable[str], boundary: Iterable[str] | Mapping[str, str]) -> NameMatch:
    """Match panel district names or codes to the boundary file's.

    Parameters
    ----------
    panel : iterable of str
        Names or codes as in the panel.
    boundary : iterable of str, or mapping id -> name
        Boundary ids, or ids with their names (names are then matched too).

    Returns
    -------
    NameMatch

    Notes
    -----
    Exact ids first, then normalised names (:func:`normalise`) when they point at a single
    boundary district, then numeric codes padded with zeros when that matches every one.
    The rest are scored against every unused boundary district by the larger of the
    gestalt pattern-matching ratio and the share of words in common; scores of at least
    0.6 are suggested, best first.

    References
    ----------
    Ratcliff, J. W. and Metzener, D. E. (1988). Pattern matching: the gestalt approach.
    *Dr. Dobb's Journal*, 13(7), 46-51 (the ratio of :class:`difflib.SequenceMatcher`).
    Jaccard, P. (1912). The distribution of the flora in the alpine zone. *New
    Phytologist*, 11(2), 37-50 (the share of words in common).
    """
    panel = list(dict.fromkeys(str(p) for p in panel))
    names = dict(boundary) if isinstance(boundary, Mapping) else {str(b): str(b) for b in boundary}
    matched: dict[str, str] = {}
    how: dict[str, str] = {}
    exact = {str(b): str(b) for b in names} | {str(n): str(b) for b, n in names.items()}
    keyed: dict[str, list[str]] = {}
    for b, n in names.items():
        for key in {normalise(b), normalise(n)}:
            keyed.setdefault(key, []).append(str(b))
    for p in panel:
        if p in exact:
            matched[p], how[p] = exact[p], "exact"
        elif len(set(keyed.get(normalise(p), []))) == 1:
            matched[p], how[p] = keyed[normalise(p)][0], "normalised"
    padded = _padded(panel, list(names))
    if padded is not None and len(padded) > len(matched):
        matched = padded
        how = {p: "exact" if p == b else "zero-padded" for p, b in padded.items()}
    used = set(matched.values())
    rest = [b for b in names if b not in used]
    suggestions = {}
    for p in (p for p in panel if p not in matched):
        scored = sorted(
            (
                (
                    b,
                    max(
                        _score(normalise(p), normalise(b)),
                        _score(normalise(p), normalise(names[b])),
                    ),
                )
                for b in rest
            ),
            key=lambda t: (-t[1], t[0]),
        )
        best = tuple(s for s in scored if s[1] >= CUTOFF)[:SUGGESTIONS]
        if best:
            suggestions[p] = best
    panel_only = tuple(p for p in panel if p not in matched)
    zeros = {
        p: b
        for p in panel_only
        if p.isdigit()
        for b in names
        if b.isdigit() and b != p and int(b) == int(p)
    }
    return NameMatch(matched, how, suggestions, panel_only, tuple(rest), zeros)


def apply_crosswalk(
    table: pd.DataFrame, crosswalk: pd.DataFrame, file: str = "crosswalk"
) -> tuple[pd.DataFrame, tuple[str, ...]]:
    """Rename ``table.region`` through a ``region,boundary_id`` crosswalk.

    Returns the renamed table and the regions the crosswalk did not cover (kept as they
    were). A region mapped to two different ids is an error.
    """
    missing = {"region", "boundary_id"} - set(crosswalk.columns)
    if missing:
        raise fail(
            f"the crosswalk lacks the column(s) {', '.join(sorted(missing))}.",
            "Give a table with the columns region and boundary_id.",
            file=file,
        )
    pairs = crosswalk.astype({"region": str, "boundary_id": str}).drop_duplicates()
    doubled = pairs[pairs["region"].duplicated(keep=False)]
    if not doubled.empty:
        raise fail(
            f"the region '{doubled['region'].iloc[0]}' is mapped to more than one id.",
            "Keep one boundary_id per region.",
            file=file,
            column="region",
        )
    mapping = dict(zip(pairs["region"], pairs["boundary_id"], strict=True))
    regions = table["region"].astype(str)
    uncovered = tuple(sorted(set(regions) - set(mapping)))
    out = table.assign(region=regions.map(mapping).fillna(regions))
    return out, uncovered

"""The view: everything a planner is looking at, as one value that travels.

A :class:`ViewState` goes into a link (``to_query`` / ``from_query``) and into a view file
(``to_json`` / ``from_json``). Reading never raises and never evaluates anything: a value
that is unknown, malformed or not among the caller's valid choices falls back to its
default, and a plain-language notice says what was ignored.

Link keys (short, so links stay readable):

========== ======================= ============================================================
key        field                   form
========== ======================= ============================================================
``d``      ``dataset``             dataset id
``pg``     ``page``                map, timelines, breakdown, district, compare, briefing, intake
``y``      ``year``                4-digit year
``y0``     ``year_from``           4-digit year
``y1``     ``year_to``             4-digit year
``ix``     ``index``               index key (``gini``, ``ge_2``, ...)
``lm``     ``method``              Lorenz method
``sel``    ``districts``           comma-separated ids, each percent-encoded
``cl``     ``classes``             quantiles, equal, breaks
``k``      ``k``                   number of map classes, 3–9
``lv``     ``level``               grouping level (e.g. ``county``)
``ct``     ``counties``            comma-separated county names, each percent-encoded
``dx``     ``decomposition_index`` index of the Breakdown page
``iv``     ``show_intervals``      1 or 0
``ly``     ``layer``               map layer: index or clusters
``pc``     ``by_county``           1 or 0 (Timelines: one panel per county)
``bs``     ``bootstrap``           1 or 0 (unit records: sampling intervals)
``pl``     ``poverty_line``        12000 (a year per person), 60%median, 50%mean
``pr``     ``relative_to``         province or district (whose median or mean)
``cy``     ``compare_years``       comma-separated years (Compare: one district, 2–6 years)
``rk``     ``clear_ranks``         1 or 0 (Map: only districts whose rank is clear)
``sc``     ``scenario``            a what-if scenario as compact JSON (``{"rift_scenario": 1, ...}``)
========== ======================= ============================================================
Fields at their default are left out of a link. A view file is JSON:
``{"rift_view": 1, "dataset": "demo", "page": "map", ...}`` with the field names above.
"""

from __future__ import annotations

import json
import re
import unicodedata
from collections.abc import Iterable, Mapping
from dataclasses import asdict, dataclass, field, fields, replace
from typing import Any
from urllib.parse import quote, unquote, urlencode

from explorer.present import vocabulary

__all__ = [
    "FACTS_ENTRY",
    "view_file_text",
    "CLASS_SCHEMES",
    "DECOMPOSABLE",
    "LORENZ_METHODS",
    "MAP_LAYERS",
    "MAX_VIEW_FILE_BYTES",
    "PAGES",
    "QUERY_KEYS",
    "VIEW_FILE_VERSION",
    "Known",
    "ViewFileError",
    "canonical_poverty_line",
    "ViewState",
    "check_view_file",
    "from_json",
    "from_query",
]

#: Page keys and the names the app shows.
PAGES = {key: page.title for key, page in vocabulary.PAGES.items()}
LORENZ_METHODS = vocabulary.LORENZ_METHODS
CLASS_SCHEMES = ("quantiles", "equal", "breaks")
MAP_LAYERS = ("index", "clusters")
VIEW_FILE_VERSION = 1
MAX_VIEW_FILE_BYTES = 1_000_000
_MAX_VALUE_CHARS = 4_000
_MAX_LIST = 500
_MAX_NOTICES = 20

_NAMED_INDICES = (
    "gini",
    "theil_t",
    "mld",
    "cv",
    "palma",
    "s80_s20",
    "top10_share",
    "bottom40_share",
)
_INDEX_RE = re.compile(
    r"(?:gini|theil_t|mld|cv|palma|s80_s20|top10_share|bottom40_share"
    # figures of district means, and published figures shown as given
    r"|mean_income|mean_ratio|mean_growth|poverty_rate|median_income|population"
    # poverty measures against the view's poverty line
    r"|fgt_0|fgt_1|fgt_2|watts|sen_poverty"
    # welfare in money, and growth from the first year ("Growth since") to the view's year
    r"|sen_welfare|ede_(?:0\.5|1|2)"
    r"|growth_gap_bottom40|growth_bottom40|growth_mean|growth_pro_poor"
    r"|ge_-?\d{1,2}(?:\.\d{1,3})?|atkinson_\d{1,2}(?:\.\d{1,3})?)"
)
#: Indices the Breakdown page can split exactly (GE family; the Gini with its overlap).
_DECOMPOSABLE_RE = re.compile(r"(?:gini|theil_t|mld|ge_-?\d{1,2}(?:\.\d{1,3})?)")
DECOMPOSABLE = vocabulary.DECOMPOSABLE
_DATASET_RE = re.compile(r"[A-Za-z0-9][A-Za-z0-9_.-]{0,63}")
_YEAR_RE = re.compile(r"\d{4}")

#: Field name -> link key.
QUERY_KEYS = {
    "dataset": "d",
    "page": "pg",
    "year": "y",
    "year_from": "y0",
    "year_to": "y1",
    "index": "ix",
    "method": "lm",
    "districts": "sel",
    "classes": "cl",
    "k": "k",
    "level": "lv",
    "counties": "ct",
    "decomposition_index": "dx",
    "show_intervals": "iv",
    "layer": "ly",
    "by_county": "pc",
    "bootstrap": "bs",
    "poverty_line": "pl",
    "relative_to": "pr",
    "compare_years": "cy",
    "clear_ranks": "rk",
    "scenario": "sc",
}
_FIELD_OF_KEY = {key: name for name, key in QUERY_KEYS.items()}
_PLAIN = {
    "dataset": "dataset",
    "page": "page",
    "year": "year",
    "year_from": "first year",
    "year_to": "last year",
    "index": "index",
    "method": "Lorenz method",
    "districts": "districts",
    "classes": "map classes",
    "k": "number of map classes",
    "level": "grouping level",
    "counties": "county filter",
    "decomposition_index": "Breakdown index",
    "show_intervals": "show intervals",
    "layer": "map layer",
    "by_county": "one panel per county",
    "bootstrap": "sampling intervals",
    "poverty_line": "poverty line",
    "relative_to": "poverty line relative to",
    "compare_years": "years compared",
    "clear_ranks": "only clear ranks",
    "scenario": "what-if scenario",
}


class _Bad(Exception):
    """A value that cannot be used; the message says why in plain words."""


def _shown(value: Any, limit: int = 40) -> str:
    """A short, printable rendering of a rejected value for a notice."""
    try:
        text = value if isinstance(value, str) else json.dumps(value, default=str)[:200]
    except (TypeError, ValueError, RecursionError):
        text = f"<{type(value).__name__}>"
    text = "".join(ch if ch.isprintable() else "?" for ch in text)
    return f"“{text[:limit]}…”" if len(text) > limit else f"“{text}”"


def _is_label(text: str) -> bool:
    """A usable free-text label (district id, county, level): printable, not blank."""
    return (
        0 < len(text) <= 200
        and text.strip() == text
        and all(unicodedata.category(ch)[0] != "C" for ch in text)
    )


# --------------------------------------------------------------------------- choices


@dataclass(frozen=True)
class Known:
    """The valid choices a view is checked against, supplied by the caller.

    ``None`` means "any well-formed value"; a collection means "one of these".

    Attributes
    ----------
    datasets, years, indices, methods, districts, levels, counties,
    decomposition_indices : collection or None
    """

    datasets: frozenset[str] | None = None
    years: frozenset[int] | None = None
    indices: frozenset[str] | None = None
    methods: frozenset[str] | None = None
    districts: frozenset[str] | None = None
    levels: frozenset[str] | None = None
    counties: frozenset[str] | None = None
    decomposition_indices: frozenset[str] | None = None

    @classmethod
    def of(cls, value: Known | Mapping[str, Any] | None) -> Known:
        """A :class:`Known` from a mapping of the same names (others are ignored)."""
        if value is None:
            return cls()
        if isinstance(value, Known):
            return value
        names = {f.name for f in fields(cls)}
        return cls(
            **{
                name: None
                if choices is None
                else frozenset([choices] if isinstance(choices, str | int) else choices)
                for name, choices in value.items()
                if name in names
            }
        )

    def years_text(self) -> str:
        if not self.years:
            return ""
        return f" (the data cover {min(self.years)}–{max(self.years)})"


# --------------------------------------------------------------------------- parsers
# Each parser takes a value as it comes from a link (str) or a view file (JSON value)
# and returns the field's value or raises _Bad with the reason.


def _text(raw: Any) -> str:
    if not isinstance(raw, str):
        raise _Bad("is not text")
    if len(raw) > _MAX_VALUE_CHARS:
        raise _Bad("is far too long")
    return raw


def _choice(raw: Any, allowed: Iterable[str], what: str) -> str:
    value = _text(raw).strip().lower()
    allowed = tuple(allowed)
    if value not in allowed:
        raise _Bad(f"is not a known {what} (choose from {', '.join(allowed)})")
    return value


def _year(raw: Any, known: Known) -> int | None:
    if raw is None or raw == "":
        return None
    if isinstance(raw, bool):
        raise _Bad("is not a year")
    if isinstance(raw, int):
        value = raw
    elif isinstance(raw, str) and _YEAR_RE.fullmatch(raw.strip()):
        value = int(raw.strip())
    else:
        raise _Bad("is not a year (expected four digits, e.g. 2019)")
    if not 1000 <= value <= 9999:
        raise _Bad("is not a year (expected four digits, e.g. 2019)")
    if known.years is not None and value not in known.years:
        raise _Bad(f"is not a year of this panel{known.years_text()}")
    return value


def _index(raw: Any, known: Known) -> str:
    value = _text(raw).strip().lower()
    if not _INDEX_RE.fullmatch(value):
        raise _Bad("is not an index this tool computes")
    if known.indices is not None and value not in known.indices:
        raise _Bad("is not among the indices computed for this dataset")
    return value


def _decomposition_index(raw: Any, known: Known) -> str:
    value = _text(raw).strip().lower()
    if not _DECOMPOSABLE_RE.fullmatch(value):
        raise _Bad("cannot be split into within and between parts (use Theil T, MLD, GE or Gini)")
    if known.decomposition_indices is not None and value not in known.decomposition_indices:
        raise _Bad("is not offered for this dataset's Breakdown")
    return value


def _method(raw: Any, known: Known) -> str:
    allowed = (
        LORENZ_METHODS
        if known.methods is None
        else tuple(m for m in LORENZ_METHODS if m in known.methods)
    )
    return _choice(raw, allowed, "Lorenz method")


#: Page keys of earlier versions -> today's, so old links and view files still open.
_OLD_PAGES = {"atlas": "map"}


def _page(raw: Any) -> str:
    if isinstance(raw, str) and raw.strip().lower() in _OLD_PAGES:
        return _OLD_PAGES[raw.strip().lower()]
    return _choice(raw, PAGES, "page")


def _dataset(raw: Any, known: Known) -> str:
    value = _text(raw).strip()
    if not _DATASET_RE.fullmatch(value):
        raise _Bad("is not a dataset id")
    if known.datasets is not None and value not in known.datasets:
        raise _Bad("is not a dataset in this workspace")
    return value


def _k(raw: Any, known: Known) -> int:
    if isinstance(raw, bool):
        raise _Bad("is not a whole number")
    if isinstance(raw, int):
        value = raw
    elif isinstance(raw, str) and re.fullmatch(r"\d{1,2}", raw.strip()):
        value = int(raw.strip())
    else:
        raise _Bad("is not a whole number")
    if not 3 <= value <= 9:
        raise _Bad("must be between 3 and 9")
    return value


def _flag(raw: Any, known: Known) -> bool:
    if isinstance(raw, bool):
        return raw
    if isinstance(raw, str) and raw.strip().lower() in {"1", "true", "yes", "on"}:
        return True
    if isinstance(raw, str) and raw.strip().lower() in {"0", "false", "no", "off"}:
        return False
    raise _Bad("is not on/off (use 1 or 0)")


def _label(raw: Any, allowed: frozenset[str] | None, what: str) -> str:
    value = _text(raw)
    if not _is_label(value):
        raise _Bad(f"is not a usable {what}")
    if allowed is not None and value not in allowed:
        raise _Bad(f"is not a {what} of this dataset")
    return value


def _level(raw: Any, known: Known) -> str | None:
    if raw is None or raw == "":
        return None
    return _label(raw, known.levels, "grouping level")


def _split(raw: Any) -> list[Any]:
    """A list from a view file, or the percent-encoded comma list of a link."""
    if isinstance(raw, list):
        items = raw
    elif isinstance(raw, str):
        if len(raw) > _MAX_VALUE_CHARS * 10:
            raise _Bad("is far too long")
        items = [unquote(part) for part in raw.split(",")] if raw else []
    else:
        raise _Bad("is not a list")
    if len(items) > _MAX_LIST:
        raise _Bad(f"has more than {_MAX_LIST} entries")
    return items


def _labels(allowed_of: str, what: str):
    def parse(raw: Any, known: Known, notices: list[str], name: str) -> tuple[str, ...]:
        kept: list[str] = []
        for item in _split(raw):
            try:
                kept.append(_label(item, getattr(known, allowed_of), what))
            except _Bad as reason:
                notices.append(
                    f"Left out {what} {_shown(item)} of the {_PLAIN[name]}: it {reason}."
                )
        return tuple(dict.fromkeys(kept))

    return parse


def _poverty_line(raw: Any, known: Known) -> str:
    """A poverty line in its canonical short form: ``12000``, ``60%median``, ``50%mean``."""
    from explorer.data.model import DataError
    from explorer.stats.poverty_lines import parse_line

    text = _text(raw if not isinstance(raw, int | float) or isinstance(raw, bool) else str(raw))
    try:
        line = parse_line(text)
    except DataError:
        raise _Bad("is not a poverty line (write e.g. 12000, 60%median or 50%mean)") from None
    if line.relative:
        return f"{100 * line.fraction:g}%{line.base}"
    return f"{line.amount:g}"


def _scenario(raw: Any) -> str:
    """A scenario in its canonical compact JSON (from a link's text or a view file's object)."""
    from explorer.data.model import DataError
    from explorer.stats.scenario import Scenario

    if raw is None or raw == "":
        return ""
    try:
        body = json.loads(_text(raw)) if not isinstance(raw, dict) else raw
        found = Scenario.from_dict(body)
    except (DataError, ValueError, TypeError, RecursionError):
        raise _Bad("is not a scenario this tool can read") from None
    return canonical_scenario(found)


def canonical_scenario(found: Any) -> str:
    """The compact JSON a scenario travels in (keys sorted, no spaces)."""
    return json.dumps(found.to_dict(), sort_keys=True, separators=(",", ":"), ensure_ascii=False)


def canonical_poverty_line(raw: Any) -> str | None:
    """A poverty line typed by a planner in its canonical form, or None when unreadable."""
    try:
        return _poverty_line(raw, Known())
    except _Bad:
        return None


_PARSERS = {
    "dataset": _dataset,
    "page": lambda raw, known: _page(raw),
    "year": _year,
    "year_from": _year,
    "year_to": _year,
    "index": _index,
    "method": _method,
    "classes": lambda raw, known: _choice(raw, CLASS_SCHEMES, "classification"),
    "k": _k,
    "level": _level,
    "decomposition_index": _decomposition_index,
    "show_intervals": _flag,
    "layer": lambda raw, known: _choice(raw, MAP_LAYERS, "map layer"),
    "by_county": _flag,
    "bootstrap": _flag,
    "poverty_line": _poverty_line,
    "relative_to": lambda raw, known: _choice(raw, ("province", "district"), "choice"),
    "clear_ranks": _flag,
    "scenario": lambda raw, known: _scenario(raw),
}
#: At most this many districts or years side by side on the Compare page.
MAX_COMPARED = 6


def _years_list(raw: Any, known: Known, notices: list[str], name: str) -> tuple[int, ...]:
    """Years of a list, in order, each checked like ``year``; at most MAX_COMPARED."""
    kept: list[int] = []
    for item in _split(raw):
        try:
            year = _year(item, known)
        except _Bad as reason:
            notices.append(f"Left out year {_shown(item)} of the {_PLAIN[name]}: it {reason}.")
            continue
        if year is not None:
            kept.append(year)
    kept = sorted(set(kept))
    if len(kept) > MAX_COMPARED:
        notices.append(
            f"Kept the first {MAX_COMPARED} of the {len(kept)} {_PLAIN[name]}: "
            "the Compare page shows at most six side by side."
        )
        kept = kept[:MAX_COMPARED]
    return tuple(kept)


_LIST_PARSERS = {
    "districts": _labels("districts", "district"),
    "counties": _labels("counties", "county"),
    "compare_years": _years_list,
}


# --------------------------------------------------------------------------- the view


@dataclass(frozen=True)
class ViewState:
    """Everything a view is; the same value drives every page.

    Attributes
    ----------
    dataset : str
        Dataset id in the workspace (``"demo"`` for the invented scenario).
    page : str
        ``map``, ``timelines``, ``breakdown``, ``district`` or ``intake``.
    year : int or None
        Year shown on the Map and District sheet; ``None`` = the latest.
    year_from, year_to : int or None
        Year range of Timelines and of the change decomposition; ``None`` = the ends.
        ``year_from`` is also the first year of the growth of district means.
    index : str
        Index key shown (for district means ``mean_income``, ``mean_ratio`` or
        ``mean_growth``; for published figures the figure's key, e.g. ``poverty_rate``).
    method : str
        Lorenz method for grouped data (``auto`` picks the best valid fit).
    districts : tuple of str
        Chosen district ids (highlighted; the first is the District sheet's).
    classes : str
        Map classification: ``quantiles``, ``equal`` or ``breaks``.
    k : int
        Number of map classes, 3 to 9.
    level : str or None
        Grouping level (e.g. ``county``); ``None`` = the panel's outermost.
    counties : tuple of str
        County filter; empty = all.
    decomposition_index : str
        Index of the Breakdown page.
    show_intervals : bool
        Whether bounds and intervals are drawn.
    layer : str
        Map layer: ``index`` (the chosen index) or ``clusters`` (local clusters).
    by_county : bool
        Timelines drawn as one panel per county.
    bootstrap : bool
        Sampling intervals (bootstrap) for unit records.
    poverty_line : str
        The line of the poverty measures: an amount per person per year (``12000``) or a
        fraction of a median or mean (``60%median``, common practice, the default).
    relative_to : str
        Whose median or mean a relative line is taken of: the ``province``'s (one line for
        every district) or each ``district``'s own.
    compare_years : tuple of int
        The Compare page's years for one district (the first chosen); empty = the chosen
        districts side by side in ``year``.
    clear_ranks : bool
        The Map shows only districts whose rank is clear (the bounds allow one rank only).
    scenario : str
        The What-if page's scenario as compact JSON (``explorer.stats.scenario``); empty =
        none.

    Raises
    ------
    ValueError
        When constructed in code with a value a link could not carry (a programming
        error; links and view files never raise, see :func:`from_query`).
    """

    dataset: str = "demo"
    page: str = "map"
    year: int | None = None
    year_from: int | None = None
    year_to: int | None = None
    index: str = "gini"
    method: str = "auto"
    districts: tuple[str, ...] = field(default=())
    classes: str = "quantiles"
    k: int = 5
    level: str | None = None
    counties: tuple[str, ...] = field(default=())
    decomposition_index: str = "theil_t"
    show_intervals: bool = True
    layer: str = "index"
    by_county: bool = False
    bootstrap: bool = False
    poverty_line: str = "60%median"
    relative_to: str = "province"
    compare_years: tuple[int, ...] = field(default=())
    clear_ranks: bool = False
    scenario: str = ""

    def __post_init__(self) -> None:
        free = Known()
        for name, parse in _PARSERS.items():
            value = getattr(self, name)
            try:
                parsed = parse(value, free)
            except _Bad as reason:
                raise ValueError(f"{name}={value!r} {reason}") from None
            if parsed != value or type(parsed) is not type(value):
                raise ValueError(f"{name}={value!r} is not in its canonical form ({parsed!r})")
        for name, parse in _LIST_PARSERS.items():
            value = tuple(getattr(self, name))
            problems: list[str] = []
            parsed = parse(list(value), free, problems, name)
            if problems:
                raise ValueError(problems[0])
            object.__setattr__(self, name, parsed)
        if self.year_from is not None and self.year_to is not None:
            if self.year_from > self.year_to:
                raise ValueError(f"year_from {self.year_from} is after year_to {self.year_to}")

    @property
    def page_name(self) -> str:
        """The page's name as the app shows it."""
        return PAGES[self.page]

    def replace(self, **changes: Any) -> ViewState:
        """A copy with some fields changed (checked like the constructor)."""
        return replace(self, **changes)

    # -- links ------------------------------------------------------------------------

    def to_query(self) -> dict[str, str]:
        """Link parameters for this view; fields at their default are left out."""
        default = ViewState()
        out: dict[str, str] = {}
        for name, key in QUERY_KEYS.items():
            value = getattr(self, name)
            if value == getattr(default, name):
                continue
            if isinstance(value, tuple):
                out[key] = ",".join(quote(str(item), safe="") for item in value)
            elif isinstance(value, bool):
                out[key] = "1" if value else "0"
            elif value is None:
                out[key] = ""
            else:
                out[key] = str(value)
        return out

    def to_link(self) -> str:
        """The query string of a link to this view, e.g. ``?pg=timelines&ix=mld``."""
        query = self.to_query()
        return "?" + urlencode(query, quote_via=quote) if query else ""

    # -- view files -------------------------------------------------------------------

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready fields with the file version first."""
        body = asdict(self)
        body["districts"] = list(self.districts)
        body["counties"] = list(self.counties)
        body["compare_years"] = list(self.compare_years)
        return {"rift_view": VIEW_FILE_VERSION, **body}

    def to_json(self) -> str:
        """The view file's text."""
        return json.dumps(self.to_dict(), ensure_ascii=False, indent=2)


_DEFAULT_TEXT = {
    "year": "the latest year",
    "year_from": "the first year",
    "year_to": "the last year",
    "level": "the outermost level",
    "scenario": "no scenario",
}


def _default_text(name: str) -> str:
    if name in _DEFAULT_TEXT:
        return _DEFAULT_TEXT[name]
    value = getattr(ViewState(), name)
    if isinstance(value, bool):
        value = "on" if value else "off"
    return f"the default ({value})"


def _read(values: Mapping[str, Any], known: Known, notices: list[str], source: str) -> ViewState:
    """Build a view from field name -> raw value, skipping what cannot be used."""
    chosen: dict[str, Any] = {}
    for name, raw in values.items():
        try:
            if name in _LIST_PARSERS:
                chosen[name] = _LIST_PARSERS[name](raw, known, notices, name)
            else:
                chosen[name] = _PARSERS[name](raw, known)
        except _Bad as reason:
            notices.append(
                f"The {source}'s {_PLAIN[name]} {_shown(raw)} {reason}; "
                f"showing {_default_text(name)} instead."
            )
    start, end = chosen.get("year_from"), chosen.get("year_to")
    if start is not None and end is not None and start > end:
        chosen["year_from"], chosen["year_to"] = end, start
        notices.append(f"The {source}'s year range ran backwards; showing {end}–{start}.")
    return ViewState(**chosen)


def _capped(notices: list[str]) -> list[str]:
    if len(notices) <= _MAX_NOTICES:
        return notices
    extra = len(notices) - _MAX_NOTICES + 1
    return notices[: _MAX_NOTICES - 1] + [f"… and {extra} more settings were ignored."]


def from_query(
    params: Mapping[str, Any], *, known: Known | Mapping[str, Any] | None = None
) -> tuple[ViewState, list[str]]:
    """The view a link describes, with notices for whatever was ignored.

    Parameters
    ----------
    params : mapping
        Link parameters (``st.query_params`` or a dict); a value may be a string or a
        list of strings (the last one counts).
    known : Known or mapping, optional
        The valid choices (datasets, years, indices, methods, districts, levels,
        counties); values outside them fall back to defaults.

    Returns
    -------
    (ViewState, list of str)
        The view and plain-language notices. Never raises.
    """
    notices: list[str] = []
    try:
        choices = Known.of(known)
        values: dict[str, Any] = {}
        items = list(params.items()) if isinstance(params, Mapping) else []
        if not isinstance(params, Mapping):
            notices.append("The link's settings could not be read; showing the default view.")
        for key, raw in items:
            if not isinstance(key, str) or key not in _FIELD_OF_KEY:
                notices.append(f"Ignored the unknown link setting {_shown(key)}.")
                continue
            if isinstance(raw, list | tuple):
                raw = raw[-1] if raw else ""
            if not isinstance(raw, str):
                raw = (
                    str(raw) if isinstance(raw, int | float) and not isinstance(raw, bool) else raw
                )
            values[_FIELD_OF_KEY[key]] = raw
        view = _read(values, choices, notices, "link")
    except Exception as error:  # noqa: BLE001 - a link must never break the app
        notices.append(
            f"The link could not be read ({type(error).__name__}); showing the default view."
        )
        view = ViewState()
    return view, _capped(notices)


def from_json(
    text: str | bytes, *, known: Known | Mapping[str, Any] | None = None
) -> tuple[ViewState, list[str]]:
    """The view a view file describes, with notices for whatever was ignored.

    Parameters
    ----------
    text : str or bytes
        The file's content (at most :data:`MAX_VIEW_FILE_BYTES`).
    known : Known or mapping, optional
        The valid choices, as for :func:`from_query`.

    Returns
    -------
    (ViewState, list of str)
        The view and plain-language notices. Never raises; a file that is not a view
        file gives the default view and says why.
    """
    notices: list[str] = []
    try:
        choices = Known.of(known)
        size = len(text.encode("utf-8", "surrogatepass")) if isinstance(text, str) else len(text)
        if not isinstance(text, str | bytes):
            raise _Bad("This is not a view file (expected text).")
        if size > MAX_VIEW_FILE_BYTES:
            raise _Bad(
                f"The view file is {size / 1e6:.1f} MB; a view file is a few hundred bytes "
                f"(limit {MAX_VIEW_FILE_BYTES / 1e6:.0f} MB). Showing the default view."
            )
        if isinstance(text, bytes):
            try:
                text = text.decode("utf-8-sig")
            except UnicodeDecodeError:
                raise _Bad("The view file is not UTF-8 text; showing the default view.") from None
        text = text.removeprefix("\ufeff")  # a byte-order mark decoded as text
        try:
            body = json.loads(text)
        except (ValueError, RecursionError):
            raise _Bad("The view file is not valid JSON; showing the default view.") from None
        if not isinstance(body, dict):
            raise _Bad(
                "The view file holds no settings (expected a JSON object); showing the default view."
            )
        version = body.get("rift_view")
        if version is None or isinstance(version, bool) or version != VIEW_FILE_VERSION:
            what = (
                "has no 'rift_view' version"
                if version is None
                else f"has version {_shown(version)}"
            )
            raise _Bad(
                f"The file {what}; this version of the tool reads view files of version "
                f"{VIEW_FILE_VERSION}. Showing the default view."
            )
        values: dict[str, Any] = {}
        for key, raw in body.items():
            if key in ("rift_view", FACTS_ENTRY):  # the facts are for the reader only
                continue
            if key not in QUERY_KEYS:
                notices.append(f"Ignored the unknown view-file setting {_shown(key)}.")
                continue
            values[key] = raw
        view = _read(values, choices, notices, "view file")
    except _Bad as reason:
        notices.append(str(reason))
        view = ViewState()
    except Exception as error:  # noqa: BLE001 - a view file must never break the app
        notices.append(
            f"The view file could not be read ({type(error).__name__}); showing the default view."
        )
        view = ViewState()
    return view, _capped(notices)


class ViewFileError(ValueError):
    """A file that cannot be read as a view file at all; the message says why."""


def check_view_file(raw: bytes) -> str:
    """The text of a view file, once it is known to be one, for :func:`from_json`.

    A view file is at most :data:`MAX_VIEW_FILE_BYTES`, UTF-8 (a byte-order mark is
    accepted and dropped), and a JSON object with the current ``rift_view`` version.
    Reading a file that is none of these as a view would open the default view in its
    place, so the report and the app refuse it instead.

    Raises
    ------
    ViewFileError
        Saying what is wrong with the file as a whole.
    """
    if len(raw) > MAX_VIEW_FILE_BYTES:
        raise ViewFileError(
            f"the view file is larger than {MAX_VIEW_FILE_BYTES / 1e6:.0f} MB; a view file "
            "is a few hundred bytes"
        )
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise ViewFileError(f"the view file is not UTF-8 text (byte {error.start + 1})") from None
    try:
        body = json.loads(text)
    except (ValueError, RecursionError) as error:
        where = f" (line {error.lineno})" if isinstance(error, json.JSONDecodeError) else ""
        raise ViewFileError(f"the view file is not valid JSON{where}") from None
    version = body.get("rift_view") if isinstance(body, dict) else None
    if version is None or isinstance(version, bool) or version != VIEW_FILE_VERSION:
        raise ViewFileError(
            f"this is not a view file of version {VIEW_FILE_VERSION} "
            "(a JSON object with its 'rift_view' version)"
        )
    return text


#: The view-file entry with the dataset's facts, written for the reader, skipped on reading.
FACTS_ENTRY = "dataset_facts"


def view_file_text(view: ViewState, facts: Mapping[str, str] | None = None) -> str:
    """A view file's text with the dataset's facts (name, concept, unit, money, source).

    The facts tell a reader of the file what data it was made on; reading the file back
    ignores them, since the dataset id already names the data.
    """
    body = view.to_dict()
    given = {k: v for k, v in (facts or {}).items() if v}
    if given:
        body[FACTS_ENTRY] = given
    return json.dumps(body, ensure_ascii=False, indent=2)

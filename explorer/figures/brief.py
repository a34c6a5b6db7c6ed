"""The briefing: a few paragraphs of plain language about a view, built from its tables.

Every sentence is a template filled with numbers taken from one of the tables the pages
show (the province's figure by year, the district ranking, the within/between split, the
change terms, the global Moran's I, the poverty figures, the dataset's facts, the
cautions), formatted as the pages format them. Each sentence names its source: the table,
the rows (by their keys) and the columns its numbers come from, so a reader can find every
number again. Nothing is said that the data do not support: no ranking claim where the
possible ranks overlap, no rise or fall where the two years' bounds overlap, no poverty
for district means or published figures without a poverty rate.

Direction rule (:func:`direction`): with bounds or intervals for both years, a figure
"rose" or "fell" only when the two years' ranges do not overlap, else "no clear change";
without them (the province's pooled figure, district means, published figures, unit
records without sampling intervals), a change counts when it is more than
:data:`RELATIVE_CHANGE` of the first year's value.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import DataError, Panel
from explorer.figures import series
from explorer.figures.breakdown import breakdown, change, split_index
from explorer.figures.compute import MAP_PERMUTATIONS, Compute
from explorer.figures.settle import settle
from explorer.figures.spatial import cluster_layer, moran_metrics
from explorer.figures.tables import map_values, names, ranking, wide
from explorer.present import cautions, vocabulary
from explorer.present.markup import plain
from explorer.views import ViewState

__all__ = [
    "RELATIVE_CHANGE",
    "SIGNIFICANCE",
    "Briefing",
    "Cell",
    "Paragraph",
    "Sentence",
    "Source",
    "briefing",
    "direction",
]

#: Without bounds, a change counts when it is more than this share of the first year's value.
RELATIVE_CHANGE = 0.05
#: The level below which a global Moran's I counts as clustering (as on the Map).
SIGNIFICANCE = 0.05
#: How many chosen districts the first paragraph follows, and set-aside rows it names.
_MOST_DISTRICTS = 3
_MOST_NAMED = 5
_MOST_CLUSTER_NAMES = 6
#: Index keys where a higher value means more equal: no "most unequal" for these.
_HIGHER_IS_EQUAL = ("bottom40_share",)
#: First words of labels that are names and keep their capital inside a sentence.
_PROPER = ("Gini", "Theil", "Palma", "Atkinson", "Watts", "Sen", "S80/S20", "Generalised")


@dataclass(frozen=True)
class Cell:
    """One number of a sentence: the row of its table (by key columns) and its column."""

    keys: tuple[tuple[str, Any], ...]
    column: str
    #: The table when it is not the sentence's own (e.g. the rule a sentence applies).
    table: str = ""

    def row_words(self) -> str:
        row = ", ".join(f"{key} = {value}" for key, value in self.keys) or "the one row"
        return f"{self.table}: {row}" if self.table else row


@dataclass(frozen=True)
class Source:
    """Where a sentence's numbers come from: a table of :attr:`Briefing.tables`, its cells."""

    table: str
    cells: tuple[Cell, ...] = ()

    def rows(self) -> tuple[str, ...]:
        """Each row named once, in order."""
        return tuple(dict.fromkeys(cell.row_words() for cell in self.cells))

    def columns(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys(cell.column for cell in self.cells))

    def table_of(self, cell: Cell) -> str:
        """The table a cell's number is read from."""
        return cell.table or self.table


@dataclass(frozen=True)
class Sentence:
    """One sentence of the briefing and where its numbers come from (None: no numbers)."""

    text: str
    source: Source | None = None


@dataclass(frozen=True)
class Paragraph:
    """A paragraph: its key (``level``, ``districts``, ``split``, ``clusters``,
    ``poverty``, ``data``), its title and its sentences."""

    key: str
    title: str
    sentences: tuple[Sentence, ...]

    @property
    def text(self) -> str:
        return " ".join(s.text for s in self.sentences)

    def sources(self) -> pd.DataFrame:
        """One row per sentence: the sentence, its table, rows and columns, in words."""
        return pd.DataFrame(
            [
                {
                    "sentence": s.text,
                    "table": vocabulary.BRIEFING_TABLES.get(s.source.table, s.source.table)
                    if s.source
                    else "",
                    "rows": "; ".join(s.source.rows()) if s.source else "",
                    "columns": ", ".join(s.source.columns()) if s.source else "",
                }
                for s in self.sentences
            ],
            columns=["sentence", "table", "rows", "columns"],
        )


@dataclass(frozen=True)
class Briefing:
    """The briefing of a view: its paragraphs and the tables their sentences cite."""

    view: ViewState
    paragraphs: tuple[Paragraph, ...]
    tables: Mapping[str, pd.DataFrame]

    def sentences(self) -> list[Sentence]:
        return [s for p in self.paragraphs for s in p.sentences]

    def paragraph(self, key: str) -> Paragraph | None:
        return next((p for p in self.paragraphs if p.key == key), None)

    def as_text(self, heading: str = "") -> str:
        """Plain text: a title line, then each paragraph under its title."""
        parts = [heading] if heading else []
        parts += [f"{p.title}\n{p.text}" for p in self.paragraphs]
        return "\n\n".join(parts) + "\n"

    def as_markdown(self, heading: str = "") -> str:
        """Markdown with every sentence escaped (names from the data never become markup)."""
        parts = [f"# {plain(heading)}"] if heading else []
        parts += [
            f"## {p.title}\n\n{' '.join(plain(s.text) for s in p.sentences)}"
            for p in self.paragraphs
        ]
        return "\n\n".join(parts) + "\n"


# --------------------------------------------------------------------------- rules


def direction(
    first: float,
    second: float,
    bounds: tuple[tuple[float, float], tuple[float, float]] | None = None,
    threshold: float = RELATIVE_CHANGE,
) -> str:
    """``rose``, ``fell`` or ``no clear change`` from ``first`` to ``second``.

    With ``bounds`` ((lower, upper) of each year): a rise when the second year's lower
    bound lies above the first year's upper bound, a fall in the mirror case, else no
    clear change (the ranges overlap). Without: a rise or fall when the change is more
    than ``threshold`` times the first year's absolute value (common practice for a stated
    tolerance; the tool states its own, :data:`RELATIVE_CHANGE`).
    """
    if bounds is not None:
        (low1, up1), (low2, up2) = bounds
        if low2 > up1:
            return "rose"
        if up2 < low1:
            return "fell"
        return "no clear change"
    if not (np.isfinite(first) and np.isfinite(second)):
        return "no clear change"
    step = second - first
    if abs(step) <= threshold * abs(first):
        return "no clear change"
    return "rose" if step > 0 else "fell"


def _bounded(row: Mapping[str, Any]) -> bool:
    """Whether a row has a lower and an upper bound (either may be infinite)."""
    low, up = (float(row.get(c, np.nan)) for c in ("lower", "upper"))
    return not (np.isnan(low) or np.isnan(up))


# --------------------------------------------------------------------------- words


def _lower(label: str) -> str:
    """A label inside a sentence: ``Mean income`` -> ``mean income``, ``Gini`` stays."""
    if label.startswith(_PROPER) or label[1:2].isupper():
        return label
    return label[:1].lower() + label[1:]


class _Words:
    """The view's figure in words and numbers, as the pages say and format it."""

    def __init__(self, panel: Panel, view: ViewState):
        self.panel, self.view = panel, view
        published = " (as published)" if panel.kind == "published" else ""
        self.label = _lower(vocabulary.index_label(view.index)) + published
        self.money = series.is_money(panel, view.index)
        self.digits = vocabulary.digits_of(panel, view.index)
        self.range_word = "interval" if panel.kind == "units" else "bounds"
        self.ranges_word = "intervals" if panel.kind == "units" else "bounds"

    def number(self, value: Any, key: str | None = None) -> str:
        key = key or self.view.index
        money = series.is_money(self.panel, key)
        return vocabulary.figure(value, money=money, digits=vocabulary.digits_of(self.panel, key))

    def with_range(self, row: Mapping[str, Any], key: str | None = None) -> str:
        """``0.528 (bounds 0.515 to 0.548)``, or the figure alone without bounds."""
        shown = self.number(row["value"], key)
        if not _bounded(row):
            return shown
        low, up = (self.number(row[c], key) for c in ("lower", "upper"))
        return f"{shown} ({self.range_word} {low} to {up})"


def _cells(keys: Mapping[str, Any], *columns: str, table: str = "") -> tuple[Cell, ...]:
    frozen = tuple(keys.items())
    return tuple(Cell(frozen, c, table) for c in columns)


def _range_columns(row: Mapping[str, Any]) -> tuple[str, ...]:
    return ("value", "lower", "upper") if _bounded(row) else ("value",)


def _district(row: Mapping[str, Any]) -> str:
    """``Port Idrel (CAL01)``; the id alone where the district has no other name."""
    name, region = str(row["name"]), str(row["region"])
    return region if name == region else f"{name} ({region})"


# --------------------------------------------------------------------------- paragraphs


class _Builder:
    """Collects the tables the sentences cite and builds each paragraph."""

    def __init__(self, panel: Panel, view: ViewState, compute: Compute):
        self.panel, self.view, self.compute = panel, view, compute
        self.words = _Words(panel, view)
        self.tables: dict[str, pd.DataFrame] = {}
        self.changed = False
        self.table(
            "rules",
            pd.DataFrame(
                {"rule": ["change", "significance"], "value": [RELATIVE_CHANGE, SIGNIFICANCE]}
            ),
        )

    def table(self, key: str, frame: pd.DataFrame) -> pd.DataFrame:
        self.tables[key] = frame.reset_index(drop=True)
        return self.tables[key]

    def rule(self, text: str, which: str) -> Sentence:
        return Sentence(text, Source("rules", _cells({"rule": which}, "value")))

    # (a) ---------------------------------------------------------------------------
    def level(self) -> list[Sentence]:
        view, panel, words = self.view, self.panel, self.words
        said: list[Sentence] = []
        line = None
        if panel.kind == "published":
            said.append(
                Sentence(
                    "The source's own province figure is not among the published figures, "
                    "and it is not recomputed from districts."
                )
            )
        else:
            from explorer.figures.timelines import province_series

            try:
                line = province_series(panel, view, self.compute)
            except DataError as error:
                said.append(_cannot("There is no province figure", error))
            else:
                if line is None:
                    said.append(
                        Sentence(
                            f"There is no province figure for {words.label}: it is not "
                            "computed for the pooled province."
                        )
                    )
        if line is not None:
            line = self.table("province", line[["year", "value"]])
            said.extend(self._province(line))
        said.extend(self._chosen())
        return said

    def _province(self, line: pd.DataFrame) -> list[Sentence]:
        view, words = self.view, self.words
        by_year = line.set_index("year")["value"]
        said = []
        if view.year in by_year.index:
            said.append(
                Sentence(
                    f"In {view.year} the province's {words.label} is "
                    f"{words.number(by_year[view.year])}.",
                    Source("province", _cells({"year": view.year}, "value")),
                )
            )
        y0, y1 = view.year_from, view.year_to
        if y0 is None or y1 is None or y0 >= y1:
            said.append(
                Sentence("The view's first year is not before its last, so no change is described.")
            )
            return said
        if y0 not in by_year.index or y1 not in by_year.index:
            said.append(Sentence("The province figure is missing in one of the view's two years."))
            return said
        a, b = float(by_year[y0]), float(by_year[y1])
        way = direction(a, b)
        cells = _cells({"year": y0}, "value") + _cells({"year": y1}, "value")
        if way == "no clear change":
            text = (
                f"Between {y0} and {y1} it shows no clear change ({words.number(a)} in {y0}, "
                f"{words.number(b)} in {y1})."
            )
        else:
            text = f"Between {y0} and {y1} it {way}, from {words.number(a)} to {words.number(b)}."
        said.append(Sentence(text, Source("province", cells)))
        said.append(
            self.rule(
                "The province figure has no bounds, so a change counts as a rise or fall when "
                f"it is more than {vocabulary.percent(RELATIVE_CHANGE, 0)} of the first year's value.",
                "change",
            )
        )
        return said

    def _chosen(self) -> list[Sentence]:
        """The view's chosen districts: their level and change, with the interval rule."""
        view, panel, words = self.view, self.panel, self.words
        if not view.districts:
            return []
        rows = series.values(panel, self.compute, view.index, view.method, view.year_from, view)
        rows = rows.assign(region=rows["region"].astype(str)).merge(
            names(panel), on="region", how="left"
        )
        chosen = rows[rows["region"].isin(view.districts[:_MOST_DISTRICTS])]
        table = self.table(
            "districts", chosen[["region", "name", "year", "value", "lower", "upper"]]
        )
        said = []
        for region in view.districts[:_MOST_DISTRICTS]:
            mine = table[table["region"] == region].set_index("year")
            if view.year not in mine.index:
                continue
            now = mine.loc[view.year]
            name = _district({"name": now["name"], "region": region})
            keys = {"region": region, "year": view.year}
            said.append(
                Sentence(
                    f"{name}: {words.label} {words.with_range(now)} in {view.year}.",
                    Source("districts", _cells(keys, *_range_columns(now))),
                )
            )
            y0, y1 = view.year_from, view.year_to
            if y0 is None or y1 is None or y0 >= y1 or y0 not in mine.index or y1 not in mine.index:
                continue
            a, b = mine.loc[y0], mine.loc[y1]
            both = _bounded(a) and _bounded(b)
            way = direction(
                float(a["value"]),
                float(b["value"]),
                ((a["lower"], a["upper"]), (b["lower"], b["upper"])) if both else None,
            )
            cells = _cells({"region": region, "year": y0}, *_range_columns(a)) + _cells(
                {"region": region, "year": y1}, *_range_columns(b)
            )
            span = f"{words.with_range(a)} in {y0} and {words.with_range(b)} in {y1}"
            if both:
                why = (
                    f"the two years' {words.ranges_word} do not overlap"
                    if way != "no clear change"
                    else f"the two years' {words.ranges_word} overlap"
                )
            else:
                why = (
                    f"without {words.ranges_word}, a change counts when it is more than "
                    f"{vocabulary.percent(RELATIVE_CHANGE, 0)} of the first year's value"
                )
                cells += _cells({"rule": "change"}, "value", table="rules")
            verb = "shows no clear change" if way == "no clear change" else way
            said.append(
                Sentence(
                    f"Between {y0} and {y1} the {words.label} of {now['name']} {verb}: {span}; {why}.",
                    Source("districts", cells),
                )
            )
        return said

    # (b) ---------------------------------------------------------------------------
    def districts(self) -> list[Sentence]:
        view, panel, words = self.view, self.panel, self.words
        table = series.values(panel, self.compute, view.index, view.method, view.year_from, view)
        values = map_values(panel, table, view.year, view.index)
        ranked = ranking(values)
        self.wide = int(wide(values).sum()) if len(values) else 0
        self.values = values
        ranked = ranked.assign(year=view.year)
        ranked = self.table(
            "ranking",
            ranked[
                [
                    "region",
                    "name",
                    "county",
                    "year",
                    "value",
                    "lower",
                    "upper",
                    "rank",
                    "rank_range",
                ]
            ],
        )
        if len(ranked) < 2:
            return [
                Sentence("Fewer than two districts have a figure this year: nothing to compare.")
            ]
        top, bottom = ranked.iloc[0].to_dict(), ranked.iloc[-1].to_dict()
        unequal = view.index in vocabulary.INDEX_LABELS and view.index not in _HIGHER_IS_EQUAL
        ends = f"{words.with_range(top)}, and"
        if unequal:
            text = (
                f"In {view.year} the most unequal district by the {words.label} is "
                f"{_district(top)}, {ends} the least unequal is {_district(bottom)}, "
                f"{words.with_range(bottom)}."
            )
        else:
            text = (
                f"In {view.year} the {words.label} is highest in {_district(top)}, {ends} "
                f"lowest in {_district(bottom)}, {words.with_range(bottom)}."
            )
        said = [
            Sentence(
                text,
                Source(
                    "ranking",
                    _cells({"region": top["region"], "year": view.year}, *_range_columns(top))
                    + _cells(
                        {"region": bottom["region"], "year": view.year}, *_range_columns(bottom)
                    ),
                ),
            )
        ]
        if not (top["rank_range"] and bottom["rank_range"]):
            said.append(
                Sentence(
                    "These figures carry no bounds, so whether the two differ by more than "
                    "their own uncertainty cannot be told."
                )
            )
            said.append(
                Sentence(
                    vocabulary.ranking_caution(panel.kind)
                    if panel.kind in ("means", "published")
                    else vocabulary.no_bound_text(panel.kind)
                )
            )
            return said
        (best_top, worst_top), (best_low, worst_low) = (
            _rank_span(r["rank_range"]) for r in (top, bottom)
        )
        cells = _cells({"region": top["region"], "year": view.year}, "rank_range") + _cells(
            {"region": bottom["region"], "year": view.year}, "rank_range"
        )
        if worst_top < best_low:
            text = (
                f"Their possible ranks, {top['rank_range']} and {bottom['rank_range']}, do not "
                f"overlap: {top['name']} is clearly ranked above {bottom['name']}"
            )
            text += (
                f", and {top['name']} holds rank 1 whatever the true values within the {words.ranges_word}."
                if worst_top == 1
                else ", though other districts could also hold rank 1."
            )
        else:
            text = (
                f"Their possible ranks, {top['rank_range']} and {bottom['rank_range']}, overlap: "
                f"the {words.ranges_word} do not tell which of the two ranks higher."
            )
        said.append(Sentence(text, Source("ranking", cells)))
        return said

    # (c) ---------------------------------------------------------------------------
    def split(self) -> list[Sentence]:
        view, panel = self.view, self.panel
        if panel.kind == "published":
            return []
        index, instead = split_index(view)
        try:
            split = breakdown(panel, view, self.compute)
        except DataError as error:
            return [_cannot("The province's inequality cannot be split", error)]
        label = _lower(vocabulary.index_label(index))
        # the Breakdown page's own sentence, said of that page
        said = [Sentence(instead.replace("this page", "the Breakdown page"))] if instead else []
        shares = split.shares
        if panel.kind == "means":  # district means hold nothing inside districts
            shares = shares[~((shares["level"] == "district") & (shares["component"] == "within"))]
        shares = self.table("split", shares.assign(year=view.year))
        first = False
        for level in dict.fromkeys(shares["level"]):
            rows = shares[shares["level"] == level]
            if rows.empty:
                continue
            parts = [
                f"{_lower(vocabulary.part_label(r.component, level))} {vocabulary.percent(vocabulary.tidy_zero(pd.Series([r.share]))[0])}"
                for r in rows.itertuples(index=False)
            ]
            lead = (
                f"Of the province's {label} in {view.year}: "
                if not first
                else f"Counted by {vocabulary.groups_word(level)}: "
            )
            first = True
            said.append(
                Sentence(
                    lead + ", ".join(parts) + ".",
                    Source(
                        "split",
                        tuple(
                            c
                            for r in rows.itertuples(index=False)
                            for c in _cells(
                                {"year": view.year, "level": level, "component": r.component},
                                "share",
                            )
                        ),
                    ),
                )
            )
        if panel.kind == "means":
            said.append(Sentence(cautions.CAUTIONS["means"]))
        said.extend(self._change(index))
        return said

    def _change(self, index: str) -> list[Sentence]:
        view = self.view
        try:
            moved = change(self.panel, view, self.compute, index)
        except DataError as error:
            return [_cannot("The change cannot be split", error)]
        if moved is None:
            return [
                Sentence(
                    "The view's first year is not before its last, so the change is not split."
                )
            ]
        self.changed = True
        terms = self.table("change", moved.terms)
        said = [Sentence(moved.notice)] if moved.notice else []
        total = terms[(terms["level"] == "total") & (terms["component"] == "total")]
        parts = terms[(terms["group"] == "(all)") & ~terms["component"].isin(("total", "residual"))]
        if total.empty or parts.empty:
            return said
        top = parts.loc[parts["value"].abs().idxmax()]
        span = str(top["year"])
        label = _lower(vocabulary.index_label(moved.index))
        number = lambda v: vocabulary.figure(vocabulary.tidy_zero(pd.Series([v]))[0], digits=4)  # noqa: E731
        share = vocabulary.percent(vocabulary.tidy_zero(pd.Series([top["share"]]))[0])
        said.append(
            Sentence(
                f"Between {view.year_from} and {view.year_to} the province's {label} changed by "
                f"{number(total['value'].iloc[0])}; the largest part of that change is "
                f"“{moved.term_words.get(top['component'], top['component'])}”, "
                f"{number(top['value'])} ({share} of the change).",
                Source(
                    "change",
                    _cells({"year": span, "level": "total", "component": "total"}, "value")
                    + _cells(
                        {
                            "year": span,
                            "level": top["level"],
                            "group": "(all)",
                            "component": top["component"],
                        },
                        "value",
                        "share",
                    ),
                ),
            )
        )
        return said

    # (d) ---------------------------------------------------------------------------
    def clusters(self) -> list[Sentence]:
        panel = self.panel
        if panel.boundaries is None or self.values.empty:
            return []
        found = cluster_layer(panel, self.values.set_index("region")["value"], self.compute)
        overall = found.overall
        if overall is None or not float(getattr(overall, "p_value", np.nan)) < SIGNIFICANCE:
            return []  # no clustering to speak of: the briefing says nothing of it
        moran, expected, p_value = (figure for _, figure, _ in moran_metrics(overall))
        self.table(
            "clusters",
            pd.DataFrame(
                [
                    {
                        "moran_i": moran,
                        "expected": expected,
                        "p_value": p_value,
                        "permutations": MAP_PERMUTATIONS,
                    }
                ]
            ),
        )
        said = [
            Sentence(
                f"Districts with similar values of the {self.words.label} sit next to each other: the global "
                f"Moran's I is {moran} against {expected} expected without clustering "
                f"(p-value {p_value} from {MAP_PERMUTATIONS} random placements, below "
                f"{vocabulary.percent(SIGNIFICANCE, 0)}).",
                Source(
                    "clusters",
                    _cells({}, "moran_i", "expected", "p_value", "permutations")
                    + _cells({"rule": "significance"}, "value", table="rules"),
                ),
            )
        ]
        labelled = found.districts.merge(names(panel)[["region", "name"]], on="region", how="left")
        counts = []
        for cluster, words in (
            ("high-high", "high among high neighbours"),
            ("low-low", "low among low neighbours"),
        ):
            members = labelled[labelled["cluster"] == cluster]
            counts.append(
                {
                    "cluster": cluster,
                    "districts": len(members),
                    "names": ", ".join(members["name"].astype(str)),
                }
            )
            if len(members):
                listed = ", ".join(members["name"].astype(str).head(_MOST_CLUSTER_NAMES))
                more = len(members) - _MOST_CLUSTER_NAMES
                said.append(
                    Sentence(
                        f"{len(members)} district(s) form {cluster} clusters ({words})"
                        + (": " if more <= 0 else ", among them ")
                        + f"{listed}.",
                        Source("cluster counts", _cells({"cluster": cluster}, "districts")),
                    )
                )
        self.table("cluster counts", pd.DataFrame(counts))
        return said

    # (e) ---------------------------------------------------------------------------
    def poverty(self) -> list[Sentence]:
        panel, view = self.panel, self.view
        if panel.kind == "published":
            return self._published_poverty()
        if "fgt_0" not in series.figure_keys(panel):
            return []
        line_words = vocabulary.poverty_line_words(view)
        self.table("view", pd.DataFrame({"field": ["poverty_line"], "value": [line_words]}))
        said = []
        province = series.province(panel, "fgt_0", compute=self.compute, view=view)
        head = vocabulary.POVERTY_HELP["fgt_0"]
        if province is not None and view.year in set(province["year"]):
            province = self.table("poverty province", province)
            value = province.loc[province["year"] == view.year, "value"].iloc[0]
            said.append(
                Sentence(
                    f"Against a poverty line of {line_words}, the headcount ratio FGT(0), "
                    f"{head}, is {self.words.number(value, 'fgt_0')} for the province in {view.year}.",
                    Source(
                        "poverty province",
                        _cells({"year": view.year}, "value")
                        + _cells({"field": "poverty_line"}, "value", table="view"),
                    ),
                )
            )
        else:
            said.append(
                Sentence(
                    f"Against a poverty line of {line_words}, the province's headcount ratio "
                    "is not given: it needs every district's population.",
                    Source("view", _cells({"field": "poverty_line"}, "value")),
                )
            )
        table = series.values(panel, self.compute, "fgt_0", view.method, view=view)
        ranked = ranking(map_values(panel, table, view.year, "fgt_0"))
        ranked = self.table(
            "poverty ranking",
            ranked.assign(year=view.year)[
                ["region", "name", "year", "value", "lower", "upper", "rank", "rank_range"]
            ],
        )
        if ranked.empty:
            return said
        top = ranked.iloc[0].to_dict()
        text = (
            f"The highest headcount ratio is in {_district(top)}, "
            f"{self.words.with_range(top, 'fgt_0')}"
        )
        cells = _cells({"region": top["region"], "year": view.year}, *_range_columns(top))
        if top["rank_range"]:
            text += f"; its possible ranks are {top['rank_range']}"
            cells += _cells({"region": top["region"], "year": view.year}, "rank_range")
        said.append(Sentence(text + ".", Source("poverty ranking", cells)))
        return said

    def _published_poverty(self) -> list[Sentence]:
        panel, view = self.panel, self.view
        if "poverty_rate" not in set(panel.data["measure"]):
            return []
        table = series.values(panel, self.compute, "poverty_rate", view.method, view=view)
        ranked = ranking(map_values(panel, table, view.year, "poverty_rate"))
        ranked = self.table(
            "poverty ranking",
            ranked.assign(year=view.year)[["region", "name", "year", "value", "rank"]],
        )
        if ranked.empty:
            return []
        top = ranked.iloc[0].to_dict()
        scale = vocabulary.SCALE_NAMES.get(vocabulary.published_scale(panel, "poverty_rate"), "")
        return [
            Sentence(
                f"The source publishes a poverty rate; in {view.year} it is highest in "
                f"{_district(top)}, {self.words.number(top['value'], 'poverty_rate')} "
                f"({scale}, as published).",
                Source(
                    "poverty ranking", _cells({"region": top["region"], "year": view.year}, "value")
                ),
            )
        ]

    # (f) ---------------------------------------------------------------------------
    def data(self) -> list[Sentence]:
        from explorer.data.dataset_store import facts_of

        panel, view = self.panel, self.view
        facts = facts_of(panel)
        given = {
            "source": facts.source,
            "income_concept": facts.income_concept or panel.income_concept,
            "unit": facts.unit,
            "currency": facts.currency,
            "price_base": facts.price_base,
        }
        stated = {k: str(v) for k, v in given.items() if v}
        frame = pd.DataFrame(
            {
                "fact": ["kind", "districts", "first_year", "last_year", "set_aside", *stated],
                "value": [
                    vocabulary.KIND_LABELS.get(panel.kind, panel.kind),
                    str(len(panel.regions)),
                    str(panel.years[0]),
                    str(panel.years[-1]),
                    str(len(panel.excluded)),
                    *stated.values(),
                ],
            }
        )
        self.table("facts", frame)
        fact = lambda *keys: tuple(c for k in keys for c in _cells({"fact": k}, "value"))  # noqa: E731
        said = [
            Sentence(
                f"The data: {vocabulary.dataset_name(view, panel)}, "
                f"{_lower(vocabulary.KIND_LABELS.get(panel.kind, panel.kind))}, "
                f"{len(panel.regions)} districts, {panel.years[0]} to {panel.years[-1]}.",
                Source("facts", fact("kind", "districts", "first_year", "last_year")),
            )
        ]
        words = {
            "source": "source",
            "income_concept": "income concept",
            "unit": "unit",
            "currency": "currency",
            "price_base": "prices",
        }
        if stated:
            said.append(
                Sentence(
                    "; ".join(
                        f"{words[k].capitalize() if i == 0 else words[k]}: {v}"
                        for i, (k, v) in enumerate(stated.items())
                    )
                    + ".",
                    Source("facts", fact(*stated)),
                )
            )
        missing = [words[k] for k in given if k not in stated]
        if missing:
            said.append(Sentence("Not stated with the data: " + ", ".join(missing) + "."))
        said.extend(self._set_aside())
        warned = cautions.for_view(
            panel.kind,
            ranking=True,
            wide_intervals=self.wide,
            income_concept=panel.income_concept,
            change=self.changed,
        )
        self.table("cautions", pd.DataFrame({"caution": range(1, len(warned) + 1), "text": warned}))
        said.extend(
            Sentence(text, Source("cautions", _cells({"caution": i}, "text")))
            for i, text in enumerate(warned, start=1)
        )
        return said

    def _set_aside(self) -> list[Sentence]:
        excluded = self.panel.excluded
        if not len(excluded):
            return [Sentence("No district-year was set aside.")]
        named = dict(zip(*(names(self.panel)[c] for c in ("region", "name")), strict=True))
        rows = excluded.reset_index(drop=True).assign(
            name=lambda f: f["region"].astype(str).map(lambda r: named.get(r, r))
        )
        rows = self.table("set aside", rows[["region", "name", "year", "reason"]])
        shown = rows.head(_MOST_NAMED)
        listed = "; ".join(
            f"{r.name} ({r.region}) {r.year}: {r.reason}" for r in shown.itertuples()
        )
        more = len(rows) - len(shown)
        cells = _cells({"fact": "set_aside"}, "value", table="facts") + tuple(
            c
            for r in shown.itertuples()
            for c in _cells({"region": r.region, "year": r.year}, "reason")
        )
        return [
            Sentence(
                f"{len(rows)} district-year(s) were set aside and are in no figure"
                + (": " if more <= 0 else ", among them ")
                + f"{listed}.",
                Source("set aside", cells),
            )
        ]


def _cannot(what: str, error: DataError) -> Sentence:
    """Why a figure is missing, in the words of the data check that refused it."""
    reason = error.problems[0].message.rstrip(".") if error.problems else str(error)
    return Sentence(f"{what}: {reason}.")


def _rank_span(text: str) -> tuple[int, int]:
    """``3–11`` -> (3, 11); ``1`` -> (1, 1)."""
    best, _, worst = str(text).partition("–")
    return int(best), int(worst or best)


def briefing(panel: Panel, view: ViewState, compute: Compute) -> Briefing:
    """The briefing of ``view`` on ``panel``: paragraphs of sentences with their sources.

    Parameters
    ----------
    panel : Panel
        The view's data.
    view : ViewState
        The view; settled against ``panel`` first (:func:`explorer.figures.settle.settle`).
    compute : Compute
        The computations (the app's cached one, or :class:`PlainCompute`).

    Returns
    -------
    Briefing
        Paragraphs in order: the province's level and change (with the chosen
        districts'), the most and least unequal districts, the within/between split and
        what drove the change, spatial clustering (only when significant), poverty (only
        where it is measured), the data and the cautions. A paragraph with nothing to say
        is left out.
    """
    view = settle(view, panel)
    build = _Builder(panel, view, compute)
    made = [
        ("level", build.level()),
        ("districts", build.districts()),
        ("split", build.split()),
        ("clusters", build.clusters()),
        ("poverty", build.poverty()),
        ("data", build.data()),
    ]
    paragraphs = tuple(
        Paragraph(key, vocabulary.BRIEFING_PARAGRAPHS[key], tuple(said))
        for key, said in made
        if said
    )
    return Briefing(view, paragraphs, dict(build.tables))


def sources_table(told: Briefing) -> pd.DataFrame:
    """Every sentence with its paragraph and source, for a download or a table."""
    frames: Iterable[pd.DataFrame] = (
        p.sources().assign(paragraph=p.title) for p in told.paragraphs
    )
    out = pd.concat(list(frames), ignore_index=True)
    return out[["paragraph", "sentence", "table", "rows", "columns"]]

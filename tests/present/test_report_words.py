"""The report speaks like the pages: planner words, the pages' number formats, no keys.

Each demo dataset's report is generated for a view that opens every section (a district
chosen, two years for the change) and its visible text is read with the standard
library's HTML parser (html.parser follows the HTML5 tokenizer), leaving out scripts,
styles and the two <pre> blocks that hold the link and the view file: those are for the
app to read back and must keep the short keys.
"""

from __future__ import annotations

import re
from html.parser import HTMLParser

import pandas as pd
import pytest

from explorer.data import catalog
from explorer.figures.report import report_html
from explorer.figures.report_tables import notes_once
from explorer.present import vocabulary
from explorer.stats import indices, lorenz
from explorer.views import ViewState

DEMOS = ("demo", "demo-households", "demo-means", "demo-published")

#: Keys the computing modules use; none may be read in the report as a word of its own.
KEYS = sorted(
    {
        *indices.DEFAULT_INDICES,
        *lorenz.METHODS,
        "within",
        "between",
        "overlap",
        "total",
        "population_within",
        "population_between",
        "relative_income",
        "residual",
        "brackets",
        "units",
        "means",
        "region",
        "klass",
        "(all)",
        "income_concept",
        "price_base",
        "lower",
        "upper",
        "value",
        "share",
        "component",
        "level",
    }
)
#: Keys that cannot be an English word: wrong wherever they stand.
TOKENS = [key for key in KEYS if "_" in key]
#: Machine spellings of numbers (scientific notation, IEEE specials).
NUMBER_PATTERNS = (r"\d\.\d+e[-+]\d+", r"(?i)\binf\b", r"(?i)\bnan\b", r"-0\.0+\b(?!\d)")


class _Visible(HTMLParser):
    """Text a reader sees: one entry per text node; tables as rows of cell texts."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.nodes: list[str] = []
        self.tables: list[list[list[str]]] = []
        self._skip = 0
        self._cell: list[str] | None = None
        self._data = False

    def handle_starttag(self, tag, attrs):
        if tag in ("script", "style", "pre"):
            self._skip += 1
        elif tag == "table":  # the page layout's own table is not a table of figures
            self._data = "data" in (dict(attrs).get("class") or "").split()
            if self._data:
                self.tables.append([])
        elif tag == "tr" and self._data:
            self.tables[-1].append([])
        elif tag in ("td", "th") and self._data:
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("script", "style", "pre"):
            self._skip -= 1
        elif tag in ("td", "th") and self._cell is not None:
            self.tables[-1][-1].append("".join(self._cell).strip())
            self._cell = None
        elif tag == "table":
            self._data = False

    def handle_data(self, data):
        if self._skip:
            return
        if data.strip():
            self.nodes.append(data.strip())
        if self._cell is not None:
            self._cell.append(data)


def _view(dataset: str) -> ViewState:
    panel = catalog.open_dataset(dataset)
    years = [int(y) for y in panel.years]
    return ViewState(
        dataset=dataset, districts=(str(panel.regions[0]),), year_from=years[0], year_to=years[-1]
    )


@pytest.fixture(scope="module")
def reports() -> dict[str, _Visible]:
    out = {}
    for dataset in DEMOS:
        parser = _Visible()
        parser.feed(report_html(_view(dataset), catalog.open_dataset(dataset)))
        parser.close()
        out[dataset] = parser
    return out


def offences(nodes: list[str]) -> list[str]:
    """Every internal key or machine number among the visible text nodes."""
    found = []
    for node in nodes:
        if node in KEYS:
            found.append(f"key as a word: {node!r}")
        found += [f"key {t!r} in {node[:80]!r}" for t in TOKENS if re.search(rf"\b{t}\b", node)]
        found += [f"{p!r} in {node[:80]!r}" for p in NUMBER_PATTERNS if re.search(p, node)]
    return found


def test_the_scan_finds_keys_and_machine_numbers():
    """The scan must be able to fail: it flags what today's pages never show."""
    bad = ["theil_t", "within", "-7.256e-05", "inf", "NaN", "population_within share", "-0.0000"]
    assert [text for text in bad if not offences([text])] == []
    assert offences(["Within counties", "no finite bound", "Theil T", "0.0001", "infinite"]) == []


@pytest.mark.parametrize("dataset", DEMOS)
def test_no_internal_key_or_machine_number_in_the_visible_text(reports, dataset):
    assert offences(reports[dataset].nodes) == []


@pytest.mark.parametrize("dataset", DEMOS)
def test_every_table_has_rows_and_no_note_repeated_on_its_rows(reports, dataset):
    """No empty table; no long text (a note, a caution) standing in more than one row."""
    tables = reports[dataset].tables
    assert tables, "the report drew no table"
    for rows in tables:
        body = [row for row in rows[1:] if row]
        assert body, f"empty table under {rows[:1]}"
        for column in range(len(rows[0])):
            cells = pd.Series([row[column] for row in body])
            assert not cells.eq("").all(), f"empty column {rows[0][column]!r}"
            long_cells = cells[cells.str.len() > 60]
            assert not long_cells.duplicated().any(), f"note repeated in {rows[0][column]!r}"


def test_tables_use_the_pages_titles_and_formats(reports):
    """Column titles from vocabulary; shares as percentages, as the Breakdown page shows."""
    headers = {cell for rows in reports["demo"].tables for cell in rows[0]}
    assert {"Rank", "District", "Lower bound", "Upper bound", "Share of the total"} <= headers
    split = next(rows for rows in reports["demo"].tables if "Share of the total" in rows[0])
    at = split[0].index("Share of the total")
    shares = [float(row[at].rstrip("%")) for row in split[1:]]
    assert all(row[at].endswith("%") for row in split[1:])
    # The parts of the Gini add up to the whole (Dagum 1997, eq. 4: G = Gw + Gnb + Gt).
    assert sum(shares) == pytest.approx(100.0, abs=0.2)


def test_a_section_left_out_is_named_with_its_reason(reports):
    """Published figures cannot be split; unit records without sampling intervals have no
    bounds to draw: each is said in a sentence, not drawn empty. District means follow
    their own trajectories."""
    published = reports["demo-published"].nodes
    assert any(n.startswith("Breakdown: published figures are shown as given") for n in published)
    assert any(n.startswith("Over time") for n in reports["demo-means"].nodes)
    households = reports["demo-households"].nodes
    assert not any(n.startswith("Indices with bounds") for n in households)
    assert any(n.startswith("Chart of the indices with bounds") for n in households)


def test_notes_shared_by_rows_are_said_once_under_the_table():
    shown = pd.DataFrame(
        {"Index": ["A", "B", "C"], "Note": ["wide", "wide", ""], "Curve": ["x", "x", "x"]}
    )
    table, said = notes_once(shown, "Note", "Index")
    assert "Note" not in table.columns and said == ["Note for A, B: Wide."]
    table, said = notes_once(table, "Curve", "Index")
    assert list(table.columns) == ["Index"] and said == ["Curve: X."]
    own = pd.DataFrame({"Index": ["A", "B"], "Note": ["one", ""]})
    assert notes_once(own, "Note", "Index") == (own, [])


def test_percent_reads_rounding_noise_as_zero():
    """common practice: a share shown to one decimal of a percent."""
    assert vocabulary.percent(0.32019) == "32.0%"
    assert vocabulary.percent(-6.282e-16) == "0.0%"
    assert vocabulary.percent(float("nan")) == "—"
    assert vocabulary.percent(-0.002157) == "-0.2%"

"""A one-file HTML report of a view that opens offline.

Charts are embedded as inline SVG (rendered by vl-convert), tables as HTML; there are no
scripts and no external style sheets, fonts or images, so the file can be mailed or
archived and still open in an office without internet. Every string that comes from the
user's data (district names, dataset names, notes) is HTML-escaped.

Tables arrive as :class:`ReportTable` (text cells in the pages' words, notes said once
under the table); a bare DataFrame is shown with the pages' column titles and number
formats from :mod:`explorer.present.vocabulary`.
"""

from __future__ import annotations

import html
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import TYPE_CHECKING

import altair as alt
import pandas as pd

from explorer.present import charts as chart_builders
from explorer.present import vocabulary

if TYPE_CHECKING:  # only the view's own methods are used: no import of the layer above
    from explorer.views import ViewState

__all__ = ["METHOD_REFERENCES", "PRINT_STYLE", "ReportTable", "build_report", "plain_table"]


@dataclass(frozen=True)
class ReportTable:
    """A table as the report prints it.

    Attributes
    ----------
    data : DataFrame
        The rows with their keys and numbers (what tests and downloads read).
    shown : DataFrame
        The same rows as text, columns titled in the pages' words.
    notes : tuple of str
        Sentences printed once under the table (cautions, notes shared by rows).
    """

    data: pd.DataFrame
    shown: pd.DataFrame
    notes: tuple[str, ...] = ()


def plain_table(frame: pd.DataFrame) -> ReportTable:
    """A table without its own wording: the pages' column titles and number formats."""
    shown = pd.DataFrame(index=range(len(frame)))
    for column in frame.columns:
        values = frame[column].reset_index(drop=True)
        title = vocabulary.COLUMN_LABELS.get(str(column), str(column).replace("_", " "))
        if pd.api.types.is_float_dtype(values):
            shown[title] = [vocabulary.figure(v, digits=4) for v in values]
        else:
            shown[title] = ["—" if pd.isna(v) else str(v) for v in values]
    return ReportTable(frame, shown)


#: Published methods the tool uses, as the report cites them (author, year, title).
METHOD_REFERENCES: tuple[str, ...] = (
    "Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index. "
    "Review of Economics and Statistics 54: 306–316.",
    "Fritsch, F. N. and Carlson, R. E. (1980). Monotone piecewise cubic interpolation. "
    "SIAM Journal on Numerical Analysis 17: 238–246.",
    "Villaseñor, J. A. and Arnold, B. C. (1989). Elliptical Lorenz curves. "
    "Journal of Econometrics 40: 327–338.",
    "Kakwani, N. (1980). On a class of poverty measures. Econometrica 48: 437–446.",
    "Atkinson, A. B. (1970). On the measurement of inequality. "
    "Journal of Economic Theory 2: 244–263.",
    "Shorrocks, A. F. (1980). The class of additively decomposable inequality measures. "
    "Econometrica 48: 613–625.",
    "Dagum, C. (1997). A new approach to the decomposition of the Gini income inequality "
    "ratio. Empirical Economics 22: 515–531.",
    "Mookherjee, D. and Shorrocks, A. (1982). A decomposition analysis of the trend in UK "
    "income inequality. Economic Journal 92: 886–902.",
    "Anselin, L. (1995). Local indicators of spatial association — LISA. "
    "Geographical Analysis 27: 93–115.",
    "Fisher, W. D. (1958). On grouping for maximum homogeneity. "
    "Journal of the American Statistical Association 53: 789–798.",
)

_MAX_TABLE_ROWS = 2_000

_STYLE = """
body { font-family: system-ui, sans-serif; margin: 2rem auto; max-width: 70rem;
       color: #1a1a1a; line-height: 1.45; padding: 0 1rem; }
h1 { font-size: 1.6rem; margin-bottom: 0.2rem; }
h2 { font-size: 1.2rem; margin-top: 2rem; border-bottom: 1px solid #ccc; }
.meta, .note { color: #555; }
.note { font-size: 0.85rem; margin: 0.2rem 0; }
.cautions { background: #fff7e6; border-left: 4px solid #b35806; padding: 0.6rem 1rem; }
table.data { border-collapse: collapse; font-size: 0.85rem; margin: 0.5rem 0 1rem; }
table.data th, table.data td { border: 1px solid #ddd; padding: 0.2rem 0.5rem; text-align: left; }
table.data th { background: #f2f2f2; }
table.data .num { text-align: right; font-variant-numeric: tabular-nums; }
table.data td.num { white-space: nowrap; }
figure { margin: 1rem 0; overflow-x: auto; }
figcaption { font-weight: 600; margin-bottom: 0.3rem; }
pre { background: #f6f6f6; padding: 0.6rem; overflow-x: auto; font-size: 0.8rem; }
dl { display: grid; grid-template-columns: max-content 1fr; gap: 0.2rem 1rem; }
dt { font-weight: 600; }
dd { margin: 0; }
/* The sheet is a table only on paper, where its footer repeats on every page. */
table.sheet, table.sheet > tbody, table.sheet > tfoot, table.sheet > * > tr,
table.sheet > * > tr > td { display: block; padding: 0; border: 0; }
.running { margin-top: 2rem; padding-top: 0.4rem; border-top: 1px solid #ccc;
           color: #555; font-size: 0.8rem; }
"""

# A4 paper: page numbers in the bottom margin where the browser draws margin boxes; the
# fingerprint and date in a footer every engine repeats (a table footer repeats on every
# printed page; paged-media engines lift it into the margin as a running element).
_PRINT = """
@page { size: A4; margin: 16mm 14mm 18mm 14mm;
        @bottom-right { content: "Page " counter(page) " of " counter(pages);
                        font: 8pt system-ui, sans-serif; color: #555; }
        @bottom-left { content: element(footer); } }
@media print {
  html, body { background: #fff; }
  body { margin: 0; max-width: none; padding: 0; font-size: 10pt; }
  table.sheet { display: table; width: 100%; border-collapse: collapse; table-layout: fixed; }
  table.sheet > tbody { display: table-row-group; }
  table.sheet > tfoot { display: table-footer-group; }
  table.sheet > * > tr { display: table-row; }
  table.sheet > * > tr > td { display: table-cell; }
  .running { position: running(footer); margin-top: 4mm; font-size: 8pt; }
  h2, h3, figcaption { break-after: avoid; page-break-after: avoid; }
  figure, tr, li, dl, .note, pre { break-inside: avoid; page-break-inside: avoid; }
  figure { overflow: visible; }
  figure svg { max-width: 100%; max-height: 235mm; width: auto; height: auto; }
  table.data { font-size: 8pt; }
  table.data thead { display: table-header-group; }
  pre { white-space: pre-wrap; overflow: visible; }
  button, input, select, textarea, summary, [role="button"], .controls, .screen-only {
    display: none !important; }
  a { color: inherit; text-decoration: none; }
}
"""


#: The print style sheet (A4 pages, page numbers, repeated footer), for tests and reuse.
PRINT_STYLE = _PRINT


def _e(value: object) -> str:
    return html.escape(str(value), quote=True)


def _list(items: Sequence[str], css: str = "") -> str:
    if not items:
        return "<p>None.</p>"
    attr = f' class="{css}"' if css else ""
    return f"<ul{attr}>" + "".join(f"<li>{_e(item)}</li>" for item in items) + "</ul>"


# A cell that reads as a number (or a range or share of numbers) is set right-aligned.
_NUMERIC = re.compile(r"^[−\-+]?[\d,]*\.?\d+%?( [–-] [−\-+]?[\d,]*\.?\d+)?$|^—$")


def _grid(frame: pd.DataFrame) -> str:
    """Text cells as an HTML table; columns of numbers right-aligned, text left."""
    numeric = [
        bool(len(frame)) and all(_NUMERIC.match(str(v)) for v in frame[c]) for c in frame.columns
    ]
    head = "".join(
        f"<th{' class=num' if n else ''}>{_e(c)}</th>"
        for c, n in zip(frame.columns, numeric, strict=True)
    )
    rows = "".join(
        "<tr>"
        + "".join(
            f"<td{' class=num' if n else ''}>{_e('—' if pd.isna(v) else v)}</td>"
            for v, n in zip(row, numeric, strict=True)
        )
        + "</tr>"
        for row in frame.itertuples(index=False, name=None)
    )
    return f"<table class='data'><thead><tr>{head}</tr></thead><tbody>{rows}</tbody></table>"


def _table(name: str, table: ReportTable | pd.DataFrame) -> str:
    if isinstance(table, pd.DataFrame):
        table = plain_table(table)
    frame = table.shown
    if frame.empty:  # never an empty grid: one sentence instead
        return f"<h3>{_e(name)}</h3><p>No rows to show for this view.</p>"
    shown = frame.head(_MAX_TABLE_ROWS)
    body = _grid(shown)
    notes = list(table.notes)
    if len(frame) > len(shown):
        notes.append(f"First {len(shown):,} of {len(frame):,} rows.")
    said = "".join(f"<p class='note'>{_e(note)}</p>" for note in notes)
    return f"<section class='table'><h3>{_e(name)}</h3>{body}{said}</section>"


def _figure(name: str, chart: alt.TopLevelMixin, facts_line: str = "") -> str:
    try:
        svg = chart_builders.to_svg(chart)
    except Exception as error:  # noqa: BLE001 - one bad chart must not lose the report
        svg = f"<p>This chart could not be drawn ({_e(type(error).__name__)}).</p>"
    if svg.startswith("<?xml"):
        svg = svg.split("?>", 1)[1]
    said = f" — {facts_line}" if facts_line else ""
    return f"<figure><figcaption>{_e(name + said)}</figcaption>{svg}</figure>"


def _briefing(paragraphs: Sequence[tuple[str, Sequence[str]]]) -> str:
    """The briefing's paragraphs, every sentence escaped (names come from the data)."""
    if not paragraphs:
        return ""
    body = "".join(
        f"<h3>{_e(title)}</h3><p>{' '.join(_e(s) for s in sentences)}</p>"
        for title, sentences in paragraphs
    )
    return f"<section class='briefing'><h2>Briefing</h2>{body}</section>"


def _footer(name: object, fingerprint: object, when: str) -> str:
    """The line on every printed page: which data, which version of them, when."""
    return (
        f"<footer class='running'>Rift report · {_e(name)} · data fingerprint "
        f"<code>{_e(fingerprint)}</code> · generated {_e(when)}</footer>"
    )


def _fact(key: str, value: object) -> object:
    if key == "kind":
        return vocabulary.KIND_LABELS.get(str(value), value)
    return value


def build_report(
    view: ViewState,
    *,
    panel_info: Mapping[str, object],
    tables: Mapping[str, ReportTable | pd.DataFrame],
    charts: Mapping[str, alt.TopLevelMixin],
    notes: Sequence[str],
    cautions: Sequence[str],
    generated: datetime | None = None,
    facts_line: str = "",
    absent: Sequence[str] = (),
    briefing: Sequence[tuple[str, Sequence[str]]] = (),
) -> str:
    """The view as one self-contained HTML document.

    Parameters
    ----------
    view : ViewState
        The view reported; its view-file JSON and link are included so a colleague can
        open exactly this view.
    panel_info : mapping
        What the data are: e.g. ``name``, ``fingerprint``, ``kind``, ``income_concept``,
        ``districts``, ``years``. Shown as given (escaped).
    tables : mapping of str to ReportTable or DataFrame
        Titled tables (index table, decomposition, ...); a DataFrame is shown through
        :func:`plain_table`.
    charts : mapping of str to alt.Chart
        Titled charts, embedded as inline SVG.
    notes : sequence of str
        Method notes (which Lorenz method, which interval, ...).
    cautions : sequence of str
        Cautions to print before the figures (see :mod:`explorer.present.cautions`).
    generated : datetime, optional
        Generation time; now (UTC) by default.
    facts_line : str, optional
        The dataset's facts in one line (concept, unit, money, source), shown under the
        title and in every figure's caption.
    absent : sequence of str
        One sentence per section the view leaves out, saying why.
    briefing : sequence of (str, sequence of str)
        The briefing's paragraphs, each a title and its sentences, printed at the top.

    Returns
    -------
    str
        HTML text with no scripts and no references to other files or the network.
    """
    when = (generated or datetime.now(UTC)).isoformat(timespec="seconds")
    name = panel_info.get("name") or view.dataset
    fingerprint = panel_info.get("fingerprint", "")
    facts = "".join(
        f"<dt>{_e(vocabulary.FACT_LABELS.get(key, key))}</dt><dd>{_e(_fact(key, value))}</dd>"
        for key, value in panel_info.items()
    )
    link = view.to_link() or "(the default view)"
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>Rift report: {_e(name)} — {_e(view.page_name)}</title>",
        f"<style>{_STYLE}{_PRINT}</style></head><body>",
        # Content in the sheet's one cell; its footer repeats on every printed page.
        "<table class='sheet'><tbody><tr><td>",
        f"<h1>{_e(name)}: {_e(view.page_name)}</h1>",
        f"<p class='meta'>Generated {_e(when)} · data fingerprint "
        f"<code>{_e(fingerprint)}</code></p>",
        f"<p class='facts'>{_e(facts_line)}</p>" if facts_line else "",
        _briefing(briefing),
        "<h2>Read this first</h2>",
        _list(list(cautions), "cautions"),
        "<h2>The data</h2>",
        f"<dl>{facts}</dl>",
    ]
    if charts:
        parts.append("<h2>Charts</h2>")
        parts.extend(_figure(title, chart, facts_line) for title, chart in charts.items())
    if tables:
        parts.append("<h2>Tables</h2>")
        parts.extend(_table(title, frame) for title, frame in tables.items())
    if absent:
        parts.append("<h2>Not in this report</h2>")
        parts.append(_list(list(absent)))
    parts += [
        "<h2>Method notes</h2>",
        _list(list(notes)),
        "<h3>References</h3>",
        _list(list(METHOD_REFERENCES)),
        "<h2>Open this view again</h2>",
        "<p>Link settings (add to the app's address):</p>",
        f"<pre>{_e(link)}</pre>",
        "<p>View file (save as <code>.json</code> and open it in the app):</p>",
        f"<pre>{_e(view.to_json())}</pre>",
        "</td></tr></tbody><tfoot><tr><td>",
        _footer(name, fingerprint, when),
        "</td></tr></tfoot></table>",
        "</body></html>",
    ]
    return "\n".join(parts)

"""The briefing says only what its tables say: every number is a cell of a named table,
rises and falls follow the stated rule, no ranking claim where possible ranks overlap, no
poverty where it is not measured; ``rift brief`` writes text and Markdown."""

from __future__ import annotations

import dataclasses
import json
import re

import numpy as np
import pandas as pd
import pytest
from scipy import special

from explorer import cli
from explorer import data as readers
from explorer.data.validate import validate
from explorer.figures import PlainCompute, series
from explorer.figures.brief import RELATIVE_CHANGE, Briefing, briefing, direction
from explorer.present import vocabulary
from explorer.stats import indices
from explorer.views import ViewState

DEMOS = {
    "demo": "brackets",
    "demo-households": "units",
    "demo-means": "means",
    "demo-published": "published",
}

# A number as the pages print it: 0.453, -0.022, 43,039, 16.2%, 42 (not inside CAL01).
NUMBER = re.compile(r"(?<![\w.,])-?(?:\d{1,3}(?:,\d{3})+|\d+)(?:\.\d+)?%?(?!\w)")
# Names that hold digits but are no figures: index names ("GE(2)", "top 10 %", "FGT(0)")
# and references ("(Mookherjee & Shorrocks 1982)").
_LABELS = sorted(
    {
        *vocabulary.INDEX_LABELS.values(),
        *vocabulary.FIGURE_LABELS.values(),
        "FGT(0)",
        "Theil L",
    },
    key=len,
    reverse=True,
)
_REFERENCE = re.compile(r"\([A-Z][^()]*\d{4}\)")


def numbers_in(text: str) -> list[str]:
    for label in _LABELS:
        text = text.replace(label, " ")
    return NUMBER.findall(_REFERENCE.sub(" ", text))


def _shown(told: Briefing, panel, table: str, column: str, value) -> list[str]:
    """The cell as the pages print it (common practice of this tool's pages: the Map's
    headline and the Breakdown's metrics, whose formats vocabulary holds)."""
    if isinstance(value, str):
        return numbers_in(value)
    index = told.view.index
    if table in ("split", "change") and column == "share":
        return [vocabulary.percent(vocabulary.tidy_zero(pd.Series([value]))[0])]
    if table == "change":
        return [vocabulary.figure(vocabulary.tidy_zero(pd.Series([value]))[0], digits=4)]
    if table == "rules":
        return [vocabulary.percent(value, 0)]
    if table in ("cluster counts", "clusters"):
        return [str(int(value))]
    key = (
        ("poverty_rate" if panel.kind == "published" else "fgt_0") if "poverty" in table else index
    )
    return [
        vocabulary.figure(
            value, money=series.is_money(panel, key), digits=vocabulary.digits_of(panel, key)
        )
    ]


def check_every_number(told: Briefing, panel) -> int:
    """Each sentence's numbers are exactly its source cells, formatted; returns a count."""
    checked = 0
    for sentence in told.sentences():
        found = numbers_in(sentence.text)
        if sentence.source is None:
            assert not found, f"numbers without a source: {sentence.text!r}"
            continue
        expected: list[str] = []
        keys: set[str] = set()
        for cell in sentence.source.cells:
            frame = told.tables[sentence.source.table_of(cell)]
            hit = np.ones(len(frame), dtype=bool)
            for key, value in cell.keys:
                hit &= (frame[key] == value).to_numpy()
                keys.update(re.findall(r"\d+", str(value)))
            assert hit.sum() == 1, (sentence.text, cell)
            value = frame.loc[hit, cell.column].iloc[0]
            shown = _shown(told, panel, sentence.source.table_of(cell), cell.column, value)
            for number in shown:
                assert number in sentence.text, (number, sentence.text)
            expected.extend(shown)
        extra = [n for n in found if n not in expected and n not in keys]
        assert not extra, f"{extra} in {sentence.text!r} are in none of its cells {expected}"
        checked += len(found)
    return checked


@pytest.mark.parametrize("dataset", list(DEMOS))
def test_every_number_in_the_briefing_is_a_cell_of_its_source_table(dataset):
    panel = readers.demo_panel(DEMOS[dataset])
    view = ViewState(dataset=dataset, districts=("CAL01", "QUI08"))
    told = briefing(panel, view, PlainCompute(panel))
    assert check_every_number(told, panel) > 10
    # the ranking sentence's figures are the Map's own ranking (the same rows and values)
    from explorer.figures import atlas

    ranked = atlas(panel, told.view, PlainCompute(panel)).ranking
    mine = told.tables["ranking"]
    assert list(mine["region"]) == list(ranked["region"])
    np.testing.assert_allclose(mine["value"], ranked["value"])


def test_the_province_level_is_the_timelines_province_line():
    from explorer.figures.timelines import province_series

    panel = readers.demo_panel("brackets")
    told = briefing(panel, ViewState(), PlainCompute(panel))
    line = province_series(panel, told.view, PlainCompute(panel))
    pd.testing.assert_frame_equal(told.tables["province"], line[["year", "value"]])
    text = told.paragraph("level").sentences[0].text
    value = line.loc[line["year"] == told.view.year, "value"].iloc[0]
    assert vocabulary.figure(value) in text


# --- the direction rule on constructed panels ------------------------------------------------


def lognormal_shares(k: int, sigma: float) -> np.ndarray:
    """Exact income shares of k equal brackets of a lognormal (Aitchison & Brown 1957,
    The Lognormal Distribution, eq. 2.21: L(p) = Φ(Φ⁻¹(p) − σ))."""
    p = np.linspace(0, 1, k + 1)
    return np.diff(special.ndtr(special.ndtri(p) - sigma))


def bracket_panel(spec):
    """spec: (region, year, sigma) with quintile shares of a lognormal."""
    rows = [
        dict(region=region, year=year, pop_share=0.2, income_share=share)
        for region, year, sigma in spec
        for share in lognormal_shares(5, sigma)
    ]
    return validate(pd.DataFrame(rows), kind="brackets")


def _district_change(panel, region="Ashford"):
    view = ViewState(dataset="x", districts=(region,), year_from=2020, year_to=2021, year=2021)
    told = briefing(panel, view, PlainCompute(panel))
    check_every_number(told, panel)
    said = [s.text for s in told.paragraph("level").sentences if s.text.startswith("Between")]
    return told, [t for t in said if "Ashford" in t][0]


def _gini_bounds(panel, year):
    table = indices.compute(panel, methods=("auto",))
    row = table[(table["index"] == "gini") & (table["year"] == year)].iloc[0]
    return float(row["lower"]), float(row["upper"])


def test_a_rise_with_separated_bounds_says_rose():
    # Gini of a lognormal is 2Φ(σ/√2) − 1 (Aitchison & Brown 1957): 0.276 at σ = 0.5,
    # 0.520 at σ = 1.0; Gastwirth's (1972) bounds at quintiles hold each and do not meet.
    panel = bracket_panel([("Ashford", 2020, 0.5), ("Ashford", 2021, 1.0)])
    low_2021, _ = _gini_bounds(panel, 2021)
    _, up_2020 = _gini_bounds(panel, 2020)
    assert low_2021 > up_2020
    for year, sigma in ((2020, 0.5), (2021, 1.0)):
        low, up = _gini_bounds(panel, year)
        assert low <= 2 * special.ndtr(sigma / np.sqrt(2)) - 1 <= up
    _, text = _district_change(panel)
    assert " rose:" in text and "do not overlap" in text


def test_a_fall_with_separated_bounds_says_fell():
    panel = bracket_panel([("Ashford", 2020, 1.0), ("Ashford", 2021, 0.5)])
    _, text = _district_change(panel)
    assert " fell:" in text and "do not overlap" in text


def test_a_small_rise_with_overlapping_bounds_says_no_clear_change():
    # σ 0.70 -> 0.72: the true Gini rises (0.382 -> 0.392, Aitchison & Brown 1957), but the
    # quintile bounds overlap, so the briefing does not call it a rise.
    panel = bracket_panel([("Ashford", 2020, 0.70), ("Ashford", 2021, 0.72)])
    low_2021, up_2021 = _gini_bounds(panel, 2021)
    low_2020, up_2020 = _gini_bounds(panel, 2020)
    assert low_2021 <= up_2020 and low_2020 <= up_2021
    _, text = _district_change(panel)
    assert "no clear change" in text and "rose" not in text and "overlap" in text


def test_without_bounds_the_stated_relative_threshold_decides():
    assert direction(100.0, 100.0 * (1 + RELATIVE_CHANGE) + 1) == "rose"
    assert direction(100.0, 100.0 * (1 + RELATIVE_CHANGE) - 1) == "no clear change"
    assert direction(100.0, 100.0 * (1 - RELATIVE_CHANGE) - 1) == "fell"
    assert direction(-0.2, -0.1) == "rose"  # relative to the size of the first value
    assert direction(np.nan, 1.0) == "no clear change"
    # with bounds the threshold plays no part: a large move inside overlapping ranges
    assert direction(1.0, 2.0, ((0.5, 2.5), (1.5, 3.0))) == "no clear change"
    assert direction(1.0, 1.01, ((0.99, 1.001), (1.002, 1.02))) == "rose"


def test_the_province_change_without_bounds_states_its_rule():
    panel = readers.demo_panel("means")
    told = briefing(panel, ViewState(dataset="demo-means"), PlainCompute(panel))
    texts = [s.text for s in told.paragraph("level").sentences]
    line = told.tables["province"].set_index("year")["value"]
    first, last = line[told.view.year_from], line[told.view.year_to]
    assert (last - first) / first > RELATIVE_CHANGE  # the demo's mean income grew
    assert any(" rose, from " in t for t in texts), texts
    assert any(vocabulary.percent(RELATIVE_CHANGE, 0) in t for t in texts)


# --- no claim the data do not support --------------------------------------------------------


def test_no_ranking_claim_when_the_possible_ranks_overlap():
    # Two districts whose Gini bounds overlap (σ 0.70 and 0.72): each could rank first.
    panel = bracket_panel([("Ashford", 2021, 0.72), ("Brackenmoor", 2021, 0.70)])
    told = briefing(panel, ViewState(dataset="x"), PlainCompute(panel))
    check_every_number(told, panel)
    ranking = told.tables["ranking"]
    assert set(ranking["rank_range"]) == {"1–2"}
    text = told.paragraph("districts").text
    assert "overlap" in text
    assert "clearly" not in text and "holds rank 1" not in text


def test_a_ranking_claim_where_the_possible_ranks_part():
    panel = bracket_panel(
        [("Ashford", 2021, 1.0), ("Brackenmoor", 2021, 0.7), ("Carrow", 2021, 0.4)]
    )
    told = briefing(panel, ViewState(dataset="x"), PlainCompute(panel))
    check_every_number(told, panel)
    assert list(told.tables["ranking"]["rank_range"]) == ["1", "2", "3"]
    text = told.paragraph("districts").text
    assert "Ashford is clearly ranked above Carrow" in text and "holds rank 1" in text


@pytest.mark.parametrize("dataset", ["demo-means", "demo-published"])
def test_no_poverty_sentence_for_means_or_published_figures_without_a_poverty_rate(dataset):
    panel = readers.demo_panel(DEMOS[dataset])
    assert "poverty_rate" not in set(panel.data.get("measure", pd.Series(dtype=str)))
    told = briefing(panel, ViewState(dataset=dataset), PlainCompute(panel))
    assert told.paragraph("poverty") is None
    text = " ".join(s.text for s in told.sentences())
    assert "headcount" not in text and "poverty line" not in text and "FGT" not in text


def test_poverty_where_measured_names_the_line_and_the_highest_district():
    panel = readers.demo_panel("brackets")
    view = ViewState(poverty_line="50%mean")
    told = briefing(panel, view, PlainCompute(panel))
    poverty = told.paragraph("poverty")
    assert poverty is not None
    assert "50% of the province mean" in poverty.text
    ranked = told.tables["poverty ranking"]
    # the highest headcount ratio is the Map's first row for FGT(0) against the same line
    from explorer.figures import atlas

    shown = atlas(panel, dataclasses.replace(told.view, index="fgt_0"), PlainCompute(panel))
    assert ranked["region"].iloc[0] == shown.ranking["region"].iloc[0]
    assert shown.ranking["name"].iloc[0] in poverty.text


def test_the_decomposition_paragraph_is_absent_for_published_figures():
    panel = readers.demo_panel("published")
    told = briefing(panel, ViewState(dataset="demo-published"), PlainCompute(panel))
    assert told.paragraph("split") is None
    assert "recomputed" in told.paragraph("level").text


def test_the_driver_of_the_change_is_the_largest_term():
    panel = readers.demo_panel("brackets")
    told = briefing(panel, ViewState(), PlainCompute(panel))
    terms = told.tables["change"]
    parts = terms[(terms["group"] == "(all)") & ~terms["component"].isin(("total", "residual"))]
    top = parts.loc[parts["value"].abs().idxmax()]
    # Mookherjee & Shorrocks (1982), Economic Journal 92: 886-902: the terms and the
    # residual add up to the total change (checked here before naming the largest term).
    total = terms[terms["component"] == "total"]["value"].iloc[0]
    assert (
        abs(parts["value"].sum() + terms[terms["component"] == "residual"]["value"].sum() - total)
        < 1e-9
    )
    text = told.paragraph("split").text
    assert vocabulary.part_label(top["component"], top["level"]) in text


def test_set_aside_district_years_are_named_with_their_reason():
    rows = []
    for region, scale in (("Ashford", 1.0), ("Brackenmoor", 1.3), ("Carrow", 1.0)):
        for share in lognormal_shares(5, 0.7):
            rows.append(dict(region=region, year=2020, pop_share=0.2, income_share=share * scale))
    panel = validate(pd.DataFrame(rows), kind="brackets")
    told = briefing(panel, ViewState(dataset="x"), PlainCompute(panel))
    check_every_number(told, panel)
    text = told.paragraph("data").text
    assert "1 district-year(s) were set aside" in text and "Brackenmoor" in text
    assert str(panel.excluded["reason"].iloc[0]).rstrip(".") in text


def test_a_name_with_markup_is_escaped_in_markdown_but_not_in_text():
    panel = readers.demo_panel("brackets")
    told = briefing(panel, ViewState(), PlainCompute(panel))
    from explorer.figures.brief import Paragraph, Sentence

    odd = Briefing(told.view, (Paragraph("data", "T", (Sentence("![x](http://h/x.png)"),)),), {})
    assert "![x](http://h/x.png)" in odd.as_text()
    assert "![x](" not in odd.as_markdown() and "\\!\\[x\\]" in odd.as_markdown()


# --- the command line ------------------------------------------------------------------------


def _view_file(tmp_path, **fields):
    path = tmp_path / "view.json"
    path.write_text(ViewState(**fields).to_json(), encoding="utf-8")
    return path


def test_rift_brief_writes_text_and_markdown(tmp_path, capsys):
    view = _view_file(tmp_path, dataset="demo-means", districts=("CAL01",))
    panel = readers.demo_panel("means")
    told = briefing(
        panel, ViewState(dataset="demo-means", districts=("CAL01",)), PlainCompute(panel)
    )
    assert cli.main(["brief", str(view), "--out", str(tmp_path / "b.txt")]) == 0
    text = (tmp_path / "b.txt").read_text(encoding="utf-8")
    assert text.startswith("Briefing: Demo: district means, 2025")
    for paragraph in told.paragraphs:
        assert f"{paragraph.title}\n{paragraph.text}" in text
    assert (
        cli.main(["brief", str(view), "--format", "markdown", "--out", str(tmp_path / "b.md")]) == 0
    )
    markdown = (tmp_path / "b.md").read_text(encoding="utf-8")
    assert markdown.startswith("# Briefing")
    assert [line[3:] for line in markdown.splitlines() if line.startswith("## ")] == [
        p.title for p in told.paragraphs
    ]
    assert "Poverty" not in markdown  # district means: no poverty
    capsys.readouterr()
    assert cli.main(["brief", str(view)]) == 0
    assert capsys.readouterr().out == text


@pytest.mark.parametrize(
    "content",
    [b"not json at all", json.dumps({"rift_view": 99}).encode(), b"[1, 2]", None],
)
def test_rift_brief_exits_2_with_the_reason_on_a_bad_view_file(tmp_path, capsys, content):
    path = tmp_path / "view.json"
    if content is not None:
        path.write_bytes(content)
    out = tmp_path / "b.txt"
    assert cli.main(["brief", str(path), "--out", str(out)]) == cli.EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert "view file" in err and str(path) in err
    assert not out.exists()


def test_rift_brief_will_not_overwrite_its_view_file(tmp_path, capsys):
    view = _view_file(tmp_path, dataset="demo-means")
    before = view.read_bytes()
    assert cli.main(["brief", str(view), "--out", str(view)]) == cli.EXIT_BAD_INPUT
    assert view.read_bytes() == before
    assert "overwrite" in capsys.readouterr().err


def test_the_report_opens_with_the_briefing_escaped():
    from explorer.figures import report_html

    panel = readers.demo_panel("means")
    view = ViewState(dataset="demo-means")
    html = report_html(view, panel)
    told = briefing(panel, view, PlainCompute(panel))
    start = html.index("<section class='briefing'>")
    assert start < html.index("Read this first")
    import html as markup

    for paragraph in told.paragraphs:
        assert markup.escape(paragraph.sentences[0].text, quote=True) in html[start:]

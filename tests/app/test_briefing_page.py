"""The Briefing page shows the view's briefing, sentence for sentence, each paragraph with
the table of its sources, and no poverty for district means."""

from __future__ import annotations

from app_helpers import as_read, dataframe, page, run, view

from explorer import data as readers
from explorer.figures import PlainCompute, briefing
from explorer.present.vocabulary import BRIEFING_PARAGRAPHS, BRIEFING_SOURCE_COLUMNS, PAGES

KINDS = {"demo": "brackets", "demo-means": "means"}


def open_briefing(app, **params):
    app.query_params.update(params)
    run(app)
    app.switch_page(page("briefing"))
    return run(app)


def _expected(app, dataset):
    panel = readers.demo_panel(KINDS[dataset])
    return briefing(panel, view(app), PlainCompute(panel))


def test_the_page_is_registered_with_a_local_icon():
    assert PAGES["briefing"].title == "Briefing"
    assert PAGES["briefing"].icon.startswith(":material/")


def test_every_sentence_and_its_sources_are_on_the_page(app):
    open_briefing(app, d="demo", sel="CAL01", ix="theil_t")
    assert view(app).page == "briefing"
    told = _expected(app, "demo")
    shown = [as_read(m.value) for m in app.markdown]
    headings = [h.value for h in app.subheader]
    assert headings == [p.title for p in told.paragraphs]
    for paragraph in told.paragraphs:
        assert paragraph.text in shown, paragraph.text
        sources = dataframe(app, f"briefing_sources_{paragraph.key}")
        assert list(sources.columns) == list(BRIEFING_SOURCE_COLUMNS.values())[1:]
        assert list(sources["Sentence"]) == [s.text for s in paragraph.sentences]
    # the first paragraph follows the chosen district and names its figure from the Map
    level = told.paragraph("level").text
    assert "Port Idrel (CAL01)" in level
    assert BRIEFING_PARAGRAPHS["poverty"] in headings


def test_district_means_get_no_poverty_paragraph(app):
    open_briefing(app, d="demo-means")
    headings = [h.value for h in app.subheader]
    assert BRIEFING_PARAGRAPHS["level"] in headings
    assert BRIEFING_PARAGRAPHS["poverty"] not in headings
    text = " ".join(as_read(m.value) for m in app.markdown)
    assert "poverty line" not in text and "headcount" not in text
    told = _expected(app, "demo-means")
    assert [p.title for p in told.paragraphs] == headings

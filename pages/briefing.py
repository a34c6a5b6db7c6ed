"""Briefing: the view in a few paragraphs of plain words, each sentence with its source."""

import streamlit as st

from explorer import figures, ui
from explorer.figures.brief import sources_table
from explorer.present import vocabulary

opened = ui.open_view()
view, panel = opened.view, opened.panel
st.title("Briefing")
ui.caption(vocabulary.describe_view(view, panel))
st.caption(
    "The view's figures in sentences. Every number comes from a table the other pages show; "
    "the table below each paragraph says which table, which rows and which columns."
)

told = ui.page_figure(figures.briefing, panel, view, opened.compute)
for paragraph in told.paragraphs:
    st.subheader(paragraph.title)
    # one {} per sentence: every sentence is shown as typed (names from the data inside)
    ui.markdown(" ".join("{}" for _ in paragraph.sentences), *(s.text for s in paragraph.sentences))
    with st.expander(f"Where the numbers of “{paragraph.title}” come from"):
        shown = paragraph.sources().rename(columns=vocabulary.BRIEFING_SOURCE_COLUMNS)
        ui.table(shown, f"briefing_sources_{paragraph.key}")

heading = vocabulary.briefing_heading(told.view, panel)
left, right = st.columns(2)
left.download_button(
    "Download the briefing (text)",
    told.as_text(heading),
    file_name=f"briefing-{ui.show.slug(view.dataset)}-{view.year}.txt",
    mime="text/plain",
    key="briefing_text",
)
right.download_button(
    "Download the sources (CSV)",
    ui.table_bytes(sources_table(told), "csv"),
    file_name=f"briefing-sources-{ui.show.slug(view.dataset)}-{view.year}.csv",
    mime="text/csv",
    key="briefing_sources",
)

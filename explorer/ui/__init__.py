"""Streamlit glue shared by the pages: view binding, caching by content, cautions."""

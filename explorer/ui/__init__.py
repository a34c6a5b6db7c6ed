"""Streamlit glue shared by the pages: view binding, caching by content, display helpers.

Pages import this package as ``ui`` and use only what is re-exported here; the figures they
draw come from :mod:`explorer.figures`, their words from :mod:`explorer.present.vocabulary`.
"""

from explorer.ui.cache import page_figure
from explorer.ui.data import add_upload, catalog, open_dataset, scope_of, uploads, workspace
from explorer.ui.draw import chart
from explorer.ui.show import (
    caption,
    cautions,
    downloads,
    guard,
    markdown,
    metric,
    moran_summary,
    notice,
    picked_region,
    plain,
    planner_table,
    problems,
    table,
    table_bytes,
)
from explorer.ui.state import (
    OpenView,
    control,
    current_view,
    known,
    open_view,
    page_path,
    panel,
    publish,
    show_notices,
    update,
)

__all__ = [
    "OpenView",
    "add_upload",
    "catalog",
    "caption",
    "chart",
    "cautions",
    "control",
    "current_view",
    "downloads",
    "guard",
    "known",
    "markdown",
    "metric",
    "moran_summary",
    "notice",
    "open_dataset",
    "open_view",
    "page_figure",
    "page_path",
    "panel",
    "picked_region",
    "plain",
    "planner_table",
    "problems",
    "publish",
    "scope_of",
    "show_notices",
    "table",
    "table_bytes",
    "update",
    "uploads",
    "workspace",
]

"""From a view to its figures: every table, chart, caption and notice a page shows.

Streamlit-free. Each page has one function taking the panel, the view and a
:class:`~explorer.figures.compute.Compute` (the computations it draws on) and returning a
small frozen dataclass. The report and the command line use :class:`PlainCompute`; the app
passes a cached implementation (``explorer.ui.cache``), so both draw the same figures.
"""

from explorer.figures.atlas import AtlasFigures, atlas
from explorer.figures.breakdown import (
    BreakdownFigures,
    ChangeFigures,
    PovertySplit,
    breakdown,
    change,
    poverty_split,
    split_index,
)
from explorer.figures.brief import Briefing, briefing
from explorer.figures.compute import Compute, PlainCompute
from explorer.figures.district import Comparison, DistrictFigures, compare, district
from explorer.figures.report import ReportSections, report_for_view, report_html, sections
from explorer.figures.settle import narrow, settle
from explorer.figures.side_by_side import CompareFigures, compare_page
from explorer.figures.spatial import ClusterLayer, SpatialResult, cluster_layer, for_panel
from explorer.figures.timelines import Convergence, TimelineFigures, convergence, timelines

__all__ = [
    "AtlasFigures",
    "BreakdownFigures",
    "Briefing",
    "ChangeFigures",
    "ClusterLayer",
    "CompareFigures",
    "Comparison",
    "Compute",
    "Convergence",
    "DistrictFigures",
    "PlainCompute",
    "PovertySplit",
    "ReportSections",
    "SpatialResult",
    "TimelineFigures",
    "atlas",
    "breakdown",
    "briefing",
    "change",
    "cluster_layer",
    "compare",
    "compare_page",
    "convergence",
    "district",
    "for_panel",
    "report_for_view",
    "report_html",
    "sections",
    "narrow",
    "poverty_split",
    "settle",
    "split_index",
    "timelines",
]

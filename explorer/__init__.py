"""Rift: a regional inequality explorer, as a Python package.

The short public surface below is what scripts and notebooks use; everything the app and the
command line show is built from the same functions. Names are imported on first use, so
``import explorer`` stays quick (the command line starts from it).

==========================  ==============================================================
name                        what it gives
==========================  ==============================================================
``load_panel``              a panel file (and boundaries) read and validated -> ``Panel``
``demo_panel``              the invented demo province (``"brackets"``, ``"units"``, ``"means"``)
``index_table``             every index per district and year, with bounds or intervals
``lorenz_fits``             the fit diagnostics of each Lorenz method per district-year
``decompose``               within/between split per year across the levels (tidy table)
``decompose_change``        the change of MLD or Theil T between two years, by terms
``spatial_clusters``        Moran's I, local clusters and the spatial Gini of one index
``report_html``             the one-file HTML report of a view
``Panel``, ``Problem``,     the data model and the one exception bad input raises
``DataError``
``ViewState``               the whole state of a view (link and view-file round trip)
==========================  ==============================================================

Examples
--------
>>> import explorer
>>> panel = explorer.demo_panel()
>>> table = explorer.index_table(panel, indices=("gini",))
>>> sorted(table.columns)[:3]
['index', 'lower', 'method']
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

__version__ = "0.1.0"

#: public name -> (module, attribute)
_PUBLIC: dict[str, tuple[str, str]] = {
    "load_panel": ("explorer.data.load", "load_panel"),
    "demo_panel": ("explorer.data.demo", "demo_panel"),
    "index_table": ("explorer.stats.indices", "compute"),
    "lorenz_fits": ("explorer.stats.indices", "fits"),
    "decompose": ("explorer.stats.decompose", "table"),
    "decompose_change": ("explorer.stats.decompose", "change"),
    "spatial_clusters": ("explorer.figures.spatial", "for_panel"),
    "report_html": ("explorer.figures.report", "report_html"),
    "Panel": ("explorer.data.model", "Panel"),
    "Problem": ("explorer.data.model", "Problem"),
    "DataError": ("explorer.data.model", "DataError"),
    "ViewState": ("explorer.views", "ViewState"),
}

__all__ = ["__version__", *_PUBLIC]


def __getattr__(name: str) -> Any:
    try:
        module, attribute = _PUBLIC[name]
    except KeyError:
        raise AttributeError(f"module 'explorer' has no attribute {name!r}") from None
    value = getattr(import_module(module), attribute)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_PUBLIC))

"""The data model, validation in named steps, readers of tables and boundaries, id matching,
levels, the workspace and the demo.

The names below are loaded on first use, so importing :mod:`explorer.data.model` alone stays
light. (``validate`` is reached as ``explorer.data.validate.validate``: the package
attribute of that name is the module.)

========================  ===========================================================
module                    job
========================  ===========================================================
``model``                 Panel, Problem, DataError, fail
``validate``              a raw table (and boundaries) -> Panel, in named steps
``files``                 size limits, safe zip archives, library failures as DataError
``tables``                CSV, Parquet, Excel readers
``columns``               column maps
``boundaries``            vector files, zipped or multi-part Shapefiles, GeoPackage layers
``crs``                   coordinate systems: settle one, propose likely ones
``ids``                   district ids: text with leading zeros, boundary id matching
``levels``                higher levels the planner may choose, and the chosen ones
``load``                  load_panel
``demo``                  the invented demo province
``atomic``                atomic writes and leftovers of crashed writers
``datasets``, ``views``   the dataset store and the view store of a workspace
``workspace``             the Workspace facade over both stores
========================  ===========================================================
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

__all__ = [
    "apply_column_map",
    "demo_panel",
    "demo_paths",
    "load_panel",
    "parse_column_map",
    "propose_crs",
    "propose_levels",
    "read_boundaries",
    "read_head",
    "read_table",
]

_HOME = {
    "apply_column_map": "columns",
    "parse_column_map": "columns",
    "demo_panel": "demo",
    "demo_paths": "demo",
    "load_panel": "load",
    "propose_crs": "crs",
    "propose_levels": "levels",
    "read_boundaries": "boundaries",
    "read_head": "tables",
    "read_table": "tables",
}


def __getattr__(name: str) -> Any:
    if name in _HOME:
        return getattr(import_module(f"explorer.data.{_HOME[name]}"), name)
    raise AttributeError(f"module 'explorer.data' has no attribute {name!r}")

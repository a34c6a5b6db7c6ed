"""Within/between decompositions of inequality across the district hierarchy.

Three families, all computed from arrays first and then wrapped for a :class:`Panel`:

- the generalised entropy family (Theil T, MLD, GE(alpha)), split exactly over any number of
  nested levels (county -> district -> units);
- the Gini split after Dagum into within, net between and overlap (transvariation);
- the change of MLD (and of Theil T) between two years after Mookherjee and Shorrocks.

Grouped (bracket) data enter through :func:`pseudo_units`, which rebuilds each district-year
on a fixed quantile grid from its Lorenz fit, so every decomposition sees units.

This module is the public entry point; the work is in :mod:`explorer.stats.decomposition`
(``ge``, ``dagum``, ``pseudo_units``, ``panel_units``, ``levels`` for the table, ``change``).
"""

from __future__ import annotations

from explorer.stats.decomposition.change import change
from explorer.stats.decomposition.checks import ALL, parse_ge_alpha
from explorer.stats.decomposition.dagum import DagumSplit, dagum_split
from explorer.stats.decomposition.ge import GESplit, ge_index, ge_split
from explorer.stats.decomposition.levels import table
from explorer.stats.decomposition.pseudo_units import DEFAULT_GRID, PseudoUnits, pseudo_units

__all__ = [
    "ALL",
    "DECOMPOSABLE",
    "DEFAULT_GRID",
    "DagumSplit",
    "GESplit",
    "PseudoUnits",
    "change",
    "dagum_split",
    "ge_index",
    "ge_split",
    "parse_ge_alpha",
    "pseudo_units",
    "table",
]

#: Index keys whose within/between split is exact: the GE family (Shorrocks 1980) and the
#: Gini with its overlap term (Dagum 1997).
DECOMPOSABLE = ("theil_t", "mld", "ge_2", "gini")

"""How a panel was carried across boundary changes, kept with the panel and the dataset.

A panel carried to one boundary vintage (:func:`explorer.stats.harmonise.harmonise`) is an
ordinary :class:`~explorer.data.model.Panel`; what makes its figures readable is the account
of how each district-year got there. :class:`Carrying` holds that account: the per
district-year record, the vintages and the change table used (file names, sizes) and the
kind of weights (stated in a table, derived by area, or by a finer layer's population).
It rides on the frozen panel as an attribute (as the dataset facts do), is written with a
stored dataset (a ``carried.parquet`` table and a ``carrying`` entry in the manifest) and
read back with it.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import Panel

__all__ = [
    "RECORD_COLUMNS",
    "WEIGHTS",
    "Carrying",
    "carried_years",
    "carrying_of",
    "with_carrying",
]

RECORD_COLUMNS = ("region", "year", "carried", "how", "weight_kind")
#: Where the change weights came from.
WEIGHTS = ("table", "area", "finer")


@dataclasses.dataclass(frozen=True)
class Carrying:
    """The account of a panel carried to one boundary vintage.

    Attributes
    ----------
    to_vintage : int
        First year of the boundaries every year was carried to.
    record : DataFrame
        ``region, year, carried, how, weight_kind``: one row per district-year of the
        target vintage; ``carried`` is False where it was set aside (``how`` says why).
    vintages : tuple of dict
        Each boundary file used: ``file`` (its name), ``year`` (first year valid),
        ``bytes`` (its size).
    changes : dict
        ``weights`` (one of :data:`WEIGHTS`), ``file`` and ``bytes`` of the change table
        (or of the finer layer), ``column`` (the finer layer's count), empty when unused.
    notes : tuple of str
        The approximations made, said once.
    """

    to_vintage: int
    record: pd.DataFrame
    vintages: tuple[dict[str, Any], ...] = ()
    changes: dict[str, Any] = dataclasses.field(default_factory=dict)
    notes: tuple[str, ...] = ()

    def manifest(self) -> dict[str, Any]:
        """Plain JSON values for a dataset's manifest (the record is stored as a table)."""
        return {
            "to_vintage": int(self.to_vintage),
            "vintages": [
                {"file": str(v["file"]), "year": int(v["year"]), "bytes": int(v["bytes"])}
                for v in self.vintages
            ],
            "changes": {str(k): v for k, v in self.changes.items()},
            "notes": [str(n) for n in self.notes],
        }

    @classmethod
    def from_manifest(cls, values: dict[str, Any], record: pd.DataFrame) -> Carrying:
        """The account from a manifest entry and the stored record.

        Raises
        ------
        KeyError, TypeError, ValueError
            When the entry is malformed (the store reports the dataset as damaged).
        """
        vintages = tuple(
            {"file": str(v["file"]), "year": int(v["year"]), "bytes": int(v["bytes"])}
            for v in values["vintages"]
        )
        changes = values.get("changes") or {}
        if not isinstance(changes, dict):
            raise TypeError("changes is not a mapping")
        return cls(
            to_vintage=int(values["to_vintage"]),
            record=_typed_record(record),
            vintages=vintages,
            changes=dict(changes),
            notes=tuple(str(n) for n in values.get("notes") or ()),
        )

    def weights_said(self) -> str:
        """The kind of weights in a few words: "stated in changes.csv", "by area" ..."""
        kind = self.changes.get("weights", "")
        file = self.changes.get("file", "")
        if kind == "area":
            return "by area (overlay of the boundary files)"
        if kind == "finer":
            return f"by {self.changes.get('column', 'population')} from {file}"
        return f"as stated in {file}" if file else "as stated"


def _typed_record(record: pd.DataFrame) -> pd.DataFrame:
    """The record with the contract's columns and types, sorted by district and year."""
    out = pd.DataFrame(
        {
            "region": record["region"].astype(str).astype(object),
            "year": record["year"].astype(np.int64),
            "carried": record["carried"].astype(bool),
            "how": record["how"].astype(str).astype(object),
            "weight_kind": record["weight_kind"].fillna("").astype(str).astype(object),
        }
    )
    return out.sort_values(["region", "year"], ignore_index=True)


def new_carrying(
    to_vintage: int,
    record: pd.DataFrame,
    vintages: Sequence[tuple[str, int, int]],
    changes: dict[str, Any],
    notes: Sequence[str] = (),
) -> Carrying:
    """A :class:`Carrying` from plain parts: ``vintages`` as (file, year, size) triples."""
    return Carrying(
        int(to_vintage),
        _typed_record(record),
        tuple({"file": f, "year": int(y), "bytes": int(b)} for f, y, b in vintages),
        dict(changes),
        tuple(notes),
    )


def with_carrying(panel: Panel, carrying: Carrying) -> Panel:
    """The same panel with its account attached (the panel is frozen; it rides along)."""
    object.__setattr__(panel, "carrying", carrying)
    return panel


def carrying_of(panel: Any) -> Carrying | None:
    """The account attached to a panel, or None for a panel that was not carried."""
    found = getattr(panel, "carrying", None)
    return found if isinstance(found, Carrying) else None


def carried_years(panel: Any, regions: Sequence[str] | None = None) -> pd.DataFrame:
    """The district-years that were carried rather than kept as published.

    Parameters
    ----------
    panel : Panel
    regions : sequence of str, optional
        Only these districts.

    Returns
    -------
    DataFrame
        ``region, year, how`` for each district-year in the panel's data whose record says
        it was carried and not "as published"; empty for a panel that was not carried.
    """
    carrying = carrying_of(panel)
    empty = pd.DataFrame(
        {
            "region": pd.Series(dtype=object),
            "year": pd.Series(dtype=np.int64),
            "how": pd.Series(dtype=object),
        }
    )
    if carrying is None:
        return empty
    record = carrying.record
    rows = record[record["carried"] & (record["how"] != "as published")]
    if regions is not None:
        rows = rows[rows["region"].isin(list(regions))]
    return rows[["region", "year", "how"]].reset_index(drop=True)

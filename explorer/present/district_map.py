"""The Map page's district map: outlines sent once, values joined to them by district id.

A map of thousands of districts is mostly outline. Between two views (another year, index
or colour scheme) only the values change, so the drawn spec is kept the same and the
values travel beside it as small tables joined to the outlines by a Vega-Lite ``lookup``
on the district id: the browser keeps the embedded chart and swaps its data instead of
parsing and laying out every outline again. The words that change with the view (the
title, the caption, the classes) are read from a one-row table by expressions
(``data('meta')``), for the same reason.

:meth:`DistrictMap.to_dict` is the same map as one self-contained spec with the words
written in, as :func:`explorer.present.charts.choropleth` builds it: for downloads, the
report and anything that reads the spec.

References
----------
Vega-Lite documentation: "Lookup" (lookup transform with a secondary data source), "Data"
(named datasets), "Expression" (``data(name)``), "Title" (``text`` as an expression).
"""

from __future__ import annotations

import functools
from collections.abc import Iterable, Sequence
from typing import Any

import pandas as pd

from explorer.present import charts

__all__ = ["CLASS_SEPARATOR", "LIVE_DATASETS", "DistrictMap", "live_skeleton"]

#: Joins the class labels into one text of the ``meta`` table (a character no label holds).
CLASS_SEPARATOR = "\u001f"
#: The tables a live map carries beside its outlines, by name.
LIVE_DATASETS = ("values", "meta", "chosen")
_META = "data('meta')[0]"
_VALUE_FIELDS = ["name", "county", "value", "lower", "upper", "klass", "wide", "picked"]


def _meta(field: str, default: str = "''") -> dict[str, str]:
    return {"expr": f"{_META} ? {_META}.{field} : {default}"}


@functools.lru_cache(maxsize=8)
def _skeleton(width: int, height: int) -> str:
    import json

    has_class = "isValid(datum.klass) && datum.klass !== ''"
    shapes = {
        "name": "district_shapes",
        "data": {"name": charts.GEO_DATA},
        "transform": [
            {
                "lookup": "properties.region",
                "from": {"data": {"name": "values"}, "key": "region", "fields": _VALUE_FIELDS},
            },
            {"calculate": "datum.properties.region", "as": "region"},
            {
                "calculate": "isValid(datum.lower) && isValid(datum.upper) ? "
                "format(datum.lower, '.3f') + ' to ' + format(datum.upper, '.3f') "
                ": 'not available'",
                "as": "interval",
            },
            {"calculate": "datum.wide ? 'wide: read with care' : 'narrow'", "as": "wide_text"},
            {
                "calculate": "isValid(datum.value) ? format(datum.value, '.3f') : 'no data'",
                "as": "shown",
            },
            {"calculate": _meta("label")["expr"], "as": "figure"},
        ],
        "mark": {"type": "geoshape", "stroke": "#ffffff", "strokeWidth": 0.6},
        "encoding": {
            "color": {
                "condition": {
                    "test": has_class,
                    "field": "klass",
                    "type": "ordinal",
                    "title": None,
                    "scale": {
                        "domain": {
                            "expr": f"{_META} ? split({_META}.classes, '{CLASS_SEPARATOR}') : []"
                        },
                        "scheme": charts.SEQUENTIAL_SCHEME,
                        "reverse": True,
                    },
                    "legend": {"orient": "right", "symbolType": "square", "title": None},
                },
                "value": charts.NO_DATA_COLOUR,
            },
            "stroke": {
                "condition": [
                    {"test": "datum.picked", "value": "#000000"},
                    {"test": "datum.wide", "value": "#333333"},
                ],
                "value": "#ffffff",
            },
            "strokeWidth": {
                "condition": [
                    {"test": "datum.picked", "value": 2.5},
                    {"test": "datum.wide", "value": 1.3},
                ],
                "value": 0.6,
            },
            "strokeDash": {"condition": {"test": "datum.wide", "value": [4, 2]}, "value": [1, 0]},
            "opacity": {"condition": {"param": "pick", "value": 1.0}, "value": 0.45},
            "tooltip": [
                {"field": "name", "type": "nominal", "title": "District"},
                {"field": "region", "type": "nominal", "title": "Id"},
                {"field": "county", "type": "nominal", "title": "County"},
                {"field": "figure", "type": "nominal", "title": "Figure"},
                {"field": "shown", "type": "nominal", "title": "Value"},
                {"field": "interval", "type": "nominal", "title": "Bounds / interval"},
                {"field": "wide_text", "type": "nominal", "title": "Interval"},
                {"field": "klass", "type": "nominal", "title": "Class"},
            ],
        },
    }
    place = {"longitude": {"field": "label_x", "type": "quantitative"}}
    place["latitude"] = {"field": "label_y", "type": "quantitative"}
    place["text"] = {"field": "name", "type": "nominal"}
    named = {"fontSize": 12, "fontWeight": "bold", "dy": -2}
    labels = [
        {
            "data": {"name": "chosen"},
            "mark": {"type": "text", **named, "stroke": "#ffffff", "strokeWidth": 3},
            "encoding": place,
        },
        {
            "data": {"name": "chosen"},
            "mark": {"type": "text", **named, "color": "#000000"},
            "encoding": place,
        },
    ]
    caption = {
        "data": {"name": "meta"},
        "mark": {
            "type": "text",
            "align": "left",
            "baseline": "top",
            "dy": 12,
            "fontSize": 11,
            "color": "#444444",
            "lineBreak": "\n",
        },
        "encoding": {
            "text": {"field": "caption", "type": "nominal"},
            "x": {"value": 0},
            "y": {"value": height},
        },
    }
    spec = {
        "$schema": "https://vega.github.io/schema/vega-lite/v6.json",
        "width": width,
        "height": height,
        "title": {"text": _meta("title"), "anchor": "start"},
        "projection": {"type": "mercator"},
        "params": [
            {
                "name": "pick",
                "select": {"type": "point", "fields": ["region"]},
                "views": ["district_shapes"],
            }
        ],
        "layer": [shapes, *labels, caption],
    }
    return json.dumps(spec)


def live_skeleton(width: int = 560, height: int = 460) -> dict[str, Any]:
    """The live map's spec without its data: the same for every view of that size."""
    import json

    return json.loads(_skeleton(int(width), int(height)))


class DistrictMap:
    """A district map coloured by class, its values joined to the outlines by district id.

    Parameters
    ----------
    outlines : charts.Outlines
        From :func:`explorer.present.charts.map_outlines` (made once per boundary file).
    values : DataFrame
        One row per district: ``region`` and any of ``value, lower, upper, klass, wide``.
    value_label, classes, title, caption, selected, width, height
        As for :func:`explorer.present.charts.choropleth`.
    """

    def __init__(
        self,
        outlines: charts.Outlines,
        values: pd.DataFrame,
        *,
        value_label: str,
        classes: Sequence[str],
        title: str,
        caption: str | Sequence[str],
        selected: Iterable[str] = (),
        width: int = 560,
        height: int = 460,
    ) -> None:
        self.outlines = outlines
        self.values = values
        self.labels = dict(
            value_label=value_label,
            classes=list(classes),
            title=title,
            caption=caption,
            selected=tuple(str(s) for s in selected),
            width=int(width),
            height=int(height),
        )

    @functools.cached_property
    def _static(self) -> charts.GeoChart:
        features = charts.join_values(self.outlines, self.values)
        return charts.choropleth(features, **self.labels)

    def to_dict(self, **kwargs: Any) -> dict[str, Any]:
        """The map as one self-contained spec, its words written in (downloads, report)."""
        return self._static.to_dict(**kwargs)

    def tables(self) -> dict[str, pd.DataFrame]:
        """The live map's tables: ``values`` per district, ``meta`` (one row: title,
        caption, classes, label) and ``chosen`` (the chosen districts' names and a point
        inside each)."""
        labels = self.labels
        rows = charts.district_values(self.outlines, self.values)
        rows["picked"] = rows["region"].isin(labels["selected"])
        rows = rows[["region", *_VALUE_FIELDS]]
        caption = labels["caption"]
        lines = [caption] if isinstance(caption, str) else list(caption)
        meta = pd.DataFrame(
            {
                "title": [str(labels["title"])],
                "caption": ["\n".join(str(line) for line in lines)],
                "classes": [CLASS_SEPARATOR.join(str(c) for c in labels["classes"])],
                "label": [str(labels["value_label"])],
            }
        )
        table = self.outlines.table
        chosen = table[table["region"].isin(labels["selected"]) & table["label_x"].notna()]
        names = rows.set_index("region")["name"]
        chosen = pd.DataFrame(
            {
                "name": [str(names.get(r, r)) for r in chosen["region"]],
                "label_x": chosen["label_x"].to_numpy(dtype=float),
                "label_y": chosen["label_y"].to_numpy(dtype=float),
            }
        )
        return {"values": rows.reset_index(drop=True), "meta": meta, "chosen": chosen}

    def payload(self) -> dict[str, int]:
        """Bytes the live map sends: the spec with its outlines as compact JSON, and its
        tables as Arrow IPC streams (the form Streamlit sends tables in)."""
        import json

        import pyarrow as pa

        spec = live_skeleton(self.labels["width"], self.labels["height"])
        spec["datasets"] = {charts.GEO_DATA: self.outlines.features}
        tables = 0
        for table in self.tables().values():
            sink = pa.BufferOutputStream()
            arrow = pa.Table.from_pandas(table, preserve_index=False)
            with pa.ipc.new_stream(sink, arrow.schema) as writer:
                writer.write_table(arrow)
            tables += sink.getvalue().size
        spec_bytes = len(json.dumps(spec, separators=(",", ":")).encode())
        return {"spec": spec_bytes, "tables": tables, "total": spec_bytes + tables}

    def live_spec(self) -> dict[str, Any]:
        """The spec to draw: the same between views of one map size (the outlines are the
        same object every time); what changes is in the tables (:meth:`tables`)."""
        spec = live_skeleton(self.labels["width"], self.labels["height"])
        spec["datasets"] = {charts.GEO_DATA: self.outlines.features, **self.tables()}
        return spec

"""Charts drawn from a Vega-Lite spec converted once per chart object.

``st.altair_chart`` converts its chart to a spec on every run, and Altair checks the spec
against the Vega-Lite schema each time: on the District sheet that check cost more than
everything else on the page together. The page figures are shared between runs and
sessions (:func:`explorer.ui.cache.page_figure`), so each chart object is converted here
once, its tables stored as Arrow as Streamlit itself does, and the spec is reused by every
later run that draws the same object.

The schema check runs when ``RIFT_CHECK_CHARTS`` is set (the test suite sets it, so every
chart a page draws in the tests is checked); the server skips it.
"""

from __future__ import annotations

import hashlib
import json
import os
import threading
from collections import OrderedDict
from contextlib import nullcontext
from typing import Any

import streamlit as st

__all__ = ["CHECK_ENV", "chart", "spec_of"]

#: Set (to anything but "" or "0") to check every drawn chart against the Vega-Lite schema.
CHECK_ENV = "RIFT_CHECK_CHARTS"

_KEEP = 256  # specs kept; a page draws a handful, a session a few dozen
_specs: OrderedDict[int, tuple[Any, dict[str, Any]]] = OrderedDict()
_specs_lock = threading.Lock()
# Altair's theme and data transformer are process-wide: one conversion at a time.
_altair_lock = threading.Lock()


def _checking() -> bool:
    return os.environ.get(CHECK_ENV, "") not in ("", "0")


def _to_arrow(data: Any, datasets: dict[str, Any]) -> dict[str, str]:
    """Altair data transformer: a table as Arrow bytes under a content-hash name.

    GeoJSON (dicts and lists) stays as it is, so that Vega-Lite reads the geometry.
    """
    if isinstance(data, dict | list):
        raw = json.dumps(data, sort_keys=True).encode("utf-8")
        payload: Any = data
    else:
        from streamlit import dataframe_util

        raw = payload = dataframe_util.convert_anything_to_arrow_bytes(data)
    name = "rift-" + hashlib.sha1(raw, usedforsecurity=False).hexdigest()[:20]
    datasets[name] = payload
    return {"name": name}


def _convert(figure: Any) -> dict[str, Any]:
    import altair as alt

    datasets: dict[str, Any] = {}
    alt.data_transformers.register("rift_arrow", _to_arrow)
    with _altair_lock:
        # Altair's default theme sets a fixed size that Streamlit's layout does not want.
        themes = getattr(alt, "theme", None) or alt.themes  # alt.theme from Altair 5.5
        theme = themes.enable("none") if themes.active == "default" else nullcontext()
        with theme, alt.data_transformers.enable("rift_arrow", datasets=datasets):
            spec = figure.to_dict(validate=_checking())
    carried = spec.get("datasets")
    spec["datasets"] = {**carried, **datasets} if isinstance(carried, dict) else datasets
    return spec


def spec_of(figure: Any) -> dict[str, Any]:
    """The spec to draw for an Altair chart, a district map or a spec dict.

    Parameters
    ----------
    figure : altair.TopLevelMixin, explorer.present.district_map.DistrictMap or dict
        What to draw. A dict is already a spec and is returned as is.

    Returns
    -------
    dict
        A Vega-Lite spec whose tables are Arrow bytes; not to be changed by the caller.
    """
    if isinstance(figure, dict):
        return figure
    # A district map draws its live spec: the outlines' spec stays the same between views.
    live = getattr(figure, "live_spec", None)
    with _specs_lock:
        held = _specs.get(id(figure))
        if held is not None and held[0] is figure:
            _specs.move_to_end(id(figure))
            return held[1]
    spec = live() if callable(live) else _convert(figure)
    with _specs_lock:
        # Holding the chart keeps its id from being reused while its spec is kept.
        _specs[id(figure)] = (figure, spec)
        while len(_specs) > _KEEP:
            _specs.popitem(last=False)
    return spec


def chart(figure: Any, **options: Any) -> Any:
    """Draw a chart with ``st.vega_lite_chart`` from its (once converted) spec.

    Parameters
    ----------
    figure : altair chart, DistrictMap or dict
        What to draw.
    **options
        Passed to ``st.vega_lite_chart``: ``key``, ``theme``, ``width``, ``height``,
        ``on_select``.

    Returns
    -------
    Any
        What ``st.vega_lite_chart`` returns (the selection state with ``on_select``).
    """
    return st.vega_lite_chart(spec_of(figure), **options)

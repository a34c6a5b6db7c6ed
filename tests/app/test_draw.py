"""Charts drawn from a spec converted once per chart object (explorer.ui.draw)."""

from __future__ import annotations

import io

import altair as alt
import pandas as pd
import pyarrow as pa
import pytest

from explorer.ui import draw


def _bars() -> alt.Chart:
    table = pd.DataFrame({"district": ["Varn", "Osk", "Tell"], "gini": [0.31, 0.27, 0.42]})
    return alt.Chart(table).mark_bar().encode(x="district:N", y="gini:Q")


def test_a_chart_is_converted_once_and_its_spec_reused():
    chart = _bars()
    first = draw.spec_of(chart)
    assert draw.spec_of(chart) is first
    # another chart with the same content is another object: converted on its own
    assert draw.spec_of(_bars()) is not first


def test_the_tables_travel_as_arrow_holding_the_charts_data():
    spec = draw.spec_of(_bars())
    name = spec["data"]["name"]
    payload = spec["datasets"][name]
    assert isinstance(payload, bytes)
    back = pa.ipc.open_stream(io.BytesIO(payload)).read_all().to_pandas()
    assert list(back["district"]) == ["Varn", "Osk", "Tell"]
    assert back["gini"].tolist() == pytest.approx([0.31, 0.27, 0.42])


def test_geojson_stays_as_it_is_for_vega_lite_to_read():
    shapes = {"type": "FeatureCollection", "features": []}
    datasets: dict = {}
    ref = draw._to_arrow(shapes, datasets)
    assert datasets[ref["name"]] is shapes


def test_the_schema_check_runs_when_asked_for(monkeypatch):
    broken = alt.Chart(pd.DataFrame({"a": [1]})).mark_point().encode(x="a:Q")
    broken.mark = {"type": "not-a-mark"}  # not a Vega-Lite mark
    monkeypatch.setenv(draw.CHECK_ENV, "1")
    with pytest.raises(Exception, match="not-a-mark|mark"):
        draw._convert(broken)
    monkeypatch.setenv(draw.CHECK_ENV, "0")
    assert draw._convert(broken)["mark"] == {"type": "not-a-mark"}


def test_shared_figures_are_keyed_by_content_and_by_the_words_printed_on_them():
    import dataclasses

    from explorer.data.dataset_store import facts_of, with_facts
    from explorer.data.demo import demo_panel
    from explorer.ui.cache import _panel_key

    panel = dataclasses.replace(demo_panel())  # a copy: with_facts sets an attribute
    before = _panel_key(panel)
    assert before == _panel_key(dataclasses.replace(demo_panel()))
    with_facts(panel, dataclasses.replace(facts_of(panel), currency="marks"))
    assert panel.fingerprint == demo_panel().fingerprint  # the same numbers ...
    assert _panel_key(panel) != before  # ... but other words on the figures

"""Atlas render times through AppTest, as ratios to a bare page drawing the same chart.

Usage: python benchmarks/app_render.py [--quick]

Measures on the demo province: the first render of the Atlas in a fresh process-wide cache
(reading the demo, computing every index for every year, building the map), redraws after
changing the year, the index and the Lorenz method (cached indices, new map layer), and a
bare one-element app that only draws the already-built Atlas chart. The last line is one
JSON object: name, seconds, peak_memory_mb, ratios.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))


def _timed(action) -> float:
    start = time.perf_counter()
    action()
    return time.perf_counter() - start


def _bare_app(spec: str) -> None:
    import json as _json

    import streamlit as st

    # The Atlas's own chart spec, already built: only Streamlit's drawing is timed.
    st.vega_lite_chart(_json.loads(spec), key="atlas_map")


def _bare_altair_app(spec: str) -> None:
    import json as _json

    import altair as alt
    import streamlit as st

    # The same chart through Altair, as the Atlas draws it (Altair validates the spec).
    st.altair_chart(alt.Chart.from_dict(_json.loads(spec)), key="atlas_map")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer repetitions")
    args = parser.parse_args()
    repeats = 3 if args.quick else 10
    os.environ.setdefault("RIFT_DATA", tempfile.mkdtemp(prefix="rift-bench-"))

    import streamlit as st
    from streamlit.testing.v1 import AppTest

    st.cache_data.clear()
    st.cache_resource.clear()
    started = time.perf_counter()
    app = AppTest.from_file(str(ROOT / "explorer" / "app.py"), default_timeout=300)
    first = _timed(app.run)
    if app.exception:
        raise SystemExit(f"the Atlas raised: {app.exception[0].value}")
    years = sorted(app.select_slider(key="ctl_year").options, key=int)

    year_times, index_times, method_times = [], [], []
    for i in range(repeats):
        app.select_slider(key="ctl_year").set_value(int(years[i % (len(years) - 1)]))
        year_times.append(_timed(app.run))
        app.selectbox(key="ctl_index").set_value("theil_t" if i % 2 == 0 else "gini")
        index_times.append(_timed(app.run))
    for method in ("linear", "upper", "pchip", "auto")[: max(2, repeats // 3)]:
        app.selectbox(key="ctl_method").set_value(method)
        method_times.append(_timed(app.run))  # first use of a method computes its indices
        app.select_slider(key="ctl_year").set_value(int(years[0]))
        year_times.append(_timed(app.run))

    revisit_times = []
    for i in range(repeats):  # views already seen: every cached piece is reused
        app.select_slider(key="ctl_year").set_value(int(years[i % 2]))
        revisit_times.append(_timed(app.run))

    chart = next(c for c in app.get("vega_lite_chart"))
    spec = chart.proto.spec
    bare = AppTest.from_function(_bare_app, args=(spec,), default_timeout=300)
    bare.run()
    bare_times = [_timed(bare.run) for _ in range(repeats)]
    rebuilt = AppTest.from_function(_bare_altair_app, args=(spec,), default_timeout=300)
    rebuilt.run()
    altair_times = [_timed(rebuilt.run) for _ in range(repeats)]

    redraw = statistics.median(year_times)
    baseline = statistics.median(bare_times)
    result = {
        "name": "app_render",
        "seconds": round(time.perf_counter() - started, 3),
        "peak_memory_mb": round(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, 1),
        "first_render_s": round(first, 4),
        "redraw_year_median_s": round(redraw, 4),
        "redraw_index_median_s": round(statistics.median(index_times), 4),
        "redraw_seen_view_median_s": round(statistics.median(revisit_times), 4),
        "method_switch_median_s": round(statistics.median(method_times), 4),
        "bare_chart_median_s": round(baseline, 4),
        "bare_altair_chart_median_s": round(statistics.median(altair_times), 4),
        "map_spec_kb": round(len(spec.encode()) / 1024, 1),
        "ratios": {
            "first_render_vs_bare": round(first / baseline, 2),
            "redraw_year_vs_bare": round(redraw / baseline, 2),
            "redraw_index_vs_bare": round(statistics.median(index_times) / baseline, 2),
            "redraw_seen_view_vs_bare": round(statistics.median(revisit_times) / baseline, 2),
            "method_switch_vs_bare": round(statistics.median(method_times) / baseline, 2),
            "redraw_year_vs_bare_altair": round(redraw / statistics.median(altair_times), 2),
        },
    }
    print(f"first render {first:.3f} s; redraw (year) {redraw:.3f} s; bare chart {baseline:.3f} s")
    print(json.dumps(result))


if __name__ == "__main__":
    main()

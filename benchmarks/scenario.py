"""A what-if scenario on the demo's decile shares and on 1 million unit records.

Run ``python benchmarks/scenario.py`` (the demo's grouped year, then 1,000,000 records in
100 districts of 10 counties) or ``--quick`` (100,000 records). The scenario tops incomes up
to 60 % of the province median, pays for it with a balanced levy on the top decile, grows
incomes by decile for five years and moves people between two districts; every index, the
poverty measures, the Theil and MLD splits by level, the budget and the gain by percentile
are recomputed before and after. The baseline, timed in the same run, is the plain index
table of the same data (``explorer.stats.indices.compute``). Targets: under 1 s for the demo,
under 5 s for 1 million records. The last line is one JSON object: name, seconds,
peak_memory_mb, ratios.
"""

from __future__ import annotations

import argparse
import json
import resource
import time
from dataclasses import replace

import numpy as np
import pandas as pd

from explorer import data as readers
from explorer.data.model import Panel
from explorer.stats import indices
from explorer.stats.scenario import Growth, Levy, Move, Scenario, Transfer, apply

SCENARIO = Scenario(
    (
        Transfer(below_median_share=0.6, top_up=True),
        Levy(top_deciles=1, balance=True),
        Growth(decile_rates=tuple(np.linspace(0.04, 0.01, 10)), years=5),
        Move(scale={"D000": 1.1, "D001": 0.9}),
    ),
    name="benchmark",
)


def best_of(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def records(n: int, districts: int = 100) -> Panel:
    """Invented records: lognormal incomes, district means and spreads drawn once."""
    rng = np.random.default_rng(0)
    code = np.sort(rng.integers(0, districts, n))
    centre = rng.normal(9.6, 0.25, districts)[code]
    spread = rng.uniform(0.45, 0.85, districts)[code]
    names = np.array([f"D{k:03d}" for k in range(districts)], dtype=object)
    data = pd.DataFrame(
        {
            "region": names[code],
            "year": 2024,
            "income": np.exp(centre + spread * rng.standard_normal(n)),
            "weight": rng.uniform(20, 60, n),
        }
    )
    hierarchy = pd.DataFrame({"region": names, "county": [f"C{k // 10}" for k in range(districts)]})
    return Panel(kind="units", data=data, levels=("county",), hierarchy=hierarchy)


def demo_year() -> tuple[Panel, int]:
    panel = readers.demo_panel("brackets")
    year = panel.years[-1]
    one = replace(panel, data=panel.data[panel.data["year"] == year].reset_index(drop=True))
    return one, year


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="100,000 records, not 1,000,000")
    args = parser.parse_args()
    n = 100_000 if args.quick else 1_000_000
    repeat = 3

    demo, year = demo_year()
    first = demo.regions[:2]
    demo_scenario = Scenario(
        (*SCENARIO.steps[:3], Move(scale={first[0]: 1.1, first[1]: 0.9})), name="benchmark"
    )
    apply(demo, demo_scenario, year)  # imports and the first fit out of the timing
    demo_s = best_of(lambda: apply(demo, demo_scenario, year), repeat)
    demo_base = best_of(lambda: indices.compute(demo), repeat)

    units = records(n)
    units_s = best_of(lambda: apply(units, SCENARIO, 2024), repeat)
    units_base = best_of(lambda: indices.compute(units), repeat)
    result = apply(units, SCENARIO, 2024)
    gini = result.indices.set_index(["region", "index"]).loc[("(all)", "gini")]

    print(f"demo, decile shares: {len(demo.regions)} districts, year {year}")
    print(f"  plain index table     {demo_base:8.3f} s")
    print(f"  scenario, all tables  {demo_s:8.3f} s   ({demo_s / demo_base:.1f} x; target < 1 s)")
    print(f"{n:,} records in 100 districts")
    print(f"  plain index table     {units_base:8.3f} s")
    print(
        f"  scenario, all tables  {units_s:8.3f} s   ({units_s / units_base:.1f} x; target < 5 s)"
    )
    print(f"  province Gini {gini['before']:.4f} -> {gini['after']:.4f}")
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(
        json.dumps(
            {
                "name": "scenario",
                "seconds": round(units_s, 4),
                "peak_memory_mb": round(peak, 1),
                "ratios": {
                    "demo_to_plain_indices": round(demo_s / demo_base, 2),
                    "records_to_plain_indices": round(units_s / units_base, 2),
                    "demo_seconds": round(demo_s, 4),
                },
            }
        )
    )


if __name__ == "__main__":
    main()

"""Generate the invented demo province of Kellvaran and write its data files.

Everything here is invented: the province, its counties and districts, their people and
incomes, and a geography placed over open ocean in the South Pacific (about 31-35 S,
123-129 W) where there is no land. The generator is seeded and writes with fixed
formatting and sorted rows, so running it twice gives the same files byte for byte (with
the same versions of numpy, scipy and shapely).

Run ``python demo_data/generate.py`` to rewrite the shipped files, or
``python demo_data/generate.py --out DIR`` to write them somewhere else.

Model
-----
Each district-year's income distribution is lognormal with mean ``m`` and log standard
deviation ``sigma``. Its exact decile shares come from integrating the quantile function
over each tenth of the population, which for the lognormal gives the Lorenz curve
``L(p) = Phi(Phi^-1(p) - sigma)`` (Aitchison & Brown 1957); small multiplicative noise
stands in for survey error. The household sample is drawn from the same distribution.

References
----------
Aitchison, J. and Brown, J. A. C. (1957). *The Lognormal Distribution*. Cambridge
University Press.
"""

from __future__ import annotations

import argparse
import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import shapely
from scipy.special import ndtr, ndtri
from shapely.geometry import MultiPoint, Polygon, mapping
from shapely.geometry.polygon import orient

SEED = 20_080_125
PROVINCE = "Kellvaran"
YEARS = np.arange(2008, 2026)
SAMPLE_YEARS = (2010, 2017, 2024)
#: Survey years of the published figures (an office publishes every few years).
PUBLISHED_YEARS = (2009, 2012, 2015, 2018, 2021, 2024)
GRID = 1e-5  # coordinates are kept on a 5-decimal grid so shared borders match exactly

# Province outline: a star-shaped (hence simple) polygon around this centre, in degrees.
CENTRE = (-126.0, -33.0)
RADIUS = (2.05, 1.45)  # lon, lat half-widths; lon is wider because a degree is shorter

# Counties: (code, name, role, centre offset from CENTRE in degrees lon, lat).
COUNTIES = (
    (
        "CAL",
        "Calvessa",
        "the port city of Port Idrel, its suburbs and the west coast",
        (-1.35, 0.05),
    ),
    ("BRE", "Brennhollow", "northern farmland; an income-support scheme from 2016", (-0.35, 0.95)),
    ("FER", "Ferrowdown", "eastern hills with iron mines; one island", (1.35, 0.25)),
    ("QUI", "Quillmarsh", "southern marsh and fishing coast; one island", (-0.45, -0.95)),
    ("TAN", "Tanvery", "quiet south-eastern uplands", (0.85, -0.7)),
    ("OSS", "Osselin", "the interior plain, market towns", (0.15, 0.05)),
)

# Story parameters (log points unless stated).
BASE_MEAN = 24_000.0  # provincial mean income in 2008, currency units per person per year
PROVINCE_GROWTH = 0.017  # trend growth of log mean per year
PROVINCE_SHOCKS = {2009: -0.035, 2010: 0.01, 2020: -0.045, 2021: 0.04}
CITY_EXTRA_GROWTH = 0.024  # the city pulls away from the rest each year
SUBURB_EXTRA_GROWTH = 0.008
CITY_SIGMA_RISE = 0.011  # per year, the city's log standard deviation rises
CATCH_UP = 0.035  # share of a district's gap to its county level closed each year
POLICY_YEAR = 2016  # Brennhollow's within-district inequality falls after this year
POLICY_SIGMA_DROP = 0.16
POLICY_SPEED = 2.5  # years for the drop to go about two-thirds of the way
BOOM_PEAK = 2014  # Ferrowdown's mines: means rise to this year, then fall
BOOM_HEIGHT = 0.38
BOOM_WIDTH = 3.0  # years
BUST_FLOOR = -0.06  # after the bust, below where the county started
BOOM_SIGMA = 0.06
SIGMA_RANGE = (0.44, 1.02)
SHARE_NOISE = 0.012  # multiplicative noise on decile shares (survey error)

DISTRICT_NAMES = (
    "Astlowe",
    "Aldervisk",
    "Brackvennel",
    "Briskvale",
    "Cairnvell",
    "Cinderlow",
    "Corvantle",
    "Dapplewyn",
    "Drossel End",
    "Emberlin",
    "Farrowick",
    "Fennick Rise",
    "Gallimond",
    "Glimmerton",
    "Hollimane",
    "Ironhask",
    "Kestrow",
    "Lorrimoss",
    "Merrowgate",
    "Mottlecombe",
    "Nettlestrand",
    "Oakenvarre",
    "Oresby Moor",
    "Parrowdel",
    "Pellistrow",
    "Quenholm",
    "Ravelsk",
    "Reedvannock",
    "Sallowfen",
    "Skaldon Bay",
    "Sorrelby",
    "Tarnish Wells",
    "Thistlegarth",
    "Thornquill",
    "Ulvessby",
    "Umberhythe",
    "Veskmere",
    "Wendermist",
    "Yarlstane",
    "Zellowmere",
    "Ambrecott",
    "Bellweir",
    "Crannowend",
    "Dellivar",
    "Essenhope",
    "Fallowdrum",
    "Gorsewick",
    "Hathervane",
    "Inglemorrow",
    "Jessamore",
    "Kittlecraig",
    "Lanternby",
    "Moravell",
    "Nimbletrow",
)
CITY_NAME = "Port Idrel"
SUBURB_NAMES = ("Idrel Heights", "Idrel Strand", "Saltmoor Gate")
ISLAND_NAMES = ("Skerrin Isle", "Orrin Skerry")


@dataclass(frozen=True)
class District:
    region: str
    name: str
    county: str
    geometry: Polygon
    role: str  # "city", "suburb", "island" or "district"


def _outline(rng: np.random.Generator) -> Polygon:
    """An irregular, coastline-like province outline with a bay on the west coast."""
    theta = np.linspace(0.0, 2.0 * np.pi, 480, endpoint=False)
    r = np.ones_like(theta)
    for k, amp in zip(range(2, 9), (0.07, 0.06, 0.045, 0.035, 0.03, 0.02, 0.015), strict=True):
        r += amp * np.cos(k * theta + rng.uniform(0, 2 * np.pi))
    k = np.arange(9, 48)[:, None]  # a ragged shore: many small headlands and coves
    r += (0.11 / k * np.cos(k * theta + rng.uniform(0, 2 * np.pi, k.shape))).sum(0)
    bay = np.angle(np.exp(1j * (theta - np.pi)))  # angle from due west, in (-pi, pi]
    r -= 0.2 * np.exp(-((bay / 0.2) ** 2))
    x = CENTRE[0] + RADIUS[0] * r * np.cos(theta)
    y = CENTRE[1] + RADIUS[1] * r * np.sin(theta)
    return shapely.set_precision(Polygon(np.column_stack([x, y])), GRID)


def _seeds(rng: np.random.Generator, outline: Polygon) -> tuple[np.ndarray, int]:
    """District seed points: a jittered grid plus a dense cluster at the bay head.

    Returns the points and the index of the city's seed (the first four are the city and
    its suburbs).
    """
    # The bay head is where the coast crosses the centre's parallel furthest west.
    parallel = shapely.LineString([(CENTRE[0] - 2 * RADIUS[0], CENTRE[1]), CENTRE])
    bay_head = np.array([shapely.intersection(parallel, outline).bounds[0], CENTRE[1]])
    urban = bay_head + np.array([[0.12, 0.0], [0.14, 0.16], [0.32, 0.02], [0.16, -0.17]])
    step = np.array([0.48, 0.385])
    gx, gy = np.meshgrid(
        np.arange(CENTRE[0] - 2.3, CENTRE[0] + 2.3, step[0]),
        np.arange(CENTRE[1] - 1.7, CENTRE[1] + 1.7, step[1]),
    )
    grid = np.column_stack([gx.ravel(), gy.ravel()])
    grid[:, 0] += (np.arange(len(grid)) // gx.shape[1] % 2) * step[0] / 2  # hexagonal rows
    grid += rng.uniform(-0.3, 0.3, grid.shape) * step
    inside = shapely.contains_xy(outline.buffer(-0.08), grid[:, 0], grid[:, 1])
    far_from_city = np.min(np.hypot(*(grid[:, None, :] - urban[None]).transpose(2, 0, 1)), 1)
    grid = grid[inside & (far_from_city > 0.33)]
    seeds = np.vstack([urban, grid])
    if not shapely.contains_xy(outline, seeds[:, 0], seeds[:, 1]).all():
        raise RuntimeError("a district seed fell outside the province; change the outline")
    return seeds, 0


def _tessellate(outline: Polygon, seeds: np.ndarray) -> list[Polygon]:
    """Voronoi cells of the seeds clipped to the outline, on the 5-decimal grid."""
    cells = shapely.voronoi_polygons(MultiPoint(seeds), extend_to=outline.buffer(1.0), ordered=True)
    parts = [shapely.set_precision(c, GRID) for c in cells.geoms]
    clipped = [shapely.intersection(c, outline, grid_size=GRID) for c in parts]
    out = []
    for cell, seed in zip(clipped, seeds, strict=True):
        if cell.geom_type != "Polygon":
            # A cell cut in two by the coast keeps the piece holding its seed; the other
            # piece goes to the neighbour that shares the most border with it.
            pieces = list(getattr(cell, "geoms", []))
            polys = [p for p in pieces if p.geom_type == "Polygon"]
            cell = min(polys, key=lambda p: p.distance(shapely.Point(seed)))
        out.append(cell)
    covered = shapely.union_all(out, grid_size=GRID)
    lost = shapely.difference(outline, covered, grid_size=GRID)
    for piece in getattr(lost, "geoms", [lost]):
        if piece.is_empty or piece.area == 0:
            continue
        shared = [shapely.intersection(piece.boundary, c.boundary).length for c in out]
        k = int(np.argmax(shared))
        out[k] = shapely.union(out[k], piece, grid_size=GRID)
    return out


def _island(rng: np.random.Generator, centre: tuple[float, float], radius: float) -> Polygon:
    theta = np.linspace(0.0, 2.0 * np.pi, 40, endpoint=False)
    r = radius * (1 + 0.18 * np.cos(2 * theta + rng.uniform(0, 6)) + 0.05 * rng.standard_normal(40))
    ring = np.column_stack([centre[0] + r * np.cos(theta), centre[1] + 0.8 * r * np.sin(theta)])
    return shapely.set_precision(Polygon(ring), GRID)


def build_geography(rng: np.random.Generator) -> list[District]:
    """The province's districts with their counties, codes and names."""
    outline = _outline(rng)
    seeds, city = _seeds(rng, outline)
    cells = _tessellate(outline, seeds)
    centres = np.array([[CENTRE[0] + dx, CENTRE[1] + dy] for *_, (dx, dy) in COUNTIES])
    county_of = np.argmin(np.hypot(*(seeds[:, None, :] - centres[None]).transpose(2, 0, 1)), 1)
    county_of[:4] = 0  # the city and its suburbs are in Calvessa
    roles = ["city", "suburb", "suburb", "suburb"] + ["district"] * (len(seeds) - 4)
    islands = [
        _island(rng, (CENTRE[0] - 0.9, CENTRE[1] - RADIUS[1] * 1.22), 0.085),
        _island(rng, (CENTRE[0] + 1.75, CENTRE[1] + RADIUS[1] * 1.05), 0.06),
    ]
    cells += islands
    roles += ["island", "island"]
    county_of = np.concatenate([county_of, [3, 2]])  # Quillmarsh's and Ferrowdown's islands
    centroids = np.array([[c.centroid.x, c.centroid.y] for c in cells])

    names = list(rng.permutation(np.array(DISTRICT_NAMES, dtype=object)))
    suburb_names = iter(SUBURB_NAMES)
    island_names = iter(ISLAND_NAMES)
    districts = []
    for c, (code, county, *_) in enumerate(COUNTIES):
        members = np.flatnonzero(county_of == c)
        # Codes run north to south, the city first.
        order = sorted(
            members, key=lambda i: (roles[i] != "city", -centroids[i, 1], centroids[i, 0])
        )
        for number, i in enumerate(order, start=1):
            role = roles[i]
            if role == "city":
                name = CITY_NAME
            elif role == "suburb":
                name = next(suburb_names)
            elif role == "island":
                name = next(island_names)
            else:
                name = names.pop()
            geometry = orient(cells[i], sign=1.0)  # RFC 7946: exterior counter-clockwise
            districts.append(District(f"{code}{number:02d}", name, county, geometry, role))
    return sorted(districts, key=lambda d: d.region)


def _smooth_field(rng: np.random.Generator, xy: np.ndarray, bumps: int, scale: float) -> np.ndarray:
    """A spatially smooth random surface: neighbouring districts get similar values."""
    lo, hi = xy.min(0), xy.max(0)
    centres = rng.uniform(lo, hi, (bumps, 2))
    heights = rng.standard_normal(bumps)
    d2 = ((xy[:, None, :] - centres[None]) ** 2).sum(-1)
    field = (heights * np.exp(-d2 / (2 * scale**2))).sum(1)
    return (field - field.mean()) / field.std()


def decile_shares(sigma: np.ndarray) -> np.ndarray:
    """Exact decile shares of lognormal distributions, one row per sigma.

    The share of the j-th tenth is L(j/10) - L((j-1)/10) with L(p) = Phi(Phi^-1(p) - sigma),
    the integral of the quantile function over that tenth divided by the mean.

    References
    ----------
    Aitchison, J. and Brown, J. A. C. (1957). *The Lognormal Distribution*. Cambridge
    University Press.
    """
    p = np.linspace(0.0, 1.0, 11)
    lorenz = ndtr(ndtri(p)[None, :] - np.asarray(sigma)[:, None])
    return np.diff(lorenz, axis=1)


def build_panel(rng: np.random.Generator, districts: list[District]) -> dict[str, np.ndarray]:
    """Means, log standard deviations and populations for every district-year."""
    n, t = len(districts), len(YEARS)
    xy = np.array([[d.geometry.centroid.x, d.geometry.centroid.y] for d in districts])
    role = np.array([d.role for d in districts])
    county = np.array([d.county for d in districts])
    city, suburb, island = role == "city", role == "suburb", role == "island"
    policy, mining = county == "Brennhollow", county == "Ferrowdown"
    years = YEARS - YEARS[0]

    # Levels: a smooth surface (spatial clustering) plus a little district noise.
    level = 0.16 * _smooth_field(rng, xy, 7, 0.7) + 0.05 * rng.standard_normal(n)
    level += 0.30 * city + 0.16 * suburb - 0.10 * island
    county_names = np.array([name for _, name, *_ in COUNTIES])
    county_level = {c: level[county == c].mean() for c in county_names}
    home = np.array([county_level[c] for c in county])
    home[city | suburb] = level[city | suburb]  # the urban core is not pulled back

    trend = PROVINCE_GROWTH * years + np.cumsum([PROVINCE_SHOCKS.get(y, 0.0) for y in YEARS])
    county_shock = {c: np.cumsum(0.012 * rng.standard_normal(t)) for c in county_names}
    log_mean = np.empty((n, t))
    gap = level - home
    for j in range(t):  # one step per year for all districts at once
        if j:
            gap = (1 - CATCH_UP) * gap + 0.012 * rng.standard_normal(n)
        log_mean[:, j] = home + gap + trend[j] + np.array([county_shock[c][j] for c in county])
    log_mean += np.outer(city, CITY_EXTRA_GROWTH * years)
    log_mean += np.outer(suburb, SUBURB_EXTRA_GROWTH * years)
    boom = BOOM_HEIGHT * np.exp(-(((YEARS - BOOM_PEAK) / BOOM_WIDTH) ** 2))
    bust = np.where(YEARS > BOOM_PEAK, BUST_FLOOR * (1 - np.exp(-(YEARS - BOOM_PEAK) / 2)), 0.0)
    log_mean += np.outer(mining, boom + bust)
    mean_income = BASE_MEAN * np.exp(log_mean)

    # Within-district inequality (log standard deviation of income).
    sigma0 = 0.64 + 0.09 * _smooth_field(rng, xy, 6, 0.8) + 0.02 * rng.standard_normal(n)
    sigma0 += 0.24 * city + 0.06 * suburb - 0.16 * island - 0.10 * (county == "Tanvery")
    sigma = sigma0[:, None] + np.cumsum(0.006 * rng.standard_normal((n, t)), axis=1)
    sigma += np.outer(city, CITY_SIGMA_RISE * years)
    after = np.clip(YEARS - POLICY_YEAR, 0, None)
    sigma -= np.outer(policy, POLICY_SIGMA_DROP * (1 - np.exp(-after / POLICY_SPEED)))
    sigma += np.outer(mining, BOOM_SIGMA * boom / BOOM_HEIGHT)
    sigma = np.clip(sigma, *SIGMA_RANGE)

    # Populations (persons).
    base = np.exp(rng.normal(np.log(38_000), 0.45, n))
    base = np.where(city, 410_000, np.where(suburb, 95_000, np.where(island, 3_200, base)))
    growth = 0.004 + 0.014 * city + 0.010 * suburb - 0.006 * island
    pop_log = np.log(base)[:, None] + np.outer(growth, years)
    pop_log += np.outer(mining, 0.6 * (boom + bust))
    pop_log += np.cumsum(0.004 * rng.standard_normal((n, t)), axis=1)
    population = np.round(np.exp(pop_log)).astype(np.int64)
    return {"mean_income": mean_income, "sigma": sigma, "population": population}


def _integer_shares(shares: np.ndarray, unit: int = 1_000_000) -> np.ndarray:
    """Round shares to multiples of 1/unit that still sum exactly to one (largest remainder)."""
    scaled = shares * unit
    floor = np.floor(scaled).astype(np.int64)
    short = unit - floor.sum(1)
    rank = np.argsort(-(scaled - floor), axis=1, kind="stable")
    bump = np.zeros_like(floor)
    np.put_along_axis(bump, rank, (np.arange(shares.shape[1]) < short[:, None]).astype(np.int64), 1)
    return floor + bump


def _write_csv(path: Path, header: list[str], rows: list[str]) -> None:
    path.write_text(",".join(header) + "\n" + "".join(r + "\n" for r in rows), encoding="utf-8")


def write_files(out: Path) -> None:
    """Generate the province and write every demo file into ``out``."""
    rng = np.random.default_rng(SEED)
    districts = build_geography(rng)
    panel = build_panel(rng, districts)
    n, t = panel["sigma"].shape
    out.mkdir(parents=True, exist_ok=True)

    exact = decile_shares(panel["sigma"].ravel())
    noisy = exact * np.exp(SHARE_NOISE * rng.standard_normal(exact.shape))
    noisy /= noisy.sum(1, keepdims=True)
    micro = _integer_shares(noisy)
    if not (np.diff(micro, axis=1) > 0).all():
        raise RuntimeError("noise broke the order of the decile shares; lower SHARE_NOISE")

    share_cols = [f"share_{k}" for k in range(1, 11)]
    decile_rows, mean_rows = [], []
    for i, d in enumerate(districts):
        for j, year in enumerate(YEARS):
            k = i * t + j
            shares = ",".join(f"{m / 1e6:.6f}" for m in micro[k])
            pop, mean = panel["population"][i, j], panel["mean_income"][i, j]
            decile_rows.append(f"{d.region},{year},{d.county},{shares},{pop},{mean:.2f}")
            mean_rows.append(f"{d.region},{year},{d.county},{mean:.2f},{pop}")
    _write_csv(
        out / "deciles.csv",
        ["region", "year", "county", *share_cols, "population", "mean_income"],
        decile_rows,
    )
    _write_csv(
        out / "means.csv", ["region", "year", "county", "mean_income", "population"], mean_rows
    )

    household_rows = []
    for i, d in enumerate(districts):
        for year in SAMPLE_YEARS:
            j = int(np.flatnonzero(YEARS == year)[0])
            size = int(rng.integers(150, 301))
            sigma, mean = panel["sigma"][i, j], panel["mean_income"][i, j]
            income = mean * np.exp(sigma * rng.standard_normal(size) - sigma**2 / 2)
            design = np.exp(0.3 * rng.standard_normal(size))  # unequal selection chances
            weight = design / design.sum() * panel["population"][i, j]
            order = np.argsort(income, kind="stable")
            household_rows += [
                f"{d.region},{year},{d.county},{income[o]:.2f},{weight[o]:.3f}" for o in order
            ]
    _write_csv(
        out / "households.csv", ["region", "year", "county", "income", "weight"], household_rows
    )

    # An office's table of published figures for the survey years: the Gini and the top
    # decile's share of each lognormal district in percent, one decimal, and the median.
    # Closed forms of the lognormal (Aitchison & Brown 1957, *The Lognormal
    # Distribution*, ch. 2): Gini 2Φ(σ/√2) − 1; top 10 % share 1 − Φ(Φ⁻¹(0.9) − σ);
    # median μ·exp(−σ²/2). No random draws, so the other files are unchanged.
    published_rows = []
    z90 = float(ndtri(0.9))
    for i, d in enumerate(districts):
        for year in PUBLISHED_YEARS:
            j = int(np.flatnonzero(YEARS == year)[0])
            sigma, mean = panel["sigma"][i, j], panel["mean_income"][i, j]
            gini = 100 * (2 * ndtr(sigma / np.sqrt(2)) - 1)
            top = 100 * (1 - ndtr(z90 - sigma))
            median = mean * np.exp(-(sigma**2) / 2)
            published_rows.append(f"{d.region},{year},{gini:.1f},{top:.1f},{median:.0f}")
    _write_csv(
        out / "published.csv",
        ["region", "year", "gini", "top10_share", "median_income"],
        published_rows,
    )

    features = []
    for d in districts:
        geometry = mapping(d.geometry)
        geometry = {
            "type": "Polygon",
            "coordinates": [
                [[round(x, 5), round(y, 5)] for x, y in ring] for ring in geometry["coordinates"]
            ],
        }
        features.append(
            {
                "type": "Feature",
                "properties": {"region": d.region, "name": d.name, "county": d.county},
                "geometry": geometry,
            }
        )
    collection = {
        "type": "FeatureCollection",
        "name": f"{PROVINCE} districts",
        "features": features,
    }
    text = json.dumps(collection, ensure_ascii=False, separators=(",", ":"))
    (out / "districts.geojson").write_text(text + "\n", encoding="utf-8")
    (out / "README.md").write_text(_readme(districts, panel), encoding="utf-8")


def _readme(districts: list[District], panel: dict[str, np.ndarray]) -> str:
    city = next(d for d in districts if d.role == "city")
    counts = {name: sum(d.county == name for d in districts) for _, name, *_ in COUNTIES}
    county_lines = "\n".join(
        f"| {name} | {code} | {counts[name]} | {role} |" for code, name, role, _ in COUNTIES
    )
    sample_years = ", ".join(str(y) for y in SAMPLE_YEARS)
    published_years = ", ".join(str(y) for y in PUBLISHED_YEARS)
    lorenz = np.cumsum(decile_shares(panel["sigma"].ravel()), axis=1)
    gini = (1 - (2 * lorenz.sum(1) - 1) / 10).reshape(panel["sigma"].shape)
    low, high = (
        np.unravel_index(gini.argmin(), gini.shape),
        np.unravel_index(gini.argmax(), gini.shape),
    )
    lowest, highest = districts[low[0]], districts[high[0]]
    highest_year = YEARS[high[1]]
    return f"""# The demo province of {PROVINCE}

{PROVINCE} is an invented province. Its counties, districts, people and incomes are made
up, and its map lies over open ocean in the South Pacific (about 31-35 S, 123-129 W) where
there is no land, so it cannot be mistaken for a real place. Use it to learn the tool, not
to draw conclusions about anywhere.

`generate.py` writes every file here (including this one) from a fixed random seed;
running `python demo_data/generate.py` again reproduces them byte for byte (with the
same numpy, scipy and shapely versions).

## The province

{len(districts)} districts in {len(COUNTIES)} counties, {YEARS[0]}-{YEARS[-1]}. Incomes are annual
equivalised disposable incomes per person, in the province's own currency units.

| county | code prefix | districts | character |
|---|---|---|---|
{county_lines}

Two small island districts, {ISLAND_NAMES[0]} and {ISLAND_NAMES[1]}, lie offshore and touch
no other district.

## What there is to find

- **A city pulling away.** {city.name} ({city.region}), at the head of the bay on the west
  coast, grows about {CITY_EXTRA_GROWTH:.1%} a year faster than the province, and its
  within-district inequality rises year by year; its three suburbs follow part of the way.
  Between-district inequality in Calvessa and across the province rises with it.
- **A policy that worked.** In Brennhollow, within-district inequality falls after
  {POLICY_YEAR}, quickly at first and then levelling off, while means follow the province.
- **A mining boom and bust.** Ferrowdown's means rise to a peak in {BOOM_PEAK}, then fall
  back to below their pre-boom standing relative to the province; population follows, and inequality rises during the boom.
- **Neighbours alike.** Mean incomes and inequality vary smoothly across the map, so
  neighbouring districts resemble each other (spatial clustering), and outside the urban
  core poorer districts slowly catch up with their county. Across the whole province the
  city hides this: β-convergence shows once Calvessa is left out.
- District Gini coefficients (from the decile points, joined by straight lines) range
  from {gini.min():.2f} ({lowest.name}, {lowest.county}) to {gini.max():.2f} ({highest.name}, in
  {highest_year}).

Every index here is an estimate from invented data; even with real data an index alone
should not decide how funds are shared between districts: that follows the office's own
rules and statistics.

## Files

- `deciles.csv`: region, year, county, share_1 ... share_10 (income shares of the ten
  population tenths, bottom to top, summing to 1 to six decimals), population (persons),
  mean_income. One row per district-year.
- `households.csv`: a weighted sample of households for {sample_years} (150-300 per
  district-year): region, year, county, income, weight (persons each record represents).
  Drawn from the same distributions as the deciles.
- `means.csv`: region, year, county, mean_income, population, every year.
- `published.csv`: figures as an office would publish them for {published_years}: region,
  year, gini and top10_share (percent, one decimal) and median_income, computed from each
  district-year's lognormal distribution by its closed forms.
- `districts.geojson`: district polygons in longitude/latitude (EPSG:4326, RFC 7946,
  exterior rings counter-clockwise), properties region, name, county. The mainland
  districts tile the province without gaps or overlaps.

## How it was made

Each district-year is a lognormal distribution. Its decile shares are exact (the integral
of the quantile function over each tenth) with small noise for survey error, so grouped-data
methods have a known truth to approach. Mean incomes combine a provincial trend with
shocks in 2009 and 2020, a spatially smooth level, county shocks and the stories above.
The boundaries are a jittered Voronoi tessellation clipped to an irregular outline.

The parameters, all in `generate.py`: seed {SEED}; provincial trend growth
{PROVINCE_GROWTH:.1%} a year; the city's extra growth {CITY_EXTRA_GROWTH:.1%} a year and
its log standard deviation rising {CITY_SIGMA_RISE} a year; other districts close
{CATCH_UP:.1%} of the gap to their county each year; Brennhollow's log standard deviation
falls by up to {POLICY_SIGMA_DROP} after {POLICY_YEAR}; Ferrowdown's boom adds up to
{BOOM_HEIGHT} log points to means around {BOOM_PEAK}; decile shares carry
{SHARE_NOISE:.1%} multiplicative noise.
"""


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=f"Write the invented {PROVINCE} demo files.")
    parser.add_argument("--out", type=Path, default=Path(__file__).resolve().parent)
    write_files(parser.parse_args(argv).out)


if __name__ == "__main__":
    main()

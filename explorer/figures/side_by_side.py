"""The Compare page's figures: two to six districts in one year, or one district in up to
six years, side by side.

Each member is a district-year. Grouped shares and unit records give overlaid Lorenz curves
(with the band every curve consistent with the shares lies in), generalised Lorenz curves
where the means are known, every index side by side with its difference from the first
member, and a verdict in words for each pair (:func:`explorer.stats.dominance.compare`); for
unit records also whether the differences at each decile exceed their bootstrap intervals.
District means and published figures have no curve: their figures are set side by side.

References
----------
Atkinson, A. B. (1970). On the measurement of inequality. *Journal of Economic Theory* 2:
244–263 (Lorenz dominance).
Shorrocks, A. F. (1983). Ranking income distributions. *Economica* 50: 3–17 (generalised
Lorenz dominance).
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import combinations
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import Panel
from explorer.figures import series
from explorer.figures.compute import Compute
from explorer.figures.tables import district_means, lorenz_band, lorenz_points, names
from explorer.present import charts, vocabulary
from explorer.views import MAX_COMPARED, ViewState

__all__ = ["CompareFigures", "Member", "Verdict", "compare_page", "members"]

#: Bootstrap replications of the decile differences of unit records (as the sampling
#: intervals elsewhere in the app).
DECILE_REPS = 199


@dataclass(frozen=True)
class Member:
    """One district-year on the Compare page, with the name it is shown under."""

    region: str
    year: int
    label: str


@dataclass(frozen=True)
class Verdict:
    """The verdict for one pair of members, in words (``deciles``: unit records only)."""

    first: str
    second: str
    lorenz: str
    welfare: str
    deciles: pd.DataFrame | None = None
    decile_words: str = ""


@dataclass(frozen=True)
class CompareFigures:
    """Everything the Compare page shows; ``notice`` says why nothing is (too few chosen)."""

    members: tuple[Member, ...]
    notice: str = ""
    lorenz_chart: Any = None
    general_chart: Any = None
    table: pd.DataFrame | None = None
    verdicts: tuple[Verdict, ...] = ()
    caption: str = ""


def members(panel: Panel, view: ViewState) -> tuple[Member, ...]:
    """The district-years compared: the view's chosen districts in its year, or the first
    chosen district in the view's ``compare_years`` (at most six either way)."""
    label = names(panel).set_index("region")["name"]
    present = set(
        zip(panel.data["region"].astype(str), panel.data["year"].astype(int), strict=True)
    )
    if view.compare_years:
        region = view.districts[0] if view.districts else str(panel.regions[0])
        name = str(label.get(region, region))
        chosen = [Member(region, int(y), f"{name}, {y}") for y in view.compare_years]
    else:
        chosen = [
            Member(r, int(view.year), f"{label.get(r, r)} ({r})")
            for r in view.districts[:MAX_COMPARED]
        ]
    return tuple(m for m in chosen if (m.region, m.year) in present)


def _mean(means: pd.DataFrame, member: Member) -> float:
    row = means[(means["region"].astype(str) == member.region) & (means["year"] == member.year)]
    return float(row["mean_income"].iloc[0]) if len(row) and "mean_income" in row else np.nan


def _figure_rows(panel: Panel, view: ViewState, compute: Compute, chosen) -> pd.DataFrame:
    """Every figure of the panel for each member: ``figure`` then one column per member."""
    keys = [k for k in series.figure_keys(panel) if not k.startswith("growth_")]
    out = []
    for key in keys:
        rows = series.values(panel, compute, key, view.method, view.year_from, view)
        rows = rows.assign(region=rows["region"].astype(str)).set_index(["region", "year"])
        for m in chosen:
            hit = rows.index.isin([(m.region, m.year)])
            row = rows[hit].iloc[0] if hit.any() else None
            out.append(
                {
                    "index": key,
                    "member": m.label,
                    "value": np.nan if row is None else float(row["value"]),
                    "lower": np.nan if row is None else float(row["lower"]),
                    "upper": np.nan if row is None else float(row["upper"]),
                }
            )
    return pd.DataFrame(out)


def _cell(panel, key, value, lower, upper) -> str:
    money = series.is_money(panel, key)
    digits = vocabulary.digits_of(panel, key)
    shown = vocabulary.figure(value, money=money, digits=digits)
    if np.isfinite(lower) and np.isfinite(upper):
        low = vocabulary.figure(lower, money=money, digits=digits)
        high = vocabulary.figure(upper, money=money, digits=digits)
        return f"{shown} ({low} to {high})"
    if np.isfinite(lower) and not np.isnan(upper):
        return f"{shown} ({vocabulary.figure(lower, money=money, digits=digits)} or more)"
    return shown


def _side_by_side(panel: Panel, long: pd.DataFrame, chosen) -> pd.DataFrame:
    """One row per figure: each member's value (with its bounds), then each member's
    difference from the first; a difference is marked "clear" when the bounds do not
    overlap."""
    first = chosen[0].label
    rows = []
    for key, group in long.groupby("index", sort=False):
        group = group.set_index("member")
        row = {"Figure": vocabulary.figure_label(key, panel)}
        for m in chosen:
            g = group.loc[m.label]
            row[m.label] = _cell(panel, key, g["value"], g["lower"], g["upper"])
        a = group.loc[first]
        for m in chosen[1:]:
            b = group.loc[m.label]
            diff = b["value"] - a["value"]
            digits = vocabulary.digits_of(panel, key)
            text = vocabulary.figure(diff, money=series.is_money(panel, key), digits=digits)
            if np.isfinite(diff) and diff > 0:
                text = "+" + text
            bounded = np.isfinite([a["lower"], a["upper"], b["lower"], b["upper"]]).all()
            if bounded:
                apart = b["lower"] > a["upper"] or a["lower"] > b["upper"]
                text += " (clear)" if apart else " (ranges overlap)"
            row[f"{m.label} − {first}"] = text
        rows.append(row)
    return pd.DataFrame(rows)


def _curves(panel, compute, chosen, means):
    """Lorenz points of each member, the bands (grouped shares), generalised points."""
    points, bands = [], []
    for m in chosen:
        got = lorenz_points(panel, m.region, m.year)
        points.append(got.assign(name=m.label, mean=means[m.label]))
        if panel.kind == "brackets":
            band = lorenz_band(compute.lorenz_curves(m.region, m.year, ("linear", "upper")))
            if band is not None:
                bands.append(
                    band.rename(columns={"lower": "high", "upper": "low"}).assign(name=m.label)
                )
    shown = pd.concat(points, ignore_index=True)
    band = pd.concat(bands, ignore_index=True) if bands else None
    return shown, band


def _unit_verdict(panel, a: Member, b: Member, seed: int) -> tuple[pd.DataFrame, str]:
    """Differences of the two members' Lorenz ordinates at each decile with bootstrap
    intervals, and which exceed them, in words."""
    from explorer.stats import dominance, measures

    data = panel.data
    parts = []
    for code, m in enumerate((a, b)):
        rows = data[(data["region"].astype(str) == m.region) & (data["year"] == m.year)]
        parts.append(rows.assign(member=code))
    rows = pd.concat(parts, ignore_index=True)
    units = measures.sort_units(
        rows["income"].to_numpy(float), rows["weight"].to_numpy(float), rows["member"].to_numpy()
    )
    got = dominance.decile_differences(units, 0, 1, reps=DECILE_REPS, seed=seed)
    clear = got[got["exceeds"]]
    if clear.empty:
        words = (
            f"At no decile does the difference between {a.label}'s and {b.label}'s Lorenz "
            f"curves exceed its 95 % bootstrap interval ({DECILE_REPS} resamples): with "
            "these samples the two cannot be told apart."
        )
    else:
        where = ", ".join(f"{round(10 * p)}" for p in clear["p"])
        words = (
            f"The difference exceeds its 95 % bootstrap interval ({DECILE_REPS} resamples) at "
            f"decile(s) {where} of 9; elsewhere the samples cannot tell the curves apart."
        )
    return got, words


def _capital(text: str, units: bool) -> str:
    if units:  # sample curves: every record is a point, no bounds
        text = text.replace(" at every published point", " everywhere")
        text = text.replace(", even at the bounds", "").replace(
            "; the bounds also allow curves that do not cross", ""
        )
    return text[:1].upper() + text[1:] + ("" if text.endswith(".") else ".")


def compare_page(panel: Panel, view: ViewState, compute: Compute) -> CompareFigures:
    """The Compare page of the view (see the module docstring)."""
    from explorer.stats import dominance

    chosen = members(panel, view)
    if len(chosen) < 2:
        what = (
            "two or more years for the district" if view.compare_years else "two to six districts"
        )
        return CompareFigures(chosen, notice=f"Choose {what} to compare.")
    caption = vocabulary.caption(view, panel, every_year=bool(view.compare_years))
    table = _side_by_side(panel, _figure_rows(panel, view, compute, chosen), chosen)
    if panel.kind not in ("brackets", "units"):
        return CompareFigures(chosen, table=table, caption=caption)
    means_table = district_means(panel)
    means = {m.label: _mean(means_table, m) for m in chosen}
    points, band = _curves(panel, compute, chosen, means)
    heading = (
        f"{chosen[0].label.split(',')[0]}, {', '.join(str(m.year) for m in chosen)}"
        if view.compare_years
        else f"{len(chosen)} districts, {view.year}"
    )
    how = (
        "Shaded: every curve consistent with each district's published shares lies inside its band."
        if panel.kind == "brackets"
        else "Every household, poorest first."
    )
    lorenz_chart = charts.curves_overlay(
        points,
        band=band,
        title=f"Lorenz curves, {heading}",
        caption=vocabulary.wrap(f"{how} {caption}", width=70),
    )
    general_chart = None
    known = all(np.isfinite(v) for v in means.values())
    if known:
        general = points.assign(L=points["L"] * points["mean"])
        general_band = None
        if band is not None:
            scale = band["name"].map(means)
            general_band = band.assign(low=band["low"] * scale, high=band["high"] * scale)
        general_chart = charts.curves_overlay(
            general,
            band=general_band,
            equality=False,
            y_title="Mean income × cumulative income share (currency units)",
            title=f"Generalised Lorenz curves, {heading}",
            caption=vocabulary.wrap(
                "Higher everywhere: every welfare measure that prefers more income and less "
                f"inequality ranks that distribution first (Shorrocks 1983). {caption}",
                width=70,
            ),
        )
    verdicts = []
    units = panel.kind == "units"
    for i, j in combinations(range(len(chosen)), 2):
        a, b = chosen[i], chosen[j]
        pa, pb = (
            (lambda p: (p["p"].to_numpy(), p["L"].to_numpy()))(points[points["name"] == m.label])
            for m in (a, b)
        )
        names_ = (a.label, b.label)
        lorenz = dominance.compare(pa, pb, names=names_).sentence
        welfare = (
            dominance.compare(pa, pb, names=names_, means=(means[a.label], means[b.label])).sentence
            if known
            else "Without both mean incomes the generalised Lorenz curves cannot be compared."
        )
        deciles, words = (None, "")
        if units:
            deciles, words = _unit_verdict(panel, a, b, seed=i * MAX_COMPARED + j)
        verdicts.append(
            Verdict(
                a.label, b.label, _capital(lorenz, units), _capital(welfare, units), deciles, words
            )
        )
    return CompareFigures(
        chosen,
        lorenz_chart=lorenz_chart,
        general_chart=general_chart,
        table=table,
        verdicts=tuple(verdicts),
        caption=caption,
    )

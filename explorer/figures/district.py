"""The District sheet's figures: one district's Lorenz curve, indices, fits and ranks."""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import Panel
from explorer.figures import series
from explorer.figures.carried import district_note
from explorer.figures.compute import Compute
from explorer.figures.tables import (
    county_level,
    district_means,
    lorenz_band,
    lorenz_points,
    names,
    ranks,
)
from explorer.present import charts, vocabulary
from explorer.views import ViewState

__all__ = [
    "NOT_VALID",
    "Comparison",
    "compare",
    "DistrictFigures",
    "curve_names",
    "district",
    "district_heading",
    "method_word",
]

_LORENZ_HOW = {
    "brackets": "Dots: the published shares; lines: each curve rebuilt from them; grey band: "
    "every curve consistent with the shares lies inside it.",
    "units": "Every household, poorest first; dashed: complete equality.",
}


def method_word(key: str) -> str:
    """How a figure was made, in words (a Lorenz curve, or the records themselves)."""
    return {"units": "From the household records", "means": "From district means"}.get(
        key, vocabulary.method_label(key)
    )


@dataclass(frozen=True)
class Growth:
    """Growth incidence of one district from the view's first year to its year.

    ``chart`` is None when there is no curve (the same year twice, or the district missing
    in one of them); ``facts`` are label, value pairs; ``note`` says why or how.
    """

    chart: Any
    facts: tuple[tuple[str, str], ...]
    note: str


@dataclass(frozen=True)
class DistrictFigures:
    """Everything the District sheet shows for one district in the view's year.

    For means-only data ``means`` (year, mean, population, ratio to the province, rank,
    growth on the year before) and ``means_chart`` are set, with ``facts`` (the mean, rank
    and growth of the view's year as label, value pairs). For published figures
    ``published`` lists the district's figures of the year with their rank and scale, and
    ``means_chart`` draws the view's figure over time. The index parts are then None.
    ``carried`` is the note of the district's years carried across boundary changes
    (None when none were).
    """

    region: str
    name: str
    heading: str
    means: pd.DataFrame | None = None
    means_chart: Any = None
    indices: pd.DataFrame | None = None
    headline: pd.Series | None = None
    profile: Any = None
    strip: Any = None
    has_bounds: bool = False
    fits: pd.DataFrame | None = None
    rank_chart: Any = None
    facts: tuple[tuple[str, str], ...] = ()
    published: pd.DataFrame | None = None
    welfare: pd.DataFrame | None = None
    growth: Growth | None = None
    carried: str | None = None


def district_heading(panel: Panel, region: str, year: int) -> tuple[str, str]:
    """The district's name and the line under the page title (name, id, county, year)."""
    info = names(panel).set_index("region").loc[region]
    level = county_level(panel)
    county = (
        f" · {vocabulary.groups_word(level, plural=False).capitalize()}: {info['county']}"
        if level and info["county"]
        else ""
    )
    return str(info["name"]), f"{info['name']} ({region}){county} · {year}"


#: Said in the legend of a curve the fit table marks unusable (it is also drawn dashed).
NOT_VALID = "not a valid Lorenz curve"


def _chosen(view: ViewState, fits: pd.DataFrame | None) -> str:
    """The Lorenz method the view's figures use for this district-year (``auto``: its pick),
    from the district-year's own fit table (the same pick as in the whole panel's)."""
    if view.method != "auto":
        return view.method
    row = fits[fits["method"] == "auto"] if fits is not None else fits
    return str(row["used"].iloc[0]) if row is not None and len(row) else ""


def curve_names(curves: pd.DataFrame, chosen: str) -> pd.Series:
    """Legend names of the curves: the chosen method marked, unusable curves said so."""
    valid = curves["valid"] if "valid" in curves else pd.Series(True, index=curves.index)
    names = []
    for method, ok in zip(curves["method"], valid, strict=True):
        name = vocabulary.method_label(method)
        if method == chosen:
            name += " · used for the figures"
        if not ok:
            name += f" · {NOT_VALID}"
        names.append(name)
    return pd.Series(names, index=curves.index)


def _lorenz(panel, view, compute, region, name, fits):
    points = lorenz_points(panel, region, view.year)
    curves = band = shown = None
    if panel.kind == "brackets":
        methods = [m for m in vocabulary.METHOD_LABELS if m != "auto"]
        curves = compute.lorenz_curves(region, view.year, methods)
        band = lorenz_band(curves)
        shown = curves[~curves["method"].isin(("linear", "upper"))]
        shown = shown.assign(method=curve_names(shown, _chosen(view, fits)))
    how = _LORENZ_HOW.get(panel.kind, "")
    profile = charts.lorenz_profile(
        points,
        shown,
        band,
        title=f"Lorenz curve, {name}, {view.year}",
        caption=vocabulary.wrap(f"{how} {vocabulary.caption(view, panel)}", width=70),
    )
    # Below the curve the method names have room; beside it they squeeze the curve.
    return profile.configure_legend(orient="bottom", columns=1, labelLimit=420)


def district(panel: Panel, view: ViewState, compute: Compute) -> DistrictFigures:
    """The sheet of the view's first district (the panel's first if none is chosen), with
    the note of its years carried across boundary changes."""
    region = view.districts[0] if view.districts else str(panel.regions[0])
    sheet = _sheet(panel, view, compute, region)
    return replace(sheet, carried=district_note(panel, region))


def _sheet(panel: Panel, view: ViewState, compute: Compute, region: str) -> DistrictFigures:
    name, heading = district_heading(panel, region, view.year)
    if panel.kind == "means":
        return _means_sheet(panel, view, region, name, heading)
    if panel.kind == "published":
        return _published_sheet(panel, view, compute, region, name, heading)
    table = compute.indices(view.method)
    fits = None
    if panel.kind == "brackets":
        fits = compute.district_fits(region, view.year, tuple(vocabulary.METHOD_LABELS))
    if view.index in series.POVERTY_FIGURES:
        # the poverty measures against the view's line join the sheet's table of indices
        poverty = compute.poverty(view.poverty_line, view.relative_to, view.method)
        table = pd.concat([table, poverty], ignore_index=True)
    own = table[(table["region"].astype(str) == region) & (table["year"] == view.year)]
    headline = own[own["index"] == view.index]
    # One short word per row: the full method is named in the caption and the table.
    strip_rows = own.assign(
        method=own["method"].map(lambda key: {"units": "records"}.get(key, "curve"))
    )
    # Sized once here for the page's and the report's half-width column.
    strip = charts.fit_facets(
        charts.interval_strip(
            strip_rows, title=f"Every index of {name}, {view.year}, with its bounds"
        ),
        panels=1,
        room=400,
    )
    return DistrictFigures(
        region,
        name,
        heading,
        welfare=welfare_rows(panel, view, compute, region),
        growth=growth_of(panel, view, compute, region, name),
        indices=own,
        headline=headline.iloc[0] if len(headline) else None,
        profile=_lorenz(panel, view, compute, region, name, fits),
        strip=strip,
        has_bounds=bool(np.isfinite(own[["lower", "upper"]].to_numpy(dtype=float)).any()),
        fits=fits,
        rank_chart=charts.rank_over_time(
            ranks(table, view.index, panel), highlight=(region,), **_rank_words_of(view.index)
        ),
    )


_WELFARE_KEYS = ("mean", "median", "sen_welfare", "ede_0.5", "ede_1", "ede_2")


def welfare_rows(panel: Panel, view: ViewState, compute: Compute, region: str):
    """Welfare in money of the district in the view's year: ``figure, value, lower, upper,
    note`` as words (None where the panel has no means to measure it in).

    References
    ----------
    Sen, A. (1976). Real national income. *Review of Economic Studies* 43: 19–39.
    Atkinson, A. B. (1970). On the measurement of inequality. *Journal of Economic Theory*
    2: 244–263.
    """
    if panel.kind == "brackets" and (
        "mean_income" not in panel.data or not panel.data["mean_income"].notna().any()
    ):
        return None
    own = compute.district_welfare(region, view.year, view.method)
    own = own.set_index("index").reindex([k for k in _WELFARE_KEYS if k in set(own["index"])])
    if own.empty:
        return None

    # a mean that is given is exact: no bounds to show beside it
    exact = (own["lower"] == own["value"]) & (own["upper"] == own["value"])
    own = own.assign(
        lower=own["lower"].where(~exact, np.nan), upper=own["upper"].where(~exact, np.nan)
    )
    rows = pd.DataFrame(
        {
            "figure": [vocabulary.index_label(k) for k in own.index],
            "value": [vocabulary.figure(v, money=True) for v in own["value"]],
            "lower": [_money_bound(v) for v in own["lower"]],
            "upper": [_money_bound(v) for v in own["upper"]],
            "note": own["note"].fillna("").astype(str).to_numpy(),
        }
    )
    # columns with nothing in them (no bounds from household records, no notes) are left out
    empty = [c for c in ("lower", "upper", "note") if rows[c].eq("").all()]
    return rows.drop(columns=empty)


def _money_bound(value: Any) -> str:
    """A bound in whole currency units; blank without one, words when unbounded."""
    number = float(value)
    if np.isnan(number):
        return ""
    if np.isinf(number):
        return "no finite bound"
    return f"{number:,.0f}"


def growth_of(panel: Panel, view: ViewState, compute: Compute, region: str, name: str):
    """The district's growth incidence curve from the view's first year to its year.

    References
    ----------
    Ravallion, M. and Chen, S. (2003). Measuring pro-poor growth. *Economics Letters* 78:
    93–99 (eq. 1, the curve; eq. 4, the rate of pro-poor growth).
    """
    from explorer.stats.growth import annualise

    if panel.kind == "brackets" and (
        "mean_income" not in panel.data or not panel.data["mean_income"].notna().all()
    ):
        return None
    if len(panel.years) < 2:
        return None
    first = int(view.year_from) if view.year_from is not None else int(min(panel.years))
    if first >= int(view.year):
        return Growth(
            None,
            (),
            f"Growth needs a first year before {view.year}: choose one under 'Growth since'.",
        )
    summary, curves = compute.growth(
        first, view.method, view.poverty_line, view.relative_to, to=int(view.year), region=region
    )
    span = int(view.year) - first
    own = curves[(curves["region"].astype(str) == region) & (curves["year"] == view.year)]
    rows = summary[(summary["region"].astype(str) == region) & (summary["year"] == view.year)]
    if own.empty:
        return Growth(None, (), f"{name} has no figures in both {first} and {view.year}.")
    got = rows.set_index("index")
    yearly = {k: 100.0 * float(annualise(got.at[k, "value"], span)) for k in got.index}
    low = {k: 100.0 * float(annualise(got.at[k, "lower"], span)) for k in got.index}
    high = {k: 100.0 * float(annualise(got.at[k, "upper"], span)) for k in got.index}
    facts = (
        (f"Growth of the mean, {first}–{view.year} (% a year)", yearly.get("growth_mean")),
        ("Growth at the bottom 40 % (% a year)", yearly.get("growth_bottom40")),
        (
            f"Rate of pro-poor growth (% a year; poor in {first} at "
            f"{vocabulary.poverty_line_words(view)})",
            yearly.get("growth_pro_poor"),
        ),
    )
    facts = tuple((label, vocabulary.figure(v, digits=2)) for label, v in facts)
    bounds = ""
    if np.isfinite(low.get("growth_bottom40", np.nan)):
        top = high.get("growth_bottom40", np.nan)
        bounds = (
            f" The shares of both years allow growth at the bottom 40 % of "
            f"{vocabulary.figure(low['growth_bottom40'], digits=2)} % a year or more"
            + (
                f", up to {vocabulary.figure(top, digits=2)}."
                if np.isfinite(top)
                else "; they set no upper limit (the poorest incomes of the first year "
                "could be near zero)."
            )
        )
    curve = own.assign(
        **{
            column: 100.0 * annualise(own[column].to_numpy(float), span)
            for column in ("rate", "lower", "upper")
        }
    )
    how = (
        "From the household records of both years; their sampling error is not included."
        if panel.kind == "units"
        else "From the Lorenz curves of both years "
        f"({vocabulary.method_label(view.method).lower()}) and the district means; incomes "
        "in the data's own price base."
    )
    chart = charts.growth_incidence(
        curve[["p", "rate", "lower", "upper"]],
        mean_growth=yearly.get("growth_mean", np.nan),
        title=f"Growth at each percentile, {name}, {first}–{view.year}",
        caption=vocabulary.wrap(
            "Shaded grey: the poorest 40 %. Dashed: growth of the mean. "
            + (
                "Blue band: the growth every distribution with both years' shares allows. "
                if panel.kind == "brackets"
                else ""
            )
            + how,
            width=90,
        ),
    )
    note = (
        "Above the dashed line the percentile gained faster than the mean. The curve is only "
        "as good as the two Lorenz curves: read it with their fit." + bounds
    )
    return Growth(chart, facts, note)


def _rank_words_of(index: str) -> dict[str, str]:
    """What rank 1 is on the rank chart: the most unequal, or the poorest by a poverty
    measure."""
    if index in series.POVERTY_FIGURES:
        return {
            "rank_title": "Rank (1 = most poverty)",
            "caption": "1 = most poverty by this measure. Ranks move on small differences; "
            "read them with the bounds.",
        }
    return {}


def _rank_words(rank: Any, count: int) -> str:
    return "—" if pd.isna(rank) else f"{int(rank)} of {count}"


def _means_sheet(panel, view, region, name, heading) -> DistrictFigures:
    """Mean, its ratio to the province, rank and growth of one district over the years."""
    means = district_means(panel).assign(region=lambda t: t["region"].astype(str))
    ratio = series.means_figure(panel, "mean_ratio")[["region", "year", "value"]]
    means = means.merge(ratio.rename(columns={"value": "ratio"}), on=["region", "year"])
    means["rank"] = means.groupby("year")["mean_income"].rank(ascending=False, method="min")
    means = means.sort_values(["region", "year"])
    previous = means.groupby("region")["mean_income"].shift()
    gap = means["year"] - means.groupby("region")["year"].shift()
    means["growth"] = 100.0 * ((means["mean_income"] / previous) ** (1.0 / gap) - 1.0)
    own = means[means["region"] == region].reset_index(drop=True)
    count = means.groupby("year")["region"].nunique()
    this = own[own["year"] == view.year]
    growth = series.means_figure(panel, "mean_growth", view.year_from)
    grown = growth[(growth["region"] == region) & (growth["year"] == view.year)]["value"]
    facts = ()
    if len(this):
        row = this.iloc[0]
        facts = (
            (f"Mean income, {view.year}", vocabulary.figure(row["mean_income"], money=True)),
            ("Rank (1 = highest mean)", _rank_words(row["rank"], int(count[view.year]))),
            (
                f"Growth since {view.year_from} (% a year)",
                vocabulary.figure(grown.iloc[0] if len(grown) else np.nan, digits=2),
            ),
        )
    chart = charts.mean_income_over_time(
        own,
        title=f"Mean income, {name}",
        caption=vocabulary.wrap(vocabulary.caption(view, panel, every_year=True), width=95),
    )
    ranked = means.assign(value=means["mean_income"], index="mean_income")
    rank_chart = charts.rank_over_time(
        ranked.merge(names(panel)[["region", "name"]], on="region", how="left"),
        highlight=(region,),
        caption="1 = highest mean income. Neighbouring ranks often differ by little.",
        rank_title="Rank (1 = highest mean income)",
    )
    return DistrictFigures(
        region, name, heading, means=own, means_chart=chart, rank_chart=rank_chart, facts=facts
    )


def _published_sheet(panel, view, compute, region, name, heading) -> DistrictFigures:
    """The district's published figures of the year, each with its rank among districts."""
    table = compute.indices(view.method)
    year = table[table["year"] == view.year].copy()
    year["rank"] = year.groupby("index")["value"].rank(ascending=False, method="min")
    year["of"] = year.groupby("index")["value"].transform("count")
    own = year[year["region"].astype(str) == region]
    scales = panel.data.drop_duplicates("measure").set_index("measure")["scale"]
    published = pd.DataFrame(
        {
            "figure": [vocabulary.index_label(k) for k in own["index"]],
            "value": [
                vocabulary.figure(
                    v,
                    money=series.is_money(panel, k),
                    digits=vocabulary.digits_of(panel, k),
                )
                for k, v in zip(own["index"], own["value"], strict=True)
            ],
            "scale": [vocabulary.SCALE_NAMES.get(scales.get(k, ""), "") for k in own["index"]],
            "rank": [_rank_words(r, int(n)) for r, n in zip(own["rank"], own["of"], strict=True)],
        }
    )
    headline = own[own["index"] == view.index]
    lines = table[table["index"] == view.index].assign(region=lambda t: t["region"].astype(str))
    lines = lines.merge(names(panel), on="region", how="left")
    label = vocabulary.value_label(view, panel)
    chart = charts.trajectories(
        lines,
        index=view.index,
        label=label,
        highlight=(region,),
        title=f"{label}, {name} among the districts",
        caption=vocabulary.wrap(vocabulary.caption(view, panel, every_year=True), width=90),
    )
    rank_rows = ranks(table, view.index, panel)
    return DistrictFigures(
        region,
        name,
        heading,
        means_chart=chart,
        headline=headline.iloc[0] if len(headline) else None,
        rank_chart=charts.rank_over_time(
            rank_rows,
            highlight=(region,),
            caption=f"1 = highest {vocabulary.index_label(view.index).lower()}, as published.",
            rank_title="Rank (1 = highest figure)",
        )
        if len(rank_rows)
        else None,
        published=published,
    )


@dataclass(frozen=True)
class Comparison:
    """Two districts in the view's year: their Lorenz curves, the dominance verdicts and
    the chosen index of each with its bounds, in sentences."""

    first: str
    second: str
    chart: Any
    lorenz: str
    welfare: str
    index: str


def _mean_of(panel: Panel, region: str, year: int) -> float:
    means = district_means(panel)
    row = means[(means["region"].astype(str) == region) & (means["year"] == year)]
    return float(row["mean_income"].iloc[0]) if len(row) else float("nan")


def _index_sentence(panel, view, compute, pair, names_) -> str:
    table = series.values(panel, compute, view.index, view.method, view.year_from, view)
    rows = table[table["year"] == view.year].assign(region=lambda t: t["region"].astype(str))
    rows = rows.set_index("region")
    if not all(r in rows.index for r in pair):
        return ""
    a, b = (rows.loc[r] for r in pair)
    label = vocabulary.index_label(view.index)
    digits = vocabulary.digits_of(panel, view.index)

    def shown(row) -> str:
        value = vocabulary.figure(row["value"], digits=digits)
        if np.isfinite(row["lower"]) or np.isfinite(row["upper"]):
            low = vocabulary.figure(row["lower"], digits=digits)
            high = vocabulary.figure(row["upper"], digits=digits)
            return f"{value} ({low} to {high})"
        return value

    text = f"{label}: {names_[0]} {shown(a)}, {names_[1]} {shown(b)}."
    bounded = all(np.isfinite([a["lower"], a["upper"], b["lower"], b["upper"]]))
    if not bounded:
        return text + " Without bounds on both, the difference cannot be called clear."
    if a["lower"] > b["upper"] or b["lower"] > a["upper"]:
        higher = names_[0] if a["value"] > b["value"] else names_[1]
        return text + f" The ranges do not overlap: {higher} is clearly higher."
    return text + " The ranges overlap: the difference is not clear."


def compare(panel: Panel, view: ViewState, compute: Compute) -> Comparison | None:
    """The view's first two districts compared (None without a second, or for district
    means and published figures, which carry no curve).

    References
    ----------
    Atkinson, A. B. (1970). On the measurement of inequality. *Journal of Economic Theory*
    2: 244–263 (Lorenz dominance). Shorrocks, A. F. (1983). Ranking income distributions.
    *Economica* 50: 3–17 (generalised Lorenz dominance).
    """
    from explorer.stats import dominance

    if len(view.districts) < 2 or panel.kind not in ("brackets", "units"):
        return None
    pair = (str(view.districts[0]), str(view.districts[1]))
    label = names(panel).set_index("region")["name"]
    names_ = tuple(str(label.get(r, r)) for r in pair)
    curves = [lorenz_points(panel, r, view.year) for r in pair]
    if any(len(c) < 2 for c in curves):
        return None
    points = [(c["p"].to_numpy(), c["L"].to_numpy()) for c in curves]
    plain = dominance.compare(*points, names=names_)
    means = tuple(_mean_of(panel, r, view.year) for r in pair)
    welfare = (
        dominance.compare(*points, names=names_, means=means).sentence
        if all(np.isfinite(means))
        else "Without both mean incomes the generalised Lorenz curves cannot be compared."
    )
    shown = pd.concat(
        [c.assign(name=n) for c, n in zip(curves, names_, strict=True)], ignore_index=True
    )
    chart = charts.lorenz_pair(
        shown,
        title=f"Lorenz curves, {names_[0]} and {names_[1]}, {view.year}",
        caption=vocabulary.wrap(vocabulary.caption(view, panel), width=60),
    )

    def capital(text: str) -> str:
        if panel.kind == "units":  # sample curves: every record is a point, no bounds
            text = text.replace(" at every published point", " everywhere")
            text = text.replace(", even at the bounds", "").replace(
                "; the bounds also allow curves that do not cross", ""
            )
            text += " (from the sample records; their sampling error is not included)"
        return text[:1].upper() + text[1:] + ("" if text.endswith(".") else ".")

    return Comparison(
        pair[0],
        pair[1],
        chart,
        capital(plain.sentence),
        capital(welfare),
        _index_sentence(panel, view, compute, pair, names_),
    )

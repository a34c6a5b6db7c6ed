"""The Timelines page's figures: district series, the province line, convergence."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.carrying import carried_years, carrying_of
from explorer.data.model import Panel
from explorer.figures import series
from explorer.figures.compute import Compute
from explorer.figures.tables import district_means, names
from explorer.present import charts, vocabulary
from explorer.views import ViewState

__all__ = [
    "Beta",
    "Convergence",
    "TimelineFigures",
    "convergence",
    "district_series",
    "province_series",
    "timelines",
]


def district_series(panel: Panel, view: ViewState, compute: Compute) -> pd.DataFrame:
    """The view's figure for every district and year, with names and counties."""
    rows = series.values(panel, compute, view.index, view.method, view.year_from, view)
    rows = rows.assign(region=rows["region"].astype(str))
    return rows.merge(names(panel), on="region", how="left").reset_index(drop=True)


def province_series(
    panel: Panel, view: ViewState, compute: Compute, index: str | None = None
) -> pd.DataFrame | None:
    """year, value of the whole province (pooled), where the index decomposes; for district
    means the province's mean, ratio or growth (:func:`explorer.figures.series.province`)."""
    index = index or view.index
    if panel.kind in ("means", "published") or index in series.POVERTY_FIGURES:
        return series.province(panel, index, view.year_from, compute, view)
    if index not in vocabulary.DECOMPOSABLE:
        return None
    parts = compute.breakdown(tuple(panel.levels), index, view.method)
    total = parts[(parts["component"] == "total") & (parts["group"] == "(all)")]
    if "level" in total.columns and (total["level"] == "total").any():
        total = total[total["level"] == "total"]
    total = total.drop_duplicates("year")
    return total[["year", "value"]].reset_index(drop=True)


@dataclass(frozen=True)
class Beta:
    """β-convergence of district means, ready for the chart and a sentence."""

    result: Any
    points: pd.DataFrame
    intercept: float

    def as_chart(self) -> dict[str, Any] | None:
        slope = float(getattr(self.result, "beta", np.nan))
        if not np.isfinite(slope) or self.points.empty:
            return None
        return {"points": self.points, "slope": slope, "intercept": self.intercept}

    def sentence(self) -> str:
        beta = float(getattr(self.result, "beta", np.nan))
        if not np.isfinite(beta):
            return "β-convergence could not be estimated (too few districts or years)."
        half_life = float(getattr(self.result, "half_life", np.nan))
        se = float(getattr(self.result, "se", np.nan))
        text = f"β = {beta:.4f} (standard error {se:.4f}) over {len(self.points)} districts. "
        if beta < 0 and np.isfinite(half_life):
            return text + (
                f"Poorer districts grew faster: at this pace half of the gap closes in "
                f"about {half_life:.0f} years."
            )
        return text + "No catching up: richer districts grew as fast or faster (divergence)."


@dataclass(frozen=True)
class Convergence:
    """σ-convergence by year, β-convergence, their chart and the sentence under it."""

    sigma: pd.DataFrame
    beta: Beta
    chart: Any
    sentence: str


def convergence(panel: Panel) -> Convergence:
    """σ-convergence by year and β-convergence between the first and last year.

    References
    ----------
    Barro, R. J. and Sala-i-Martin, X. (1992). Convergence. *Journal of Political
    Economy* 100: 223–251.
    """
    from explorer.stats import convergence as conv

    means = district_means(panel)
    means = means[np.isfinite(means["mean_income"]) & (means["mean_income"] > 0)]
    sigma = conv.sigma(means)
    sd = sigma[sigma["measure"] == "sd_log"]
    sd = sd.drop_duplicates("year")[["year", "value"]].rename(columns={"value": "sigma"})
    first, last = int(means["year"].min()), int(means["year"].max())
    start = means[means["year"] == first].set_index("region")["mean_income"]
    end = means[means["year"] == last].set_index("region")["mean_income"]
    both = start.index.intersection(end.index)
    log_start = np.log(start[both].to_numpy(dtype=float))
    log_end = np.log(end[both].to_numpy(dtype=float))
    points = pd.DataFrame(
        {
            "region": both.astype(str),
            "log_initial": log_start,
            "growth": (log_end - log_start) / max(last - first, 1),
        }
    )
    result = conv.beta(means)
    beta = Beta(result=result, points=points, intercept=float(result.intercept))
    sd = sd.reset_index(drop=True)
    return Convergence(sd, beta, charts.convergence(sd, beta.as_chart()), beta.sentence())


@dataclass(frozen=True)
class TimelineFigures:
    """The Timelines page: district series, the province line and convergence (None for
    published figures, which carry no district means to compare); ``carried`` the chosen
    districts' points carried across boundary changes (:func:`carried_marks`)."""

    series: pd.DataFrame | None
    province: pd.DataFrame | None
    chart: Any
    highlighted: pd.DataFrame | None
    convergence: Convergence | None
    notices: tuple[str, ...]
    carried: pd.DataFrame | None = None


def timelines(
    panel: Panel, view: ViewState, compute: Compute, *, by_county: bool | None = None
) -> TimelineFigures:
    """The Timelines figures of ``view`` (one panel per county if ``by_county``, which
    defaults to the view's own ``by_county``)."""
    by_county = view.by_county if by_county is None else by_county
    trend = None if panel.kind == "published" else convergence(panel)
    lines = district_series(panel, view, compute)
    province = province_series(panel, view, compute)
    label = vocabulary.value_label(view, panel)
    province_words = " Dashed black: the whole province."
    marks = carried_marks(panel, view, lines)
    chart = charts.trajectories(
        lines,
        index=view.index,
        label=label,
        highlight=view.districts,
        province=province,
        by_county=by_county,
        title=f"{label} by district over time",
        caption=vocabulary.wrap(
            vocabulary.caption(view, panel, every_year=True)
            + (province_words if province is not None else "")
            + _carried_caption(panel, marks)
        ),
        carried=marks,
    )
    highlighted = None
    if view.districts:
        shown = lines[lines["region"].isin(view.districts)]
        digits = vocabulary.digits_of(panel, view.index)
        # indices to four decimals as in the tables; money whole, percents as published
        highlighted = shown.pivot_table(index="year", columns="name", values="value").round(
            4 if digits == 3 else digits
        )
    notices: tuple[str, ...] = ()
    if province is None:
        notices = (
            "No province line: the source's own province figure is not among the published "
            "figures, and it is not recomputed from districts."
            if panel.kind == "published"
            else "No province line for this index: it is not computed for the pooled province.",
        )
    return TimelineFigures(lines, province, chart, highlighted, trend, notices, marks)


def carried_marks(panel: Panel, view: ViewState, lines: pd.DataFrame) -> pd.DataFrame:
    """The chosen districts' drawn district-years that were carried across boundary changes.

    Returns
    -------
    DataFrame
        ``region, year, how, carried`` (``carried``: "carried to the <year> boundaries:
        <how>"), one row per point that gets a hollow mark; empty when nothing was carried.
    """
    found = carried_years(panel, view.districts).assign(carried="")
    carrying = carrying_of(panel)
    if found.empty or carrying is None:
        return found
    drawn = lines[["region", "year"]].drop_duplicates().astype({"year": "int64"})
    found = found.merge(drawn, on=["region", "year"])
    found["carried"] = [vocabulary.carried_label(carrying.to_vintage, h) for h in found["how"]]
    return found.reset_index(drop=True)


def _carried_caption(panel: Panel, marks: pd.DataFrame) -> str:
    carrying = carrying_of(panel)
    if carrying is None or carried_years(panel).empty:
        return ""
    return " " + vocabulary.CARRIED_CAPTION.format(
        year=carrying.to_vintage, weights=carrying.weights_said()
    )

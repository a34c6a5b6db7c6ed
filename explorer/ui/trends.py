"""Tables for the Timelines page: district series, the province line, convergence."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from explorer.ui import layout
from explorer.ui.data import district_means
from explorer.ui.state import DECOMPOSABLE, Here


def district_series(here: Here, index: str) -> pd.DataFrame:
    """The chosen index for every district and year, with names and counties."""
    table = here.indices()
    rows = table[table["index"] == index]
    rows = rows.assign(region=rows["region"].astype(str))
    return rows.merge(layout.names(here.panel), on="region", how="left").reset_index(drop=True)


def province_series(here: Here, index: str) -> pd.DataFrame | None:
    """year, value of the whole province (pooled), where the index decomposes."""
    if index not in DECOMPOSABLE:
        return None
    parts = here.breakdown(tuple(here.panel.levels), index)
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


def convergence(panel: Any) -> tuple[pd.DataFrame, Beta]:
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
    span = max(last - first, 1)
    points = pd.DataFrame(
        {
            "region": both.astype(str),
            "log_initial": np.log(start[both].to_numpy(dtype=float)),
            "growth": (
                np.log(end[both].to_numpy(dtype=float)) - np.log(start[both].to_numpy(dtype=float))
            )
            / span,
        }
    )
    result = conv.beta(means)
    return sd.reset_index(drop=True), Beta(
        result=result, points=points, intercept=float(result.intercept)
    )

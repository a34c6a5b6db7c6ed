"""The cautions the tool shows beside its figures, as plain-language data.

Pages, the report and the command line all take their wording from here, and
:func:`for_view` decides which cautions a given view needs.
"""

from __future__ import annotations

__all__ = ["CAUTIONS", "for_view"]

#: Caution key -> text. Keys are stable; the wording may improve.
CAUTIONS: dict[str, str] = {
    "grouped": (
        "Indices from grouped shares (quintiles, deciles, brackets) are approximations: "
        "the true value lies between the bounds shown. Where the bounds are far apart, "
        "read the figure as a range, not a point."
    ),
    "concept": (
        "Compare districts only when their incomes use the same concept (gross or "
        "disposable, equivalised or not) and the same unit (person or household)."
    ),
    "concept_unknown": (
        "This dataset does not say which income concept and unit it uses; check that "
        "before comparing districts or years."
    ),
    "samples": (
        "Indices from small samples are noisy: read them with their intervals. A "
        "difference that lies inside the intervals may be chance."
    ),
    "means": (
        "Only district means are available: the figures describe inequality between "
        "districts, not inside them."
    ),
    "published": (
        "These figures are shown as the source published them: their definitions, survey "
        "years, price base and margins of error are the source's. Check its notes before "
        "comparing districts or years; Rift cannot bound, recompute or split them."
    ),
    "funds": (
        "An index alone should not decide an allocation of funds. Rankings and classes "
        "here describe the data; follow your office's own allocation rules and the "
        "statistics law that governs these data."
    ),
    "change": (
        "The split of a change over time into parts is an approximation; its residual "
        "is shown and should stay small beside the other parts."
    ),
}


def _wide(count: int) -> str:
    districts = "district has" if count == 1 else "districts have"
    return (
        f"{count} {districts} wide bounds or intervals (dashed outline on the map): "
        "their class and rank are uncertain."
    )


def for_view(
    kind: str,
    ranking: bool,
    wide_intervals: int = 0,
    *,
    income_concept: str | None = None,
    change: bool = False,
) -> list[str]:
    """The cautions a view needs, most important first.

    Parameters
    ----------
    kind : {"brackets", "units", "means", "published"}
        The panel's kind.
    ranking : bool
        Whether the view ranks or classes districts (map, rank chart, sorted table).
    wide_intervals : int
        How many districts shown have wide bounds or intervals.
    income_concept : str, optional
        The panel's stated income concept; empty means not stated (``None``: not known
        to the caller, no caution about it).
    change : bool
        Whether the view shows the change decomposition between two years.

    Returns
    -------
    list of str
    """
    chosen: list[str] = []
    if ranking:
        chosen.append(CAUTIONS["funds"])
    if kind == "brackets":
        chosen.append(CAUTIONS["grouped"])
    elif kind == "units":
        chosen.append(CAUTIONS["samples"])
    elif kind == "means":
        chosen.append(CAUTIONS["means"])
    elif kind == "published":
        chosen.append(CAUTIONS["published"])
    if wide_intervals > 0:
        chosen.append(_wide(int(wide_intervals)))
    chosen.append(CAUTIONS["concept"])
    if income_concept is not None and not income_concept.strip():
        chosen.append(CAUTIONS["concept_unknown"])
    if change:
        chosen.append(CAUTIONS["change"])
    return chosen

"""Poverty lines: absolute amounts or fractions of a median or mean, parsed and resolved.

A line is either absolute (an amount per person per year, in the dataset's currency and
price base) or relative (a fraction of the province's or of each district's own median or
mean income). :func:`parse_line` reads the short forms ``"12000"``, ``"60%median"`` and
``"50%mean"``; :func:`resolve` turns a line into one amount per district-year.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from explorer.data.model import fail

__all__ = ["BASES", "SCOPES", "PovertyLine", "parse_line", "resolve"]

BASES = ("median", "mean")
SCOPES = ("province", "district")

_NUMBER = r"(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_RELATIVE = re.compile(rf"^({_NUMBER})\s*%\s*(median|mean)$", re.IGNORECASE)
_ABSOLUTE = re.compile(rf"^{_NUMBER}$")
_FORMS = '"12000" (absolute, per person per year), "60%median" or "50%mean" (relative)'


@dataclass(frozen=True)
class PovertyLine:
    """A poverty line.

    Attributes
    ----------
    amount : float or None
        The absolute line per person per year (``None`` for a relative line).
    fraction : float or None
        The fraction of ``base`` for a relative line (0.6 for 60 % of the median).
    base : {"median", "mean"} or None
        What a relative line is a fraction of.
    scope : {"province", "district"}
        Whose median or mean: the province's (one line per year for every district, so
        districts are compared against the same amount) or each district's own.
    """

    amount: float | None = None
    fraction: float | None = None
    base: str | None = None
    scope: str = "province"

    def __post_init__(self):
        relative = self.fraction is not None
        if relative == (self.amount is not None):
            raise fail(
                "a poverty line is either an amount or a fraction of a median or mean",
                f"give one of {_FORMS}",
                column="poverty_line",
            )
        if self.amount is not None and not (np.isfinite(self.amount) and self.amount > 0):
            raise fail(
                f"poverty line {self.amount!r} is not a positive amount",
                "give the line per person per year, e.g. 12000",
                column="poverty_line",
            )
        if relative and not (np.isfinite(self.fraction) and 0 < self.fraction):
            raise fail(
                f"relative poverty line fraction {self.fraction!r} is not positive",
                "give a percentage above 0, e.g. 60%median",
                column="poverty_line",
            )
        if relative and self.base not in BASES:
            raise fail(
                f"relative poverty line base {self.base!r} is not median or mean",
                "write e.g. 60%median or 50%mean",
                column="poverty_line",
            )
        if self.scope not in SCOPES:
            raise fail(
                f"poverty line scope {self.scope!r} is not one of {', '.join(SCOPES)}",
                "relative lines are taken relative to the province or to each district",
                column="poverty_line",
            )

    @property
    def relative(self) -> bool:
        """Whether the line is a fraction of a median or mean."""
        return self.fraction is not None

    def label(self) -> str:
        """Short text for notes and tables, e.g. ``"60% of the province median"``."""
        if not self.relative:
            return f"{self.amount:g} per person per year"
        whose = "the province" if self.scope == "province" else "each district's own"
        return f"{100 * self.fraction:g}% of {whose} {self.base}"


def parse_line(text: str | float, scope: str = "province") -> PovertyLine:
    """Read a poverty line from its short form.

    Parameters
    ----------
    text : str or float
        ``"12000"`` or ``12000`` (absolute), ``"60%median"``, ``"50%mean"`` (relative; spaces
        around ``%`` allowed, case ignored).
    scope : {"province", "district"}
        For relative lines: the province's median or mean, or each district's own.

    Returns
    -------
    PovertyLine

    Raises
    ------
    explorer.data.model.DataError
        For any other text, naming the accepted forms.
    """
    if isinstance(text, int | float) and not isinstance(text, bool):
        return PovertyLine(amount=float(text), scope=scope)
    raw = str(text).strip().replace(",", "")
    match = _RELATIVE.match(raw)
    if match:
        return PovertyLine(
            fraction=float(match.group(1)) / 100.0, base=match.group(2).lower(), scope=scope
        )
    if _ABSOLUTE.match(raw):
        return PovertyLine(amount=float(raw), scope=scope)
    raise fail(
        f"cannot read the poverty line {str(text)!r}",
        f"write it as {_FORMS}",
        column="poverty_line",
    )


def resolve(
    line: PovertyLine,
    district_base: np.ndarray | None = None,
    province_base: np.ndarray | None = None,
    n: int | None = None,
) -> np.ndarray:
    """One line amount per district-year.

    Parameters
    ----------
    line : PovertyLine
    district_base : ndarray, shape (n,), optional
        Each district-year's own median or mean (``line.base``); needed for district scope.
    province_base : ndarray, shape (n,), optional
        The province's median or mean of each district-year's year; needed for province
        scope.
    n : int, optional
        Number of district-years (for an absolute line when no base is given).

    Returns
    -------
    ndarray of float, shape (n,)
        NaN where the base is unknown.
    """
    if not line.relative:
        size = n
        for base in (district_base, province_base):
            if size is None and base is not None:
                size = len(base)
        return np.full(int(size or 0), float(line.amount))
    base = district_base if line.scope == "district" else province_base
    if base is None:
        raise fail(
            f"the {line.scope} {line.base} is needed for a line of {line.label()}",
            "give means (and brackets or records for medians), or an absolute line",
            column="poverty_line",
        )
    return line.fraction * np.asarray(base, dtype=float)

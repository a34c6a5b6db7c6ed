"""What-if scenarios a planner can try: transfers, a levy, growth and population moves.

A :class:`Scenario` is a list of steps applied in order to the incomes and weights of one
year. Its file form (``to_dict`` / ``from_dict``) carries a version, ``rift_scenario``, so a
scenario can travel in a view file later::

    {"rift_scenario": 1, "name": "top-up and levy",
     "steps": [{"kind": "transfer", "below_median_share": 0.6, "top_up": true},
               {"kind": "levy", "top_deciles": 1, "balance": true}]}

Steps
-----
transfer
    To the people of ``districts`` (empty = all) below ``below`` (an amount per person per
    year), below ``below_median_share`` of the province median (taken when the step runs),
    or in the ``bottom_deciles`` k of the province; each gets a flat ``amount`` or, with
    ``top_up``, the difference up to the threshold.
levy
    A proportional tax at ``rate`` on the incomes of the province's ``top_deciles`` k living
    in ``districts``; with ``balance`` the rate is solved so that the levy pays exactly for
    the transfers of the steps before it.
growth
    Yearly growth over ``years`` years in ``districts``: one ``rate`` or ten
    ``decile_rates``, one for each decile of a district's own distribution.
move
    District populations scaled by ``scale`` ({district: factor}) or set to population
    ``share`` of the province ({district: share}, the other districts keeping their
    proportions and the province its total). The distribution inside a district is
    unchanged.

A scenario is an arithmetic of incomes, not a prediction: no behavioural responses, no
take-up rates, no price effects.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, ClassVar

from explorer.data.model import DataError, fail

__all__ = [
    "SCENARIO_VERSION",
    "STEP_KINDS",
    "TABLES",
    "Growth",
    "Levy",
    "Move",
    "Scenario",
    "Transfer",
    "apply",
]

SCENARIO_VERSION = 1
STEP_KINDS = ("transfer", "levy", "growth", "move")
#: The tables of a result, in the order they are written.
TABLES = ("indices", "poverty", "decomposition", "budget", "gain")
DECILES = 10
_FORM = (
    'a JSON object such as {"rift_scenario": 1, "steps": [{"kind": "transfer", '
    '"bottom_deciles": 2, "amount": 500}]}'
)


# ----------------------------------------------------------------------------- checks


def _where(step: int | None, kind: str, name: str) -> str:
    return f"steps[{step}].{name}" if step is not None else f"{kind}.{name}"


def _say(step: int | None, kind: str) -> str:
    return f"step {step + 1} ({kind})" if step is not None else f"the {kind} step"


def _number(value: Any, step: int | None, kind: str, name: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise fail(
            f"{_say(step, kind)}: {name} must be a finite number, got {value!r}.",
            f"Write {name} as a plain number, e.g. 0.05 or 500.",
            column=_where(step, kind, name),
        )
    return float(value)


def _count(value: Any, step: int | None, kind: str, name: str, low: int, high: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int | float) or value != int(value):
        raise fail(
            f"{_say(step, kind)}: {name} must be a whole number, got {value!r}.",
            f"Give {name} as a whole number from {low} to {high}.",
            column=_where(step, kind, name),
        )
    if not low <= int(value) <= high:
        raise fail(
            f"{_say(step, kind)}: {name} is {int(value)}, outside {low} to {high}.",
            f"Give {name} from {low} to {high}.",
            column=_where(step, kind, name),
        )
    return int(value)


def _districts(value: Any, step: int | None, kind: str) -> tuple[str, ...]:
    if isinstance(value, str) or not isinstance(value, Sequence):
        raise fail(
            f"{_say(step, kind)}: districts must be a list of district ids, got {value!r}.",
            'Write e.g. "districts": ["BRE01", "BRE02"], or [] for every district.',
            column=_where(step, kind, "districts"),
        )
    out = tuple(str(v) for v in value)
    if len(set(out)) != len(out):
        raise fail(
            f"{_say(step, kind)}: a district is named twice in districts.",
            "Name each district once.",
            column=_where(step, kind, "districts"),
        )
    return out


def _one_of(step: int | None, kind: str, given: dict[str, Any], what: str) -> str:
    named = [k for k, v in given.items() if v is not None and v is not False]
    if len(named) != 1:
        listed = ", ".join(given)
        said = ", ".join(named) if named else "none"
        raise fail(
            f"{_say(step, kind)}: give exactly one of {listed} ({what}); given: {said}.",
            f"Keep one of {listed}.",
            column=_where(step, kind, named[1] if len(named) > 1 else next(iter(given))),
        )
    return named[0]


# ----------------------------------------------------------------------------- steps


@dataclass(frozen=True)
class Transfer:
    """Money to the people below a threshold or in the bottom deciles.

    Exactly one target (``below``, ``below_median_share``, ``bottom_deciles``) and one
    amount rule (``amount`` or ``top_up``); ``top_up`` needs a threshold. Deciles are the
    province's (all districts of the year pooled), taken when the step runs.
    """

    kind: ClassVar[str] = "transfer"
    amount: float | None = None
    top_up: bool = False
    below: float | None = None
    below_median_share: float | None = None
    bottom_deciles: int | None = None
    districts: tuple[str, ...] = ()
    step: int | None = field(default=None, compare=False, repr=False)

    def __post_init__(self):
        s, k = self.step, self.kind
        if not isinstance(self.top_up, bool):
            raise fail(
                f"{_say(s, k)}: top_up must be true or false, got {self.top_up!r}.",
                "Write top_up as true or false.",
                column=_where(s, k, "top_up"),
            )
        target = _one_of(
            s,
            k,
            {
                "below": self.below,
                "below_median_share": self.below_median_share,
                "bottom_deciles": self.bottom_deciles,
            },
            "who receives",
        )
        rule = _one_of(s, k, {"amount": self.amount, "top_up": self.top_up}, "how much")
        if rule == "amount" and _number(self.amount, s, k, "amount") <= 0:
            raise fail(
                f"{_say(s, k)}: amount is {self.amount:g}; a transfer gives a positive amount.",
                "Give the amount per person per year above 0 (a levy takes money).",
                column=_where(s, k, "amount"),
            )
        if target == "bottom_deciles":
            _count(self.bottom_deciles, s, k, "bottom_deciles", 1, DECILES)
            if self.top_up:
                raise fail(
                    f"{_say(s, k)}: top_up needs a threshold to top incomes up to.",
                    "Use below or below_median_share with top_up, or a flat amount for deciles.",
                    column=_where(s, k, "top_up"),
                )
        else:
            value = _number(getattr(self, target), s, k, target)
            if value <= 0:
                raise fail(
                    f"{_say(s, k)}: {target} is {value:g}; a threshold is above 0.",
                    "Give an amount per person per year, or a share such as 0.6.",
                    column=_where(s, k, target),
                )
        object.__setattr__(self, "districts", _districts(self.districts, s, k))

    def to_dict(self) -> dict[str, Any]:
        """The step in its file form (only the fields that are set)."""
        out: dict[str, Any] = {"kind": self.kind}
        for name in ("below", "below_median_share", "bottom_deciles", "amount"):
            if getattr(self, name) is not None:
                out[name] = getattr(self, name)
        if self.top_up:
            out["top_up"] = True
        out["districts"] = list(self.districts)
        return out


@dataclass(frozen=True)
class Levy:
    """A proportional tax on the incomes of the province's top deciles."""

    kind: ClassVar[str] = "levy"
    top_deciles: int = 1
    rate: float | None = None
    balance: bool = False
    districts: tuple[str, ...] = ()
    step: int | None = field(default=None, compare=False, repr=False)

    def __post_init__(self):
        s, k = self.step, self.kind
        _count(self.top_deciles, s, k, "top_deciles", 1, DECILES)
        if not isinstance(self.balance, bool):
            raise fail(
                f"{_say(s, k)}: balance must be true or false, got {self.balance!r}.",
                "Write balance as true or false.",
                column=_where(s, k, "balance"),
            )
        if _one_of(s, k, {"rate": self.rate, "balance": self.balance}, "the rate") == "rate":
            rate = _number(self.rate, s, k, "rate")
            if not 0 < rate < 1:
                raise fail(
                    f"{_say(s, k)}: rate is {rate:g}; a proportional levy takes a share "
                    "between 0 and 1 of income.",
                    "Give the rate as a proportion, e.g. 0.05 for 5 %.",
                    column=_where(s, k, "rate"),
                )
        object.__setattr__(self, "districts", _districts(self.districts, s, k))

    def to_dict(self) -> dict[str, Any]:
        """The step in its file form."""
        out: dict[str, Any] = {"kind": self.kind, "top_deciles": self.top_deciles}
        if self.balance:
            out["balance"] = True
        else:
            out["rate"] = self.rate
        out["districts"] = list(self.districts)
        return out


@dataclass(frozen=True)
class Growth:
    """Yearly growth of incomes over ``years`` years, uniform or by the district's deciles."""

    kind: ClassVar[str] = "growth"
    rate: float | None = None
    decile_rates: tuple[float, ...] | None = None
    years: int = 1
    districts: tuple[str, ...] = ()
    step: int | None = field(default=None, compare=False, repr=False)

    def __post_init__(self):
        s, k = self.step, self.kind
        chosen = _one_of(
            s, k, {"rate": self.rate, "decile_rates": self.decile_rates}, "the growth rate"
        )
        rates = [self.rate] if chosen == "rate" else self.decile_rates
        if chosen == "decile_rates":
            if isinstance(rates, str | Mapping) or not isinstance(rates, Sequence):
                rates = None
            if rates is None or len(rates) != DECILES:
                raise fail(
                    f"{_say(s, k)}: decile_rates must list {DECILES} yearly rates, bottom "
                    f"decile first; got {self.decile_rates!r}.",
                    "Give ten rates such as [0.03, 0.03, 0.02, ...].",
                    column=_where(s, k, "decile_rates"),
                )
            object.__setattr__(self, "decile_rates", tuple(float(r) for r in rates))
        for r in rates:
            if _number(r, s, k, chosen) <= -1:
                raise fail(
                    f"{_say(s, k)}: a yearly rate of {r:g} would take incomes to zero or below.",
                    "Give yearly rates above -1 (e.g. -0.02 for a fall of 2 % a year).",
                    column=_where(s, k, chosen),
                )
        _count(self.years, s, k, "years", 1, 100)
        object.__setattr__(self, "years", int(self.years))
        object.__setattr__(self, "districts", _districts(self.districts, s, k))

    def to_dict(self) -> dict[str, Any]:
        """The step in its file form."""
        out: dict[str, Any] = {"kind": self.kind}
        if self.rate is not None:
            out["rate"] = self.rate
        else:
            out["decile_rates"] = list(self.decile_rates or ())
        out["years"] = self.years
        out["districts"] = list(self.districts)
        return out


def _mapping(value: Any, step: int | None, name: str) -> tuple[tuple[str, float], ...]:
    if value is None:
        return ()
    pairs = value.items() if isinstance(value, Mapping) else value
    try:
        out = tuple((str(d), _number(v, step, "move", name)) for d, v in pairs)
    except (TypeError, ValueError):
        raise fail(
            f"{_say(step, 'move')}: {name} must map district ids to numbers, got {value!r}.",
            f'Write e.g. "{name}": {{"BRE01": 1.1}}.',
            column=_where(step, "move", name),
        ) from None
    if not out:
        raise fail(
            f"{_say(step, 'move')}: {name} names no district.",
            f'Name at least one district, e.g. "{name}": {{"BRE01": 1.1}}.',
            column=_where(step, "move", name),
        )
    if len({d for d, _ in out}) != len(out):
        raise fail(
            f"{_say(step, 'move')}: a district is named twice in {name}.",
            "Name each district once.",
            column=_where(step, "move", name),
        )
    return out


@dataclass(frozen=True)
class Move:
    """Districts' populations scaled (``scale``) or set to shares of the province (``share``)."""

    kind: ClassVar[str] = "move"
    scale: tuple[tuple[str, float], ...] = ()
    share: tuple[tuple[str, float], ...] = ()
    step: int | None = field(default=None, compare=False, repr=False)

    def __post_init__(self):
        s, k = self.step, self.kind
        scale = _mapping(self.scale or None, s, "scale") if self.scale else ()
        share = _mapping(self.share or None, s, "share") if self.share else ()
        _one_of(s, k, {"scale": scale or None, "share": share or None}, "how populations change")
        for d, v in scale:
            if v <= 0:
                raise fail(
                    f"{_say(s, k)}: the scale of {d} is {v:g}; a population is scaled by a "
                    "factor above 0.",
                    "Give e.g. 1.1 for 10 % more people, 0.9 for 10 % fewer.",
                    column=_where(s, k, "scale"),
                )
        for d, v in share:
            if not 0 < v < 1:
                raise fail(
                    f"{_say(s, k)}: the share of {d} is {v:g}; a population share lies between "
                    "0 and 1.",
                    "Give the district's share of the province's people, e.g. 0.05.",
                    column=_where(s, k, "share"),
                )
        if share and sum(v for _, v in share) >= 1 + 1e-9:
            raise fail(
                f"{_say(s, k)}: the shares add up to {sum(v for _, v in share):g}, more than "
                "the whole province.",
                "Give shares that add up to less than 1 (the other districts keep the rest).",
                column=_where(s, k, "share"),
            )
        object.__setattr__(self, "scale", scale)
        object.__setattr__(self, "share", share)

    def to_dict(self) -> dict[str, Any]:
        """The step in its file form."""
        name = "scale" if self.scale else "share"
        return {"kind": self.kind, name: dict(getattr(self, name))}


STEPS = {cls.kind: cls for cls in (Transfer, Levy, Growth, Move)}
_FIELDS = {
    "transfer": ("amount", "top_up", "below", "below_median_share", "bottom_deciles", "districts"),
    "levy": ("top_deciles", "rate", "balance", "districts"),
    "growth": ("rate", "decile_rates", "years", "districts"),
    "move": ("scale", "share"),
}
Step = Transfer | Levy | Growth | Move


def _step(raw: Any, i: int) -> Step:
    if not isinstance(raw, Mapping):
        raise fail(
            f"step {i + 1} is {type(raw).__name__}, not an object with a kind.",
            'Write each step as e.g. {"kind": "levy", "top_deciles": 1, "rate": 0.05}.',
            column=f"steps[{i}]",
        )
    kind = raw.get("kind")
    if kind not in STEPS:
        raise fail(
            f"step {i + 1} has kind {kind!r}; the kinds are {', '.join(STEP_KINDS)}.",
            "Set kind to one of them.",
            column=f"steps[{i}].kind",
        )
    unknown = [k for k in raw if k != "kind" and k not in _FIELDS[kind]]
    if unknown:
        raise fail(
            f"step {i + 1} ({kind}) has unknown field(s) {', '.join(map(repr, unknown))}.",
            f"A {kind} step takes: {', '.join(_FIELDS[kind])}.",
            column=f"steps[{i}].{unknown[0]}",
        )
    values = {k: v for k, v in raw.items() if k != "kind"}
    if kind == "growth" and isinstance(values.get("decile_rates"), list):
        values["decile_rates"] = tuple(values["decile_rates"])
    return STEPS[kind](**values, step=i)


# ----------------------------------------------------------------------------- scenario


@dataclass(frozen=True)
class Scenario:
    """Steps applied in order to the incomes and weights of one year.

    Attributes
    ----------
    steps : tuple of Transfer, Levy, Growth, Move
    name : str
        Free text for tables and file names.
    """

    steps: tuple[Step, ...]
    name: str = ""

    def __post_init__(self):
        steps = tuple(self.steps)
        if not steps:
            raise fail("the scenario has no steps.", "Add at least one step.", column="steps")
        for i, s in enumerate(steps):
            if not isinstance(s, Transfer | Levy | Growth | Move):
                raise fail(
                    f"step {i + 1} is not a transfer, levy, growth or move step.",
                    "Build steps with Transfer, Levy, Growth or Move.",
                    column=f"steps[{i}]",
                )
            if (
                isinstance(s, Levy)
                and s.balance
                and not any(isinstance(t, Transfer) for t in steps[:i])
            ):
                raise fail(
                    f"step {i + 1} (levy) is set to balance the budget, but no transfer "
                    "comes before it.",
                    "Put the levy after the transfers it pays for, or give a rate.",
                    column=f"steps[{i}].balance",
                )
        object.__setattr__(self, "steps", steps)
        object.__setattr__(self, "name", str(self.name))

    def to_dict(self) -> dict[str, Any]:
        """The file form, with the version ``rift_scenario``."""
        return {
            "rift_scenario": SCENARIO_VERSION,
            "name": self.name,
            "steps": [s.to_dict() for s in self.steps],
        }

    @classmethod
    def from_dict(cls, body: Any) -> Scenario:
        """Read the file form; every problem is a :class:`DataError` in plain words."""
        if not isinstance(body, Mapping):
            raise fail(f"a scenario is {_FORM}; got {type(body).__name__}.", "")
        version = body.get("rift_scenario")
        if isinstance(version, bool) or version != SCENARIO_VERSION:
            raise fail(
                f"the scenario has version {version!r}; this version of Rift reads "
                f"rift_scenario {SCENARIO_VERSION}.",
                f'Add "rift_scenario": {SCENARIO_VERSION} at the top of the file.',
                column="rift_scenario",
            )
        unknown = [k for k in body if k not in ("rift_scenario", "name", "steps")]
        if unknown:
            raise fail(
                f"the scenario has unknown field(s) {', '.join(map(repr, unknown))}.",
                "A scenario has rift_scenario, name and steps.",
                column=unknown[0],
            )
        steps = body.get("steps")
        if not isinstance(steps, list):
            raise fail(
                f"steps must be a list of steps, got {type(steps).__name__}.",
                'Write "steps": [ ... ] with one object per step.',
                column="steps",
            )
        return cls(tuple(_step(raw, i) for i, raw in enumerate(steps)), body.get("name") or "")

    def to_json(self) -> str:
        """The file form as JSON text."""
        return json.dumps(self.to_dict(), indent=2)

    @classmethod
    def from_json(cls, text: str, file: str = "") -> Scenario:
        """Read JSON text; problems carry ``file``."""
        try:
            body = json.loads(text)
        except json.JSONDecodeError as error:
            raise fail(
                f"the scenario file is not JSON: {error.msg} (line {error.lineno}, column "
                f"{error.colno}).",
                f"Write the scenario as {_FORM}.",
                file=file,
                row=error.lineno,
            ) from None
        try:
            return cls.from_dict(body)
        except DataError as error:
            if not file:
                raise
            from dataclasses import replace

            raise DataError([replace(p, file=file) for p in error.problems]) from None


def apply(panel: Any, scenario: Scenario, year: int | None = None, **options: Any):
    """The scenario applied to one year of a panel: before and after tables.

    See :func:`explorer.stats.scenario_tables.apply` for the parameters and the result.
    """
    from explorer.stats import scenario_tables

    return scenario_tables.apply(panel, scenario, year, **options)

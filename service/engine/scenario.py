"""Inputs of the model: one scenario as frozen dataclasses.

Prices are per unit and per price interval (e.g. a month's rent); quantities are units traded
per price interval; `payments_per_period` (k) price intervals make one model period. Shock
changes are fractions of the base (0.10 = +10 %). Validation of single fields happens before
these objects are built (service.schemas); the engine checks what needs the model.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

__all__ = [
    "ADDITION_DEFAULTS",
    "FORMS",
    "NEW_HOMES",
    "RATIONING_RULES",
    "Adjustment",
    "DiscountStep",
    "Market",
    "Policy",
    "Scenario",
    "Shock",
    "Welfare",
]

FORMS = ("linear", "constant_elasticity")
RATIONING_RULES = ("efficient", "random")
#: Whether homes built after a ceiling starts fall under it (MODEL.md 17); the first is the default.
NEW_HOMES = ("covered", "exempt")


@dataclass(frozen=True)
class Market:
    """The base point and the two curves' elasticities.

    demand_elasticity < 0; short- and long-run supply elasticities >= 0. Shifter mappings
    give each named shifter's elasticity (any sign); one name may appear in both.
    """

    price: float
    quantity: float
    demand_elasticity: float
    short_run_elasticity: float
    long_run_elasticity: float
    demand_shifters: Mapping[str, float] = field(default_factory=dict)
    supply_shifters: Mapping[str, float] = field(default_factory=dict)
    payments_per_period: float = 1.0
    form: str = "linear"
    #: General inflation per period (MODEL.md 12): a rate, or rates of periods 1, 2, ... (the
    #: last holds); each > -1. Curves and welfare stay in real money of period 0.
    inflation: float | tuple[float, ...] = 0.0

    @property
    def shifter_names(self) -> tuple[str, ...]:
        """Every declared shifter, each once, in the order of their names. The engine adds the
        shifters' effects in this order, so that a scenario's numbers, like its id, do not depend
        on the order in which its maps were written (floating-point sums of three or more terms
        depend on their order)."""
        return tuple(sorted({*self.demand_shifters, *self.supply_shifters}))


@dataclass(frozen=True)
class Shock:
    """A path of fractional changes of one shifter over periods 1..T.

    profile `step` uses change and start; `ramp` change, periods and start; `growth` rate and
    start; `path` values (held at the last value past its end).
    """

    shifter: str
    profile: str
    change: float = 0.0
    rate: float = 0.0
    start: int = 1
    periods: int = 1
    values: tuple[float, ...] = ()


@dataclass(frozen=True)
class Adjustment:
    """How supply elasticity moves from short to long run (Nerlove 1958; see schedules.py).

    schedule `linear` uses periods (K >= 0); `geometric` rate (lambda in (0, 1]) or
    half_life (> 0) or neither (Nerlove default); `explicit` elasticities (eps_t, t >= 1).
    `stock` (MODEL.md 13) moves the stock itself toward the long-run supply curve: rate or
    half_life as for `geometric` (default eps_SR / eps_LR), and `depreciation` delta in [0, 1],
    the largest share of the stock lost in one period (None: no such floor), `build_limit` b > 0,
    the largest share of the standing homes added in one period (None: no such cap; MODEL.md
    16), and `conversion` kappa >= 0, how fast controlled homes leave the rental market per unit
    of log gap between the free-path rent and the controlled rent (0: none; MODEL.md 18).
    schedule None means constant elasticity (allowed only when short and long run agree).
    """

    schedule: str | None = None
    periods: int = 0
    rate: float | None = None
    half_life: float | None = None
    elasticities: tuple[float, ...] = ()
    depreciation: float | None = None
    build_limit: float | None = None
    conversion: float = 0.0


@dataclass(frozen=True)
class Policy:
    """One policy, active in periods start..end (inclusive).

    kind: none, price_ceiling (level, or base_level=True for P0, or growth), price_floor
    (level), unit_tax (amount), ad_valorem_tax (rate), unit_subsidy (amount), quantity_cap
    (level). Money is per unit per price interval; quantity per price interval.
    Money rules are nominal under inflation unless `indexed` (MODEL.md 12); `coverage` is the
    share of homes a price ceiling covers (MODEL.md 14). Under the stock schedule a ceiling's
    `new_homes` are "covered" (homes built later fall under the rule in the share s) or
    "exempt" (never controlled); `vacancy_decontrol` tau in (0, 1] on a growth cap is the share
    of tenancies that end each period and restart at the market rent (0.0: off; MODEL.md 17).
    """

    name: str
    kind: str
    level: float | None = None
    base_level: bool = False
    growth: float | None = None
    amount: float = 0.0
    rate: float = 0.0
    start: int = 1
    end: int | None = None
    indexed: bool = False
    coverage: float = 1.0
    new_homes: str = "covered"
    vacancy_decontrol: float = 0.0


@dataclass(frozen=True)
class DiscountStep:
    """Rate per model period that applies up to and including `through_period`."""

    through_period: int
    rate: float


@dataclass(frozen=True)
class Welfare:
    """Rationing rule under a binding ceiling and the discount rate per model period."""

    rationing: str = "efficient"
    discount_rate: float | tuple[DiscountStep, ...] = 0.0


@dataclass(frozen=True)
class Scenario:
    """Everything one path computation needs."""

    market: Market
    horizon: int
    policies: tuple[Policy, ...]
    shocks: tuple[Shock, ...] = ()
    adjustment: Adjustment = Adjustment()
    welfare: Welfare = Welfare()


#: Fields added with MODEL.md sections 12-18 and their defaults, per dataclass: left out of
#: the scenario id at these values, so that ids of requests without them stay as they were.
ADDITION_DEFAULTS = {
    Market: {"inflation": 0.0},
    Adjustment: {"depreciation": None, "build_limit": None, "conversion": 0.0},
    Policy: {"indexed": False, "coverage": 1.0, "new_homes": "covered", "vacancy_decontrol": 0.0},
}

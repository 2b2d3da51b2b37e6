"""An independent scalar reference for the model, written from MODEL.md alone.

(MODEL.md is the repository's copy, service/engine/MODEL.md; section numbers as there.)
One scenario, one period, one policy at a time, in plain Python floats: equilibria and
wedge roots by scipy.optimize.brentq on bracketed excess demand, every welfare integral by
scipy.integrate.quad. Slow on purpose and shares no code with service/engine: the tests
compare the vectorised engine against it, and the benchmarks time it as the scalar
baseline.

Money convention
----------------
``Row``'s money attributes (``dcs, dps, g, dwl, mis, renters, extra_rent``) are per price
interval, NOT multiplied by k (payments_per_period). ``Row.distribution`` and everything
``summary`` and ``other_form`` return are money per model period (x k), as the API reports
them. Prices are real money of period 0.

Additions (MODEL.md sections 12-15)
-----------------------------------
Request fields understood, besides the core ones:

- ``market.inflation``: a number, or a list of per-period rates for periods 1, 2, ... (the
  last holds); default 0. ``price_index(request)`` gives I_0..I_T.
- ``"indexed": true`` on a ceiling or floor ``level`` (also on ``"base"``: the real P0), a
  ceiling ``growth`` cap, a ``unit_tax`` or a ``unit_subsidy``. Real values used in period t
  (section 12): level L -> L/I_t (indexed: L); ``"base"`` -> P0/I_t; growth cap g ->
  (1+g) Pc_(t-1)/(1+pi_t) (indexed: (1+pi_t+g) Pc_(t-1)/(1+pi_t)); tax or subsidy tau ->
  tau/I_t (indexed: tau); ad valorem rate and quantity cap unchanged.
- ``"adjustment": {"schedule": "stock", "rate": lambda | "half_life": h, "depreciation":
  delta, "build_limit": b, "conversion": kappa}`` (sections 13, 16, 18): every path carries
  its own standing homes K_t; Kstar_t is the period-t supply curve at eps_LR; lambda defaults
  to eps_SR/eps_LR. ``stock_rate(request)`` gives lambda; ``supply_elasticities(request)`` the
  reported ``supply_elasticity`` series (under ``stock``: the free path's supply elasticity at
  its equilibrium; period 0 the impact elasticity of section 20).
- ``"coverage": s`` in (0, 1] on a ``price_ceiling`` (section 14).
- ``welfare.rationing``: ``"random"`` with a ceiling of coverage < 1, exempt new homes or
  vacancy decontrol is a ValueError.

Second additions (MODEL.md sections 16-20)
------------------------------------------
- Section 16: ``Qs_t(P) = min(max((1-lambda) K_(t-1) + lambda Kstar_t(P), lo_t), hi_t)``,
  truncated at 0, with ``lo_t = (1-delta) K_(t-1)`` (with ``depreciation``) and
  ``hi_t = (1+b) K_(t-1)`` (with ``build_limit``). Homes standing ``K_t = max(Q_t, lo_t)``
  with depreciation, else ``Q_t``; ``Row.homes_standing`` = K_t, ``Row.vacant_homes`` =
  K_t - Q_t (under ``stock``; else None).
- Section 17: a ``price_ceiling`` is cleared by ``_group_period`` (the controlled group c and
  the other homes u, one root ``Qd(M) = Sc(Rc(M)) + Su(M)``, welfare by price integrals
  against the comparator ``Qd(P^) = Sc(P^) + Su(P^)``) wherever section 17 changes numbers:
  under ``stock`` with s < 1, ``"new_homes": "exempt"`` or ``conversion`` > 0, and on any
  schedule with ``vacancy_decontrol``. Every other ceiling (a whole-market rule; a partial
  rule without a stock and without decontrol) keeps the code of sections 5 and 14, which
  section 17 reproduces (a test checks the two methods agree). ``Row.marginal_value`` and
  ``Row.marginal_cost`` are set on grouped paths (M_t; marginal_cost None on a whole-market
  rule with conversion) and None elsewhere.
- Section 18: ``Row.converted_homes`` = v_t Kc_(t-1) under ``stock`` (0 outside the rule).
- Section 19: ``Row.renters`` and ``Row.extra_rent`` (per price interval) under ``stock``.
- Section 20: the seventh group ``households_drawn_in``; ``impact_elasticity(request)``;
  ``reduced_form(request)``; ``other_form(request)``.

``paths(request)`` returns ``{policy name: [Row for t = 0..T]}``. Each ``Row`` has the core
attributes ``pc, pp, q, qd, qs, binding, shortage, excess, dcs, dps, g, dwl, mis`` and, per
period, these under their API names:

- ``price_index`` (I_t), ``nominal_consumer_price`` (pc x I_t), ``nominal_producer_price``
  (pp x I_t): always present (I_t = 1 without inflation).
- ``covered_price``, ``uncovered_price``, ``covered_quantity``, ``uncovered_quantity``: on a
  ``price_ceiling`` with coverage s < 1, exempt new homes or vacancy decontrol (section 17),
  else None. Outside the rule's periods (and in period 0) they are the path split by share:
  covered_price = uncovered_price = the path's price, covered_quantity = s Q_t,
  uncovered_quantity = (1-s) Q_t. Inside: Rc_t, M_t, Kc_t, Ku_t (section 17), or under
  section 14 (no stock, no decontrol) where it binds c_t, Pu, s Qs(c_t), (1-s) Qs(Pu).
- ``homes_below_free_path`` (free path's Q_t - this Q_t) and ``rent_above_free_path``
  (pc_t - free path's P*_t): under the ``stock`` schedule, else None; the free path is the
  scenario with no policy on its own stock, computed even if no policy has kind ``none``.
- ``distribution``: a dict of the seven groups of GROUPS, each ALREADY multiplied by k (money
  per model period, as the API reports it); all 0 where the policy does not bind and in
  period 0; None on every path under random rationing. The tenants' groups (TENANTS) sum to
  k dcs, the owners' (OWNERS) to k dps, all seven to -k dwl.

``summary(rows, request, policy)`` gives ``distribution_totals`` (sums over periods, or None),
``final_homes_below_free_path`` and ``peak_homes_below_free_path`` (the largest value over
t = 0..T; None without ``stock``) and, given the request and the policy, under ``stock``:
``vs_free_path_totals``, ``final_vacant_homes`` and ``total_converted_homes`` (x k where money).

Readings of the note made here: owners "with Pp" outside ceilings use the quantity actually
let, Pp Q - P* Q* + int_Q^Q* Qs^-1 (equal to Qs(Pp) except under a floor or a quantity cap),
so that the owners' groups sum to section 6's dPS; under a full ceiling tenants in
uncontrolled homes and owners of uncontrolled homes are 0.
"""

from __future__ import annotations

import copy
import math
import warnings
from dataclasses import dataclass

from scipy.integrate import IntegrationWarning, quad
from scipy.optimize import brentq

QUAD = {"epsabs": 0.0, "epsrel": 1e-10, "limit": 200}
ROOT = {"xtol": 1e-13, "rtol": 4 * 2.220446049250313e-16, "maxiter": 500}

GROUPS = (
    "tenants_in_controlled_homes",
    "tenants_in_uncontrolled_homes",
    "households_priced_out",
    "owners_of_controlled_homes",
    "owners_of_uncontrolled_homes",
    "government",
    "households_drawn_in",
)
#: The groups that sum to the change in consumer surplus (MODEL.md 15 and 20) ...
TENANTS = (
    "tenants_in_controlled_homes",
    "tenants_in_uncontrolled_homes",
    "households_priced_out",
    "households_drawn_in",
)
#: ... and those that sum to the change in producer surplus.
OWNERS = ("owners_of_controlled_homes", "owners_of_uncontrolled_homes")


def shock_change(shock: dict, t: int) -> float:
    """MODEL.md section 1 and 11: one shock's fractional change in period t >= 1."""
    profile = shock["profile"]
    start = int(shock.get("start", 1))
    if profile == "step":
        return shock["change"] if t >= start else 0.0
    if profile == "ramp":
        if t < start:
            return 0.0
        return shock["change"] * min((t - start + 1) / shock["periods"], 1.0)
    if profile == "growth":
        return (1.0 + shock["rate"]) ** (t - start + 1) - 1.0 if t >= start else 0.0
    values = shock["values"]
    return values[min(t, len(values)) - 1]


def supply_elasticity(request: dict, t: int) -> float:
    """MODEL.md section 2 (the schedules that move the elasticity; not ``stock``)."""
    supply = request["market"]["supply"]
    sr, lr = supply["short_run_elasticity"], supply["long_run_elasticity"]
    adj = request.get("adjustment")
    if t == 0 or adj is None:
        return sr
    if adj["schedule"] == "explicit":
        values = adj["elasticities"]
        return values[min(t, len(values)) - 1]
    if adj["schedule"] == "linear":
        k = adj["periods"]
        w = 1.0 if k == 0 else min((t - 1) / k, 1.0)
    else:
        if "rate" in adj:
            lam = adj["rate"]
        elif "half_life" in adj:
            lam = 1.0 - 0.5 ** (1.0 / adj["half_life"])
        else:
            lam = sr / lr
        w = 1.0 - (1.0 - lam) ** (t - 1)
    return sr + (lr - sr) * w


def inflation_rate(request: dict, t: int) -> float:
    """MODEL.md section 12: pi_t for t >= 1 (a number, or a list whose last rate holds)."""
    pi = request["market"].get("inflation", 0.0)
    if isinstance(pi, list):
        if not pi:
            raise ValueError("inflation: an empty list")
        pi = pi[min(t, len(pi)) - 1]
    if not pi > -1.0:
        raise ValueError("inflation: each rate must be > -1")
    return float(pi)


def price_index(request: dict) -> list[float]:
    """I_0 = 1, I_t = prod_(u<=t) (1 + pi_u), for t = 0..T."""
    index = [1.0]
    for t in range(1, request["horizon"] + 1):
        index.append(index[-1] * (1.0 + inflation_rate(request, t)))
    return index


def is_stock(request: dict) -> bool:
    return (request.get("adjustment") or {}).get("schedule") == "stock"


def stock_rate(request: dict) -> float:
    """lambda of the ``stock`` schedule (MODEL.md section 13, defaults as section 2)."""
    adj = request["adjustment"]
    supply = request["market"]["supply"]
    sr, lr = supply["short_run_elasticity"], supply["long_run_elasticity"]
    if "rate" in adj and "half_life" in adj:
        raise ValueError("stock: give rate or half_life, not both")
    if "rate" in adj:
        lam = adj["rate"]
    elif "half_life" in adj:
        lam = 1.0 - 0.5 ** (1.0 / adj["half_life"])
    elif 0.0 < sr <= lr:
        lam = sr / lr
    else:
        raise ValueError("stock: no rate, and the Nerlove default eps_SR/eps_LR does not apply")
    if not 0.0 < lam <= 1.0:
        raise ValueError("stock: the rate must lie in (0, 1]")
    return lam


def impact_elasticity(request: dict) -> float:
    """MODEL.md section 20: under ``stock`` with an explicit ``rate`` or ``half_life`` the
    impact elasticity at the base point is lambda eps_LR (the stock rule's slope at K = Q0,
    P = P0; Nerlove 1958: short-run = lambda x long-run); otherwise eps_SR (under the default
    rate lambda = eps_SR/eps_LR the two agree). Period 0's ``supply_elasticity`` and the
    reduced form's short-run rows use it."""
    supply = request["market"]["supply"]
    adj = request.get("adjustment") or {}
    if is_stock(request) and ("rate" in adj or "half_life" in adj):
        return stock_rate(request) * supply["long_run_elasticity"]
    return supply["short_run_elasticity"]


def build_limit(request: dict) -> float | None:
    """b of section 16 (None: no upper bound)."""
    adj = request.get("adjustment") or {}
    b = adj.get("build_limit")
    if b is not None and not (is_stock(request) and b > 0):
        raise ValueError("build_limit: a number > 0, and only under the stock schedule")
    return None if b is None else float(b)


def conversion(request: dict) -> float:
    """kappa of section 18 (0: none)."""
    adj = request.get("adjustment") or {}
    kappa = adj.get("conversion", 0.0)
    if kappa and not is_stock(request):
        raise ValueError("conversion: only under the stock schedule")
    if not kappa >= 0.0:
        raise ValueError("conversion: kappa >= 0")
    return float(kappa)


@dataclass
class Period:
    """The curves of one period (MODEL.md section 3), scalar."""

    form: str
    p0: float
    q0: float
    eta: float
    eps: float
    demand: float  # D or ln A
    supply: float  # S or ln B

    @classmethod
    def of(cls, request: dict, t: int) -> Period:
        market = request["market"]
        changes: dict[str, float] = {}
        if t > 0:
            for shock in request.get("shocks", []):
                changes[shock["shifter"]] = changes.get(shock["shifter"], 0.0) + shock_change(shock, t)
        form = market.get("form", "linear")

        def shift(shifters: dict) -> float:
            if form == "linear":
                return sum(e * changes.get(n, 0.0) for n, e in shifters.items())
            return sum(e * math.log1p(changes.get(n, 0.0)) for n, e in shifters.items())

        # Under ``stock`` the curve's own elasticity is eps_LR: it is the desired stock Kstar_t.
        eps = market["supply"]["long_run_elasticity"] if is_stock(request) else supply_elasticity(request, t)
        return cls(
            form,
            market["price"],
            market["quantity"],
            market["demand"]["price_elasticity"],
            eps,
            shift(market["demand"].get("shifters", {})),
            shift(market["supply"].get("shifters", {})),
        )

    def qd(self, p: float) -> float:
        if self.form == "linear":
            return self.q0 * max(1.0 + self.eta * (p - self.p0) / self.p0 + self.demand, 0.0)
        return self.q0 * (p / self.p0) ** self.eta * math.exp(self.demand)

    def qs(self, p: float) -> float:
        if self.form == "linear":
            return self.q0 * max(1.0 + self.eps * (p - self.p0) / self.p0 + self.supply, 0.0)
        return self.q0 * (p / self.p0) ** self.eps * math.exp(self.supply)

    def pd(self, q: float) -> float:
        """Inverse demand."""
        if self.form == "linear":
            return self.p0 * (1.0 + (q / self.q0 - 1.0 - self.demand) / self.eta)
        return self.p0 * (q / (self.q0 * math.exp(self.demand))) ** (1.0 / self.eta)

    def ps(self, q: float) -> float:
        """Inverse supply, floored at 0; 0 below capacity when vertical."""
        if self.eps == 0.0:
            return 0.0
        if self.form == "linear":
            return max(self.p0 * (1.0 + (q / self.q0 - 1.0 - self.supply) / self.eps), 0.0)
        return self.p0 * (q / (self.q0 * math.exp(self.supply))) ** (1.0 / self.eps)

    def supply_kinks(self) -> tuple[float, ...]:
        """Quantities where the inverse supply has a kink or a jump (for quad's ``points``)."""
        return (self.q0 * (1.0 + self.supply - self.eps),) if self.form == "linear" else ()


@dataclass
class StockPeriod(Period):
    """Sections 13 and 16: the period-t supply of a durable stock K_(t-1) (``eps`` is eps_LR).

    Qs_t(P) = min(max((1-lam) K_(t-1) + lam Kstar_t(P), (1-delta) K_(t-1)), (1+b) K_(t-1)),
    Kstar_t = the period's supply curve at eps_LR (Period.qs). No depreciation (delta None):
    no floor; no build limit (b None): no ceiling on the stock.
    """

    lam: float = 1.0
    delta: float | None = None
    k_prev: float = 0.0
    b: float | None = None

    @classmethod
    def at(cls, request: dict, t: int, k_prev: float) -> StockPeriod:
        base = Period.of(request, t)
        adj = request["adjustment"]
        delta = adj.get("depreciation")
        return cls(
            base.form,
            base.p0,
            base.q0,
            base.eta,
            base.eps,
            base.demand,
            base.supply,
            lam=stock_rate(request),
            delta=None if delta is None else float(delta),
            k_prev=k_prev,
            b=build_limit(request),
        )

    def desired(self, p: float) -> float:
        """Kstar_t(P)."""
        return Period.qs(self, p)

    def unfloored(self, p: float) -> float:
        return (1.0 - self.lam) * self.k_prev + self.lam * self.desired(p)

    def floor(self) -> float | None:
        return None if self.delta is None else (1.0 - self.delta) * self.k_prev

    def ceiling(self) -> float | None:
        """hi_t = (1+b) K_(t-1) (section 16), None without a build limit."""
        return None if self.b is None else (1.0 + self.b) * self.k_prev

    def qs(self, p: float) -> float:
        floor, ceiling = self.floor(), self.ceiling()
        value = self.unfloored(p)
        if floor is not None:
            value = max(value, floor)
        if ceiling is not None:
            value = min(value, ceiling)
        return max(value, 0.0)

    def ps(self, q: float) -> float:
        """0 up to the quantity offered at price 0, else the price on the unfloored branch."""
        if q <= self.qs(0.0):
            return 0.0
        return Period.ps(self, (q - (1.0 - self.lam) * self.k_prev) / self.lam)

    def supply_kinks(self) -> tuple[float, ...]:
        return (self.qs(0.0),)

    def elasticity_at(self, p: float) -> float:
        """Point elasticity of this period's supply at price p (0 where a bound binds)."""
        floor, ceiling = self.floor(), self.ceiling()
        value = self.unfloored(p)
        if (floor is not None and value < floor) or (ceiling is not None and value > ceiling):
            return 0.0
        desired = self.desired(p)
        if desired <= 0.0:
            return 0.0
        if self.form == "linear":
            slope = self.q0 * self.eps / self.p0
        else:
            slope = self.eps * desired / p
        return self.lam * slope * p / self.qs(p)


def _bracket_root(f, guess: float, low_limit: float = 0.0) -> float:
    """Root of a decreasing f on (low_limit, inf), bracketed by halving/doubling from guess."""
    lo = hi = max(guess, low_limit * 1.5 + 1e-300)
    for _ in range(2000):
        if f(lo) > 0:
            break
        lo = low_limit + (lo - low_limit) / 2.0
    for _ in range(2000):
        if f(hi) < 0:
            break
        hi = hi * 2.0 + 1.0
    return brentq(f, lo, hi, **ROOT)


def free_market(c: Period) -> tuple[float, float]:
    if c.eps == 0.0:
        cap = c.qs(c.p0)
        p = _bracket_root(lambda p: c.qd(p) - cap, c.p0)
        return p, cap
    p = _bracket_root(lambda p: c.qd(p) - c.qs(p), c.p0)
    return p, c.qs(p)


def integral(f, a: float, b: float, kinks: tuple[float, ...] = (), offset: float = 0.0) -> float:
    """quad of f from a to b (signed), split at kinks inside the interval.

    ``offset``: the size of a constant that f subtracts (f = g - offset, as in Qd^-1 - P*):
    f's own rounding is then about 1e-16 |offset|, and the absolute tolerance is kept above it.
    """
    if a == b:
        return 0.0
    lo, hi = min(a, b), max(a, b)
    if hi - lo <= 1e-9 * hi:  # a sliver: the trapezoid is exact to rounding there, quad is not
        return (b - a) * 0.5 * (f(a) + f(b))
    inside = [k for k in kinks if lo < k < hi]
    # An absolute tolerance on the scale of the integrand, so that an integral near zero
    # (where the relative one cannot be met in floating point) still converges cleanly.
    width = hi - lo
    sampled = max(abs(f(lo + x * width)) for x in (0.25, 0.5, 0.75))  # inside: f(0) may be infinite
    scale = sampled * width
    # A spike at an end that the inner samples miss (a nearly vertical constant-elasticity supply:
    # its inverse is a huge power of q, 0 but right at the top): quad's nodes miss it too, so the
    # interval is also cut at geometrically closer points toward that end.
    for x, toward in ((lo, 1.0), (hi, -1.0)):
        try:
            end = abs(f(x))
        except (ZeroDivisionError, OverflowError):
            continue
        if math.isfinite(end) and end > 1e3 * sampled:
            inside += [x + toward * width * 10.0**-k for k in range(1, 9)]
            scale = max(scale, end * width)
    inside = sorted(set(inside))
    options = dict(QUAD, epsabs=max(1e-12 * scale, 1e-13 * abs(offset) * width))
    with warnings.catch_warnings():
        warnings.simplefilter("error", IntegrationWarning)
        try:
            value = quad(f, lo, hi, points=inside or None, **options)[0]
        except IntegrationWarning:
            value = None
    if value is None:
        # Rare (only where the first try fails, so every other answer is unchanged): the
        # integrand's scale sits at an end of the interval, e.g. a nearly vertical
        # constant-elasticity supply whose inverse is a huge power of q, 0 at the three
        # sample points. Take the scale from the ends as well and allow more subintervals.
        ends = []
        for x in (lo, hi):
            try:
                ends.append(abs(f(x)))
            except (ZeroDivisionError, OverflowError):
                pass
        scale = max([scale, *(e for e in ends if math.isfinite(e))]) * width
        options = dict(QUAD, epsabs=max(1e-12 * scale, 1e-13 * abs(offset) * width), limit=2000)
        value = quad(f, lo, hi, points=inside or None, **options)[0]
    return value if a < b else -value


@dataclass
class Row:
    pc: float
    pp: float
    q: float
    qd: float
    qs: float
    binding: bool
    shortage: float = 0.0
    excess: float = 0.0
    dcs: float = 0.0
    dps: float = 0.0
    g: float = 0.0
    dwl: float = 0.0
    mis: float = 0.0
    # Additions (MODEL.md sections 12-15); filled by paths().
    price_index: float = 1.0
    nominal_consumer_price: float | None = None
    nominal_producer_price: float | None = None
    covered_price: float | None = None
    uncovered_price: float | None = None
    covered_quantity: float | None = None
    uncovered_quantity: float | None = None
    homes_below_free_path: float | None = None
    rent_above_free_path: float | None = None
    distribution: dict[str, float] | None = None
    # Second additions (MODEL.md sections 16-20); filled by paths().
    marginal_value: float | None = None
    marginal_cost: float | None = None
    comparator_price: float | None = None  # P^ of section 17 on grouped paths
    homes_standing: float | None = None
    vacant_homes: float | None = None
    converted_homes: float | None = None
    renters: float | None = None  # per price interval (section 19)
    extra_rent: float | None = None  # per price interval (section 19)


def coverage(policy: dict) -> float:
    """The covered share s of a price ceiling (1 for any other policy)."""
    if policy["kind"] != "price_ceiling":
        return 1.0
    s = policy.get("coverage", 1.0)
    if not 0.0 < s <= 1.0:
        raise ValueError("coverage must lie in (0, 1]")
    return s


def real_level(policy: dict, p0: float, index: float) -> float:
    """A ceiling's or floor's level in real money of period 0 (section 12)."""
    base = policy.get("base_level") or policy.get("level") == "base"  # two spellings of a freeze
    level = p0 if base else policy["level"]
    return level if policy.get("indexed") else level / index


def ceiling_rent(policy: dict, p0: float, previous: float, pi: float, index: float) -> float:
    """The rule's rent r_t in real money (sections 5, 12, 17): a level, the base, or a growth
    cap on ``previous`` (the controlled rent of the period before, real)."""
    if "growth" in policy:
        g = policy["growth"]
        if policy.get("indexed"):
            return (1.0 + pi + g) * previous / (1.0 + pi)
        return (1.0 + g) * previous / (1.0 + pi)
    return real_level(policy, p0, index)


@dataclass(frozen=True)
class Rule:
    """How a policy's path is computed (sections 14 and 17).

    ``exempt``: new homes exempt; ``tau``: vacancy decontrol (0 = off); ``kappa``: conversion;
    ``grouped``: cleared by section 17's groups; ``split``: reports the covered/uncovered
    series; ``whole``: a whole-market rule (s = 1, new homes covered, no decontrol)."""

    s: float = 1.0
    exempt: bool = False
    tau: float = 0.0
    kappa: float = 0.0
    grouped: bool = False
    split: bool = False
    whole: bool = True

    @classmethod
    def of(cls, request: dict, policy: dict) -> Rule:
        s = coverage(policy)
        stock = is_stock(request)
        kappa = conversion(request)
        ceiling = policy["kind"] == "price_ceiling"
        new_homes = policy.get("new_homes", "covered")
        if new_homes not in ("covered", "exempt") or (new_homes == "exempt" and not (ceiling and stock)):
            raise ValueError("new_homes: covered or exempt, on a price ceiling under the stock schedule")
        exempt = new_homes == "exempt"
        tau = policy.get("vacancy_decontrol")
        if tau is not None and not (ceiling and "growth" in policy and 0.0 < tau <= 1.0):
            raise ValueError("vacancy_decontrol: in (0, 1], on a growth-capped price ceiling only")
        tau = 0.0 if tau is None else float(tau)
        random = (request.get("welfare") or {}).get("rationing", "efficient") == "random"
        if random and ceiling and (s < 1.0 or exempt or tau > 0.0):
            raise ValueError("random rationing with coverage below 1, exempt new homes or vacancy decontrol")
        whole = s == 1.0 and not exempt and tau == 0.0
        grouped = ceiling and (tau > 0.0 or (stock and (s < 1.0 or exempt or kappa > 0.0)))
        split = ceiling and not whole
        return cls(s, exempt, tau, kappa if ceiling else 0.0, grouped, split, whole)


def _zero_groups() -> dict[str, float]:
    return dict.fromkeys(GROUPS, 0.0)


def _split_free(row: Row, s: float) -> None:
    """Covered/uncovered fields of a partial ceiling where it does not bind."""
    row.covered_price = row.uncovered_price = row.pc
    row.covered_quantity = s * row.q
    row.uncovered_quantity = (1.0 - s) * row.q


def policy_period(
    c: Period,
    policy: dict,
    t: int,
    previous_pc: float,
    rationing: str,
    pi: float = 0.0,
    index: float = 1.0,
) -> Row:
    """One policy in one period against the free market of the period.

    ``previous_pc`` is the real consumer price of the period before (for a partial ceiling:
    its covered price), ``pi`` the period's inflation and ``index`` its price index I_t.
    Row.distribution is filled here per price interval (paths() multiplies it by k).
    """
    p_star, q_star = free_market(c)
    start, end = policy.get("start", 1), policy.get("end", 10**9)
    active = start <= t <= end and t >= 1
    kind = policy["kind"]
    s = coverage(policy)
    free = Row(p_star, p_star, q_star, q_star, q_star, False, distribution=_zero_groups())
    if s < 1.0:
        if rationing == "random":
            raise ValueError("random rationing with a ceiling of coverage below 1")
        _split_free(free, s)
    if not active or kind == "none":
        return free
    if kind == "price_ceiling":
        level = ceiling_rent(policy, c.p0, previous_pc, pi, index)
        if not level < p_star:
            return free
        if s < 1.0:
            return _partial_ceiling(c, level, s, p_star, q_star)
        q = c.qs(level)
        row = Row(level, level, q, c.qd(level), q, True, shortage=c.qd(level) - q)
    elif kind == "price_floor":
        level = real_level(policy, c.p0, index)
        if not level > p_star:
            return free
        q = c.qd(level)
        row = Row(level, level, q, q, c.qs(level), True, excess=c.qs(level) - q)
    elif kind in ("unit_tax", "unit_subsidy", "ad_valorem_tax"):
        if kind == "ad_valorem_tax":
            r = policy["rate"]
            if r <= 0:
                return free

            def producer(pc):
                return (1.0 - r) * pc

            low = 0.0
        else:
            amount = policy["amount"] if policy.get("indexed") else policy["amount"] / index
            gap = amount if kind == "unit_tax" else -amount
            if gap == 0:
                return free

            def producer(pc, gap=gap):
                return pc - gap

            low = max(amount, 0.0) if kind == "unit_tax" else 0.0
        if c.eps == 0.0:
            pc = p_star
        else:
            pc = _bracket_root(lambda pc: c.qd(pc) - c.qs(producer(pc)), p_star, low)
        pp = producer(pc)
        q = c.qd(pc)
        row = Row(pc, pp, q, q, c.qs(pp), True)
    elif kind == "quantity_cap":
        cap = policy["level"]
        if not cap < q_star:
            return free
        pc = _bracket_root(lambda p: c.qd(p) - cap, p_star)
        row = Row(pc, pc, cap, cap, c.qs(pc), True, excess=c.qs(pc) - cap)
    else:
        raise ValueError(kind)
    q = row.q
    kinks = c.supply_kinks()
    supply_area = integral(c.ps, q, q_star, kinks)
    row.dcs = p_star * q_star - row.pc * q - integral(c.pd, q, q_star)
    row.dps = row.pp * q - p_star * q_star + supply_area
    row.g = (row.pc - row.pp) * q
    row.dwl = -(row.dcs + row.dps + row.g)
    groups = _zero_groups()
    if q > q_star:
        # Section 20: households drawn in (a subsidy) gain int_Q*^Q (Qd^-1 - Pc); the tenants'
        # group counts only those who rent in both, -(Pc - P*) min(Q, Q*); nobody priced out.
        groups["households_drawn_in"] = integral(lambda x: c.pd(x) - row.pc, q_star, q, offset=row.pc)
    else:
        groups["households_priced_out"] = -integral(lambda x: c.pd(x) - p_star, q, q_star, offset=p_star)
    if kind == "price_ceiling":
        groups["tenants_in_controlled_homes"] = (p_star - row.pc) * q
        groups["owners_of_controlled_homes"] = row.pc * q - p_star * q_star + supply_area
    else:
        groups["tenants_in_uncontrolled_homes"] = -(row.pc - p_star) * min(q, q_star)
        groups["owners_of_uncontrolled_homes"] = row.pp * q - p_star * q_star + supply_area
        groups["government"] = row.g
    row.distribution = groups
    if kind == "price_ceiling" and rationing == "random":
        qd = row.qd
        row.mis = integral(c.pd, 0.0, q) - (q / qd) * integral(c.pd, 0.0, qd)
        row.dcs -= row.mis
        row.dwl += row.mis
    return row


def _partial_ceiling(c: Period, level: float, s: float, p_star: float, q_star: float) -> Row:
    """Section 14: a binding ceiling ``level`` on the share s of the homes."""
    qs_c = c.qs(level)
    qc = s * qs_c
    pu = _bracket_root(lambda p: c.qd(p) - qc - (1.0 - s) * c.qs(p), p_star)
    qs_u = c.qs(pu)
    qu = (1.0 - s) * qs_u
    q = qc + qu
    pc = (level * qc + pu * qu) / q
    row = Row(pc, pc, q, c.qd(level), q, True, shortage=c.qd(level) - q)
    row.covered_price, row.uncovered_price = level, pu
    row.covered_quantity, row.uncovered_quantity = qc, qu
    kinks = c.supply_kinks()
    demand_area = integral(c.pd, q, q_star)
    covered_area = integral(c.ps, qs_c, q_star, kinks)
    uncovered_area = integral(c.ps, qs_u, q_star, kinks)
    row.dcs = p_star * q_star - pc * q - demand_area
    row.dps = pc * q - p_star * q_star + s * covered_area + (1.0 - s) * uncovered_area
    row.g = 0.0
    row.dwl = demand_area - s * covered_area - (1.0 - s) * uncovered_area
    groups = _zero_groups()
    groups["tenants_in_controlled_homes"] = (p_star - level) * qc
    groups["tenants_in_uncontrolled_homes"] = -(pu - p_star) * qu
    groups["households_priced_out"] = -integral(lambda x: c.pd(x) - p_star, q, q_star, offset=p_star)
    groups["owners_of_controlled_homes"] = s * (level * qs_c - p_star * q_star + covered_area)
    groups["owners_of_uncontrolled_homes"] = (1.0 - s) * (pu * qs_u - p_star * q_star + uncovered_area)
    row.distribution = groups
    return row


@dataclass
class GroupSupply:
    """One group's supply of MODEL.md section 17 as a function of the rent it receives:
    ``clip(base + lam desired(P); lo, hi)``, truncated at 0 (clip = min(max(x, lo), hi); a
    bound given as None is absent). Without a stock: base 0, lam 1, desired = s Qs_t."""

    base: float
    lam: float
    desired: object  # P -> float, nondecreasing
    lo: float | None = None
    hi: float | None = None
    kinks: tuple = ()  # prices where `desired` itself has a kink
    crossings: tuple = ()  # (g, level): `desired` has a kink where the nondecreasing g(P) = level

    def inner(self, p: float) -> float:
        return self.base + self.lam * self.desired(p)

    def __call__(self, p: float) -> float:
        x = self.inner(p)
        if self.lo is not None:
            x = max(x, self.lo)
        if self.hi is not None:
            x = min(x, self.hi)
        return max(x, 0.0)

    def points(self, a: float, b: float) -> tuple[float, ...]:
        """The break points of this curve strictly inside the price interval (a, b), for quad:
        where a bound starts or stops binding, and the kinks of `desired`."""
        lo, hi = min(a, b), max(a, b)
        out = [k for k in self.kinks if lo < k < hi]
        pairs = [(self.inner, bound) for bound in (self.lo, self.hi) if bound is not None]
        for g, level in (*pairs, *self.crossings):
            below, above = g(lo) - level, g(hi) - level
            if below < 0.0 < above:
                out.append(brentq(lambda p, g=g, level=level: g(p) - level, lo, hi, **ROOT))
        return tuple(sorted(out))


def _zero_price(c: Period) -> tuple[float, ...]:
    """The price where a linear curve at c.eps reaches zero quantity (a kink), if any."""
    if c.form != "linear" or c.eps == 0.0:
        return ()
    return (c.p0 * (1.0 - (1.0 + c.supply) / c.eps),)


def group_supplies(c: Period, rule: Rule, kc: float, ku: float, k_before: float):
    """Sc and Su of section 17 in period t. ``kc`` is Kc~ (the controlled group after
    conversion), ``ku`` Ku_(t-1), ``k_before`` K_(t-1) = Kc_(t-1) + Ku_(t-1) before conversion."""
    s = rule.s
    kinks = _zero_price(c)
    if not isinstance(c, StockPeriod):
        return (
            GroupSupply(0.0, 1.0, lambda p: s * c.qs(p), kinks=kinks),
            GroupSupply(0.0, 1.0, lambda p: (1.0 - s) * c.qs(p), kinks=kinks),
        )
    lam, delta, b = c.lam, c.delta, c.b

    def low(k):
        return None if delta is None else (1.0 - delta) * k

    def desired(p):
        return c.desired(p)

    if not rule.exempt:
        sc = GroupSupply(
            (1.0 - lam) * kc,
            lam,
            lambda p: s * desired(p),
            low(kc),
            None if b is None else (1.0 + b) * kc,
            kinks,
        )
        su = GroupSupply(
            (1.0 - lam) * ku,
            lam,
            lambda p: (1.0 - s) * desired(p),
            low(ku),
            None if b is None else (1.0 + b) * ku,
            kinks,
        )
        return sc, su
    # Exempt new homes: the controlled group never grows; all building is uncontrolled, and the
    # other homes want their own share plus what the market wants beyond the controlled group.
    sc = GroupSupply((1.0 - lam) * kc, lam, lambda p: s * desired(p), low(kc), kc, kinks)
    su = GroupSupply(
        (1.0 - lam) * ku,
        lam,
        lambda p: (1.0 - s) * desired(p) + max(0.0, s * desired(p) - kc),
        low(ku),
        None if b is None else ku + b * k_before,
        kinks,
        crossings=((lambda p: s * desired(p), kc),),
    )
    return sc, su


@dataclass
class GroupState:
    """A grouped path between periods: the groups' homes at the end of the period before, the
    controlled rent Rc_(t-1), whether the rule bound then, and whether t is the rule's first."""

    kc: float
    ku: float
    rc: float
    bound: bool = False
    first: bool = True


def _group_period(
    c: Period,
    policy: dict,
    rule: Rule,
    t: int,
    state: GroupState,
    rationing: str,
    pi: float,
    index: float,
    pf_prev,
) -> tuple[Row, GroupState]:
    """MODEL.md sections 17 and 18: one period of a ceiling's controlled and other homes.

    Conversion (stock, kappa > 0, from the rule's second period, after a binding period):
    v_t = min(1, kappa max(0, ln(P^F_(t-1) / Rc_(t-1)))), Kc~ = (1 - v_t) Kc_(t-1). The rule's
    rent r_t; Rc(M) = (1 - tau) min(r_t, M) + tau M; comparator P^: Qd(P^) = Sc(P^) + Su(P^);
    the rule binds when r_t < P^ and tau < 1 (then r_t < M_t, since M_t >= P^, and M_t = P^
    otherwise), and M_t solves Qd(M) = Sc(Rc(M)) + Su(M). Welfare (per price interval):
    tenants (P^ - Rc) Kc and -(M - P^) Ku, priced out -int_Q^Q^ (Qd^-1 - P^) dq, owners
    -int_Rc^P^ Sc dp and int_P^^M Su dp, DWL = -(their sum)."""
    v = 0.0
    if rule.kappa > 0.0 and not state.first and state.bound:
        v = min(1.0, rule.kappa * max(0.0, math.log(pf_prev / state.rc)))
    converted = v * state.kc
    kc_after = (1.0 - v) * state.kc
    sc, su = group_supplies(c, rule, kc_after, state.ku, state.kc + state.ku)
    r = ceiling_rent(policy, c.p0, state.rc, pi, index)
    tau = rule.tau
    p_hat = _bracket_root(lambda p: c.qd(p) - sc(p) - su(p), c.p0)
    binding = r < p_hat and tau < 1.0
    groups = _zero_groups()
    if not binding:
        kc, ku = sc(p_hat), su(p_hat)
        q = kc + ku
        row = Row(p_hat, p_hat, q, q, q, False, distribution=groups)
        m = rc = p_hat
    else:

        def rent(m):
            return (1.0 - tau) * min(r, m) + tau * m

        m = _bracket_root(lambda p: c.qd(p) - sc(rent(p)) - su(p), p_hat)
        rc = rent(m)
        kc, ku = sc(rc), su(m)
        q = kc + ku
        pc = (rc * kc + m * ku) / q
        qd = c.qd(r) if tau == 0.0 else q
        row = Row(pc, pc, q, qd, q, True, shortage=qd - q)
        q_hat = c.qd(p_hat)
        groups["tenants_in_controlled_homes"] = (p_hat - rc) * kc
        groups["tenants_in_uncontrolled_homes"] = -(m - p_hat) * ku
        groups["households_priced_out"] = -integral(lambda x: c.pd(x) - p_hat, q, q_hat, offset=p_hat)
        groups["owners_of_controlled_homes"] = -integral(sc, rc, p_hat, sc.points(rc, p_hat))
        groups["owners_of_uncontrolled_homes"] = integral(su, p_hat, m, su.points(p_hat, m))
        row.dcs = sum(groups[g] for g in TENANTS)
        row.dps = sum(groups[g] for g in OWNERS)
        row.dwl = -(row.dcs + row.dps)
        row.distribution = groups
        if rationing == "random":  # only a whole-market rule gets here (Rule.of)
            row.mis = integral(c.pd, 0.0, q) - (q / qd) * integral(c.pd, 0.0, qd)
            row.dcs -= row.mis
            row.dwl += row.mis
    row.marginal_value = m
    row.marginal_cost = None if rule.whole else m
    row.comparator_price = p_hat
    if rule.split:
        row.covered_price, row.uncovered_price = rc, m
        row.covered_quantity, row.uncovered_quantity = kc, ku
    row.converted_homes = converted
    return row, GroupState(kc, ku, rc, binding, first=False)


def _run(
    request: dict,
    policy: dict,
    index: list[float],
    free_path: list[Row] | None = None,
    grouped: bool | None = None,
) -> list[Row]:
    """One path, t = 0..T, in real money; a stock path carries its own standing homes K_t.

    ``free_path`` (the free path's rows) gives P^F for conversion; ``grouped`` forces (True)
    or forbids (False) section 17's clearing of a ceiling, for tests that compare methods."""
    rationing = request.get("welfare", {}).get("rationing", "efficient")
    stock = is_stock(request)
    rule = Rule.of(request, policy)
    if grouped is not None:
        rule = Rule(**{**rule.__dict__, "grouped": grouped and policy["kind"] == "price_ceiling"})
    s = rule.s
    start, end = policy.get("start", 1), policy.get("end", 10**9)
    p0, q0 = request["market"]["price"], request["market"]["quantity"]
    base = Row(p0, p0, q0, q0, q0, False, distribution=_zero_groups())
    if rule.split:
        _split_free(base, s)
    if stock:
        base.homes_standing, base.vacant_homes, base.converted_homes = q0, 0.0, 0.0
    rows = [base]
    previous, k_prev = p0, q0
    state: GroupState | None = None
    for t in range(1, request["horizon"] + 1):
        c = StockPeriod.at(request, t, k_prev) if stock else Period.of(request, t)
        pi = inflation_rate(request, t)
        if rule.grouped and start <= t <= end:
            if state is None:  # the rule's first period: the standing homes split s, 1-s
                state = GroupState(s * k_prev, (1.0 - s) * k_prev, previous)
            pf_prev = free_path[t - 1].pc if free_path is not None else None
            row, state = _group_period(c, policy, rule, t, state, rationing, pi, index[t], pf_prev)
            k_now = row.q
            previous = state.rc
        else:
            state = None
            row = policy_period(c, policy, t, previous, rationing, pi, index[t])
            if rule.split and row.covered_price is None:
                _split_free(row, s)
            floor = c.floor() if stock else None
            k_now = row.q if floor is None else max(row.q, floor)
            previous = row.covered_price if s < 1.0 else row.pc
            if stock:
                row.converted_homes = 0.0
        if stock:
            row.homes_standing, row.vacant_homes = k_now, k_now - row.q
        rows.append(row)
        k_prev = k_now
    return rows


FREE = {"name": "free path", "kind": "none"}


def paths(request: dict) -> dict[str, list[Row]]:
    """Every policy's rows for t = 0..T, by policy name (a Python loop, as a baseline)."""
    index = price_index(request)
    k = request["market"].get("payments_per_period", 1)
    random = request.get("welfare", {}).get("rationing", "efficient") == "random"
    stock = is_stock(request)
    build_limit(request)
    conversion(request)
    _check_rationing(request)
    free_path = _run(request, FREE, index) if stock else None
    out: dict[str, list[Row]] = {}
    for policy in request["policies"]:
        rows = _run(request, policy, index, free_path)
        for t, row in enumerate(rows):
            row.price_index = index[t]
            row.nominal_consumer_price = row.pc * index[t]
            row.nominal_producer_price = row.pp * index[t]
            if free_path is not None:
                free = free_path[t]
                row.homes_below_free_path = free.q - row.q
                row.rent_above_free_path = row.pc - free.pc
                row.renters, row.extra_rent = _vs_free_path(request, t, row, free)
            if random:
                row.distribution = None
            else:
                row.distribution = {name: k * value for name, value in row.distribution.items()}
        out[policy["name"]] = rows
    return out


def _check_rationing(request: dict) -> None:
    """MODEL.md section 11: random rationing with constant-elasticity demand and |eta| <= 1 is
    an input error when the request has any price ceiling (misallocation needs finite
    willingness to pay)."""
    market = request["market"]
    random = (request.get("welfare") or {}).get("rationing", "efficient") == "random"
    form = market.get("form", "linear")
    inelastic = form == "constant_elasticity" and market["demand"]["price_elasticity"] >= -1.0
    if random and inelastic and any(p["kind"] == "price_ceiling" for p in request["policies"]):
        raise ValueError("random rationing needs |eta| > 1 under constant-elasticity demand with a ceiling")


def _vs_free_path(request: dict, t: int, row: Row, free: Row) -> tuple[float, float]:
    """MODEL.md section 19 (per price interval): renters_t = -int_(Q_t)^(Q^F_t) (Qd_t^-1 - P^F_t)
    dq - (Pc_t - P^F_t) Q_t - misallocation_t, extra_rent_t = (Pc_t - P^F_t) Q_t."""
    if t == 0:
        return 0.0, 0.0
    demand = Period.of(request, t)
    extra = (row.pc - free.pc) * row.q
    area = integral(lambda x: demand.pd(x) - free.pc, row.q, free.q, offset=free.pc)
    return -area - extra - row.mis, extra


def supply_elasticities(request: dict) -> list[float]:
    """The reported ``supply_elasticity`` series, t = 0..T (section 2, or 13 under stock;
    period 0 the impact elasticity of section 20)."""
    if not is_stock(request):
        return [supply_elasticity(request, t) for t in range(request["horizon"] + 1)]
    free_path = _run(request, FREE, price_index(request))
    out = [impact_elasticity(request)]
    for t in range(1, request["horizon"] + 1):
        c = StockPeriod.at(request, t, free_path[t - 1].homes_standing)
        out.append(c.elasticity_at(free_path[t].pc))
    return out


def summary(rows: list[Row], request: dict | None = None, policy: dict | None = None) -> dict:
    """The additions to a path's ``summary`` entry (money x k, like ``distribution``).

    Given the request and the policy, under ``stock`` also section 19's ``vs_free_path_totals``
    (``renters``, ``renters_discounted``, ``renters_after_end`` and ``extra_rent_after_end``:
    periods after the policy's ``end``, not discounted, 0 when it lasts to the horizon;
    ``extra_rent``), ``final_vacant_homes`` and ``total_converted_homes``."""
    totals = None
    if rows[0].distribution is not None:
        totals = {name: sum(r.distribution[name] for r in rows) for name in GROUPS}
    below = [r.homes_below_free_path for r in rows]
    stock = below[0] is not None
    out = {
        "distribution_totals": totals,
        "final_homes_below_free_path": below[-1] if stock else None,
        "peak_homes_below_free_path": max(below) if stock else None,
    }
    if request is not None and stock:
        k = request["market"].get("payments_per_period", 1)
        end = (policy or {}).get("end", 10**9)
        after = [t for t in range(len(rows)) if t > end]
        out["vs_free_path_totals"] = {
            "renters": k * sum(r.renters for r in rows),
            "renters_discounted": k
            * sum(r.renters * discount_factor(request, t) for t, r in enumerate(rows)),
            "renters_after_end": k * sum(rows[t].renters for t in after),
            "extra_rent": k * sum(r.extra_rent for r in rows),
            "extra_rent_after_end": k * sum(rows[t].extra_rent for t in after),
        }
        out["final_vacant_homes"] = rows[-1].vacant_homes
        out["total_converted_homes"] = sum(r.converted_homes for r in rows)
    return out


def discount_factor(request: dict, s: int) -> float:
    """prod_(u<=s) 1/(1+r_u), MODEL.md section 6."""
    rate = request.get("welfare", {}).get("discount_rate", 0.0)
    factor = 1.0
    for u in range(1, s + 1):
        if isinstance(rate, list):
            r = next((step["rate"] for step in rate if u <= step["through_period"]), rate[-1]["rate"])
        else:
            r = rate
        factor /= 1.0 + r
    return factor


def discounted_group_sums(body: dict, request: dict, groups) -> list[list[float]]:
    """Per policy of an answer, each group's `distribution` series summed with this module's
    discount factors (MODEL.md section 6), in the order of `groups` (names): what the engine's
    `distribution_totals_discounted` must equal, computed without the engine."""
    factors = [discount_factor(request, t) for t in range(len(body["periods"]))]
    return [
        [sum(v * f for v, f in zip(path["distribution"][g], factors, strict=True)) for g in groups]
        for path in body["paths"]
    ]


# --- What has no answer, the reduced form, the other curve form ------------------------------


def own_curves(request: dict, rows: list[Row], t: int) -> Period:
    """A path's period-t curves: on its own standing homes K_(t-1) under ``stock`` (pooled,
    whatever its groups), else the period's curves."""
    if is_stock(request):
        return StockPeriod.at(request, t, rows[t - 1].homes_standing)
    return Period.of(request, t)


def no_answer(request: dict, rows: list[Row]) -> bool:
    """True where a path has no answer (MODEL.md sections 4 and 11): Q, Pc or Pp <= 0 in some
    period, or a free market of the path's own curves at or below zero."""
    q0 = request["market"]["quantity"]
    for t, r in enumerate(rows):
        if r.q <= 1e-9 * q0 or r.pc <= 0 or r.pp <= 0:
            return True
        if t and min(free_market(own_curves(request, rows, t))) <= 0:
            return True
    return False


def answers(request: dict) -> dict[str, list[Row]] | None:
    """``paths(request)``, or None where the request has no answer (an input error)."""
    try:
        out = paths(request)
    except (ValueError, ZeroDivisionError, OverflowError):
        return None
    if is_stock(request):
        free = _run(request, FREE, price_index(request))
        if no_answer(request, free):
            return None
    if any(no_answer(request, rows) for rows in out.values()):
        return None
    return out


def reduced_form(request: dict) -> dict[str, dict]:
    """MODEL.md section 7, every declared shifter: price elasticity eta_i/(eps - eta) (demand)
    and -eps_j/(eps - eta) (supply), quantity eps eta_i/(eps - eta) and -eta eps_j/(eps - eta),
    summed where a name shifts both curves; short run at the impact elasticity (section 20),
    long run at eps_LR."""
    market = request["market"]
    eta = market["demand"]["price_elasticity"]
    demand = market["demand"].get("shifters", {})
    supply = market["supply"].get("shifters", {})
    out = {}
    for name in {**demand, **supply}:
        out[name] = {}
        for row, eps in (
            ("short_run", impact_elasticity(request)),
            ("long_run", market["supply"]["long_run_elasticity"]),
        ):
            d, s = demand.get(name, 0.0), supply.get(name, 0.0)
            out[name][row] = {
                "price": (d - s) / (eps - eta),
                "quantity": (eps * d - eta * s) / (eps - eta),
            }
    return out


def other_form(request: dict) -> dict[str, dict | None]:
    """MODEL.md section 20: per policy, ``discounted_deadweight_loss`` (x k),
    ``final_consumer_price`` and ``peak_shortage`` of the same request in the other curve form,
    or None where that form has no answer for the policy (each policy solved alone: a path's
    numbers do not depend on the other policies)."""
    form = request["market"].get("form", "linear")
    other = "constant_elasticity" if form == "linear" else "linear"
    swapped = copy.deepcopy(request)
    swapped["market"]["form"] = other
    k = request["market"].get("payments_per_period", 1)
    out: dict[str, dict | None] = {}
    try:  # a rule of the whole request (random rationing, |eta| <= 1, any ceiling): no answer at all
        _check_rationing(swapped)
    except ValueError:
        return dict.fromkeys((p["name"] for p in request["policies"]), None)
    for policy in request["policies"]:
        solved = answers(dict(swapped, policies=[policy]))
        if solved is None:
            out[policy["name"]] = None
            continue
        rows = solved[policy["name"]]
        out[policy["name"]] = {
            "form": other,
            "discounted_deadweight_loss": sum(
                k * r.dwl * discount_factor(request, t) for t, r in enumerate(rows)
            ),
            "final_consumer_price": rows[-1].pc,
            "peak_shortage": max(r.shortage for r in rows),
        }
    return out

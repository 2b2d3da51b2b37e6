"""An independent scalar reference for the model, written from ../shared/MODEL.md alone.

One scenario, one period, one policy at a time, in plain Python floats: equilibria and
wedge roots by scipy.optimize.brentq on bracketed excess demand, every welfare integral by
scipy.integrate.quad. Slow on purpose and shares no code with service/engine: the tests
compare the vectorised engine against it, and the benchmarks time it as the scalar
baseline.

Additions (MODEL.md sections 12-15; names as in API.md "Additions")
-------------------------------------------------------------------
Request fields understood, besides the core ones:

- ``market.inflation``: a number, or a list of per-period rates for periods 1, 2, ... (the
  last holds); default 0. ``price_index(request)`` gives I_0..I_T.
- ``"indexed": true`` on a ceiling or floor ``level`` (also on ``"base"``: the real P0), a
  ceiling ``growth`` cap, a ``unit_tax`` or a ``unit_subsidy``. Real values used in period t
  (section 12): level L -> L/I_t (indexed: L); ``"base"`` -> P0/I_t; growth cap g ->
  (1+g) Pc_(t-1)/(1+pi_t) (indexed: (1+pi_t+g) Pc_(t-1)/(1+pi_t)); tax or subsidy tau ->
  tau/I_t (indexed: tau); ad valorem rate and quantity cap unchanged.
- ``"adjustment": {"schedule": "stock", "rate": lambda | "half_life": h, "depreciation": delta}``
  (section 13): every path carries its own stock K_t = Q_t, supply
  Qs_t(P) = max((1-lambda) K_(t-1) + lambda Kstar_t(P), (1-delta) K_(t-1)) with Kstar_t the
  period-t supply curve at eps_LR; lambda defaults to eps_SR/eps_LR. ``stock_rate(request)``
  gives lambda; ``supply_elasticities(request)`` the reported ``supply_elasticity`` series
  (under ``stock``: the free path's supply elasticity at its equilibrium, period 0 eps_SR).
- ``"coverage": s`` in (0, 1] on a ``price_ceiling`` (section 14); s = 1 (or absent) is the
  full ceiling, computed by exactly the code of a full ceiling.
- ``welfare.rationing``: ``"random"`` with a ceiling of coverage < 1 is a ValueError.

``paths(request)`` returns ``{policy name: [Row for t = 0..T]}``. Each ``Row`` has the core
attributes ``pc, pp, q, qd, qs, binding, shortage, excess, dcs, dps, g, dwl, mis`` (real money
of period 0; the money ones per price interval, NOT multiplied by k, as before) and, per
period, these new attributes under their API names:

- ``price_index`` (I_t), ``nominal_consumer_price`` (pc x I_t), ``nominal_producer_price``
  (pp x I_t): always present (I_t = 1 without inflation).
- ``covered_price``, ``uncovered_price``, ``covered_quantity``, ``uncovered_quantity``: on a
  ``price_ceiling`` with coverage s < 1, else None. Where the ceiling does not bind (or is not
  active, and in period 0) they are the free market split by share: covered_price =
  uncovered_price = P*, covered_quantity = s Q*, uncovered_quantity = (1-s) Q*. Where it
  binds: c_t, Pu, s Qs(c_t), (1-s) Qs(Pu); then pc = pp = (c Qc + Pu Qu)/Q, q = Qc + Qu,
  shortage = Qd(c) - Q, excess 0, qd = Qd(c) (what households would rent at the controlled
  rent, so that shortage = qd - q, as the service reports it) and qs = Q (the homes let in
  both segments, s Qs(c) + (1-s) Qs(Pu)).
- ``homes_below_free_path`` (free path's Q_t - this Q_t) and ``rent_above_free_path``
  (pc_t - free path's P*_t): under the ``stock`` schedule, else None; the free path is the
  scenario with no policy on its own stock, computed even if no policy has kind ``none``.
- ``distribution``: a dict with the six groups ``tenants_in_controlled_homes``,
  ``tenants_in_uncontrolled_homes``, ``households_priced_out``, ``owners_of_controlled_homes``,
  ``owners_of_uncontrolled_homes``, ``government``, each ALREADY multiplied by k (money per
  model period, as the API reports it); all 0 where the policy does not bind and in period 0;
  None on every path under random rationing. Tenants' groups sum to k dcs, owners' to k dps,
  all six to -k dwl.

``summary(rows)`` gives ``distribution_totals`` (sums over periods, or None),
``final_homes_below_free_path`` and ``peak_homes_below_free_path`` (the largest value over
t = 0..T; None without ``stock``).

Readings of the note made here: owners "with Pp" outside ceilings use the quantity actually
let, Pp Q - P* Q* + int_Q^Q* Qs^-1 (equal to Qs(Pp) except under a floor or a quantity cap),
so that the owners' groups sum to section 6's dPS; under a full ceiling tenants in
uncontrolled homes and owners of uncontrolled homes are 0. Under ``stock`` the covered and
uncovered segments are scale copies of the one stock curve (s Qs_t, (1-s) Qs_t, with the
path's total K_(t-1)); no separate stock per segment is kept.
"""

from __future__ import annotations

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
)


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
    """Section 13: the period-t supply of a durable stock K_(t-1) (``eps`` is eps_LR).

    Qs_t(P) = max((1-lam) K_(t-1) + lam Kstar_t(P), (1-delta) K_(t-1)), Kstar_t = the
    period's supply curve at eps_LR (Period.qs). No depreciation (delta None): no floor.
    """

    lam: float = 1.0
    delta: float | None = None
    k_prev: float = 0.0

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
        )

    def desired(self, p: float) -> float:
        """Kstar_t(P)."""
        return Period.qs(self, p)

    def unfloored(self, p: float) -> float:
        return (1.0 - self.lam) * self.k_prev + self.lam * self.desired(p)

    def floor(self) -> float | None:
        return None if self.delta is None else (1.0 - self.delta) * self.k_prev

    def qs(self, p: float) -> float:
        floor = self.floor()
        value = self.unfloored(p)
        return value if floor is None else max(value, floor)

    def ps(self, q: float) -> float:
        """0 up to the quantity offered at price 0, else the price on the unfloored branch."""
        if q <= self.qs(0.0):
            return 0.0
        return Period.ps(self, (q - (1.0 - self.lam) * self.k_prev) / self.lam)

    def supply_kinks(self) -> tuple[float, ...]:
        return (self.qs(0.0),)

    def elasticity_at(self, p: float) -> float:
        """Point elasticity of this period's supply at price p (0 where the floor binds)."""
        floor = self.floor()
        value = self.unfloored(p)
        if floor is not None and value < floor:
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
    scale = max(abs(f(lo + x * width)) for x in (0.25, 0.5, 0.75)) * width  # inside: f(0) may be infinite
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
        if "growth" in policy:
            g = policy["growth"]
            if policy.get("indexed"):
                level = (1.0 + pi + g) * previous_pc / (1.0 + pi)
            else:
                level = (1.0 + g) * previous_pc / (1.0 + pi)
        else:
            level = real_level(policy, c.p0, index)
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
    groups["households_priced_out"] = -integral(lambda x: c.pd(x) - p_star, q, q_star, offset=p_star)
    if kind == "price_ceiling":
        groups["tenants_in_controlled_homes"] = (p_star - row.pc) * q
        groups["owners_of_controlled_homes"] = row.pc * q - p_star * q_star + supply_area
    else:
        groups["tenants_in_uncontrolled_homes"] = -(row.pc - p_star) * q
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


def _run(request: dict, policy: dict, index: list[float]) -> list[Row]:
    """One path, t = 0..T, in real money; a stock path carries its own K_t = Q_t."""
    rationing = request.get("welfare", {}).get("rationing", "efficient")
    stock = is_stock(request)
    s = coverage(policy)
    p0, q0 = request["market"]["price"], request["market"]["quantity"]
    base = Row(p0, p0, q0, q0, q0, False, distribution=_zero_groups())
    if s < 1.0:
        _split_free(base, s)
    rows = [base]
    previous, k_prev = p0, q0
    for t in range(1, request["horizon"] + 1):
        c = StockPeriod.at(request, t, k_prev) if stock else Period.of(request, t)
        pi = inflation_rate(request, t)
        row = policy_period(c, policy, t, previous, rationing, pi, index[t])
        rows.append(row)
        previous = row.covered_price if s < 1.0 else row.pc
        k_prev = row.q
    return rows


def paths(request: dict) -> dict[str, list[Row]]:
    """Every policy's rows for t = 0..T, by policy name (a Python loop, as a baseline)."""
    index = price_index(request)
    k = request["market"].get("payments_per_period", 1)
    random = request.get("welfare", {}).get("rationing", "efficient") == "random"
    free_path = _run(request, {"name": "free path", "kind": "none"}, index) if is_stock(request) else None
    out: dict[str, list[Row]] = {}
    for policy in request["policies"]:
        rows = _run(request, policy, index)
        for t, row in enumerate(rows):
            row.price_index = index[t]
            row.nominal_consumer_price = row.pc * index[t]
            row.nominal_producer_price = row.pp * index[t]
            if free_path is not None:
                row.homes_below_free_path = free_path[t].q - row.q
                row.rent_above_free_path = row.pc - free_path[t].pc
            if random:
                row.distribution = None
            else:
                row.distribution = {name: k * value for name, value in row.distribution.items()}
        out[policy["name"]] = rows
    return out


def supply_elasticities(request: dict) -> list[float]:
    """The reported ``supply_elasticity`` series, t = 0..T (section 2, or 13 under stock)."""
    if not is_stock(request):
        return [supply_elasticity(request, t) for t in range(request["horizon"] + 1)]
    free_path = _run(request, {"name": "free path", "kind": "none"}, price_index(request))
    out = [request["market"]["supply"]["short_run_elasticity"]]
    for t in range(1, request["horizon"] + 1):
        c = StockPeriod.at(request, t, free_path[t - 1].q)
        out.append(c.elasticity_at(free_path[t].pc))
    return out


def summary(rows: list[Row]) -> dict:
    """The additions to a path's ``summary`` entry (money x k, like ``distribution``)."""
    totals = None
    if rows[0].distribution is not None:
        totals = {name: sum(r.distribution[name] for r in rows) for name in GROUPS}
    below = [r.homes_below_free_path for r in rows]
    stock = below[0] is not None
    return {
        "distribution_totals": totals,
        "final_homes_below_free_path": below[-1] if stock else None,
        "peak_homes_below_free_path": max(below) if stock else None,
    }


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

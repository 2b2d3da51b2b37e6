"""An independent scalar reference for the model, written from ../shared/MODEL.md alone.

One scenario, one period, one policy at a time, in plain Python floats: equilibria and
wedge roots by scipy.optimize.brentq on bracketed excess demand, every welfare integral by
scipy.integrate.quad. Slow on purpose and shares no code with service/engine: the tests
compare the vectorised engine against it, and the benchmarks time it as the scalar
baseline.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from scipy.integrate import quad
from scipy.optimize import brentq

QUAD = {"epsabs": 0.0, "epsrel": 1e-10, "limit": 200}
ROOT = {"xtol": 1e-13, "rtol": 4 * 2.220446049250313e-16, "maxiter": 500}


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
    """MODEL.md section 2."""
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

        return cls(
            form,
            market["price"],
            market["quantity"],
            market["demand"]["price_elasticity"],
            supply_elasticity(request, t),
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


def integral(f, a: float, b: float, kinks: tuple[float, ...] = ()) -> float:
    """quad of f from a to b (signed), split at kinks inside the interval."""
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
    options = dict(QUAD, epsabs=1e-12 * scale)
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


def policy_period(c: Period, policy: dict, t: int, previous_pc: float, rationing: str) -> Row:
    """One policy in one period against the free market of the period."""
    p_star, q_star = free_market(c)
    start, end = policy.get("start", 1), policy.get("end", 10**9)
    active = start <= t <= end and t >= 1
    kind = policy["kind"]
    free = Row(p_star, p_star, q_star, q_star, q_star, False)
    if not active or kind == "none":
        return free
    if kind == "price_ceiling":
        if "growth" in policy:
            level = (1.0 + policy["growth"]) * previous_pc
        else:
            level = c.p0 if policy["level"] == "base" else policy["level"]
        if not level < p_star:
            return free
        q = c.qs(level)
        row = Row(level, level, q, c.qd(level), q, True, shortage=c.qd(level) - q)
    elif kind == "price_floor":
        level = policy["level"]
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
        else:
            gap = policy["amount"] if kind == "unit_tax" else -policy["amount"]
            if gap == 0:
                return free

            def producer(pc, gap=gap):
                return pc - gap

        low = max(policy.get("amount", 0.0), 0.0) if kind == "unit_tax" else 0.0
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
    row.dcs = p_star * q_star - row.pc * q - integral(c.pd, q, q_star)
    kink = (c.q0 * (1.0 + c.supply - c.eps),) if c.form == "linear" else ()  # where ps reaches 0
    row.dps = row.pp * q - p_star * q_star + integral(c.ps, q, q_star, kink)
    row.g = (row.pc - row.pp) * q
    row.dwl = -(row.dcs + row.dps + row.g)
    if kind == "price_ceiling" and rationing == "random":
        qd = row.qd
        row.mis = integral(c.pd, 0.0, q) - (q / qd) * integral(c.pd, 0.0, qd)
        row.dcs -= row.mis
        row.dwl += row.mis
    return row


def paths(request: dict) -> dict[str, list[Row]]:
    """Every policy's rows for t = 0..T, by policy name (a Python loop, as a baseline)."""
    horizon = request["horizon"]
    rationing = request.get("welfare", {}).get("rationing", "efficient")
    out: dict[str, list[Row]] = {}
    for policy in request["policies"]:
        p0, q0 = request["market"]["price"], request["market"]["quantity"]
        rows = [Row(p0, p0, q0, q0, q0, False)]
        previous = p0
        for t in range(1, horizon + 1):
            row = policy_period(Period.of(request, t), policy, t, previous, rationing)
            rows.append(row)
            previous = row.pc
        out[policy["name"]] = rows
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

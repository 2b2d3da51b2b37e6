"""Shared hypothesis strategies: valid markets, shocks, schedules and policies as requests."""

from __future__ import annotations

from hypothesis import strategies as st


def _round(x: float) -> float:
    """Six significant digits, and nothing closer to zero than 1e-6 (but 0 itself)."""
    return 0.0 if abs(x) < 1e-6 else float(f"{x:.6g}")


def floats(lo: float, hi: float):
    return st.floats(lo, hi, allow_nan=False, allow_infinity=False).map(_round)


@st.composite
def markets(draw, form=None, elastic_demand=False):
    form = form or draw(st.sampled_from(["linear", "constant_elasticity"]))
    eta = draw(floats(-3.0, -1.05) if elastic_demand else floats(-3.0, -0.1))
    sr = draw(st.one_of(st.just(0.0), floats(0.01, 1.0)))
    lr = draw(st.one_of(st.just(sr), st.just(0.0), floats(0.01, 3.0)))
    return {
        "price": draw(floats(10.0, 5000.0)),
        "quantity": draw(floats(100.0, 1e6)),
        "payments_per_period": draw(st.sampled_from([1, 4, 12])),
        "form": form,
        "demand": {
            "price_elasticity": eta,
            "shifters": {"income": draw(floats(-1.5, 1.5)), "rate": draw(floats(-0.5, 0.0))},
        },
        "supply": {
            "short_run_elasticity": sr,
            "long_run_elasticity": lr,
            "shifters": {"cost": draw(floats(-1.0, 0.0)), "rate": draw(floats(-0.5, 0.0))},
        },
    }


def shocks(horizon: int):
    step = st.builds(
        lambda s, c, start: {"shifter": s, "profile": "step", "change": c, "start": start},
        st.sampled_from(["income", "cost", "rate"]),
        floats(-0.15, 0.25),
        st.integers(1, horizon),
    )
    ramp = st.builds(
        lambda s, c, n: {"shifter": s, "profile": "ramp", "change": c, "periods": n},
        st.sampled_from(["income", "cost", "rate"]),
        floats(-0.15, 0.25),
        st.integers(1, 5),
    )
    growth = st.builds(
        lambda s, r: {"shifter": s, "profile": "growth", "rate": r},
        st.sampled_from(["income", "cost"]),
        floats(-0.03, 0.04),
    )
    path = st.builds(
        lambda s, v: {"shifter": s, "profile": "path", "values": v},
        st.sampled_from(["income", "cost", "rate"]),
        st.lists(floats(-0.15, 0.25), min_size=1, max_size=horizon + 2),
    )
    return st.lists(st.one_of(step, ramp, growth, path), max_size=4)


@st.composite
def adjustments(draw, market, horizon):
    sr = market["supply"]["short_run_elasticity"]
    lr = market["supply"]["long_run_elasticity"]
    options = [
        st.builds(lambda k: {"schedule": "linear", "periods": k}, st.integers(0, 6)),
        st.builds(lambda r: {"schedule": "geometric", "rate": r}, floats(0.05, 1.0)),
        st.builds(lambda h: {"schedule": "geometric", "half_life": h}, floats(0.5, 6.0)),
        st.builds(
            lambda v: {"schedule": "explicit", "elasticities": v},
            st.lists(st.one_of(st.just(0.0), floats(0.01, 3.0)), min_size=1, max_size=horizon),
        ),
    ]
    if 0 < sr <= lr:
        options.append(st.just({"schedule": "geometric"}))
    if sr == lr:
        options.append(st.just(None))
    return draw(st.one_of(options))


@st.composite
def policy_lists(draw, market):
    p0, q0 = market["price"], market["quantity"]
    start = draw(st.integers(1, 3))
    end = draw(st.one_of(st.none(), st.integers(start, 8)))

    def timed(p):
        p = dict(p, start=start)
        if end is not None:
            p["end"] = end
        return p

    chosen = [
        {"name": "free", "kind": "none"},
        {"name": "ceiling", "kind": "price_ceiling", "level": _round(p0 * draw(floats(0.8, 1.2)))},
        {"name": "freeze", "kind": "price_ceiling", "level": "base"},
        timed({"name": "cap growth", "kind": "price_ceiling", "growth": draw(floats(-0.02, 0.06))}),
        {"name": "floor", "kind": "price_floor", "level": _round(p0 * draw(floats(0.9, 1.3)))},
        timed({"name": "tax", "kind": "unit_tax", "amount": _round(p0 * draw(floats(0.0, 0.2)))}),
        {"name": "vat", "kind": "ad_valorem_tax", "rate": draw(floats(0.0, 0.2))},
        timed({"name": "subsidy", "kind": "unit_subsidy", "amount": _round(p0 * draw(floats(0.0, 0.2)))}),
        {"name": "permits", "kind": "quantity_cap", "level": _round(q0 * draw(floats(0.85, 1.2)))},
    ]
    return chosen


@st.composite
def requests(draw, form=None, rationing=None):
    random_rationing = rationing == "random" or (rationing is None and draw(st.booleans()))
    market = draw(markets(form=form, elastic_demand=random_rationing))
    horizon = draw(st.integers(1, 8))
    request = {
        "market": market,
        "shocks": draw(shocks(horizon)),
        "horizon": horizon,
        "policies": draw(policy_lists(market)),
        "welfare": {
            "rationing": "random" if random_rationing else "efficient",
            "discount_rate": draw(
                st.one_of(
                    floats(0.0, 0.08),
                    st.just([{"through_period": 2, "rate": 0.035}, {"through_period": 5, "rate": 0.03}]),
                )
            ),
        },
    }
    adjustment = draw(adjustments(market, horizon))
    if adjustment is not None:
        request["adjustment"] = adjustment
    return request


# --- the additions of MODEL.md sections 12-15 ----------------------------------------------------

#: Policy kinds whose rule has money in it, and so may be `indexed` (MODEL.md 12).
INDEXABLE = ("price_ceiling", "price_floor", "unit_tax", "unit_subsidy")


def inflations():
    """market.inflation: 0, a constant rate, or per-period rates (the last holds)."""
    return st.one_of(
        st.just(0.0),
        floats(-0.03, 0.1),
        st.lists(floats(-0.03, 0.1), min_size=1, max_size=5),
    )


@st.composite
def stock_adjustments(draw, market):
    """The `stock` schedule (MODEL.md 13): a rate, a half-life, or the Nerlove default where it
    applies (0 < eps_SR <= eps_LR); with or without a depreciation floor."""
    sr = market["supply"]["short_run_elasticity"]
    lr = market["supply"]["long_run_elasticity"]
    options = [
        st.builds(lambda r: {"schedule": "stock", "rate": r}, floats(0.05, 1.0)),
        st.builds(lambda h: {"schedule": "stock", "half_life": h}, floats(0.5, 6.0)),
    ]
    if 0 < sr <= lr:
        options.append(st.just({"schedule": "stock"}))
    adjustment = draw(st.one_of(options))
    if draw(st.booleans()):
        adjustment["depreciation"] = draw(st.one_of(st.just(0.0), floats(0.001, 0.1)))
    return adjustment


@st.composite
def extended_requests(draw, form=None, stock=None):
    """Random valid requests of requests() (efficient rationing) with the new fields: inflation,
    the stock schedule (always, never or either: `stock`), a coverage on each price ceiling and
    `indexed` on each rule with money in it."""
    request = draw(requests(form=form, rationing="efficient"))
    request["market"]["inflation"] = draw(inflations())
    if stock is None:
        stock = draw(st.booleans())
    if stock:
        request["adjustment"] = draw(stock_adjustments(request["market"]))
    for policy in request["policies"]:
        if policy["kind"] == "price_ceiling":
            policy["coverage"] = draw(st.one_of(st.just(1.0), floats(0.05, 1.0)))
        if policy["kind"] in INDEXABLE:
            policy["indexed"] = draw(st.booleans())
    return request


# --- the second additions of MODEL.md sections 16-20 ---------------------------------------------


@st.composite
def building_adjustments(draw, market):
    """The `stock` schedule of stock_adjustments() with the bounds and conversion of MODEL.md 16
    and 18: each of `depreciation`, `build_limit` (b > 0) and `conversion` (kappa >= 0) present
    or not."""
    adjustment = draw(stock_adjustments(market))
    if draw(st.booleans()):
        adjustment["build_limit"] = draw(floats(0.001, 0.1))
    if draw(st.booleans()):
        adjustment["conversion"] = draw(st.one_of(st.just(0.0), floats(0.001, 0.5)))
    return adjustment


@st.composite
def building_requests(draw, form=None, stock=True):
    """Random valid requests of extended_requests() (efficient rationing) with the fields of
    MODEL.md 16-20: under `stock` (always by default) the bounds and conversion of
    building_adjustments(), `new_homes` on each price ceiling; `vacancy_decontrol` on growth
    caps (any schedule)."""
    request = draw(extended_requests(form=form, stock=stock))
    if stock:
        request["adjustment"] = draw(building_adjustments(request["market"]))
    for policy in request["policies"]:
        if policy["kind"] != "price_ceiling":
            continue
        if stock:
            policy["new_homes"] = draw(st.sampled_from(["covered", "exempt"]))
        if "growth" in policy and draw(st.booleans()):
            policy["vacancy_decontrol"] = draw(floats(0.01, 1.0))
    return request

"""Cautions computed from each case, worded for a council reader (MODEL.md sections 9 and 20).

Each caution appears only where its condition holds; `scenario_cautions` receives the facts
each condition needs (booleans, names, numbers) and decides nothing else. Sources: efficient
rationing makes a ceiling's deadweight loss a lower bound, and random rationing misallocates
(Glaeser & Luttmer 2003, *American Economic Review* 93(4)); controlled rents raise the rents of
uncontrolled homes (Fallis & Smith 1984, *American Economic Review* 74(1)); owners convert
controlled homes to other uses (Sims 2007, *Journal of Urban Economics* 61(1); Diamond,
McQuade & Qian 2019, *American Economic Review* 109(9)); short-run elasticity = lambda x
long-run elasticity under partial adjustment (Nerlove 1958, *The Dynamics of Supply*).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np

__all__ = [
    "FORM_GAP",
    "GENERAL_CAUTION",
    "INELASTIC_DEMAND",
    "LARGE_LOSS",
    "MISALLOCATION_SHARE",
    "OTHER_FORM_FIGURES",
    "form_gaps",
    "misallocation_shares",
    "scenario_cautions",
]

GENERAL_CAUTION = (
    "These are model estimates from the elasticities given: they inform, and do not replace, "
    "local market studies and the judgement of qualified analysts. Housing policy affects "
    "people's homes."
)

#: Two forms' values of one figure differ visibly when they differ by more than this share of
#: the larger (MODEL.md 20).
FORM_GAP = 0.10
#: A random-rationing misallocation loss above this share of the period's rent bill Pc Q k
#: comes mostly from willingness to pay far above the rent (MODEL.md 20).
MISALLOCATION_SHARE = 0.25
#: A conversion rate above this is cautioned as far above published ones. MODEL.md 18: a 30-50 %
#: rent gap that costs the controlled group 15 % of its homes in 10-15 years is kappa near 0.03
#: (a range from memory of Sims 2007 and Diamond, McQuade & Qian 2019, not read from the papers);
#: this is more than three times that.
HIGH_CONVERSION = 0.1
#: A demand price elasticity closer to zero than this (|eta| below it) is cautioned as far from
#: published estimates for rental housing: most lie between about -0.2 and -1 (from memory of
#: the surveys of Mayo 1981, "Theory and estimation in the economics of housing demand", Journal
#: of Urban Economics 10, and Hanushek & Quigley 1980, not read from the papers); this is a
#: quarter of the lowest of them.
INELASTIC_DEMAND = 0.05
#: A policy whose deadweight loss over the horizon passes this share of the base rent bill over
#: the horizon (P Q k (T + 1)) is named: a loss that large rests on what households would pay for
#: the last homes, the part of demand known least well (MODEL.md 20).
LARGE_LOSS = 0.25
#: The figures compared between the two curve forms, with the words a reader sees.
OTHER_FORM_FIGURES = {
    "discounted_deadweight_loss": "discounted deadweight loss",
    "final_consumer_price": "final consumer price",
    "peak_shortage": "peak shortage",
}


def misallocation_shares(
    names: Sequence[str],
    misallocation_loss: np.ndarray,
    consumer_price: np.ndarray,
    quantity: np.ndarray,
    payments_per_period: float,
) -> dict[str, tuple[float, int]]:
    """The `misallocation_shares` argument from one scenario's series, each (policies, T+1):
    per policy, the largest misallocation_loss_t / (Pc_t Q_t k) and its earliest period
    (policies without misallocation are left out)."""
    bill = consumer_price * quantity * payments_per_period
    share = np.divide(misallocation_loss, bill, out=np.zeros_like(bill), where=bill > 0.0)
    at = np.argmax(share, axis=1)
    return {
        name: (float(share[p, at[p]]), int(at[p])) for p, name in enumerate(names) if share[p, at[p]] > 0.0
    }


def _percent(x: float) -> str:
    """A share as a reader says it: 10 %, 37.5 %, 0.123 %; from 100 % whole (7,500 %)."""
    value = 100.0 * x
    return f"{value:,.0f} %" if abs(value) >= 99.95 else f"{value:.3g} %"


#: Large figures in words (the page and the briefing write them so too).
_LARGE = ((1e12, "trillion"), (1e9, "billion"), (1e6, "million"))


def _figure(x: float) -> str:
    """A figure to the precision an estimate has: four significant figures, from a million in
    words (314.2 million, not 314,215,561). A value that rounds up to the next word takes it
    (999,950,000 is 1 billion, not 1000 million; 9,999.6 is 10,000)."""
    for size, word in _LARGE:
        if abs(x) >= size * (1.0 - 5e-5):  # rounds to at least 1 of this word at four figures
            return f"{x / size:.4g} {word}"
    return f"{x:,.0f}" if abs(x) >= 9999.5 else f"{x:,.4g}"


def _homes(x: float) -> str:
    """A number of homes, whole from half a home, halves rounded up (292.5 is a model's number,
    not a count: 293 homes); below that two significant figures (0.31 homes)."""
    if abs(x) < 0.5:
        return f"{x:.2g} homes"
    whole = math.floor(abs(x) + 0.5)
    return f"{'-' if x < 0 else ''}{whole:,} {'home' if whole == 1 else 'homes'}"


#: Figures smaller than this share of their scale (the base rent bill over the horizon for money,
#: the base rent for prices, the base number of homes for quantities) are rounding, not results.
NEGLIGIBLE = 1e-9


def form_gaps(here: np.ndarray, there: np.ndarray, scale: np.ndarray) -> np.ndarray:
    """True where a figure's two curve forms differ visibly (MODEL.md 20), element by element:

        |a - b| > FORM_GAP x max(|a|, |b|)  and  max(|a|, |b|) > NEGLIGIBLE x scale

    (two values within rounding of zero agree; a NaN differs from nothing). `here`, `there`:
    this form's and the other form's values; `scale`: each figure's scale (money: the base rent
    bill over the horizon; price: the base rent; quantity: the base homes). Any one shape."""
    with np.errstate(invalid="ignore", over="ignore"):  # inf - inf: NaN, which differs from nothing
        larger = np.maximum(np.abs(here), np.abs(there))
        return (larger > NEGLIGIBLE * scale) & (np.abs(here - there) > FORM_GAP * larger)


def _names(names: Sequence[str]) -> str:
    return ", ".join(f"'{n}'" for n in names)


def _named_with(values: Mapping[str, Any], detail: Callable[[Any], str]) -> str:
    """Each policy named with its detail in brackets: "'freeze' (293 homes fewer), ..."."""
    return ", ".join(f"'{name}' ({detail(value)})" for name, value in values.items())


#: Per policy name, {figure: (this form's value, the other form's)} of the figures whose forms
#: differ (form_gaps), or None: no answer there.
OtherForm = Mapping[str, Mapping[str, tuple[float, float]] | None]


#: Why the constant-elasticity form refuses a whole request (MODEL.md 11: a price ceiling, random
#: rationing and demand with |eta| <= 1), for the other-form caution of a linear request.
RATIONING_REFUSED = (
    "Solved with the constant-elasticity curves instead, this request has no answer: there, with "
    "homes under a rent ceiling given out at random and demand this inelastic (a price elasticity "
    "between -1 and 0), the loss from homes going to households who value them less has no upper "
    "bound. The figures shown rest on the linear form alone."
)


def _other_form_caution(
    form: str, other_form: OtherForm, refused: bool = False, refusing: Sequence[str] = ()
) -> str | None:
    if refused:
        return RATIONING_REFUSED
    other = "constant-elasticity" if form == "linear" else "linear"
    differ, missing = [], []
    for policy, figures in other_form.items():
        if figures is None:
            missing.append(policy)
            continue
        for key, words in OTHER_FORM_FIGURES.items():
            if key in figures:
                this, there = figures[key]
                differ.append(f"'{policy}' {words} ({_figure(this)} here, {_figure(there)} there)")
    if not differ and not missing:
        return None
    parts = []
    if differ:
        parts.append(
            f"Solved with the {other} curves instead, these figures differ by more than "
            f"{_percent(FORM_GAP)} of the larger: " + "; ".join(differ) + ". The two forms agree only for "
            "small changes; read such figures as a range, not a point (the answer gives both forms' "
            "figures for each policy)."
        )
    if missing and refusing:
        verb = "leaves" if len(refusing) == 1 else "leave"
        parts.append(
            f"The {other} form refuses this request: there {_names(refusing)} {verb} zero or "
            "negative quantity or price. So the figures shown rest on this form alone."
        )
    elif missing:
        parts.append(
            f"The {other} form has no answer for {_names(missing)} (it leaves zero or negative "
            "quantity or price), so the figures shown rest on this form alone."
        )
    return " ".join(parts)


def scenario_cautions(
    *,
    form: str,
    ceiling_binds: bool,
    random_rationing: bool,
    never_binding: list[str],
    other_form: OtherForm,
    inflation: bool = False,
    stock: bool = False,
    partial_binds: bool = False,
    shortage: bool = False,
    lifted_ceilings: Sequence[str] = (),
    misallocation_shares: Mapping[str, tuple[float, int]] | None = None,
    exempt_binds: bool = False,
    conversion: bool = False,
    conversion_rate: float = 0.0,
    demand_elasticity: float | None = None,
    other_form_refusing: Sequence[str] = (),
    large_losses: Mapping[str, float] | None = None,
    caps_below_stock: Mapping[str, tuple[float, float]] | None = None,
    short_run_elasticity: float | None = None,
    impact_elasticity: float | None = None,
    other_form_refused: bool = False,
    held_to_horizon: Mapping[str, float] | None = None,
    unlet_homes_removed: bool = False,
    lossless_ceilings: Sequence[str] = (),
    more_homes: Mapping[str, tuple[float, int]] | None = None,
    unbound_changed: Sequence[str] = (),
) -> list[str]:
    """Sentences for one scenario, each only where its condition holds.

    form: the request's curve form ("linear" | "constant_elasticity").
    ceiling_binds: some price ceiling binds in some period (efficient rationing: its loss is a
        lower bound; random rationing: misallocation is included). Also adds, to what the model
        leaves out, the upkeep and quality of controlled homes and tenants who stay because their
        rent is low.
    random_rationing: the request's `welfare.rationing` is "random".
    never_binding: names of policies (not "none") that never bind over the horizon and leave the
        path as the free market's (said to equal it).
    inflation: the request has market.inflation (not 0).
    stock: the adjustment schedule is `stock`.
    partial_binds: a price ceiling with coverage < 1 binds.
    other_form: per policy name, {figure: (this form's value, the other form's value)} for the
        figures of OTHER_FORM_FIGURES whose two values differ visibly (form_gaps: by more than
        FORM_GAP of the larger, neither within rounding of zero; MODEL.md 20, the summary's
        other_form), or None where the other form has no answer for that policy. Each such
        figure is named; so is each policy without an answer.
    shortage: some path reports a shortage above 0 (peak_shortage > 0): what it counts.
    lifted_ceilings: names of binding price ceilings that end before the horizon; cautioned
        only when `stock` is False (without a stock their homes return at once).
    misallocation_shares: per policy name, (the largest misallocation_loss / (Pc Q k) over its
        periods, that period); cautioned under random rationing where a share passes
        MISALLOCATION_SHARE.
    exempt_binds: a price ceiling with `new_homes: "exempt"` or vacancy decontrol binds (its
        uncontrolled rents rise; with `partial_binds` the Fallis & Smith caution).
    conversion: some path converts controlled homes (converted_homes > 0): its rent effect is
        an upper bound (MODEL.md 18).
    conversion_rate: the request's conversion rate kappa; with `conversion`, a rate above
        HIGH_CONVERSION is named as far above published estimates.
    demand_elasticity: the demand's price elasticity eta (None: not known here); |eta| below
        INELASTIC_DEMAND is named as far from published estimates, with what it inflates.
    other_form_refusing: where the other form refuses the whole request because of some of its
        policies (its free market has an answer), those policies: named instead of every one.
    large_losses: per policy whose deadweight loss over the horizon passes LARGE_LOSS of the
        base rent bill over the horizon, that share: named, with what such a loss rests on.
    caps_below_stock: under `stock`, per quantity cap whose level is below the homes standing at
        the start, (its level, those homes): homes already built would stand empty under it.
    other_form_refused: the other form (constant elasticity, for a linear request) refuses the
        whole request: a price ceiling under random rationing with |eta| <= 1 (MODEL.md 11); the
        caution says so instead of naming every policy as without an answer.
    held_to_horizon: under `stock`, per policy still in force in the last period, the homes it
        leaves below the free path then (final_homes_below_free_path, only where above
        NEGLIGIBLE of the base homes): the years after the horizon, when those homes are built
        again, are not in its totals, so it compares well with a rule that ends earlier.
    lossless_ceilings: under `stock`, price ceilings that bind and show no deadweight loss (within
        NEGLIGIBLE of the rent bill over the horizon): their controlled homes are held at their
        bounds, so within each period the rule only moves money; its cost (homes converted and
        not built) is not in the within-period loss.
    more_homes: under `stock`, per price ceiling whose path has more homes than the free path in
        some period (homes_below_free_path below -NEGLIGIBLE of the base homes), the most extra
        homes and their period. MODEL.md 17 bounds each group of homes on its own (derived: the
        sum of the groups' depreciation floors keeps more than the market's one floor where the
        market shrinks), whether or not the rule binds: said to come from the model, not the rule.
    unbound_changed: under `stock`, price ceilings that never bind and yet leave fewer homes than
        the free path in some period (each group's build limit on its own, MODEL.md 17); with the
        ceilings of `more_homes` that never bind, they are not said to equal the free market.
    unlet_homes_removed: under `stock` without depreciation a price floor or quantity cap binds:
        homes offered and not let leave the stock at once (MODEL.md 16: K_t = Q_t), where with a
        depreciation rate they would stand empty and be offered again.
    short_run_elasticity, impact_elasticity: the given eps_SR and the impact elasticity used
        (ScenarioBatch.impact_elasticity: lambda eps_LR under `stock` with an explicit rate or
        half-life); under `stock`, a caution when they differ (MODEL.md 20).
    """
    out: list[str] = []
    head = _other_form_caution(form, other_form, other_form_refused, other_form_refusing)
    if head is not None:
        out.append(head)
    large = dict(large_losses or {})
    if large:
        which = _named_with(large, _percent)
        out.append(
            f"Deadweight loss larger than a quarter of all the rent the homes would bring over the "
            f"horizon: {which}. A loss this large rests on what households would pay for the last "
            "homes, the part of demand known least well (with constant-elasticity demand less "
            "responsive than -1 that value has no limit): read it as a sign that the rule "
            "holds the market far from where it would be, not as a measured cost."
        )
    if demand_elasticity is not None and abs(demand_elasticity) < INELASTIC_DEMAND:
        out.append(
            f"The demand price elasticity given, {demand_elasticity:g}, is far closer to zero than "
            "published estimates for rented homes (most between about -0.2 and -1). With demand "
            "this unresponsive, the figures that rest on what households would pay for homes they "
            "cannot get (the deadweight loss, and the losses of households priced out) become very "
            "large and very uncertain; check the elasticity against studies of this market."
        )
    if ceiling_binds and not random_rationing:
        out.append(
            "Binding price ceilings are evaluated with efficient rationing (units go to the buyers "
            "who value them most): their deadweight loss is a lower bound."
        )
    if ceiling_binds and random_rationing:
        out.append(
            "Binding price ceilings ration units at random among willing buyers; the misallocation "
            "loss is included in the deadweight loss and in the consumers' loss. Each year's homes "
            "are handed out afresh: in practice sitting tenants keep their homes, so who holds a "
            "controlled home also depends on earlier years, which the model does not follow."
        )
    if shortage:
        text = (
            "A shortage counts homes that households would rent at the controlled rent and cannot: "
            "it includes households that would take more space and households that would form "
            "(young adults leaving home, people moving to the area). It is not a count of "
            "households without a home."
        )
        if partial_binds or exempt_binds:
            text += (
                " Where only part of the homes is controlled, it counts households who would take a "
                "controlled home and do not get one; uncontrolled homes are let at their market "
                "rent, so it is not a queue for homes."
            )
        out.append(text)
    if random_rationing and misallocation_shares:
        large = [
            f"'{name}' ({_percent(share)} in period {period})"
            for name, (share, period) in misallocation_shares.items()
            if share > MISALLOCATION_SHARE
        ]
        if large:
            out.append(
                "Under random rationing the misallocation loss passes a quarter of the period's rent "
                "bill for " + ", ".join(large) + ". Such a loss comes from households that would pay far "
                "more than the rent and do not get a home, that is from the top of the demand curve, "
                "where demand is least known: treat its size with care."
            )
    if partial_binds or exempt_binds:
        which = []
        if partial_binds:
            which.append("covers only part of the homes")
        if exempt_binds:
            which.append("exempts new homes or resets rents between tenants")
        out.append(
            "A ceiling that "
            + " or ".join(which)
            + " can raise the rents of uncontrolled homes: households without a controlled home bid "
            "for them (Fallis & Smith 1984, American Economic Review 74(1)). Controlled homes are "
            "assumed to go to the households who value them most, so any such rise, and the loss "
            "shown, are lower bounds."
        )
    if conversion:
        out.append(
            "Controlled homes that owners convert to other uses leave the rental market, but "
            "the households that buy or use them still count as wanting to rent, so the rise in rents "
            "that conversion causes is an upper bound."
        )
        if conversion_rate > HIGH_CONVERSION:
            out.append(
                f"The conversion rate assumed here, {conversion_rate:g}, is more than three times the "
                "largest that published studies of rent control suggest (a few hundredths): the homes "
                "converted, and the rise in rents they cause, may be much overstated."
            )
    if random_rationing:
        out.append(
            "Who gains and who loses (distribution) is not reported under random rationing: the "
            "split between households who are drawn for a controlled home and those who are not is "
            "not tracked by the model; only the aggregate surplus changes are given."
        )
    if inflation:
        out.append(
            "With inflation, price ceilings and floors, growth caps, unit taxes and subsidies are "
            "nominal rules (fixed in money of the day unless indexed), so their real value falls "
            "over time. Every price is in real money of period 0 (a nominal price is the real price "
            "times the general price index); welfare is real and the discount rate is a real rate."
        )
    if stock:
        out.append(
            "Under the stock schedule homes not built stay missing, while a rule lasts and after it "
            "ends. The deadweight loss, and who gains and who loses within each year, count only each "
            "year's change against that year's free market on the same, already smaller, stock: "
            "they do not count the homes never built, so for a rule that lasts they need not grow as "
            "supply catches up (they can stay at the first year's size, shrink to nothing where "
            "building is limited, or grow with demand), and the split between tenants and owners is "
            "that of the short run. So the full cost of homes never built is larger than the "
            "deadweight loss shown; renters' gains and losses against the market that never had the "
            "rule, the years after the rule ends included, are reported separately (owners' are "
            "not), and the rents and homes against the free path show the rest."
        )
    if (
        stock
        and short_run_elasticity is not None
        and impact_elasticity is not None
        and not math.isclose(short_run_elasticity, impact_elasticity, rel_tol=1e-9, abs_tol=1e-12)
    ):
        out.append(
            f"Under the stock schedule with a given rate or half-life, building in the first year "
            f"responds to rents with elasticity {impact_elasticity:.3g} (the rate times the long-run "
            f"elasticity); the short-run elasticity given, {short_run_elasticity:.3g}, is not used. "
            "Leave out the rate and half-life to make the first-year response the short-run "
            "elasticity."
        )
    held = dict(held_to_horizon or {}) if stock else {}
    if held:
        which = _named_with(held, lambda homes: f"{_homes(homes)} fewer")
        out.append(
            f"Still in force at the end of the horizon, with fewer homes than without it: {which}. "
            "The years after the horizon are not counted: when such a rule ends, its missing homes "
            "take years to be built again (where a build limit holds building back in the market "
            "without the rule too, some never are), so its totals look better than those of a rule "
            "that ends within the horizon."
        )
    lossless = list(lossless_ceilings) if stock else []
    if lossless:
        verbs = "binds and yet shows" if len(lossless) == 1 else "bind and yet show"
        out.append(
            f"{_names(lossless)} {verbs} no value lost "
            "within each year: the controlled homes cannot shrink or grow faster than the stock allows, "
            "so within a year such a rule only moves money from owners to tenants. Its cost lies in the "
            "homes converted or never built, which that loss does not count: compare the homes and rents "
            "with the free market path."
        )
    below = dict(caps_below_stock or {}) if stock else {}
    if below:
        which = _named_with(below, lambda pair: f"{_homes(pair[0])} against {_homes(pair[1])} standing")
        out.append(
            f"A quantity cap below the homes standing at the start: {which}. Here the cap limits the "
            "homes let, so homes already built stand empty under it; a permit cap that limits only "
            "new building would leave them let, and its rents and losses would be smaller."
        )
    if stock and unlet_homes_removed:
        out.append(
            "Without a depreciation rate, homes offered under a price floor or permit cap that find "
            "no tenant leave the market at once instead of standing empty, so fewer homes remain "
            "after the rule ends than durable buildings would keep. Give a depreciation rate to keep "
            "unlet homes standing."
        )
    lifted = list(lifted_ceilings) if not stock else []
    if lifted:
        out.append(
            f"{_names(lifted)} {'ends' if len(lifted) == 1 else 'end'} before the horizon. Under this "
            "schedule the homes a ceiling kept "
            "from being built return the moment it ends, as if built overnight; real homes take years. "
            "Choose the stock schedule of adjustment to see the years after a ceiling ends."
        )
    extra = dict(more_homes or {}) if stock else {}
    if extra:
        which = _named_with(extra, lambda pair: f"up to {_homes(pair[0])} more, in period {pair[1]}")
        out.append(
            f"More homes than the market without the rule in some years, whether or not it binds: "
            f"{which}. In this model the homes under the rule and the other homes are two groups from "
            "the rule's start, and each loses at most the depreciation rate a year, so where the "
            "market shrinks the two together keep more homes than one market would. This comes from "
            "how the model counts the groups, not from a benefit of the rule."
        )
    changed = list(unbound_changed) if stock else []
    if changed:
        out.append(
            f"Fewer homes than the market without the rule in some years although it never binds: "
            f"{_names(changed)}. In this model the homes under the rule and the other "
            "homes are two groups from the rule's start, and each can be built only up to the build "
            "limit on its own, so the two together need not follow the market without the rule."
        )
    if never_binding:
        out.append(f"Never binds over the horizon, so it equals the free market: {_names(never_binding)}.")
    left_out = (
        "search costs, the owner-occupied market, and linked markets (nearby areas, other kinds of home)"
    )
    if ceiling_binds:
        left_out = (
            "upkeep and quality of controlled homes (owners may spend less on them), tenants who stay "
            "in a home because its rent is low, " + left_out
        )
    out.append(
        "Welfare figures compare each period with that period's free market under the model's "
        f"curves. The model leaves out {left_out}."
    )
    out.append(GENERAL_CAUTION)
    return out

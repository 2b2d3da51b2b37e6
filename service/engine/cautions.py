"""Cautions computed from each case.

First-order (linear) results drift from exact ones as shocks grow; where the largest shock
passes 10 % the caution states how far the two curve forms' free-market paths differ. Under
efficient rationing the deadweight loss of a binding ceiling is a lower bound (real rationing
also misallocates: Glaeser & Luttmer 2003, *American Economic Review* 93(4)). Policies that
never bind are named. Every answer carries the general caution.
"""

from __future__ import annotations

__all__ = ["GENERAL_CAUTION", "LARGE_SHOCK", "scenario_cautions"]

GENERAL_CAUTION = (
    "These are model estimates from the elasticities given: they inform, and do not replace, "
    "local market studies and the judgement of qualified analysts. Housing policy affects "
    "people's homes."
)

#: Largest fractional shock above which the two curve forms visibly differ.
LARGE_SHOCK = 0.10


def _percent(x: float) -> str:
    return f"{100.0 * x:.1f} %"


def scenario_cautions(
    *,
    form: str,
    largest_shock: float,
    largest_shock_period: int,
    alternate_feasible: bool,
    price_gap: float,
    price_gap_period: int,
    quantity_gap: float,
    ceiling_binds: bool,
    random_rationing: bool,
    never_binding: list[str],
    inflation: bool = False,
    stock: bool = False,
    partial_binds: bool = False,
) -> list[str]:
    """Sentences for one scenario; gaps are |other form / this form - 1| at their worst period."""
    out: list[str] = []
    other = "constant-elasticity" if form == "linear" else "linear"
    if largest_shock > LARGE_SHOCK:
        head = (
            f"The largest shock is {_percent(largest_shock)} (period {largest_shock_period}); "
            "above roughly 10-20 % first-order (linear) and constant-elasticity answers differ visibly."
        )
        if alternate_feasible:
            head += (
                f" Here the {other} form's free-market price differs by up to {_percent(price_gap)} "
                f"(period {price_gap_period}) and its quantity by up to {_percent(quantity_gap)}."
            )
        else:
            head += f" The {other} form cannot represent this shock (it leaves zero or negative quantity)."
        out.append(head)
    if ceiling_binds and not random_rationing:
        out.append(
            "Binding price ceilings are evaluated with efficient rationing (units go to the buyers "
            "who value them most): their deadweight loss is a lower bound."
        )
    if ceiling_binds and random_rationing:
        out.append(
            "Binding price ceilings ration units at random among willing buyers; the misallocation "
            "loss is included in the deadweight loss and in the consumers' loss."
        )
    if partial_binds:
        out.append(
            "A ceiling that covers only part of the homes raises the rents of uncontrolled homes: "
            "households without a controlled home bid for them (Fallis & Smith 1984, American "
            "Economic Review 74(1)). Controlled homes are assumed to go to the households who value "
            "them most, so the loss shown is a lower bound."
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
            "over time. Every price is in real money of period 0 (nominal prices: the real price "
            "times price_index); welfare is real and the discount rate is a real rate."
        )
    if stock:
        out.append(
            "Under the stock schedule homes not built stay missing after a policy ends "
            "(homes_below_free_path). The deadweight loss counts only each period's loss against "
            "that period's free market on the same stock, so the full cost of homes never built is "
            "larger than the within-period deadweight loss shown."
        )
    if never_binding:
        names = ", ".join(f"'{n}'" for n in never_binding)
        out.append(f"Never binds over the horizon, so it equals the free market: {names}.")
    out.append(
        "Welfare figures compare each period with that period's free market under the model's "
        "curves; they leave out search costs, quality changes and who holds which home."
    )
    out.append(GENERAL_CAUTION)
    return out

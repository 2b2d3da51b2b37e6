"""Plain names and units of every series and total an answer can carry: the one table that the
page (served as /ui/labels.json), the workbook, the charts and the briefing read.

Keys are the answer's own names; a value inside an object of the answer is keyed
`object.member` (`vs_free_path.renters`, `distribution.government`,
`distribution_totals.government`, `vs_free_path_totals.renters_discounted`,
`other_form.peak_shortage`). A name the table does not know (a series a newer engine emits)
still shows, under its own name with underscores as spaces (`label`), so every reader iterates
over what the answer carries rather than over a fixed list.

Units are templates in the analyst's words: `{currency}`, `{unit}` (one home),
`{quantity}` (homes), `{price_interval}` (month) and `{period}` (year). Money is labelled by
its basis everywhere: prices and welfare are in today's money (real money of period 0, MODEL.md
section 12) unless a name says nominal, which is money of the day.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

__all__ = [
    "BAND_KEY",
    "DEFAULT_UNITS",
    "INPUTS",
    "NOMINAL",
    "REAL",
    "SERIES",
    "TOTALS",
    "describe",
    "flatten",
    "input_rows",
    "label",
    "table",
    "unit",
]

REAL = "today's money (period 0)"

#: How a band chart's marks are worded, in the chart's own key (charts.band_key) and in the
#: page's caption of it alike: the outermost pair of percentiles shaded, each pair inside it
#: darker ("darker still" from the third on), and the line.
BAND_KEY = {
    "outer": "shaded: {low} to {high} percentile of {draws} draws",
    "inner": ("darker: {low} to {high}", "darker still: {low} to {high}"),
    "line": "line: each policy at the central values",
}
NOMINAL = "money of the day"
DEFAULT_UNITS = {
    "currency": "money",
    "quantity": "units",
    "unit": "unit",
    "price_interval": "price interval",
    "period": "period",
}

_PRICE = "{currency} per {unit} per {price_interval}, " + REAL
_NOMINAL_PRICE = "{currency} per {unit} per {price_interval}, " + NOMINAL
_HOMES = "{quantity}"
_FLOW = "{currency} per {period}, " + REAL
_SUM = "{currency}, " + REAL + ", summed over the horizon"
_DISCOUNTED = "{currency}, " + REAL + ", summed over the horizon and discounted to period 0"

#: Per-period series: name -> (plain label, the trade's term or "", unit template).
SERIES: dict[str, tuple[str, str, str]] = {
    "price_index": ("Price level", "price index", "index, period 0 = 1"),
    "supply_elasticity": ("Supply response this period", "supply elasticity", "elasticity, no unit"),
    "consumer_price": ("Rent paid", "consumer price", _PRICE),
    "producer_price": ("Rent received by owners", "producer price", _PRICE),
    "quantity": ("Homes let", "quantity traded", _HOMES),
    "quantity_demanded": ("Homes wanted at the rent paid", "quantity demanded", _HOMES),
    "quantity_supplied": ("Homes offered", "quantity supplied", _HOMES),
    "shortage": ("Homes wanted but not let", "shortage", _HOMES),
    "excess_supply": ("Homes offered but not let", "excess supply", _HOMES),
    "marginal_value": ("Value of the last home let to its tenant", "marginal value", _PRICE),
    "marginal_cost": ("Cost of the last home let", "marginal cost", _PRICE),
    "binding": ("The rule bites", "binding", "1 = yes, 0 = no"),
    "consumer_surplus_change": ("Renters gain (+) or lose (-)", "consumer surplus change", _FLOW),
    "producer_surplus_change": ("Owners gain (+) or lose (-)", "producer surplus change", _FLOW),
    "government_revenue": ("Government revenue (- = spending)", "government revenue", _FLOW),
    "deadweight_loss": ("Value lost to everyone", "deadweight loss", _FLOW),
    "misallocation_loss": ("Value lost as homes go to the wrong households", "misallocation loss", _FLOW),
    "cumulative_deadweight_loss": (
        "Value lost so far",
        "cumulative deadweight loss",
        "{currency}, " + REAL + ", summed over periods 0 to this one",
    ),
    "discounted_deadweight_loss": (
        "Value lost so far, discounted",
        "discounted deadweight loss",
        "{currency}, " + REAL + ", discounted to period 0, summed over periods 0 to this one",
    ),
    "nominal_consumer_price": ("Rent paid in money of the day", "nominal consumer price", _NOMINAL_PRICE),
    "nominal_producer_price": (
        "Rent received in money of the day",
        "nominal producer price",
        _NOMINAL_PRICE,
    ),
    "covered_price": ("Rent of controlled homes", "covered price", _PRICE),
    "uncovered_price": ("Rent of uncontrolled homes", "uncovered price", _PRICE),
    "covered_quantity": ("Controlled homes let", "covered quantity", _HOMES),
    "uncovered_quantity": ("Uncontrolled homes let", "uncovered quantity", _HOMES),
    "homes_below_free_path": (
        "Homes fewer than on the free market path",
        "homes below the free path",
        _HOMES,
    ),
    "rent_above_free_path": ("Rent above the free market path", "rent above the free path", _PRICE),
    "vacant_homes": ("Homes standing empty", "vacant homes", _HOMES),
    "converted_homes": ("Controlled homes converted to other uses", "conversion", _HOMES),
    "vs_free_path.renters": (
        "Renters gain (+) or lose (-) against the free market path",
        "renters' surplus vs the free path",
        _FLOW,
    ),
    "vs_free_path.extra_rent": (
        "Extra rent paid (+) or saved (-) against the free market path",
        "extra rent",
        _FLOW,
    ),
    "distribution.tenants_in_controlled_homes": ("Tenants in controlled homes", "", _FLOW),
    "distribution.tenants_in_uncontrolled_homes": ("Tenants in uncontrolled homes", "", _FLOW),
    "distribution.households_priced_out": ("Households priced or rationed out", "", _FLOW),
    "distribution.households_drawn_in": ("Households drawn in", "", _FLOW),
    "distribution.owners_of_controlled_homes": ("Owners of controlled homes", "", _FLOW),
    "distribution.owners_of_uncontrolled_homes": ("Owners of uncontrolled homes", "", _FLOW),
    "distribution.government": ("Government", "", _FLOW),
}

#: Summary figures (one per policy): name -> (plain label, the trade's term or "", unit template).
TOTALS: dict[str, tuple[str, str, str]] = {
    "total_deadweight_loss": ("Value lost to everyone, summed", "total deadweight loss", _SUM),
    "discounted_deadweight_loss": (
        "Value lost to everyone, discounted",
        "discounted deadweight loss",
        _DISCOUNTED,
    ),
    "peak_shortage": ("Most homes wanted but not let in a period", "peak shortage", _HOMES),
    "peak_shortage_period": ("Period of the most homes wanted but not let", "", "{period}"),
    "binding_periods": ("Periods in which the rule bites", "binding periods", "{period}s"),
    "final_consumer_price": ("Rent paid in the last period", "final consumer price", _PRICE),
    "final_quantity": ("Homes let in the last period", "final quantity", _HOMES),
    "total_consumer_surplus_change": (
        "Renters gain (+) or lose (-), summed",
        "consumer surplus change",
        _SUM,
    ),
    "total_producer_surplus_change": ("Owners gain (+) or lose (-), summed", "producer surplus change", _SUM),
    "total_government_revenue": ("Government revenue, summed", "government revenue", _SUM),
    "final_homes_below_free_path": (
        "Homes fewer than the free path, last period",
        "homes below the free path",
        _HOMES,
    ),
    "peak_homes_below_free_path": (
        "Homes fewer than the free path, at most",
        "homes below the free path",
        _HOMES,
    ),
    "final_vacant_homes": ("Homes standing empty, last period", "vacant homes", _HOMES),
    "total_converted_homes": ("Controlled homes converted, summed", "conversion", _HOMES),
    "vs_free_path_totals.renters": (
        "Renters gain (+) or lose (-) against the free path, summed",
        "renters' surplus vs the free path",
        _SUM,
    ),
    "vs_free_path_totals.renters_discounted": (
        "Renters gain (+) or lose (-) against the free path, discounted",
        "renters' surplus vs the free path",
        _DISCOUNTED,
    ),
    "vs_free_path_totals.renters_after_end": (
        "Renters gain (+) or lose (-) against the free path after the rule ends, summed",
        "",
        _SUM,
    ),
    "vs_free_path_totals.extra_rent": (
        "Extra rent paid (+) or saved (-) against the free path, summed",
        "extra rent",
        _SUM,
    ),
    "vs_free_path_totals.extra_rent_after_end": (
        "Extra rent paid (+) or saved (-) after the rule ends, summed",
        "extra rent",
        _SUM,
    ),
    "other_form.form": ("The other curve form", "", ""),
    "other_form.discounted_deadweight_loss": (
        "Value lost, discounted, in the other curve form",
        "discounted deadweight loss",
        _DISCOUNTED,
    ),
    "other_form.final_consumer_price": ("Rent paid in the last period, other curve form", "", _PRICE),
    "other_form.peak_shortage": ("Most homes wanted but not let, other curve form", "peak shortage", _HOMES),
    **{
        f"distribution_totals.{key[len('distribution.') :]}": (value[0] + ", summed", value[1], _SUM)
        for key, value in SERIES.items()
        if key.startswith("distribution.")
    },
    **{
        f"distribution_totals_discounted.{key[len('distribution.') :]}": (
            value[0] + ", discounted",
            value[1],
            _DISCOUNTED,
        )
        for key, value in SERIES.items()
        if key.startswith("distribution.")
    },
}
#: A summary's nested figures under the flat names bands and sensitivity give them (the
#: engine's summary names): `distribution_totals.government` is `total_government`. The page
#: reads these too (table()), to find a figure's band.
FLAT_NAMES = (
    ("distribution_totals.", "total_"),
    ("distribution_totals_discounted.", "discounted_"),
    ("vs_free_path_totals.", "vs_free_path_"),
)
TOTALS.update(
    {
        flat + key[len(nested) :]: value
        for nested, flat in FLAT_NAMES
        for key, value in list(TOTALS.items())
        if key.startswith(nested)
    }
)


_PCT = "a fraction: 0.025 or 2.5 %"
#: Request fields: `section.field` or `field` -> (plain label, the trade's term or "", a hint).
#: Sections: market, demand, supply, adjustment, shocks, policies, welfare, and "" (top level).
INPUTS: dict[str, tuple[str, str, str]] = {
    "market.price": ("Rent today", "base price", "{currency} per {unit} per {price_interval}, " + REAL),
    "market.quantity": ("Homes let today", "base quantity", "{quantity}"),
    "market.payments_per_period": (
        "Rent payments per period",
        "payments per period",
        "12 for monthly rents counted in yearly periods (default 1)",
    ),
    "market.form": ("Shape of the curves", "curve form", "linear, or constant elasticity"),
    "market.inflation": (
        "Inflation per period",
        "general inflation",
        _PCT + ", or several rates separated by commas (the last holds); rents and welfare stay in " + REAL,
    ),
    "demand.price_elasticity": (
        "How homes wanted respond to rent",
        "price elasticity of demand",
        "below 0, e.g. -0.3: 1 % higher rent, 0.3 % fewer homes wanted",
    ),
    "supply.short_run_elasticity": (
        "How homes offered respond to rent, first period",
        "short-run supply elasticity",
        "0 or more",
    ),
    "supply.long_run_elasticity": (
        "How homes offered respond to rent, in the long run",
        "long-run supply elasticity",
        "0 or more",
    ),
    "shifters": ("Response to", "shifter elasticity", "1 % more of it moves the curve this many %"),
    "horizon": ("Periods to compute", "horizon", "whole {period}s after period 0"),
    "adjustment.schedule": ("How supply catches up", "adjustment schedule", ""),
    "adjustment.periods": ("Periods for supply to catch up", "", ""),
    "adjustment.rate": ("Share of the gap closed per period", "adjustment rate", _PCT),
    "adjustment.half_life": ("Periods to close half the gap", "half-life", ""),
    "adjustment.elasticities": ("Supply elasticity per period", "elasticity schedule", "comma-separated"),
    "adjustment.depreciation": ("Largest share of homes lost per period", "depreciation", _PCT),
    "adjustment.build_limit": ("Largest share of homes added per period", "build limit", _PCT),
    "adjustment.conversion": (
        "How fast controlled homes leave renting when their rent lags",
        "conversion rate",
        "0 or more; about 0.03 is typical",
    ),
    "shocks.shifter": ("What changes", "shifter", ""),
    "shocks.profile": ("How it changes", "shock profile", ""),
    "shocks.change": ("Real change", "shock size", _PCT + "; a real change (beyond inflation)"),
    "shocks.rate": ("Real growth per period", "growth rate", _PCT + "; a real rate (beyond inflation)"),
    "shocks.values": ("Real change per period", "shock path", "fractions, comma-separated; real changes"),
    "shocks.periods": ("Periods to reach the change", "ramp length", ""),
    "shocks.start": ("First period", "start", ""),
    "policies.name": ("Name", "", ""),
    "policies.kind": ("Rule", "policy kind", ""),
    "policies.level": (
        "Rent limit",
        "ceiling level",
        "{currency} per {unit} per {price_interval}, or base (today's rent); empty for a largest rent rise",
    ),
    # A level is a rent floor or a count of homes under those kinds (`<kind>.level`).
    "price_floor.level": ("Lowest rent allowed", "price floor", "{currency} per {unit} per {price_interval}"),
    "quantity_cap.level": ("Most homes let", "quantity cap, e.g. a permit cap", "{quantity}"),
    "policies.growth": ("Largest rent rise per period", "growth cap", _PCT),
    "policies.amount": (
        "Amount per home",
        "unit tax or subsidy",
        "{currency} per {unit} per {price_interval}",
    ),
    "policies.rate": ("Tax rate", "ad valorem tax", _PCT),
    "policies.coverage": (
        "Share of homes under the rule",
        "coverage",
        "above 0, up to 1 (default 1: every home)",
    ),
    "policies.indexed": ("Moves with inflation", "indexed", ""),
    "policies.base_level": ("Frozen at today's rent", "rent freeze", "a ceiling at the base rent"),
    "policies.new_homes": (
        "Homes built after the rule starts",
        "new homes",
        "covered, or exempt (stock only)",
    ),
    "policies.vacancy_decontrol": (
        "Share of tenancies that end each period and re-let at the market rent",
        "vacancy decontrol",
        "above 0, up to 1 (growth caps only)",
    ),
    "policies.start": ("First period of the rule", "start", "default 1"),
    "policies.end": ("Last period of the rule", "end", "empty: to the horizon"),
    "welfare.rationing": ("Who gets the controlled homes", "rationing", ""),
    "welfare.discount_rate": ("Discount rate per period", "real discount rate", _PCT),
    "output": ("Answer with", "", "full: every series; summary: the totals only"),
    "draws": ("Draws", "Monte Carlo draws", ""),
    "seed": ("Seed", "random seed", "same seed, same answer"),
    "percentiles": ("Percentiles", "", "comma-separated, 0 to 100"),
    "supply_correlation": ("Correlation of the short- and long-run supply draws", "", "-1 to 1"),
}


def _lookup(name: str, kind: dict) -> tuple[str, str, str] | None:
    if name in kind:
        return kind[name]
    leaf = name.rsplit(".", 1)[-1]
    return kind.get(leaf) or SERIES.get(name) or TOTALS.get(name)


def label(name: str, totals: bool = False, term: bool = True) -> str:
    """The plain label, with the trade's term in brackets (unknown names: underscores as spaces)."""
    found = _lookup(name, TOTALS if totals else SERIES)
    if found is None:
        return name.replace(".", ": ").replace("_", " ").capitalize()
    plain, trade, _ = found
    return f"{plain} ({trade})" if term and trade else plain


def unit(name: str, units: dict[str, str] | None = None, totals: bool = False) -> str:
    """The unit of a series or total in the analyst's words ("" when unknown)."""
    found = _lookup(name, TOTALS if totals else SERIES)
    words = {**DEFAULT_UNITS, **(units or {})}
    return found[2].format(**words) if found else ""


#: What a figure is measured against, by how its unit begins: a rent against the base rent
#: ("price"), money per period against one period's base rent bill ("flow"), money summed against
#: the bill over the periods ("money"), homes against the base homes ("homes"). Below
#: engine.cautions.NEGLIGIBLE of that scale a figure is rounding; the page reads the same table.
SCALE_KINDS = (
    ("{currency} per {unit}", "price"),
    ("{currency} per {period}", "flow"),
    ("{currency}", "money"),
    ("{quantity}", "homes"),
)


def scale_kind(name: str, totals: bool = False) -> str | None:
    """The SCALE_KINDS kind of a series or total (None: a share, a count of periods, unknown)."""
    found = _lookup(name, TOTALS if totals else SERIES)
    template = found[2] if found else ""
    return next((kind for start, kind in SCALE_KINDS if template.startswith(start)), None)


def describe(name: str, units: dict[str, str] | None = None, totals: bool = False) -> str:
    """Label and unit in one header: "Rent paid (consumer price) [EUR per home per month, ...]"."""
    u = unit(name, units, totals)
    return f"{label(name, totals)} [{u}]" if u else label(name, totals)


def flatten(body: dict[str, Any], skip: tuple[str, ...] = ()) -> dict[str, Any]:
    """An answer object with its nested objects as `object.member` keys (lists kept as they are);
    `skip` names top-level keys to leave out. A null object stays one null entry."""
    out: dict[str, Any] = {}
    for key, value in body.items():
        if key in skip:
            continue
        if isinstance(value, dict):
            for inner, v in value.items():
                out[f"{key}.{inner}"] = v
        else:
            out[key] = value
    return out


def _pointers(value: Any, pointer: str = "") -> Iterable[tuple[str, Any]]:
    """(JSON Pointer, leaf value) of every leaf of the request; lists of numbers stay one leaf."""
    if isinstance(value, dict):
        if not value:
            yield pointer, "(none)"
        for k, v in value.items():
            yield from _pointers(v, f"{pointer}/{str(k).replace('~', '~0').replace('/', '~1')}")
    elif isinstance(value, list) and any(isinstance(v, (dict, list)) for v in value):
        for i, v in enumerate(value):
            yield from _pointers(v, f"{pointer}/{i}")
    else:
        yield pointer, value


#: The parts of an uncertain input (a distribution in place of a number), in plain words.
DRAWN = {
    "distribution": "drawn from a distribution",
    "mean": "mean of the draws",
    "sd": "standard deviation of the draws",
    "low": "lowest draw",
    "high": "highest draw",
    "mode": "most likely draw",
}


def _input_words(pointer: str, units: dict | None, kind: str | None = None) -> tuple[str, str]:
    """A request field in plain words with its trade term, and its hint ("" for none); `kind`,
    a policy's, where a field means something else under it (a floor's or a cap's level)."""
    parts = pointer.strip("/").split("/")
    field = parts[-1]
    if field in DRAWN and len(parts) > 1 and parts[-2] != "shifters":
        # /market/demand/price_elasticity/sd: the input's own words, then the part's.
        words, hint = _input_words("/" + "/".join(parts[:-1]), units, kind)
        return f"{words}, {DRAWN[field]}", hint
    section = {"demand": "demand", "supply": "supply", "market": "market"}.get(
        parts[-2] if len(parts) > 1 else ""
    )
    if len(parts) > 2 and parts[0] in ("shocks", "policies"):
        section = parts[0]
    elif parts[0] in ("adjustment", "welfare"):
        section = parts[0]
    if field == "shifters":
        return f"{parts[-2].capitalize()} shifters", ""
    if len(parts) > 1 and parts[-2] == "shifters":
        plain, trade, _ = INPUTS["shifters"]
        return f"{plain} {field.replace('_', ' ')} ({trade})", ""
    found = (
        (INPUTS.get(f"{kind}.{field}") if section == "policies" and kind else None)
        or INPUTS.get(f"{section}.{field}")
        or INPUTS.get(field)
    )
    if found is None:
        return field.replace("_", " "), ""
    plain, trade, hint = found
    return (f"{plain} ({trade})" if trade else plain), hint.format(**{**DEFAULT_UNITS, **(units or {})})


def _input_label(pointer: str, units: dict | None, kind: str | None = None) -> str:
    words, hint = _input_words(pointer, units, kind)
    return words + (f" [{hint}]" if hint else "")


def _policy_kind(request: dict[str, Any], pointer: str) -> str | None:
    """The kind of the policy a pointer is in (/policies/2/level), None elsewhere."""
    parts = pointer.split("/")
    policies = request.get("policies")
    if len(parts) > 3 and parts[1] == "policies" and parts[2].isdigit() and isinstance(policies, list):
        index = int(parts[2])
        policy = policies[index] if index < len(policies) else None
        return policy.get("kind") if isinstance(policy, dict) else None
    return None


def input_rows(request: dict[str, Any], units: dict[str, str] | None = None) -> list[tuple[str, str, Any]]:
    """(JSON Pointer, the field in plain words with its trade term and unit, value) of every
    leaf of a request (a list of numbers is one leaf); a policy's fields in the words of its kind."""
    return [
        (pointer, _input_label(pointer, units, _policy_kind(request, pointer)), value)
        for pointer, value in _pointers(request)
    ]


def table() -> dict[str, Any]:
    """The whole table as JSON for the page: series, totals, the money words."""
    return {
        "series": {k: list(v) for k, v in SERIES.items()},
        "totals": {k: list(v) for k, v in TOTALS.items()},
        "inputs": {k: list(v) for k, v in INPUTS.items()},
        "real": REAL,
        "nominal": NOMINAL,
        "default_units": DEFAULT_UNITS,
        "drawn": DRAWN,
        "flat_names": FLAT_NAMES,
        "scale_kinds": SCALE_KINDS,
        "band_key": BAND_KEY,
    }

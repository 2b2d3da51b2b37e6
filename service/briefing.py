"""A printable briefing of one scenario: a self-contained HTML document (no script, no outside
file; charts as inline SVG) for a council paper.

It holds the question in words, the inputs in plain words (each with its trade term), the
charts (the paths, who gains and who loses where the split is reported, renters against the
free path where the answer carries them), the summary table (every total the answer carries, one
column per policy), who gains and who loses on the chart's basis (discounted, its periods and
rate stated), the cautions, and the model version and scenario id. Its print style sheet keeps
table rows, headers and figures whole on A4 and Letter (tests/browser/test_briefing.py prints it
to PDF in Chromium and reads the pages back).
"""

from __future__ import annotations

import html
import math
import re
from typing import Any

from . import charts, labels
from .engine.cautions import NEGLIGIBLE
from .problems import ProblemError, validation_problem
from .schemas.paths import FULL_ONLY
from .simulation import simulate
from .uncertainty import bands, central_request, is_bands_request

__all__ = ["briefing", "briefing_html"]

_STYLE = """
@page { margin: 14mm 12mm; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", system-ui, sans-serif; font-size: 10pt; line-height: 1.4; color: #111;
  margin: 0 auto; max-width: 190mm; padding: 0 4mm; }
h1 { font-size: 18pt; margin: 0 0 2mm; }
h2 { font-size: 13pt; margin: 6mm 0 2mm; border-bottom: 1px solid #999; break-after: avoid; }
p, li { max-width: 100%; }
.lede { color: #333; }
table { border-collapse: collapse; width: 100%; table-layout: fixed; margin: 2mm 0 4mm; font-size: 8.5pt; }
th, td { border: 1px solid #bbb; padding: 1mm 1.5mm; vertical-align: top; overflow-wrap: anywhere; }
td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
th { background: #eee; text-align: left; }
th .unit { display: block; font-weight: normal; color: #444; font-size: 7.5pt; }
thead { display: table-header-group; }
tr, figure, .keep { break-inside: avoid; page-break-inside: avoid; }
caption { text-align: left; color: #333; padding-bottom: 1mm; caption-side: top; }
figure { margin: 3mm 0; }
figure svg { width: 100%; height: auto; display: block; }
figcaption { font-size: 8.5pt; color: #333; }
footer { margin-top: 6mm; font-size: 8pt; color: #333; border-top: 1px solid #999; padding-top: 2mm;
  overflow-wrap: anywhere; }
"""


def _e(text: Any) -> str:
    return html.escape(str(text), quote=True)


#: Figures this close to zero, as a share of their own scale, are the rounding of a difference,
#: not a finding (the engine's NEGLIGIBLE and the page's rule; the downloads keep every digit).
ROUNDING = NEGLIGIBLE


def _scales(request: dict[str, Any], periods: int) -> dict[str, float]:
    """The scale of each kind of figure (as the page reads them): the base rent, the base homes,
    one period's rent bill and the rent bill over the periods computed."""
    market = request["market"]
    price, homes = float(market["price"]), float(market["quantity"])
    bill = price * homes * float(market.get("payments_per_period", 1.0))
    return {"price": price, "homes": homes, "flow": bill, "money": bill * periods}


def _scale(name: str, scales: dict[str, float], totals: bool = True) -> float:
    """The scale of one figure, from the kind of its unit: a rent, money per period, money
    summed, homes; 1 for anything else (shares, periods)."""
    kind = labels.scale_kind(name, totals)
    return scales[kind] if kind else 1.0


def _number(value: Any, scale: float = 1.0) -> str:
    if value is None:
        return "\u2013"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return f"{value:,}"
    if isinstance(value, float):
        if value == 0:
            return "0"
        if abs(value) < ROUNDING * scale:  # the rounding of a difference, as the page shows it
            return "\u2248 0"
        if scale != 1.0 and abs(value) >= 1:  # a figure against its scale: an estimate's precision
            return _estimate(value, scale)
        if abs(value) >= 100:
            return f"{value:,.0f}"
        return f"{value:,.3g}" if abs(value) < 1 else f"{value:,.2f}"
    return _e(str(value).replace("_", " "))  # a choice in words: constant elasticity


#: Large figures in words, as the page writes them (app.js `number`).
_LARGE = ((1e12, "trillion"), (1e9, "billion"), (1e6, "million"))


def _estimate(value: float, scale: float) -> str:
    """A figure measured against `scale` (a rent, homes, a rent bill) to the precision a model
    estimate has, as the page shows it: from a million in words with four figures (1.057
    billion, not 1,056,999,393), below that to about a thousandth of the scale (48 homes, not
    47.98; a rent of 12.35 on a base rent of 12.50), trailing zeros dropped."""
    for size, word in _LARGE:
        if abs(value) >= size * (1.0 - 5e-5):  # rounds to at least 1 of this word
            return f"{value / size:.4g} {word}"
    digits = max(0, min(3, 3 - math.floor(math.log10(scale))))
    text = f"{value:,.{digits}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


def _given(value: Any) -> str:
    """An input as the analyst gave it: every digit typed, none added (12, not 12.00; 1,250.5,
    not 1,250), thousands grouped; a choice in words."""
    if isinstance(value, float) and not isinstance(value, bool):
        return f"{value:,.15g}"
    return _number(value)


def _pct(x: float) -> str:
    return f"{x * 100:.3g} %"


def _svg(image: bytes, prefix: str) -> str:
    """matplotlib's SVG made inline: no prolog, scalable, every id prefixed (several charts on one
    page must not share an id)."""
    text = image.decode("utf-8")
    text = text[text.index("<svg") :]
    text = re.sub(r'(<svg[^>]*?) width="[^"]*" height="[^"]*"', r"\1", text, count=1)
    text = re.sub(r'id="([^"]+)"', rf'id="{prefix}-\1"', text)
    text = re.sub(r"url\(#([^)]+)\)", rf"url(#{prefix}-\1)", text)
    return re.sub(r'xlink:href="#([^"]+)"', rf'xlink:href="#{prefix}-\1"', text)


def _policy_words(policy: dict, units: dict) -> str:
    """One policy in a sentence."""
    money = f"{units['currency']} per {units['unit']} per {units['price_interval']}"
    kind = policy["kind"]
    if kind == "none":
        text = "no rule (the free market)"
    elif kind == "price_ceiling":
        if "growth" in policy:
            text = f"rents may rise at most {_pct(policy['growth'])} per {units['period']}"
        elif policy.get("level") == "base" or policy.get("base_level"):
            text = "rents frozen at today's rent"
        else:
            text = f"rents at most {_given(policy['level'])} {money}"
        if policy.get("indexed"):
            text += " (indexed to inflation)"
        coverage = policy.get("coverage", 1.0)
        if coverage < 1:
            text += f", on {_pct(coverage)} of the homes"
        if policy.get("new_homes") == "exempt":
            text += ", homes built later exempt"
        if policy.get("vacancy_decontrol"):
            share = _pct(policy["vacancy_decontrol"])
            text += f", {share} of tenancies re-let at market rent each {units['period']}"
    elif kind == "price_floor":
        text = f"rents at least {_given(policy['level'])} {money}"
    elif kind == "quantity_cap":
        text = f"at most {_given(policy['level'])} {units['quantity']}"
    elif kind == "unit_tax":
        text = f"a tax of {_given(policy['amount'])} {money}"
    elif kind == "unit_subsidy":
        text = f"a subsidy of {_given(policy['amount'])} {money}"
    elif kind == "ad_valorem_tax":
        text = f"a tax of {_pct(policy['rate'])} of the rent"
    else:
        text = kind.replace("_", " ")
    if kind != "none":
        end = policy.get("end")
        text += f", from {units['period']} {policy.get('start', 1)}" + (f" to {end}" if end else "")
    return text


def _shock_words(shock: dict, units: dict) -> str:
    what = shock["shifter"].replace("_", " ")
    profile = shock["profile"]
    if profile == "step":
        return (
            f"{what}: a real change of {_pct(shock['change'])} from {units['period']} {shock.get('start', 1)}"
        )
    if profile == "ramp":
        return (
            f"{what}: a real change of {_pct(shock['change'])} reached over {shock['periods']} "
            f"{units['period']}s from {units['period']} {shock.get('start', 1)}"
        )
    if profile == "growth":
        rate, period = _pct(shock["rate"]), units["period"]
        return f"{what}: real growth of {rate} per {period} from {period} {shock.get('start', 1)}"
    values = ", ".join(_pct(v) for v in shock.get("values", [])[:8])
    return f"{what}: real changes of {values} in {units['period']}s 1, 2, ... (the last holds)"


def _question(request: dict, units: dict) -> str:
    ruled = [p for p in request["policies"] if p["kind"] != "none"]
    names = ", ".join(f"\u201c{p['name']}\u201d" for p in ruled) or "no rule"
    return (
        f"What happens to rents, to the {units['quantity']} let, and to who gains and who loses over "
        f"{request['horizon']} {units['period']}s under {names}, compared with the market left free, "
        "given the changes in demand and costs below?"
    )


def _table(caption: str, head: list[str], rows: list[list[str]], first_width: str = "34%") -> str:
    cols = "".join(f'<col style="width:{first_width}">' if i == 0 else "<col>" for i in range(len(head)))
    thead = "".join(f'<th scope="col">{h}</th>' for h in head)
    body = "".join(
        "<tr>"
        + "".join(
            f'<th scope="row">{c}</th>' if i == 0 else f'<td class="n">{c}</td>' for i, c in enumerate(r)
        )
        + "</tr>"
        for r in rows
    )
    return (
        f"<table><caption>{caption}</caption><colgroup>{cols}</colgroup>"
        f"<thead><tr>{thead}</tr></thead><tbody>{body}</tbody></table>"
    )


def _head(name: str, unit: str) -> str:
    return _e(name) + (f'<span class="unit">{_e(unit)}</span>' if unit else "")


def briefing_html(
    body: dict[str, Any],
    units: dict[str, str] | None = None,
    title: str | None = None,
    ranges: dict[str, Any] | None = None,
) -> str:
    """The briefing of a /v1/paths answer (it carries its `request`); with `ranges` (the
    /v1/bands answer whose central scenario `body` answers), also how uncertain the figures are:
    the uncertain inputs, the percentile ribbons and the range of each headline figure."""
    units = {**labels.DEFAULT_UNITS, **(units or {})}
    request = body["request"]
    form = request["market"].get("form", "linear")
    horizon = len(body["periods"]) - 1
    heading = title or "Briefing: " + ", ".join(p["name"] for p in request["policies"] if p["kind"] != "none")
    names = [p["name"] for p in body["paths"]]
    parts: list[str] = []
    parts.append(f"<h1>{_e(heading)}</h1>")
    parts.append(
        '<p class="lede">Model estimates from the elasticities given: they inform, and do not replace, '
        "local market studies and the judgement of qualified analysts. Money is in "
        f"{labels.REAL} unless marked {labels.NOMINAL}.</p>"
    )
    parts.append(f"<h2>The question</h2><p>{_e(_question(request, units))}</p>")

    # Inputs in plain words: the sentences, then every field.
    sentences = [
        f"<li><strong>{_e(p['name'])}</strong>: {_e(_policy_words(p, units))}</li>"
        for p in request["policies"]
    ]
    shocks = [f"<li>{_e(_shock_words(s, units))}</li>" for s in request.get("shocks", [])]
    parts.append("<h2>Inputs in plain words</h2>")
    parts.append(f"<p>Policies compared:</p><ul>{''.join(sentences)}</ul>")
    if shocks:
        parts.append(
            "<p>Changes to the market (real changes, beyond general inflation):</p>"
            f"<ul>{''.join(shocks)}</ul>"
        )
    rows = [
        [_e(words), _given(value) if not isinstance(value, list) else _e(", ".join(str(v) for v in value))]
        for pointer, words, value in labels.input_rows(request, units)
        if not pointer.startswith(("/policies", "/shocks", "/output"))  # /output: the answer's shape only
    ]
    parts.append(_table("Every market, adjustment and welfare input", ["Input", "Value"], rows, "75%"))

    # Charts.
    parts.append("<h2>Charts</h2>")
    paths_svg = charts.render_paths(body, units, "svg", form, f"{heading}: paths by policy")
    parts.append(
        f"<figure>{_svg(paths_svg, 'c1')}<figcaption>Each line is one policy; period 0 is today's market. "
        f"Money in {labels.REAL} unless a panel says {labels.NOMINAL}.</figcaption></figure>"
    )
    reported = all(p.get("distribution") for p in body["paths"])
    basis = charts.gains_basis(request, horizon, units["period"])
    if reported:
        gains_svg = charts.render_gains_and_losses(
            body, request, units, "svg", form, f"{heading}: who gains and who loses"
        )
        parts.append(
            f"<figure>{_svg(gains_svg, 'c2')}<figcaption>"
            "Each group against the free market of the same period, "
            f"{_e(basis)}.</figcaption></figure>"
        )
    if charts.renters_phases(request, body):
        renters_svg = charts.render_renters(
            body, request, units, "svg", form, f"{heading}: renters against the free path"
        )
        parts.append(f"<figure>{_svg(renters_svg, 'c3')}</figure>")

    # The summary: a row per total, a column per policy (every total the answer carries).
    flats = [labels.flatten(s, ("name", "kind")) for s in body["summary"]]
    keys = list(dict.fromkeys(k for f in flats for k in f))
    scales = _scales(request, horizon)
    rows = [
        [
            _head(labels.label(k, totals=True), labels.unit(k, units, totals=True)),
            *(_number(f.get(k), _scale(k, scales)) for f in flats),
        ]
        for k in keys
    ]
    parts.append("<h2>Summary</h2>")
    parts.append(
        _table(f"Per policy over {horizon} {_e(units['period'])}s", ["Figure", *(_e(n) for n in names)], rows)
    )

    # Who gains and who loses, on the chart's basis.
    parts.append("<h2>Who gains and who loses</h2>")
    if reported:
        values = charts.gains_and_losses(body)
        groups = list(body["paths"][0]["distribution"])
        rows = [
            [
                _e(labels.label(f"distribution.{g}")),
                *(_number(float(values[p][j]), scales["money"]) for p in range(len(names))),
            ]
            for j, g in enumerate(groups)
        ]
        net = (_number(float(values[p].sum()), scales["money"]) for p in range(len(names)))
        rows.append(["Net (minus the value lost)", *net])
        money = f"{units['currency']}, {labels.REAL}"
        parts.append(
            _table(
                f"Gain (+) or loss (\u2212) of each group against the free market of the same period, "
                f"{_e(basis)}, assuming efficient allocation; {_e(money)} (the same basis as the chart)",
                ["Group", *(_e(n) for n in names)],
                rows,
            )
        )
    else:
        parts.append(
            "<p>Not reported under random rationing: the model does not track which households are drawn.</p>"
        )

    cautions = body["cautions"]
    if ranges is not None:
        parts += _ranges_section(ranges, request, units, form, heading)
        cautions = list(dict.fromkeys([*ranges["cautions"], *cautions]))
    parts.append("<h2>Cautions</h2><ul>" + "".join(f"<li>{_e(c)}</li>" for c in cautions) + "</ul>")
    bands_id = (
        ""
        if ranges is None
        else f"; the ranges are the /v1/bands answer <code>{_e(ranges['scenario_id'])}</code> (seed "
        f"{_e(ranges['seed'])})"
    )
    parts.append(
        f"<footer>shockpath model version {_e(body['model_version'])}; scenario id "
        f"<code>{_e(body['scenario_id'])}</code> (posting the request in this briefing's inputs to "
        f"/v1/paths gives the same numbers){bands_id}.</footer>"
    )
    return (
        '<!doctype html>\n<html lang="en"><head><meta charset="utf-8">'
        f"<title>{_e(heading)}</title><style>{_STYLE}</style></head><body>"
        + "\n".join(parts)
        + "</body></html>\n"
    )


#: The headline figures whose ranges the briefing tabulates (each where the bands carry it).
RANGE_FIGURES = ("discounted_deadweight_loss", "peak_shortage", "final_consumer_price", "final_quantity")


def _distribution_words(item: dict[str, Any]) -> str:
    parameters = ", ".join(
        f"{k} {_number(v)}" for k, v in item.items() if k not in ("pointer", "distribution", "central")
    )
    return f"{item['distribution']} ({parameters}), central value {_number(item['central'])}"


def _ranges_section(
    ranges: dict[str, Any], request: dict[str, Any], units: dict[str, str], form: str, heading: str
) -> list[str]:
    """How uncertain: the inputs drawn, the percentile ribbons, the range of each headline."""
    words = {pointer: text for pointer, text, _ in labels.input_rows(request, units)}
    drawn = [
        f"<li>{_e(words.get(item['pointer'], item['pointer']))}: {_e(_distribution_words(item))}</li>"
        for item in ranges["uncertain_inputs"]
    ]
    keys = [f"{q:g}" for q in ranges["percentiles"]]
    low, high = keys[0], keys[-1]
    middle = "50" if "50" in keys else None
    parts = [
        "<h2>How uncertain</h2>",
        f"<p>The figures above use the central value of each uncertain input. The model was also run "
        f"{ranges['draws']:,} times with the inputs drawn as follows (seed {_e(ranges['seed'])}):</p>"
        f"<ul>{''.join(drawn)}</ul>",
    ]
    ribbons = charts.render_bands(ranges, units, "svg", form, f"{heading}: ranges over the draws")
    parts.append(
        f"<figure>{_svg(ribbons, 'c4')}<figcaption>Each line is a policy's central path; the shading runs "
        f"from the {low}th to the {high}th percentile of the draws, period by period (a band is not the "
        "path of any one draw).</figcaption></figure>"
    )
    names = [band["name"] for band in ranges["bands"]]
    scales = _scales(request, len(ranges["bands"][0]["series"]["consumer_price"][low]) - 1)
    rows = []
    for figure in RANGE_FIGURES:
        scale = _scale(figure, scales)
        cells = []
        for band in ranges["bands"]:
            by_q = band["summary"].get(figure)
            if by_q is None:
                cells.append(_number(None))
                continue
            # The range and the median on lines of their own: numbers never break, and a
            # narrow column (many policies) must not cut the median off.
            text = _e(f"{_number(by_q[low], scale)} to {_number(by_q[high], scale)}")
            if middle is not None:
                text += "<br>" + _e(f"(median {_number(by_q[middle], scale)})")
            cells.append(text)
        rows.append(
            [_head(labels.label(figure, totals=True), labels.unit(figure, units, totals=True)), *cells]
        )
    parts.append(
        _table(
            f"Range of each headline figure over the draws: {low}th to {high}th percentile",
            ["Figure", *(_e(n) for n in names)],
            rows,
        )
    )
    return parts


def briefing(
    request: dict[str, Any],
    units: dict[str, str] | None = None,
    title: str | None = None,
    threads: int = 1,
) -> str:
    """The briefing of a /v1/paths request, or of a /v1/bands request (its central answer and
    how uncertain it is; `threads` as for bands); ProblemError on invalid input, as the
    endpoint of the request's kind. A briefing is drawn from every series: it has no summary
    form (422 at /output, as bands answer)."""
    if isinstance(request, dict) and request.get("output", "full") != "full":
        raise ProblemError(validation_problem({"output": [FULL_ONLY]}))
    if not is_bands_request(request):
        return briefing_html(simulate(request), units, title)
    ranges = bands(request, threads=threads)
    central = simulate(central_request(request, ranges["uncertain_inputs"]))
    return briefing_html(central, units, title, ranges)

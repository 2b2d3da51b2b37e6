"""Charts of paths, bands, sensitivity and who gains and who loses, drawn with matplotlib (the
optional `charts` extra).

Object-oriented matplotlib only (Figure and its canvases, never pyplot): no global state, safe in
any worker. Readable in greyscale (line styles and markers as well as colours), with the
colour-blind-safe palette of Okabe & Ito (2008), "Color Universal Design". Each chart carries a
title and a one-line footnote with the model form and the caution that results are estimates.

Who gains and who loses (MODEL.md section 15) draws each group's per-period change of the
response's `distribution`, summed over periods 1..T with the engine's discount factors
`prod_(u<=t) 1/(1+r_u)` (period 0 has factor 1 and no change): `gains_and_losses` is the number
each bar draws.
"""

from __future__ import annotations

import io
import textwrap
from typing import Any

import numpy as np

from .problems import ProblemError, validation_problem

__all__ = [
    "DPI",
    "GROUPS",
    "SIZE_PX",
    "available",
    "discount_factors",
    "gains_and_losses",
    "gains_and_losses_figure",
    "render_bands",
    "render_gains_and_losses",
    "render_paths",
    "render_sensitivity",
]

#: Okabe-Ito colours, the pale yellow last (weak on white).
PALETTE = ("#000000", "#E69F00", "#0072B2", "#009E73", "#D55E00", "#56B4E9", "#CC79A7", "#F0E442")
STYLES = ("-", "--", "-.", ":", (0, (5, 1)), (0, (3, 1, 1, 1)), (0, (1, 2)), (0, (8, 2, 2, 2)))
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")
SIZE_PX = (1200, 900)
#: Fractions of the figure's height: the footnote's two lines and each row of the legend.
FOOTNOTE_HEIGHT = 0.04
LEGEND_ROW_HEIGHT = 0.035
DPI = 100
#: Band ribbons of different policies overlap: each policy's ribbon has its own hatching too.
HATCHES = ("", "//", "\\\\", "..", "xx", "||", "--", "++")
PANELS = (
    ("consumer_price", "Consumer price", "{currency} per {unit} per {price_interval}"),
    ("quantity", "Quantity traded", "{quantity}"),
    ("shortage", "Shortage", "{quantity}"),
    ("cumulative_deadweight_loss", "Cumulative deadweight loss", "{currency}"),
)
#: Under the stock schedule: the homes a path lacks against the free path (MODEL.md section 13),
#: drawn beside the quantity (the grid becomes 2 x 3).
HOMES_PANEL = ("homes_below_free_path", "Homes below the free path", "{quantity}")
#: The groups of MODEL.md section 15 in the response's `distribution`, with their labels.
GROUPS = (
    ("tenants_in_controlled_homes", "Tenants in controlled homes"),
    ("tenants_in_uncontrolled_homes", "Tenants in uncontrolled homes"),
    ("households_priced_out", "Households priced or rationed out"),
    ("owners_of_controlled_homes", "Owners of controlled homes"),
    ("owners_of_uncontrolled_homes", "Owners of uncontrolled homes"),
    ("government", "Government"),
)
#: One Okabe-Ito colour and one hatching per group: tenants blue, households out purple,
#: owners orange, government green; the hatching tells them apart in greyscale.
GROUP_STYLES = (
    ("#0072B2", ""),
    ("#56B4E9", "//"),
    ("#CC79A7", "xx"),
    ("#D55E00", "\\\\"),
    ("#E69F00", ".."),
    ("#009E73", "++"),
)
#: The footnote's first line on the who-gains chart.
EFFICIENT = (
    "Each group against the free market of the same period, assuming efficient allocation (controlled "
    "homes go to the households who value them most); where no home is controlled, all count as uncontrolled."
)
NOT_UNDER_RANDOM = (
    "Who gains and who loses is not reported under random rationing: the model does not track which "
    "households are drawn for a controlled home. Use efficient rationing, or another chart."
)
CAUTION = (
    "Estimates from the elasticities given: they inform, and do not replace, local market studies "
    "and the judgement of qualified analysts."
)
LOWER_BOUND = "Binding ceilings assume efficient rationing: their deadweight loss is a lower bound."


def _compact(value: float, _position=None) -> str:
    """1,234,567 -> 1.23M: money and quantities without an offset label."""
    for size, suffix in ((1e12, "T"), (1e9, "B"), (1e6, "M"), (1e3, "k")):
        if abs(value) >= size:
            return f"{value / size:.3g}{suffix}"
    return f"{value:.3g}"


def _compact_axis(axis) -> None:
    from matplotlib.ticker import FuncFormatter

    axis.set_major_formatter(FuncFormatter(_compact))


def available() -> bool:
    try:
        import matplotlib  # noqa: F401
    except ImportError:
        return False
    return True


def _figure():
    from matplotlib.figure import Figure

    return Figure(figsize=(SIZE_PX[0] / DPI, SIZE_PX[1] / DPI), dpi=DPI, layout="constrained")


def _legend_and_footnote(figure, note: str, rows: int, **legend) -> None:
    """A strip at the bottom: the legend (`rows` rows) above the footnote; the axes above both.
    A footnote of more than two lines gets room for each."""
    footnote_height = max(FOOTNOTE_HEIGHT, FOOTNOTE_HEIGHT / 2 * (note.count("\n") + 1))
    bottom = footnote_height + LEGEND_ROW_HEIGHT * rows
    figure.get_layout_engine().set(rect=(0, bottom, 1, 1 - bottom))
    figure.legend(loc="lower center", bbox_to_anchor=(0.5, footnote_height), frameon=False, **legend)
    figure.text(0.01, 0.004, note, fontsize=8, color="#444444", va="bottom")


def _save(figure, fmt: str) -> bytes:
    buffer = io.BytesIO()
    if fmt == "svg":
        from matplotlib import rc_context
        from matplotlib.backends.backend_svg import FigureCanvasSVG

        FigureCanvasSVG(figure)
        # A fixed salt for the SVG's element ids: the same chart, the same bytes (its ETag is strong).
        with rc_context({"svg.hashsalt": "shockpath"}):
            figure.savefig(buffer, format="svg", metadata={"Date": None})
    else:
        from matplotlib.backends.backend_agg import FigureCanvasAgg

        FigureCanvasAgg(figure)
        figure.savefig(buffer, format="png", dpi=DPI, metadata={"Software": None})
    return buffer.getvalue()


def _style(i: int) -> dict[str, Any]:
    return {
        "color": PALETTE[i % len(PALETTE)],
        "linestyle": STYLES[i % len(STYLES)],
        "marker": MARKERS[i % len(MARKERS)],
        "markevery": 0.1,
        "markersize": 5,
        "linewidth": 1.8,
    }


def _period_label(units) -> str:
    period = units.get("period", "period")
    return "Period" if period == "period" else f"Period ({period})"


def _unit_labels(units: dict) -> dict:
    return {"unit": "unit", "price_interval": "price interval", **units}


def _panels(has_stock: bool) -> tuple:
    """The panels of a paths or bands chart: under the stock schedule the homes below the free
    path beside the quantity traded."""
    return (*PANELS[:2], HOMES_PANEL, *PANELS[2:]) if has_stock else PANELS


def _axes_grid(figure, periods, units, panels=PANELS):
    """One axes per panel, in a 2 x 2 grid (2 x 3 for five or six panels), row by row."""
    from matplotlib.ticker import MaxNLocator

    cols = 2 if len(panels) <= 4 else 3
    grid = figure.subplots(2, cols, sharex=True, squeeze=False)
    cells = list(grid.flat)
    axes = cells[: len(panels)]
    for ax in cells[len(panels) :]:
        ax.set_axis_off()  # an empty cell: the panel above it carries the period axis
    for ax, (_, title, unit) in zip(axes, panels, strict=True):
        ax.set_title(title, fontsize=12, loc="left")
        ax.set_ylabel(unit.format(**_unit_labels(units)))
        ax.xaxis.set_major_locator(MaxNLocator(integer=True))  # periods are whole numbers
        ax.axvline(0, color="#777777", linewidth=0.8, linestyle=":")
        ax.annotate(
            "base",
            xy=(0, 1),
            xycoords=("data", "axes fraction"),
            xytext=(3, -12),
            textcoords="offset points",
            fontsize=9,
            color="#555555",
        )
        ax.grid(True, color="#dddddd", linewidth=0.6)
        ax.set_xlim(periods[0], periods[-1])
        _compact_axis(ax.yaxis)
    for col in range(cols):  # the lowest panel of each column
        lowest = max(i for i in range(col, len(panels), cols))
        axes[lowest].set_xlabel(_period_label(units))
        axes[lowest].xaxis.set_tick_params(labelbottom=True)
    return axes


def footnote(form: str, cautions, prefix: str = "") -> str:
    """The model form, the lower-bound warning where the answer carries it, and the caution."""
    lines = [f"Model: {form.replace('_', '-')} form. {prefix}{CAUTION}"]
    if any("lower bound" in c for c in cautions):
        lines.append(LOWER_BOUND)
    return "\n".join(lines)


def _finish(figure, title: str, note: str, handles, labels) -> None:
    figure.suptitle(title, fontsize=15, x=0.01, ha="left")
    ncols = min(4, max(1, len(labels)))
    rows = -(-len(labels) // ncols)
    _legend_and_footnote(figure, note, rows, handles=handles, labels=labels, ncols=ncols)


def render_paths(body: dict, units: dict, fmt: str, form: str, title: str | None = None) -> bytes:
    """Small multiples of a /v1/paths body: one line per policy (under the stock schedule a
    fifth panel, the homes below the free path)."""
    figure = _figure()
    periods = body["periods"]
    panels = _panels(all(HOMES_PANEL[0] in p for p in body["paths"]))
    axes = _axes_grid(figure, periods, units, panels)
    handles = []
    for i, path in enumerate(body["paths"]):
        for ax, (series, _, _) in zip(axes, panels, strict=True):
            (line,) = ax.plot(periods, path[series], label=path["name"], **_style(i))
        handles.append(line)
    labels = [p["name"] for p in body["paths"]]
    _finish(figure, title or "Transition paths by policy", footnote(form, body["cautions"]), handles, labels)
    return _save(figure, fmt)


def render_bands(body: dict, units: dict, fmt: str, form: str, title: str | None = None) -> bytes:
    """The central path of each policy with shaded percentile ribbons around it."""
    figure = _figure()
    periods = body["periods"]
    # The homes below the free path where the bands carry them (the stock schedule).
    stock = all(HOMES_PANEL[0] in b["series"] for b in body["bands"]) and all(
        HOMES_PANEL[0] in p for p in body["central"]["paths"]
    )
    panels = _panels(stock)
    axes = _axes_grid(figure, periods, units, panels)
    keys = sorted(body["bands"][0]["series"]["consumer_price"], key=float)
    handles = []
    for i, (band, central) in enumerate(zip(body["bands"], body["central"]["paths"], strict=True)):
        style = _style(i)
        for ax, (series, _, _) in zip(axes, panels, strict=True):
            by_q = band["series"][series]
            for depth in range(len(keys) // 2):
                low, high = by_q[keys[depth]], by_q[keys[-1 - depth]]
                ax.fill_between(
                    periods,
                    low,
                    high,
                    facecolor=(style["color"], 0.10 + 0.06 * depth),
                    edgecolor=(style["color"], 0.45),
                    hatch=HATCHES[i % len(HATCHES)] if depth == 0 else None,
                    linewidth=0,
                )
                if depth == 0:  # the outer edges in the policy's own line style
                    for edge in (low, high):
                        ax.plot(
                            periods, edge, color=style["color"], linestyle=style["linestyle"], linewidth=0.7
                        )
            (line,) = ax.plot(periods, central[series], **style)
        handles.append(line)
    labels = [b["name"] for b in body["bands"]]
    outer = f"{keys[0]}-{keys[-1]}th percentiles" if len(keys) > 1 else "percentile"
    heading = title or f"Central paths with {outer} over {body['draws']:,} draws"
    _finish(figure, heading, footnote(form, body["cautions"]), handles, labels)
    return _save(figure, fmt)


def _input_label(pointer: str) -> str:
    parts = pointer.strip("/").split("/")[1:]
    return " ".join(p.replace("_", " ") for p in parts).replace("shifters ", "shifter: ")


def render_sensitivity(
    body: dict, units: dict, fmt: str, form: str, policy: str | None, title: str | None = None
) -> bytes:
    """A tornado chart of one policy's discounted deadweight loss, inputs largest swing on top."""
    from matplotlib.patches import Patch

    names = [p["name"] for p in body["central"]["paths"]]
    chosen = policy if policy in names else None
    if chosen is None:
        swings = {n: 0.0 for n in names}
        for item in body["inputs"]:
            for p in item["policies"]:
                swings[p["name"]] = max(swings[p["name"]], p["swing"]["discounted_deadweight_loss"] or 0.0)
        chosen = max(names, key=lambda n: swings[n])
    index = names.index(chosen)
    central = body["central"]["summary"][index]["discounted_deadweight_loss"]
    figure = _figure()
    ax = figure.subplots()
    inputs = list(reversed(body["inputs"]))  # largest swing at the top
    labels = []
    for row, item in enumerate(inputs):
        p = item["policies"][index]
        low, high = p["low"]["discounted_deadweight_loss"], p["high"]["discounted_deadweight_loss"]
        low_note = " (more elastic)" if item["high"] < 0 else ""
        labels.append(f"{_input_label(item['pointer'])}\n{item['low']:.3g}{low_note} to {item['high']:.3g}")
        if low is not None:
            ax.barh(
                row, low - central, left=central, color=PALETTE[2], hatch="//", edgecolor="white", height=0.6
            )
        if high is not None:
            ax.barh(
                row, high - central, left=central, color=PALETTE[1], hatch="..", edgecolor="white", height=0.6
            )
    ax.axvline(central, color="#000000", linewidth=1.0)
    ax.set_yticks(range(len(inputs)), labels)
    ax.set_xlabel(f"Discounted deadweight loss ({units['currency']})")
    _compact_axis(ax.xaxis)
    ax.grid(True, axis="x", color="#dddddd", linewidth=0.6)
    handles = [
        Patch(
            facecolor=PALETTE[2],
            hatch="//",
            label="input at its low (for a negative elasticity, the more elastic end)",
        ),
        Patch(facecolor=PALETTE[1], hatch="..", label="input at its high"),
    ]
    figure.suptitle(
        title or f"What moves the discounted deadweight loss of '{chosen}'", fontsize=15, x=0.01, ha="left"
    )
    note = footnote(form, body["cautions"], "One input at a time. ")
    _legend_and_footnote(figure, note, 1, handles=handles, ncols=2)
    return _save(figure, fmt)


def discount_factors(request: dict) -> np.ndarray:
    """(T+1,) discount factors of a /v1/paths request, `prod_(u<=t) 1/(1+r_u)` with factor 1 in
    period 0: the engine's own (batch.pack and kernel.prepare), for a number or a step schedule.
    Raises ProblemError (422) on an invalid request."""
    from .engine import pack
    from .engine.kernel import prepare
    from .limits import MAX_SHIFTER_CHANGE
    from .simulation import load_scenario

    batch, _ = pack([load_scenario(request)])
    return prepare(batch, MAX_SHIFTER_CHANGE)[-1][0]


def gains_and_losses(body: dict, factors: np.ndarray) -> np.ndarray:
    """(policies, groups) each group's change summed over the horizon, period t weighted by
    `factors[t]`, from the `distribution` of a /v1/paths body (groups in GROUPS order; money per
    model period x k). Raises ProblemError (422, pointer /welfare/rationing) where the body
    reports no distribution (random rationing)."""
    if any(p["distribution"] is None for p in body["paths"]):
        raise ProblemError(validation_problem({"welfare": {"rationing": [NOT_UNDER_RANDOM]}}))
    series = np.array([[p["distribution"][g] for g, _ in GROUPS] for p in body["paths"]], dtype=float)
    return (series * np.asarray(factors, dtype=float)).sum(axis=-1)


def _signed(value: float) -> str:
    """+1.23M, \u22121.23M, 0: a gain or a loss at a glance."""
    if value == 0.0:
        return "0"
    return ("+" if value > 0 else "\u2212") + _compact(abs(value))


def _discounting(request: dict, period: str) -> str:
    rate = (request.get("welfare") or {}).get("discount_rate", 0.0)
    if isinstance(rate, list):
        steps = "; ".join(f"{s['rate'] * 100:.3g} % through period {s['through_period']}" for s in rate[:3])
        more = "; ..." if len(rate) > 3 else ""
        return f"discounted per {period} at {steps}{more} (the last rate holds after)"
    if rate == 0:
        return "not discounted"
    return f"discounted at {rate * 100:.3g} % per {period}"


def _gains_figure(body: dict, values: np.ndarray, units: dict, note: str, title: str):
    """The figure: one panel per policy, one horizontal bar per group, gains right of zero."""
    from matplotlib.patches import Patch

    names = [p["name"] for p in body["paths"]]
    cols = 1 if len(names) == 1 else 2 if len(names) <= 4 else 3 if len(names) <= 9 else 4
    rows = -(-len(names) // cols)
    figure = _figure()
    grid = figure.subplots(rows, cols, sharex=True, sharey=True, squeeze=False)
    cells = list(grid.flat)
    for ax in cells[len(names) :]:
        ax.set_axis_off()
    reach = float(np.abs(values).max()) if values.size else 0.0
    reach = reach * 1.45 if reach > 0 else 1.0  # room for the value labels, zero in the middle
    colours = [c for c, _ in GROUP_STYLES]
    hatches = [h for _, h in GROUP_STYLES]
    rows_y = np.arange(len(GROUPS))
    small = 9 if len(names) <= 9 else 7
    for ax, name, row in zip(cells, names, values, strict=False):
        bars = ax.barh(rows_y, row, color=colours, hatch=hatches, edgecolor="white", height=0.7)
        ax.axvline(0, color="#000000", linewidth=1.0)
        ax.set_title(f"{name}: net {_signed(float(row.sum()))}", fontsize=11, loc="left")
        ax.grid(True, axis="x", color="#dddddd", linewidth=0.6)
        ax.set_axisbelow(True)
        ax.tick_params(labelsize=small)
        if not row.any():
            ax.text(
                0.5,
                0.5,
                "no change against the free market",
                transform=ax.transAxes,
                ha="center",
                va="center",
                fontsize=small + 1,
                color="#444444",
                bbox={"facecolor": "white", "edgecolor": "none"},
            )
            continue
        for bar, value in zip(bars, row, strict=True):
            ax.annotate(
                _signed(value),
                xy=(value, bar.get_y() + bar.get_height() / 2),
                xytext=(3 if value >= 0 else -3, 0),
                textcoords="offset points",
                ha="left" if value >= 0 else "right",
                va="center",
                fontsize=small,
            )
    first = cells[0]
    first.set_xlim(-reach, reach)
    first.set_yticks(rows_y, [textwrap.fill(label, 18) for _, label in GROUPS])
    first.invert_yaxis()  # the first group on top
    _compact_axis(first.xaxis)
    period = units.get("period", "period")
    period = "model period" if period == "period" else period
    for col in range(cols):  # the lowest panel of each column carries the money axis
        lowest = cells[max(i for i in range(col, len(names), cols))]
        lowest.xaxis.set_tick_params(labelbottom=True)
        lowest.set_xlabel(f"Loss (\u2212) or gain (+), {units['currency']} per {period}", fontsize=10)
    figure.suptitle(title, fontsize=15, x=0.01, ha="left")
    handles = [
        Patch(facecolor=c, hatch=h, edgecolor="white", label=label)
        for (c, h), (_, label) in zip(GROUP_STYLES, GROUPS, strict=True)
    ]
    _legend_and_footnote(figure, note, 2, handles=handles, ncols=3)
    return figure


def gains_and_losses_figure(body: dict, request: dict, units: dict, form: str, title: str | None = None):
    """The who-gains Figure of a /v1/paths body (`request`: its request, for the discount rate):
    one panel per policy, bar i of a panel drawing `gains_and_losses(...)[policy, i]`."""
    values = gains_and_losses(body, discount_factors(request))
    period = units.get("period", "period")
    horizon = len(body["periods"]) - 1
    lines = [
        EFFICIENT,
        f"Summed over periods 1 to {horizon}, {_discounting(request, period)}; one scale for every panel; "
        "the groups add up to minus the deadweight loss (the net in each title).",
        footnote(form, body["cautions"]),
    ]
    return _gains_figure(body, values, units, "\n".join(lines), title or "Who gains and who loses")


def render_gains_and_losses(
    body: dict, request: dict, units: dict, fmt: str, form: str, title: str | None = None
) -> bytes:
    """Who gains and who loses under each policy as SVG or PNG; ProblemError (422) under random
    rationing."""
    return _save(gains_and_losses_figure(body, request, units, form, title), fmt)

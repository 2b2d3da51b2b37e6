"""Charts of paths, bands and sensitivity, drawn with matplotlib (the optional `charts` extra).

Object-oriented matplotlib only (Figure and its canvases, never pyplot): no global state, safe in
any worker. Readable in greyscale (line styles and markers as well as colours), with the
colour-blind-safe palette of Okabe & Ito (2008), "Color Universal Design". Each chart carries a
title and a one-line footnote with the model form and the caution that results are estimates.
"""

from __future__ import annotations

import io
from typing import Any

__all__ = ["DPI", "SIZE_PX", "available", "render_bands", "render_paths", "render_sensitivity"]

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
    """A strip at the bottom: the legend (`rows` rows) above the footnote; the axes above both."""
    bottom = FOOTNOTE_HEIGHT + LEGEND_ROW_HEIGHT * rows
    figure.get_layout_engine().set(rect=(0, bottom, 1, 1 - bottom))
    figure.legend(loc="lower center", bbox_to_anchor=(0.5, FOOTNOTE_HEIGHT), frameon=False, **legend)
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


def _axes_grid(figure, periods, units):
    from matplotlib.ticker import MaxNLocator

    axes = figure.subplots(2, 2, sharex=True)
    for ax, (_, title, unit) in zip(axes.flat, PANELS, strict=True):
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
    for ax in axes[1]:
        ax.set_xlabel(_period_label(units))
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
    """Small multiples of a /v1/paths body: one line per policy."""
    figure = _figure()
    periods = body["periods"]
    axes = _axes_grid(figure, periods, units)
    handles = []
    for i, path in enumerate(body["paths"]):
        for ax, (series, _, _) in zip(axes.flat, PANELS, strict=True):
            (line,) = ax.plot(periods, path[series], label=path["name"], **_style(i))
        handles.append(line)
    labels = [p["name"] for p in body["paths"]]
    _finish(figure, title or "Transition paths by policy", footnote(form, body["cautions"]), handles, labels)
    return _save(figure, fmt)


def render_bands(body: dict, units: dict, fmt: str, form: str, title: str | None = None) -> bytes:
    """The central path of each policy with shaded percentile ribbons around it."""
    figure = _figure()
    periods = body["periods"]
    axes = _axes_grid(figure, periods, units)
    keys = sorted(body["bands"][0]["series"]["consumer_price"], key=float)
    handles = []
    for i, (band, central) in enumerate(zip(body["bands"], body["central"]["paths"], strict=True)):
        style = _style(i)
        for ax, (series, _, _) in zip(axes.flat, PANELS, strict=True):
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

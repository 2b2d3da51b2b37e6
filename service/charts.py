"""Charts of paths, bands, sensitivity and who gains and who loses, drawn with matplotlib (the
optional `charts` extra).

Object-oriented matplotlib only (Figure and its canvases, never pyplot): no global state, safe in
any worker. Readable in greyscale (line styles and markers as well as colours), with the
colour-blind-safe palette of Okabe & Ito (2008), "Color Universal Design". Each chart carries a
title and a one-line footnote with the model form and the caution that results are estimates.
Each figure is laid out once, when it is drawn in full (`_place`: rows and columns sized from
the titles, tick labels and axis labels around each axes), rather than by a layout engine,
which measures again and draws the figure an extra time on every save.

Who gains and who loses (MODEL.md section 15) draws each group's change summed over periods
1..T with the discount factors `prod_(u<=t) 1/(1+r_u)`: the engine's own totals (the summary's
`distribution_totals_discounted`), read by `gains_and_losses`, the number each bar draws.
"""

from __future__ import annotations

import io
import textwrap
from typing import Any

import numpy as np

from . import labels
from .problems import ProblemError, validation_problem
from .schemas.charts import MAX_PANELS

__all__ = [
    "DEFAULT_PANELS",
    "DPI",
    "GROUPS",
    "PANEL_NAMES",
    "SIZE_PX",
    "available",
    "band_key",
    "bands_figure",
    "gains_and_losses",
    "gains_and_losses_figure",
    "render_bands",
    "render_gains_and_losses",
    "render_paths",
    "render_renters",
    "render_sensitivity",
    "renters_figure",
    "sensitivity_figure",
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
#: The panels drawn when a request names none, in order, each where the answer carries it: the
#: rent (and in money of the day under inflation), the rents of controlled and uncontrolled
#: homes (a partial ceiling), the homes let, the homes below the free path (the stock schedule,
#: MODEL.md section 13), the shortage and the value lost so far.
DEFAULT_PANELS = (
    "consumer_price",
    "nominal_consumer_price",
    "controlled_and_uncontrolled_rents",
    "quantity",
    "homes_below_free_path",
    "shortage",
    "cumulative_deadweight_loss",
)
#: A panel of two series: the rent of controlled homes (solid) and of the others (dashed).
RENTS_PANEL = "controlled_and_uncontrolled_rents"
RENTS = ("covered_price", "uncovered_price")
#: Every panel a request may name: each per-period series of the label table, and the rents pair.
PANEL_NAMES = (
    *(k for k in labels.SERIES if k not in ("price_index", "supply_elasticity")),
    RENTS_PANEL,
)

#: The groups of MODEL.md section 15 in the response's `distribution`, with their labels.
GROUPS = (
    ("tenants_in_controlled_homes", "Tenants in controlled homes"),
    ("tenants_in_uncontrolled_homes", "Tenants in uncontrolled homes"),
    ("households_priced_out", "Households priced or rationed out"),
    ("owners_of_controlled_homes", "Owners of controlled homes"),
    ("owners_of_uncontrolled_homes", "Owners of uncontrolled homes"),
    ("government", "Government"),
    ("households_drawn_in", "Households drawn in"),
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
    ("#F0E442", "oo"),
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


def _plain_text(render):
    """Draw with mathtext off: names, units and titles are the caller's text, and a "$" in them
    (a currency) must print as it is rather than start a formula that may not parse."""
    import functools

    @functools.wraps(render)
    def drawn(*args, **kwargs):
        from matplotlib import rc_context

        with rc_context({"text.parse_math": False}):
            return render(*args, **kwargs)

    return drawn


#: Large numbers' short forms, largest first.
_SHORT = ((1e12, "T"), (1e9, "B"), (1e6, "M"))
MINUS = "\u2212"  # the minus sign, not a hyphen: a loss reads at a glance on a projector


def _compact(value: float, _position=None) -> str:
    """1,234,567 -> 1.23M, 1,350 -> 1,350 (a rent reads as a rent), -3.2e9 -> \u22123.2B:
    money and quantities without an offset label, negatives with a minus sign."""
    if value < 0:
        return MINUS + _compact(-value)
    if value >= 1e6:
        return _short(value, _SHORT)
    if value >= 999.5:
        return f"{value:,.0f}"
    return f"{value:.3g}"


def _short(value: float, forms) -> str:
    """A positive value in the first of `forms` ((size, suffix), largest first) it reaches at
    three significant figures: 999.7M rounds to 1B, not 1e+03M."""
    for size, suffix in forms:
        if value >= size * (1.0 - 5e-4):
            return f"{value / size:.3g}{suffix}"
    return f"{value:.3g}"


def _in_scale_of(value: float, largest: float) -> str:
    """`value` among values as large as `largest`: where those run to millions, thousands too in
    a short form (\u2212829k beside \u2212128M, not \u2212828,917), so that one chart's labels
    read alike; otherwise as _compact writes it."""
    if abs(largest) >= 1e6 and abs(value) >= 999.5:
        text = _short(abs(value), (*_SHORT, (1e3, "k")))
        return MINUS + text if value < 0 else text
    return _compact(value)


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
    """A figure without a layout engine: `_place` lays it out once, when everything is drawn."""
    from matplotlib.figure import Figure

    return Figure(figsize=(SIZE_PX[0] / DPI, SIZE_PX[1] / DPI), dpi=DPI)


#: Pixels between one axes' decorations and the next, and at the figure's edges.
PAD_PX = 6
#: Space between one row of panels' tick labels and the next row's titles.
ROW_GAP_PX = 16


def _margins(ax, renderer) -> tuple[float, float, float, float]:
    """What is drawn outside one axes, in pixels left, right, above and below it: its titles,
    tick labels and annotations (measured where they stand against the axes' box, which does not
    depend on the box's size), then its axis labels beyond the tick labels (measured by size:
    they are placed only when drawn)."""
    from matplotlib.text import Text

    box = ax.get_window_extent(renderer)
    low, high = box.x0 - 0.5, box.x1 + 0.5
    ticks = [t for t in ax.xaxis.get_ticklabels() if low <= _anchor(t)[0] <= high]
    low, high = box.y0 - 0.5, box.y1 + 0.5
    ticks += [t for t in ax.yaxis.get_ticklabels() if low <= _anchor(t)[1] <= high]
    # The axes' own texts: its three titles (left, centre, right) and its annotations.
    texts = [artist for artist in ax.get_children() if isinstance(artist, Text)]
    left = right = above = below = 0.0
    for text in (*ticks, *texts):
        if text.get_visible() and text.get_text():
            extent = text.get_window_extent(renderer)
            left, right = max(left, box.x0 - extent.x0), max(right, extent.x1 - box.x1)
            above, below = max(above, extent.y1 - box.y1), max(below, box.y0 - extent.y0)
    points = ax.get_figure(root=True).dpi / 72
    if ax.xaxis.label.get_text():
        below += ax.xaxis.labelpad * points + ax.xaxis.label.get_window_extent(renderer).height
    if ax.yaxis.label.get_text():
        left += ax.yaxis.labelpad * points + ax.yaxis.label.get_window_extent(renderer).width
    return left, right, above, below


def _anchor(text) -> tuple[float, float]:
    """Where a text is anchored, in pixels: a tick label beyond the axes' limits is not drawn."""
    return tuple(text.get_transform().transform(text.get_position()))


def _place(figure, heading, bottom: float) -> None:
    """Sets every axes' position once, from what is drawn around it, between the `heading` (the
    figure's title, a Text at the top) and `bottom` (a fraction of the figure's height: the
    legend and the footnote below).

    What constrained layout did, in one pass: each grid row is as high as its tallest titles
    above and its deepest tick labels and axis label below, each column as wide as its widest
    tick labels and axis label on the left (and what overhangs on the right), measured once on
    the finished axes; the cells share what is left equally. A layout engine measures again,
    and draws the whole figure an extra time, on every save."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    renderer = FigureCanvasAgg(figure).get_renderer()
    width, height = SIZE_PX
    rows, cols = figure.axes[0].get_subplotspec().get_gridspec().get_geometry()
    left, right, above, below = [0.0] * cols, [0.0] * cols, [0.0] * rows, [0.0] * rows
    for ax in figure.axes:
        if not ax.axison:
            continue
        spec = ax.get_subplotspec()
        r, c = spec.rowspan.start, spec.colspan.start
        l_, r_, a_, b_ = _margins(ax, renderer)
        left[c], right[c] = max(left[c], l_), max(right[c], r_)
        above[r], below[r] = max(above[r], a_), max(below[r], b_)
    top = PAD_PX + heading.get_window_extent(renderer).height
    cell_w = (width - sum(left) - sum(right) - PAD_PX * (cols + 1)) / cols
    gaps = 2 * PAD_PX + ROW_GAP_PX * (rows - 1)
    cell_h = (height * (1 - bottom) - top - sum(above) - sum(below) - gaps) / rows
    for ax in figure.axes:
        spec = ax.get_subplotspec()
        r, c = spec.rowspan.start, spec.colspan.start
        x0 = PAD_PX * (c + 1) + sum(left[: c + 1]) + sum(right[:c]) + cell_w * c
        y1 = height - top - PAD_PX - ROW_GAP_PX * r - sum(above[: r + 1]) - sum(below[:r]) - cell_h * r
        ax.set_position((x0 / width, (y1 - cell_h) / height, cell_w / width, cell_h / height))


#: The title's size in points, and the smallest it is shrunk to before it is wrapped further.
TITLE_SIZE = 15
TITLE_MIN_SIZE = 11


def _fit_title(figure, heading) -> None:
    """The whole title within the figure's width: wrapped at spaces onto as few lines as fit
    (a word too long for a line is broken), shrunk to TITLE_MIN_SIZE only past three lines."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    renderer = FigureCanvasAgg(figure).get_renderer()
    room = SIZE_PX[0] * (1 - 2 * heading.get_position()[0])
    text = " ".join(heading.get_text().split())
    size = TITLE_SIZE
    while True:
        heading.set_fontsize(size)
        heading.set_text(text)
        wide = heading.get_window_extent(renderer).width
        if wide <= room:
            return
        # Characters a line at this size, from the measured width; fewer until every line fits.
        chars = max(8, int(len(text) * room / wide))
        while chars >= 8:
            heading.set_text(textwrap.fill(text, chars))
            if heading.get_window_extent(renderer).width <= room:
                break
            chars -= 2
        if heading.get_text().count("\n") < 3 or size <= TITLE_MIN_SIZE:
            return
        size -= 1


def _frame(figure, title: str, note: str, rows: int, key: dict | None = None, **legend) -> None:
    """The title at the top (wrapped to fit); a strip at the bottom: the legend (`rows` rows)
    above `key` (a legend row saying what the marks mean, its handles and labels) above the
    footnote; the axes placed between. A footnote of more than two lines gets room for each."""
    # Lines that fit the figure's width at 8 pt (about 200 characters in 1200 px).
    note = "\n".join(textwrap.fill(line, 200) for line in note.split("\n"))
    footnote_height = max(FOOTNOTE_HEIGHT, FOOTNOTE_HEIGHT / 2 * (note.count("\n") + 1))
    key_height = LEGEND_ROW_HEIGHT if key else 0.0
    bottom = footnote_height + key_height + LEGEND_ROW_HEIGHT * rows
    heading = figure.suptitle(
        title, fontsize=TITLE_SIZE, x=0.01, y=1 - PAD_PX / SIZE_PX[1], ha="left", va="top"
    )
    _fit_title(figure, heading)
    _place(figure, heading, bottom)
    figure.legend(
        loc="lower center", bbox_to_anchor=(0.5, footnote_height + key_height), frameon=False, **legend
    )
    if key:
        figure.legend(
            loc="lower center",
            bbox_to_anchor=(0.5, footnote_height),
            frameon=False,
            ncols=len(key["labels"]),
            **key,
        )
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
        # zlib level 1: the same pixels, written in about half the time of the default 6, for a
        # file a few per cent larger (these images are mostly flat colour).
        figure.savefig(
            buffer, format="png", dpi=DPI, metadata={"Software": None}, pil_kwargs={"compress_level": 1}
        )
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


def _series(path: dict, name: str):
    """A path's per-period series by panel name (`object.member` inside an object), or None."""
    if "." in name:
        outer, inner = name.split(".", 1)
        return (path.get(outer) or {}).get(inner)
    return path.get(name)


def _carries(paths: list[dict], name: str) -> bool:
    """Whether the answer draws this panel: every path has the series (the rents pair: some path
    has both; under bands every path, each with its ribbon)."""
    if name == RENTS_PANEL:
        return any(all(_series(p, r) is not None for r in RENTS) for p in paths)
    return bool(paths) and all(_series(p, name) is not None for p in paths)


def choose_panels(paths: list[dict], panels: list[str] | None, pointer: str = "/panels") -> list[str]:
    """The panels to draw: those asked for (each must be in the answer: else 422 at its pointer),
    or the defaults the answer carries."""
    if not panels:
        return [n for n in DEFAULT_PANELS if _carries(paths, n)]
    if len(panels) > MAX_PANELS:
        raise ProblemError(validation_problem({"panels": [f"At most {MAX_PANELS} panels."]}))
    missing = {i: n for i, n in enumerate(panels) if not _carries(paths, n)}
    if missing:
        errors = {
            "panels": {
                i: [f"'{n}' is not in this answer (it carries: {', '.join(available_panels(paths))})."]
                for i, n in missing.items()
            }
        }
        raise ProblemError(validation_problem(errors))
    return list(dict.fromkeys(panels))


def available_panels(paths: list[dict]) -> list[str]:
    return [n for n in PANEL_NAMES if _carries(paths, n)]


def _panel_title(name: str, width: int = 46) -> str:
    """A panel's title in at most `width` characters a line (the trade's term on its own line)."""
    if name == RENTS_PANEL:
        return "Rents: controlled homes (solid),\nuncontrolled homes (dashed)"
    full = labels.label(name)
    if len(full) <= width:
        return full
    plain = labels.label(name, term=False)
    term = full[len(plain) :].strip()
    return textwrap.fill(plain, width) + (f"\n{textwrap.fill(term, width)}" if term else "")


def _panel_unit(name: str, units: dict) -> str:
    unit = labels.unit(RENTS[0] if name == RENTS_PANEL else name, units)
    return textwrap.fill(unit, 38)


def _grid_shape(n: int) -> tuple[int, int]:
    if n <= 3:
        return 1, n
    if n == 4:
        return 2, 2
    if n <= 6:
        return 2, 3
    return 3, 3


def _axes_grid(figure, periods, units, panels):
    """One axes per panel, in a grid (1 x n up to three panels, 2 x 2, 2 x 3, 3 x 3), row by row."""
    from matplotlib.ticker import MaxNLocator

    rows, cols = _grid_shape(len(panels))
    grid = figure.subplots(rows, cols, sharex=True, squeeze=False)
    cells = list(grid.flat)
    axes = cells[: len(panels)]
    for ax in cells[len(panels) :]:
        ax.set_axis_off()  # an empty cell: the panel above it carries the period axis
    size = 12 if len(panels) <= 6 else 10
    width = {1: 90, 2: 60}.get(cols, 36)  # characters of a title line that fit above a panel
    for ax, name in zip(axes, panels, strict=True):
        ax.set_title(_panel_title(name, width), fontsize=size, loc="left")
        ax.set_ylabel(_panel_unit(name, units), fontsize=9)
        ax.xaxis.set_major_locator(MaxNLocator(integer=True))  # periods are whole numbers
        ax.axvline(0, color="#777777", linewidth=0.8, linestyle=":")
        ax.annotate(
            "today",  # period 0: the market as it is
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
        lowest = max(i for i in range(col, len(panels), cols)) if col < len(panels) else None
        if lowest is None:
            continue
        axes[lowest].set_xlabel(_period_label(units))
        axes[lowest].xaxis.set_tick_params(labelbottom=True)
    return axes


def footnote(form: str, cautions, prefix: str = "") -> str:
    """The model form, the lower-bound warning where the answer carries it, and the caution."""
    lines = [f"Model: {form.replace('_', '-')} form. {prefix}{CAUTION}"]
    if any("lower bound" in c for c in cautions):
        lines.append(LOWER_BOUND)
    return "\n".join(lines)


def _finish(figure, title: str, note: str, handles, labels, key: dict | None = None) -> None:
    ncols = min(4, max(1, len(labels)))
    rows = -(-len(labels) // ncols)
    _frame(figure, title, note, rows, key, handles=handles, labels=labels, ncols=ncols)


def _draw_panel(ax, path: dict, name: str, periods, style: dict):
    """One policy's line(s) on one panel; the line that stands for the policy in the legend."""
    if name == RENTS_PANEL:
        covered, uncovered = (_series(path, r) for r in RENTS)
        if covered is None or uncovered is None:  # a path without the split: its one rent
            (line,) = ax.plot(periods, path["consumer_price"], **{**style, "alpha": 0.35})
            return line
        (line,) = ax.plot(periods, covered, **style)
        ax.plot(periods, uncovered, **{**style, "linestyle": "--", "marker": None})
        return line
    (line,) = ax.plot(periods, _series(path, name), **style)
    return line


@_plain_text
def render_paths(
    body: dict,
    units: dict,
    fmt: str,
    form: str,
    title: str | None = None,
    panels: list[str] | None = None,
) -> bytes:
    """Small multiples of a /v1/paths body: one line per policy, one panel per series asked for
    (`panels`; default DEFAULT_PANELS where the answer carries them); 422 at /panels/i for a
    panel the answer does not carry."""
    chosen = choose_panels(body["paths"], panels)
    figure = _figure()
    periods = body["periods"]
    axes = _axes_grid(figure, periods, units, chosen)
    handles = []
    for i, path in enumerate(body["paths"]):
        for ax, name in zip(axes, chosen, strict=True):
            line = _draw_panel(ax, path, name, periods, _style(i))
        handles.append(line)
    labels_ = [p["name"] for p in body["paths"]]
    heading = title or ("Transition paths by policy" if len(chosen) > 1 else _panel_title(chosen[0], 120))
    _finish(figure, heading, footnote(form, body["cautions"], _money_note(chosen)), handles, labels_)
    return _save(figure, fmt)


def _money_note(panels) -> str:
    """Which money the panels are in (every money series is real unless its name says nominal)."""
    nominal = [p for p in panels if p.startswith("nominal_")]
    if nominal and len(nominal) < len(panels):
        return f"Money in {labels.REAL} unless a panel says {labels.NOMINAL}. "
    if nominal:
        return "Money of the day: rents as paid, not adjusted for inflation. "
    return f"Money in {labels.REAL}. "


def ordinal(percentile: str | float) -> str:
    """A percentile in words: 5th, 21st, 2.5th."""
    text = f"{float(percentile):g}"
    n = float(percentile)
    if n.is_integer() and int(n) % 100 not in (11, 12, 13):
        return text + {1: "st", 2: "nd", 3: "rd"}.get(int(n) % 10, "th")
    return text + "th"


def band_key(percentiles, draws: int) -> list[str]:
    """What a band chart's marks are, from the percentiles asked for: the shaded ribbons (the
    outermost pair of percentiles, then each pair inside it darker) and the line."""
    keys = sorted(percentiles, key=float)
    pairs = [(keys[d], keys[-1 - d]) for d in range(len(keys) // 2)]
    key = labels.BAND_KEY  # the words, shared with the page's caption
    words = [
        (key["outer"] if depth == 0 else key["inner"][min(depth, 2) - 1]).format(
            low=ordinal(low), high=ordinal(high), draws=f"{draws:,}"
        )
        for depth, (low, high) in enumerate(pairs)
    ]
    return [*words, key["line"]]


def _band_key_handles(percentiles, draws: int) -> dict:
    """The key row of a band chart: a grey swatch per shade and a line, worded by band_key."""
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    words = band_key(percentiles, draws)
    shades = [
        Patch(facecolor=("#555555", 0.10 + 0.06 * depth), edgecolor=("#555555", 0.45), linewidth=0.7)
        for depth in range(len(words) - 1)
    ]
    return {"handles": [*shades, Line2D([], [], color="#555555", linewidth=1.8)], "labels": words}


@_plain_text
def render_bands(
    body: dict,
    units: dict,
    fmt: str,
    form: str,
    title: str | None = None,
    panels: list[str] | None = None,
) -> bytes:
    """The central path of each policy with shaded percentile ribbons around it, one panel per
    series that the bands carry (`panels` as in render_paths)."""
    return _save(bands_figure(body, units, form, title, panels), fmt)


def bands_figure(
    body: dict,
    units: dict,
    form: str,
    title: str | None = None,
    panels: list[str] | None = None,
):
    """The figure of render_bands, with a key row saying which percentiles are shaded and what
    the line is (band_key)."""
    # A panel needs its percentiles: only series that every band carries are drawn; the rents
    # of controlled and uncontrolled homes as two panels (one ribbon each).
    with_q = [
        {k: v for k, v in p.items() if k in b["series"]}
        for p, b in zip(body["central"]["paths"], body["bands"], strict=True)
    ]
    chosen = choose_panels(with_q, panels)
    chosen = list(dict.fromkeys(x for n in chosen for x in (RENTS if n == RENTS_PANEL else (n,))))
    figure = _figure()
    periods = body["periods"]
    axes = _axes_grid(figure, periods, units, chosen)
    keys = sorted(body["bands"][0]["series"]["consumer_price"], key=float)
    handles = []
    for i, (band, central) in enumerate(zip(body["bands"], body["central"]["paths"], strict=True)):
        style = _style(i)
        line = None
        for ax, series in zip(axes, chosen, strict=True):
            if series not in band["series"]:  # e.g. the rents of controlled homes of a free market
                continue
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
        if line is None:  # none of the chosen panels is one of this policy's series
            from matplotlib.lines import Line2D

            line = Line2D([], [], **style)
        handles.append(line)
    labels_ = [b["name"] for b in body["bands"]]
    outer = f"{keys[0]}-{keys[-1]}th percentiles" if len(keys) > 1 else "percentile"
    heading = title or f"Central paths with {outer} over {body['draws']:,} draws"
    key = _band_key_handles(keys, body["draws"])
    _finish(figure, heading, footnote(form, body["cautions"], _money_note(chosen)), handles, labels_, key)
    return figure


def _input_label(pointer: str) -> str:
    parts = pointer.strip("/").split("/")[1:]
    return " ".join(p.replace("_", " ") for p in parts).replace("shifters ", "shifter: ")


def sensitivity_outputs(body: dict) -> list[str]:
    """The figures a tornado can show: the sensitivity answer's headlines."""
    return list(body.get("headlines") or ["discounted_deadweight_loss"])


def _headline_label(name: str) -> str:
    key = name[len("total_") :] if name.startswith("total_") else name
    if key in (k.split(".", 1)[1] for k in labels.TOTALS if k.startswith("distribution_totals.")):
        return labels.label(f"distribution_totals.{key}", totals=True, term=False)
    for candidate in (name, f"vs_free_path_totals.{name}"):
        if candidate in labels.TOTALS:
            return labels.label(candidate, totals=True)
    return labels.label(name, totals=True)


def _headline_unit(name: str, units: dict) -> str:
    for candidate in (
        name,
        f"vs_free_path_totals.{name}",
        f"distribution_totals.{name.removeprefix('total_')}",
    ):
        if candidate in labels.TOTALS:
            return labels.unit(candidate, units, totals=True)
    return ""


@_plain_text
def render_sensitivity(
    body: dict,
    units: dict,
    fmt: str,
    form: str,
    policy: str | None,
    title: str | None = None,
    output: str | None = None,
) -> bytes:
    """A tornado chart of one policy's `output` (a headline of the answer; default the discounted
    deadweight loss), inputs largest swing on top, each bar end labelled with its value; 422 at
    /output for a figure the answer does not rank and at /policy for a name it does not have
    (no policy: the one whose `output` swings most)."""
    return _save(sensitivity_figure(body, units, form, policy, title, output), fmt)


def sensitivity_figure(
    body: dict,
    units: dict,
    form: str,
    policy: str | None,
    title: str | None = None,
    output: str | None = None,
):
    """The figure of render_sensitivity (its title wrapped to the figure's width)."""
    from matplotlib.patches import Patch

    outputs = sensitivity_outputs(body)
    output = output or "discounted_deadweight_loss"
    if output not in outputs:
        raise ProblemError(
            validation_problem(
                {"output": [f"Not a headline of this answer; it ranks: {', '.join(outputs)}."]}
            )
        )
    names = [p["name"] for p in body["central"]["paths"]]
    if policy is not None and policy not in names:
        raise ProblemError(
            validation_problem({"policy": [f"No policy of this name; the scenario has: {', '.join(names)}."]})
        )
    chosen = policy
    if chosen is None:
        swings = {n: 0.0 for n in names}
        for item in body["inputs"]:
            for p in item["policies"]:
                swings[p["name"]] = max(swings[p["name"]], p["swing"].get(output) or 0.0)
        chosen = max(names, key=lambda n: swings[n])
    index = names.index(chosen)
    central = _central_figure(body["central"]["summary"][index], output)
    figure = _figure()
    ax = figure.subplots()
    # largest swing of this output at the top
    inputs = sorted(body["inputs"], key=lambda item: item["policies"][index]["swing"].get(output) or 0.0)
    ylabels = []
    ends = []
    for row, item in enumerate(inputs):
        p = item["policies"][index]
        low, high = p["low"].get(output), p["high"].get(output)
        low_note = " (more elastic)" if item["high"] < 0 else ""
        ylabels.append(f"{_input_label(item['pointer'])}\n{item['low']:.3g}{low_note} to {item['high']:.3g}")
        for value, colour, hatch in ((low, PALETTE[2], "//"), (high, PALETTE[1], "..")):
            if value is None:
                continue
            ax.barh(
                row, value - central, left=central, color=colour, hatch=hatch, edgecolor="white", height=0.6
            )
            ends.append(value)
            right = value >= central
            ax.annotate(
                _value_label(value),
                xy=(value, row),
                xytext=(4 if right else -4, 0),
                textcoords="offset points",
                ha="left" if right else "right",
                va="center",
                fontsize=9,
            )
    ax.axvline(central, color="#000000", linewidth=1.0)
    ax.annotate(
        f"central {_value_label(central)}",
        xy=(central, 1),
        xycoords=("data", "axes fraction"),
        xytext=(3, 3),
        textcoords="offset points",
        fontsize=9,
    )
    if ends:  # room for the labels at both ends
        lo, hi = min([*ends, central]), max([*ends, central])
        pad = (hi - lo) * 0.18 or abs(central) * 0.1 or 1.0
        ax.set_xlim(lo - pad, hi + pad)
    ax.set_yticks(range(len(inputs)), ylabels)
    unit = _headline_unit(output, units)
    # Wrapped to the axes' width: a headline's unit can be a long phrase.
    ax.set_xlabel(textwrap.fill(f"{_headline_label(output)}" + (f" [{unit}]" if unit else ""), 110))
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
    what = _headline_label(output)
    heading = title or f"What moves '{what}' under '{chosen}'"
    note = footnote(form, body["cautions"], "One input at a time. ")
    _frame(figure, heading, note, 1, handles=handles, ncols=2)
    return figure


def _value_label(value: float) -> str:
    """A bar end's value: whole numbers below 100,000 (1,308), else four figures (1.308M)."""
    if 100 <= abs(value) < 1e5:
        return f"{value:,.0f}"
    if abs(value) < 100:
        return f"{value:.3g}"
    for size, suffix in ((1e12, "T"), (1e9, "B"), (1e6, "M"), (1e3, "k")):
        if abs(value) >= size:
            return f"{value / size:.4g}{suffix}"
    return f"{value:.4g}"


def _central_figure(summary: dict, output: str) -> float:
    """A headline of the central answer's summary (group totals and free-path totals nested)."""
    if output in summary:
        return summary[output]
    group = output.removeprefix("total_")
    if group in (summary.get("distribution_totals") or {}):
        return summary["distribution_totals"][group]
    return (summary.get("vs_free_path_totals") or {}).get(output, 0.0)


def gains_and_losses(body: dict) -> np.ndarray:
    """(policies, groups) each group's change summed over the horizon (groups in GROUPS order;
    money per model period x k): the engine's own discounted totals (the summary's
    `distribution_totals_discounted`). Raises ProblemError (422, pointer /welfare/rationing)
    where the body reports no distribution (random rationing)."""
    if any(p["distribution"] is None for p in body["paths"]):
        raise ProblemError(validation_problem({"welfare": {"rationing": [NOT_UNDER_RANDOM]}}))
    totals = [s["distribution_totals_discounted"] for s in body["summary"]]
    return np.array([[t[g] for g, _ in GROUPS] for t in totals], dtype=float)


def _signed(value: float, largest: float | None = None) -> str:
    """+1.23M, \u22121.23M, 0: a gain or a loss at a glance; with `largest`, on its scale
    (_in_scale_of)."""
    if value == 0.0:
        return "0"
    return ("+" if value > 0 else MINUS) + (
        _compact(abs(value)) if largest is None else _in_scale_of(abs(value), largest)
    )


#: A net total smaller than this share of the groups' gains and losses is their rounding: where a
#: rule only moves money between groups, what one gains another loses to the last few digits.
NET_ROUNDING = 1e-9


def _net(values: np.ndarray) -> float:
    """The groups' net total (minus the deadweight loss), 0 where it is rounding (NET_ROUNDING)."""
    net = float(values.sum())
    return 0.0 if abs(net) <= NET_ROUNDING * float(np.abs(values).sum()) else net


def _discounting(request: dict, period: str) -> str:
    rate = (request.get("welfare") or {}).get("discount_rate", 0.0)
    if isinstance(rate, list):
        steps = "; ".join(f"{s['rate'] * 100:.3g} % through period {s['through_period']}" for s in rate[:3])
        more = "; ..." if len(rate) > 3 else ""
        return f"discounted per {period} at {steps}{more} (the last rate holds after)"
    if rate == 0:
        return "not discounted"
    return f"discounted at {rate * 100:.3g} % per {period}"


def _gains_figure(body: dict, values: np.ndarray, units: dict, note: str, title: str, basis: str):
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
    largest = float(np.abs(values).max()) if values.size else 0.0  # every bar label on its scale
    reach = largest * 1.45 if largest > 0 else 1.0  # room for the value labels, zero in the middle
    colours = [c for c, _ in GROUP_STYLES]
    hatches = [h for _, h in GROUP_STYLES]
    rows_y = np.arange(len(GROUPS))
    small = 9 if len(names) <= 9 else 7
    for ax, name, row in zip(cells, names, values, strict=False):
        bars = ax.barh(rows_y, row, color=colours, hatch=hatches, edgecolor="white", height=0.7)
        ax.axvline(0, color="#000000", linewidth=1.0)
        ax.set_title(f"{name}: net {_signed(_net(row))}", fontsize=11, loc="left")
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
                _signed(value, largest),
                xy=(value, bar.get_y() + bar.get_height() / 2),
                xytext=(3 if value >= 0 else -3, 0),
                textcoords="offset points",
                ha="left" if value >= 0 else "right",
                va="center",
                fontsize=small,
            )
    first = cells[0]
    first.set_xlim(-reach, reach)
    # Two lines a group where a panel has the height for them, else one (no label over the next).
    first.set_yticks(rows_y, [textwrap.fill(label, 18 if rows <= 2 else 34) for _, label in GROUPS])
    first.invert_yaxis()  # the first group on top
    _compact_axis(first.xaxis)
    for col in range(cols):  # the lowest panel of each column carries the money axis
        lowest = cells[max(i for i in range(col, len(names), cols))]
        lowest.xaxis.set_tick_params(labelbottom=True)
        lowest.set_xlabel(
            # wrapped to what fits under one panel at 10 pt, the unit whole on the last line
            textwrap.fill(f"Gain (+) or loss (\u2212), {basis}", {1: 110, 2: 70}.get(cols, 48))
            + f"\n[{units['currency']}, {labels.REAL}]",
            fontsize=10,
        )
    handles = [
        Patch(facecolor=c, hatch=h, edgecolor="white", label=label)
        for (c, h), (_, label) in zip(GROUP_STYLES, GROUPS, strict=True)
    ]
    _frame(figure, title, note, 2, handles=handles, ncols=3)
    return figure


@_plain_text
def gains_and_losses_figure(body: dict, request: dict, units: dict, form: str, title: str | None = None):
    """The who-gains Figure of a /v1/paths body (`request`: its request, for the discount rate):
    one panel per policy, bar i of a panel drawing `gains_and_losses(...)[policy, i]`."""
    values = gains_and_losses(body)
    period = units.get("period", "period")
    horizon = len(body["periods"]) - 1
    lines = [
        EFFICIENT,
        f"Summed over {_plural(period)} 1 to {horizon}, {_discounting(request, period)}; "
        "one scale for every panel; the groups add up to minus the deadweight loss (the net in each title).",
        footnote(form, body["cautions"]),
    ]
    basis = gains_basis(request, horizon, period)
    return _gains_figure(body, values, units, "\n".join(lines), title or "Who gains and who loses", basis)


def gains_basis(request: dict, horizon: int, period: str = "period") -> str:
    """The basis of the who-gains bars in words: the total, its periods (in the period's word:
    years 1 to 15) and its discounting."""
    return f"total over {_plural(period)} 1 to {horizon}, {_discounting(request, period)}"


def _plural(period: str) -> str:
    """years, months, quarters, periods: the period's word for more than one."""
    return period if period.endswith("s") else period + "s"


def render_gains_and_losses(
    body: dict, request: dict, units: dict, fmt: str, form: str, title: str | None = None
) -> bytes:
    """Who gains and who loses under each policy as SVG or PNG; ProblemError (422) under random
    rationing."""
    return _save(gains_and_losses_figure(body, request, units, form, title), fmt)


#: The renters chart's bars: before the rule (grey), while it is active (blue), after its end
#: (vermillion): the gains during a rule and the losses it leaves after (MODEL.md section 19).
PHASES = (
    ("before the rule", "#999999", "xx"),
    ("while the rule is active", "#0072B2", ""),
    ("after the rule ends", "#D55E00", "//"),
)


def renters_phases(request: dict, body: dict) -> list[tuple[str, list[float], list[int]]]:
    """(policy name, vs_free_path.renters, the phase of each period: 0 before, 1 active, 2 after)
    of every path that carries the series, from the request's start and end of each policy."""
    out = []
    policies = {p["name"]: p for p in request.get("policies", [])}
    horizon = len(body["periods"]) - 1
    for path in body["paths"]:
        renters = _series(path, "vs_free_path.renters")
        if renters is None or path.get("kind") == "none":
            continue
        policy = policies.get(path["name"], {})
        start, end = policy.get("start", 1), policy.get("end") or horizon
        phases = [0 if t < start else 1 if t <= end else 2 for t in body["periods"]]
        out.append((path["name"], list(renters), phases))
    return out


@_plain_text
def render_renters(
    body: dict, request: dict, units: dict, fmt: str, form: str, title: str | None = None
) -> bytes:
    """Renters against the free path (the answer's `vs_free_path.renters`), one panel per policy,
    one bar per period coloured by the rule's phase, with the sums during and after the rule in
    the panel's title. 422 (pointer /adjustment) where the answer carries no such series (it
    needs the stock schedule)."""
    return _save(renters_figure(body, request, units, form, title), fmt)


@_plain_text
def renters_figure(body: dict, request: dict, units: dict, form: str, title: str | None = None):
    """The Figure of `render_renters`: panel titles wrapped to the panel's width (a long policy
    name never runs into the next panel or off the figure), whole periods on the period axis."""
    from matplotlib.patches import Patch
    from matplotlib.ticker import MaxNLocator

    rows = renters_phases(request, body)
    if not rows:
        raise ProblemError(
            validation_problem(
                {
                    "adjustment": [
                        "Renters against the free path need the stock schedule and a policy other than none."
                    ]
                }
            )
        )
    cols = 1 if len(rows) == 1 else 2 if len(rows) <= 4 else 3
    nrows = -(-len(rows) // cols)
    figure = _figure()
    grid = figure.subplots(nrows, cols, sharex=True, sharey=True, squeeze=False)
    cells = list(grid.flat)
    for ax in cells[len(rows) :]:
        ax.set_axis_off()
    periods = body["periods"]
    period = units.get("period", "period")
    for ax, (name, values, phases) in zip(cells, rows, strict=False):
        colours = [PHASES[k][1] for k in phases]
        hatches = [PHASES[k][2] for k in phases]
        ax.bar(periods, values, color=colours, hatch=hatches, edgecolor="white", width=0.8)
        ax.axhline(0, color="#000000", linewidth=1.0)
        during = sum(v for v, k in zip(values, phases, strict=True) if k == 1)
        after = sum(v for v, k in zip(values, phases, strict=True) if k == 2)
        ended = 2 in phases  # a rule in force to the horizon has no years after it here
        after_words = f"after {_signed(after)}" if ended else "in force to the end"
        width = {1: 90, 2: 60}.get(cols, 36)  # characters of a title line that fit above a panel
        ax.set_title(
            textwrap.fill(f"{name}: during {_signed(during)}, {after_words}", width), fontsize=11, loc="left"
        )
        ax.xaxis.set_major_locator(MaxNLocator(integer=True))  # periods are whole numbers
        ax.grid(True, axis="y", color="#dddddd", linewidth=0.6)
        ax.set_axisbelow(True)
        _compact_axis(ax.yaxis)
        ax.set_ylabel(textwrap.fill(labels.unit("vs_free_path.renters", units), 34), fontsize=9)
    for col in range(min(cols, len(rows))):
        lowest = cells[max(i for i in range(col, len(rows), cols))]
        lowest.xaxis.set_tick_params(labelbottom=True)
        lowest.set_xlabel(_period_label(units))
    heading = title or "Renters against the free market path: gains while the rule lasts, losses after"
    lines = [
        "Each bar: renters' gain (+) or loss (\u2212) in that "
        f"{period} against the same market without any rule (the free path), not discounted; "
        "sums in each title.",
        footnote(form, body["cautions"], f"Money in {labels.REAL}. "),
    ]
    handles = [Patch(facecolor=c, hatch=h, edgecolor="white", label=lab) for lab, c, h in PHASES]
    _frame(figure, heading, "\n".join(lines), 1, handles=handles, ncols=3)
    return figure

"""The renters-against-the-free-path chart as a council reader sees it: every panel title whole,
inside the figure and clear of the next panel's, and whole years on the period axis."""

from __future__ import annotations

import pytest

from service import simulate
from service.examples import example_request

from .http.test_charts import HOUSING

pytest.importorskip("matplotlib")


def _drawn_figure(copies: int = 1):
    """Tollbrae's chart: two rules with long names side by side (a strict cap, a cap exempting
    new homes); with `copies`, each rule that many times (narrower panels, three columns)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from service.charts import renters_figure

    request = example_request("tollbrae-decontrol-and-exempt-building")
    free, *rules = request["policies"]
    request["policies"] = [free] + [
        {**p, "name": f"{p['name']} ({k + 1})"} for k in range(copies) for p in rules
    ]
    figure = renters_figure(simulate(request), request, HOUSING, "linear")
    canvas = FigureCanvasAgg(figure)
    canvas.draw()
    return figure, canvas.get_renderer()


def test_panel_titles_stay_inside_the_figure_and_clear_of_each_other():
    figure, renderer = _drawn_figure()
    panels = [ax for ax in figure.axes if ax.axison]
    assert len(panels) == 2
    boxes = [ax.title.get_window_extent(renderer) for ax in panels]
    width = figure.bbox.width
    for box, ax in zip(boxes, panels, strict=True):
        assert 0 <= box.x0 and box.x1 <= width, ax.get_title()
    left, right = boxes
    assert left.x1 <= right.x0, (panels[0].get_title(), panels[1].get_title())


def test_the_period_axis_shows_whole_years():
    figure, _ = _drawn_figure(copies=3)
    # The lowest panel of each column carries the period axis.
    ticks = [t.get_text() for ax in figure.axes if ax.axison for t in ax.get_xticklabels() if t.get_text()]
    assert ticks, "no period ticks"
    assert all("." not in t for t in ticks), ticks

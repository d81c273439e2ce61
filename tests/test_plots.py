"""The charts ``--plot`` writes: the page's tornado, a surface that marks the case, whole years on risk axes.

Sources named beside each check:

* the page's own tornado chart (tea.outputs.whatmoves) is the reference for
  the file's: same colours, same unit words (common practice: one chart, one
  look, wherever it is shown);
* the case's own inputs place the marker on the break-even surface;
* common practice: a year axis counts whole years.
"""

from __future__ import annotations

import matplotlib.colors as mcolors
import pytest

import tea
from tea.analysis import risk, sensitivity
from tea.outputs import charts, plots, whatmoves

from conftest import CASES_DIR

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"


@pytest.fixture(scope="module")
def run():
    return sensitivity.run(tea.load_case(CLAY), with_surface=True)


def test_tornado_file_has_the_pages_colours_and_units(run):
    fig = plots.tornado(run)
    colours = {mcolors.to_hex(p.get_facecolor()) for p in fig.axes[0].patches}
    assert colours == {charts.TORNADO_LOW, charts.TORNADO_HIGH}
    page = whatmoves.tornado_parts(run.case, run, "npv")
    assert page["unit_label"] in fig.axes[0].get_xlabel() and page["unit_label"] == "EUR per ha"
    labels = [t.get_text() for t in fig.axes[0].get_yticklabels()]
    assert labels == list(reversed(page["labels"]))


def test_surface_marks_the_case_itself(run):
    fig = plots.surface(run)
    ax = fig.axes[0]
    marker = next(line for line in ax.get_lines() if line.get_label() == "this case")
    x, y = marker.get_xdata()[0], marker.get_ydata()[0]
    assert x == pytest.approx(run.case["revenue.price_per_t_dm"])  # the case's price, EUR/t DM
    assert y == pytest.approx(run.case["yield.mature_t_dm_per_ha"])  # and mature yield, t DM/ha


def test_risk_year_axis_has_whole_years_only():
    res = risk.run(tea.load_case(CLAY), draws=400, seed=1, progress=False)
    fig = plots.risk(res)
    fig.canvas.draw() if hasattr(fig.canvas, "draw") else None
    ax = fig.axes[1]
    lo, hi = ax.get_xlim()
    ticks = [t for t in ax.get_xticks() if lo <= t <= hi]
    assert ticks and all(float(t).is_integer() for t in ticks), ticks

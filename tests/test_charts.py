"""Charts of the printed summary: tick labels, labels that stay clear of the data, SVG text.

Sources named beside each check:

* common practice (any charting handbook): a tick label reads as the value of
  the gridline it marks, so the label, read as a number, equals the tick value;
* matplotlib's tick locator chooses the gridlines; the labels come from
  matplotlib's ScalarFormatter, read back here from the drawn figure and from
  the SVG text matplotlib wrote;
* NIST Handbook 44 Appendix C (1 acre = 0.40468564224 ha, 1 short ton = 0.90718474 t)
  for the US customary case, through the engine's own conversion.
"""

from __future__ import annotations

import re

import numpy as np
import pytest

import tea
from tea.outputs import charts, report

from conftest import CASES_DIR

MINUS = "\u2212"


def _value(label: str) -> float:
    """A tick label read as a number (true minus sign, thousands separators)."""
    return float(label.replace(MINUS, "-").replace(",", ""))


def _decimals(label: str) -> int:
    return len(label.split(".")[1]) if "." in label else 0


def _svg_texts(svg: str) -> list[str]:
    return [t.strip() for t in re.findall(r"<text[^>]*>([^<]*)</text>", svg)]


def _check_labels(chart: charts.Chart, axis: str = "y") -> list[float]:
    """Every label of an axis equals its gridline's value and is drawn in the SVG; returns the steps."""
    ticks = [(v, t) for a, v, t in chart.ticks if a == axis]
    assert len(ticks) >= 2, chart.ticks
    texts = _svg_texts(chart.svg)
    digits = {_decimals(t) for _, t in ticks}
    assert len(digits) == 1, f"labels with different decimals: {ticks}"  # common practice: one format per axis
    for value, label in ticks:
        # common practice: the label is the gridline's value, to the decimals shown, with nothing rounded away
        assert _value(label) == pytest.approx(value, abs=1e-9 * max(1.0, abs(value))), (label, value)
        assert label in texts, f"{label} is not drawn in the SVG"
    values = [v for v, _ in ticks]
    return [round(b - a, 9) for a, b in zip(values, values[1:])]


@pytest.mark.parametrize(("top", "step"), [(1.0, 0.25), (6.0, 1.5), (11.0, 2.5)])
def test_yield_axis_labels_equal_their_gridlines(top, step):
    """The three steps the hand-written formatter got wrong (labels 0.2/0.5/0.8, 2/3/4, 2/5/8)."""
    years = list(range(0, 11))
    grown = list(np.linspace(0.0, top, len(years)))
    chart = charts.yield_by_age(years, grown, grown, [1] * len(years), "t DM per ha", name="t")
    steps = _check_labels(chart)
    assert set(steps) == {step}, steps  # the locator's step for this range (matplotlib MaxNLocator)


def test_year_axis_has_whole_years_only():
    years = [0.0, 1.0, 2.0, 3.0]  # a short axis, where a locator would otherwise choose half years
    chart = charts.yield_by_age(years, [0, 1, 2, 2], [0, 0.5, 1.8, 1.8], [0, 1, 1, 1], "t DM per ha", name="t")
    xs = [v for a, v, _ in chart.ticks if a == "x"]
    assert xs and all(float(v).is_integer() for v in xs), xs
    _check_labels(chart, "x")


def test_money_axis_labels_equal_their_gridlines():
    years = list(range(0, 21))
    cumulative = list(np.cumsum([-2420.0] + [150.0] * 20))
    chart = charts.cumulative_cash(years, cumulative, None, "EUR per ha", name="c")
    _check_labels(chart)


def test_us_customary_page_charts_label_every_gridline_with_its_value():
    """The US demo case: yield in short tons per acre, money per acre; every numeric axis of the page."""
    case = tea.load_case(CASES_DIR / "sandy_slope_switchgrass.toml")
    assert case.unit_system == "us_customary"
    frame = tea.build_ledger(case)
    res = tea.summarise(case, frame)
    drawn = report.page_charts(case, frame, res, "us")
    units = " ".join(" ".join(_svg_texts(c.svg)) for c in drawn)
    assert "short ton" in units and "acre" in units
    for chart in drawn:
        _check_labels(chart, "y")
        _check_labels(chart, "x")


def _tick_label_boxes(fig):
    """The drawn tick labels of the first axes' horizontal axis inside its view, left to right, measured by
    matplotlib's Agg renderer (an engine apart from the measure the chart is spaced by)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig).draw()
    ax = fig.axes[0]
    lo, hi = sorted(ax.get_xlim())
    labels = [t for t in ax.xaxis.get_ticklabels() if t.get_text() and lo <= t.get_position()[0] <= hi]
    return sorted((t.get_window_extent() for t in labels), key=lambda b: b.x0)


@pytest.mark.parametrize("width_in", [7.2, 3.5, 2.35])  # the page's tornado widths: full, beside, split
@pytest.mark.parametrize("scale", [1.0, 1e6, 1e9])
def test_value_axis_labels_never_run_into_each_other(scale, width_in):
    """A price of a billion per tonne made the tornado chart's NPV axis one unreadable row of digits: its
    labels stay apart (common practice: a tick label must be legible on its own) and still equal their
    gridlines, at small and absurd magnitudes alike."""
    labels = ["Yield from site climate (13.3 / 32.1 t DM/ha/yr)", "Stand life* (15 / 25 yr)",
              "Discount rate (4.80 % / 7.20 %)", "Biomass price* (75.0 / 115 EUR/t DM)"]
    low = [69.4 * scale, 88.9 * scale, 97.3 * scale, 0.1 * scale]
    high = [167.4 * scale, 123.3 * scale, 121.7 * scale, 110.0 * scale]
    args = (labels, low, high, 108.6 * scale, "EUR per ha")
    with charts.style():
        fig = charts.tornado_figure(*args, width_in=width_in)
        charts.spaced(fig)
    boxes = _tick_label_boxes(fig)
    # still a scale to read: where the row labels leave the axis too short for two labels, one
    assert len(boxes) >= (2 if width_in > 3 else 1), boxes
    for left, right in zip(boxes, boxes[1:]):
        assert left.x1 < right.x0, f"tick labels touch: {left} and {right}"
    if len(boxes) > 1:
        _check_labels(charts.tornado(*args, name="t", width_in=width_in), "x")


@pytest.mark.parametrize("payback", [3, 17])
def test_payback_label_stays_clear_of_the_cash_line(payback):
    """The label's box holds no point of the cash line (checked along each segment) for an early and a late payback."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    years = list(range(0, 21))
    flows = [-2000.0] + [2000.0 / payback] * 20  # back to zero exactly at the payback year
    cumulative = list(np.cumsum(flows))
    fig = charts.cash_figure(years, cumulative, float(payback), "EUR per ha")
    FigureCanvasAgg(fig).draw()
    ax = fig.axes[0]
    label = next(t for t in ax.texts if "pays back" in t.get_text())
    box = label.get_window_extent().padded(1.0)
    xs = np.linspace(0, 20, 2001)
    line = ax.transData.transform(np.column_stack([xs, np.interp(xs, years, cumulative)]))
    inside = box.contains_points(line) if hasattr(box, "contains_points") else \
        [(box.x0 <= x <= box.x1) and (box.y0 <= y <= box.y1) for x, y in line]
    assert not np.any(inside), f"the payback label covers the cash line (payback in year {payback})"
    # and the label stays inside the figure
    fig_box = fig.bbox
    assert fig_box.x0 <= box.x0 and box.x1 <= fig_box.x1 and fig_box.y0 <= box.y0 and box.y1 <= fig_box.y1


def test_a_crowded_comparison_panel_names_the_highest_and_lowest_and_greys_the_rest():
    """Twelve cases on one panel (more than the eight the chart colours apart): the three whose running total
    ends highest and the one that ends lowest are named; the others are one legend entry, as the alt text says.
    Invented lines, for the drawing only."""
    years = [0.0, 1.0, 2.0, 3.0]
    ends = [5.0, 12.0, -3.0, 8.0, 1.0, 9.0, 2.0, 4.0, 7.0, 11.0, 0.5, 6.0]
    series = [charts.Series(f"{i + 1}. field {i + 1}", years, [-10.0, -5.0, 0.0, e], None) for i, e in enumerate(ends)]
    assert charts.named_series(series) == [1, 2, 5, 9]  # ends 12, -3, 9 and 11
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error")  # e.g. a legend tight_layout cannot make room for
        chart = charts.compare_cumulative([("EUR per ha", series)], name="crowded")
    texts = _svg_texts(chart.svg)
    legend = [t for t in texts if re.fullmatch(r"\d+\. field \d+|\d+ other cases", t)]
    assert legend == ["2. field 2", "3. field 3", "6. field 6", "10. field 10", "8 other cases"]
    assert "and 8 other cases in grey" in chart.alt
    few = charts.compare_cumulative([("EUR per ha", series[:3])], name="few")
    assert [t for t in _svg_texts(few.svg) if "field" in t] == ["1. field 1", "2. field 2", "3. field 3"]


def test_dollar_signs_in_a_name_are_text_not_math_markup():
    """matplotlib reads $...$ as math markup unless escaped: a case named with dollar signs shows them."""
    series = [charts.Series("1. $\\frac{1}{2}$ acre", [0.0, 1.0], [-1.0, 2.0], None)]
    chart = charts.compare_cumulative([("USD per acre", series)], name="dollars")
    assert "1. $\\frac{1}{2}$ acre" in _svg_texts(chart.svg)


_DRAW_IN_A_FRESH_PROCESS = """
import hashlib, sys
import tea
from tea.outputs import chart_library, charts
from tea.outputs.page import page_chart_specs
from tea.outputs.whatmoves import SensitivityViews

chart_library.QUICK_IMPORT = sys.argv[1] == "quick"
chart_library.load()
from matplotlib import artist
from matplotlib.lines import Line2D

case = tea.load_case(sys.argv[2])
ledger = tea.build_ledger(case)
specs = page_chart_specs(case, ledger, tea.summarise(case, ledger), "case-0")
specs.append(SensitivityViews(case, True, "case-0").below_spec())
print(hashlib.sha256("".join(c.svg for c in charts.draw_all(specs)).encode()).hexdigest())
line = Line2D([0, 1], [0, 1])
line.set(linewidth=2.5, color="red")
print(line.get_linewidth(), line.get_color())
try:
    line.set(widht=1)
except AttributeError as exc:
    print("refused:", exc)
print(artist.kwdoc.__module__, artist.Artist._update_set_signature_and_docstring.__func__.__module__)
print("generated docs:", "linewidth" in (Line2D.set.__doc__ or ""))
"""


def test_the_quick_import_draws_the_same_charts_and_matplotlib_works_as_before():
    """With :data:`chart_library.QUICK_IMPORT` (tea's command line) matplotlib's artists are made without their
    generated ``set`` docstrings: each in a fresh interpreter, every kind of page chart is the same SVG bytes,
    ``set`` sets properties and refuses a misspelt one with matplotlib's own error, and matplotlib's functions
    are its own again after the import. Without it, the docstrings are matplotlib's (the check can fail)."""
    import subprocess
    import sys

    runs = {how: subprocess.run([sys.executable, "-c", _DRAW_IN_A_FRESH_PROCESS, how,
                                 str(CASES_DIR / "clay_corner_miscanthus.toml")],
                                capture_output=True, text=True, check=True).stdout.splitlines()
            for how in ("quick", "full")}
    quick, full = runs["quick"], runs["full"]
    assert quick[:-1] == full[:-1]
    assert quick[1] == "2.5 red" and quick[2].startswith("refused:") and "widht" in quick[2]
    assert quick[3] == "matplotlib.artist matplotlib.artist"
    assert (quick[-1], full[-1]) == ("generated docs: False", "generated docs: True")

"""Charts of the printed summary: matplotlib figures returned as inline SVG.

Every chart function takes plain numbers already in the units the page shows
(the report converts them with :func:`tea.inputs.display.convert`) and returns a
:class:`Chart`, whose ``svg`` is markup ready to sit inside an HTML page:

* no XML prolog, DOCTYPE or metadata block (nothing refers outside the page);
* every ``id`` prefixed with the chart's own name, so several charts can share
  one HTML document without their clip paths and glyphs colliding;
* deterministic bytes: a fixed ``svg.hashsalt``, no date in the metadata,
  text kept as text (``svg.fonttype = "none"``) in DejaVu Sans.

Figures are built with :class:`matplotlib.figure.Figure` directly, never through
pyplot, so no global figure state or GUI backend is involved. matplotlib is
imported when a chart is first drawn (:mod:`tea.outputs.chart_library`), not
with this module: a process that only describes its charts (:class:`Spec`)
and has them drawn in a worker (:func:`tea.outputs.workers.stand_by`) never
loads it.

Text given to a chart (legend labels, axis labels) is escaped by matplotlib's
SVG writer; a ``$`` is escaped here so that a case's name is never read as
mathematical markup.
"""

from __future__ import annotations

import io
import math
import os
import re
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Sequence

from tea.outputs import chart_library, chart_markup as markup
from tea.outputs.chart_markup import LATER, Chart  # noqa: F401 - a chart as the page holds it

os.environ.setdefault("MPLBACKEND", "Agg")

if TYPE_CHECKING:
    from matplotlib.figure import Figure
    from matplotlib.ticker import ScalarFormatter

#: matplotlib settings every chart is drawn with (fixed, so the output is byte-stable)
STYLE = {
    "svg.hashsalt": "tea-report",
    "svg.fonttype": "none",
    "font.family": "DejaVu Sans",
    "font.size": 6.5,
    "axes.titlesize": 7.0,
    "axes.labelsize": 6.5,
    "axes.linewidth": 0.6,
    "axes.edgecolor": "#555555",
    "axes.labelcolor": "#333333",
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.unicode_minus": True,
    "xtick.labelsize": 6.0,
    "ytick.labelsize": 6.0,
    "xtick.color": "#444444",
    "ytick.color": "#444444",
    "xtick.major.width": 0.5,
    "ytick.major.width": 0.5,
    "xtick.major.size": 2.5,
    "ytick.major.size": 2.5,
    "legend.fontsize": 6.0,
    "legend.frameon": False,
    "lines.linewidth": 1.4,
    "figure.autolayout": False,  # the charts' margins come from their own tight_layout call
    "figure.constrained_layout.use": False,
}

#: colours of the page (also used by the stylesheet): ink, gain, loss, muted, accent
INK, GAIN, LOSS, MUTED, ACCENT = "#1f2a30", "#2e7d4f", "#b23a2a", "#8a9399", "#2b5d8a"
#: line colours for several cases on one chart (distinguishable in grey print too, with the markers)
SERIES = ("#2b5d8a", "#c0762a", "#2e7d4f", "#8a3f8f", "#5b6770", "#b23a2a", "#1c8c9c", "#7a6a1f")
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")

#: default size of one chart on the page [in]: a third of the printable width of A4
WIDTH_IN, HEIGHT_IN = 2.40, 1.50
#: room kept free of the cash line for the two-line payback label, as a share of the y range
LABEL_ROOM = 0.32


#: the chart functions a :class:`Spec` may name
DRAWN_BY_SPEC = ("cumulative_cash", "yield_by_age", "soil_carbon", "compare_cumulative", "tornado")


@dataclass(frozen=True)
class Spec:
    """A chart described by plain values: the chart function of this module (``kind``) and its arguments.

    A process can describe its charts without drawing them and hand the
    descriptions to a worker process (they pickle), which draws them
    (:func:`draw_all`) and sends the :class:`Chart` objects back; drawn
    anywhere, a spec gives the same chart.
    """

    kind: str
    args: dict[str, Any] = field(default_factory=dict)

    def draw(self) -> Chart:
        if self.kind not in DRAWN_BY_SPEC:
            raise ValueError(f"chart kind {self.kind!r}: expected one of {', '.join(DRAWN_BY_SPEC)}")
        return globals()[self.kind](**self.args)

    def outline(self) -> Chart:
        """The chart with its name, title and alternative text but not yet drawn (no SVG), made without the
        chart library: a page can be laid out with it while the chart is drawn elsewhere (:attr:`Chart.src`)."""
        if self.kind not in DRAWN_BY_SPEC:
            raise ValueError(f"chart kind {self.kind!r}: expected one of {', '.join(DRAWN_BY_SPEC)}")
        words = {"cumulative_cash": cash_words, "yield_by_age": yield_words, "soil_carbon": soil_words,
                 "compare_cumulative": compare_words, "tornado": tornado_words}[self.kind]
        title, alt = words(**self.args)
        import inspect

        given = {k: p.default for k, p in inspect.signature(globals()[self.kind]).parameters.items()
                 if p.default is not p.empty}
        given.update(self.args)
        width = given["width_in"]
        height = tornado_height_in(len(given["labels"]), width, given["row_in"], given["scale"]) \
            if self.kind == "tornado" else given["height_in"]
        size = tuple(f"{72.0 * x:f}".rstrip("0").rstrip(".") for x in (width, height))  # as matplotlib writes it
        return Chart(name=given["name"], title=title, svg="", alt=alt, size_pt=size)


def draw_all_and_sent(specs: Sequence[Spec]) -> list[Chart]:
    """The charts of the specs, then of those sent once after (:meth:`tea.outputs.workers.Later.send`), ready
    for the PDF engine (:func:`draw_for_engine`): the first are drawn while the rest are being described."""
    from tea.outputs import workers

    drawn = draw_for_engine(specs)
    return drawn + draw_for_engine(workers.received())


def draw_all(specs: Sequence[Spec]) -> list[Chart]:
    """The charts of the specs, in order."""
    return [spec.draw() for spec in specs]


def draw_for_engine(specs: Sequence[Spec]) -> list[Chart]:
    """The charts of the specs, in order, each with its SVG for the PDF engine made (:attr:`Chart.engine_svg`):
    in the process that draws them, not in the one that lays the page out."""
    drawn = draw_all(specs)
    for chart in drawn:
        _ = chart.engine_svg
    return drawn


# ----------------------------------------------------------------------------- helpers
def plain(text: str) -> str:
    """Text safe for a matplotlib label: ``$`` cannot start mathematical markup."""
    return str(text).replace("$", r"\$")


def _num(value: float) -> str:
    """A number in a sentence or beside a bar: thousands separators, a true minus sign (U+2212)."""
    from tea.inputs import display

    a = abs(value)
    digits = 0 if a >= 10 or float(value).is_integer() else 1 if a >= 1 else 2
    return display.money(value, digits=digits).replace("-", "\u2212")


def formatter() -> ScalarFormatter:
    """matplotlib's own tick labels: as many decimals as the tick step needs, every label its gridline's value.

    No offset and no scientific notation, so that a label reads as the value it marks.
    """
    from matplotlib.ticker import ScalarFormatter

    f = ScalarFormatter(useOffset=False)
    f.set_scientific(False)
    return f


def axis_ticks(fig: Figure) -> tuple[tuple[str, float, str], ...]:
    """The ticks matplotlib draws on each axes of a drawn figure: (axis, value, label)."""
    out = []
    with style():
        for ax in fig.axes:
            for name, axis in (("x", ax.xaxis), ("y", ax.yaxis)):
                lo, hi = sorted(axis.get_view_interval())
                locs = [float(v) for v in axis.get_majorticklocs()]
                labels = axis.get_major_formatter().format_ticks(locs)
                eps = 1e-9 * max(1.0, abs(hi - lo))
                out.extend((name, v, t) for v, t in zip(locs, labels) if lo - eps <= v <= hi + eps and t)
    return tuple(out)


def style():
    """The context every chart is drawn in: matplotlib's settings :data:`STYLE` (matplotlib imported here,
    by :func:`tea.outputs.chart_library.load`)."""
    chart_library.load()
    import matplotlib

    return matplotlib.rc_context(STYLE)


def _locator(**kwargs):
    from matplotlib.ticker import MaxNLocator

    return MaxNLocator(**kwargs)


def _new_figure(width_in: float, height_in: float) -> Figure:
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width_in, height_in))
    fig.patch.set_alpha(0.0)
    return fig


def _style_axes(ax, years: Sequence[float]) -> None:
    ax.set_facecolor("none")
    ax.xaxis.set_major_locator(_locator(integer=True, nbins=8))  # whole years only
    ax.xaxis.set_major_formatter(formatter())
    ax.yaxis.set_major_formatter(formatter())
    ax.yaxis.set_major_locator(_locator(nbins=5))
    if len(years):
        ax.set_xlim(min(years) - 0.6, max(years) + 0.6)
    ax.grid(axis="y", color="#dddddd", linewidth=0.4)
    ax.set_axisbelow(True)
    ax.set_xlabel("year after planting")


def svg_of(fig: Figure, name: str) -> str:
    """The figure as inline SVG markup with ids prefixed by ``name``.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The finished figure (drawn under :data:`STYLE`).
    name : str
        Prefix of every element id, unique within the HTML page (letters,
        digits and ``-`` only).
    """
    markup.check_name(name)
    buf = io.StringIO()
    with style():
        # the figure's layout is final (made when the figure was): with no layout engine left on it, savefig
        # draws it once, instead of a dry run first and then again for the file
        fig.set_layout_engine(None)
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None, "Format": None, "Type": None})
    return markup.inline(buf.getvalue(), name)


def from_figure(fig: Figure, name: str, title: str, alt: str) -> Chart:
    """Any matplotlib figure (e.g. a sensitivity tornado) as a :class:`Chart` for the page.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The finished figure; it is scaled to the width of its place on the page.
    name : str
        Id prefix, unique on the page, e.g. ``"case-0-tornado"``.
    title : str
        Heading above the chart.
    alt : str
        One sentence saying what the chart shows.
    """
    return _finish(fig, name, title, alt)


#: the least room between two tick labels side by side [pt]
LABEL_GAP_PT = 4.0


def spaced(fig: Figure) -> None:
    """Fewer ticks on any horizontal axis of a laid-out figure whose tick labels would touch.

    matplotlib's locator picks the ticks from the axis's range alone, not from
    how wide their labels are: at large values (a price of a billion per
    tonne) the labels of a chart's value axis run into one another. Each
    label is measured as matplotlib will set it (:class:`matplotlib.textpath.TextToPath`,
    the figure's own font), and the axis's locator asked for one tick fewer
    until neighbours are :data:`LABEL_GAP_PT` apart; where not even two fit,
    one tick is kept. Only a locator that takes a number of ticks
    (matplotlib's ``MaxNLocator``) is changed.
    """
    import matplotlib
    from matplotlib.font_manager import FontProperties
    from matplotlib.textpath import TextToPath
    from matplotlib.ticker import FixedLocator, MaxNLocator

    measure, font = TextToPath(), FontProperties(size=matplotlib.rcParams["xtick.labelsize"])
    for ax in fig.axes:
        axis = ax.xaxis
        locator = axis.get_major_locator()
        lo, hi = sorted(axis.get_view_interval())
        width_pt = ax.get_position().width * fig.get_figwidth() * 72.0
        if not isinstance(locator, MaxNLocator) or not hi > lo or width_pt <= 0:
            continue
        bins = len(locator.tick_values(lo, hi))  # counted down from the ticks it gives now
        while bins > 1 and _touching(axis, locator.tick_values(lo, hi), lo, hi, width_pt, measure, font):
            bins -= 1
            locator.set_params(nbins=bins)
        inside = [float(v) for v in locator.tick_values(lo, hi) if lo <= v <= hi]
        if len(inside) > 1 and _touching(axis, inside, lo, hi, width_pt, measure, font):
            # not even two labels fit (an axis squeezed by long row labels): the one nearest the middle
            axis.set_major_locator(FixedLocator([min(inside, key=lambda v: abs(v - (lo + hi) / 2))]))


def _touching(axis, ticks, lo: float, hi: float, width_pt: float, measure, font) -> bool:
    """Whether two neighbouring tick labels of a horizontal axis ``width_pt`` long come closer than
    :data:`LABEL_GAP_PT`."""
    locs = [float(v) for v in ticks if lo <= v <= hi]
    labels = axis.get_major_formatter().format_ticks(locs)
    half = [measure.get_text_width_height_descent(t, font, ismath=False)[0] / 2 for t in labels]
    at = [(v - lo) / (hi - lo) * width_pt for v in locs]
    return any(at[i + 1] - at[i] < half[i] + half[i + 1] + LABEL_GAP_PT for i in range(len(at) - 1))


def _finish(fig: Figure, name: str, title: str, alt: str) -> Chart:
    with style():
        spaced(fig)
    svg = svg_of(fig, name)  # draws the figure: its ticks are final now
    ticks = axis_ticks(fig)
    return Chart(name=name, title=title, svg=markup.titled(svg, name, alt), alt=alt, ticks=ticks)


# ----------------------------------------------------------------------------- the charts
def cumulative_cash(
    years: Sequence[float],
    cumulative: Sequence[float],
    payback_year: float | None,
    unit_label: str,
    *,
    lost_year: float | None = None,
    name: str = "cash",
    height_in: float = HEIGHT_IN,
    width_in: float = WIDTH_IN,
) -> Chart:
    """Running total of the net cash flow, with the payback year marked.

    Parameters
    ----------
    years : sequence of float
        Year after planting [yr], 0 = planting year.
    cumulative : sequence of float
        Running total of the net cash flow at the end of each year [money per area unit].
    payback_year : float or None
        First year the running total is back to zero [yr]; None if it never is.
    unit_label : str
        Axis unit, e.g. ``"EUR per ha"``.
    lost_year : float, optional
        The model's ``payback_lost_year`` (below zero again after payback), said in the alternative text.
    """
    fig = cash_figure(years, list(cumulative), payback_year, unit_label, width_in, height_in)
    return _finish(fig, name, *cash_words(years, cumulative, payback_year, unit_label, lost_year))


def cash_words(years: Sequence[float], cumulative: Sequence[float], payback_year: float | None, unit_label: str,
               lost_year: float | None = None, **_drawing: Any) -> tuple[str, str]:
    """The title and the alternative text of :func:`cumulative_cash` (its arguments)."""
    y = list(cumulative)
    pay = f"; it is back above zero in year {payback_year:.0f}" if payback_year is not None else \
        "; it does not get back to zero within the stand life"
    if payback_year is not None and lost_year is not None:
        pay += f" but below zero again in year {lost_year:.0f}"
    alt = (f"Running total of the cash flow from planting to year {max(years):.0f} [{unit_label}], "
           f"lowest {_num(min(y))}, last {_num(y[-1])}{pay}.")
    return "Running total of cash", alt


def cash_figure(years: Sequence[float], y: list[float], payback_year: float | None, unit_label: str,
                width_in: float = WIDTH_IN, height_in: float = HEIGHT_IN) -> Figure:
    """The figure of :func:`cumulative_cash` (its arguments), before it becomes SVG."""
    with style():
        fig = _new_figure(width_in, height_in)
        ax = fig.add_subplot()
        ax.axhline(0.0, color="#666666", linewidth=0.6)
        ax.fill_between(years, y, 0.0, where=[v < 0 for v in y], interpolate=True, color=LOSS, alpha=0.16, linewidth=0)
        ax.fill_between(years, y, 0.0, where=[v >= 0 for v in y], interpolate=True, color=GAIN, alpha=0.16, linewidth=0)
        ax.plot(years, y, color=INK, marker="o", markersize=2.0, linewidth=1.2)
        if payback_year is not None:
            ax.axvline(payback_year, color=ACCENT, linewidth=0.9, linestyle=(0, (3, 2)))
            _payback_label(ax, list(years), y, payback_year)
        _style_axes(ax, years)
        ax.set_ylabel(plain(unit_label))
        fig.tight_layout(pad=0.3)
    return fig


def _payback_label(ax, years: list[float], y: list[float], payback_year: float) -> None:
    """Label the payback line where the cash line is not.

    Before payback the running total is below zero, after it above: the
    quarter above zero and before payback is free of the line, and so is the
    quarter below zero and after it. A late payback is labelled in the first
    (left of the line, at the top), an early one in the second (right of the
    line, at the bottom), whichever side has more room.
    """
    lo, hi = min(y + [0.0]), max(y + [0.0])
    room = LABEL_ROOM * (hi - lo)  # the label's height, with a margin, as a share of the axis
    late = payback_year - min(years) > max(years) - payback_year
    if late:
        hi = max(hi, room)
        xy, offset, ha, va = (payback_year, hi), (-4, 0), "right", "top"
    else:
        lo = min(lo, -room)
        xy, offset, ha, va = (payback_year, lo), (4, 0), "left", "bottom"
    ax.set_ylim(lo - 0.04 * (hi - lo), hi + 0.04 * (hi - lo))
    ax.annotate(f"pays back\nin year {payback_year:.0f}", xy=xy, xytext=offset, textcoords="offset points",
                color=ACCENT, fontsize=6.0, ha=ha, va=va, annotation_clip=False)


def yield_by_age(
    years: Sequence[float],
    grown: Sequence[float],
    sold: Sequence[float],
    harvest: Sequence[float],
    unit_label: str,
    *,
    name: str = "yield",
    height_in: float = HEIGHT_IN,
    width_in: float = WIDTH_IN,
) -> Chart:
    """Dry matter grown each year and sold in the harvest years, by stand age.

    Parameters
    ----------
    years : sequence of float
        Stand age [yr], 0 = planting year.
    grown : sequence of float
        Dry matter grown in the year [t DM per area unit, or short tons].
    sold : sequence of float
        Dry matter delivered and sold in the year [same unit].
    harvest : sequence of float
        1 in a harvest year, else 0.
    unit_label : str
        Axis unit, e.g. ``"t DM per ha"``.
    """
    with style():
        fig = _new_figure(width_in, height_in)
        ax = fig.add_subplot()
        hy, hs = _harvests(years, sold, harvest)
        ax.bar(hy, hs, width=0.7, color=GAIN, alpha=0.85, label="sold", linewidth=0)
        ax.plot(years, grown, color=INK, linewidth=1.0, marker="o", markersize=1.8, label="grown that year")
        _style_axes(ax, years)
        top = max(list(grown) + list(sold) + [0.0])
        ax.set_ylim(0.0, top * 1.08 if top > 0 else 1.0)
        ax.set_ylabel(plain(unit_label))
        ax.legend(loc="lower left", bbox_to_anchor=(0.0, 1.0), ncol=2, handlelength=1.2, columnspacing=0.8,
                  borderaxespad=0.1, borderpad=0.1)
        fig.tight_layout(pad=0.3)
    return _finish(fig, name, *yield_words(years, grown, sold, harvest, unit_label))


def yield_words(years: Sequence[float], grown: Sequence[float], sold: Sequence[float], harvest: Sequence[float],
                unit_label: str, **_drawing: Any) -> tuple[str, str]:
    """The title and the alternative text of :func:`yield_by_age` (its arguments)."""
    hy, hs = _harvests(years, sold, harvest)
    first = f"first harvest in year {hy[0]:.0f}, {len(hy)} harvests" if hy else "no harvest within the stand life"
    alt = (f"Dry matter grown per year and sold in harvest years [{unit_label}]: {first}, "
           f"at most {_num(max(hs or [0.0]))} sold in one year.")
    return "Yield by stand age", alt


def _harvests(years: Sequence[float], sold: Sequence[float], harvest: Sequence[float]) -> tuple[list, list]:
    """The harvest years and what was sold in each."""
    return [t for t, h in zip(years, harvest) if h > 0], [s for s, h in zip(sold, harvest) if h > 0]


def soil_carbon(
    years: Sequence[float],
    soc: Sequence[float],
    soc_current_use: Sequence[float],
    unit_label: str,
    *,
    name: str = "soc",
    height_in: float = HEIGHT_IN,
    width_in: float = WIDTH_IN,
) -> Chart:
    """Soil organic carbon stock under the crop against the current land use.

    Parameters
    ----------
    years : sequence of float
        Year after planting [yr].
    soc : sequence of float
        SOC stock under the crop at the end of each year [t C per area unit].
    soc_current_use : sequence of float
        SOC stock had the current use continued [t C per area unit].
    unit_label : str
        Axis unit, e.g. ``"t C per ha"``.
    """
    with style():
        fig = _new_figure(width_in, height_in)
        ax = fig.add_subplot()
        s, c = list(soc), list(soc_current_use)
        ax.fill_between(years, s, c, where=[a >= b for a, b in zip(s, c)], interpolate=True,
                        color=GAIN, alpha=0.16, linewidth=0)
        ax.fill_between(years, s, c, where=[a < b for a, b in zip(s, c)], interpolate=True,
                        color=LOSS, alpha=0.16, linewidth=0)
        ax.plot(years, s, color=GAIN, linewidth=1.4, label="under the crop")
        ax.plot(years, c, color=MUTED, linewidth=1.1, linestyle=(0, (4, 2)), label="current use")
        _style_axes(ax, years)
        lo, hi = min(s + c), max(s + c)
        pad = max(0.12 * (hi - lo), 0.05 * max(abs(hi), 1.0))
        ax.set_ylim(max(0.0, lo - pad), hi + pad)
        ax.set_ylabel(plain(unit_label))
        ax.legend(loc="lower left", bbox_to_anchor=(0.0, 1.0), ncol=2, handlelength=1.6, columnspacing=0.8,
                  borderaxespad=0.1, borderpad=0.1)
        fig.tight_layout(pad=0.3)
    return _finish(fig, name, *soil_words(years, soc, soc_current_use, unit_label))


def soil_words(years: Sequence[float], soc: Sequence[float], soc_current_use: Sequence[float], unit_label: str,
               **_drawing: Any) -> tuple[str, str]:
    """The title and the alternative text of :func:`soil_carbon` (its arguments)."""
    s, c = list(soc), list(soc_current_use)
    alt = (f"Soil organic carbon [{unit_label}]: {_num(s[0])} at planting, {_num(s[-1])} at the end "
           f"under the crop, {_num(c[-1])} had the current use continued.")
    return "Soil carbon (0-30 cm)", alt


@dataclass(frozen=True)
class Series:
    """One case's line on the comparison chart."""

    label: str
    years: Sequence[float]
    values: Sequence[float]
    payback_year: float | None


#: cases on one comparison panel drawn each in its own colour; beyond it, all in grey and a few named
MOST_NAMED_LINES = len(SERIES)
#: with more cases on a panel: how many that end highest, and how many that end lowest, are named in colour
NAMED_HIGHEST, NAMED_LOWEST = 3, 1
#: colour of the lines of the cases not named on a crowded panel
OTHERS = "#b9c0c4"
#: the length a name in a comparison chart's legend is cut to (the table above the chart names each case in full)
LEGEND_CHARS = 48


def _cut(text: str, most: int) -> str:
    """``text`` cut to at most ``most`` characters, the cut marked with an ellipsis."""
    return text if len(text) <= most else text[: most - 1].rstrip() + "\u2026"


def named_series(series: Sequence[Series]) -> list[int]:
    """The lines of a comparison panel drawn in colour and named in its legend (their positions, in order):
    every line up to :data:`MOST_NAMED_LINES`; beyond, the :data:`NAMED_HIGHEST` whose running total ends
    highest and the :data:`NAMED_LOWEST` that end lowest."""
    if len(series) <= MOST_NAMED_LINES:
        return list(range(len(series)))
    by_end = sorted(range(len(series)), key=lambda i: (-series[i].values[-1], i))
    return sorted(set(by_end[:NAMED_HIGHEST] + by_end[-NAMED_LOWEST:]))


def compare_cumulative(
    panels: Sequence[tuple[str, Sequence[Series]]],
    *,
    name: str = "compare",
    width_in: float = 7.0,
    height_in: float = 2.5,
) -> Chart:
    """Running total of cash for several cases, one panel per currency and unit.

    Cases in different currencies or area units are never drawn on one axis:
    no exchange rate or conversion is implied. Each named line is marked with
    its payback year. A panel of more than :data:`MOST_NAMED_LINES` cases
    draws every case as a thin grey line and names only those
    :func:`named_series` picks (a legend of a hundred cases is unreadable).

    Parameters
    ----------
    panels : sequence of (unit label, series)
        One panel per unit, e.g. ``("EUR per ha", [Series(...), ...])``.
    """
    n = max(1, len(panels))
    with style():
        fig = _new_figure(width_in, height_in)
        axes = fig.subplots(1, n, squeeze=False)[0]
        k = 0
        for ax, (unit_label, series) in zip(axes, panels):
            ax.axhline(0.0, color="#666666", linewidth=0.6)
            all_years: list[float] = []
            named = named_series(series)
            others = [s for j, s in enumerate(series) if j not in set(named)]
            for s in others:  # first, so that the named lines are drawn over them
                ax.plot(s.years, s.values, color=OTHERS, linewidth=0.5)
                all_years.extend(s.years)
            for s in (series[j] for j in named):
                colour, marker = SERIES[k % len(SERIES)], MARKERS[k % len(MARKERS)]
                ax.plot(s.years, s.values, color=colour, marker=marker, markersize=2.4, linewidth=1.2,
                        label=plain(_cut(s.label, LEGEND_CHARS)))
                if s.payback_year is not None:
                    i = list(s.years).index(s.payback_year) if s.payback_year in list(s.years) else None
                    if i is not None:
                        ax.plot([s.payback_year], [s.values[i]], marker=marker, markersize=6, markerfacecolor="white",
                                markeredgecolor=colour, markeredgewidth=1.2, linestyle="none")
                all_years.extend(s.years)
                k += 1
            _style_axes(ax, all_years)
            ax.set_ylabel(plain(unit_label))
            handles, labels = ax.get_legend_handles_labels()
            if others:
                from matplotlib.lines import Line2D

                handles.append(Line2D([], [], color=OTHERS, linewidth=0.8))
                labels.append(f"{len(others)} other cases")
            ax.legend(handles, labels, loc="upper left", fontsize=5.8, handlelength=1.8, borderaxespad=0.2)
        fig.tight_layout(pad=0.4, w_pad=1.2)
    return _finish(fig, name, *compare_words(panels))


def compare_words(panels: Sequence[tuple[str, Sequence[Series]]], **_drawing: Any) -> tuple[str, str]:
    """The title and the alternative text of :func:`compare_cumulative` (its arguments)."""

    def listed(series: Sequence[Series]) -> str:
        named = named_series(series)
        more = len(series) - len(named)
        return ", ".join(series[i].label for i in named) + (f", and {more} other cases in grey" if more else "")

    names = "; ".join(f"{unit}: {listed(series)}" for unit, series in panels)
    alt = f"Running total of cash by year for each case, large open markers at the payback year ({names})."
    return "Running total of cash, all cases", alt


#: bar colours of the tornado: the input at its low value, at its high value (not good/bad: that is the sign)
TORNADO_LOW, TORNADO_HIGH = "#c0762a", ACCENT
#: height of one input's row of the tornado [in], and the room for the axis, legend and margins [in]
TORNADO_ROW_IN, TORNADO_FRAME_IN = 0.145, 0.44
#: extra room left of the input labels [in]
TORNADO_LABEL_SLACK_IN = 0.12


def tornado(
    labels: Sequence[str],
    low: Sequence[float],
    high: Sequence[float],
    base: float,
    unit_label: str,
    *,
    figure: str = "NPV",
    name: str = "tornado",
    width_in: float = 7.2,
    row_in: float = TORNADO_ROW_IN,
    scale: float = 1.0,
    title: str | None = None,
) -> Chart:
    """A tornado chart: a figure with each input at its low and its high value, one row per input.

    One-factor-at-a-time ranges drawn as a tornado diagram (A. C. Eschenbach,
    "Spiderplots versus tornado diagrams for sensitivity analysis",
    *Interfaces* 22(6), 40-46, 1992, doi:10.1287/inte.22.6.40). Each bar runs
    from the base value to the figure's value with the input moved; the rows
    come in the order given (largest swing first, at the top).

    Parameters
    ----------
    labels : sequence of str
        One label per input, e.g. ``"Biomass price (75.0 / 115 EUR/t DM)"``; a
        label may hold a line break.
    low, high : sequence of float
        The figure with the input at its low and at its high value [money per area unit].
    base : float
        The figure with every input at its base value [money per area unit].
    unit_label : str
        Axis unit, e.g. ``"EUR per ha"``.
    figure : str
        The figure's name on the axis, e.g. ``"NPV"``.
    width_in : float
        Width of the chart [in]; below 4 in, the axis text and the legend take two lines.
    row_in : float
        Height of one input's row [in] (about twice the default for two-line labels).
    scale : float
        Share of the normal height (denser pages draw shorter rows).
    title : str, optional
        Heading above the chart; default "What moves the <figure>".
    """
    fig = tornado_figure(labels, low, high, base, unit_label, figure=figure, width_in=width_in, row_in=row_in,
                         scale=scale)
    return _finish(fig, name, *tornado_words(labels, low, high, base, unit_label, figure=figure, title=title))


def tornado_words(labels: Sequence[str], low: Sequence[float], high: Sequence[float], base: float, unit_label: str,
                  *, figure: str = "NPV", title: str | None = None, **_drawing: Any) -> tuple[str, str]:
    """The title and the alternative text of :func:`tornado` (its arguments)."""
    top = max(range(len(labels)), key=lambda i: abs(high[i] - low[i]))
    alt = (f"Tornado chart of {figure} [{unit_label}] with each input moved alone to its low and its high value, "
           f"largest swing first; base {_num(base)}; the largest swing, {' '.join(labels[top].split())}: "
           f"from {_num(low[top])} to {_num(high[top])}.")
    return title or f"What moves the {figure}", alt


def tornado_height_in(rows: int, width_in: float, row_in: float = TORNADO_ROW_IN, scale: float = 1.0) -> float:
    """The height [in] of a tornado chart of ``rows`` inputs (:func:`tornado_figure`'s arguments): its rows and
    the room for the axis and legend, which take two lines below 4 in wide."""
    return (row_in * rows + TORNADO_FRAME_IN * (1.35 if width_in < 4.0 else 1.0)) * scale


def tornado_figure(labels: Sequence[str], low: Sequence[float], high: Sequence[float], base: float, unit_label: str,
                   *, figure: str = "NPV", width_in: float = 7.2, row_in: float = TORNADO_ROW_IN,
                   scale: float = 1.0) -> Figure:
    """The figure of :func:`tornado` (its arguments), before it becomes SVG; also saved by ``--plot``."""
    n = len(labels)
    if not (n == len(low) == len(high)) or n == 0:
        raise ValueError("tornado: expected one low and one high value per label (at least one)")
    narrow = width_in < 4.0
    height = tornado_height_in(n, width_in, row_in, scale)
    with style():
        fig = _new_figure(width_in, height)
        ax = fig.add_subplot()
        ax.set_facecolor("none")
        lo_all, hi_all = min(list(low) + list(high) + [base]), max(list(low) + list(high) + [base])
        span = (hi_all - lo_all) or max(abs(base), 1.0)
        pad = 0.05 if narrow else 0.65 / width_in  # room for the value labels at the bar ends, a share of the span
        for i, (lo, hi) in enumerate(zip(low, high)):
            y = n - 1 - i
            # the longer bar first, so that a shorter one on the same side stays visible on top of it
            for value, colour in sorted(((lo, TORNADO_LOW), (hi, TORNADO_HIGH)), key=lambda vc: -abs(vc[0] - base)):
                ax.barh(y, value - base, left=base, height=0.62, color=colour, linewidth=0)
            if lo == hi == base:
                ax.text(base + 0.01 * span, y, "no change", va="center", ha="left", fontsize=5.6, color=MUTED)
                continue
            if narrow:  # no room for value labels: the axis gives the scale
                continue
            left, right = min(lo, hi), max(lo, hi)
            if left < base:
                ax.text(left - 0.008 * span, y, _num(left), va="center", ha="right", fontsize=5.6, color=INK)
            if right > base:
                ax.text(right + 0.008 * span, y, _num(right), va="center", ha="left", fontsize=5.6, color=INK)
        ax.axvline(base, color=INK, linewidth=0.8)
        ax.set_yticks(range(n))
        ax.set_yticklabels([plain(t) for t in reversed(labels)])
        ax.tick_params(axis="y", length=0)
        ax.set_ylim(-0.6, n - 0.4)
        ax.set_xlim(lo_all - pad * span, hi_all + pad * span)
        ax.xaxis.set_major_formatter(formatter())
        ax.xaxis.set_major_locator(_locator(nbins=3 if narrow else 8))
        ax.grid(axis="x", color="#dddddd", linewidth=0.4)
        ax.set_axisbelow(True)
        ax.spines["left"].set_visible(False)
        ax.set_xlabel(plain(f"{figure} [{unit_label}]" + ("\n" if narrow else "; ") + f"the line is the base, {_num(base)}"))
        from matplotlib.patches import Patch

        words = ("input low", "input high") if narrow else ("input at its low value", "input at its high value")
        ax.legend(handles=[Patch(color=TORNADO_LOW, label=words[0]), Patch(color=TORNADO_HIGH, label=words[1])],
                  loc="lower right", bbox_to_anchor=(1.0, 1.0), ncol=2, handlelength=1.2, columnspacing=1.0,
                  borderaxespad=0.1, borderpad=0.1)
        fig.tight_layout(pad=0.3)
        # room to spare on the left: the page's text engine may set the labels a little wider than matplotlib
        fig.subplots_adjust(left=fig.subplotpars.left + TORNADO_LABEL_SLACK_IN / width_in)
    return fig


def finite(values: Sequence[float]) -> list[float]:
    """Values with NaN and infinities replaced by 0 (blank ledger cells such as DSCR)."""
    return [float(v) if math.isfinite(float(v)) else 0.0 for v in values]


def season_light_figure(months: Sequence[str], par_in_season: Sequence[float], intercepted: Sequence[float], *,
                        height_in: float = HEIGHT_IN, width_in: float = WIDTH_IN) -> Figure:
    """PAR of the growing season and the part the canopy intercepts, month by month (Monteith's S and S x f).

    Parameters
    ----------
    months : sequence of str
        Month labels, January first.
    par_in_season : sequence of float
        PAR incident on the days of the growing season [MJ m⁻²].
    intercepted : sequence of float
        PAR the canopy intercepts [MJ m⁻²].
    """
    with style():
        fig = _new_figure(width_in, height_in)
        ax = fig.add_subplot()
        x = list(range(1, len(months) + 1))
        ax.bar(x, par_in_season, width=0.75, color=MUTED, alpha=0.35, label="PAR in the season", linewidth=0)
        ax.bar(x, intercepted, width=0.75, color=GAIN, alpha=0.85, label="intercepted by the canopy", linewidth=0)
        ax.set_facecolor("none")
        ax.set_xticks(x)
        ax.set_xticklabels([m[:1] for m in months])
        ax.set_xlim(0.4, len(months) + 0.6)
        ax.yaxis.set_major_formatter(formatter())
        ax.yaxis.set_major_locator(_locator(nbins=5))
        ax.grid(axis="y", color="#dddddd", linewidth=0.4)
        ax.set_axisbelow(True)
        top = max(list(par_in_season) + [0.0])
        ax.set_ylim(0.0, top * 1.08 if top > 0 else 1.0)
        ax.set_ylabel("MJ PAR per m²")
        ax.set_xlabel("month")
        ax.legend(loc="lower left", bbox_to_anchor=(0.0, 1.0), ncol=2, handlelength=1.2, columnspacing=0.8,
                  borderaxespad=0.1, borderpad=0.1)
        fig.tight_layout(pad=0.3)
    return fig


def season_light(months: Sequence[str], par_in_season: Sequence[float], intercepted: Sequence[float], *,
                 name: str = "season", height_in: float = HEIGHT_IN, width_in: float = WIDTH_IN) -> Chart:
    """:func:`season_light_figure` as a :class:`Chart` for the page."""
    fig = season_light_figure(months, par_in_season, intercepted, height_in=height_in, width_in=width_in)
    total_s, total_i = sum(par_in_season), sum(intercepted)
    share = total_i / total_s if total_s > 0 else 0.0
    alt = (f"PAR of the growing season by month and the part the canopy intercepts: {_num(total_i)} of "
           f"{_num(total_s)} MJ per m² over the season ({share:.0%}).")
    return _finish(fig, name, "Light over the season", alt)
